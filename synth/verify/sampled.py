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
from typing import Any

import numpy as np

from synth.errors import InputError
from synth.numerics.poly import coefficients
from synth.verify.hybrid import split_delay
from synth.verify.simulation import discrete_step, hold_integrals, realise

__all__ = [
    "RateFigures",
    "SampledDesign",
    "SampledLoopCheck",
    "design_zmap",
    "map_design",
    "rate_figures",
    "sampled_design",
    "sampled_loop_check",
    "simulate_sampled_loop",
    "zoh_discretise",
    "ControllerVectors",
    "controller_vectors",
]

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
    whole, frac = split_delay(dead_time, T)
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




# ----------------------------------------------------------------------------------------------
# the sampled design: the discrete controller of a design, its loop and the sample-rate figures
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class RateFigures:
    """The sample rate against a design's loop (common practice, with the numbers).

    Attributes
    ----------
    sample_rate : float
        ``2 pi / T``, rad/s.
    bandwidth : float or None
        The continuous design's closed-loop bandwidth (its crossover when it has none), rad/s.
    ratio : float or None
        ``sample_rate / bandwidth``.
    crossover_frequency : float or None
        The continuous loop's gain crossover ``w_c``, rad/s.
    hold_phase_deg : float or None
        Phase the zero-order hold costs at ``w_c``: ``w_c T / 2`` in degrees.
    delay_phase_deg : float or None
        Phase the computation delay costs at ``w_c``: ``w_c tau`` in degrees.
    phase_margin_deg : float or None
        The continuous design's phase margin.
    margin_left_deg : float or None
        That margin less both costs (an estimate of the sampled loop's).
    message : str or None
        ``"warning: ..."`` or ``"note: ..."`` with the numbers, ``None`` when ample.
    """

    sample_rate: float
    bandwidth: float | None
    ratio: float | None
    crossover_frequency: float | None
    hold_phase_deg: float | None
    delay_phase_deg: float | None
    phase_margin_deg: float | None
    margin_left_deg: float | None
    message: str | None

    def to_json(self) -> dict:
        return {k: getattr(self, k) for k in (
            "sample_rate", "bandwidth", "ratio", "crossover_frequency", "hold_phase_deg",
            "delay_phase_deg", "phase_margin_deg", "margin_left_deg", "message")}


def rate_figures(T: float, compute_delay: float, crossover: float | None,
                 bandwidth: float | None, phase_margin_deg: float | None) -> RateFigures:
    """Sample rate against the loop: bandwidth ratio, and the phase hold and delay cost at crossover.

    A zero-order hold lags by ``w T / 2`` at frequency ``w`` and a delay
    ``tau`` by ``w tau`` (common practice; Franklin, Powell and Workman).
    The message is a warning when the rate is below 10 times the bandwidth or
    the two costs take at least half the phase margin, a note below 30 times
    or at a quarter of the margin.

    Parameters
    ----------
    T, compute_delay : float
        Seconds.
    crossover, bandwidth, phase_margin_deg : float or None
        The continuous design's gain crossover (rad/s), closed-loop
        bandwidth (rad/s) and phase margin (degrees).

    Returns
    -------
    RateFigures

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
       Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 11 (sample-rate
       selection), from memory.
    """
    from synth.problem.sampling import RATE_NOTE, RATE_WARNING

    ws = 2.0 * math.pi / T
    bw = bandwidth if bandwidth is not None and bandwidth > 0 else crossover
    ratio = ws / bw if bw else None
    hold = delay = left = None
    if crossover is not None:
        hold = math.degrees(crossover * T / 2.0)
        delay = math.degrees(crossover * compute_delay)
        if phase_margin_deg is not None:
            left = phase_margin_deg - hold - delay
    parts, level = [], 0
    if ratio is not None:
        what = "closed-loop bandwidth" if bw == bandwidth else "gain crossover"
        parts.append(f"sampling at {ws:.4g} rad/s is {ratio:.3g} times the design's {what} "
                     f"({bw:.4g} rad/s)")
        level = 2 if ratio < RATE_WARNING else (1 if ratio < RATE_NOTE else 0)
    if hold is not None:
        cost = hold + delay
        text = (f"at the gain crossover {crossover:.4g} rad/s the hold costs {hold:.3g} deg "
                f"(w T / 2)")
        if compute_delay > 0:
            text += f" and the computation delay {delay:.3g} deg (w tau)"
        if phase_margin_deg is not None and phase_margin_deg > 0:
            text += (f", {cost:.3g} of the continuous design's {phase_margin_deg:.3g} deg phase "
                     f"margin (about {left:.3g} deg left)")
            level = max(level, 2 if cost >= 0.5 * phase_margin_deg else
                        (1 if cost >= 0.25 * phase_margin_deg else 0))
        parts.append(text)
    message = None
    if level:
        word = "warning" if level == 2 else "note"
        advice = ("sample faster, or shorten the computation delay" if level == 2 else
                  "check the sampled loop's margins and overshoot")
        message = (f"{word}: " + "; ".join(parts) + "; common practice asks for a sample rate "
                   f"of 10 to 30 times the closed-loop bandwidth (Franklin, Powell and Workman): "
                   f"{advice}")
    return RateFigures(sample_rate=ws, bandwidth=bw, ratio=ratio, crossover_frequency=crossover,
                       hold_phase_deg=hold, delay_phase_deg=delay,
                       phase_margin_deg=phase_margin_deg, margin_left_deg=left, message=message)


