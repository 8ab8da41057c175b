"""Activations and normalisations that exporters split into several graph nodes, found by pattern.

ONNX exporters write GELU as ``Div``, ``Erf``, ``Add``, ``Mul``, ``Mul`` (or, in
its tanh form, nine nodes), SiLU as ``Sigmoid`` then ``Mul``, Mish as
``Softplus``, ``Tanh``, ``Mul``; authors write ``x * torch.sigmoid(x)`` by hand;
older opsets spell LayerNorm out in means, a square root and a division.
:func:`fuse` finds these shapes in a backend-neutral graph
(:class:`audit.models.graph.Node`) and replaces each by one node that computes
the whole function, so that the function's output is one layer and the inner
nodes are none.

A pattern is a small expression tree over lower-case operator names: a tuple
``(op, arg, ...)`` (``op`` may list alternatives, ``"rsqrt|reciprocal"``; ``add``
and ``mul`` match their arguments in either order; trailing constant arguments
of a node beyond the pattern's are allowed), :data:`X` for the function's one
input (the same tensor at every occurrence), ``const(v, ...)`` for a scalar constant
of one of the values ``v`` (to 0.1 %; ``const()`` for any constant) and
``alt(p, q, ...)`` for alternatives. Nodes are visited from the last, so the
largest function is found at its final node before any part of it is; a match
is only kept when no inner node is used outside it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import replace
from typing import Any

from .graph import Const, Node

__all__ = ["FUSED_OPS", "PATTERNS", "X", "alt", "const", "fuse"]

#: The function's input in a pattern.
X = "x"


def const(*values: float) -> tuple[Any, ...]:
    """A scalar constant of one of ``values`` (any constant when none is given)."""
    return ("const", values)


def alt(*patterns: Any) -> tuple[Any, ...]:
    """Any one of ``patterns``."""
    return ("|", patterns)


_COMMUTATIVE = frozenset({"add", "mul"})
_ROOT2 = math.sqrt(2.0)
_K = math.sqrt(2.0 / math.pi)  # tanh form of GELU
_A = 0.044715

# Normal distribution function Φ(x) = (1 + erf(x / √2)) / 2, as written and as exported.
_ERF1 = ("add", ("erf", alt(("div", X, const(_ROOT2)), ("mul", X, const(1.0 / _ROOT2)))), const(1.0))
_CUBE = alt(("mul", X, ("mul", X, X)), ("pow", X, const(3.0)))
_INNER = alt(
    ("mul", ("add", X, ("mul", _CUBE, const(_A))), const(_K)),
    ("add", ("mul", X, const(_K)), ("mul", _CUBE, const(_K * _A))),
)
_TANH1 = ("add", ("tanh", _INNER), const(1.0))
_SHIFT3 = ("add", X, const(3.0))
_RELU6 = alt(
    ("clip", _SHIFT3),
    ("hardtanh", _SHIFT3, const(0.0), const(6.0)),
    ("relu6", _SHIFT3),
    ("clamp", _SHIFT3, const(0.0), const(6.0)),
    ("clamp", ("clamp", _SHIFT3, const(0.0)), const(), const(6.0)),  # as torch decomposes it
)
# softplus as torch decomposes it: x beyond the threshold, else log1p(exp(x)) (with beta: of β x, / β)
_BETA_X = ("mul", X, const())
_SOFTPLUS_CUT = alt(
    ("where", ("gt", X, const()), X, ("log1p", ("exp", X))),
    ("where", ("gt", _BETA_X, const()), X, ("div", ("log1p", ("exp", _BETA_X)), const())),
)
_MEAN = "mean"
_CENTRED = ("sub", X, (_MEAN, X))
_VARIANCE = (_MEAN, alt(("pow", _CENTRED, const(2.0)), ("mul", _CENTRED, _CENTRED)))
_NORMED = alt(
    ("div", _CENTRED, ("sqrt", ("add", _VARIANCE, const()))),
    ("mul", _CENTRED, ("rsqrt|reciprocal", ("add", _VARIANCE, const()))),
)

_PHI = alt(("mul", _ERF1, const(0.5)), ("div", _ERF1, const(2.0)))  # Φ(x)
_SOFTPLUS = alt(("softplus", X), _SOFTPLUS_CUT, ("log1p", ("exp", X)), ("log", ("add", ("exp", X), const(1.0))))
_HARDSIGMOID = alt(("hardsigmoid", X), ("div", _RELU6, const(6.0)), ("mul", _RELU6, const(1.0 / 6.0)))

#: (operator the match computes, pattern), tried in this order at every node.
PATTERNS: tuple[tuple[str, Any], ...] = (
    ("gelu", ("mul", X, _PHI)),
    ("gelu", ("mul", ("mul", X, _ERF1), const(0.5))),
    ("gelu", ("mul", ("mul", X, const(0.5)), _ERF1)),
    ("gelu", ("div", ("mul", X, _ERF1), const(2.0))),
    ("gelu", ("mul", ("mul", X, _TANH1), const(0.5))),
    ("gelu", ("mul", ("mul", X, const(0.5)), _TANH1)),
    ("gelu", ("mul", X, ("mul", _TANH1, const(0.5)))),
    ("gelu", ("div", ("mul", X, _TANH1), const(2.0))),
    ("normal_cdf", _PHI),
    ("mish", ("mul", X, ("tanh", _SOFTPLUS))),
    ("softplus", ("div", ("softplus", ("mul", X, const())), const())),
    ("softplus", _SOFTPLUS_CUT),
    ("softplus", ("log1p", ("exp", X))),
    ("softplus", ("log", ("add", ("exp", X), const(1.0)))),
    ("hardswish", ("mul", X, _HARDSIGMOID)),
    ("hardswish", ("div", ("mul", X, _RELU6), const(6.0))),
    ("hardsigmoid", ("div", _RELU6, const(6.0))),
    ("hardsigmoid", ("mul", _RELU6, const(1.0 / 6.0))),
    ("silu", ("mul", X, ("sigmoid", X))),
    ("layer_norm", ("add", ("mul", _NORMED, const()), const())),
    ("layer_norm", ("mul", _NORMED, const())),
    ("layer_norm", _NORMED),
)

#: Operators :func:`fuse` may produce.
FUSED_OPS = frozenset(op for op, _ in PATTERNS)

_Match = tuple[str | None, frozenset[str]]


def _const(pattern: tuple[Any, ...], arg: Any) -> list[_Match]:
    if not isinstance(arg, Const):
        return []
    wanted = pattern[1]
    if wanted and (arg.value is None or not any(math.isclose(arg.value, v, rel_tol=1e-3) for v in wanted)):
        return []
    return [(None, frozenset())]


def _combine(partial: list[_Match], more: list[_Match]) -> list[_Match]:
    out = []
    for x0, m0 in partial:
        for x1, m1 in more:
            if x0 is not None and x1 is not None and x0 != x1:
                continue
            out.append((x0 if x0 is not None else x1, m0 | m1))
    return out


def _match(pattern: Any, arg: Any, nodes: dict[str, Node]) -> list[_Match]:
    """Every way ``arg`` matches ``pattern``: (input key, keys of the matched nodes)."""
    if pattern == X:
        return [] if isinstance(arg, Const) else [(arg, frozenset())]
    head = pattern[0]
    if head == "const":
        return _const(pattern, arg)
    if head == "|":
        return [m for p in pattern[1] for m in _match(p, arg, nodes)]
    node = nodes.get(arg) if isinstance(arg, str) else None
    if node is None or node.op not in head.split("|"):
        return []
    wanted = pattern[1:]
    if len(node.args) < len(wanted) or not all(isinstance(a, Const) for a in node.args[len(wanted) :]):
        return []
    given = node.args[: len(wanted)]
    orders = [given]
    if node.op in _COMMUTATIVE and len(wanted) == 2:
        orders.append(given[::-1])
    found: list[_Match] = []
    for order in orders:
        partial: list[_Match] = [(None, frozenset({node.key}))]
        for p, a in zip(wanted, order, strict=True):
            partial = _combine(partial, _match(p, a, nodes))
            if not partial:
                break
        found.extend(partial)
    return found


def fuse(nodes: Sequence[Node], returned: set[str] = frozenset()) -> list[Node]:  # type: ignore[assignment]
    """``nodes`` with every pattern of :data:`PATTERNS` replaced by one node.

    Parameters
    ----------
    nodes : sequence of Node
        A graph in execution order.
    returned : set of str
        Keys the graph returns (an inner node that is returned is used outside).

    Returns
    -------
    list of Node
        The fused node takes the key, scope and candidacy of the pattern's last
        node, the pattern's operator and the one input; inner nodes are gone.
    """
    by_key = {n.key: n for n in nodes}
    users: dict[str, set[str]] = {}
    for n in nodes:
        for a in (*n.args, *n.extra):
            if isinstance(a, str):
                users.setdefault(a, set()).add(n.key)
    removed: set[str] = set()
    for node in reversed(list(nodes)):  # a function's last node first: the whole before its parts
        if node.key in removed:
            continue
        for op, pattern in PATTERNS:
            match = _fused(node, pattern, by_key, users, returned)
            if match is None:
                continue
            x, inner = match
            for key in (*inner, node.key):
                for a in (*by_key[key].args, *by_key[key].extra):
                    if isinstance(a, str):
                        users.get(a, set()).discard(key)
            by_key[node.key] = replace(by_key[node.key], op=op, args=(x,), extra=())
            removed |= inner
            for key in inner:
                by_key.pop(key, None)
            users.setdefault(x, set()).add(node.key)
            break
    return [by_key[n.key] for n in nodes if n.key in by_key]


def _fused(
    node: Node, pattern: Any, nodes: dict[str, Node], users: dict[str, set[str]], returned: set[str]
) -> tuple[str, frozenset[str]] | None:
    """(input, inner keys) of the first match of ``pattern`` rooted at ``node`` that stands alone."""
    for x, keys in _match(pattern, node.key, nodes):
        if x is None or x in keys:
            continue
        inner = keys - {node.key}
        if all(k not in returned and users.get(k, set()) <= keys for k in inner):
            return x, frozenset(inner)
    return None
