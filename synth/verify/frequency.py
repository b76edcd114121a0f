"""Frequency-domain verdicts and curves: margins, sensitivity peak, crossovers, bandwidth.

Computed on ``L(jw)`` with the exact dead time, on :func:`frequency_grid`
(logarithmic over the loop's corner frequencies, dense around lightly damped
roots) refined at every crossing by :func:`scipy.optimize.brentq`.
:func:`frequency_metrics` gives the verdict's numbers;
:func:`loop_frequency` adds what outputs draw (the curve ``L(jw)``, the phase
crossovers, the closed-loop bandwidth, the frequency of the sensitivity peak).

References
----------
K. J. Astrom and R. M. Murray, *Feedback Systems*, Princeton University Press,
2008, ch. 9-10 (Nyquist criterion, stability margins, sensitivity peak,
bandwidth).
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from synth.numerics.poly import scaled_roots, trim

__all__ = ["LoopFrequency", "frequency_grid", "frequency_metrics", "gain_crossovers",
           "loop_frequency", "refined_peak"]


@dataclass(frozen=True)
class LoopFrequency:
    """The loop's frequency response and the facts read from it (exact dead time).

    Attributes
    ----------
    w : ndarray
        The grid (rad/s), :func:`frequency_grid`.
    loop : ndarray of complex
        ``L(jw) = C(jw) G(jw)`` on ``w`` (non-finite at a pole on the axis).
    crossover_frequency : float or None
        Gain crossover where the phase margin is read (``None``: no crossover).
    phase_margin_deg, gain_margin_db, delay_margin : float or None
        As in the verdict (``None`` = unbounded or undefined).
    peak_sensitivity : float
        Largest ``|1/(1+L(jw))|``.
    peak_frequency : float
        Where it occurs (rad/s).
    peak_complementary_sensitivity : float
        Largest ``|L/(1+L)|`` (Mt).
    noise_gain : float
        Largest ``|C/(1+L)|``: control action per unit of measurement noise,
        the high-frequency limit of a biproper compensator included.
    phase_crossovers : tuple of float
        Frequencies where ``L(jw)`` is real and negative with ``|L| < 1``
        (where gain margins are read), ascending.
    bandwidth : float or None
        Closed-loop bandwidth: the lowest frequency at which
        ``|T(jw)| = |L/(1+L)|`` falls below ``1/sqrt(2)`` of its static value
        ``T(0)`` (``None`` when it never does on the grid).
    """

    w: np.ndarray
    loop: np.ndarray
    crossover_frequency: float | None
    phase_margin_deg: float | None
    gain_margin_db: float | None
    delay_margin: float | None
    peak_sensitivity: float
    peak_frequency: float
    phase_crossovers: tuple[float, ...]
    bandwidth: float | None
    peak_complementary_sensitivity: float = math.nan
    noise_gain: float = math.nan

    def metrics(self) -> dict[str, Any]:
        """The verdict's frequency metrics (see :func:`frequency_metrics`)."""
        return {"gain_margin_db": self.gain_margin_db, "phase_margin_deg": self.phase_margin_deg,
                "delay_margin": self.delay_margin,
                "crossover_frequency": self.crossover_frequency,
                "peak_sensitivity": self.peak_sensitivity,
                "peak_complementary_sensitivity": _finite(self.peak_complementary_sensitivity),
                "noise_gain": _finite(self.noise_gain)}


def _finite(v: float) -> float | None:
    """``None`` for an unbounded peak (a pole of the closed loop on the axis)."""
    return float(v) if math.isfinite(v) else None


