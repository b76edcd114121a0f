"""Plain JSON values from synth's numeric results.

Every JSON document synth writes (design, explain, implementation) goes
through the same cleaning, so the rules live in one place: numpy scalars
become Python numbers, NaN and infinities become ``null`` (the contract's
"unbounded"), complex numbers become ``[re, im]`` pairs and a negative zero
is written as ``0.0``.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import Any

import numpy as np

__all__ = ["clean", "finite_or_none", "interval_lists", "root_pairs"]


def finite_or_none(x) -> float | None:
    """``float(x)`` if it is finite, else ``None``.

    Parameters
    ----------
    x : float-like or None

    Returns
    -------
    float or None
        ``None`` for ``None``, NaN, infinities and values that are not numbers.
    """
    if x is None:
        return None
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    if not math.isfinite(v):
        return None
    return v if v != 0 else 0.0  # no "-0" in the JSON


def clean(x: Any) -> Any:
    """JSON-safe copy of a nested value.

    Parameters
    ----------
    x : object
        Dicts, lists, tuples, numpy arrays and scalars, Python numbers,
        complex numbers, strings and ``None``, nested freely.

    Returns
    -------
    object
        Dicts with string keys, lists, bools, ints, finite floats or ``None``,
        ``[re, im]`` lists for complex numbers; anything else unchanged.
    """
    if isinstance(x, dict):
        return {str(k): clean(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [clean(v) for v in x]
    if isinstance(x, np.ndarray):
        return [clean(v) for v in x.tolist()]
    # bool before int: bool is a subclass of int
    if isinstance(x, (bool, np.bool_)):
        return bool(x)
    if isinstance(x, (int, np.integer)):
        return int(x)
    if isinstance(x, (float, np.floating)):
        return finite_or_none(x)
    if isinstance(x, (complex, np.complexfloating)):
        return [finite_or_none(x.real), finite_or_none(x.imag)]
    return x


def root_pairs(roots: Iterable, *, sort: bool = True) -> list[list[float]]:
    """Roots as ``[re, im]`` lists.

    Parameters
    ----------
    roots : iterable of complex
    sort : bool, optional
        Order by real part, then imaginary part (the default), so equal
        root sets always give equal JSON; ``False`` keeps the given order.

    Returns
    -------
    list of [float, float]
    """
    rs = [complex(r) for r in roots]
    if sort:
        rs.sort(key=lambda z: (z.real, z.imag))
    return [[float(r.real), float(r.imag)] for r in rs]


def interval_lists(ivs: Iterable) -> list[list[float | None]]:
    """Gain intervals ``(lo, hi)`` as ``[lo, hi]`` lists; an unbounded end (``None``) stays ``None``.

    Parameters
    ----------
    ivs : iterable of (float or None, float or None)

    Returns
    -------
    list of [float or None, float or None]
    """
    return [[None if a is None else float(a), None if b is None else float(b)] for a, b in ivs]
