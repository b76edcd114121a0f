"""Batched estimates of a loop's metrics: many compensators, or many plant models, at once.

The search scores thousands of candidates and the robust verifier screens
dozens of plant models per design; both need every metric of a loop cheaply
and vectorised.  :func:`estimate_loops` computes, for a batch of loops (one
compensator and one plant model per row, or one plant shared by every row):

* closed-loop poles by batched companion eigenvalues, stability, the summed
  unstable real parts;
* the unit-step response of output and control from the modal expansion
  ``y(t) = T(0) + sum_i Res_i exp(p_i t)`` on a time grid scaled to each
  row's slowest pole (engine form: a dead time by its Pade form): overshoot,
  settling time, rise time, steady-state error, peak control effort;
* the response to a unit load step at the plant input (``r = 0``,
  ``Y/D = num_G den_C / char``) by the same expansion: load IAE (unbounded,
  NaN, when it does not return to 0) and load peak;
* ``L(jw)`` on a given frequency grid with the exact dead time: peak
  sensitivity, peak complementary sensitivity, noise gain ``max |C/(1+L)|``
  (with a biproper compensator's high-frequency gain), phase margin, gain
  margin, and the plant-gain factors at the phase crossovers (the estimated
  stable plant-gain range);
* optionally, at test factors of a plant-gain range, whether the
  eigenvalue-free kernel finds the loop stable.

These are estimates (coarse grids, no refinement at crossings, no exact
delay in the time domain); the verifier's :func:`synth.verify.verdict.evaluate_model`
judges.  :func:`worst_over_models` takes the worst of each estimate over
several plant models, by each metric's ``better`` direction in the catalogue.

References
----------
.. [1] K. J. Astrom and R. M. Murray, *Feedback Systems*, Princeton University
   Press, 2008, ch. 5-6 (modal solution of linear systems) and ch. 9-10
   (Nyquist criterion, margins, sensitivity peak).
.. [2] G. H. Golub and C. F. Van Loan, *Matrix Computations*, 4th ed., Johns
   Hopkins, 2013, section 7.4 (roots as companion-matrix eigenvalues).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.numerics.poly import batch_polymul, left_pad
from synth.problem.catalogue import METRICS

__all__ = ["ESTIMATED", "REFERENCE", "Modal", "PlantModel", "estimate_loops", "modal_response",
           "step_figures", "worst_over_models"]

#: The scalar metrics estimated (metric keys of the design JSON).
ESTIMATED = ("overshoot_percent", "settling_time", "rise_time", "steady_state_error",
             "peak_control_effort", "peak_sensitivity", "phase_margin_deg", "gain_margin_db",
             "min_damping_ratio", "load_iae", "load_peak", "peak_complementary_sensitivity",
             "noise_gain")

#: The metrics of the reference step (what reference shaping changes).
REFERENCE = ("overshoot_percent", "settling_time", "rise_time", "steady_state_error",
             "peak_control_effort", "final_value")


@dataclass(frozen=True, eq=False)
class PlantModel:
    """A plant model prepared for :func:`estimate_loops` on one frequency grid.

    Attributes
    ----------
    num, den : ndarray
        Engine form (a dead time by its Pade form), 1-D, or 2-D with one
        model per row (all of one shape).
    g_jw : ndarray of complex
        ``G(jw)`` with the exact dead time on the grid: (W,) or (M, W).
    """

    num: np.ndarray
    den: np.ndarray
    g_jw: np.ndarray

    @classmethod
    def prepare(cls, plants, w) -> PlantModel:
        """One plant, or a list of plants of one shape stacked row by row, on the grid ``w``."""
        if not isinstance(plants, (list, tuple)):
            return cls(plants.num, plants.den, plants.evaluate(1j * np.asarray(w)))
        num = np.array([p.num for p in plants])
        den = np.array([p.den for p in plants])
        g = np.array([p.evaluate(1j * np.asarray(w)) for p in plants])
        return cls(num, den, g)


def _polyval_rows(P, Z):
    """Evaluate row i of the polynomial batch P at every entry of row i of Z."""
    out = np.zeros(Z.shape, dtype=complex)
    for j in range(P.shape[1]):
        out = out * Z + P[:, j:j + 1]
    return out


def _polyval_grid(P, s):
    """Evaluate every row of P at the common points s: shape (B, len(s))."""
    out = np.zeros((P.shape[0], s.size), dtype=complex)
    for j in range(P.shape[1]):
        out = out * s[None, :] + P[:, j:j + 1]
    return out


def _first_crossing(t, z, level):
    """Per row: first time z reaches level (linear interpolation), inf when never."""
    hit = z >= level
    any_hit = hit.any(axis=1)
    i = np.argmax(hit, axis=1)
    rows = np.arange(z.shape[0])
    im1 = np.maximum(i - 1, 0)
    a, b = z[rows, im1], z[rows, i]
    ta, tb = t[rows, im1], t[rows, i]
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(b > a, (level - a) / (b - a), 0.0)
    tt = np.where(i == 0, t[rows, 0], ta + np.clip(frac, 0, 1) * (tb - ta))
    return np.where(any_hit, tt, np.inf)


def step_figures(t, y, u, yss, band):
    """Overshoot, settling time, rise time, steady-state error, peak effort and final value per row."""
    scale = np.maximum(np.abs(yss), 1e-9)
    sgn = np.where(yss >= 0, 1.0, -1.0)
    os_ = np.maximum(0.0, np.max(sgn[:, None] * (y - yss[:, None]), axis=1)) / scale * 100
    outside = np.abs(y - yss[:, None]) > band * scale[:, None]
    last = (t.shape[1] - 1) - np.argmax(outside[:, ::-1], axis=1)
    rows = np.arange(y.shape[0])
    ts = np.where(outside.any(axis=1), t[rows, np.minimum(last + 1, t.shape[1] - 1)], 0.0)
    z = sgn[:, None] * y / scale[:, None]
    with np.errstate(invalid="ignore"):  # inf - inf: never rises
        tr = _first_crossing(t, z, 0.9) - _first_crossing(t, z, 0.1)
    tr = np.where(np.isfinite(tr), tr, np.inf)
    return {"overshoot_percent": os_, "settling_time": ts, "rise_time": tr,
            "steady_state_error": np.abs(1.0 - yss),
            "peak_control_effort": np.max(np.abs(u), axis=1), "final_value": yss}


def _trapezoid_abs(t, y):
    """Per row: integral of |y| over the row's time grid (trapezoid, sign changes split)."""
    y0, y1 = y[:, :-1], y[:, 1:]
    a0, a1 = np.abs(y0), np.abs(y1)
    cross = y0 * y1 < 0
    with np.errstate(invalid="ignore", divide="ignore"):
        seg = np.where(cross, (y0 * y0 + y1 * y1) / np.where(cross, a0 + a1, 1.0), a0 + a1)
    return np.sum(0.5 * np.diff(t, axis=1) * seg, axis=1)


