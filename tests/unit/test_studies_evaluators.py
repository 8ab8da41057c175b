"""The engine's view of models (audit.studies.evaluators): rows in, named arrays out; plain picklable classes."""

import pickle

import numpy as np
from fake_models import Layered

from audit.models.python import PythonModel
from audit.studies.evaluators import ModelEvaluator, PairedEvaluator
from model_zoo import functions as fz


def test_model_evaluator_names_outputs_and_layers():
    model = Layered()
    out = ModelEvaluator(model, ["act", "pre"])(np.ones((5, 3)))
    assert list(out) == ["outputs", "layer:act", "layer:pre"]
    assert out["outputs"].shape == (5, 2) and out["layer:pre"].shape == (5, 4)
    assert list(ModelEvaluator(model, [])(np.ones((2, 3)))) == ["outputs"]


def test_paired_evaluator_reports_both_layers_under_the_old_name():
    old, new = Layered(), Layered()
    new.W = 2 * new.W
    out = PairedEvaluator(old, new, [("act", "act")])(np.ones((4, 3)))
    assert list(out) == ["old", "new", "old:act", "new:act"]
    np.testing.assert_array_equal(out["old"], old.evaluate(np.ones((4, 3))).outputs)
    np.testing.assert_array_equal(out["new:act"], new.evaluate(np.ones((4, 3)), ["act"]).hidden["act"])


def test_evaluators_travel_to_other_processes():
    evaluator = ModelEvaluator(PythonModel(fz.ishigami, 3, source="model_zoo.functions:ishigami"), [])
    copy = pickle.loads(pickle.dumps(evaluator))
    x = np.random.default_rng(0).random((6, 3))
    np.testing.assert_array_equal(copy(x)["outputs"], evaluator(x)["outputs"])
