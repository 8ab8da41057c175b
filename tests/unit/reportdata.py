"""Hand-built results and rendering helpers for the report tests (no model, no estimator).

Every number here is made up for presentation tests; nothing is copied from a run.
"""

from __future__ import annotations

import io
import re

import numpy as np
from rich.console import Console

from audit.report import render
from audit.report.text import fmt, fmt_count, fmt_duration, fmt_interval
from audit.results import (
    AdviceResult,
    AuditResult,
    Candidate,
    ComparisonResult,
    Estimate,
    FeatureEstimate,
    FreezeGroup,
    FreezeItem,
    GainRow,
    GateCheck,
    LayerChange,
    LayerResult,
    OutputAdvice,
    OutputChange,
    OutputResult,
    RqmcGain,
    UnitResult,
    VarianceIdentity,
)

N_FEATURES = 24
THRESHOLD = 0.001
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


def est(value: float, half: float) -> Estimate:
    return Estimate(value, value - half, value + half, half / 2.0)


def output(name: str, variance: float, totals: np.ndarray, firsts: np.ndarray | None, rel_half: float) -> OutputResult:
    features = [f"x{j + 1:02d}" for j in range(N_FEATURES)]
    nu = float(totals.sum())
    return OutputResult(
        name=name,
        mean=est(3.0, 0.01),
        variance=est(variance, 0.02 * variance),
        mean_dimension=est(nu, rel_half * nu),
        total_index=[FeatureEstimate(f, est(float(t), 0.05 * float(t))) for f, t in zip(features, totals, strict=True)],
        first_order=[]
        if firsts is None
        else [FeatureEstimate(f, est(float(v), 0.01)) for f, v in zip(features, firsts, strict=True)],
    )


