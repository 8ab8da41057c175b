"""What to simplify: names with node counts and values, and what an advice report gives."""

import pytest

from audit.errors import UserError
from audit.studies.simplify.choice import from_advice, load_advice, parse_freeze, parse_integrate

NAMES = ["x0", "x1", "x2", "x3", "x4", "x5"]


def test_integrate_and_freeze_forms():
    assert parse_integrate(["x1", "x3:16"], NAMES) == {1: None, 3: 16}
    assert parse_integrate("x1,x2:4", NAMES) == {1: None, 2: 4}
    assert parse_integrate({"x0": 8}, NAMES) == {0: 8}
    assert parse_freeze(["x1", "x2=3.5", "x4=best", "x5=median"], NAMES) == {1: "median", 2: 3.5, 4: "best",
                                                                            5: "median"}  # fmt: skip
    assert parse_freeze({"x0": 2}, NAMES) == {0: 2.0}


@pytest.mark.parametrize(
    "call, words",
    [(lambda: parse_integrate(["x9"], NAMES), "does not have"), (lambda: parse_integrate(["x1:many"], NAMES), "NODES"),
     (lambda: parse_integrate({"x1": 0}, NAMES), "1..256"), (lambda: parse_freeze(["x1=low"], NAMES), "NAME=VALUE"),
     (lambda: parse_freeze({"x1": float("nan")}, NAMES), "finite")],
)  # fmt: skip
def test_bad_forms_say_what_is_valid(call, words):
    with pytest.raises(UserError, match=words):
        call()


def test_advice_gives_its_best_candidate_and_common_group(net_advice, tmp_path):
    names = [i["name"] for i in net_advice.inputs]
    integrate, freeze, errors = from_advice(net_advice, names)
    best = net_advice.outputs[0].best
    assert integrate == {names.index(best.feature): best.nodes}
    assert errors[names.index(best.feature)] == (best.quadrature_error, best.converged)
    groups = [set(o.freeze_group.features) for o in net_advice.outputs if o.freeze_group is not None]
    assert set(freeze) == {names.index(n) for n in set.intersection(*groups)} and set(freeze.values()) <= {"median"}
    with pytest.raises(UserError, match="same input spec"):
        from_advice(net_advice, [*names[:-1], "other"])
    path = tmp_path / "advice.json"
    import json

    path.write_text(json.dumps(net_advice.to_dict()))
    assert load_advice(path).to_dict() == net_advice.to_dict()
    path.write_text("{}")
    with pytest.raises(UserError, match="not a netdim report"):
        load_advice(path)
