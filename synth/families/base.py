"""Compensator structure families behind one small interface.

Every family maps a parameter vector ``x`` (a point of its search space) to a
compensator

    C(s) = K * monic_num(s) / monic_den(s),

``K`` being the root-locus gain that the allowed gain range bounds (the
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
Each family also declares what each strategy needs from it, with
:class:`NotSupported` as the explicit answer when it offers nothing:

``placement_designs(kit)``
    its root-locus constructions (:mod:`synth.strategies.placement` passes
    the kit of shared geometry and targets);
``convex_fixed_parts(w, region)``, ``fixed_part_of(num, den)``, ``conic_form(fixed, w)``
    for the convex strategy: which denominator parts to fix, how to read
    them off an earlier candidate, and the numerator as a conic combination
    of generators once they are fixed;
``pid_gains(num, den)``
    its PID form (parallel gains), for the implementation outputs;
``futility(explanation)``
    why the structure cannot meet the requirements at all, when the
    proportional analysis already shows it (the search then costs almost
    nothing), else None.

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
from typing import ClassVar

import numpy as np

from synth.numerics.poly import batch_polymul, left_pad, scaled_roots, trim
from synth.problem.plant import describe_factored

#: Default bound on compensator pole and zero magnitudes, relative to the problem's
#: fastest rate (plant roots, inverse dead time, the speeds the requirements ask for).
_DEFAULT_HEADROOM = 100.0


def _unit_gain_frequency(num, den) -> float:
    """Frequency where ``|k s^m / s^n| = 1`` for a plant whose roots all lie at the origin."""
    n, d = trim(num), trim(den)
    rel = (d.size - 1) - (n.size - 1)
    lead = abs(float(n[0] / d[0]))
    if rel == 0 or lead == 0.0:
        return 1.0  # a static gain has no time scale of its own
    return lead ** (1.0 / rel)


#: Derivative-filter ratio range of the PD family: pole / zero = 1 + N_f with
#: the standard-form filter constant N_f from 2 to 50 (common practice).
PD_RATIO_RANGE = (3.0, 51.0)


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
        mags = []
        for poly in (plant.rational_num, plant.rational_den):
            p = trim(poly)
            if p.size > 1:
                r = np.abs(scaled_roots(p))
                mags.extend(float(v) for v in r if v > 0.0)  # roots at the origin are exact zeros
        if plant.dead_time > 0:
            mags.append(1.0 / plant.dead_time)
        region = problem.region
        if region.sigma > 0:
            mags.append(region.sigma)
        rise = req.limit("rise_time")
        if rise is not None:
            mags.append(1.8 / rise)
        if not mags:
            # only integrators or differentiators: the frequency where |G| = 1 sets the scale
            mags.append(_unit_gain_frequency(plant.rational_num, plant.rational_den))
        w_char = float(np.exp(np.mean(np.log(mags))))
        w_low = min(mags)
        if search.max_frequency is not None:
            w_max = float(search.max_frequency)
        else:
            # not given: two decades above the problem's fastest rate, so the bound follows
            # the plant's own time scale (a converter at 1e5 rad/s is an ordinary plant)
            w_max = _DEFAULT_HEADROOM * max(mags)
        w_char = min(max(w_char, w_max * 1e-6), w_max)
        w_min = min(1e-3 * w_char, 2e-2 * w_low)
        w_min = min(max(w_min, w_max * 1e-7), w_max * 1e-2)

        gain_limits = req.limit("gain")
        if gain_limits is not None:
            lo, hi = (float(v) for v in gain_limits)
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


@dataclass(frozen=True)
class NotSupported:
    """The explicit answer of a family that offers nothing to a strategy.

    Parameters
    ----------
    reason : str
        Why, in plain words (recorded in the run's bookkeeping).
    """

    reason: str


@dataclass(frozen=True)
class ConicForm:
    """A family's compensator with its denominator fixed and a conic numerator.

    With the denominator ``den`` fixed, the closed-loop characteristic
    polynomial ``den den_G + n_C num_G`` is affine in the numerator, and the
    numerator is written ``n_C(x) = x @ generators`` with ``x >= lower``.
    The generators are chosen so that the box is exactly (lead, lag, PD,
    PI) or contains (PID, lead-lag) the family's shape; a solution outside
    the shape is recognised by ``family.from_polys`` returning None.

    Attributes
    ----------
    den : ndarray, shape (k,)
        Fixed monic compensator denominator.
    generators : ndarray, shape (m, k)
        Numerator generators (descending powers, padded to ``k``).
    lower : ndarray, shape (m,)
        Lower bound of each ``x_i``: 0 (a conic generator) or ``-inf`` (free sign).
    carries_gain : ndarray of bool, shape (m,)
        Whether ``x_i`` contributes to the leading coefficient (the gain
        ``K``), so that the allowed gain range bounds it.
    fixed : tuple of float
        The fixed values, named by ``fixed_names``.
    fixed_names : tuple of str
    """

    den: np.ndarray
    generators: np.ndarray
    lower: np.ndarray
    carries_gain: np.ndarray
    fixed: tuple[float, ...]
    fixed_names: tuple[str, ...]

    def numerator(self, x) -> np.ndarray:
        """Numerator coefficients for ``x`` (shape (m,) or (B, m))."""
        return np.asarray(x, dtype=float) @ self.generators


@dataclass(frozen=True)
class ParallelGains:
    """PID gains of ``C(s) = Kp + Ki / s + Kd s / (Tf s + 1)`` (parallel form).

    ``Tf = 0`` for a family without a derivative filter.

    References
    ----------
    K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006, ch. 3
    (the parallel form with a first-order derivative filter).
    """

    kp: float
    ki: float
    kd: float
    tf: float


def _conic(den, generators, lower, carries_gain, fixed, names) -> ConicForm:
    gen = np.atleast_2d(np.asarray(generators, dtype=float))
    k = np.asarray(den).size
    if gen.shape[1] < k:
        gen = np.hstack([np.zeros((gen.shape[0], k - gen.shape[1])), gen])
    return ConicForm(den=np.asarray(den, dtype=float), generators=gen,
                     lower=np.asarray(lower, dtype=float),
                     carries_gain=np.asarray(carries_gain, dtype=bool),
                     fixed=tuple(float(v) for v in fixed), fixed_names=tuple(names))


def _power_generators(k: int, w: float) -> np.ndarray:
    """``w^i s^(k-1-i)``, i = 0..k-1: every coefficient free, scaled to the speed ``w``."""
    return np.diag(float(w) ** np.arange(k, dtype=float))


def _ones(B):
    return np.ones(B)


def _stack(*cols):
    return np.stack(cols, axis=1)


#: Row-wise product of two batches of polynomials (one per row each).
_mul_rows = batch_polymul
#: Pad a batch of polynomials with leading zeros to ``width`` columns.
_lpad = left_pad


def _as_batch(X, p):
    X = np.atleast_2d(np.asarray(X, dtype=float))
    if X.shape[1] != p:
        raise ValueError(f"expected {p} parameters per row, got {X.shape[1]}")
    return X


def _real_roots_or_none(poly, positive=True):
    """Negated real roots of a monic polynomial (the ``a`` in ``s + a``), or None."""
    p = trim(poly)
    if p.size == 1:
        return np.zeros(0)
    r = np.roots(p)
    # a double root comes back from numpy.roots split by about sqrt(eps), relative
    if np.any(np.abs(r.imag) > 1e-6 * np.abs(r)):
        return None
    a = -r.real
    if positive and np.any(a <= 0):
        return None
    return np.sort(a)


@dataclass(frozen=True)
class Family:
    """Base class: one compensator structure over a :class:`SearchSpace`.

    Subclasses set ``name``, ``position``, ``param_names`` and implement
    ``_polys``, ``_bounds``, ``natural``, ``from_polys`` and ``near_gain``;
    they override the strategy hooks they support (each answers
    :class:`NotSupported` here).  A module of :mod:`synth.families` that
    defines ``FAMILY = TheClass`` registers it (see :func:`synth.families.registry`).
    """

    space: SearchSpace
    name: ClassVar[str] = ""
    #: position in listings and in the ranking's tie-break (lower first)
    position: ClassVar[int] = 1000
    param_names: ClassVar[tuple[str, ...]] = ()
    #: names of the denominator values ``conic_form`` expects fixed
    fixed_names: ClassVar[tuple[str, ...]] = ()
    #: whether the structure takes PID set-point weights ``(b, c)`` as its reference
    #: shaping (``synth.verify.controller.setpoint_numerator``); others get a prefilter
    setpoint_weights: ClassVar[bool] = False

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

    # -- what the strategies need (override what the family supports) -----------------
    def placement_designs(self, kit) -> list | NotSupported:
        """Root-locus constructions of this structure (see :mod:`synth.strategies.placement`).

        Parameters
        ----------
        kit : synth.strategies.placement.PlacementKit
            Targets, gain signs, the plant and the shared constructions.

        Returns
        -------
        list of Placement, or NotSupported
        """
        return NotSupported(f"no root-locus construction for the {self.name} structure")

    def convex_fixed_parts(self, w: float, region) -> tuple[tuple[float, ...], ...] | NotSupported:
        """Denominator parts worth fixing for the convex strategy (values of ``fixed_names``).

        Parameters
        ----------
        w : float
            Reference speed of the problem (rad/s).
        region : synth.problem.region.Region
            The requirement region.
        """
        return NotSupported(f"no fixed-denominator form for the {self.name} structure")

    def fixed_part_of(self, num, den) -> tuple[float, ...] | None:
        """The fixed part of a compensator of this family (for reusing earlier candidates)."""
        return None

    def conic_form(self, fixed: Sequence[float], w: float) -> ConicForm | NotSupported:
        """The numerator as a conic combination once ``fixed`` is fixed (see :class:`ConicForm`).

        Parameters
        ----------
        fixed : sequence of float
            Values of ``fixed_names``.
        w : float
            Reference speed (rad/s): generators that drop powers of ``s``
            are scaled by powers of ``w`` so useful ``x`` are of order one.
        """
        return NotSupported(f"no fixed-denominator form for the {self.name} structure")

    def circle_form(self) -> str | NotSupported:
        """``"PI"`` or ``"PID"`` when the structure is ``kp + ki/s`` (plus a filtered derivative).

        The circle strategy (:mod:`synth.strategies.circle`) designs such a
        structure exactly under the robustness circles.
        """
        return NotSupported(f"the {self.name} structure is not affine in kp and ki")

    def pid_gains(self, num, den) -> ParallelGains | NotSupported:
        """Parallel PID gains of a compensator of this family."""
        return NotSupported(f"the {self.name} structure has no PID form")

    def futility(self, explanation) -> str | None:
        """Why this structure cannot meet the requirements at all, if the analysis shows it.

        Parameters
        ----------
        explanation : synth.explain.Explanation or None

        Returns
        -------
        str or None
            A sentence when no compensator of the structure can be feasible
            (the run then spends almost no work on it); None when unknown.
        """
        return None

    # -- hooks -------------------------------------------------------------------
    def _bounds(self):  # pragma: no cover - abstract
        raise NotImplementedError

    def _polys(self, X):  # pragma: no cover - abstract
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

    def _in_band(self, values) -> tuple[float, ...]:
        """Magnitudes clipped into the family's frequency band ``[w_min, w_max]``."""
        sp = self.space
        return tuple(float(min(max(v, sp.w_min), sp.w_max)) for v in values)


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

    def fixed_part_of(self, num, den):
        d = trim(den)
        return self._in_band([d[1] / d[0]]) if d.size == 2 else None

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
