"""netdim audit on the command line with every layer of a convolutional network."""

import json
import os
import subprocess
import sys
from pathlib import Path

from audit.models.open import open_model

ROOT = Path(__file__).resolve().parents[2]


def test_digits_cnn_audits_end_to_end_with_every_layer(tmp_path):
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    out = tmp_path / "cnn.json"
    p = subprocess.run(
        [
            sys.executable,
            "-m",
            "audit",
            "audit",
            "model_zoo/digits_cnn.onnx",
            "--inputs",
            "model_zoo/digits_cnn.toml",
            "--layers",
            "all",
            "--points",
            "128",
            "--replicates",
            "4",
            "--seed",
            "1",
            "--json",
            str(out),
        ],
        capture_output=True,
        text=True,
        env=env,
        cwd=ROOT,
        timeout=300,
    )
    assert p.returncode == 0, p.stderr
    rep = json.loads(out.read_text())
    model = open_model(str(ROOT / "model_zoo" / "digits_cnn.onnx"))
    assert [x["name"] for x in rep["layers"]] == [x.name for x in model.layers()]
    assert len(rep["inputs"]) == 64 and len(rep["outputs"]) == 10
    for layer in rep["layers"]:
        s = layer["summary"]
        assert s["units"] == len(layer["units"])
        assert s["inert_units"] == sum(u["inert"] for u in layer["units"])
