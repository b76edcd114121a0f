"""Re-verify a design without synth: numpy.roots, scipy.signal.step, scipy.signal.freqresp.

Shared by the design and strategy tests.  Nothing here calls synth's own
verifier: the closed-loop poles come from numpy.roots of the unreduced
characteristic polynomial, the step responses of output and control effort
from scipy.signal.step (a dead time by scipy.interpolate.pade's [10/10]
form), and the margins and peak sensitivity from scipy.signal.freqresp with
the exact delay.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal
from scipy.interpolate import pade as scipy_pade


def delay_polys(plant, order=10):
    """Plant polynomials with scipy.interpolate.pade's [order/order] form of the delay."""
    num, den = plant.rational_num, plant.rational_den
    if plant.dead_time:
        c = [(-plant.dead_time) ** k / math.factorial(k) for k in range(2 * order + 1)]
        pn, pd = scipy_pade(c, order)
        num, den = np.polymul(pn.coeffs, num), np.polymul(pd.coeffs, den)
    return num, den


def reference_path(nc, dc, shaping):
    """``(nr, extra)`` with ``C_r = nr / (extra dc)``: the reference path the design JSON describes.

    Set-point weights (Astrom and Hagglund, Advanced PID Control, 2006, sec. 3.4):
    the partial fractions of C by scipy.signal.residue give ``ki`` (the residue at
    s = 0), ``kp`` (what is left, at s = 0) and the derivative part ``D = C - ki/s - kp``;
    ``C_r = ki/s + b kp + c D``, rebuilt with scipy.signal.invres.  A prefilter F:
    ``C_r = F C``.
    """
    if not shaping:
        return np.asarray(nc, float), np.ones(1)
    if "setpoint_weights" in shaping:
        b, c = shaping["setpoint_weights"]["b"], shaping["setpoint_weights"]["c"]
        r, p, k = signal.residue(nc, dc)
        at0 = np.abs(p) == 0
        ki = float(np.real(np.sum(r[at0])))
        rest_r, rest_p = r[~at0], p[~at0]
        direct = float(k[0]) if len(k) else 0.0
        kp = direct + float(np.real(np.sum(rest_r / (0.0 - rest_p))))
        # C_r = ki/s + b kp + c (direct - kp + sum rest_r / (s - rest_p))
        res = np.concatenate([[ki] if np.any(at0) else [], c * rest_r])
        poles = np.concatenate([[0.0] if np.any(at0) else [], rest_p])
        kk = [b * kp + c * (direct - kp)]
        nr, dr = signal.invres(res, poles, kk)
        nr, dr = np.real(nr), np.real(dr)
        # same poles as C: over dc itself
        np.testing.assert_allclose(dr / dr[0], np.asarray(dc, float) / dc[0], rtol=1e-9, atol=0)
        return nr * (dc[0] / dr[0]), np.ones(1)
    return np.polymul(shaping["numerator"], nc), np.asarray(shaping["denominator"], float)


def independent_check(problem, design):
    """Re-verify one feasible design without synth: numpy.roots, scipy.signal."""
    req = problem.requirements
    c = design["compensator"]
    nc, dc = np.asarray(c["numerator"]), np.asarray(c["denominator"])
    # closed-loop poles of the unreduced polynomial (engine form, as the contract says)
    gnum, gden = problem.plant.num, problem.plant.den
    char = np.polyadd(np.polymul(dc, gden), np.polymul(nc, gnum))
    poles = np.roots(char)
    assert np.all(poles.real < 0), "closed loop must be stable (numpy.roots)"
    reported = np.array([complex(a, b) for a, b in design["closed_loop_poles"]])
    np.testing.assert_allclose(np.sort_complex(reported), np.sort_complex(poles),
                               rtol=1e-6, atol=1e-9)
    if req.min_damping_ratio is not None:
        assert np.min(-poles.real / np.abs(poles)) >= req.min_damping_ratio - 1e-9
    # step response of output and control effort (scipy.signal.step); the delay by a
    # [10/10] Pade form, close to exact over the simulated horizon
    pnum, pden = delay_polys(problem.plant)
    num_l, den_l = np.polymul(nc, pnum), np.polymul(dc, pden)
    cl = np.polyadd(den_l, num_l)
    sigma = float(np.min(-np.roots(cl).real))
    # the reference path C_r = nr / dr (set-point weights or a prefilter, as the JSON says):
    # Y/R = G C_r / (1 + G C) = pnum nr dc / (dr cl), U/R = nr pden dc / (dr cl)
    nr, dr = reference_path(nc, dc, design.get("reference_filter"))
    ry_num, ry_den = np.polymul(pnum, nr), np.polymul(dr, cl)
    ru_num = np.polymul(pden, nr)
    slow = np.roots(dr) if np.asarray(dr).size > 1 else np.zeros(0)
    if slow.size:
        sigma = min(sigma, float(np.min(-slow.real)))
    t = np.linspace(0.0, min(40.0 / sigma, 2000.0), 40001)
    _, y = signal.step(signal.TransferFunction(ry_num, ry_den), T=t)
    _, u = signal.step(signal.TransferFunction(ru_num, ry_den), T=t)
    yf = np.polyval(ry_num, 0.0) / np.polyval(ry_den, 0.0)
    dt = t[1] - t[0]
    if req.max_overshoot_percent is not None:
        os_ = max(0.0, (np.max(y) - yf) / abs(yf) * 100.0)
        assert os_ <= req.max_overshoot_percent + 0.2, f"overshoot {os_}"
    if req.max_settling_time is not None:
        band = req.settling_band_percent / 100.0 * abs(yf)
        out = np.flatnonzero(np.abs(y - yf) > band)
        ts = t[out[-1] + 1] if out.size else 0.0
        assert ts <= req.max_settling_time * 1.01 + 2 * dt, f"settling {ts}"
    if req.max_steady_state_error is not None:
        assert abs(1.0 - yf) <= req.max_steady_state_error + 1e-9
    if req.max_control_effort is not None:
        assert np.max(np.abs(u)) <= req.max_control_effort * 1.01
    # frequency domain with the exact delay: scipy.signal.freqresp of the rational part
    w = np.geomspace(1e-4, 1e4, 200001)
    _, lr = signal.freqresp(signal.TransferFunction(np.polymul(nc, problem.plant.rational_num),
                                                    np.polymul(dc, problem.plant.rational_den)), w)
    L = lr * np.exp(-1j * w * problem.plant.dead_time)
    ms = float(np.max(1.0 / np.abs(1.0 + L)))
    assert design["metrics"]["peak_sensitivity"] == pytest.approx(ms, rel=2e-3)
    if req.max_peak_sensitivity is not None:
        assert ms <= req.max_peak_sensitivity * 1.002
    if req.min_phase_margin_deg is not None:
        cross = np.flatnonzero(np.diff(np.sign(np.abs(L) - 1.0)))
        pm = min(180.0 - abs(np.degrees(np.angle(L[i]))) for i in cross)
        assert pm >= req.min_phase_margin_deg - 0.1
    if req.min_gain_margin_db is not None:
        pc = np.flatnonzero((np.diff(np.sign(L.imag)) != 0) & (L.real[:-1] < 0))
        mags = [abs(L[i]) for i in pc if abs(L[i]) < 1.0]
        if mags:
            assert -20 * np.log10(max(mags)) >= req.min_gain_margin_db - 0.05
    if req.plant_gain_range is not None:
        for k in np.linspace(*req.plant_gain_range, 9):
            assert np.all(np.roots(np.polyadd(np.polymul(dc, gden), k * np.polymul(nc, gnum))).real < 0)


