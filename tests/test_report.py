"""Tests of the report layer: terminal rendering, Markdown export, findings, progress bar.

Results are built by hand (no model, no estimator), so every check is about
presentation: sections, numbers at the displayed precision, width, plain text.
The finding thresholds tested here are the module's own rules of thumb
(common practice, no source).
"""

from __future__ import annotations

import io
import json
import math
import re
import subprocess
import sys

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from rich.console import Console

from audit.report import RunProgress, audit_markdown, make_console, render_audit, renderable
from audit.report.findings import (
    CAUTION,
    LIST_LIMIT,
    SECTION_TITLES,
    derive_findings,
    fmt,
    fmt_count,
    fmt_duration,
    fmt_interval,
    fmt_setting,
    share_bar,
)
from audit.results import (
    AuditResult,
    Estimate,
    FeatureEstimate,
    LayerResult,
    OutputResult,
    UnitResult,
)

N_FEATURES = 24
THRESHOLD = 0.001


def _est(value: float, half: float) -> Estimate:
    return Estimate(value, value - half, value + half, half / 2.0)


def _output(
    name: str, variance: float, totals: np.ndarray, firsts: np.ndarray | None, rel_half: float
) -> OutputResult:
    features = [f"x{j + 1:02d}" for j in range(N_FEATURES)]
    nu = float(totals.sum())
    return OutputResult(
        name=name,
        mean=_est(3.0, 0.01),
        variance=_est(variance, 0.02 * variance),
        mean_dimension=_est(nu, rel_half * nu),
        total_index=[
            FeatureEstimate(f, _est(float(t), 0.05 * float(t)))
            for f, t in zip(features, totals, strict=True)
        ],
        first_order=[]
        if firsts is None
        else [
            FeatureEstimate(f, _est(float(v), 0.01)) for f, v in zip(features, firsts, strict=True)
        ],
    )


def _layer(name: str, op: str, nus: np.ndarray, inert: int) -> LayerResult:
    units = [
        UnitResult(f"{name}[{i}]", _est(1.0 + i, 0.1), _est(float(v), 0.01))
        for i, v in enumerate(nus)
    ]
    units += [
        UnitResult(f"{name}[{len(nus) + i}]", _est(0.0, 0.0), None, inert=True)
        for i in range(inert)
    ]
    weights = np.array([1.0 + i for i in range(len(nus))])
    summary = {
        "units": len(units),
        "inert_units": inert,
        "nu_min": float(nus.min()),
        "nu_median": float(np.median(nus)),
        "nu_p90": float(np.quantile(nus, 0.9)),
        "nu_max": float(nus.max()),
        "nu_weighted": float(np.sum(weights * nus) / weights.sum()),
    }
    return LayerResult(name, op, (len(units),), summary, units)


def make_result() -> AuditResult:
    """Four outputs (one inert), 24 features (several folded), two hidden layers."""
    rng = np.random.default_rng(20240611)
    # additive output: totals equal first-order, nu just above 1
    t_add = np.concatenate([rng.dirichlet(np.ones(6)) * 1.02, np.full(N_FEATURES - 6, 2e-5)])
    f_add = t_add * 0.97
    # interacting output: big totals, small first-order share
    t_int = np.concatenate([rng.uniform(0.2, 0.6, 8), rng.uniform(1e-4, 5e-4, N_FEATURES - 8)])
    f_int = np.concatenate([rng.uniform(0.02, 0.08, 8), np.zeros(N_FEATURES - 8)])
    # output audited with the fast estimator style: no first order, wide interval
    t_wide = np.concatenate([rng.uniform(0.05, 0.3, 10), np.full(N_FEATURES - 10, 3e-4)])
    outputs = [
        _output("inside_temperature", 12.3456, t_add, f_add, 0.004),
        _output("inside_humidity", 123456.7, t_int, f_int, 0.03),
        _output("condensation_risk", 0.000123456, t_wide, None, 0.25),
        OutputResult("alarm_flag", _est(0.0, 0.0), Estimate(0.0, 0.0, 0.0, 0.0), None, inert=True),
    ]
    layers = [
        _layer("encoder.relu1", "Relu", rng.uniform(1.0, 1.3, 30), inert=2),
        _layer("encoder.relu2", "Relu", rng.uniform(1.3, 2.2, 30), inert=0),
    ]
    inputs = [
        {"name": f"x{j + 1:02d}", "law": "uniform", "low": 0.0, "high": 16.0, "unit": "W/m²"}
        for j in range(N_FEATURES)
    ]
    return AuditResult(
        model={"source": "model_zoo/greenhouse_v1.onnx", "format": "onnx"},
        inputs=inputs,
        design={
            "points": 1024,
            "replicates": 8,
            "estimator": "jansen",
            "sampler": "sobol",
            "seed": 7,
            "evaluations": 1024 * 8 * (N_FEATURES + 2),
            "seconds": 3.21456,
            "interval": "95 % Student-t over 8 randomizations",
        },
        outputs=outputs,
        layers=layers,
        notices=["points rounded up to 1024, a power of two"],
    )


