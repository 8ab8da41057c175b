"""compare against an exact answer: a pure three-way term added to an additive function."""

import clifuncs

from audit.models.python import PythonModel
from audit.studies import compare_models


def _m(f, d=6):
    return PythonModel(f, d, source=f.__name__)


def test_added_three_way_term_changes_nu_by_the_exact_amount():
    # Variance components by hand (common practice, no source): additive part Σ a_j² = 28, all of order 1;
    # 2 x0 x1 x2 adds variance 4 of order 3. ν_old = 1, ν_new = (28 + 3·4)/(28 + 4) = 1.25: change 0.25.
    r = compare_models(
        _m(clifuncs.additive6), _m(clifuncs.additive6_plus_product), "normal", points=2048, replicates=10, seed=2
    )
    e = r.outputs[0].mean_dimension_change
    assert e.covers(0.25), e
    assert e.ci_low > 0
    # inputs 0, 1, 2 gain total index: new (a_j² + 4)/32 against old a_j²/28
    moved = set(r.outputs[0].moved)
    assert {"x0", "x1", "x2"} <= moved
