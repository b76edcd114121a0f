"""The z-plane of a sampled loop: the unit circle, the requirement region mapped by ``z = exp(s T)``,
proportional gain intervals and the root locus in z.

With ``[sampling]`` the controller runs every ``T`` seconds and the loop it
closes is the plant behind a hold with its dead time and the computation delay
(:mod:`synth.verify.hybrid`).  Its closed-loop poles live in the z-plane:
stable inside the unit circle, and the s-plane requirement region
``{Re s <= -sigma} and {damping >= zeta}`` becomes, under ``z = exp(s T)``
(principal strip ``|Im s| <= pi / T``), the disc ``|z| < exp(-sigma T)``
intersected with the inside of the damping spiral
``z = exp(T w (-zeta + j sqrt(1 - zeta^2)))``.

Gain intervals are exact in the same sense as the s-plane engine's: a pole
can leave the region only through its boundary, where ``1 + K L(z) = 0`` with
``L(z)`` real; those gains are found on each boundary curve (grid, then
:func:`scipy.optimize.brentq`), and one eigenvalue test per gap between them
decides the gap (:func:`synth.verify.hybrid.factor_intervals`).

References
----------
.. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
   Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 4 and 8 (the s-to-z
   map of the design region, root locus in the z-plane), from memory.
.. [2] K. Ogata, *Discrete-Time Control Systems*, 2nd ed., Prentice Hall, 1995,
   ch. 4 (constant-damping spirals and constant-decay circles in z), from memory.
.. [3] W. R. Evans, "Control system synthesis by root locus method", Trans.
   AIEE 69, 1950 (the locus of ``1 + K L = 0`` is the same construction in z).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["ZLocus", "ZPlaneView", "ZRegion", "proportional_view", "trace_zplane"]

#: Points per boundary curve when searching it for real values of the loop.
_CURVE_POINTS = 1500


def _pair(z) -> list[float]:
    z = complex(z)
    return [float(z.real) + 0.0, float(z.imag) + 0.0]


@dataclass(frozen=True)
class ZRegion:
    """The requirement region mapped to z by ``z = exp(s T)``.

    Attributes
    ----------
    period : float
        ``T`` in seconds.
    sigma, zeta : float
        The s-plane region's decay rate and damping (0 and 0: stability only).
    """

    period: float
    sigma: float = 0.0
    zeta: float = 0.0

    @property
    def radius(self) -> float:
        """``exp(-sigma T)``: the decay rate's circle."""
        return math.exp(-self.sigma * self.period)

    @property
    def _cot(self) -> float:
        """``zeta / sqrt(1 - zeta^2)``: how fast the damping ray decays per radian."""
        return self.zeta / math.sqrt(1.0 - self.zeta**2) if self.zeta < 1.0 else math.inf

    @property
    def spiral_end(self) -> float:
        """Where the damping spiral meets the negative real axis: ``exp(-pi zeta / sqrt(1 - zeta^2))``."""
        return math.exp(-math.pi * self._cot)

    @property
    def is_stability_only(self) -> bool:
        return self.sigma == 0.0 and self.zeta == 0.0

    def contains(self, z) -> bool:
        """Whether every pole ``z`` lies strictly inside (a pole at ``z = 0`` always does)."""
        from synth.problem.region import Region

        z = np.asarray(z, dtype=complex)
        if np.any(np.abs(z) >= 1.0 - 1e-10):
            return False
        zn = z[z != 0]
        if zn.size == 0:
            return True
        s = np.log(zn) / self.period
        return bool(Region(self.sigma, self.zeta).contains(s))

    def curves(self) -> list[np.ndarray]:
        """The upper half of the boundary as paths of ``q = s T`` (``z = exp(q)``).

        The circle ``Re q = -sigma T`` where it bounds the region, and the damping ray
        ``q = theta (-cot + j)`` for ``theta`` up to ``pi`` (the negative real axis inside
        the spiral is inside the region on both sides, so no boundary).
        """
        T = self.period
        th = np.linspace(0.0, math.pi, _CURVE_POINTS)
        if self.zeta <= 0.0:
            return [-self.sigma * T + 1j * th]
        cot = self._cot
        corner = self.sigma * T / cot if cot > 0 else math.inf   # where the ray meets the circle
        out = []
        if self.sigma > 0:
            top = min(math.pi, corner)
            out.append(-self.sigma * T + 1j * np.linspace(0.0, top, _CURVE_POINTS))
        if corner < math.pi:
            t = np.linspace(corner, math.pi, _CURVE_POINTS)
            out.append(t * (-cot + 1j))
        return out

    def outline(self) -> np.ndarray:
        """The whole boundary in z as a closed polyline (for pictures)."""
        upper = np.concatenate([np.exp(q) for q in self.curves()]) if self.curves() else \
            np.zeros(0, complex)
        upper = upper[np.argsort(np.angle(upper), kind="stable")]
        return np.concatenate([upper, np.conj(upper[::-1])])

    def describe(self) -> str:
        if self.is_stability_only:
            return "inside the unit circle"
        parts = []
        if self.sigma > 0:
            parts.append(f"|z| < {self.radius:.4g}")
        if self.zeta > 0:
            parts.append(f"inside the damping spiral for {self.zeta:.3g} (meeting the negative "
                         f"real axis at {-self.spiral_end:.4g})")
        return " and ".join(parts)

    def to_json(self) -> dict:
        return {"period": self.period, "decay_rate": self.sigma, "damping": self.zeta,
                "radius": self.radius, "spiral_end": -self.spiral_end if self.zeta > 0 else None,
                "description": self.describe(),
                "outline": [_pair(z) for z in self.outline()[:: max(1, _CURVE_POINTS // 100)]]}


def _region_gains(loop, region: ZRegion, scale: float):
    """Open intervals of the loop factor putting every pole inside ``region``."""
    from synth.verify.hybrid import factor_intervals, real_points

    cands = []
    for q in region.curves():
        im = q.imag
        re_slope = (q.real[-1] - q.real[0]) / (im[-1] - im[0]) if im[-1] != im[0] else 0.0

        def path(t, q0=q[0], slope=re_slope):
            t = np.asarray(t, dtype=float)
            return loop.loop_response(q0.real + slope * (t - q0.imag) + 1j * t)

        if im[-1] == im[0]:  # a degenerate curve
            continue
        cands += [-1.0 / v.real for _, v in real_points(path, im) if v.real != 0]
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            for t in (float(im[0]), float(im[-1])):
                v = complex(path(t))
                if np.isfinite(v.real) and np.isfinite(v.imag) and v.real != 0 \
                        and abs(v.imag) <= 1e-12 * abs(v):
                    cands.append(-1.0 / v.real)
    if not region.contains(loop.poles(0.0)):
        cands.append(0.0)
    return factor_intervals(cands, lambda k: region.contains(loop.poles(k)), scale=scale)


def _unit_circle_gains(loop, scale: float):
    """Stable intervals of the loop factor and the unit-circle crossings ``(w, factor)``."""
    from synth.verify.hybrid import factor_intervals, real_points

    T = loop.period
    th = np.linspace(0.0, math.pi, _CURVE_POINTS)
    pts = [(t / T, -1.0 / v.real) for t, v in real_points(
        lambda t: loop.loop_response(1j * np.asarray(t)), th) if v.real != 0]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for t in (0.0, math.pi):
            v = complex(loop.loop_response(1j * t))
            if np.isfinite(v.real) and np.isfinite(v.imag) and v.real != 0:
                pts.append((t / T, -1.0 / v.real))
    pts = sorted({(w, k) for w, k in pts})
    cands = [k for _, k in pts]
    if not loop.open_loop_stable():
        cands.append(0.0)
    ivs = factor_intervals(cands, loop.is_stable, scale=scale)
    ends = {x for iv in ivs for x in iv if x is not None}
    crossings = tuple(sorted(((w, k) for w, k in pts if k in ends), key=lambda p: p[1]))
    return ivs, crossings


def _gain_scale(loop) -> float:
    """A typical loop factor: the inverse loop magnitude at a quarter of the sample rate."""
    v = abs(complex(loop.loop_response(0.5j * math.pi)))
    return 1.0 / v if np.isfinite(v) and v > 0 else 1.0


def _scaled(ivs, k: float):
    """Factor intervals as gain intervals ``K = k * factor`` (order kept ascending)."""
    out = []
    for lo, hi in ivs:
        a = None if lo is None else lo * k
        b = None if hi is None else hi * k
        out.append((a, b) if k > 0 else (b, a))
    return sorted(out, key=lambda iv: -math.inf if iv[0] is None else iv[0])


def _unity_loop(plant, sampling):
    """The sampled loop with ``C = 1``: its factor is the proportional gain."""
    from synth.verify.controller import Controller
    from synth.verify.discrete import ZMap, discrete_controller
    from synth.verify.hybrid import sampled_loop

    model = discrete_controller(Controller((1.0,), (1.0,)), ZMap("tustin", sampling.period),
                                compute_delay=sampling.compute_delay)
    return sampled_loop(plant, model)


def _z_poly_roots(p) -> np.ndarray:
    from synth.numerics.poly import scaled_roots, trim

    p = trim(np.asarray(p, dtype=float))
    return scaled_roots(p) if p.size > 1 else np.zeros(0, complex)


@dataclass(frozen=True)
class ZPlaneView:
    """What proportional gain does in the sampled loop (``synth explain`` with ``[sampling]``).

    Attributes
    ----------
    period, compute_delay : float
        Seconds.
    region : ZRegion
    numerator, denominator : tuple of float
        The plant behind the hold with its dead time and the computation
        delay, ``Gd(z)``, descending powers of z
        (:func:`synth.verify.sampled.zoh_discretise`).
    poles, zeros : tuple of complex
        Of ``Gd(z)``.
    stabilizing_gain_intervals, requirement_gain_intervals : tuple of (lo, hi)
        Open intervals over all real ``K`` (``C = K``) with every pole inside the
        unit circle, resp. inside the mapped region.
    crossings : tuple of (float, float)
        ``(w, K)``: the gains at the stability interval ends, where a pole is on
        the unit circle at ``z = exp(j w T)``.
    """

    period: float
    compute_delay: float
    region: ZRegion
    numerator: tuple[float, ...]
    denominator: tuple[float, ...]
    poles: tuple[complex, ...]
    zeros: tuple[complex, ...]
    stabilizing_gain_intervals: tuple
    requirement_gain_intervals: tuple
    crossings: tuple[tuple[float, float], ...]

    def to_json(self) -> dict:
        """The explanation's ``z_plane`` object."""
        from synth.outputs.jsonout import interval_lists, root_pairs

        return {
            "period": self.period, "compute_delay": self.compute_delay,
            "map": "z = exp(s T); the plant behind a zero-order hold with its dead time and the "
                   "computation delay",
            "plant": {"numerator": list(self.numerator), "denominator": list(self.denominator),
                      "poles": root_pairs(self.poles), "zeros": root_pairs(self.zeros)},
            "stabilizing_gain_intervals": interval_lists(self.stabilizing_gain_intervals),
            "requirement_gain_intervals": interval_lists(self.requirement_gain_intervals),
            "unit_circle_crossings": [{"frequency": w, "gain": k} for w, k in self.crossings],
            "region": self.region.to_json(),
        }

    def text_lines(self) -> list[str]:
        from synth.explain import _fmt as f

        head = (f"Sampled every {self.period:.4g} s"
                + (f", computation delay {self.compute_delay:.4g} s" if self.compute_delay else "")
                + " (z-plane, z = exp(s T); stable inside the unit circle)")
        lines = [head, f"  stabilises for    {f.intervals(self.stabilizing_gain_intervals)}"]
        if not self.region.is_stability_only:
            lines.append(f"  meets the region  {f.intervals(self.requirement_gain_intervals)}"
                         f"  (the region in z: {self.region.describe()})")
        for w, k in self.crossings:
            lines.append(f"  a pole crosses the unit circle at w = {f.num(w)} rad/s "
                         f"(z = exp(j w T)) for K = {f.num(k)}")
        return lines

    def reason(self, continuous) -> str:
        """One sentence comparing the sampled and the continuous stabilising gains."""
        from synth.explain import _fmt as f

        text = (f"Sampled every {f.num(self.period)} s"
                + (f" with a computation delay of {f.num(self.compute_delay)} s"
                   if self.compute_delay else "")
                + f", the hold and the delays leave {f.intervals(self.stabilizing_gain_intervals)}"
                " as the stabilising gains (inside the unit circle of z = exp(s T))")
        return text + f", against {f.intervals(continuous)} for the continuous loop."


def proportional_view(problem) -> ZPlaneView:
    """The z-plane account of proportional gain for a problem with ``[sampling]``.

    Parameters
    ----------
    problem : synth.problem.Problem

    Returns
    -------
    ZPlaneView
    """
    from synth.verify.sampled import zoh_discretise

    sp = problem.sampling
    plant = problem.plant
    loop = _unity_loop(plant, sp)
    scale = _gain_scale(loop)
    stab, crossings = _unit_circle_gains(loop, scale)
    region = ZRegion(sp.period, problem.region.sigma, problem.region.zeta)
    req = stab if region.is_stability_only else _region_gains(loop, region, scale)
    num, den = zoh_discretise(plant.rational_num, plant.rational_den, sp.period,
                              plant.dead_time + sp.compute_delay)
    return ZPlaneView(period=sp.period, compute_delay=sp.compute_delay, region=region,
                      numerator=tuple(float(x) for x in num),
                      denominator=tuple(float(x) for x in den),
                      poles=tuple(_z_poly_roots(den)), zeros=tuple(_z_poly_roots(num)),
                      stabilizing_gain_intervals=tuple(stab),
                      requirement_gain_intervals=tuple(req), crossings=crossings)


@dataclass(frozen=True, eq=False)
class ZLocus:
    """The root locus in z of a sampled loop ``1 + K L(z) = 0`` (``synth trace`` with ``[sampling]``).

    Attributes
    ----------
    view : ZPlaneView-like facts: ``period``, ``compute_delay``, ``region``
    unit : float
        The gain of the traced loop at factor 1 (1 for the plant; the design's
        compensator gain for a design's loop).
    loop : synth.verify.hybrid.SampledLoop
        The traced loop (at gain ``unit``).
    gains : ndarray
        Gain samples (``K``), ascending in ``|K|`` from 0.
    roots : ndarray, complex, shape (G, n)
        Closed-loop poles in branch order.
    poles, zeros : ndarray of complex
        Open-loop poles and zeros of ``L(z)``.
    stable_intervals, region_intervals : tuple of (lo, hi)
        Gain intervals (all real K).
    crossings : tuple of (float, float)
        ``(w, K)`` at the unit circle.
    negative : bool
        The traced gains are negative (a design with ``K < 0``).
    """

    period: float
    compute_delay: float
    region: ZRegion
    unit: float
    loop: object
    gains: np.ndarray
    roots: np.ndarray
    poles: np.ndarray
    zeros: np.ndarray
    stable_intervals: tuple
    region_intervals: tuple
    crossings: tuple
    negative: bool = False

    def roots_at(self, gain: float) -> np.ndarray:
        """Closed-loop poles in z at a gain (eigenvalues of the sampled loop)."""
        return self.loop.poles(gain / self.unit)

    def to_json(self) -> dict:
        """The trace's ``z_plane`` object."""
        from synth.outputs.jsonout import interval_lists, root_pairs

        r = self.roots
        return {
            "period": self.period, "compute_delay": self.compute_delay,
            "map": "z = exp(s T)",
            "gain_sign": "negative" if self.negative else "positive",
            "poles": root_pairs(self.poles), "zeros": root_pairs(self.zeros),
            "stable_gain_intervals": interval_lists(self.stable_intervals),
            "region": self.region.to_json(),
            "region_gain_intervals": interval_lists(self.region_intervals),
            "unit_circle_crossings": [{"frequency": w, "gain": k} for w, k in self.crossings],
            "branches": {"gains": [float(g) for g in self.gains],
                         "roots": [[_pair(z) for z in row] for row in r]},
        }

    def summary_lines(self) -> list[str]:
        from synth.explain import _fmt as f

        sign = "K < 0" if self.negative else "K > 0"
        lines = [f"root locus in z for {sign} (sampled every {f.num(self.period)} s"
                 + (f", computation delay {f.num(self.compute_delay)} s" if self.compute_delay
                    else "") + f"): {self.poles.size} poles, {self.zeros.size} zeros, "
                 f"{self.gains.size} gain samples"]
        lines.append(f"  closed loop stable (inside the unit circle) for "
                     f"{f.intervals(self.stable_intervals)}")
        for w, k in self.crossings:
            lines.append(f"  unit circle at z = exp(j w T), w = {f.num(w)} rad/s (K = {f.num(k)})")
        if not self.region.is_stability_only:
            lines.append(f"  every pole in the region ({self.region.describe()}) for "
                         f"{f.intervals(self.region_intervals, none='no gain')}")
        return lines


def trace_zplane(problem, controller=None, discrete=None, samples: int = 400) -> ZLocus:
    """The root locus in z of the plant under proportional gain, or of a design's sampled loop.

    Parameters
    ----------
    problem : synth.problem.Problem
        With ``sampling``; its region is mapped.
    controller : synth.verify.controller.Controller, optional
        A design: its loop ``C(z) Gd(z)`` is traced with its compensator gain ``K``
        as the locus variable (the design operates at ``K``).  Without it, the
        plant's locus under ``C = K``.
    discrete : synth.verify.discrete.DiscreteController, optional
        The design's discrete form as its run wrote it (else mapped as a run
        maps it, :func:`synth.verify.sampled.map_design`).
    samples : int
        Gain samples (log-spaced, plus every interval end).

    Returns
    -------
    ZLocus
    """
    from synth.locus.branches import track_branches
    from synth.verify.hybrid import sampled_loop
    from synth.verify.sampled import map_design, zoh_discretise

    sp = problem.sampling
    plant = problem.plant
    unit, negative = 1.0, False
    if controller is None:
        loop = _unity_loop(plant, sp)
    else:
        if discrete is None:
            discrete = map_design(plant, controller, sp)[0]
        loop = sampled_loop(plant, discrete)
        unit = float(controller.num[0] / controller.den[0])
        negative = unit < 0
    scale = _gain_scale(loop)
    stab, crossings = _unit_circle_gains(loop, scale)
    region = ZRegion(sp.period, problem.region.sigma, problem.region.zeta)
    reg = stab if region.is_stability_only else _region_gains(loop, region, scale)
    ends = sorted({abs(x) for iv in (*stab, *reg) for x in iv if x is not None and x != 0})
    ref = ends[-1] if ends else scale
    lo = min(ends[0] if ends else scale, scale) * 1e-3
    mags = np.unique(np.concatenate([[0.0, 1.0], np.geomspace(lo, ref * 1e3, samples), ends]))
    factors = mags  # factor 1 is the design itself (K = unit, whatever its sign)
    roots = np.array([loop.poles(k) for k in factors])
    # open loop: the plant's poles behind the hold (and the controller's)
    n, d = zoh_discretise(plant.rational_num, plant.rational_den, sp.period,
                          plant.dead_time + sp.compute_delay)
    cn, cd = loop.controller.transfer()
    poles = np.sort_complex(_z_poly_roots(np.polymul(d, cd)))
    zeros = np.sort_complex(_z_poly_roots(np.polymul(n, cn)))
    center, size = 0.0 + 0.0j, 1.0    # the unit circle frames the z-plane
    tracked = track_branches(roots, center, size)
    return ZLocus(period=sp.period, compute_delay=sp.compute_delay, region=region, unit=unit,
                  loop=loop, gains=factors * unit, roots=tracked, poles=poles, zeros=zeros,
                  stable_intervals=tuple(_scaled(stab, unit)),
                  region_intervals=tuple(_scaled(reg, unit)),
                  crossings=tuple((w, k * unit) for w, k in crossings), negative=negative)