def design_zmap(crossover: float | None, T: float):
    """The map of a continuous design to z: Tustin pre-warped at its crossover when it can be.

    Returns
    -------
    (ZMap, str or None)
        Plain Tustin with the reason when the loop has no crossover or it is
        not below the Nyquist frequency ``pi / T``.
    """
    from synth.verify.discrete import ZMap

    nyquist = math.pi / T
    if crossover is None:
        return ZMap("tustin", T), ("the loop gain never crosses 1, so there is no crossover to "
                                   "pre-warp at; plain Tustin (no pre-warping) is used")
    if crossover >= nyquist:
        return ZMap("tustin", T), (f"warning: the gain crossover {crossover:.4g} rad/s is not "
                                   f"below the Nyquist frequency pi/T = {nyquist:.4g} rad/s; "
                                   "plain Tustin is used, and the sample time is far too long "
                                   "for this loop")
    return ZMap("tustin-prewarp", T, float(crossover)), None


def map_design(plant, controller, sampling, limits=None, max_rate=None,
               source: str | None = None, key: str | None = None):
    """A continuous design's discrete controller, as the run maps it and the export rebuilds it.

    Tustin's method pre-warped at the gain crossover of ``controller`` around
    ``plant`` (:func:`design_zmap`), realised by
    :func:`synth.verify.discrete.discrete_controller` with the limits.

    Parameters
    ----------
    plant : synth.problem.plant.Plant
        The plant whose loop sets the pre-warping frequency (the nominal plant:
        one controller is exported, whatever model it is then judged against).
    controller : synth.verify.controller.Controller
    sampling : synth.problem.sampling.Sampling
    limits : (float, float), optional
    max_rate : float, optional
    source, key : str, optional
        Where errors point.

    Returns
    -------
    (DiscreteController, LoopFrequency, str or None)
        The controller, the continuous loop's frequency facts and the reason
        plain Tustin was used (``None`` when pre-warped).
    """
    from synth.verify.discrete import discrete_controller
    from synth.verify.frequency import loop_frequency

    facts = loop_frequency(plant, controller.num, controller.den)
    zmap, why = design_zmap(facts.crossover_frequency, sampling.period)
    model = discrete_controller(controller, zmap, compute_delay=sampling.compute_delay,
                                limits=limits, max_rate=max_rate, source=source, key=key)
    return model, facts, why