def render_text(result: AuditResult, width: int = 80, **kwargs) -> str:
    console = Console(
        width=width, no_color=True, force_terminal=False, record=True, file=io.StringIO()
    )
    render_audit(result, console, **kwargs)
    return console.export_text()


def squash(text: str) -> str:
    return " ".join(text.split())


def expected_numbers(
    result: AuditResult, outputs: list[OutputResult], threshold: float
) -> set[str]:
    """Every number the report should display, formatted with the report's own formatter."""
    want = {fmt_duration(result.design["seconds"]), fmt_count(result.design["evaluations"])}
    for o in result.outputs:
        want.add(fmt(o.variance.estimate))
        if o.mean_dimension is not None:
            md = o.mean_dimension
            want |= {fmt(md.estimate), fmt_interval(md.ci_low, md.ci_high)}
        if o.first_order:
            want.add(fmt(o.additive_share))
    for o in outputs:
        first = {f.feature: f.value.estimate for f in o.first_order}
        for f in o.total_index:
            if f.value.estimate >= threshold:
                want |= {fmt(f.value.estimate), fmt_interval(f.value.ci_low, f.value.ci_high)}
                if f.feature in first:
                    want.add(fmt(first[f.feature]))
    for layer in result.layers:
        s = layer.summary
        want.add(" / ".join(fmt(s[k]) for k in ("nu_min", "nu_median", "nu_p90", "nu_max")))
        want.add(fmt(s["nu_weighted"]))
    return want


# ----------------------------------------------------------------------------- formatting


def test_fmt_keeps_four_significant_digits():
    # common practice, no source: fixed notation in a readable range, scientific outside
    assert fmt(0.43219) == "0.4322"
    assert fmt(1.5) == "1.500"
    assert fmt(12.3456) == "12.35"
    assert fmt(123456.7) == "1.235e+05"
    assert fmt(0.000123456) == "1.235e-04"
    assert fmt(0.0) == "0"
    assert fmt(math.nan) == "n/a" and fmt(None) == "n/a"
    for x in np.geomspace(1e-7, 1e7, 57):
        digits = re.sub(r"e.*$", "", fmt(x)).replace(".", "").lstrip("0")
        assert len(digits) == 4, fmt(x)
        assert float(fmt(x)) == pytest.approx(x, rel=5e-4)


def test_share_bar_is_proportional():
    assert share_bar(1.0) == "█" * 10
    assert share_bar(0.5) == "█" * 5
    assert share_bar(0.0) == "" and share_bar(math.nan) == ""
    assert len(share_bar(0.26)) == 3  # two full blocks and a part
    assert share_bar(1.7) == share_bar(1.0)


# ----------------------------------------------------------------------------- terminal


def test_terminal_sections_in_order_and_caution():
    result = make_result()
    text = render_text(result)
    titles = [
        SECTION_TITLES["header"],
        SECTION_TITLES["outputs"],
        SECTION_TITLES["inputs"].format(name="inside_temperature"),
        SECTION_TITLES["inputs"].format(name="inside_humidity"),
        SECTION_TITLES["inputs"].format(name="condensation_risk"),
        SECTION_TITLES["layers"],
        SECTION_TITLES["findings"],
    ]
    positions = [text.find(t) for t in titles]
    assert all(p >= 0 for p in positions), list(zip(titles, positions, strict=True))
    assert positions == sorted(positions)
    assert squash(CAUTION) in squash(text)
    assert squash(text).rfind(squash(CAUTION)) > text.find(SECTION_TITLES["findings"]) - 200
    # the fourth output is beyond max_outputs=3: overview row only, no ranking
    assert SECTION_TITLES["inputs"].format(name="alarm_flag") not in text
    assert "alarm_flag" in text and "inert (constant)" in text


