"""netdim simplify from the command line: advise then simplify in two commands, and the files outside netdim.

The round trips load the written files in a fresh interpreter where netdim is
not importable (tests/cleanrun.py) and compare with the source run there on
the same rows (common practice, no source).
"""

import json
from pathlib import Path

import numpy as np
from cleanrun import run_clean

from audit.cli import main

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"
SPEC = str(ZOO / "greenhouse_v1.toml")


def test_advise_then_simplify_in_two_commands(tmp_path, capsys):
    advice = tmp_path / "advice.json"
    assert main(["advise", str(ZOO / "greenhouse_v1.onnx"), "--inputs", SPEC, "--seed", "1", "--points", "256",
                 "--gain-points", "", "--json", str(advice), "-q"]) == 0  # fmt: skip
    out = tmp_path / "greenhouse-simplified.onnx"
    report = tmp_path / "simplified.json"
    code = main(["simplify", str(ZOO / "greenhouse_v1.onnx"), "--inputs", SPEC, "--advice", str(advice),
                 "--out", str(out), "--seed", "2", "--points", "256", "--json", str(report)])  # fmt: skip
    text = capsys.readouterr().out
    assert code == 0 and out.is_file()
    assert "before and after" in text and "Simplified model written to" in text and "not a safety validation" in text
    data = json.loads(report.read_text())
    best = json.loads(advice.read_text())["outputs"][0]["preintegrate"][0]
    assert data["kind"] == "simplified"
    assert data["written"]["metadata"]["integrated"][0]["feature"] == best["feature"]
    assert data["written"]["metadata"]["integrated"][0]["nodes"] == best["nodes"]
    assert all(o["mean_agrees"] and o["variance_identity"]["agree"] for o in data["outputs"])
    assert main(["show", str(report)]) == 0


def test_unknown_input_and_existing_file_exit_2(tmp_path, capsys):
    onnx_file = str(ZOO / "greenhouse_v1.onnx")
    assert main(["simplify", onnx_file, "--inputs", SPEC, "--integrate", "sun", "--no-save"]) == 2
    assert "does not have" in capsys.readouterr().err
    taken = tmp_path / "taken.onnx"
    taken.write_bytes(b"x")
    assert main(["simplify", onnx_file, "--inputs", SPEC, "--freeze", "wind_speed", "--out", str(taken),
                 "--no-check", "--no-save"]) == 2  # fmt: skip
    assert "--out" in capsys.readouterr().err and taken.read_bytes() == b"x"
    assert main(["simplify", onnx_file, "--inputs", SPEC, "--no-save"]) == 2
    assert "Nothing to simplify" in capsys.readouterr().err


def _write(tmp_path, name, flags):
    out = tmp_path / ("simplified" + Path(name).suffix)
    assert main(["simplify", str(ZOO / name), "--inputs", SPEC, *flags, "--out", str(out), "--no-check",
                 "--no-save", "-q"]) == 0  # fmt: skip
    return out


def test_onnx_round_trip_without_netdim(tmp_path):
    out = _write(tmp_path, "greenhouse_v1.onnx", ["--integrate", "solar_irradiance:8", "--freeze", "wind_speed=3"])
    got = run_clean(f"""
        import json, numpy as np, onnx, onnxruntime as ort
        model = onnx.load({str(out)!r})
        onnx.checker.check_model(model, full_check=True)
        meta = {{p.key: p.value for p in model.metadata_props}}
        s = ort.InferenceSession({str(out)!r})
        x = np.full((3, 6), 0.5, dtype=np.float32)
        nodes = json.loads(meta["netdim.plan"])["integrated"][0]["nodes"]
        print(json.dumps({{"shape": list(s.run(None, {{"x": x}})[0].shape), "nodes": nodes,
                          "sha": meta["netdim.source_sha256"], "inputs": meta["netdim.inputs"]}}))
    """)
    info = json.loads(got)
    assert info["shape"] == [3, 2] and info["nodes"] == 8
    assert info["inputs"].split(",") == ["outside_temperature", "vent_opening", "pipe_temperature",
                                         "outside_humidity", "screen_closure", "leaf_area_index"]  # fmt: skip
    import hashlib

    assert info["sha"] == hashlib.sha256((ZOO / "greenhouse_v1.onnx").read_bytes()).hexdigest()


def test_torch_round_trip_without_netdim(tmp_path):
    script = _write(tmp_path, "greenhouse_v1.pt", ["--freeze", "wind_speed=3"])
    program = _write(tmp_path, "greenhouse_v1.pt2", ["--freeze", "wind_speed=3"])
    got = run_clean(f"""
        import json, torch
        x = torch.full((4, 7), 0.5)
        full = torch.cat([x, torch.full((4, 1), 3.0)], 1)
        a = torch.jit.load({str(script)!r})(x)
        b = torch.export.load({str(program)!r}).module()(x)
        ref = torch.jit.load({str(ZOO / "greenhouse_v1.pt")!r})(full)
        extra = {{"netdim.json": ""}}
        torch.jit.load({str(script)!r}, _extra_files=extra)
        print(json.dumps({{"same": bool(torch.equal(a, ref)) and bool(torch.equal(b, ref)),
                          "frozen": json.loads(extra["netdim.json"])["simplified"]["frozen"][0]["feature"]}}))
    """)
    info = json.loads(got)
    assert info == {"same": True, "frozen": "wind_speed"}


def test_python_module_round_trip_without_netdim(tmp_path):
    out = tmp_path / "ishigami_simplified.py"
    spec = str(ZOO / "ishigami.toml")
    assert main(["simplify", "model_zoo.functions:ishigami", "--inputs", spec, "--integrate", "x3:16",
                 "--out", str(out), "--no-check", "--no-save", "-q"]) == 0  # fmt: skip
    text = out.read_text()
    assert "import audit" not in text and "from audit" not in text
    copy = tmp_path / "lib"  # the source function's package alone, without netdim beside it
    (copy / "model_zoo").mkdir(parents=True)
    (copy / "model_zoo" / "__init__.py").write_text("")
    (copy / "model_zoo" / "functions.py").write_text((ZOO / "functions.py").read_text())
    got = run_clean(
        f"""
        import json, sys, numpy as np
        sys.path.insert(0, {str(out.parent)!r})
        from ishigami_simplified import simplified, PLAN
        x = np.array([[0.3, -1.2], [2.0, 0.4]])
        print(json.dumps({{"y": simplified(x).tolist(), "nodes": PLAN["integrated"][0]["nodes"]}}))
    """,
        extra_paths=[str(copy)],
    )
    info = json.loads(got)
    # Ishigami f = sin x1 + 7 sin² x2 + 0.1 x3⁴ sin x1 ("An importance quantification technique in uncertainty
    # analysis for computer models", Proc. ISUMA '90, 1990); x3 ~ U(−π, π): E[x3⁴] = π⁴ / 5, and a 16-node
    # Gauss–Legendre rule is exact for it (common practice, no source)
    x = np.array([[0.3, -1.2], [2.0, 0.4]])
    exact = np.sin(x[:, 0]) * (1 + 0.1 * np.pi**4 / 5) + 7 * np.sin(x[:, 1]) ** 2
    assert info["nodes"] == 16 and np.allclose(info["y"], exact, rtol=1e-12, atol=1e-12)
