"""Structural facts of a plant: unstable poles and zeros, strong stabilisability, hard limits.

Everything here depends on the plant alone, never on a compensator: the
right-half-plane (RHP) poles and zeros, the dead time, the parity interlacing
test for stabilisation by a stable compensator, the lower bounds on peak
sensitivity that every stabilising loop obeys, and the rules of thumb on
achievable bandwidth.

References
----------
.. [1] D. C. Youla, J. J. Bongiorno and C. N. Lu, "Single-loop feedback
   stabilization of linear multivariable dynamical plants", Automatica 10,
   1974 (parity interlacing property).
.. [2] J. C. Doyle, B. A. Francis and A. R. Tannenbaum, *Feedback Control
   Theory*, Macmillan, 1992, ch. 5 (strong stabilisation; from memory).
.. [3] S. Skogestad and I. Postlethwaite, *Multivariable Feedback Control*,
   2nd ed., Wiley, 2005, ch. 5 (interpolation bounds on ``S`` and ``T``,
   bandwidth limits from RHP zeros, RHP poles and delay; from memory).
"""

from __future__ import annotations

import math
import sys
from dataclasses import dataclass

import numpy as np

from synth.numerics.poly import scaled_roots_with_uncertainty, trim
from synth.outputs.jsonout import root_pairs
from synth.problem.plant import Plant

#: a root whose real part is within this fraction of its size counts as on the imaginary axis
AXIS_RTOL = 1e-9
#: a root whose imaginary part is within this fraction of its size counts as real
#: (loose on purpose: repeated real roots come back from numpy.roots split by ~sqrt(eps))
REAL_RTOL = 1e-6
#: a pole within this many (summed) rounding uncertainties of a real RHP zero may be on
#: either side of it: the parity count is then numerically uncertain
_NEAR = 100.0


def _scale(z) -> np.ndarray:
    # relative to each root's own size: roots come from :func:`roots_of`, which
    # already put a part that double precision cannot tell from zero at exactly 0
    return np.abs(z)


def is_real(z) -> np.ndarray:
    """Whether each root is real (up to :data:`REAL_RTOL`)."""
    z = np.asarray(z, dtype=complex)
    return np.abs(z.imag) <= REAL_RTOL * _scale(z)


def in_closed_rhp(z) -> np.ndarray:
    """Whether each root has ``Re >= 0`` (up to :data:`AXIS_RTOL`)."""
    z = np.asarray(z, dtype=complex)
    return z.real >= -AXIS_RTOL * _scale(z)


def in_open_rhp(z) -> np.ndarray:
    """Whether each root has ``Re > 0`` (beyond :data:`AXIS_RTOL`)."""
    z = np.asarray(z, dtype=complex)
    return z.real > AXIS_RTOL * _scale(z)


def roots_of(poly) -> np.ndarray:
    """Roots of a polynomial (empty for a constant); exact zeros for trailing zero coefficients.

    Computed on the power-of-two scaled polynomial and tidied
    (:func:`synth.numerics.poly.scaled_roots_with_uncertainty`): a real or
    imaginary part within rounding of zero is exactly zero, so no verdict may
    hang on its sign.
    """
    return roots_with_uncertainty(poly)[0]


def roots_with_uncertainty(poly) -> tuple[np.ndarray, np.ndarray]:
    """:func:`roots_of` and each root's rounding uncertainty (same units)."""
    return scaled_roots_with_uncertainty(poly, tidy=True)


def _tidy(z: np.ndarray) -> np.ndarray:
    """Snap near-real roots onto the real axis and sort by real part (descending)."""
    z = np.asarray(z, dtype=complex).copy()
    real = is_real(z)
    z[real] = z[real].real
    return z[np.argsort(-z.real, kind="stable")]


@dataclass(frozen=True)
class ParityCheck:
    """The parity interlacing test of a plant (engine form).

    Attributes
    ----------
    zeros : tuple of float or None
        The real zeros in the closed RHP, ascending, with multiplicity;
        ``None`` stands for the zero at infinity of a strictly proper plant.
    pole_counts : tuple of int
        Number of real poles (with multiplicity) strictly between consecutive
        entries of ``zeros``.
    holds : bool
        Every count is even: some stable compensator stabilises the plant.
    odd_intervals : tuple of (float, float or None)
        The zero pairs with an odd count between them. Any stabilising
        compensator needs an odd number of real poles inside each of them, so
        it needs at least ``len(odd_intervals)`` unstable poles.
    """

    zeros: tuple[float | None, ...]
    pole_counts: tuple[int, ...]
    holds: bool
    odd_intervals: tuple[tuple[float, float | None], ...]
    near_pairs: tuple[tuple[float, complex], ...] = ()

    @property
    def uncertain(self) -> bool:
        """A real RHP zero and a pole are closer than double precision can order them.

        Then moving the pole across the zero by less than its rounding
        uncertainty would flip :attr:`holds`: the verdict is numerically uncertain.
        """
        return bool(self.near_pairs)

    @property
    def min_unstable_compensator_poles(self) -> int:
        return len(self.odd_intervals)

    def to_json(self) -> dict:
        return {"zeros": list(self.zeros), "pole_counts": list(self.pole_counts),
                "holds": self.holds,
                "odd_intervals": [list(iv) for iv in self.odd_intervals],
                "min_unstable_compensator_poles": self.min_unstable_compensator_poles,
                "numerically_uncertain": self.uncertain,
                "near_pole_zero_pairs": [{"zero": z, "pole": [p.real, p.imag]}
                                         for z, p in self.near_pairs]}


