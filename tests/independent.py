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


def _check_step(req, t, y, u, yf, *, overshoot_slack, time_slack, effort_slack):
    """Overshoot, settling time and peak effort of a step response against the limits."""
    if req.max_overshoot_percent is not None:
        os_ = max(0.0, (np.max(y) - yf) / abs(yf) * 100.0)
        assert os_ <= req.max_overshoot_percent + overshoot_slack, f"overshoot {os_}"
    if req.max_settling_time is not None:
        band = req.settling_band_percent / 100.0 * abs(yf)
        out = np.flatnonzero(np.abs(y - yf) > band)
        ts = t[out[-1] + 1] if out.size else 0.0
        assert ts <= req.max_settling_time * 1.01 + time_slack, f"settling {ts}"
    if req.max_control_effort is not None:
        assert np.max(np.abs(u)) <= req.max_control_effort * effort_slack


def _check_margins(req, L, nyquist_end=False):
    """Phase and gain margins of a loop sampled densely on a frequency grid against the limits
    (``nyquist_end``: the grid ends at the Nyquist frequency, where a sampled loop is real)."""
    if req.min_phase_margin_deg is not None:
        cross = np.flatnonzero(np.diff(np.sign(np.abs(L) - 1.0)))
        pm = min(180.0 - abs(np.degrees(np.angle(L[i]))) for i in cross)
        assert pm >= req.min_phase_margin_deg - 0.1
    if req.min_gain_margin_db is not None:
        pc = np.flatnonzero((np.diff(np.sign(L.imag)) != 0) & (L.real[:-1] < 0))
        mags = [abs(L[i]) for i in pc if abs(L[i]) < 1.0]
        if nyquist_end and L[-1].real < 0:
            mags.append(abs(L[-1]))
        if mags:
            assert -20 * np.log10(max(mags)) >= req.min_gain_margin_db - 0.05


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
    if problem.sampling is not None:
        # a [sampling] run is judged on its sampled-data loop
        return independent_sampled_check(problem, design)
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
    _check_step(req, t, y, u, yf, overshoot_slack=0.2, time_slack=2 * (t[1] - t[0]),
                effort_slack=1.01)
    if req.max_steady_state_error is not None:
        assert abs(1.0 - yf) <= req.max_steady_state_error + 1e-9
    # frequency domain with the exact delay: scipy.signal.freqresp of the rational part
    w = np.geomspace(1e-4, 1e4, 200001)
    _, lr = signal.freqresp(signal.TransferFunction(np.polymul(nc, problem.plant.rational_num),
                                                    np.polymul(dc, problem.plant.rational_den)), w)
    L = lr * np.exp(-1j * w * problem.plant.dead_time)
    ms = float(np.max(1.0 / np.abs(1.0 + L)))
    assert design["metrics"]["peak_sensitivity"] == pytest.approx(ms, rel=2e-3)
    if req.max_peak_sensitivity is not None:
        assert ms <= req.max_peak_sensitivity * 1.002
    _check_margins(req, L)
    if req.plant_gain_range is not None:
        for k in np.linspace(*req.plant_gain_range, 9):
            assert np.all(np.roots(np.polyadd(np.polymul(dc, gden), k * np.polymul(nc, gnum))).real < 0)




# ----------------------------------------------------------------------------------------------
# the sampled-data loop, without synth
# ----------------------------------------------------------------------------------------------


def held_plant_matrices(plant, period, compute_delay):
    """The plant behind a hold with its dead time and computation delay, by scipy pieces.

    ``x[k+1] = Phi x + G_old u[k-d-1] + G_new u[k-d]``, ``y[k] = C x``: a fractional delay
    ``phi`` splits the period into ``T - phi`` and ``phi``, each discretised by
    scipy.signal.cont2discrete (zoh): ``G_new = Gamma(T - phi)``,
    ``G_old = Phi(T - phi) Gamma(phi)`` (the modified z-transform; Franklin, Powell and Workman,
    Digital Control of Dynamic Systems, ch. 4, from memory).  Strictly proper plants only.
    """
    A, B, C, D = signal.tf2ss(plant.rational_num, plant.rational_den)
    assert np.all(D == 0), "the independent check takes strictly proper plants"
    theta = plant.dead_time + compute_delay
    d = int(math.floor(theta / period + 1e-9))
    phi = theta - d * period
    if phi <= 1e-9 * period:
        Phi, G, *_ = signal.cont2discrete((A, B, C, D), period, method="zoh")
        return Phi, np.zeros(A.shape[0]), G[:, 0], C[0], d, 0.0
    Pa, Ga, *_ = signal.cont2discrete((A, B, C, D), period - phi, method="zoh")
    Pb, Gb, *_ = signal.cont2discrete((A, B, C, D), phi, method="zoh")
    return Pa @ Pb, (Pa @ Gb)[:, 0], Ga[:, 0], C[0], d, phi


