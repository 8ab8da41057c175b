"""Compare two JSON reports number by number (a test helper)."""

from __future__ import annotations

import math
from typing import Any

#: Keys whose values are not results of the computation.
NOT_RESULTS = frozenset({"seconds", "source", "spec", "block"})


def differences(
    old: Any, new: Any, rtol: float, where: str = "report", ignore=NOT_RESULTS, absolute: dict[str, float] | None = None
) -> list[str]:
    """Every place where ``new`` differs from ``old`` (numbers beyond ``rtol``; keys of ``old`` only).

    ``absolute`` maps keys to an absolute tolerance used for their values instead (for quantities
    formed by cancellation, whose last bits are those of larger numbers). A ``std_error`` beside an
    ``estimate`` is compared to ``rtol`` of the larger of the two: a standard error is the spread of
    the randomizations' estimates, so rounding each estimate (the order of float64 additions) moves
    it by ``rtol`` of the estimates, not of itself (common practice, no source).
    """
    out: list[str] = []
    _walk(old, new, where, out, rtol, ignore, absolute or {})
    return out


def _walk(old: Any, new: Any, where: str, out: list[str], rtol: float, ignore, absolute: dict, key=None) -> None:
    if isinstance(old, dict):
        if not isinstance(new, dict):
            out.append(f"{where}: was an object, now {type(new).__name__}")
            return
        for key, value in old.items():
            if key in ignore:
                continue
            if key not in new:
                out.append(f"{where}.{key}: missing")
                continue
            scale = old.get("estimate") if key == "std_error" else None
            if isinstance(scale, float) and isinstance(value, float) and key not in absolute:
                tol = rtol * max(abs(scale), abs(value))
                if isinstance(new[key], int | float) and abs(value - new[key]) <= tol:
                    continue
            _walk(value, new[key], f"{where}.{key}", out, rtol, ignore, absolute, key)
    elif isinstance(old, list):
        if not isinstance(new, list) or len(new) != len(old):
            out.append(f"{where}: list of {len(old)} became {new!r:.60}")
            return
        for i, (a, b) in enumerate(zip(old, new, strict=True)):
            _walk(a, b, f"{where}[{i}]", out, rtol, ignore, absolute, key)
    elif isinstance(old, float) and isinstance(new, int | float) and not isinstance(new, bool):
        if key in absolute:
            if abs(old - new) > absolute[key]:
                out.append(f"{where}: {old!r} became {new!r} (absolute tolerance {absolute[key]:.3g})")
        elif not math.isclose(old, new, rel_tol=rtol, abs_tol=1e-300):
            out.append(f"{where}: {old!r} became {new!r}")
    elif old != new:
        out.append(f"{where}: {old!r} became {new!r}")