def parity_interlacing(num, den) -> ParityCheck:
    """Parity interlacing test for strong stabilisability of ``num/den``.

    A plant can be stabilised by a *stable* compensator exactly when the
    number of real poles (counted with multiplicity) between every pair of
    real zeros in the extended closed right half-plane is even. The zero at
    infinity of a strictly proper plant is one of those zeros.

    Parameters
    ----------
    num, den : array_like
        Plant polynomials (engine form: a Pade form of a dead time included,
        so its real RHP zero takes part).

    Returns
    -------
    ParityCheck

    Notes
    -----
    The count between two zeros has the parity of the number of sign changes
    of ``den`` between them, which is why any stabilising compensator must
    itself have an odd number of real poles in each interval with an odd
    count: a Hurwitz characteristic polynomial ``den_C den + num_C num`` is
    positive on ``[0, inf)`` and equals ``den_C den`` at the plant's zeros.

    References
    ----------
    .. [1] D. C. Youla, J. J. Bongiorno and C. N. Lu, Automatica 10, 1974.
    .. [2] J. C. Doyle, B. A. Francis and A. R. Tannenbaum, *Feedback Control
       Theory*, 1992, ch. 5 (from memory).
    """
    n, d = trim(num), trim(den)
    zr, zu = roots_with_uncertainty(n)
    pr, pu = roots_with_uncertainty(d)
    mask = is_real(zr) & in_closed_rhp(zr)
    real_zeros = np.sort(np.maximum(zr[mask].real, 0.0))
    zeros: list[float | None] = [float(x) for x in real_zeros]
    if d.size > n.size:  # strictly proper: a zero at infinity
        zeros.append(None)
    real_poles = pr[is_real(pr)].real
    counts: list[int] = []
    odd: list[tuple[float, float | None]] = []
    for a, b in zip(zeros[:-1], zeros[1:], strict=True):
        hi = math.inf if b is None else b
        c = int(np.count_nonzero((real_poles > a) & (real_poles < hi)))
        counts.append(c)
        if c % 2:
            odd.append((a, b))
    # a pole that rounding could move across a real RHP zero makes the count's parity unknowable
    near: list[tuple[float, complex]] = []
    for z, e in zip(zr[mask], zu[mask], strict=True):
        if pr.size == 0:
            break
        gap = np.abs(pr - z)
        for j in np.flatnonzero(gap <= _NEAR * (e + pu)):
            near.append((float(max(z.real, 0.0)), complex(pr[j])))
    return ParityCheck(tuple(zeros), tuple(counts), not odd, tuple(odd), tuple(near))


@dataclass(frozen=True)
class PeakBound:
    """A lower bound on the peak sensitivity ``max |S(jw)|`` of every stabilising loop.

    ``bound = prod_j |z + conj(p_j)| / |z - p_j|`` over the RHP poles listed
    in ``poles``, from ``S(z) = 1`` at the RHP zero ``z`` and the all-pass
    factor that the RHP poles force into ``S``.
    """

    zero: complex
    poles: tuple[complex, ...]
    bound: float

    def to_json(self) -> dict:
        return {"zero": [self.zero.real, self.zero.imag],
                "poles": [[p.real, p.imag] for p in self.poles], "bound": self.bound}