def test_terminal_shows_every_number_at_display_precision():
    result = make_result()
    text = render_text(result)
    missing = sorted(
        s for s in expected_numbers(result, result.outputs[:3], THRESHOLD) if s not in text
    )
    assert not missing


def test_terminal_fits_80_columns_without_escape_codes():
    result = make_result()
    for kwargs in ({}, {"all_outputs": True}, {"threshold": 0.0}):
        text = render_text(result, **kwargs)
        assert "\x1b" not in text
        too_long = [line for line in text.splitlines() if len(line) > 80]
        assert not too_long


def test_long_names_still_fit_and_keep_numbers():
    base = make_result()
    long = "outside_relative_humidity_at_the_weather_station_on_the_roof"
    o = base.outputs[1]
    renamed = OutputResult(
        name="inside_relative_humidity_averaged_over_the_whole_compartment",
        mean=o.mean,
        variance=o.variance,
        mean_dimension=o.mean_dimension,
        total_index=[FeatureEstimate(long + f.feature, f.value) for f in o.total_index],
        first_order=[FeatureEstimate(long + f.feature, f.value) for f in o.first_order],
    )
    result = AuditResult(base.model, base.inputs, base.design, [renamed], base.layers, [])
    text = render_text(result)
    assert max(len(line) for line in text.splitlines()) <= 80
    missing = sorted(s for s in expected_numbers(result, [renamed], THRESHOLD) if s not in text)
    assert not missing


def test_folding_below_threshold():
    result = make_result()
    text = render_text(result)
    o = result.outputs[0]
    below = sum(f.value.estimate < THRESHOLD for f in o.total_index)
    assert below == N_FEATURES - 6
    assert f"… {below} more below {fmt_setting(THRESHOLD)}" in text
    # lowering the threshold to zero unfolds everything
    assert "more below" not in render_text(result, threshold=0.0)


def test_all_outputs_and_max_outputs():
    result = make_result()
    assert SECTION_TITLES["inputs"].format(name="alarm_flag") in render_text(
        result, all_outputs=True
    )
    one = render_text(result, max_outputs=1)
    assert SECTION_TITLES["inputs"].format(name="inside_humidity") not in one
    assert "3 more outputs not ranked" in one
    with pytest.raises(ValueError, match="max_outputs"):
        renderable(result, max_outputs=-1)


def test_round_trip_through_json_gives_identical_text():
    result = make_result()
    again = AuditResult.from_dict(json.loads(json.dumps(result.to_dict())))
    assert render_text(again) == render_text(result)
    assert audit_markdown(again) == audit_markdown(result)


def test_ascii_console_gets_ascii_only():
    result = make_result()
    buf = io.TextIOWrapper(io.BytesIO(), encoding="ascii", errors="strict")
    console = Console(file=buf, width=80, no_color=True, force_terminal=False, record=True)
    assert not console.encoding.lower().startswith("utf")
    render_audit(result, console)  # would raise UnicodeEncodeError on a non-ASCII character
    text = console.export_text()
    assert text.isascii()
    assert "nu" in text and fmt(result.outputs[0].mean_dimension.estimate) in text
    assert "uniform(0, 16) W/m2" in text


def test_make_console_is_plain_off_terminal_and_with_no_color(monkeypatch):
    monkeypatch.delenv("NO_COLOR", raising=False)
    buf = io.StringIO()
    render_audit(make_result(), make_console(buf, width=80))
    assert "\x1b" not in buf.getvalue() and SECTION_TITLES["findings"] in buf.getvalue()

    class FakeTty(io.StringIO):
        def isatty(self) -> bool:
            return True

    monkeypatch.delenv("TERM", raising=False)
    monkeypatch.delenv("FORCE_COLOR", raising=False)
    monkeypatch.delenv("TTY_COMPATIBLE", raising=False)
    tty = FakeTty()
    render_audit(make_result(), make_console(tty, width=80))
    assert "\x1b[" in tty.getvalue()  # positive control: styles on a terminal
    monkeypatch.setenv("NO_COLOR", "1")
    tty = FakeTty()
    render_audit(make_result(), make_console(tty, width=80))
    assert "\x1b" not in tty.getvalue()


