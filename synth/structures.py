"""Compensator structure families behind one small interface.

Every family maps a parameter vector ``x`` (a point of its search space) to a
compensator

    C(s) = K * monic_num(s) / monic_den(s),

``K`` being the root-locus gain that ``requirements.gain_range`` bounds (the
``gain`` of the design JSON).  All families share the same methods, in the
spirit of scikit-learn's estimators, so a strategy written against one works
with every other:

``name``, ``n_params``, ``param_names``
    identification and size of the search space;
``bounds()``
    box bounds ``(lo, hi)`` of the search space;
``polys(X)``
    batched map ``X (B, p) -> (num (B, k), den (B, k))``;
``describe(x)``, ``natural(x)``
    readable text and a ``{name: value}`` mapping in natural units;
``from_polys(num, den)``
    the inverse map where the polynomials have the family's shape, else ``None``;
``near_gain(k)``
    a parameter vector whose compensator is close to the plain gain ``k``
    (used to seed searches from the proportional analysis);
``affine_form(fixed)``
    the compensator numerator as an affine function ``num0 + x @ basis`` of
    free coefficients once the listed part of the denominator is fixed (for
    convex strategies).

Search-space coordinates.  Pole and zero magnitudes are searched as
``log10`` of rad/s between ``SearchSpace.w_min`` and ``SearchSpace.w_max``
(``w_max`` is ``search.max_frequency``).  The gain is searched in the
coordinate ``u = asinh(K / gain_scale)``: logarithmic for large ``|K|``,
linear near zero and continuous through zero, so one coordinate covers
direct- and reverse-acting gains.  Coefficients of the free ("general")
family use the same signed-logarithmic coordinate, so their roots may lie
anywhere, right half-plane included.

Families: P, PI, PD (with derivative filter), PID (with derivative filter),
lead, lag, lead-lag and general (fixed order 1 to 3, free numerator and
denominator).  Integral families have the pole at s = 0 in the denominator.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import ClassVar

import numpy as np

from synth.errors import InputError
from synth.plant import describe_factored, trim

__all__ = [
    "AffineForm",
    "FAMILIES",
    "Family",
    "PD_RATIO_RANGE",
    "SearchSpace",
    "family_for",
    "families_for",
]

#: Derivative-filter ratio range of the PD family: pole / zero = 1 + N_f with
#: the standard-form filter constant N_f from 2 to 50 (common practice).
PD_RATIO_RANGE = (3.0, 51.0)
#: Zero damping range of the PID family (below 1: complex zeros; above: real).
_PID_ZETA = (0.1, 30.0)
#: Relative slack accepted by the general family's inverse map at the disc's edge.
_DISC_TOL = 1e-4


# ----------------------------------------------------------------------------
# the search space shared by all families of one problem
# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class SearchSpace:
    """Frequency and gain scales of one problem's search.

    Parameters
    ----------
    w_min, w_max : float
        Smallest and largest compensator pole/zero magnitude in rad/s
        (``w_max`` is ``search.max_frequency``).
    w_char : float
        Characteristic frequency of the problem (geometric mean of the plant's
        non-zero pole and zero magnitudes, the inverse dead time and the speed
        the requirements ask for).
    gain_lo, gain_hi : float
        Bounds of the compensator gain ``K``.
    gain_scale : float
        Scale of the ``asinh`` gain coordinate.
    order : int
        Order of the "general" family (``search.general_order``).
    """

    w_min: float
    w_max: float
    w_char: float
    gain_lo: float
    gain_hi: float
    gain_scale: float
    order: int = 2

    @classmethod
    def for_problem(cls, problem) -> SearchSpace:
        """Derive the scales from the plant, requirements and search settings."""
        plant = problem.plant
        req = problem.requirements
        search = problem.search
        w_max = float(search.max_frequency)
        mags = []
        for poly in (plant.rational_num, plant.rational_den):
            p = trim(poly)
            if p.size > 1:
                r = np.abs(np.roots(p))
                mags.extend(float(v) for v in r if v > 1e-9)
        if plant.dead_time > 0:
            mags.append(1.0 / plant.dead_time)
        region = problem.region
        if region.sigma > 0:
            mags.append(region.sigma)
        if req.max_rise_time is not None:
            mags.append(1.8 / req.max_rise_time)
        if mags:
            w_char = float(np.exp(np.mean(np.log(mags))))
            w_low = min(mags)
        else:
            w_char = 1.0
            w_low = 1.0
        w_char = min(max(w_char, w_max * 1e-6), w_max)
        w_min = min(1e-3 * w_char, 2e-2 * w_low)
        w_min = min(max(w_min, w_max * 1e-7), w_max * 1e-2)

        if req.gain_range is not None:
            lo, hi = (float(v) for v in req.gain_range)
            scale = 1e-4 * max(abs(lo), abs(hi))
        else:
            # magnitudes that make |C G| about one near the characteristic
            # frequency, widened by four decades each way
            g = abs(complex(plant.evaluate(np.array([1j * w_char]), exact_delay=False)[0]))
            k_ref = 1.0 / g if np.isfinite(g) and g > 0 else 1.0
            hi = 1e4 * k_ref
            lo = -hi
            scale = 1e-4 * k_ref
        return cls(w_min=float(w_min), w_max=w_max, w_char=w_char, gain_lo=lo, gain_hi=hi,
                   gain_scale=float(scale), order=int(search.general_order))

    # -- coordinates ---------------------------------------------------------------
    def gain(self, u):
        """Gain ``K`` from its search coordinate."""
        return self.gain_scale * np.sinh(u)

    def gain_coord(self, k):
        """Search coordinate of the gain ``K``."""
        return np.arcsinh(np.asarray(k, dtype=float) / self.gain_scale)

    @property
    def gain_bounds(self) -> tuple[float, float]:
        return float(self.gain_coord(self.gain_lo)), float(self.gain_coord(self.gain_hi))

    @property
    def log_w(self) -> tuple[float, float]:
        return math.log10(self.w_min), math.log10(self.w_max)


# ----------------------------------------------------------------------------
# the affine parametrisation used by convex strategies
# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class AffineForm:
    """Compensator with a fixed denominator and numerator ``num0 + x @ basis``.

    Parameters
    ----------
    den : ndarray, shape (k,)
        Fixed monic compensator denominator.
    num0 : ndarray, shape (k,)
        Constant part of the numerator (padded to the length of ``den``).
    basis : ndarray, shape (m, k)
        Row ``i`` is the numerator's dependence on the free coefficient ``x[i]``.
    names : tuple of str
        Names of the free coefficients.

    Notes
    -----
    The closed-loop characteristic polynomial ``den * den_G + num(x) * num_G``
    is then affine in ``x``.  Map a solution back to the family with
    ``family.from_polys(form.numerator(x), form.den)`` (``None`` when the
    solution falls outside the family, e.g. a "lead" whose zero passed its pole).
    """

    den: np.ndarray
    num0: np.ndarray
    basis: np.ndarray
    names: tuple[str, ...]

    def numerator(self, x) -> np.ndarray:
        """Numerator coefficients for free coefficients ``x`` (shape (m,) or (B, m))."""
        return self.num0 + np.asarray(x, dtype=float) @ self.basis


# ----------------------------------------------------------------------------
# small batched polynomial helpers
# ----------------------------------------------------------------------------


def _col(X, j):
    return X[:, j]


def _ones(B):
    return np.ones(B)


def _stack(*cols):
    return np.stack(cols, axis=1)


def _mul_rows(a, b):
    """Row-wise product of two batches of polynomials."""
    B = a.shape[0]
    out = np.zeros((B, a.shape[1] + b.shape[1] - 1))
    for j in range(b.shape[1]):
        out[:, j:j + a.shape[1]] += a * b[:, j:j + 1]
    return out


def _lpad(P, width):
    """Pad a batch of polynomials with leading zeros to ``width`` columns."""
    if P.shape[1] == width:
        return P
    out = np.zeros((P.shape[0], width))
    out[:, width - P.shape[1]:] = P
    return out


def _as_batch(X, p):
    X = np.atleast_2d(np.asarray(X, dtype=float))
    if X.shape[1] != p:
        raise InputError(f"expected {p} parameters per row, got {X.shape[1]}")
    return X


def _real_roots_or_none(poly, positive=True):
    """Negated real roots of a monic polynomial (the ``a`` in ``s + a``), or None."""
    p = trim(poly)
    if p.size == 1:
        return np.zeros(0)
    r = np.roots(p)
    # a double root comes back from numpy.roots split by about sqrt(eps)
    if np.any(np.abs(r.imag) > 1e-6 * np.maximum(1.0, np.abs(r))):
        return None
    a = -r.real
    if positive and np.any(a <= 0):
        return None
    return np.sort(a)


def _gain_of(num, den) -> float:
    n, d = trim(num), trim(den)
    return float(n[0] / d[0])


# ----------------------------------------------------------------------------
# the families
# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class Family:
    """Base class: one compensator structure over a :class:`SearchSpace`.

    Subclasses set ``name``, ``param_names`` and implement ``_polys``,
    ``_bounds``, ``natural``, ``from_polys`` and ``near_gain``.
    """

    space: SearchSpace
    name: ClassVar[str] = ""
    param_names: ClassVar[tuple[str, ...]] = ()
    #: names of the denominator parameters that ``affine_form`` expects fixed
    fixed_names: ClassVar[tuple[str, ...]] = ()

    @property
    def n_params(self) -> int:
        return len(self.param_names)

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Box bounds ``(lo, hi)`` of the search space, each shape (n_params,)."""
        lo, hi = zip(*self._bounds(), strict=True)
        return np.asarray(lo, dtype=float), np.asarray(hi, dtype=float)

    def polys(self, X) -> tuple[np.ndarray, np.ndarray]:
        """Numerators and denominators for a batch of parameter vectors.

        Parameters
        ----------
        X : array_like, shape (B, n_params) or (n_params,)

        Returns
        -------
        num, den : ndarray, shape (B, k)
            ``num = K * monic numerator`` and the monic denominator, padded on
            the left to the common length ``k = compensator order + 1``.
        """
        X = _as_batch(X, self.n_params)
        num, den = self._polys(X)
        k = max(num.shape[1], den.shape[1])
        return _lpad(num, k), _lpad(den, k)

    def poly(self, x) -> tuple[np.ndarray, np.ndarray]:
        """``(num, den)`` of one parameter vector, leading zeros trimmed."""
        num, den = self.polys(np.asarray(x, dtype=float)[None, :])
        return trim(num[0]), trim(den[0])

    def describe(self, x) -> str:
        """One readable line: the factored compensator and the family's own terms."""
        num, den = self.poly(x)
        extra = ", ".join(f"{k} {v:.4g}" for k, v in self.natural(x).items() if k != "gain")
        text = f"{self.name}: C(s) = {describe_factored(num, den)}"
        return f"{text} ({extra})" if extra else text

    def clip(self, x) -> np.ndarray:
        """Project a parameter vector into the bounds."""
        lo, hi = self.bounds()
        return np.clip(np.asarray(x, dtype=float), lo, hi)

    def affine_form(self, fixed: Sequence[float] = ()) -> AffineForm:
        """Numerator affine in free coefficients with the denominator fixed.

        Parameters
        ----------
        fixed : sequence of float
            Values of ``fixed_names`` (pole magnitudes in rad/s; for the
            general family the monic denominator's coefficients after the
            leading 1).
        """
        fixed = [float(v) for v in fixed]
        if len(fixed) != len(self.fixed_names):
            raise InputError(f"{self.name}: affine_form needs {len(self.fixed_names)} fixed "
                             f"values ({', '.join(self.fixed_names) or 'none'}), got {len(fixed)}")
        den = self._fixed_den(fixed)
        k = den.size
        # every family's numerator is a full polynomial of the denominator's degree
        names = tuple(f"b{k - 1 - i}" for i in range(k))
        return AffineForm(den=den, num0=np.zeros(k), basis=np.eye(k), names=names)

    # -- hooks -------------------------------------------------------------------
    def _bounds(self):  # pragma: no cover - abstract
        raise NotImplementedError

    def _polys(self, X):  # pragma: no cover - abstract
        raise NotImplementedError

    def _fixed_den(self, fixed):  # pragma: no cover - abstract
        raise NotImplementedError

    def natural(self, x) -> dict[str, float]:  # pragma: no cover - abstract
        raise NotImplementedError

    def from_polys(self, num, den) -> np.ndarray | None:  # pragma: no cover - abstract
        raise NotImplementedError

    def near_gain(self, k: float) -> np.ndarray:  # pragma: no cover - abstract
        raise NotImplementedError

    # -- shared pieces ---------------------------------------------------------------
    def _gain_bound(self):
        return self.space.gain_bounds

    def _logw_bound(self):
        return self.space.log_w

    def _u(self, k):
        return float(self.space.gain_coord(k))