def peak_sensitivity_bounds(zeros, poles) -> tuple[tuple[PeakBound, ...], tuple[PeakBound, ...]]:
    """Interpolation bounds on peak sensitivity from RHP zeros and poles.

    Parameters
    ----------
    zeros, poles : array_like of complex
        Plant zeros and poles (delay-free part: a real delay has no zeros).

    Returns
    -------
    pairs : tuple of PeakBound
        ``|z + p| / |z - p|`` for every real RHP zero ``z`` and real RHP pole ``p``.
    combined : tuple of PeakBound
        For every RHP zero (real or complex, one of a pair), the product over
        all RHP poles; never smaller than any pair bound of that zero.

    References
    ----------
    .. [1] S. Skogestad and I. Postlethwaite, *Multivariable Feedback
       Control*, 2nd ed., 2005, sec. 5.6 (from memory).
    """
    z = np.asarray(zeros, dtype=complex)
    p = np.asarray(poles, dtype=complex)
    z = z[in_open_rhp(z) & (z.imag >= -REAL_RTOL * _scale(z))]
    p = p[in_open_rhp(p)]
    pairs: list[PeakBound] = []
    combined: list[PeakBound] = []
    if p.size == 0:
        return (), ()
    for zi in _tidy(z)[::-1]:
        zi = complex(zi)
        if is_real(zi):
            for pj in _tidy(p)[::-1]:
                if is_real(pj):
                    pr = float(pj.real)
                    b = abs(zi.real + pr) / abs(zi.real - pr) if zi.real != pr else math.inf
                    pairs.append(PeakBound(complex(zi.real), (complex(pr),), b))
        with np.errstate(divide="ignore"):
            fac = np.abs(zi + np.conj(p)) / np.abs(zi - p)
        combined.append(PeakBound(zi, tuple(complex(x) for x in p), float(np.prod(fac))))
    return tuple(pairs), tuple(combined)


@dataclass(frozen=True)
class BandwidthLimits:
    """Rules of thumb on the achievable closed-loop bandwidth (rad/s).

    Attributes
    ----------
    upper_from_zero : float or None
        About ``z/2`` for the slowest real RHP zero ``z`` of the delay-free part.
    upper_from_delay : float or None
        About ``1/theta`` for a dead time ``theta``.
    lower_from_pole : float or None
        At least about ``2 p`` for the fastest real RHP pole ``p``.
    """

    upper_from_zero: float | None
    upper_from_delay: float | None
    lower_from_pole: float | None
    zero: float | None
    pole: float | None

    @property
    def upper(self) -> float | None:
        ups = [u for u in (self.upper_from_zero, self.upper_from_delay) if u is not None]
        return min(ups) if ups else None

    def to_json(self) -> dict:
        return {"max_from_rhp_zero": self.upper_from_zero,
                "max_from_dead_time": self.upper_from_delay,
                "min_from_rhp_pole": self.lower_from_pole}


def bandwidth_limits(zeros, poles, dead_time: float) -> BandwidthLimits:
    """Bandwidth rules of thumb from real RHP zeros, real RHP poles and dead time.

    References
    ----------
    .. [1] S. Skogestad and I. Postlethwaite, *Multivariable Feedback
       Control*, 2nd ed., 2005, sec. 5.6-5.9 (from memory): ``wB < z/2``,
       ``wc > 2p``, ``wc < 1/theta``.
    """
    z = np.asarray(zeros, dtype=complex)
    p = np.asarray(poles, dtype=complex)
    zr = z[is_real(z) & in_open_rhp(z)].real
    pr = p[is_real(p) & in_open_rhp(p)].real
    zmin = float(np.min(zr)) if zr.size else None
    pmax = float(np.max(pr)) if pr.size else None
    return BandwidthLimits(
        upper_from_zero=None if zmin is None else zmin / 2.0,
        upper_from_delay=1.0 / dead_time if dead_time > 0 else None,
        lower_from_pole=None if pmax is None else 2.0 * pmax,
        zero=zmin, pole=pmax)


@dataclass(frozen=True)
class StructuralFacts:
    """What the plant itself allows, before any compensator is chosen.

    Poles and zeros are of the engine form unless the name says ``rational``
    (the delay-free part). ``pade_zeros`` are the RHP zeros that the Pade form
    of the dead time adds.
    """

    poles: tuple[complex, ...]
    zeros: tuple[complex, ...]
    unstable_poles: tuple[complex, ...]
    axis_poles: tuple[complex, ...]
    rhp_zeros: tuple[complex, ...]
    pade_zeros: tuple[complex, ...]
    dead_time: float
    pade_order: int
    relative_degree: int
    plant_type: int
    origin_zeros: int
    dc_gain: float | None
    common_factors: tuple[complex, ...]
    hidden_unstable: tuple[complex, ...]
    parity: ParityCheck
    peak_pairs: tuple[PeakBound, ...]
    peak_combined: tuple[PeakBound, ...]
    delay_peak_t: float | None
    bandwidth: BandwidthLimits

    @property
    def stabilizable(self) -> bool:
        """False when an unstable mode is common to numerator and denominator."""
        return not self.hidden_unstable

    @property
    def strongly_stabilizable(self) -> bool:
        return self.stabilizable and self.parity.holds

    @property
    def strong_stabilizability_uncertain(self) -> bool:
        """The parity verdict rests on a pole-zero order that double precision cannot fix."""
        return self.stabilizable and self.parity.uncertain

    @property
    def peak_sensitivity_lower_bound(self) -> float | None:
        """Largest hard lower bound on ``max |S|`` (from RHP zeros and poles, and delay)."""
        cands = [b.bound for b in self.peak_combined]
        if self.delay_peak_t is not None:
            cands.append(self.delay_peak_t - 1.0)  # |S| >= |T| - 1
        # a hidden unstable mode makes the bound infinite; it is reported on its own
        cands = [c for c in cands if 1.0 < c < math.inf]
        return max(cands) if cands else None

    def to_json(self) -> dict:
        def pts(v):
            return root_pairs(v, sort=False)
        return {
            "poles": pts(self.poles), "zeros": pts(self.zeros),
            "unstable_poles": pts(self.unstable_poles),
            "imaginary_axis_poles": pts(self.axis_poles),
            "rhp_zeros": pts(self.rhp_zeros), "pade_rhp_zeros": pts(self.pade_zeros),
            "dead_time": self.dead_time,
            "dead_time_order": self.pade_order if self.dead_time else None,
            "relative_degree": self.relative_degree, "plant_type": self.plant_type,
            "dc_gain": self.dc_gain, "common_factors": pts(self.common_factors),
            "hidden_unstable_modes": pts(self.hidden_unstable),
            "parity_interlacing": self.parity.to_json(),
            "peak_sensitivity_pair_bounds": [b.to_json() for b in self.peak_pairs],
            "peak_sensitivity_zero_bounds": [b.to_json() for b in self.peak_combined],
            "peak_complementary_sensitivity_delay_bound": self.delay_peak_t,
            "peak_sensitivity_lower_bound": self.peak_sensitivity_lower_bound,
            "bandwidth": self.bandwidth.to_json(),
        }


