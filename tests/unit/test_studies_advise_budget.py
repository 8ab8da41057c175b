"""The printed plan and the phase lines of advise (audit.studies.advise.budget)."""

import pytest
from advice_cases import phi_ridge

from audit.models.python import PythonModel
from audit.studies.advise import PhaseLog, fit_plan, plan_lines, prepare_advice
from audit.studies.advise.budget import fmt_seconds

MODEL = PythonModel(phi_ridge, 6, source="ridge")


def _count(line: str) -> int:
    return int(line.split("evaluations")[0].split()[-1].replace(",", ""))


def test_the_plan_lists_every_phase_with_work_and_a_total_that_adds_up():
    plan = prepare_advice(MODEL, "normal", points=256, replicates=4, seed=1)
    lines = plan_lines(plan)
    assert lines[0] == "netdim advise plan: 6 inputs, 256 points x 4 randomizations"
    body = lines[1:-1]
    assert len(body) == sum(1 for n in plan.phases.values() if n)  # one line per phase that does work
    assert sum(_count(line) for line in body) == _count(lines[-1]) == plan.evaluations
    assert all("about" not in line for line in lines)  # no rate: no time claimed


def test_a_rate_gives_a_time_estimate_that_says_it_is_one():
    plan = prepare_advice(MODEL, "normal", points=256, replicates=4, seed=1)
    lines = plan_lines(plan, rate=plan.evaluations / 20.0)  # 20 s of work at this rate
    assert lines[-1].endswith(
        "(an estimate, at " + f"{plan.evaluations / 20.0:,.0f}" + " evaluations/s timed on a first block)"
    )
    assert "about 20 s" in lines[-1]


def test_parts_left_out_and_budget_cuts_are_listed():
    plan = prepare_advice(MODEL, "normal", points=256, replicates=4, seed=1, only="freezing")
    lines = plan_lines(plan)
    assert "  not done: pre-integration (not asked for: only freezing)" in lines
    assert not any(line.lstrip().startswith(("node checks", "pre-integrated", "RQMC gain")) for line in lines)
    full = prepare_advice(MODEL, "normal", points=256, replicates=4, seed=1)
    cut = fit_plan(full, full.evaluations // 2)
    last = plan_lines(cut)[-1]
    assert last.startswith(f"  budget {full.evaluations // 2:,} evaluations: ") and cut.cuts[0] in last


def test_phase_lines_count_evaluations_and_time():
    lines: list[str] = []
    log = PhaseLog(lines.append, 300)
    log.start("audit", 100)
    log.end("audit", 100)
    log.start("freeze check", 200)
    log.end("freeze check", 150)
    assert len(lines) == 4
    assert lines[0].startswith("netdim advise: audit started, 100 evaluations planned (0 of 300 done, ")
    assert lines[1].startswith("netdim advise: audit finished, 100 evaluations in ")
    assert "(100 of 300 planned done, " in lines[1] and lines[1].endswith(" elapsed)")
    assert "(250 of 250 planned done, " in lines[3]  # the freeze check cost 50 fewer than planned


@pytest.mark.parametrize(
    "seconds,text", [(0.04, "0.0 s"), (3.26, "3.3 s"), (38.2, "38 s"), (750, "12.5 min"), (40000, "11.1 h")]
)
def test_seconds_are_short(seconds, text):
    assert fmt_seconds(seconds) == text