@dataclass(frozen=True, eq=False)
class Modal:
    """The modal data of the stable rows of :func:`estimate_loops`, for further responses.

    ``rows`` are the indices of the stable rows; ``r`` their closed-loop
    poles, ``denom`` ``p char'(p)`` at them, ``E`` the modes ``exp(p t)`` on
    the rows' time grids ``t``, ``c0`` ``char(0)``; ``gnum``/``gden`` the
    plant rows (or the shared plant); ``num_c``/``den_c`` the compensators.
    """

    rows: np.ndarray
    r: np.ndarray
    denom: np.ndarray
    E: np.ndarray
    t: np.ndarray
    c0: np.ndarray
    gnum: np.ndarray
    gden: np.ndarray
    num_c: np.ndarray
    den_c: np.ndarray


def modal_response(modal: Modal, num) -> tuple[np.ndarray, np.ndarray]:
    """``(y(t), y(inf))`` of ``num(s) / char(s)`` driven by a unit step, for the stable rows.

    ``num`` is a batch of numerators (one per stable row), descending powers.
    """
    width = max(np.shape(num)[1], modal.r.shape[1] + 1)
    n = left_pad(np.atleast_2d(num), width)
    with np.errstate(all="ignore"):
        yss = n[:, -1] / modal.c0
        y = yss[:, None] + np.real(np.einsum("bn,bnt->bt", _polyval_rows(n, modal.r)
                                             / modal.denom, modal.E))
    return y, yss