def test_report_does_not_import_torch_or_onnxruntime():
    code = (
        "import sys, audit.report, audit.report.terminal, audit.report.markdown, "
        "audit.report.progress; "
        "bad = [m for m in ('torch', 'onnxruntime') if m in sys.modules]; "
        "sys.exit(1 if bad else 0)"
    )
    assert subprocess.run([sys.executable, "-c", code], check=False).returncode == 0


# ----------------------------------------------------------------------------- findings


def test_findings_follow_the_rules_of_thumb():
    result = make_result()
    found = {f.kind: f for f in derive_findings(result, threshold=THRESHOLD)}
    assert found["inert"].subjects == ("alarm_flag",)
    # nu upper end 1.02 * 1.004 < 1.1
    assert found["additive"].subjects == ("inside_temperature",)
    # nu ~ 3 > 1.5 and additive share < 0.7
    assert "inside_humidity" in found["interactions"].subjects
    assert "inside_temperature" not in found["interactions"].subjects
    # relative half-width 0.25 > 0.10; advice is four times the points
    assert found["uncertain"].subjects == ("condensation_risk",)
    assert "N = 4,096 points instead of 1,024" in found["uncertain"].text
    assert "1/√N" in found["uncertain"].text
    # x11..x24 stay below 0.001 at the upper end for every varying output
    assert found["freezable"].subjects == tuple(f"x{j:02d}" for j in range(11, N_FEATURES + 1))
    # layer nu grows from about 1.15 to about 1.75
    assert found["depth"].subjects == ("encoder.relu1", "encoder.relu2")
    assert found["dead_units"].subjects == ("encoder.relu1",)
    text = squash(render_text(result))
    for f in found.values():
        assert squash(f.text) in text


def test_no_findings_for_a_plain_result():
    totals = np.array([0.6, 0.3, 0.1] + [0.01] * (N_FEATURES - 3))  # nu = 1.21
    o = _output("y", 1.0, totals, None, 0.01)
    result = AuditResult({"source": "f", "format": "python"}, [], {"points": 256}, [o])
    assert derive_findings(result) == []
    assert "Nothing stands out" in render_text(result)


# ----------------------------------------------------------------------------- markdown


def _md_tables(md: str) -> list[list[list[str]]]:
    tables, current = [], []
    for line in md.splitlines():
        if line.startswith("|"):
            current.append([c.strip() for c in line.strip().strip("|").split("|")])
        elif current:
            tables.append(current)
            current = []
    if current:
        tables.append(current)
    return tables


def test_markdown_tables_parse_and_carry_the_same_numbers():
    result = make_result()
    md = audit_markdown(result, all_outputs=False)
    tables = _md_tables(md)
    # overview, three ranked outputs, layers
    assert len(tables) == 5
    for table in tables:
        widths = {len(row) for row in table}
        assert len(widths) == 1, table[0]
        assert all(re.fullmatch(r":?-+:?", c) for c in table[1])
    overview = tables[0]
    assert [row[0] for row in overview[2:]] == [o.name for o in result.outputs]
    for row, o in zip(overview[2:], result.outputs, strict=True):
        assert row[1] == fmt(o.variance.estimate)
        if o.mean_dimension is None:
            assert row[2] == "inert (constant)"
        else:
            md_ = o.mean_dimension
            assert row[2] == fmt(md_.estimate)
            assert row[3] == fmt_interval(md_.ci_low, md_.ci_high)
    cells = {c for table in tables for row in table for c in row}
    missing = sorted(
        s
        for s in expected_numbers(result, result.outputs[:3], THRESHOLD)
        if s not in cells and s not in md
    )
    assert not missing
    layers = tables[-1]
    assert [row[0] for row in layers[2:]] == [ly.name for ly in result.layers]
    assert CAUTION in md
    for key in ("header", "outputs", "layers", "findings"):
        assert f"## {SECTION_TITLES[key]}" in md


def test_markdown_and_terminal_show_the_same_figures():
    result = make_result()
    md = audit_markdown(result, all_outputs=True)
    text = render_text(result, all_outputs=True)
    numbers = re.compile(r"-?\d+\.\d+(?:e[+-]\d+)?")
    assert set(numbers.findall(md)) == set(numbers.findall(text))


# ----------------------------------------------------------------------------- progress


def test_progress_writes_nothing_to_a_non_terminal():
    buf = io.StringIO()
    with RunProgress(1000, console=Console(file=buf)) as p:
        for r in range(4):
            p.advance(250, phase=f"randomization {r + 1}/4")
    assert p.completed == 1000 and not p.enabled
    assert buf.getvalue() == ""