@dataclass(frozen=True)
class PFamily(Family):
    """Proportional: ``C(s) = K``."""

    name: ClassVar[str] = "P"
    param_names: ClassVar[tuple[str, ...]] = ("gain",)

    def _bounds(self):
        return [self._gain_bound()]

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        return K[:, None], np.ones((X.shape[0], 1))

    def _fixed_den(self, fixed):
        return np.ones(1)

    def natural(self, x):
        return {"gain": float(self.space.gain(x[0]))}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 1 or d.size != 1:
            return None
        return np.array([self._u(n[0] / d[0])])

    def near_gain(self, k):
        return np.array([self._u(k)])


@dataclass(frozen=True)
class PIFamily(Family):
    """Proportional-integral: ``C(s) = K (s + z) / s`` (``Kp = K``, ``Ki = K z``)."""

    name: ClassVar[str] = "PI"
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_zero")

    def _bounds(self):
        return [self._gain_bound(), self._logw_bound()]

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        z = 10.0 ** X[:, 1]
        B = X.shape[0]
        return K[:, None] * _stack(_ones(B), z), _stack(_ones(B), np.zeros(B))

    def _fixed_den(self, fixed):
        return np.array([1.0, 0.0])

    def natural(self, x):
        K = float(self.space.gain(x[0]))
        z = 10.0 ** float(x[1])
        return {"gain": K, "zero": z, "Kp": K, "Ki": K * z}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 2 or d.size != 2 or d[1] != 0.0:
            return None
        z = n[1] / n[0]
        if z <= 0:
            return None
        return np.array([self._u(n[0] / d[0]), math.log10(z)])

    def near_gain(self, k):
        return np.array([self._u(k), self.space.log_w[0]])