@dataclass(frozen=True)
class SampledDesign:
    """A design as it runs sampled: its discrete controller and the sampled loop's figures.

    Attributes
    ----------
    period, compute_delay : float
        Seconds.
    controller : synth.verify.discrete.DiscreteController
        The controller (what the exports print).
    loop : SampledLoopCheck
        The sampled loop (plant by zero-order hold, dead time and computation
        delay exact at the samples) with the linear controller ``C(z)``.
    crossover_frequency, phase_margin_deg : float or None
        Of the sampled loop, on the unit circle up to Nyquist
        (:meth:`synth.verify.hybrid.SampledLoop.frequency`).
    rate : RateFigures
        The sample rate against the continuous design.
    continuous : dict
        The continuous design's figures compared: ``crossover_frequency``,
        ``phase_margin_deg``, ``bandwidth``.
    warnings : tuple of str
        Every warning or note, with numbers.
    poles_z : tuple of complex
        The sampled-data loop's closed-loop poles in z (eigenvalues of the loop
        from sample to sample, :meth:`synth.verify.hybrid.SampledLoop.poles`);
        ``loop.stable`` and ``loop.spectral_radius`` are read from them.
    frequency : synth.verify.hybrid.SampledFrequency or None
        The loop on the unit circle (margins, ``Ms``, ``Mt``, noise gain), for
        a stable loop.
    """

    period: float
    compute_delay: float
    controller: Any
    loop: SampledLoopCheck
    crossover_frequency: float | None
    phase_margin_deg: float | None
    rate: RateFigures
    continuous: dict
    warnings: tuple[str, ...]
    poles_z: tuple[complex, ...] = ()
    frequency: Any = None

    def to_json(self) -> dict:
        """The design JSON's ``discrete`` object (contract fields first)."""
        from synth.outputs.forms import difference_equation
        from synth.outputs.jsonout import root_pairs

        num, den = self.controller.transfer()
        out = {"period": self.period, "compute_delay": self.compute_delay,
               "numerator": [float(x) for x in num], "denominator": [float(x) for x in den]}
        out.update(self.controller.to_json())
        c = self.controller
        if len(c.sections) == 1 and c.sections[0].t is None:
            out["difference_equation"] = difference_equation(num, den).to_json()
        lp = self.loop
        out["sampled_loop"] = {"stable": lp.stable, "spectral_radius": lp.spectral_radius,
                               "overshoot_percent": lp.overshoot_percent,
                               "final_value": lp.final_value,
                               "numerically_marginal": lp.marginal,
                               "crossover_frequency": self.crossover_frequency,
                               "phase_margin_deg": self.phase_margin_deg,
                               "poles_z": root_pairs(self.poles_z)}
        if self.frequency is not None:
            f = self.frequency
            out["sampled_loop"].update(
                gain_margin_db=f.gain_margin_db, delay_margin=f.delay_margin,
                peak_sensitivity=f.peak_sensitivity,
                peak_complementary_sensitivity=f.peak_complementary_sensitivity,
                noise_gain=f.noise_gain)
        out["continuous"] = dict(self.continuous)
        out["rate"] = self.rate.to_json()
        out["warnings"] = list(self.warnings)
        return out


def sampled_design(plant, controller, sampling, limits=None, max_rate=None,
                   source: str | None = None, key: str | None = None) -> SampledDesign:
    """The discrete controller of a continuous design, and its sampled loop.

    The compensator is mapped by Tustin's method pre-warped at the
    continuous loop's gain crossover (plain Tustin when there is none below
    Nyquist; :func:`design_zmap`), realised by
    :func:`synth.verify.discrete.discrete_controller` with the design's
    reference shaping, the limits and its anti-windup, and checked in the
    sampled loop: the plant by zero-order hold with its dead time plus the
    computation delay (exact at the samples, :func:`zoh_discretise`),
    the overshoot at the samples (:func:`sampled_loop_check`), and from the
    sampled-data loop the verdict judges (:mod:`synth.verify.hybrid`) its
    poles in z, stability, crossover, margins and peaks up to Nyquist.

    Parameters
    ----------
    plant : synth.problem.plant.Plant
    controller : synth.verify.controller.Controller
    sampling : synth.problem.sampling.Sampling
    limits : (float, float), optional
    max_rate : float, optional
    source, key : str, optional
        Where errors point.

    Returns
    -------
    SampledDesign

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
       Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 4, 6 and 11, from memory.
    """
    T, tau = sampling.period, sampling.compute_delay
    model, facts, why = map_design(plant, controller, sampling, limits=limits,
                                   max_rate=max_rate, source=source, key=key)
    warnings = [why] if why else []
    warnings.extend(f"note: {n}" for n in model.notes)
    gn, gd = zoh_discretise(plant.rational_num, plant.rational_den, T, plant.dead_time + tau)
    cn, cd = model.transfer()
    loop = sampled_loop_check(gn, gd, cn, cd, T)
    # stability, poles and margins from the sampled-data loop the verdict judges (eigenvalues
    # of the loop from sample to sample; the loop on the unit circle): the polynomial check
    # above keeps the overshoot at the samples and the characteristic polynomial
    from dataclasses import replace

    from synth.verify.frequency import frequency_grid
    from synth.verify.hybrid import UNIT_CIRCLE_TOL, sampled_loop

    hybrid = sampled_loop(plant, model)
    poles_z = hybrid.poles()
    rho = float(np.max(np.abs(poles_z))) if poles_z.size else 0.0
    loop = replace(loop, stable=rho < 1.0 - UNIT_CIRCLE_TOL, spectral_radius=rho)
    wc_d, pm_d, freq = None, None, None
    if loop.stable:
        freq = hybrid.frequency(frequency_grid(plant, controller.num, controller.den))
        wc_d, pm_d = freq.crossover_frequency, freq.phase_margin_deg
    rate = rate_figures(T, tau, facts.crossover_frequency, facts.bandwidth,
                        facts.phase_margin_deg)
    if rate.message:
        warnings.append(rate.message)
    if not loop.stable:
        warnings.append(f"warning: the sampled loop is UNSTABLE at T = {T:g} s"
                        + (f" with a computation delay of {tau:g} s" if tau else "")
                        + f" (largest closed-loop root |z| = {loop.spectral_radius:.4g}); "
                        "sample faster")
    if loop.marginal:
        warnings.append(f"note: at T = {T:g} s the closed-loop poles crowd z = 1 (sampling far "
                        "faster than the loop's slowest mode), so the sampled loop's overshoot "
                        "and final value are numerically marginal beyond their first digits; "
                        "the continuous verdicts stand")
    continuous = {"crossover_frequency": facts.crossover_frequency,
                  "phase_margin_deg": facts.phase_margin_deg, "bandwidth": facts.bandwidth}
    return SampledDesign(period=T, compute_delay=tau, controller=model, loop=loop,
                         crossover_frequency=wc_d, phase_margin_deg=pm_d, rate=rate,
                         continuous=continuous, warnings=tuple(warnings),
                         poles_z=tuple(complex(p) for p in poles_z), frequency=freq)