@pytest.mark.parametrize("kwargs", [{"enabled": False}, {"quiet": True}])
def test_progress_switched_off_writes_nothing_even_on_a_terminal(kwargs):
    buf = io.StringIO()
    console = Console(file=buf, force_terminal=True, width=80)
    with RunProgress(100, console=console, **kwargs) as p:
        p.advance(100, phase="randomization 1/1")
    assert buf.getvalue() == "" and p.completed == 100


def test_progress_draws_on_a_terminal(monkeypatch):
    # positive control for the two tests above
    monkeypatch.setenv("TERM", "xterm-256color")
    buf = io.StringIO()
    console = Console(file=buf, force_terminal=True, width=100)
    with RunProgress(2000, console=console, transient=False) as p:
        p.advance(500, phase="randomization 1/4")
        p.advance(1500, phase="randomization 4/4")
    out = buf.getvalue()
    assert p.enabled and "2k/2k evaluations" in out and "randomization 4/4" in out


def test_single_randomization_and_fast_estimator():
    nan = math.nan
    names = ["outside_temperature", "solar_irradiance", "vent_opening", "wind_speed"]
    inputs = [
        {"name": "outside_temperature", "law": "uniform", "low": -5, "high": 30, "unit": "°C"},
        {"name": "solar_irradiance", "law": "uniform", "low": 0, "high": 900},
        {"name": "vent_opening", "law": "triangular", "low": 0, "mode": 0.2, "high": 1},
        {"name": "wind_speed", "law": "lognormal", "log_mean": 1.0, "log_sd": 0.5},
    ]
    one = OutputResult(
        "inside_temperature",
        Estimate(20.0, nan, nan, nan),
        Estimate(4.5, nan, nan, nan),
        Estimate(1.3, nan, nan, nan),
        [FeatureEstimate(n, Estimate(0.1 * (i + 1), nan, nan, nan)) for i, n in enumerate(names)],
    )
    fast = OutputResult("inside_humidity", _est(70.0, 1.0), _est(25.0, 1.0), _est(1.2, 0.01))
    design = {"points": 256, "replicates": 1, "estimator": "fast", "sampler": "mc"}
    result = AuditResult({"source": "zoo:f", "format": "python"}, inputs, design, [one, fast])
    text = render_text(result)
    assert max(len(line) for line in text.splitlines()) <= 80
    assert "R = 1 randomization," in text
    assert "vent_opening triangular(0, 0.2, 1)" in text
    assert "wind_speed lognormal(1, 0.5)" in text
    assert "outside_temperature uniform(-5, 30) °C" in text
    assert "1.300 n/a" in text  # no interval from one randomization
    assert "measures ν only" in text
    found = {f.kind: f for f in derive_findings(result)}
    assert found["no_interval"].subjects == ("inside_temperature",)
    md = audit_markdown(result)
    assert "  - vent_opening triangular(0, 0.2, 1)" in md


# ----------------------------------------------------------------------------- layout

GREENHOUSE_INPUTS = [
    "outside_temperature",
    "solar_irradiance",
    "vent_opening",
    "pipe_temperature",
    "outside_humidity",
    "screen_closure",
    "leaf_area_index",
    "wind_speed",
]
LONG_OUTPUT = "inside_relative_humidity_averaged_over_the_whole_compartment"
LONG_INPUT = "outside_relative_humidity_at_the_weather_station_on_the_roof"
ONNX_LAYERS = [
    "/body/body.1/Tanh_output_0",
    "/features/features.1/Relu_output_0",
    "/encoder/blocks.0/attention/softmax/Softmax_output_0",
]


def _named_output(name: str, features: list[str], rng: np.random.Generator) -> OutputResult:
    totals = rng.dirichlet(np.ones(len(features))) * rng.uniform(1.02, 1.4)
    firsts = totals * rng.uniform(0.6, 0.95, len(features))
    nu = float(totals.sum())
    return OutputResult(
        name=name,
        mean=_est(20.0, 0.1),
        variance=_est(float(rng.uniform(1.0, 500.0)), 1.0),
        mean_dimension=_est(nu, 0.01 * nu),
        total_index=[
            FeatureEstimate(f, _est(float(t), 0.03 * float(t)))
            for f, t in zip(features, totals, strict=True)
        ],
        first_order=[
            FeatureEstimate(f, _est(float(v), 0.005)) for f, v in zip(features, firsts, strict=True)
        ],
    )