@dataclass(frozen=True)
class PDFamily(Family):
    """Proportional-derivative with derivative filter: ``C(s) = K (s + z) / (s + N)``.

    Parametrised by the filter pole ``N`` and the ratio ``N / z = 1 + N_f``,
    ``N_f`` the standard-form filter constant (2 to 50).  Parallel form:
    ``Kp = K z / N``, ``Kd = (K - Kp) / N`` in ``Kp + Kd s / (s / N + 1)``.
    """

    name: ClassVar[str] = "PD"
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_filter_pole", "log10_ratio")
    fixed_names: ClassVar[tuple[str, ...]] = ("filter_pole",)

    def _bounds(self):
        lw0, lw1 = self._logw_bound()
        return [self._gain_bound(), (lw0 + math.log10(PD_RATIO_RANGE[0]), lw1),
                (math.log10(PD_RATIO_RANGE[0]), math.log10(PD_RATIO_RANGE[1]))]

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        N = 10.0 ** X[:, 1]
        z = N / 10.0 ** X[:, 2]
        B = X.shape[0]
        return K[:, None] * _stack(_ones(B), z), _stack(_ones(B), N)

    def _fixed_den(self, fixed):
        return np.array([1.0, fixed[0]])

    def natural(self, x):
        K = float(self.space.gain(x[0]))
        N = 10.0 ** float(x[1])
        z = N / 10.0 ** float(x[2])
        kp = K * z / N
        return {"gain": K, "zero": z, "filter_pole": N, "Kp": kp, "Kd": (K - kp) / N}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 2 or d.size != 2:
            return None
        z, N = n[1] / n[0], d[1] / d[0]
        if not (0 < z < N):
            return None
        return np.array([self._u(n[0] / d[0]), math.log10(N), math.log10(N / z)])

    def near_gain(self, k):
        # filter pole at the top of the band: C ~ K z / N below the zero
        lw1 = self.space.log_w[1]
        r = math.log10(PD_RATIO_RANGE[0])
        return np.array([self._u(k * 10.0 ** r), lw1, r])