def simulate_sampled_loop(plant_numd, plant_dend, controller, reference, load, noise=0.0
                          ) -> tuple[np.ndarray, np.ndarray]:
    """The sampled loop at its samples with the complete discrete controller (limits included).

    Parameters
    ----------
    plant_numd, plant_dend : array_like
        The plant with its hold, dead time and computation delay
        (:func:`zoh_discretise`).
    controller : synth.verify.discrete.DiscreteController
        Run sample by sample (:meth:`~synth.verify.discrete.DiscreteController.start`).
    reference, load : array_like
        Per sample: the reference, and a disturbance added to the controller's
        output at the plant input (held like the output).
    noise : array_like or float, optional
        Added to the plant output to make the measurement.

    Returns
    -------
    measurement, output : numpy.ndarray
        The plant output at each sample plus the noise, taken just before the
        new output acts (a plant with direct feedthrough sees the previous
        held input there), and the controller's output.

    Notes
    -----
    The plant runs in a state-space form of its transfer function
    (:func:`scipy.signal.tf2ss`); the controller through its own program,
    so the measurement and the output are exactly what the exported code
    would see and return in this loop.
    """
    from scipy.signal import tf2ss

    gn = coefficients(plant_numd, "the discrete plant numerator")
    gd = coefficients(plant_dend, "the discrete plant denominator", allow_zero=False)
    A, B, C, D = tf2ss(gn, gd)
    b, c, dd = B[:, 0], C[0], float(D[0, 0])
    r = np.asarray(reference, dtype=float)
    d = np.broadcast_to(np.asarray(load, dtype=float), r.shape)
    n = np.broadcast_to(np.asarray(noise, dtype=float), r.shape)
    x = np.zeros(A.shape[0])
    run = controller.start()
    held = 0.0
    y = np.empty(r.size)
    u = np.empty(r.size)
    for k in range(r.size):
        y[k] = (float(c @ x) if x.size else 0.0) + dd * held + float(n[k])
        u[k] = run.step(float(r[k]), float(y[k]))
        held = float(u[k]) + float(d[k])
        if x.size:
            x = A @ x + b * held
    return y, u


@dataclass(frozen=True)
class ControllerVectors:
    """Input sequences and the outputs synth's discrete model returns for them.

    Attributes
    ----------
    reference, measurement, output : numpy.ndarray
        One entry per sample, from ``init`` on.
    segments : tuple of (str, int, int)
        What each stretch of samples exercises: label, first sample, end (exclusive).
    closed_loop : bool
        The measurement comes from the sampled loop's own simulation (else,
        for a loop unstable at this sample time, from a synthetic trajectory).
    """

    reference: np.ndarray
    measurement: np.ndarray
    output: np.ndarray
    segments: tuple[tuple[str, int, int], ...]
    closed_loop: bool