def named_result(
    inputs: list[str], outputs: list[str], layers: list[str], seed: int = 5
) -> AuditResult:
    """A result with the given names; numbers drawn at random (presentation tests only)."""
    rng = np.random.default_rng(seed)
    return AuditResult(
        model={"source": "model_zoo/greenhouse_v1.onnx", "format": "onnx"},
        inputs=[{"name": n, "law": "uniform", "low": 0.0, "high": 1.0} for n in inputs],
        design={"points": 1024, "replicates": 8, "seed": 3, "evaluations": 81920, "seconds": 0.026},
        outputs=[_named_output(o, inputs, rng) for o in outputs],
        layers=[
            _layer(n, "Tanh", rng.uniform(1.0, 1.3 + 0.4 * k, 16), 0) for k, n in enumerate(layers)
        ],
    )


def _tokens(expected: set[str]) -> set[str]:
    """Single numbers inside the composite strings (intervals, quantile chains)."""
    parts = set()
    for s in expected:
        parts |= {p for p in re.split(r"[\[\]]|, | / ", s) if p}
    return parts


def assert_whole(text: str, expected: set[str], width: int) -> None:
    """Lines fit, carry no trailing spaces, and no expected number is split across lines."""
    lines = text.splitlines()
    assert max(len(line) for line in lines) <= width
    assert not [line for line in lines if line != line.rstrip()]
    split = sorted(t for t in _tokens(expected) if not any(t in line for line in lines))
    assert not split


def test_long_names_at_80_columns_appear_in_full_on_one_line():
    result = named_result(
        [*GREENHOUSE_INPUTS, LONG_INPUT], ["inside_temperature", LONG_OUTPUT], ONNX_LAYERS
    )
    text = render_text(result, all_outputs=True)
    lines = text.splitlines()
    expected = expected_numbers(result, result.outputs, THRESHOLD)
    assert_whole(text, expected, 80)
    # composite cells (intervals, quantile chains) stay whole on one line too
    assert not sorted(s for s in expected if not any(s in line for line in lines))
    names = [*GREENHOUSE_INPUTS, LONG_INPUT, "inside_temperature", LONG_OUTPUT, *ONNX_LAYERS]
    assert not [n for n in names if not any(n in line for line in lines)]
    # a long name on a line of its own is followed by its numbers, not folded into a cell
    for layer in result.layers:
        at = next(i for i, line in enumerate(lines) if line == layer.name)
        assert fmt(layer.summary["nu_weighted"]) in lines[at + 1]


def test_greenhouse_and_onnx_layer_names_read_well_at_80_and_use_the_room_at_120():
    outputs = ["inside_temperature", "inside_humidity"]
    result = named_result(GREENHOUSE_INPUTS, outputs, ONNX_LAYERS[:1])
    for width in (80, 120):
        text = render_text(result, width=width, all_outputs=True)
        lines = text.splitlines()
        assert_whole(text, expected_numbers(result, result.outputs, THRESHOLD), width)
        # at 80 columns already, every ranked input sits on one line with its numbers
        for o in result.outputs:
            for f in o.total_index:
                row = [line for line in lines if line.startswith(f.feature + " ")]
                assert any(fmt(f.value.estimate) in line for line in row), (width, f.feature)
    wide = render_text(result, width=120).splitlines()
    for o in result.outputs:
        leading = ", ".join(f.feature for f in o.ranked()[:3])
        assert any(line.startswith(o.name) and leading in line for line in wide)
    layer = result.layers[0]
    assert any(
        line.startswith(layer.name) and fmt(layer.summary["nu_weighted"]) in line for line in wide
    )
    # at 80 the leading inputs move to a line of their own under their output, unfolded
    narrow = render_text(result, width=80).splitlines()
    for o in result.outputs:
        at = next(i for i, line in enumerate(narrow) if line.startswith(o.name + " "))
        assert ", ".join(f.feature for f in o.ranked()[:3]) in narrow[at + 1]


def test_absurdly_long_names_fold_only_on_lines_of_their_own():
    absurd = "sensor_" + "_".join(f"segment{k}" for k in range(16))  # 150 characters
    result = named_result([absurd, *GREENHOUSE_INPUTS[:3]], [absurd], [])
    text = render_text(result)
    expected = expected_numbers(result, result.outputs, THRESHOLD)
    assert_whole(text, expected, 80)
    lines = [line.strip() for line in text.splitlines()]
    assert absurd in "".join(lines)  # folded, nothing lost
    # the folded name's lines carry nothing but the name
    pieces = [line for line in lines if line and line in absurd and len(line) > 20]
    assert "".join(pieces[:2]) in absurd


