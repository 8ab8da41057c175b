"""The Gauss node check (audit.nodes): successive rules compared on a pilot.

Reference: Gauss rules with m nodes integrate polynomials of degree ≤ 2m − 1 exactly (common
practice, no source).
"""

from audit import Law
from audit.nodes import choose_nodes


def test_choose_nodes_exact_rule_and_step():
    # degree 3 in x0: the 2-node rule is exact, so 2 and 4 nodes agree to rounding
    def cubic(x):
        return x[:, 0] ** 3 * x[:, 1] + x[:, 1]

    check = choose_nodes(cubic, [Law("normal")] * 2, 0, nodes=2, tolerance=1e-10)
    assert check.converged and check.nodes == 2 and check.max_error < 1e-10
    # a step in x0: Gauss rules never settle, the cap is used and the check says so
    step = choose_nodes(lambda x: (x.sum(axis=1) > 0.3).astype(float), [Law("normal")] * 3, 0, nodes=16, cap=64)
    assert not step.converged and step.nodes == 64 and step.max_error > 1e-3
    assert step.evaluations == 64 * (16 + 32 + 64)