def controller_vectors(plant, controller, reference_step: float = 1.0) -> ControllerVectors:
    """Test vectors for a discrete controller: a reference step, a load step, runs into the limits.

    One continuous run from rest (the exported code's ``init`` once, then
    one ``step`` per row): a reference step of ``reference_step``; a load
    step at the plant input opposing half the output's peak so far; with
    output limits, reference jumps that drive the output into the upper and
    then the lower limit and back (anti-windup and recovery); without limits,
    a reference ramp.  A small deterministic measurement noise (seed 0,
    1e-3 of the step) runs throughout, so every coefficient shows in the
    outputs.  The measurement comes from :func:`simulate_sampled_loop` with
    the plant by zero-order hold (dead time and computation delay exact), or
    from a first-order trajectory when the sampled loop is unstable.

    Parameters
    ----------
    plant : synth.problem.plant.Plant
    controller : synth.verify.discrete.DiscreteController
    reference_step : float
        Size of the reference step (the actuator's ``reference_step``; default 1).

    Returns
    -------
    ControllerVectors
    """
    T, tau = controller.period, controller.compute_delay
    gn, gd = zoh_discretise(plant.rational_num, plant.rational_den, T, plant.dead_time + tau)
    cn, cd = controller.transfer()
    check = sampled_loop_check(gn, gd, cn, cd, T)
    rho = check.spectral_radius if check.stable else 0.9
    # a stretch long enough for the slowest closed-loop mode to fall to 1e-3, within bounds
    seg = int(np.clip(math.ceil(math.log(1e-3) / math.log(max(rho, 1e-3))) if rho > 0 else 20,
                      20, 400))
    s = float(reference_step)
    rng = np.random.default_rng(0)

    def run(r, d):
        noise = 1e-3 * abs(s) * rng.standard_normal(r.size)
        if check.stable:
            y, u = simulate_sampled_loop(gn, gd, controller, r, d, noise)
            if np.all(np.isfinite(y)) and np.max(np.abs(y)) <= 1e6 * abs(s):
                return y, u, True
        # synthetic: the measurement follows the reference like a first-order lag of 'seg/5'
        a = math.exp(-5.0 / seg)
        from scipy.signal import lfilter

        y = lfilter([1 - a], [1.0, -a], r) + noise
        return y, controller.simulate(r, y), False

    lead = 2
    r = np.concatenate([np.zeros(lead), np.full(seg, s)])
    d = np.zeros(r.size)
    _, u1, _ = run(r, d)
    peak = float(np.max(np.abs(u1))) or 1.0
    # the load: half the output's peak, opposing it
    load = -0.5 * peak * math.copysign(1.0, float(u1[np.argmax(np.abs(u1))]) or 1.0)
    segments = [("reference step", 0, r.size)]
    r = np.concatenate([r, np.full(seg, s)])
    d = np.concatenate([d, np.full(seg, load)])
    segments.append(("load step at the plant input", segments[-1][2], r.size))
    lim = controller.limits
    if lim is not None:
        # reference jumps sized from the linear peak so far, to drive the output well past a limit
        up = 3.0 * max(lim[1], abs(lim[1] - lim[0]) / 2) / peak * abs(s) + abs(s)
        down = 3.0 * max(-lim[0], abs(lim[1] - lim[0]) / 2) / peak * abs(s) + abs(s)
        sgn = math.copysign(1.0, s)
        for label, value in (("reference far up: the output runs into a limit", s + sgn * up),
                             ("reference far down: the output runs into the other limit",
                              s - sgn * down),
                             ("recovery from the limits", s)):
            start = r.size
            r = np.concatenate([r, np.full(seg, value)])
            d = np.concatenate([d, np.full(seg, load)])
            segments.append((label, start, r.size))
    else:
        start = r.size
        r = np.concatenate([r, s + s * np.arange(1, seg + 1) / seg])
        d = np.concatenate([d, np.full(seg, load)])
        segments.append(("reference ramp", start, r.size))
    y, u, closed = run(r, d)
    return ControllerVectors(reference=r, measurement=y, output=u, segments=tuple(segments),
                             closed_loop=closed)