def sampled_closed_loop(plant, period, compute_delay, cnum, cden, factor=1.0):
    """The sampled loop's matrix from sample to sample: ``[x, u[k-1].., controller]``.

    C(z) = cnum/cden (descending powers of z) by scipy.signal.tf2ss; u[k] = C(z) (-y[k]).
    """
    Phi, Go, Gn, C, d, phi = held_plant_matrices(plant, period, compute_delay)
    Ac, Bc, Cc, Dc = signal.tf2ss(cnum, cden)
    n, nc = Phi.shape[0], Ac.shape[0]
    L = d + 1 if phi > 0 else d
    N = n + L + nc
    y = np.zeros(N)
    y[:n] = factor * C
    u = np.zeros(N)
    u[n + L:] = Cc[0]
    u -= Dc[0, 0] * y
    M = np.zeros((N, N))
    M[:n, :n] = Phi
    if phi > 0:
        M[:n, n + d] += Go
    if d >= 1:
        M[:n, n + d - 1] += Gn
    else:
        M[:n] += np.outer(Gn, u)
    if L:
        M[n] = u
        for i in range(1, L):
            M[n + i, n + i - 1] = 1.0
    M[n + L:, n + L:] = Ac
    M[n + L:] -= np.outer(Bc[:, 0], y)
    return M


def sampled_step(plant, period, compute_delay, cnum, cden, t_end, sub=400):
    """The sampled loop's unit-step response between samples, by scipy pieces.

    The plant by scipy.signal.cont2discrete at ``T / sub``, C(z) by scipy.signal.lfilter one
    sample at a time, the dead time plus computation delay as a whole number of fine steps.

    Returns ``(t, y, u)``: fine times and outputs, and the controller's outputs per sample.
    """
    h = period / sub
    A, B, C, D = signal.tf2ss(plant.rational_num, plant.rational_den)
    Ad, Bd, Cd, _, _ = signal.cont2discrete((A, B, C, D), h, method="zoh")
    delay = plant.dead_time + compute_delay
    lag = int(round(delay / h))
    assert abs(lag * h - delay) <= 1e-9 * period, "the delay must be a whole number of fine steps"
    samples = int(math.ceil(t_end / period))
    x = np.zeros(Ad.shape[0])
    zi = np.zeros(max(len(cnum), len(cden)) - 1)
    held = np.zeros(samples * sub + lag + 1)
    y = np.zeros(samples * sub)
    u = np.zeros(samples)
    for k in range(samples):
        out, zi = signal.lfilter(cnum, cden, [1.0 - float(Cd[0] @ x)], zi=zi)
        u[k] = out[0]
        held[k * sub + lag:(k + 1) * sub + lag] = u[k]
        for j in range(sub):
            y[k * sub + j] = float(Cd[0] @ x)
            x = Ad @ x + Bd[:, 0] * held[k * sub + j]
    return np.arange(samples * sub) * h, y, u


def independent_sampled_check(problem, design):
    """Re-verify a feasible design of a [sampling] run without synth's verifier.

    Its C(z) is the document's ``discrete`` numerator and denominator; the loop's poles are
    eigenvalues (numpy.linalg.eigvals) of :func:`sampled_closed_loop`, its step between the
    samples :func:`sampled_step`, its margins from the loop on the unit circle, its stable
    plant-gain factors by eigenvalues across the required range.
    """
    req = problem.requirements
    sp = problem.sampling
    T, tau = sp.period, sp.compute_delay
    dz = design["discrete"]
    cn, cd = np.asarray(dz["numerator"], float), np.asarray(dz["denominator"], float)
    z = np.linalg.eigvals(sampled_closed_loop(problem.plant, T, tau, cn, cd))
    assert np.max(np.abs(z)) < 1.0, "the sampled loop must be stable (numpy.linalg.eigvals)"
    reported = np.array([complex(a, b) for a, b in dz["sampled_loop"]["poles_z"]])
    np.testing.assert_allclose(np.sort_complex(reported), np.sort_complex(z), rtol=1e-6,
                               atol=1e-9)
    horizon = 3.0 * (req.max_settling_time or 20 * T)
    t, y, u = sampled_step(problem.plant, T, tau, cn, cd, horizon)
    _check_step(req, t, y, u, float(y[-1]), overshoot_slack=0.05, time_slack=0.0,
                effort_slack=1.001)
    # the loop on the unit circle, up to the Nyquist frequency
    Phi, Go, Gn, C, d, phi = held_plant_matrices(problem.plant, T, tau)
    w = np.linspace(1e-6, 1.0, 200001) * math.pi / T
    zz = np.exp(1j * w * T)
    n = Phi.shape[0]
    X = np.linalg.solve(zz[:, None, None] * np.eye(n) - Phi, np.stack([Go, Gn], -1)[None])
    G = (X[:, :, 0] @ C) * zz ** (-(d + 1)) + (X[:, :, 1] @ C) * zz ** (-d)
    L = G * np.polyval(cn, zz) / np.polyval(cd, zz)
    _check_margins(req, L, nyquist_end=True)
    if req.plant_gain_range is not None:
        for k in np.linspace(*req.plant_gain_range, 9):
            M = sampled_closed_loop(problem.plant, T, tau, cn, cd, factor=k)
            assert np.max(np.abs(np.linalg.eigvals(M))) < 1.0