@dataclass(frozen=True)
class PIDFamily(Family):
    """PID with derivative filter: ``C(s) = K (s^2 + 2 zeta_z w_z s + w_z^2) / (s (s + N))``.

    Searched over the larger zero magnitude ``m`` (so both zeros stay within
    ``max_frequency``), the zero damping ``zeta_z`` (below 1 complex zeros,
    above 1 real ones) and the filter pole ``N``; ``w_z = m`` for complex
    zeros, ``w_z = m / (zeta_z + sqrt(zeta_z^2 - 1))`` for real ones.
    Parallel form ``Kp + Ki / s + Kd s / (s / N + 1)`` with ``Ki = K w_z^2 / N``,
    ``Kp = K (2 zeta_z w_z - w_z^2 / N) / N`` and ``Kd = (K - Kp) / N``.
    """

    name: ClassVar[str] = "PID"
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_outer_zero",
                                              "log10_zero_damping", "log10_filter_pole")
    fixed_names: ClassVar[tuple[str, ...]] = ("filter_pole",)

    def _bounds(self):
        lw = self._logw_bound()
        return [self._gain_bound(), lw, (math.log10(_PID_ZETA[0]), math.log10(_PID_ZETA[1])), lw]

    @staticmethod
    def _wz(m, zeta):
        return m / np.where(zeta > 1.0, zeta + np.sqrt(np.maximum(zeta * zeta - 1.0, 0.0)), 1.0)

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        zeta = 10.0 ** X[:, 2]
        w = self._wz(10.0 ** X[:, 1], zeta)
        N = 10.0 ** X[:, 3]
        B = X.shape[0]
        num = K[:, None] * _stack(_ones(B), 2 * zeta * w, w * w)
        den = _stack(_ones(B), N, np.zeros(B))
        return num, den

    def _fixed_den(self, fixed):
        return np.array([1.0, fixed[0], 0.0])

    def natural(self, x):
        K = float(self.space.gain(x[0]))
        zeta = 10.0 ** float(x[2])
        w = float(self._wz(np.array(10.0 ** float(x[1])), np.array(zeta)))
        N = 10.0 ** float(x[3])
        a1, a0 = 2 * zeta * w, w * w
        ki = K * a0 / N
        kp = K * (a1 - a0 / N) / N
        return {"gain": K, "zero_frequency": w, "zero_damping": zeta, "filter_pole": N,
                "Kp": kp, "Ki": ki, "Kd": (K - kp) / N}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 3 or d.size != 3 or d[2] != 0.0:
            return None
        N = d[1] / d[0]
        a1, a0 = n[1] / n[0], n[2] / n[0]
        if N <= 0 or a0 <= 0 or a1 <= 0:
            return None
        w = math.sqrt(a0)
        zeta = a1 / (2 * w)
        m = w * (zeta + math.sqrt(zeta * zeta - 1.0)) if zeta > 1 else w
        return np.array([self._u(n[0] / d[0]), math.log10(m), math.log10(zeta), math.log10(N)])

    def near_gain(self, k):
        # zeros at the bottom of the band and at the filter pole: C ~ K
        lw0, lw1 = self.space.log_w
        N = 10.0 ** lw1
        w1 = 10.0 ** lw0
        w = math.sqrt(w1 * N)
        zeta = min((w1 + N) / (2 * w), _PID_ZETA[1])
        m = w * (zeta + math.sqrt(zeta * zeta - 1.0))
        return np.array([self._u(k), math.log10(min(m, N)), math.log10(zeta), lw1])


