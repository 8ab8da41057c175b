"""Running on dask.distributed (audit.cluster): the same tasks on a local cluster give the single-process answer;
models travel as "open this file again"; bad addresses and unpicklable models are refused."""

import pickle

import numpy as np
import pytest

pytest.importorskip("dask.distributed")

from pathlib import Path

import audit.cluster
from audit import audit_model, load_spec
from audit.cluster import DaskExecutor, close, connect, portable_dumps, portable_loads
from audit.design import Design
from audit.engine import Group, Job, iter_tasks
from audit.errors import UserError
from audit.estimators import make_estimator
from audit.inputs import Law
from audit.models import PythonModel
from audit.models.open import open_model
from model_zoo import functions as fz

ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


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


def test_an_opened_model_file_travels_as_its_open_arguments():
    model = open_model(str(ZOO / "greenhouse_v1.onnx"))
    blob = portable_dumps({"model": model, "other": [1, 2]})
    assert b"greenhouse_v1.onnx" in blob and len(blob) < 4096  # the path, not the session or the weights
    copy = pickle.loads(blob)
    assert copy["other"] == [1, 2] and copy["model"] is not model
    x = np.random.default_rng(0).uniform(0.2, 0.8, (5, 8)).astype(np.float32)
    np.testing.assert_array_equal(copy["model"].evaluate(x).outputs, model.evaluate(x).outputs)


def test_what_travels_is_loaded_once_per_process(monkeypatch):
    monkeypatch.setattr(audit.cluster, "_LOADED", {})
    blob = portable_dumps({"a": np.arange(3)})
    assert portable_loads(blob) is portable_loads(blob)
    for k in range(9):  # the cache keeps a few jobs only
        portable_loads(portable_dumps(k))
    assert len(audit.cluster._LOADED) <= 8


def test_a_model_that_cannot_travel_is_refused_with_a_user_error():
    class Client:
        def scatter(self, *a, **k):
            raise AssertionError("nothing is sent")

    design = Design([Law("normal")] * 2, 8, 2, seed=1)
    job = Job("audit", lambda x: {"y": x[:, :1]}, design, make_estimator("jansen", d=2), [Group("y", 1)])
    with pytest.raises(UserError, match=r"could not be sent to the cluster's workers.*not lambdas or closures"):
        list(DaskExecutor(Client()).map(job, iter_tasks(8, 2, 4)))


@pytest.mark.parametrize("address", ["local:0", "local:x", "local:-1", "local:100000"])
def test_bad_local_worker_counts_are_refused_before_starting_anything(address):
    with pytest.raises(UserError, match="needs a whole number of worker processes from 1 to"):
        connect(address)


def test_closing_never_raises():
    class Broken:
        cluster = None

        def close(self):
            raise OSError("connection reset")

    assert close(Broken()) == "OSError: connection reset"

    class Fine:
        def __init__(self):
            self.cluster, self.closed = None, False

        def close(self):
            self.closed = True

    fine = Fine()
    assert close(fine) is None and fine.closed


def _trim_setting() -> str:
    import os

    return os.environ.get(audit.cluster.TRIM, "<unset>")


def test_local_workers_keep_the_usual_malloc(client):
    """dask's MALLOC_TRIM_THRESHOLD_ fixes glibc's mmap threshold, so numpy's temporaries are mapped afresh on
    every allocation (3.4x slower measured on a numpy-bound model); local workers start without it."""
    assert client.submit(_trim_setting, pure=False).result() == "<unset>"