def frequency_grid(plant, num_c, den_c) -> np.ndarray:
    """synth's one frequency grid for a loop: log-spaced over its corners, dense at resonances.

    From a thousandth of the lowest corner (pole, zero or ``1/dead_time``) to
    a thousand times the highest, 200 points a decade (400 to 6000 points).

    A lightly damped pole or zero (damping zeta) changes |L| and its phase over
    a relative width of about 2 zeta, narrower than the base grid's step, so
    crossings there would be missed: 120 extra points span +-20 zeta around it.
    """
    mags = []
    extra = []
    for p in (trim(num_c), trim(den_c), plant.rational_num, plant.rational_den):
        p = trim(p)
        if p.size > 1:
            roots = scaled_roots(p)
            r = np.abs(roots)
            mags.extend(r[r > 0].tolist())  # roots at the origin are exact zeros
            for root, m in zip(roots, r, strict=True):
                if m > 0 and root.imag > 0:
                    zeta = abs(root.real) / m
                    if zeta < 0.2:
                        width = 20.0 * max(zeta, 1e-5)
                        extra.append(np.linspace(m * max(1.0 - width, 0.5),
                                                 m * min(1.0 + width, 2.0), 120))
    if plant.dead_time > 0:
        mags.append(1.0 / plant.dead_time)
    if not mags:
        mags = [1.0]
    lo = 1e-3 * min(mags)
    hi = 1e3 * max(mags)
    decades = math.log10(hi / lo)
    n = int(min(6000, max(400, 200 * decades)))
    grid = np.geomspace(lo, hi, n)
    if extra:
        grid = np.unique(np.concatenate([grid, *extra]))
    return grid


def frequency_metrics(problem, num_c, den_c) -> dict[str, Any]:
    """Gain, phase and delay margins and the peak sensitivity, with the exact dead time.

    Returns a dict with ``gain_margin_db``, ``phase_margin_deg``,
    ``delay_margin``, ``crossover_frequency``, ``peak_sensitivity``,
    ``peak_complementary_sensitivity`` and ``noise_gain``
    (``None`` where unbounded: no phase crossover below unit gain, no gain
    crossover).  See :mod:`synth.verify.verdict` for the definitions.
    """
    return _analyse(problem.plant, num_c, den_c, details=False).metrics()


def loop_frequency(plant, num_c, den_c) -> LoopFrequency:
    """The loop's frequency response with its margins, crossovers, peak and bandwidth.

    Parameters
    ----------
    plant : synth.problem.plant.Plant
        Its delay-free part and exact dead time are used.
    num_c, den_c : array_like
        Compensator polynomials.

    Returns
    -------
    LoopFrequency
        The margins and the peak are the verdict's own numbers.
    """
    return _analyse(plant, num_c, den_c, details=True)