@dataclass(frozen=True)
class _PairFamily(Family):
    """Lead or lag ``K (s + z) / (s + p)``: the two magnitudes are sorted into zero and pole."""

    lead: ClassVar[bool] = True
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_a", "log10_b")
    fixed_names: ClassVar[tuple[str, ...]] = ("pole",)

    def _bounds(self):
        lw = self._logw_bound()
        return [self._gain_bound(), lw, lw]

    def _zp(self, a, b):
        lo, hi = np.minimum(a, b), np.maximum(a, b)
        return (lo, hi) if self.lead else (hi, lo)

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        z, p = self._zp(10.0 ** X[:, 1], 10.0 ** X[:, 2])
        B = X.shape[0]
        return K[:, None] * _stack(_ones(B), z), _stack(_ones(B), p)

    def _fixed_den(self, fixed):
        return np.array([1.0, fixed[0]])

    def natural(self, x):
        K = float(self.space.gain(x[0]))
        z, p = self._zp(10.0 ** float(x[1]), 10.0 ** float(x[2]))
        return {"gain": K, "zero": float(z), "pole": float(p), "ratio": float(max(z, p) / min(z, p))}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 2 or d.size != 2:
            return None
        z, p = n[1] / n[0], d[1] / d[0]
        if z <= 0 or p <= 0 or (z > p if self.lead else z < p):
            return None
        return np.array([self._u(n[0] / d[0]), math.log10(z), math.log10(p)])

    def near_gain(self, k):
        lw = math.log10(self.space.w_char)
        return np.array([self._u(k), lw, lw])


