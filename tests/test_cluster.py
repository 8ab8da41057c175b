"""The same tasks on a dask.distributed cluster give the single-process answer."""

import numpy as np
import pytest

pytest.importorskip("dask.distributed")

from pathlib import Path

from audit import audit_model, load_spec
from audit.models import PythonModel
from audit.models.open import open_model
from model_zoo import functions as fz

ZOO = Path(__file__).resolve().parent.parent / "model_zoo"


@pytest.fixture(scope="module")
def client():
    from audit.cluster import connect

    c = connect("local:2")
    yield c
    c.close()
    c.cluster.close()


def _same(a, b):
    for oa, ob in zip(a.outputs, b.outputs, strict=True):
        assert oa.mean_dimension.estimate == pytest.approx(ob.mean_dimension.estimate, rel=1e-12)
        ea = [f.value.estimate for f in oa.total_index + oa.first_order]
        eb = [f.value.estimate for f in ob.total_index + ob.first_order]
        np.testing.assert_allclose(ea, eb, rtol=1e-10, atol=1e-14)


def test_python_model_on_local_cluster(client):
    m = PythonModel(fz.g_function, 8, source="model_zoo.functions:g_function")
    kw = dict(points=1024, replicates=4, seed=1, block=128)
    _same(audit_model(m, "uniform", cluster=client, **kw), audit_model(m, "uniform", **kw))


def test_onnx_model_with_layers_on_local_cluster(client):
    spec = load_spec(ZOO / "greenhouse_v1.toml")
    m = open_model(str(ZOO / "greenhouse_v1.onnx"))
    kw = dict(points=512, replicates=3, seed=2, block=64)
    a, b = audit_model(m, spec, cluster=client, **kw), audit_model(m, spec, **kw)
    _same(a, b)
    for la, lb in zip(a.layers, b.layers, strict=True):
        assert la.summary["nu_weighted"] == pytest.approx(lb.summary["nu_weighted"], rel=1e-12)