def _analyse(plant, num_c, den_c, details: bool) -> LoopFrequency:
    """The frequency analysis behind :func:`frequency_metrics` and :func:`loop_frequency`.

    ``details`` adds the bandwidth (refined by brentq) and keeps the curve;
    the verdict's numbers do not depend on it.
    """
    from scipy.optimize import brentq

    nc, dc = trim(num_c), trim(den_c)

    lnum = np.polymul(nc, plant.rational_num)
    lden = np.polymul(dc, plant.rational_den)
    delay = plant.dead_time

    ln, ld = lnum.tolist(), lden.tolist()

    def loop_grid(w):
        s = 1j * w
        val = np.polyval(lnum, s) / np.polyval(lden, s)
        return val * np.exp(-s * delay) if delay else val

    rational = _scalar_ratio(ln, ld)

    def loop(w):
        """L(jw) at one frequency (exact dead time)."""
        val = rational(w)
        return val * cmath.exp(-1j * w * delay) if delay else val

    w = frequency_grid(plant, nc, dc)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        L = loop_grid(w)
    finite = np.isfinite(L)
    lw = np.log(w)

    # gain crossovers: |L| = 1
    pms, dms, wcs = gain_crossovers(w, L, loop)
    # phase crossovers: L real negative
    gms, wps = [], []
    im = L.imag
    pc = np.flatnonzero(finite[:-1] & finite[1:] & (np.sign(im[:-1]) != np.sign(im[1:]))
                        & (L.real[:-1] < 0) & (np.abs(L[:-1]) < 2.0))
    if pc.size:
        # only the crossings that can give the smallest margin need refining (a dead
        # time makes the phase wrap endlessly at high frequency, where |L| is tiny)
        near = np.abs(L[pc])
        below = near[near < 1.0]
        if below.size:
            pc = pc[near >= 0.5 * np.max(below)]

    def f_im(x):
        v = loop(math.exp(x))
        return v.imag / max(abs(v), 1e-300)

    for i in pc:
        try:
            x = brentq(f_im, lw[i], lw[i + 1], xtol=1e-12)
        except ValueError:
            continue
        val = complex(loop(math.exp(x)))
        if val.real < 0 and abs(val) < 1.0:
            gms.append(1.0 / abs(val))
            wps.append(math.exp(x))
    d0 = lden[-1]
    if d0 != 0.0:  # the Nyquist plot may start on the negative real axis
        L0 = float(lnum[-1] / d0)
        if -1.0 < L0 < 0.0:
            gms.append(-1.0 / L0)
    # peaks of |S|, |T| and |C S|, each refined around its grid maximum
    cw = np.polyval(nc, 1j * w) / np.polyval(dc, 1j * w)
    comp = _scalar_ratio(nc.tolist(), dc.tolist())

    with np.errstate(divide="ignore", invalid="ignore"):
        S = np.where(finite, 1.0 / np.abs(1.0 + L), 0.0)
        T = np.where(finite, np.abs(L / (1.0 + L)), 1.0)
        N = np.where(finite, np.abs(cw / (1.0 + L)), 0.0)
    ms, w_peak = refined_peak(w, S, lambda x: 1.0 / abs(1.0 + loop(x)))
    mt, _ = refined_peak(w, T, lambda x: abs(loop(x) / (1.0 + loop(x))))
    noise, _ = refined_peak(w, N, lambda x: abs(comp(x) / (1.0 + loop(x))))
    # the low-frequency end: T(0) and C(0)/(1 + L(0)) from the constant coefficients
    char0 = float(lden[-1] + lnum[-1])
    if char0 != 0.0:
        mt = max(mt, abs(float(lnum[-1]) / char0))
        noise = max(noise, abs(float(nc[-1] * plant.rational_den[-1]) / char0))
    # the high-frequency end: a biproper loop tends to L_inf (times exp(-jwT) with a dead
    # time, whose phase then sweeps every angle, so the peaks take their worst over it)
    c_inf = nc[0] / dc[0] if nc.size == dc.size else 0.0
    g_inf = (plant.rational_num[0] / plant.rational_den[0]
             if plant.rational_num.size == plant.rational_den.size else 0.0)
    l_inf = c_inf * g_inf
    if l_inf != 0.0 or c_inf != 0.0:
        if delay:
            den_inf = 1.0 - abs(l_inf) if abs(l_inf) < 1.0 else 0.0
        else:
            den_inf = abs(1.0 + l_inf)
        with np.errstate(divide="ignore"):
            tail = (1.0 / den_inf if den_inf > 0 else math.inf,
                    abs(l_inf) / den_inf if den_inf > 0 else math.inf,
                    abs(c_inf) / den_inf if den_inf > 0 else math.inf)
        if l_inf != 0.0 and tail[0] > ms:
            ms, w_peak = tail[0], float(w[-1])
        if l_inf != 0.0:
            mt = max(mt, tail[1])
        noise = max(noise, tail[2])
    bandwidth = _bandwidth(L, w, lw, loop, brentq, lnum, lden) if details else None
    return LoopFrequency(
        w=w, loop=L, crossover_frequency=wcs[int(np.argmin(pms))] if pms else None,
        phase_margin_deg=min(pms) if pms else None,
        gain_margin_db=20.0 * math.log10(min(gms)) if gms else None,
        delay_margin=min(dms) if dms else None, peak_sensitivity=ms, peak_frequency=w_peak,
        phase_crossovers=tuple(sorted(wps)), bandwidth=bandwidth,
        peak_complementary_sensitivity=mt, noise_gain=noise)


def _scalar_ratio(num: list, den: list):
    """``w -> num(jw) / den(jw)`` by Horner in Python complex arithmetic (fast for scalars)."""

    def at(w):
        s = complex(0.0, w)
        a = 0j
        for c in num:
            a = a * s + c
        b = 0j
        for c in den:
            b = b * s + c
        return a / b if b != 0 else complex(math.inf, 0.0)

    return at