def estimate_loops(num_c, den_c, model: PlantModel, w, tau, band: float,
                   ts_floor: float | None = None, range_factors=None,
                   keep_modal: bool = False) -> dict[str, np.ndarray]:
    """Estimated metrics of a batch of loops (see the module docstring).

    Parameters
    ----------
    num_c, den_c : ndarray, shape (B, k)
        Compensators, one per row (``K`` times the monic numerator; monic denominator).
    model : PlantModel
        The plant: shared by every row, or one per row.
    w : ndarray
        Frequency grid (rad/s) of ``model.g_jw``.
    tau : ndarray
        Normalised time grid in [0, 1]; each row's horizon scales it.
    band : float
        Settling band as a fraction of the final value.
    ts_floor : float, optional
        The settling-time limit: the horizon covers at least 1.3 times it.
    range_factors : array_like, optional
        Plant-gain factors at which ``range_fails`` counts the eigenvalue-free
        kernel's failures (a fraction in [0, 1]).
    keep_modal : bool
        Also return ``modal`` (:class:`Modal`), so a caller can compute further
        responses of the same loops (a shaped reference step) cheaply.

    Returns
    -------
    dict of ndarray
        ``stable``, ``unstable_part`` (summed positive real parts), ``roots``
        (B, n), ``ok`` (finite responses), ``final_value``, every key of
        :data:`ESTIMATED`, ``stable_plant_gain_range`` (B, 2) and
        ``range_fails``; metrics are NaN on unstable rows.
    """
    from synth.locus.core import roots_batch
    from synth.numerics.screening import in_region_batch
    from synth.problem.region import Region

    num_c = np.atleast_2d(np.asarray(num_c, dtype=float))
    den_c = np.atleast_2d(np.asarray(den_c, dtype=float))
    B = num_c.shape[0]
    num_l = batch_polymul(num_c, model.num)
    den_l = batch_polymul(den_c, model.den)
    width = max(num_l.shape[1], den_l.shape[1])
    num_l, den_l = left_pad(num_l, width), left_pad(den_l, width)
    char = den_l + num_l
    roots = roots_batch(char)
    finite = np.all(np.isfinite(roots), axis=1)
    re = np.where(np.isfinite(roots), roots.real, np.inf)
    stable = finite & np.all(re < 0, axis=1) & in_region_batch(char, Region())
    unstable_part = np.sum(np.maximum(np.nan_to_num(re, posinf=1e6), 0.0), axis=1)

    out: dict[str, np.ndarray] = {k: np.full(B, np.nan) for k in ESTIMATED}
    out["stable_plant_gain_range"] = np.full((B, 2), np.nan)
    out["final_value"] = np.full(B, np.nan)
    out["ok"] = np.zeros(B, bool)
    out["range_fails"] = np.zeros(B)
    idx = np.flatnonzero(stable)
    if idx.size:
        r = roots[idx]
        nl, dl, ch = num_l[idx], den_l[idx], char[idx]
        nc = num_c[idx]
        gden = model.den if np.ndim(model.den) == 1 else model.den[idx]
        g_jw = model.g_jw[None, :] if np.ndim(model.g_jw) == 1 else model.g_jw[idx]
        mag = np.abs(r)
        zeta = np.min(-r.real / np.maximum(mag, 1e-300), axis=1, initial=1.0)
        # modal step response of y and u
        n = ch.shape[1] - 1
        powers = np.arange(n, 0, -1)
        dch = ch[:, :-1] * powers
        c0 = ch[:, -1]
        gnum = model.num if np.ndim(model.num) == 1 else model.num[idx]
        dc = den_c[idx]
        nu = left_pad(batch_polymul(nc, gden), ch.shape[1])
        with np.errstate(all="ignore"):
            denom = r * _polyval_rows(dch, r)
            sig = np.min(-r.real, axis=1, initial=np.inf)  # a static loop has no poles
            horizon = np.where(np.isfinite(sig), (math.log(1.0 / band) + 6.0) / sig, 1.0)
            if ts_floor is not None:
                horizon = np.maximum(horizon, 1.3 * ts_floor)
            t = horizon[:, None] * np.asarray(tau)[None, :]
            E = np.exp(r[:, :, None] * t[:, None, :])
        modal = Modal(rows=idx, r=r, denom=denom, E=E, t=t, c0=c0, gnum=gnum, gden=gden,
                      num_c=nc, den_c=dc)
        y, yss = modal_response(modal, nl)
        u, _ = modal_response(modal, nu)
        # the load step at the plant input (r = 0): Y/D = num_G den_C / char
        yd, yd_ss = modal_response(modal, batch_polymul(dc, gnum))
        ok = (np.all(np.isfinite(y), axis=1) & np.all(np.isfinite(u), axis=1)
              & np.all(np.isfinite(yd), axis=1))
        fig = step_figures(t, y, u, yss, band)
        load_iae = np.where(yd_ss == 0.0, _trapezoid_abs(t, yd), np.nan)
        load_peak = np.max(np.abs(yd), axis=1)
        # frequency response with the exact delay
        s = 1j * np.asarray(w)
        with np.errstate(all="ignore"):
            C = _polyval_grid(nc, s) / _polyval_grid(dc, s)
            L = C * g_jw
            S = 1.0 / np.abs(1.0 + L)
            ms = np.max(np.where(np.isfinite(S), S, 0.0), axis=1)
            mt = np.max(np.where(np.isfinite(S), np.abs(L) * S, 1.0), axis=1)
            noise = np.max(np.where(np.isfinite(S), np.abs(C) * S, 0.0), axis=1)
            # the high-frequency gain of a biproper compensator is noise too
            c_inf = np.where(dc[:, 0] != 0.0, nc[:, 0] / np.where(dc[:, 0] != 0, dc[:, 0], 1),
                             0.0)
            noise = np.maximum(noise, np.abs(c_inf))
            lm = np.log(np.abs(L))
            dist = np.degrees(np.abs(np.angle(-L)))  # angular distance from -1
            cross = np.sign(lm[:, :-1]) != np.sign(lm[:, 1:])
            frac = np.clip(lm[:, :-1] / (lm[:, :-1] - lm[:, 1:]), 0, 1)
            pm_seg = dist[:, :-1] + frac * (dist[:, 1:] - dist[:, :-1])
            pm = np.min(np.where(cross, pm_seg, np.inf), axis=1)
            im = L.imag
            pcross = (np.sign(im[:, :-1]) != np.sign(im[:, 1:])) & (L.real[:, :-1] < 0) \
                & (L.real[:, 1:] < 0)
            fi = np.clip(im[:, :-1] / (im[:, :-1] - im[:, 1:]), 0, 1)
            lmag = np.exp(lm[:, :-1] + fi * (lm[:, 1:] - lm[:, :-1]))
            inv = 1.0 / lmag
            hi = np.min(np.where(pcross & (lmag < 1), inv, np.inf), axis=1)
            lo = np.max(np.where(pcross & (lmag > 1), inv, 0.0), axis=1)
            gm_db = 20 * np.log10(hi)
        est = {**fig, "peak_sensitivity": ms, "phase_margin_deg": pm, "gain_margin_db": gm_db,
               "min_damping_ratio": zeta, "load_iae": load_iae, "load_peak": load_peak,
               "peak_complementary_sensitivity": mt, "noise_gain": noise}
        for key in ESTIMATED:
            out[key][idx] = est[key]
        out["stable_plant_gain_range"][idx] = np.column_stack([lo, hi])
        out["final_value"][idx] = yss
        out["ok"][idx] = ok
        if keep_modal:
            out["modal"] = modal
        if range_factors is not None and len(range_factors):
            # the estimated interval comes from crossings on a coarse grid: also count the
            # test factors at which the eigenvalue-free kernel fails
            fails = np.zeros(idx.size)
            for k in range_factors:
                fails += ~in_region_batch(dl + k * nl, Region())
            out["range_fails"][idx] = fails / len(range_factors)
    out["stable"] = stable
    out["unstable_part"] = unstable_part
    out["roots"] = roots
    return out


