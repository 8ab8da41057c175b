"""Small models of the Model protocol with hidden layers, for the workflow tests (test helpers)."""

from __future__ import annotations

import numpy as np

from audit.models.base import Evaluation, LayerInfo, TensorInfo


class Layered:
    """A model of the Model protocol with two hidden layers: pre = W x, act = tanh(pre), y = V act."""

    format = "layered"

    def __init__(self):
        rng = np.random.default_rng(0)
        self.W, self.V = rng.normal(size=(4, 3)), rng.normal(size=(2, 4))
        self.source = "layered"
        self.inputs = [TensorInfo("x", (3,), "float64")]
        self.outputs = [TensorInfo("y", (2,), "float64")]
        self.notices = ["a remark of the backend"]
        self.calls = 0

    def layers(self):
        return [LayerInfo("pre", "Gemm", (4,), False), LayerInfo("act", "Tanh", (2, 2), True)]

    def feature_names(self):
        return ["a", "b", "c"]

    def output_names(self):
        return ["y[0]", "y[1]"]

    def evaluate(self, x, capture=()):
        self.calls += 1
        pre = x @ self.W.T
        act = np.tanh(pre)
        hidden = {"pre": pre, "act": act}
        return Evaluation(act @ self.V.T, {name: hidden[name] for name in capture})