@dataclass(frozen=True)
class LeadFamily(_PairFamily):
    """Phase lead: ``C(s) = K (s + z) / (s + p)`` with ``0 < z < p``."""

    name: ClassVar[str] = "lead"
    lead: ClassVar[bool] = True


@dataclass(frozen=True)
class LagFamily(_PairFamily):
    """Phase lag: ``C(s) = K (s + z) / (s + p)`` with ``0 < p < z``."""

    name: ClassVar[str] = "lag"
    lead: ClassVar[bool] = False


@dataclass(frozen=True)
class LeadLagFamily(Family):
    """Lead-lag: ``C(s) = K (s + z1)(s + z2) / ((s + p1)(s + p2))``, ``z1 < p1``, ``p2 < z2``."""

    name: ClassVar[str] = "lead-lag"
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_lead_a", "log10_lead_b",
                                              "log10_lag_a", "log10_lag_b")
    fixed_names: ClassVar[tuple[str, ...]] = ("lead_pole", "lag_pole")

    def _bounds(self):
        lw = self._logw_bound()
        return [self._gain_bound(), lw, lw, lw, lw]

    @staticmethod
    def _zp(a1, b1, a2, b2):
        z1, p1 = np.minimum(a1, b1), np.maximum(a1, b1)
        z2, p2 = np.maximum(a2, b2), np.minimum(a2, b2)
        return z1, p1, z2, p2

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        z1, p1, z2, p2 = self._zp(*(10.0 ** X[:, j] for j in range(1, 5)))
        B = X.shape[0]
        num = K[:, None] * _stack(_ones(B), z1 + z2, z1 * z2)
        den = _stack(_ones(B), p1 + p2, p1 * p2)
        return num, den

    def _fixed_den(self, fixed):
        return np.polymul([1.0, fixed[0]], [1.0, fixed[1]])

    def natural(self, x):
        K = float(self.space.gain(x[0]))
        z1, p1, z2, p2 = (float(v) for v in self._zp(*(10.0 ** float(v) for v in x[1:5])))
        return {"gain": K, "lead_zero": z1, "lead_pole": p1, "lag_zero": z2, "lag_pole": p2}

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != 3 or d.size != 3:
            return None
        zs, ps = _real_roots_or_none(n / n[0]), _real_roots_or_none(d / d[0])
        if zs is None or ps is None or zs.size != 2 or ps.size != 2:
            return None
        # pair the smaller pole with the larger zero as the lag section
        z_small, z_big = zs
        p_small, p_big = ps
        tol = 1 + 1e-6  # numpy.roots splits double roots by about sqrt(eps)
        if not (z_small <= p_big * tol and p_small <= z_big * tol):
            return None
        return np.array([self._u(n[0] / d[0]), math.log10(z_small), math.log10(p_big),
                         math.log10(z_big), math.log10(p_small)])

    def near_gain(self, k):
        lw = math.log10(self.space.w_char)
        return np.array([self._u(k), lw, lw, lw - 1, lw - 1])


