"""The sampled loop: a plant behind a zero-order hold and its verdict with a discrete compensator.

:func:`zoh_discretise` gives the exact zero-order-hold equivalent of a plant
(a fractional dead time included); :func:`sampled_loop_check` judges the loop
``Cd(z) G(z)`` under unity negative feedback: stability from the unreduced
characteristic polynomial, overshoot at the sampling instants.

References
----------
.. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
   Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 4 (zero-order-hold
   equivalent, modified z-transform, stability of sampled systems), from memory.
.. [2] C. F. Van Loan, "Computing integrals involving the matrix exponential",
   IEEE Trans. Automatic Control 23(3), 1978.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np

from synth.errors import InputError
from synth.numerics.poly import coefficients
from synth.verify.simulation import discrete_step, hold_integrals, realise

__all__ = ["SampledLoopCheck", "sampled_loop_check", "zoh_discretise"]

# A closed-loop root this close to the unit circle counts as on it (not stable):
# rounding cannot then turn a marginal loop into a "stable" verdict.
_UNIT_CIRCLE_TOL = 1e-10
# Relative rounding error of the closed loop's static gain above which its final value and
# overshoot are called numerically marginal.
_MARGINAL = 1e-6


def _positive_time(T, name: str = "the sample time") -> float:
    if isinstance(T, bool) or not isinstance(T, numbers.Real) or not math.isfinite(T) or T <= 0:
        raise InputError(f"{name} must be a finite number > 0, got {T!r}")
    return float(T)


def _zoh(A: np.ndarray, B: np.ndarray, h: float):
    """``(expm(A h), int_0^h expm(A t) dt B)``: the hold integrals for a constant input."""
    Phi, G0, G1 = hold_integrals(A, B[:, None], h)
    return Phi, (G0 + G1)[:, 0]


def zoh_discretise(num, den, T: float, dead_time: float = 0.0
                   ) -> tuple[np.ndarray, np.ndarray]:
    """Discretise a plant driven through a zero-order hold.

    Parameters
    ----------
    num, den : array_like
        Proper ``G(s)``, descending powers of ``s``.
    T : float
        Sample time in seconds, ``> 0``.
    dead_time : float, optional
        Exact input delay in seconds, ``>= 0``. Whole sample periods become
        poles at ``z = 0``; a fractional part is handled exactly by splitting
        the hold interval (modified z-transform).

    Returns
    -------
    numd, dend : numpy.ndarray
        ``G(z)`` in descending powers of ``z``, ``dend`` monic; the numerator
        has leading exact zeros trimmed. No factor is cancelled.

    Notes
    -----
    A companion realisation ``(A, B, C, D)`` (:func:`synth.verify.simulation.realise`) is built and
    ``Phi = expm(A T)``, ``Gamma = int_0^T expm(A t) dt B`` are read from the
    exponential of the augmented matrix ``[[A, B], [0, 0]] T``. The poles map
    as ``z = exp(s T)``; the numerator follows from the Markov parameters
    ``h_k = C Phi^(k-1) Gamma`` by ``b_j = sum_i a_i h_(j-i)``
    (Cayley-Hamilton), which avoids subtracting two nearly equal
    characteristic polynomials when ``T`` is small.

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
       Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 4 (zero-order-hold
       equivalent, fractional delay), from memory.
    .. [2] C. F. Van Loan, "Computing integrals involving the matrix
       exponential", IEEE Trans. Automatic Control, 23(3), 1978.
    """
    T = _positive_time(T)
    if isinstance(dead_time, bool) or not isinstance(dead_time, numbers.Real) or not math.isfinite(
            dead_time) or dead_time < 0:
        raise InputError(f"the dead time must be a finite number >= 0, got {dead_time!r}")
    n = coefficients(num, "the plant numerator")
    d = coefficients(den, "the plant denominator", allow_zero=False)
    if n.size > d.size:
        raise InputError("the plant is improper (numerator degree above denominator)")
    whole = math.floor(dead_time / T + 1e-12)
    frac = dead_time - whole * T
    if frac <= 1e-12 * T:
        frac = 0.0
    order = d.size - 1
    if order == 0:
        gain = n[0] / d[0]
        bcoef = np.array([gain]) if frac == 0 else np.array([0.0, gain])
        acoef = np.array([1.0]) if frac == 0 else np.array([1.0, 0.0])
    else:
        A, B2, C2, D2 = realise(n, d)
        B, C, D = B2[:, 0], C2[0], float(D2[0, 0])
        a_poly = np.real(np.poly(np.exp(np.roots(d) * T)))
        if frac == 0.0:
            Phi, G0 = _zoh(A, B, T)
            G1 = np.zeros(order)
            acoef = a_poly
        else:
            Phi_a, G0 = _zoh(A, B, T - frac)
            Phi_b, gb = _zoh(A, B, frac)
            G1 = Phi_a @ gb
            Phi = Phi_a @ Phi_b
            acoef = np.append(a_poly, 0.0)  # the held sample one period back
        length = acoef.size
        # Markov parameters h_0..h_(length-1) of C (zI - Phi)^-1 (G0 + G1/z) (+ D)
        h = np.zeros(length)
        v0, v1 = G0.copy(), G1.copy()
        for k in range(1, length):
            h[k] = C @ v0 + (C @ v1 if k >= 2 else 0.0)
            if k >= 2:
                v1 = Phi @ v1
            v0 = Phi @ v0
        # feedthrough arrives undelayed, or one sample late with a fractional delay
        if frac == 0.0:
            h[0] += D
        else:
            h[1] += D
        bcoef = np.convolve(acoef, h)[:length]
    numd = coefficients(bcoef, "numerator")
    dend = np.concatenate([acoef, np.zeros(whole)])
    return numd, dend



@dataclass(frozen=True)
class SampledLoopCheck:
    """Verdict on the sampled loop ``Cd(z) G(z)`` under unity negative feedback.

    Attributes
    ----------
    stable : bool
        Every root of the unreduced characteristic polynomial lies strictly
        inside the unit circle (a root within 1e-10 of it counts as on it).
    spectral_radius : float
        Largest root magnitude.
    overshoot_percent : float or None
        Unit-step overshoot at the sampling instants, against the final
        value; ``None`` when the loop is unstable or its final value is 0.
        Ripple between samples is not seen here.
    final_value : float or None
        Closed-loop static gain ``T(1)``; ``None`` when unstable.
    characteristic : tuple of float
        ``den_C den_G + num_C num_G`` in descending powers of ``z``.
    sample_time : float
        The sample time in seconds.
    marginal : bool
        The final value and the overshoot are numerically marginal: the
        characteristic polynomial at ``z = 1`` is so much smaller than its
        coefficients (closed-loop poles crowding ``z = 1`` when sampling is
        far faster than the loop's slowest mode) that rounding alone may move
        them by more than a millionth.
    """

    stable: bool
    spectral_radius: float
    overshoot_percent: float | None
    final_value: float | None
    characteristic: tuple[float, ...]
    sample_time: float
    marginal: bool = False

    def to_json(self) -> dict:
        """Mapping with the same names; ``characteristic`` as a list."""
        return {"stable": self.stable, "spectral_radius": self.spectral_radius,
                "overshoot_percent": self.overshoot_percent, "final_value": self.final_value,
                "characteristic": list(self.characteristic), "sample_time": self.sample_time,
                "marginal": self.marginal}


def _pad_add(p: np.ndarray, q: np.ndarray) -> np.ndarray:
    n = max(p.size, q.size)
    return np.pad(p, (n - p.size, 0)) + np.pad(q, (n - q.size, 0))


def sampled_loop_check(plant_numd, plant_dend, c_numd, c_dend, T: float) -> SampledLoopCheck:
    """Stability and step overshoot of the sampled loop.

    Parameters
    ----------
    plant_numd, plant_dend : array_like
        The plant discretised by a zero-order hold (:func:`zoh_discretise`),
        descending powers of ``z``.
    c_numd, c_dend : array_like
        The discrete compensator (:func:`tustin_prewarp`).
    T : float
        Sample time in seconds, ``> 0``.

    Returns
    -------
    SampledLoopCheck

    Notes
    -----
    The characteristic polynomial ``den_C den_G + num_C num_G`` is formed
    without cancelling common factors (the loop convention of the contract),
    and its roots come from :func:`numpy.roots`. The step response of
    ``num_C num_G / characteristic`` is
    :func:`synth.verify.simulation.discrete_step` for as many samples as the
    slowest mode needs to decay to 1e-9 (at most 200 000).

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
       Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 4 (stability of
       sampled systems), from memory.
    """
    T = _positive_time(T)
    gn = coefficients(plant_numd, "the discrete plant numerator")
    gd = coefficients(plant_dend, "the discrete plant denominator", allow_zero=False)
    cn = coefficients(c_numd, "the discrete compensator numerator")
    cd = coefficients(c_dend, "the discrete compensator denominator", allow_zero=False)
    open_den = np.convolve(cd, gd)
    open_num = np.convolve(cn, gn)
    if open_num.size > open_den.size:
        raise InputError("the sampled loop is not causal (loop numerator degree above denominator)")
    char = _pad_add(open_den, open_num)
    # leading terms that cancel to rounding level are exact zeros
    terms = _pad_add(np.abs(open_den), np.abs(open_num))
    char[np.abs(char) <= 1e-13 * terms] = 0.0
    if char[0] == 0:
        raise InputError("the sampled loop is ill-posed: 1 + C(z) G(z) vanishes at z = infinity")
    roots = np.roots(char)
    rho = float(np.max(np.abs(roots))) if roots.size else 0.0
    stable = rho < 1.0 - _UNIT_CIRCLE_TOL
    overshoot = final = None
    if stable:
        b = np.pad(open_num, (char.size - open_num.size, 0))
        final = float(np.sum(b) / np.sum(char))
        if rho > 0:
            steps = int(np.clip(math.ceil(math.log(1e-9) / math.log(rho)), 0, 200_000))
        else:
            steps = 0
        steps += 4 * char.size + 20
        y = discrete_step(b, char, steps)
        if final != 0:
            excess = np.max(y * math.copysign(1.0, final)) - abs(final)
            overshoot = float(max(0.0, excess) / abs(final) * 100.0)
    # rounding error of char(1) relative to its value: n eps sum|c| / |sum c|
    at_one = abs(float(np.sum(char)))
    spread = char.size * np.finfo(float).eps * float(np.sum(np.abs(char)))
    marginal = bool(stable and (at_one == 0.0 or spread / at_one > _MARGINAL))
    return SampledLoopCheck(stable=bool(stable), spectral_radius=rho,
                            overshoot_percent=overshoot, final_value=final,
                            characteristic=tuple(float(x) for x in char), sample_time=T,
                            marginal=marginal)


