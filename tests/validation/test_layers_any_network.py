"""Hidden layers and outputs that can be trusted on networks built the way users build them.

Every network is built here with Torch and exported as users export it
(``torch.onnx.export`` at opset 17, so GELU is split into several nodes;
``torch.export``; ``torch.jit.script``). References:

* for any unit that varies, 1 <= ν <= d (d inputs), and an additive function has
  ν = 1 (definitions of the total Sobol' index and the mean dimension; common
  practice, no source); checked against the estimator's own intervals, widened by
  Bonferroni over all the units of one audit (t quantile with R − 1 degrees of
  freedom at level 0.05 / (2 m));
* the same network in two formats, audited on the same points, gives the same
  numbers up to float32 rounding: each format's estimate lies in the other's interval;
* captured values equal the outputs of the Torch modules read with forward hooks on
  the same rows, to float32 rounding.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import netbuild
import numpy as np
import pytest
import torch
from scipy import stats

import audit
from audit.errors import UserError
from audit.models import open_model

RNG = np.random.default_rng(20240607)
REPLICATES = 8


def _bonferroni_ok(estimates: list, d: int, replicates: int = REPLICATES) -> list[str]:
    """Estimates whose interval, widened for all of them together, misses [1, d]."""
    t = stats.t.ppf(1 - 0.05 / (2 * max(len(estimates), 1)), replicates - 1)
    bad = []
    for where, est in estimates:
        low, high = est.estimate - t * est.std_error, est.estimate + t * est.std_error
        if high < 1 or low > d:
            bad.append(f"{where}: {est.estimate:.3f} ± {t * est.std_error:.3f}")
    return bad


def _all_estimates(result) -> list:
    found = [(o.name, o.mean_dimension) for o in result.outputs if o.mean_dimension is not None]
    for layer in result.layers:
        found += [(f"{layer.name}/{u.unit}", u.mean_dimension) for u in layer.units if u.mean_dimension is not None]
    return found


@pytest.fixture(scope="module")
def attention(tmp_path_factory: pytest.TempPathFactory) -> tuple[torch.nn.Module, dict[str, Path]]:
    net = netbuild.seeded(netbuild.AttentionBlock, seed=2)
    return net, netbuild.export_all(net, torch.zeros(4, 16, 4), tmp_path_factory.mktemp("attention"), "attn")


def test_attention_block_every_unit_between_1_and_d_and_formats_agree(attention) -> None:
    _, paths = attention
    d = 64
    results = {}
    for kind in ("onnx", "pt2", "torchscript"):
        shape = {"input_shape": (16, 4)} if kind == "torchscript" else {}
        model = open_model(str(paths[kind]), **shape)
        r = audit.audit_model(model, "normal", points=64, replicates=REPLICATES, seed=41, layers="all")
        assert [x.name for x in r.layers] == [x.name for x in model.layers()], kind  # --layers all works
        assert len(r.layers) >= 7, kind
        estimates = _all_estimates(r)
        # every unit of every layer: in ONNX and .pt2 the attention's inner tensors too
        assert len(estimates) > (800 if kind != "torchscript" else 500), (kind, len(estimates))
        assert not _bonferroni_ok(estimates, d), (kind, _bonferroni_ok(estimates, d)[:5])
        results[kind] = {x.name: x.summary for x in r.layers}
    common = set(results["onnx"]) & set(results["pt2"]) & set(results["torchscript"])
    # the layers every format has: the modules' outputs and the residual additions, one name each
    assert {"attn", "add", "norm", "ff.0", "ff.1", "ff.2", "add#2"} <= common
    for name in sorted(common):
        for a in results.values():
            for b in results.values():
                assert b[name]["nu_weighted_ci_low"] <= a[name]["nu_weighted"] <= b[name]["nu_weighted_ci_high"], name


def test_attention_heads_are_rows_first(attention) -> None:
    net, paths = attention
    model = open_model(str(paths["onnx"]))
    # the softmax of the heads: (batch * heads, 16, 16) in the graph, read as (heads, 16, 16) per row
    soft = next(la for la in model.layers() if la.op == "softmax")
    assert soft.shape == (2, 16, 16) and soft.activation
    x = RNG.normal(size=(3, 64))
    xt = torch.from_numpy(x.astype(np.float32)).reshape(3, 16, 4)
    with torch.no_grad():
        _, weights = net.attn(xt, xt, xt, need_weights=True, average_attn_weights=False)
    got = model.evaluate(x, capture=[soft.name]).hidden[soft.name]
    np.testing.assert_allclose(got, weights.reshape(3, -1).numpy(), rtol=1e-4, atol=1e-6)


@pytest.fixture(scope="module")
def activations(tmp_path_factory: pytest.TempPathFactory) -> tuple[torch.nn.Module, dict[str, Path]]:
    net = netbuild.seeded(netbuild.Activations, seed=1)
    return net, netbuild.export_all(net, torch.zeros(4, 4), tmp_path_factory.mktemp("acts"), "acts")


def _hooked(net: torch.nn.Module, names: list[str], x: np.ndarray) -> dict[str, np.ndarray]:
    """The outputs of the named submodules on rows ``x``, read with forward hooks."""
    seen: dict[str, np.ndarray] = {}
    modules = dict(net.named_modules())

    def keep(name: str):
        def hook(_module, _inputs, out) -> None:
            seen[name] = out.detach().numpy().copy()

        return hook

    handles = [modules[n].register_forward_hook(keep(n)) for n in names]
    with torch.no_grad():
        net(torch.from_numpy(x.astype(np.float32)))
    for h in handles:
        h.remove()
    return seen


def test_activations_are_captured_at_their_output(activations) -> None:
    net, paths = activations
    acts = net.acts()
    expected = [n for i in range(7) for n in (f"fc.{i}", acts[i])]
    ops = {"gelu": "gelu", "gelu_tanh": "gelu", "silu": "silu", "mish": "mish", "hardswish": "hardswish",
           "softplus": "softplus", "gate": "silu"}  # fmt: skip
    x = RNG.normal(size=(9, 4))
    ref = _hooked(net, acts, x)
    for kind in ("onnx", "pt2", "torchscript"):
        model = open_model(str(paths[kind]))
        layers = {la.name: la for la in model.layers()}
        # each activation is one layer, at its output; the nodes inside it are no layers
        assert list(layers) == expected, (kind, list(layers))
        assert [n for n, la in layers.items() if la.activation] == acts, kind
        assert {n: layers[n].op for n in acts} == ops, kind
        ev = model.evaluate(x, capture=acts)
        for name in acts:
            np.testing.assert_allclose(ev.hidden[name], ref[name], rtol=1e-5, atol=1e-6, err_msg=f"{kind} {name}")


def test_onnx_copy_compared_with_pt2_copy_matches_every_layer(activations) -> None:
    _, paths = activations
    onnx_layers = [la.name for la in open_model(str(paths["onnx"])).layers()]
    r = audit.compare_models(
        str(paths["onnx"]), str(paths["pt2"]), "normal", points=256, replicates=REPLICATES, seed=3, layers="all"
    )
    assert [x.name for x in r.layers] == onnx_layers
    for change in r.layers:
        # the same network on the same points: no change beyond float32 rounding (stated: 1e-4 of ν ≈ 1)
        assert change.nu_weighted_change is not None, change.name
        assert abs(change.nu_weighted_change.estimate) < 1e-4, change.name
        assert change.old["nu_weighted"] == pytest.approx(change.new["nu_weighted"], rel=1e-4), change.name


def test_output_with_rows_last_is_not_scrambled(tmp_path: Path) -> None:
    net = netbuild.seeded(netbuild.RowsLast)
    example = torch.zeros(4, 4)
    onnx_path, pt2_path = tmp_path / "last.onnx", tmp_path / "last.pt2"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        torch.onnx.export(net, (example,), str(onnx_path), dynamo=False, input_names=["x"], output_names=["y"],
                          dynamic_axes={"x": {0: "batch"}, "y": {1: "batch"}}, opset_version=17)  # fmt: skip
        program = torch.export.export(net, (example,), dynamic_shapes=({0: torch.export.Dim("batch")},))
        torch.export.save(program, str(pt2_path))
    x = RNG.normal(size=(6, 4))
    with torch.no_grad():
        ref = net(torch.from_numpy(x.astype(np.float32))).T.numpy()
    for path in (onnx_path, pt2_path):
        model = open_model(str(path))
        assert [(o.name, o.shape) for o in model.outputs] == [("y", (3,))], path.suffix
        np.testing.assert_allclose(model.evaluate(x).outputs, ref, rtol=1e-5, atol=1e-6, err_msg=path.suffix)
        r = audit.audit_model(model, "normal", points=256, replicates=REPLICATES, seed=9, layers="none")
        for out in r.outputs:  # additive in every output: ν = 1
            assert out.mean_dimension.ci_low <= 1 <= out.mean_dimension.ci_high, (path.suffix, out.name)


def test_batch_dependent_models_are_refused(tmp_path: Path) -> None:
    net = netbuild.seeded(netbuild.BatchNormed).train()
    with torch.no_grad():  # running statistics far from the batch ones, so the two modes differ
        net.bn.running_mean.fill_(3.0)
    example = torch.randn(4, 3)
    onnx_path, pt2_path = tmp_path / "bn.onnx", tmp_path / "bn.pt2"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        torch.onnx.export(net, (example,), str(onnx_path), dynamo=False, input_names=["x"], output_names=["y"],
                          dynamic_axes={"x": {0: "batch"}, "y": {0: "batch"}}, opset_version=17,
                          training=torch.onnx.TrainingMode.TRAINING)  # fmt: skip
        program = torch.export.export(net, (example,), dynamic_shapes=({0: torch.export.Dim("batch")},))
        torch.export.save(program, str(pt2_path))
    for path in (onnx_path, pt2_path):
        with pytest.raises(UserError, match=r"depend on the rest of the batch.*model\.eval\(\)"):
            open_model(str(path))
    # the same network after model.eval() opens and runs
    net.eval()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        program = torch.export.export(net, (example,), dynamic_shapes=({0: torch.export.Dim("batch")},))
        torch.export.save(program, str(pt2_path))
    assert open_model(str(pt2_path)).outputs[0].shape == (2,)


def test_activations_of_a_decomposed_program(activations, tmp_path: Path) -> None:
    # run_decompositions() spells GELU, SiLU, Mish, HardSwish and softplus out in core ATen operators
    net, _ = activations
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        dim = torch.export.Dim("batch")
        program = torch.export.export(net, (torch.zeros(4, 4),), dynamic_shapes=({0: dim},)).run_decompositions()
        torch.export.save(program, str(tmp_path / "core.pt2"))
    model = open_model(str(tmp_path / "core.pt2"))
    acts = net.acts()
    assert [la.name for la in model.layers()] == [n for i in range(7) for n in (f"fc.{i}", acts[i])]
    x = RNG.normal(size=(9, 4))
    ref = _hooked(net, acts, x)
    ev = model.evaluate(x, capture=acts)
    for name in acts:
        np.testing.assert_allclose(ev.hidden[name], ref[name], rtol=1e-5, atol=1e-6, err_msg=name)


def _same_name_same_values(paths: dict[str, Path], x: np.ndarray, kinds=("onnx", "pt2", "torchscript"), **kw) -> int:
    """Capture every layer in every format; a name the formats share must hold the same values.

    Returns how many (name, pair of formats) were compared.
    """
    captured = {}
    for kind in kinds:
        model = open_model(str(paths[kind]), **(kw if kind == "torchscript" else {}))
        units = {la.name: la.units for la in model.layers()}
        captured[kind] = (units, model.evaluate(x, capture=list(units)).hidden)
    compared = 0
    for i, a in enumerate(kinds):
        for b in kinds[i + 1 :]:
            (ua, ha), (ub, hb) = captured[a], captured[b]
            for name in sorted(set(ua) & set(ub)):
                assert ua[name] == ub[name], (a, b, name, ua[name], ub[name])
                np.testing.assert_allclose(ha[name], hb[name], rtol=1e-4, atol=1e-5, err_msg=f"{a} {b} {name}")
                compared += 1
    return compared


def test_one_name_one_tensor_across_formats(attention, activations, tmp_path: Path) -> None:
    # a layer name the formats share holds the same tensor in each (to float32 rounding)
    _, attention_paths = attention
    assert _same_name_same_values(attention_paths, RNG.normal(size=(5, 64)), input_shape=(16, 4)) >= 3 * 7
    _, activation_paths = activations
    assert _same_name_same_values(activation_paths, RNG.normal(size=(5, 4))) == 3 * 14
    net = netbuild.seeded(netbuild.Recurrent, seed=4)
    paths = netbuild.export_all(net, torch.zeros(3, 6, 3), tmp_path, "rnn")
    # the LSTM's sequence (the module's output), and its last hidden and cell states (rnn/lstm_1, rnn/lstm_2)
    assert _same_name_same_values(paths, RNG.normal(size=(5, 18)), input_shape=(6, 3)) >= 3 * 3