@dataclass(frozen=True)
class GeneralFamily(Family):
    """Free fixed-order compensator ``K n(s) / d(s)``, monic ``n`` and ``d`` of order 1 to 3.

    Each monic polynomial is a product of free real factors: ``s + r`` (order
    1), a quadratic (order 2) or ``(s + r)`` times a quadratic (order 3; every
    real cubic has a real root), so every real polynomial of the order whose
    roots lie in the disc ``|s| <= w_max`` is reachable, and no other.

    Coordinates.  With ``W = w_max``: ``r = W sinh(u) c1``; the quadratic
    ``s^2 + a1 s + a0`` is ``W^2 (z^2 + b1 z + b0)`` in ``z = s / W``, whose
    roots lie in the unit disc exactly when ``|b0| <= 1`` and
    ``|b1| <= 1 + b0`` (the second-order Schur-Cohn-Jury conditions), so it
    is searched as ``b0 = c2 sinh(u0)`` and ``b1 = (1 + b0) c1 sinh(u1)``
    with ``c1 = w_min / W``, ``c2 = c1^2`` and bounds that keep ``|b0|`` and
    ``|b1 / (1 + b0)|`` at most 1.  The ``asinh`` coordinates are signed
    logarithms: signs are free, so right-half-plane poles and zeros are
    allowed (needed when the plant fails the parity interlacing property),
    and small and large magnitudes are searched evenly.

    References
    ----------
    E. I. Jury, *Theory and Application of the z-Transform Method*, Wiley,
    1964 (the stability triangle of a second-order polynomial).
    """

    name: ClassVar[str] = "general"

    @property
    def order(self) -> int:
        return self.space.order

    @property
    def _factor_names(self) -> tuple[str, ...]:
        return {1: ("r",), 2: ("q0", "q1"), 3: ("r", "q0", "q1")}[self.order]

    @property
    def param_names(self) -> tuple[str, ...]:  # type: ignore[override]
        f = self._factor_names
        return ("gain", *(f"num_{n}" for n in f), *(f"den_{n}" for n in f))

    @property
    def fixed_names(self) -> tuple[str, ...]:  # type: ignore[override]
        return tuple(f"den_c{i}" for i in range(1, self.order + 1))

    @property
    def _c1(self) -> float:
        return self.space.w_min / self.space.w_max

    def _scales(self):
        c1 = self._c1
        return [{"r": c1, "q0": c1 * c1, "q1": c1}[n] for n in self._factor_names]

    def _bounds(self):
        out = [self._gain_bound()]
        for _ in range(2):
            for c in self._scales():
                b = math.asinh(1.0 / c)
                out.append((-b, b))
        return out

    def _monic(self, U):
        """Monic polynomials from factor coordinates U (B, order)."""
        W = self.space.w_max
        B = U.shape[0]
        sc = self._scales()
        v = [c * np.sinh(U[:, j]) for j, c in enumerate(sc)]
        if self.order == 1:
            return _stack(_ones(B), W * v[0])
        q = 1 if self.order == 3 else 0
        b0 = v[q]
        b1 = (1.0 + b0) * v[q + 1]
        quad = _stack(_ones(B), W * b1, W * W * b0)
        if self.order == 2:
            return quad
        return _mul_rows(_stack(_ones(B), W * v[0]), quad)

    def _polys(self, X):
        n = self.order
        K = self.space.gain(X[:, 0])
        return K[:, None] * self._monic(X[:, 1:1 + n]), self._monic(X[:, 1 + n:1 + 2 * n])

    def _fixed_den(self, fixed):
        return np.concatenate([[1.0], fixed])

    def _coords(self, monic) -> list[float] | None:
        """Search coordinates of a monic polynomial, or None outside the disc |s| <= w_max."""
        W = self.space.w_max
        p = np.asarray(monic, dtype=float)
        if p.size != self.order + 1:
            return None
        if self.order == 3:
            r = np.roots(p)
            real = r[np.abs(r.imag) <= 1e-9 * np.maximum(1.0, np.abs(r))]
            if real.size == 0:
                real = r[[int(np.argmin(np.abs(r.imag)))]]
            root = float(real[0].real)
            quad, _ = np.polydiv(p, [1.0, -root])
            lin = [-root / W]
        elif self.order == 2:
            quad, lin = p, []
        else:
            if abs(p[1]) > W * (1 + _DISC_TOL):
                return None
            return [math.asinh(min(1.0, max(-1.0, p[1] / W)) / self._c1)]
        # roots on the disc's edge come back from numpy.roots slightly off (a triple root
        # by about eps^(1/3)): accept and clip within _DISC_TOL
        if any(abs(v) > 1 + _DISC_TOL for v in lin):
            return None
        lin = [min(1.0, max(-1.0, v)) for v in lin]
        b0 = quad[2] / (W * W)
        b1 = quad[1] / W
        if abs(b0) > 1 + _DISC_TOL or abs(b1) > (1 + b0) + 2 * _DISC_TOL:
            return None
        b0 = min(1.0, max(-1.0, b0))
        v = min(1.0, max(-1.0, b1 / (1 + b0))) if 1 + b0 > 0 else 0.0
        c1 = self._c1
        out = [math.asinh(x / c1) for x in lin]
        return out + [math.asinh(b0 / (c1 * c1)), math.asinh(v / c1)]

    def natural(self, x):
        num, den = self.poly(x)
        out = {"gain": float(self.space.gain(x[0]))}
        for label, p in (("zero", num), ("pole", den)):
            if p.size > 1:
                roots = sorted(np.roots(p), key=lambda c: (c.real, c.imag))
                for i, r in enumerate(r for r in roots if r.imag >= -1e-12):
                    out[f"{label}{i + 1}_re"] = float(r.real)
                    if abs(r.imag) > 1e-12:
                        out[f"{label}{i + 1}_im"] = float(r.imag)
        return out

    def describe(self, x):
        num, den = self.poly(x)
        poles = np.roots(den) if den.size > 1 else np.zeros(0)
        rhp = int(np.sum(poles.real > 1e-9 * max(1.0, float(np.max(np.abs(poles), initial=1.0)))))
        text = f"general (order {self.order}): C(s) = {describe_factored(num, den)}"
        return text + (f" ({rhp} right-half-plane pole{'s' if rhp > 1 else ''})" if rhp else "")

    def from_polys(self, num, den):
        n, d = trim(num), trim(den)
        if n.size != self.order + 1 or d.size != self.order + 1:
            return None
        un, ud = self._coords(n / n[0]), self._coords(d / d[0])
        if un is None or ud is None:
            return None
        return np.asarray([self._u(n[0] / d[0]), *un, *ud])

    def near_gain(self, k):
        w = self.space.w_char
        p = np.poly(np.full(self.order, -w))
        u = self._coords(p)
        return np.asarray([self._u(k), *u, *u])


#: Structure families keyed by the contract's structure names (read-only).
FAMILIES = MappingProxyType({
    "P": PFamily,
    "PI": PIFamily,
    "PD": PDFamily,
    "PID": PIDFamily,
    "lead": LeadFamily,
    "lag": LagFamily,
    "lead-lag": LeadLagFamily,
    "general": GeneralFamily,
})


def family_for(name: str, problem) -> Family:
    """The family ``name`` over the search space of ``problem``.

    Raises
    ------
    InputError
        For an unknown structure name.
    """
    try:
        cls = FAMILIES[name]
    except KeyError:
        raise InputError(f"unknown structure {name!r}; choose from {', '.join(FAMILIES)}") from None
    return cls(SearchSpace.for_problem(problem))


def families_for(problem) -> list[Family]:
    """The families a design run searches: ``search.structures`` or all of them."""
    names = problem.search.structures or tuple(FAMILIES)
    space = SearchSpace.for_problem(problem)
    return [FAMILIES[n](space) for n in names]
