"""Exact references for tests: stabilising gain intervals and roots without floating point.

Nothing here calls synth.  The coefficients (binary floats) become exact
rationals; sympy does the algebra:

* :func:`exact_stable_intervals`: the open gain intervals for which
  ``den + K num`` is Hurwitz.  A root can reach the imaginary axis only where
  the Hurwitz determinant ``Delta_{n-1}(K)`` vanishes (Orlando's formula:
  ``Delta_{n-1}`` is, up to a factor, the product of all pairwise root sums),
  at the origin only where the constant coefficient ``a_n(K)`` vanishes, and
  through infinity only where the leading one ``a_0(K)`` does.  The real roots
  of their product, isolated exactly by sympy, split the gain axis; one exact
  Hurwitz test (all leading principal minors of the Hurwitz matrix positive)
  at a rational point of each piece decides it.
* :func:`mp_roots`: roots by ``mpmath.polyroots`` at 60 digits.

References
----------
A. Hurwitz, "Ueber die Bedingungen, unter welchen eine Gleichung nur Wurzeln
mit negativen reellen Theilen besitzt", Math. Ann. 46, 1895; F. R.
Gantmacher, *The Theory of Matrices*, Vol. II, Chelsea, 1959, ch. XV
(Hurwitz matrix, Orlando's formula).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import sympy as sp

K = sp.Symbol("K", real=True)


def _rat(x) -> sp.Rational:
    f = Fraction(float(x))  # exact: every binary float is a rational
    return sp.Rational(f.numerator, f.denominator)


def _hurwitz_matrix(a: list, n: int) -> sp.Matrix:
    def coef(k):
        return a[k] if 0 <= k <= n else sp.Integer(0)
    return sp.Matrix(n, n, lambda i, j: coef(2 * j - i + 1))


def _is_hurwitz(a: list) -> bool:
    """Exact Hurwitz test of ``a[0] s^n + ... + a[n]`` (rational coefficients)."""
    while a and a[0] == 0:
        a = a[1:]
    if not a:
        return False
    if a[0] < 0:
        a = [-x for x in a]
    n = len(a) - 1
    if n == 0:
        return True
    if any(x <= 0 for x in a):
        return False
    h = _hurwitz_matrix(a, n)
    return all(h[:k, :k].det(method="bareiss") > 0 for k in range(1, n + 1))


def exact_stable_intervals(num, den) -> list[tuple[float | None, float | None]]:
    """Open intervals of real ``K`` with ``den + K num`` Hurwitz, from exact arithmetic.

    Ends are the exact algebraic numbers rounded to the nearest float; ``None``
    marks an unbounded end.
    """
    n = [_rat(x) for x in np.atleast_1d(num)]
    d = [_rat(x) for x in np.atleast_1d(den)]
    size = max(len(n), len(d))
    n = [sp.Integer(0)] * (size - len(n)) + n
    d = [sp.Integer(0)] * (size - len(d)) + d
    a = [sp.expand(di + K * ni) for di, ni in zip(d, n, strict=True)]
    deg = size - 1
    events = sp.Integer(1)
    if deg >= 2:
        h = _hurwitz_matrix(a, deg)
        events *= sp.expand(h[: deg - 1, : deg - 1].det(method="berkowitz"))
    events *= a[-1] * a[0]
    poly = sp.Poly(sp.expand(events), K)
    if poly.is_zero:
        return []
    cands = sorted({r for r in poly.real_roots()}, key=lambda r: float(sp.N(r, 30)))
    vals = [sp.Rational(str(sp.N(r, 40))) for r in cands]
    tests = []
    if not vals:
        tests = [sp.Integer(0)]
    else:
        span = max(abs(v) for v in vals) + 1
        tests = [vals[0] - span] + [(x + y) / 2 for x, y in zip(vals[:-1], vals[1:], strict=True)]
        tests.append(vals[-1] + span)
    flags = [_is_hurwitz([sp.Rational(c.subs(K, t)) for c in a]) for t in tests]
    ends = [None] + [float(sp.N(r, 30)) for r in cands] + [None]
    out = []
    for i, ok in enumerate(flags):
        if ok:
            out.append((ends[i], ends[i + 1]))
    return out


def mp_roots(poly, dps: int = 60) -> np.ndarray:
    """Roots of a real polynomial by ``mpmath.polyroots`` at ``dps`` digits, as complex floats."""
    import mpmath

    c = [mpmath.mpf(Fraction(float(x)).numerator) / Fraction(float(x)).denominator
         for x in np.trim_zeros(np.asarray(poly, dtype=float), "f")]
    if len(c) < 2:
        return np.zeros(0, dtype=complex)
    with mpmath.workdps(dps):
        r = mpmath.polyroots(c, maxsteps=400, extraprec=4 * dps)
    return np.array([complex(x) for x in r], dtype=complex)