@pytest.mark.parametrize("width", [30, 44, 60])
def test_narrow_consoles_keep_every_number_whole(width):
    result = make_result()
    text = render_text(result, width=width)
    assert_whole(text, expected_numbers(result, result.outputs[:3], THRESHOLD), width)


@settings(max_examples=25, deadline=None)
@given(
    width=st.integers(min_value=36, max_value=160),
    lengths=st.lists(st.integers(min_value=1, max_value=70), min_size=3, max_size=6),
)
def test_any_width_and_name_lengths_keep_numbers_whole(width, lengths):
    stems = "abcdefghijklmnopqrstuvwxyz_/."
    names = [
        f"{k}" + "".join(stems[(k * 7 + i) % len(stems)] for i in range(n))
        for k, n in enumerate(lengths)
    ]
    result = named_result(names, names[:2], names[-1:], seed=len(names) + width)
    text = render_text(result, width=width, all_outputs=True)
    assert_whole(text, expected_numbers(result, result.outputs, THRESHOLD), width)


def test_run_time_is_formatted_for_people():
    # common practice, no source: two significant digits, then minutes and hours
    assert fmt_duration(0.026) == "0.026 s"
    assert fmt_duration(0.2340) == "0.23 s"
    assert fmt_duration(2.4) == "2.4 s"
    assert fmt_duration(48.4) == "48 s"
    assert fmt_duration(72.0) == "1 min 12 s"
    assert fmt_duration(59.7) == "1 min 0 s"
    assert fmt_duration(3725.0) == "1 h 02 min"
    assert fmt_duration(0.0004) == "under 0.001 s"
    assert fmt_duration(math.nan) == "n/a" and fmt_duration(-1.0) == "n/a"
    text = render_text(named_result(GREENHOUSE_INPUTS, ["y"], []))
    assert "81,920 model evaluations in 0.026 s" in text


# ----------------------------------------------------------------------------- findings (new)


def _grid_result(freezable: dict[int, list[int]], n_out: int = 10, n_in: int = 64) -> AuditResult:
    """Digits-like: ``freezable[k]`` lists the inputs below the threshold for output k."""
    features = [f"pixel_{j // 8}_{j % 8}" for j in range(n_in)]
    outputs = []
    for k in range(n_out):
        low = set(freezable.get(k, []))
        totals = [2e-4 if j in low else 1.05 / (n_in - len(low)) for j in range(n_in)]
        outputs.append(
            OutputResult(
                f"digit_{k}",
                _est(0.0, 0.1),
                _est(30.0, 1.0),
                _est(1.08, 0.02),
                [
                    FeatureEstimate(f, _est(t, 0.1 * t))
                    for f, t in zip(features, totals, strict=True)
                ],
                [
                    FeatureEstimate(f, _est(0.95 * t, 1e-5))
                    for f, t in zip(features, totals, strict=True)
                ],
            )
        )
    inputs = [{"name": f, "law": "uniform", "low": 0, "high": 16} for f in features]
    design = {"points": 256, "replicates": 8}
    model = {"source": "model_zoo/digits_cnn.onnx", "format": "onnx"}
    return AuditResult(model, inputs, design, outputs)


def test_findings_stay_short_for_many_outputs_and_inputs():
    # 9 inputs freezable for some outputs only; input 7 for four outputs, input 56 for three
    freezable = {0: [7, 15], 1: [7, 56], 2: [7, 0, 56], 3: [7, 63], 4: [56, 23], 5: [31], 6: [39],
                 7: [47]}
    result = _grid_result(freezable)
    found = {f.kind: f for f in derive_findings(result)}
    some = found["freezable_some"]
    named = {f"pixel_{j // 8}_{j % 8}" for js in freezable.values() for j in js}
    assert set(some.subjects) == named and len(named) == 9
    listed = [n for n in named if n in some.text]
    assert len(listed) == LIST_LIMIT
    assert f"and {len(named) - LIST_LIMIT} more inputs" in some.text
    assert "pixel_0_7 for 4 of 10 outputs" in some.text  # most outputs first
    assert "pixel_7_0 for 3 of 10 outputs" in some.text
    assert "freezable" not in found  # no input is freezable for every output
    assert all(len(f.text) < 500 for f in found.values())
    # freezing advice comes with the command to ask for it
    assert found["next"].commands == ("netdim advise model_zoo/digits_cnn.onnx --inputs SPEC.toml",)