def gain_crossovers(w, L, loop) -> tuple[list[float], list[float], list[float]]:
    """Every gain crossover of a loop on a grid: phase margins, delay margins, frequencies.

    Sign changes of ``log |L|`` between grid points, each refined by
    :func:`scipy.optimize.brentq` in ``log w``.  The phase margin at a crossover is
    the angular distance of ``L`` from -1 (0 to 180 deg); the delay margin the
    clockwise rotation onto -1 over the frequency.

    Parameters
    ----------
    w : ndarray
        Ascending frequencies (rad/s), > 0.
    L : ndarray of complex
        The loop on ``w`` (non-finite at a pole).
    loop : callable
        ``loop(w) -> complex`` at one frequency.

    Returns
    -------
    (list, list, list)
        Phase margins (deg), delay margins (s) and crossover frequencies (rad/s).
    """
    from scipy.optimize import brentq

    finite = np.isfinite(L)
    lw = np.log(w)
    with np.errstate(divide="ignore", invalid="ignore"):
        mag = np.log(np.abs(L))
    pms, dms, wcs = [], [], []
    sc = np.flatnonzero(finite[:-1] & finite[1:] & (np.sign(mag[:-1]) != np.sign(mag[1:])))
    for i in sc:
        try:
            x = brentq(lambda v: math.log(abs(loop(math.exp(v)))), lw[i], lw[i + 1], xtol=1e-12)
        except ValueError:
            continue
        wc = math.exp(x)
        lag = (float(np.angle(loop(wc))) + math.pi) % (2 * math.pi)  # clockwise onto -1
        pms.append(math.degrees(min(lag, 2 * math.pi - lag)))
        dms.append(lag / wc)
        wcs.append(wc)
    return pms, dms, wcs


def refined_peak(w, values, fun) -> tuple[float, float]:
    """The largest of ``values`` on the grid ``w``, refined between its neighbours.

    :func:`scipy.optimize.minimize_scalar` (bounded, in ``log w``) on ``fun(w)``;
    non-finite values count as 0.  Returns ``(peak, frequency)``.
    """
    from scipy.optimize import minimize_scalar

    v = np.where(np.isfinite(values), values, 0.0)
    i = int(np.argmax(v))
    best, where = float(v[i]), float(w[i])
    if 0 < i < w.size - 1:
        lw = np.log(w)
        res = minimize_scalar(lambda x: -fun(math.exp(x)), bounds=(lw[i - 1], lw[i + 1]),
                              method="bounded", options={"xatol": 1e-10})
        if res.success and np.isfinite(res.fun) and float(-res.fun) > best:
            best, where = float(-res.fun), math.exp(float(res.x))
    return best, where


def _bandwidth(L, w, lw, loop, brentq, lnum, lden) -> float | None:
    """First frequency where ``|T| = |L/(1+L)|`` falls below ``1/sqrt(2)`` of its static value.

    The static value ``T(0)`` comes from the loop's constant coefficients (1
    with an integrator in the loop); where it is zero or infinite, the value
    at the grid's low end stands in.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        tm = np.abs(L / (1.0 + L))
    n0, d0 = float(lnum[-1]), float(lden[-1])
    t0 = abs(n0 / (n0 + d0)) if n0 + d0 != 0.0 else math.inf
    if not (math.isfinite(t0) and t0 > 0):
        t0 = float(tm[0])
    if not (math.isfinite(t0) and t0 > 0):
        return None
    ref = t0 / math.sqrt(2.0)
    below = np.flatnonzero(np.isfinite(tm) & (tm < ref))
    if not below.size or below[0] == 0:
        return None
    i = int(below[0]) - 1

    def excess(x):
        v = loop(math.exp(x))
        return abs(v / (1.0 + v)) - ref

    try:
        return math.exp(brentq(excess, lw[i], lw[i + 1], xtol=1e-12))
    except ValueError:
        return float(w[i + 1])