def worst_over_models(estimates: list[dict[str, np.ndarray]]) -> dict[str, np.ndarray]:
    """The worst of each estimate over plant models (one dict per model, rows aligned).

    A row is stable when it is stable for every model; each metric takes its
    worst value by the catalogue's ``better`` direction (``METRICS``); the
    stable plant-gain range is the intersection; the final value is the one
    farthest from 1; the unstable parts add up.  Keys the catalogue does not
    order, ``roots`` and ``modal``, come from the first model (the nominal plant).
    """
    if len(estimates) == 1:
        return dict(estimates[0])
    first = estimates[0]
    out = dict(first)
    stack = {k: np.stack([e[k] for e in estimates]) for k in first
             if k not in ("roots", "modal")}
    out["stable"] = np.all(stack["stable"], axis=0)
    out["ok"] = np.all(stack["ok"], axis=0)
    out["unstable_part"] = np.sum(stack["unstable_part"], axis=0)
    out["range_fails"] = np.max(stack["range_fails"], axis=0)
    fv = stack["final_value"]
    pick = np.argmax(np.nan_to_num(np.abs(1.0 - fv), nan=np.inf), axis=0)
    out["final_value"] = fv[pick, np.arange(fv.shape[1])]
    rng = stack["stable_plant_gain_range"]
    out["stable_plant_gain_range"] = np.column_stack([np.max(rng[..., 0], axis=0),
                                                      np.min(rng[..., 1], axis=0)])
    for key, values in stack.items():
        metric = METRICS.get(key)
        if metric is None or metric.better not in ("lower", "higher"):
            continue
        out[key] = np.max(values, axis=0) if metric.better == "lower" else np.min(values, axis=0)
    return out