def test_next_step_commands_follow_the_findings():
    result = make_result()  # interactions, freezable inputs and a wide interval
    found = {f.kind: f for f in derive_findings(result)}
    advise = "netdim advise model_zoo/greenhouse_v1.onnx --inputs SPEC.toml"
    assert found["next"].commands == (advise,)
    assert "pre-integrate" in found["next"].text and "freezing" in found["next"].text
    assert found["uncertain"].commands == (
        "netdim audit model_zoo/greenhouse_v1.onnx --inputs SPEC.toml --points 4096",
    )
    text = render_text(result)
    assert advise in [line.strip() for line in text.splitlines()]
    assert f"`{advise}`" in audit_markdown(result)
    # the spec file, when the run recorded it, replaces the placeholder (quoted for the shell)
    spec = AuditResult(result.model, result.inputs, {**result.design, "spec": "my specs/g.toml"},
                       result.outputs, result.layers)
    assert derive_findings(spec)[-1].commands == (
        "netdim advise model_zoo/greenhouse_v1.onnx --inputs 'my specs/g.toml'",
    )
    # standard normal inputs of a Python callable are reproduced by --law and --dim
    normal = [{"name": i["name"], "law": "normal", "mean": 0.0, "sd": 1.0} for i in result.inputs]
    py = AuditResult({"source": "pkg.mod:f", "format": "python"}, normal, result.design,
                     result.outputs, result.layers)
    assert derive_findings(py)[-1].commands == (
        f"netdim advise pkg.mod:f --law normal --dim {N_FEATURES}",
    )


def test_estimates_below_one_are_flagged_as_noise_and_not_clamped():
    nus = [0.97, 0.99, 1.1, 1.2, 1.3]  # 0.97 +- 0.01 lies below 1; 0.99 +- 0.01 reaches 1
    layer = _layer("/body/body.0/Gemm_output_0", "Gemm", np.array(nus), inert=0)
    base = make_result()
    assert "below_one" not in {f.kind for f in derive_findings(base)}
    result = AuditResult(base.model, base.inputs, base.design, base.outputs, [layer])
    found = {f.kind: f for f in derive_findings(result)}
    below = found["below_one"]
    varying = sum(not o.inert for o in result.outputs) + len(nus)
    assert f"for 2 of {varying} units, all in {layer.name}" in below.text
    assert "1 interval lies entirely below 1" in below.text and f"lowest {fmt(0.97)}" in below.text
    assert "N = 1,024 points" in below.text and "sampling noise" in below.text
    text = render_text(result)
    assert f"{fmt(0.97)} / " in text  # the layer's minimum, shown as estimated
    assert squash(below.text) in squash(text)


def test_depth_summary_also_when_nu_does_not_grow():
    base = make_result()
    flat = [
        _layer("block1", "Relu", np.array([1.10, 1.15, 1.20]), 0),
        _layer("block2", "Relu", np.array([1.12, 1.15, 1.18]), 0),
    ]
    result = AuditResult(base.model, base.inputs, base.design, base.outputs, flat)
    kinds = {f.kind: f for f in derive_findings(result)}
    assert "depth" not in kinds
    assert kinds["depth_flat"].subjects == ("block1", "block2")
    assert "does not grow with depth" in kinds["depth_flat"].text


# ----------------------------------------------------------------------------- notebooks


def test_results_render_through_the_rich_protocol():
    result = make_result()
    console = Console(record=True, width=100, file=io.StringIO(), no_color=True)
    console.print(result)
    text = console.export_text()
    for key in ("header", "outputs", "layers", "findings"):
        assert SECTION_TITLES[key] in text
    assert max(len(line) for line in text.splitlines()) <= 100
    missing = sorted(
        s for s in expected_numbers(result, result.outputs[:3], THRESHOLD) if s not in text
    )
    assert not missing
    # the hook is renderable(result) with defaults: same text as render_audit at that width
    assert text == render_text(result, width=100)
    again = Console(record=True, width=100, file=io.StringIO(), no_color=True)
    again.print(renderable(result))
    assert again.export_text() == text
