"""Torch network classes of the netdim model zoo.

Every network takes raw physical inputs and returns outputs in physical units:
input standardisation and output de-standardisation are fixed affine steps
inside the network (registered buffers, so they travel with the state dict and
with every exported format). Activations are separate modules so that they show
as layers in exported graphs.

Classes
-------
GreenhouseMLP
    Surrogate of :func:`model_zoo.greenhouse.simulate` (8 inputs, 2 outputs).
DigitsMLP, DigitsCNN
    Classifiers of the 8x8 digits images (pixel values 0..16), 10 logits.
DiabetesMLP
    Regressor of disease progression from 10 standardised clinical features.
RidgeNet
    Validation network ``y = g(θᵀx)`` with hand-set weights.
AdditiveNet
    Validation network ``y = Σ_j Σ_i a_ji tanh(w_ji x_j + c_ji)`` (mean dimension 1).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import torch
from torch import nn

__all__ = [
    "AdditiveNet",
    "Affine",
    "DiabetesMLP",
    "DigitsCNN",
    "DigitsMLP",
    "GreenhouseMLP",
    "NormalCDF",
    "RidgeNet",
]

RIDGE_ACTIVATIONS = ("phi", "relu")


class Affine(nn.Module):
    """A fixed elementwise affine map ``y = (x - shift) / scale``.

    With ``inverse=True`` it computes ``y = x * scale + shift`` instead (used to
    return outputs in physical units). ``shift`` and ``scale`` are buffers, set
    with :meth:`set` after fitting and saved in the state dict.

    Parameters
    ----------
    size : int
        Number of features.
    inverse : bool
        Whether to apply the inverse map.
    """

    def __init__(self, size: int, inverse: bool = False) -> None:
        super().__init__()
        self.inverse = inverse
        self.register_buffer("shift", torch.zeros(size))
        self.register_buffer("scale", torch.ones(size))

    def set(self, shift: Sequence[float] | torch.Tensor, scale: Sequence[float] | torch.Tensor) -> None:
        """Set the shift and scale (``scale`` must be positive)."""
        shift_t = torch.as_tensor(shift, dtype=self.shift.dtype).reshape(self.shift.shape)
        scale_t = torch.as_tensor(scale, dtype=self.scale.dtype).reshape(self.scale.shape)
        if not bool(torch.all(scale_t > 0)):
            raise ValueError("scale must be positive")
        self.shift.copy_(shift_t)
        self.scale.copy_(scale_t)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        if self.inverse:
            return x * self.scale + self.shift
        return (x - self.shift) / self.scale


class NormalCDF(nn.Module):
    """Standard normal distribution function ``Φ(z) = (1 + erf(z / √2)) / 2``."""

    def forward(self, z: torch.Tensor) -> torch.Tensor:
        return 0.5 * (1.0 + torch.erf(z * (1.0 / math.sqrt(2.0))))


def _activation(name: str) -> nn.Module:
    choices = {"tanh": nn.Tanh, "relu": nn.ReLU, "silu": nn.SiLU}
    if name not in choices:
        raise ValueError(f"activation must be one of {sorted(choices)}, got {name!r}")
    return choices[name]()


class _ScaledMLP(nn.Module):
    """Standardise -> (Linear, activation) x depth -> Linear -> de-standardise."""

    def __init__(self, inputs: int, outputs: int, hidden: int, depth: int, activation: str) -> None:
        super().__init__()
        if hidden < 1:
            raise ValueError(f"hidden must be a positive integer, got {hidden}")
        if depth < 1:
            raise ValueError(f"depth must be a positive integer, got {depth}")
        self.scale_in = Affine(inputs)
        layers: list[nn.Module] = []
        width = inputs
        for _ in range(depth):
            layers += [nn.Linear(width, hidden), _activation(activation)]
            width = hidden
        layers.append(nn.Linear(width, outputs))
        self.body = nn.Sequential(*layers)
        self.scale_out = Affine(outputs, inverse=True)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.scale_out(self.body(self.scale_in(x)))


class GreenhouseMLP(_ScaledMLP):
    """Surrogate of the fictional greenhouse simulator: 8 inputs -> 2 outputs.

    Parameters
    ----------
    hidden : int
        Width of every hidden layer.
    depth : int
        Number of hidden layers.
    activation : {"tanh", "relu", "silu"}
        Hidden nonlinearity.
    """

    def __init__(self, hidden: int = 32, depth: int = 2, activation: str = "tanh") -> None:
        super().__init__(8, 2, hidden, depth, activation)


class DiabetesMLP(_ScaledMLP):
    """Regressor of the diabetes data: 10 inputs -> 1 output (disease progression).

    Parameters
    ----------
    hidden : int
        Width of the hidden layer(s).
    depth : int
        Number of hidden layers.
    activation : {"tanh", "relu", "silu"}
        Hidden nonlinearity.
    """

    def __init__(self, hidden: int = 16, depth: int = 1, activation: str = "tanh") -> None:
        super().__init__(10, 1, hidden, depth, activation)


class DigitsMLP(nn.Module):
    """Classifier of 8x8 digit images given as 64 pixel values (0..16): 64 -> hidden -> 10 logits.

    Parameters
    ----------
    hidden : int
        Width of the hidden layer.
    """

    def __init__(self, hidden: int = 64) -> None:
        super().__init__()
        self.scale_in = Affine(64)
        self.body = nn.Sequential(nn.Linear(64, hidden), nn.ReLU(), nn.Linear(hidden, 10))

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.body(self.scale_in(x))


class DigitsCNN(nn.Module):
    """Convolutional classifier of 8x8 digit images, input shape (batch, 1, 8, 8), 10 logits.

    conv 3x3 (``channels``) -> ReLU -> conv 3x3 (``channels``) -> ReLU -> flatten -> Linear.

    Parameters
    ----------
    channels : int
        Channels of both convolutions.
    """

    def __init__(self, channels: int = 8) -> None:
        super().__init__()
        self.scale_in = Affine(1)
        self.features = nn.Sequential(
            nn.Conv2d(1, channels, 3, padding=1),
            nn.ReLU(),
            nn.Conv2d(channels, channels, 3, stride=2, padding=1),
            nn.ReLU(),
            nn.Flatten(),
        )
        self.classifier = nn.Linear(channels * 4 * 4, 10)

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.classifier(self.features(self.scale_in(x)))


class RidgeNet(nn.Module):
    """Validation ridge network ``y = g(s θᵀx − t)`` with a single hidden unit.

    ``activation="phi"`` gives ``g = Φ`` (standard normal distribution function,
    via erf), ``activation="relu"`` gives ``g(z) = max(0, z)``. The weights are set
    by hand from ``theta``, ``scale`` and ``shift``; nothing is trained.

    Parameters
    ----------
    theta : sequence of float
        Direction θ (any length d; normalised to unit length).
    scale : float
        Multiplier s of θᵀx.
    shift : float
        Offset t subtracted after scaling (the bias is ``−t``).
    activation : {"phi", "relu"}
        Outer function g.
    """

    def __init__(
        self,
        theta: Sequence[float] = (1.0,),
        scale: float = 1.0,
        shift: float = 0.0,
        activation: str = "phi",
    ) -> None:
        super().__init__()
        if activation not in RIDGE_ACTIVATIONS:
            raise ValueError(f"activation must be one of {list(RIDGE_ACTIVATIONS)}, got {activation!r}")
        th = torch.as_tensor(list(theta), dtype=torch.float64)
        if th.ndim != 1 or th.numel() < 1 or float(th.norm()) == 0.0:
            raise ValueError("theta must be a non-empty, non-zero sequence of numbers")
        th = th / th.norm()
        self.project = nn.Linear(th.numel(), 1)
        with torch.no_grad():
            self.project.weight.copy_((scale * th).reshape(1, -1).float())
            self.project.bias.fill_(-float(shift))
        self.link = NormalCDF() if activation == "phi" else nn.ReLU()

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.link(self.project(x))


class AdditiveNet(nn.Module):
    """Validation additive network ``y = Σ_j Σ_i a_ji tanh(w_ji x_j + c_ji) + b``.

    The first layer is block-diagonal: each input feeds its own ``per_input``
    hidden units and no other (the off-block weights are zero and nothing is
    trained), so the output is a sum of functions of one input each and its
    mean dimension is exactly 1.

    Parameters
    ----------
    inner_weight, inner_bias, outer_weight : sequence of sequence of float
        Arrays of shape (d, per_input): ``w_ji``, ``c_ji`` and ``a_ji``.
    outer_bias : float
        Constant b.
    """

    def __init__(
        self,
        inner_weight: Sequence[Sequence[float]] = ((1.0,),),
        inner_bias: Sequence[Sequence[float]] = ((0.0,),),
        outer_weight: Sequence[Sequence[float]] = ((1.0,),),
        outer_bias: float = 0.0,
    ) -> None:
        super().__init__()
        w = torch.as_tensor(inner_weight, dtype=torch.float32)
        c = torch.as_tensor(inner_bias, dtype=torch.float32)
        a = torch.as_tensor(outer_weight, dtype=torch.float32)
        if w.ndim != 2 or w.shape != c.shape or w.shape != a.shape:
            raise ValueError(
                "inner_weight, inner_bias and outer_weight must be arrays of the same "
                f"shape (d, per_input); got {tuple(w.shape)}, {tuple(c.shape)}, {tuple(a.shape)}"
            )
        d, k = w.shape
        self.inner = nn.Linear(d, d * k)
        self.act = nn.Tanh()
        self.outer = nn.Linear(d * k, 1)
        block = torch.zeros(d * k, d)
        for j in range(d):
            block[j * k : (j + 1) * k, j] = w[j]
        with torch.no_grad():
            self.inner.weight.copy_(block)
            self.inner.bias.copy_(c.reshape(-1))
            self.outer.weight.copy_(a.reshape(1, -1))
            self.outer.bias.fill_(float(outer_bias))

    def forward(self, x: torch.Tensor) -> torch.Tensor:
        return self.outer(self.act(self.inner(x)))
