"""Number and interval formatting shared by the explanation sentences.

Every number a sentence cites goes through :func:`num`, so a reader (or a
test) can match a cited value with the computed one to four significant digits.
"""

from __future__ import annotations

import math

Interval = tuple[float | None, float | None]


def num(x: float, digits: int = 4) -> str:
    """``x`` to ``digits`` significant digits, never ``-0``."""
    x = float(x)
    if not math.isfinite(x):
        return "infinity" if x > 0 else "-infinity"
    text = f"{x:.{digits}g}"
    return "0" if text in ("-0", "0") else text


def point(z: complex, digits: int = 4) -> str:
    """A pole or zero location: ``2``, ``-1+3j`` or ``±1.414j`` style."""
    z = complex(z)
    if abs(z.imag) <= 1e-9 * abs(z):
        return num(z.real, digits)
    re = num(z.real, digits)
    im = num(abs(z.imag), digits)
    if re == "0":
        return f"±{im}j"
    return f"{re}±{im}j"


def interval(lo: float | None, hi: float | None, var: str = "K") -> str:
    """An open gain interval in words: ``0 < K < 6``, ``K > 7.5``, ``every real K``."""
    if lo is None and hi is None:
        return f"every real {var}"
    if lo is None:
        return f"{var} < {num(hi)}"
    if hi is None:
        return f"{var} > {num(lo)}"
    return f"{num(lo)} < {var} < {num(hi)}"


def intervals(ivs, var: str = "K", none: str = "no real gain") -> str:
    """A list of open intervals joined with ``or``."""
    ivs = list(ivs)
    if not ivs:
        return none
    return " or ".join(interval(lo, hi, var) for lo, hi in ivs)


def plural(n: int, word: str, many: str | None = None) -> str:
    """``1 pole``, ``2 poles``."""
    return f"{n} {word if n == 1 else (many or word + 's')}"


def points(values, empty: str = "none") -> str:
    """Comma-separated pole/zero locations, conjugate pairs shown once."""
    shown = []
    for z in values:
        z = complex(z)
        if z.imag < -1e-9 * abs(z):
            continue
        shown.append(point(z))
    return ", ".join(shown) if shown else empty