def layer(name: str, op: str, nus: np.ndarray, inert: int) -> LayerResult:
    units = [UnitResult(f"{name}[{i}]", est(1.0 + i, 0.1), est(float(v), 0.01)) for i, v in enumerate(nus)]
    units += [UnitResult(f"{name}[{len(nus) + i}]", est(0.0, 0.0), None, inert=True) for i in range(inert)]
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
        output("inside_temperature", 12.3456, t_add, f_add, 0.004),
        output("inside_humidity", 123456.7, t_int, f_int, 0.03),
        output("condensation_risk", 0.000123456, t_wide, None, 0.25),
        OutputResult("alarm_flag", est(0.0, 0.0), Estimate(0.0, 0.0, 0.0, 0.0), None, inert=True),
    ]
    layers = [
        layer("encoder.relu1", "Relu", rng.uniform(1.0, 1.3, 30), inert=2),
        layer("encoder.relu2", "Relu", rng.uniform(1.3, 2.2, 30), inert=0),
    ]
    inputs = [
        {"name": f"x{j + 1:02d}", "law": "uniform", "low": 0.0, "high": 16.0, "unit": "W/m²"} for j in range(N_FEATURES)
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


def named_output(name: str, features: list[str], rng: np.random.Generator) -> OutputResult:
    totals = rng.dirichlet(np.ones(len(features))) * rng.uniform(1.02, 1.4)
    firsts = totals * rng.uniform(0.6, 0.95, len(features))
    nu = float(totals.sum())
    return OutputResult(
        name=name,
        mean=est(20.0, 0.1),
        variance=est(float(rng.uniform(1.0, 500.0)), 1.0),
        mean_dimension=est(nu, 0.01 * nu),
        total_index=[FeatureEstimate(f, est(float(t), 0.03 * float(t))) for f, t in zip(features, totals, strict=True)],
        first_order=[FeatureEstimate(f, est(float(v), 0.005)) for f, v in zip(features, firsts, strict=True)],
    )


def named_result(inputs: list[str], outputs: list[str], layers: list[str], seed: int = 5) -> AuditResult:
    """A result with the given names; numbers drawn at random (presentation tests only)."""
    rng = np.random.default_rng(seed)
    return AuditResult(
        model={"source": "model_zoo/greenhouse_v1.onnx", "format": "onnx"},
        inputs=[{"name": n, "law": "uniform", "low": 0.0, "high": 1.0} for n in inputs],
        design={"points": 1024, "replicates": 8, "seed": 3, "evaluations": 81920, "seconds": 0.026},
        outputs=[named_output(o, inputs, rng) for o in outputs],
        layers=[layer(n, "Tanh", rng.uniform(1.0, 1.3 + 0.4 * k, 16), 0) for k, n in enumerate(layers)],
    )


def grid_result(freezable: dict[int, list[int]], n_out: int = 10, n_in: int = 64) -> AuditResult:
    """Digits-like: ``freezable[k]`` lists the inputs below the threshold for output k."""
    features = [f"pixel_{j // 8}_{j % 8}" for j in range(n_in)]
    outputs = []
    for k in range(n_out):
        low = set(freezable.get(k, []))
        totals = [2e-4 if j in low else 1.05 / (n_in - len(low)) for j in range(n_in)]
        outputs.append(
            OutputResult(
                f"digit_{k}",
                est(0.0, 0.1),
                est(30.0, 1.0),
                est(1.08, 0.02),
                [FeatureEstimate(f, est(t, 0.1 * t)) for f, t in zip(features, totals, strict=True)],
                [FeatureEstimate(f, est(0.95 * t, 1e-5)) for f, t in zip(features, totals, strict=True)],
            )
        )
    inputs = [{"name": f, "law": "uniform", "low": 0, "high": 16} for f in features]
    design = {"points": 256, "replicates": 8}
    model = {"source": "model_zoo/digits_cnn.onnx", "format": "onnx"}
    return AuditResult(model, inputs, design, outputs)


# ----------------------------------------------------------------------------- advice


def _candidate(feature: str, total: float, nu_after: float | None, agree: bool = True, **kw) -> Candidate:
    measured, predicted = est(100.0 * (1 - total), 2.0), est(100.0 * (1 - total) + (0 if agree else 9.0), 1.0)
    diff = Estimate(measured.estimate - predicted.estimate, -3.0 if agree else -12.0, 3.0 if agree else -6.0, 1.5)
    return Candidate(
        feature=feature,
        total_index=est(total, 0.01),
        mean_dimension_after=None if nu_after is None else est(nu_after, 0.01),
        variance_after=measured,
        variance_identity=VarianceIdentity(measured, predicted, diff, agree),
        nodes=kw.get("nodes", 8),
        quadrature_error=kw.get("quadrature_error", 2.2e-4),
        converged=kw.get("converged", True),
    )


def _audit_output(name: str, features: list[str], totals: list[float], nu: float) -> OutputResult:
    return OutputResult(
        name,
        est(20.0, 0.1),
        est(120.0, 2.0),
        est(nu, 0.012),
        [FeatureEstimate(f, est(t, 0.05 * t)) for f, t in zip(features, totals, strict=True)],
        [FeatureEstimate(f, est(0.9 * t / nu, 1e-4)) for f, t in zip(features, totals, strict=True)],
    )


def make_advice(*, holds: bool = True) -> AdviceResult:
    """Three outputs: one with a gain and a frozen group, one where nothing lowers ν, one inert."""
    features = ["solar_irradiance", "vent_opening", "outside_temperature", "outside_humidity"]
    first = OutputAdvice(
        _audit_output("inside_temperature", features, [0.1, 0.2, 0.72, 1e-4], 1.044),
        preintegrate=[
            _candidate("solar_irradiance", 0.1, 1.010, nodes=4),
            _candidate("vent_opening", 0.2, 1.035, agree=False, nodes=32, converged=False),
            _candidate("outside_temperature", 0.72, None),
        ],
        freeze=[FreezeItem("outside_humidity", est(1e-4, 2e-5), True)],
        freeze_group=FreezeGroup(
            ["outside_humidity"],
            est(0.027, 0.002),
            est(2.2e-4, 2e-5),
            est(0.025, 0.003) if holds else est(0.5, 0.01),
            est(2.0e-4, 3e-5) if holds else est(4.0e-3, 1e-4),
            0.01,
        ),
        rqmc_gain=RqmcGain(
            "solar_irradiance",
            4,
            4,
            [GainRow(256, 1.5e-4, 1.4e-4), GainRow(1024, 1.7e-5, 8.7e-6)],
            -1.58,
            -2.0,
            0.218,
            4096,
            16384,
        ),
    )
    second = OutputAdvice(
        _audit_output("inside_humidity", features, [0.3, 0.25, 0.3, 0.4], 1.24),
        preintegrate=[_candidate("vent_opening", 0.25, 1.25, nodes=16)],
        freeze=[],
        rqmc_gain=RqmcGain("vent_opening", 16, 4, [GainRow(256, 0.024, 0.006), GainRow(1024, 3e-4, 5e-5)],
                           -3.1, -3.4, 2.5, 4096, 65536),
    )  # fmt: skip
    inert = OutputAdvice(OutputResult("alarm_flag", est(0.0, 0.0), Estimate(0.0, 0.0, 0.0, 0.0), None, inert=True))
    inputs = [{"name": f, "law": "uniform", "low": 0, "high": 1} for f in features]
    design = {"points": 256, "replicates": 4, "seed": 20, "evaluations": 718848, "seconds": 0.273}
    settings = {"freeze_threshold": 0.001, "freeze_budget": 0.01}
    return AdviceResult({"source": "model_zoo/greenhouse_v1.onnx", "format": "onnx"}, inputs, design,
                        [first, second, inert], settings)  # fmt: skip


# ----------------------------------------------------------------------------- comparison


def _change(value: float, half: float) -> Estimate:
    return Estimate(value, value - half, value + half, half / 2)


def make_comparison(*, names: tuple[str, str] = ("inside_temperature", "inside_humidity"), moved: int = 2,
                    gates: bool = True, layers: bool = True, paired: bool = True) -> ComparisonResult:  # fmt: skip
    """Two outputs; the first has ``moved`` inputs whose total index changed beyond noise."""
    features = [f"x{j}" for j in range(max(moved, 3) + 1)]
    totals = [0.3 / (j + 1) for j in range(len(features))]
    outputs = []
    for k, name in enumerate(names):
        old = _audit_output(name, features, totals, 1.06 + 0.2 * k)
        new = _audit_output(name, features, [t * 0.99 for t in totals], 1.05 + 0.2 * k)
        changes = [FeatureEstimate(f, _change(-0.001 * (j + 1), 5e-4)) for j, f in enumerate(features)]
        shift = features[:moved] if k == 0 else []
        outputs.append(OutputChange(name, old, new, _change(-0.00115 - 0.001 * k, 0.007), changes, shift,
                                    1.0 - 0.1 * k, 3, 1.0))  # fmt: skip
    layer_changes = [LayerChange("/body/body.1/Tanh_output_0", 32, {"nu_weighted": 1.2}, {"nu_weighted": 1.4},
                                 _change(0.2, 0.05))] if layers else []  # fmt: skip
    gate_checks = [
        GateCheck("max_dimension_rise", 0.5, -0.008141, True, "largest lower end of a ν change: -0.008141"),
        GateCheck("min_rank_agreement", 0.95, 0.9, False, "lowest Kendall τ of the total-index rankings: 0.9"),
    ] if gates else []  # fmt: skip
    design = {"points": 256, "replicates": 4, "seed": 18, "evaluations": 20480, "seconds": 0.048, "paired": paired}
    inputs = [{"name": f, "law": "uniform", "low": 0, "high": 1} for f in features]
    return ComparisonResult({"source": "model_zoo/greenhouse_v1.onnx", "format": "onnx"},
                            {"source": "model_zoo/greenhouse_v2.onnx", "format": "onnx"}, inputs, design, outputs,
                            layer_changes, gate_checks)  # fmt: skip


# ----------------------------------------------------------------------------- rendering


def render_text(result, width: int = 80, **kwargs) -> str:
    console = Console(width=width, no_color=True, force_terminal=False, record=True, file=io.StringIO())
    render(result, console, **kwargs)
    return console.export_text()


def render_bytes(result, width: int = 80, encoding: str = "utf-8", **kwargs) -> str:
    """Render on a console writing ``encoding`` (strict: a character it cannot encode raises)."""
    buf = io.TextIOWrapper(io.BytesIO(), encoding=encoding, errors="strict")
    console = Console(file=buf, width=width, no_color=True, force_terminal=False, highlight=False)
    render(result, console, **kwargs)
    buf.flush()
    return buf.buffer.getvalue().decode(encoding)


def squash(text: str) -> str:
    return " ".join(text.split())


def expected_numbers(result: AuditResult, outputs: list[OutputResult], threshold: float) -> set[str]:
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
    for ly in result.layers:
        s = ly.summary
        want.add(" / ".join(fmt(s[k]) for k in ("nu_min", "nu_median", "nu_p90", "nu_max")))
        want.add(fmt(s["nu_weighted"]))
    return want


def tokens(expected: set[str]) -> set[str]:
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
    split = sorted(t for t in tokens(expected) if not any(t in line for line in lines))
    assert not split


def md_tables(md: str) -> list[list[list[str]]]:
    """The pipe tables of a Markdown text, cells stripped (escaped pipes kept as ``\\|``)."""
    tables, current = [], []
    for line in md.splitlines():
        if line.startswith("|"):
            current.append([c.strip() for c in re.split(r"(?<!\\)\|", line.strip())[1:-1]])
        elif current:
            tables.append(current)
            current = []
    if current:
        tables.append(current)
    return tables


def unescape_md(cell: str) -> str:
    """A Markdown cell's text as written before escaping."""
    cell = re.sub(r"\\(.)", r"\1", cell)
    return cell.replace("&lt;", "<").replace("&amp;", "&")


def all_kinds() -> dict[str, object]:
    return {"audit": make_result(), "comparison": make_comparison(), "advice": make_advice()}