def _trailing_zeros(p: np.ndarray) -> int:
    p = trim(p)
    k = 0
    while k < p.size - 1 and p[p.size - 1 - k] == 0.0:
        k += 1
    return k


def structural_facts(plant: Plant) -> StructuralFacts:
    """Collect the :class:`StructuralFacts` of ``plant``."""
    poles = _tidy(roots_of(plant.den))
    zeros = _tidy(roots_of(plant.num))
    rat_zeros = _tidy(roots_of(plant.rational_num))
    rat_poles = _tidy(roots_of(plant.rational_den))
    unstable = poles[in_open_rhp(poles)]
    axis = poles[in_closed_rhp(poles) & ~in_open_rhp(poles)]
    rhp_rat = rat_zeros[in_closed_rhp(rat_zeros)]
    rhp_all = zeros[in_closed_rhp(zeros)]
    pade = _minus(rhp_all, rhp_rat)
    n_type = _trailing_zeros(plant.rational_den)
    n_orig = _trailing_zeros(plant.rational_num)
    common = tuple(complex(c) for c in plant.common_factors())
    hidden = tuple(c for c in common if in_closed_rhp(c))
    kind = min(n_type, n_orig)
    dc = None
    if n_type - kind == 0 and n_orig - kind == 0:
        dn = trim(plant.rational_num)[: trim(plant.rational_num).size - kind]
        dd = trim(plant.rational_den)[: trim(plant.rational_den).size - kind]
        dc = float(dn[-1] / dd[-1])
    elif n_orig > n_type:
        dc = 0.0
    pairs, combined = peak_sensitivity_bounds(rat_zeros, rat_poles)
    ru = rat_poles[in_open_rhp(rat_poles)]
    delay_t = None
    if plant.dead_time > 0 and ru.size:
        # beyond binary64's range the bound exp(p T) is infinite, not an error
        x = float(np.max(ru.real)) * plant.dead_time
        delay_t = math.exp(x) if x < math.log(sys.float_info.max) else math.inf
    return StructuralFacts(
        poles=tuple(complex(x) for x in poles), zeros=tuple(complex(x) for x in zeros),
        unstable_poles=tuple(complex(x) for x in unstable),
        axis_poles=tuple(complex(x) for x in axis),
        rhp_zeros=tuple(complex(x) for x in rhp_rat),
        pade_zeros=tuple(complex(x) for x in pade),
        dead_time=float(plant.dead_time), pade_order=int(plant.pade_order),
        relative_degree=int(plant.relative_degree),
        plant_type=n_type - kind, origin_zeros=n_orig - kind, dc_gain=dc,
        common_factors=common, hidden_unstable=hidden,
        parity=parity_interlacing(plant.num, plant.den),
        peak_pairs=pairs, peak_combined=combined, delay_peak_t=delay_t,
        bandwidth=bandwidth_limits(rat_zeros, rat_poles, plant.dead_time),
    )


def _minus(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Multiset difference of root lists (nearest match within tolerance)."""
    rest = list(b)
    out = []
    for x in a:
        if rest:
            d = np.abs(np.asarray(rest) - x)
            j = int(np.argmin(d))
            if d[j] <= 1e-6 * abs(x):
                rest.pop(j)
                continue
        out.append(x)
    return np.asarray(out, dtype=complex)
