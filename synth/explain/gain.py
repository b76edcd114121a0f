"""What proportional gain does to the loop ``D(s) + K N(s)``, and why: facts and sentences.

Each public function computes one kind of fact from the polynomials (never
from canned text) and :func:`gain_reasons` turns them into sentences that
cite the numbers. ``sign`` is ``+1`` for positive gains and ``-1`` for
negative (reverse-acting) gains throughout.

References
----------
.. [1] W. R. Evans, "Control system synthesis by root locus method", Trans.
   AIEE 69, 1950 (real-axis rule, asymptotes, magnitude condition).
.. [2] E. J. Routh, *A Treatise on the Stability of a Given State of Motion*,
   1877 (all coefficients of a stable polynomial share one sign; axis
   crossings bound the stable gain ranges).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from synth.explain import _fmt as f
from synth.explain.structure import in_closed_rhp, in_open_rhp, is_real, roots_of
from synth.locus.axis import AxisCrossing, axis_crossings_all
from synth.locus.core import closed_loop_roots, loop_polys
from synth.locus.special import asymptotes as locus_asymptotes
from synth.numerics.scaling import LoopScaling

Interval = tuple[float | None, float | None]

SIGN_WORD = {1: "positive", -1: "negative"}


@dataclass(frozen=True)
class Reason:
    """One sentence of the account, with the numbers behind it.

    Attributes
    ----------
    kind : str
        What kind of fact it states (``"verdict"``, ``"trap"``, ``"coefficient"``,
        ``"asymptotes"``, ``"high_gain"``, ``"crossing"``, ``"count"``, ...).
    sign : int
        ``+1`` / ``-1`` for a statement about positive / negative gains, 0 otherwise.
    text : str
        The sentence.
    data : dict
        The numbers the sentence cites, by name (plain floats, lists, None).
    """

    kind: str
    sign: int
    text: str
    data: dict = field(default_factory=dict)

    def to_json(self) -> dict:
        return {"kind": self.kind, "sign": self.sign, "text": self.text, "data": self.data}


# -- interval arithmetic ---------------------------------------------------------------------

def _lo(x):
    return -math.inf if x is None else x


def _hi(x):
    return math.inf if x is None else x


def _none(x):
    return None if not math.isfinite(x) else float(x)


def intersect(intervals, lo: float | None, hi: float | None) -> list[Interval]:
    """Intersection of open intervals with ``(lo, hi)`` (``None`` = unbounded)."""
    a0, b0 = _lo(lo), _hi(hi)
    out = []
    for a, b in intervals:
        a1, b1 = max(_lo(a), a0), min(_hi(b), b0)
        if a1 < b1:
            out.append((_none(a1), _none(b1)))
    return out


def sign_part(intervals, sign: int) -> list[Interval]:
    """The part of ``intervals`` with gains of one sign."""
    return intersect(intervals, 0.0, None) if sign > 0 else intersect(intervals, None, 0.0)


def intersect_all(a, b) -> list[Interval]:
    """Intersection of two unions of open intervals."""
    out = []
    for lo, hi in b:
        out.extend(intersect(a, lo, hi))
    return sorted(out, key=lambda iv: _lo(iv[0]))


def robust_intervals(intervals, lo_factor: float, hi_factor: float) -> list[Interval]:
    """Gains ``K`` with ``K c`` inside one interval for every plant-gain factor ``c`` in ``[lo, hi]``.

    For ``K > 0`` the products sweep ``[K lo, K hi]``, for ``K < 0``
    ``[K hi, K lo]``; each must fit in one open interval.
    """
    out: list[Interval] = []
    for a, b in intervals:
        a, b = _lo(a), _hi(b)
        # positive K: K*lo > a and K*hi < b
        p_lo, p_hi = max(0.0, a / lo_factor), b / hi_factor
        if p_lo < p_hi:
            out.append((_none(p_lo), _none(p_hi)))
        # negative K: K*hi > a and K*lo < b
        n_lo, n_hi = a / hi_factor, min(0.0, b / lo_factor)
        if n_lo < n_hi:
            out.append((_none(n_lo), _none(n_hi)))
    out.sort(key=lambda iv: _lo(iv[0]))
    # K = 0 is inside whenever it is inside an original interval: join the halves across it
    merged: list[Interval] = []
    for iv in out:
        if merged and merged[-1][1] == 0.0 and iv[0] == 0.0 and contains(intervals, 0.0):
            merged[-1] = (merged[-1][0], iv[1])
        else:
            merged.append(iv)
    return merged


def contains(intervals, k: float) -> bool:
    return any(_lo(a) < k < _hi(b) for a, b in intervals)


# -- locus facts -----------------------------------------------------------------------------

#: an imaginary-axis crossing (the locus engine's value: frequency, gain, direction)
Crossing = AxisCrossing


def axis_crossings(num, den, open_loop: bool = False) -> tuple[Crossing, ...]:
    """Every real gain (any sign) that puts a closed-loop pole on the imaginary axis.

    The locus engine's one implementation (:func:`synth.locus.axis.axis_crossings_all`),
    so explain and trace list the same crossings. ``open_loop`` adds the
    plant's own poles on the axis at ``K = 0`` (used for the reasons at the
    ends of a stable range; the JSON lists crossings at non-zero gains only,
    as ``trace`` does).
    """
    return axis_crossings_all(num, den, open_loop=open_loop)


def degree_drop_gain(num, den) -> float | None:
    """For a biproper loop, the gain ``-d0/n0`` at which a closed-loop pole passes through infinity."""
    n, d = loop_polys(num, den)
    return float(-d[0] / n[0]) if n[0] != 0 else None


@dataclass(frozen=True)
class AsymptoteFacts:
    """Asymptotes of the branches that leave for infinity, for one sign of gain."""

    sign: int
    excess: int
    centroid: float | None
    angles_deg: tuple[float, ...]
    into_rhp: int       # branches whose asymptote ends in the open right half-plane
    on_axis: bool       # vertical asymptotes on the imaginary axis itself

    def to_json(self) -> dict:
        return {"centroid": self.centroid, "angles_deg": list(self.angles_deg),
                "branches_into_rhp": self.into_rhp}


def asymptote_facts(num, den, sign: int) -> AsymptoteFacts:
    """Centroid ``(sum p - sum z)/(n - m)`` and angles of the asymptotes.

    For ``K num/den`` with leading-coefficient ratio ``c`` the far branches
    obey ``s^(n-m) ~ -K c``: angles ``(180 + 360 q)/(n - m)`` when ``K c > 0``,
    ``360 q/(n - m)`` otherwise (Evans 1950).
    """
    n, d = loop_polys(num, den)
    nt = n[np.flatnonzero(n)[0]:]
    excess = d.size - nt.size
    if excess == 0:  # also covers a static loop, which the locus engine refuses
        return AsymptoteFacts(sign, 0, None, (), 0, False)
    # centroid and angles from the locus engine, so explain and the locus agree
    asym = locus_asymptotes(nt, d, negative=sign < 0)
    centroid = asym.centroid
    angles = np.asarray(asym.angles_deg)
    c = np.cos(np.radians(angles))
    vertical = np.abs(c) <= 1e-9
    tol = 1e-9 * max(abs(centroid), LoopScaling.for_loop(n, d).w0)  # the loop's frequency scale
    into = int(np.count_nonzero(c > 1e-9)) + (int(np.count_nonzero(vertical)) if centroid > tol else 0)
    on_axis = bool(np.any(vertical) and abs(centroid) <= tol)
    return AsymptoteFacts(sign, excess, centroid, tuple(float(a) for a in angles), into, on_axis)


@dataclass(frozen=True)
class Trap:
    """A real-axis locus segment in the closed RHP that holds a closed-loop pole for every gain of a sign.

    The gain ``K(x) = -D(x)/N(x)`` is continuous on the segment, zero at its
    pole end and unbounded at its zero end (or at ``+inf`` when the relative
    degree is positive), so it takes every value of that sign there.
    """

    sign: int
    pole: float
    zero: float | None     # None: the segment runs to +infinity

    @property
    def left(self) -> float:
        return self.pole if self.zero is None else min(self.pole, self.zero)

    @property
    def right(self) -> float:
        return math.inf if self.zero is None else max(self.pole, self.zero)

    def to_json(self) -> dict:
        return {"sign": self.sign, "pole": self.pole, "zero": self.zero}


def real_axis_traps(num, den, sign: int) -> tuple[Trap, ...]:
    """Segments of the real axis in ``[0, inf)`` that trap a closed-loop pole (see :class:`Trap`)."""
    n, d = loop_polys(num, den)
    zr = roots_of(n)
    pr = roots_of(d)
    zs, ps = _real_critical_points(zr[is_real(zr)].real, pr[is_real(pr)].real)
    w0 = LoopScaling.for_loop(n, d).w0  # the loop's frequency scale
    if ps.size == 0:
        return ()
    pts = np.unique(np.concatenate([zs, ps]))
    excess = d.size - 1 - (roots_of(n).size)
    out: list[Trap] = []
    edges = list(pts) + [math.inf]
    for a, b in zip(edges[:-1], edges[1:], strict=True):
        if a < 0.0:  # roots_of puts a root indistinguishable from 0 at exactly 0
            continue
        x = a + max(abs(a), w0) if math.isinf(b) else 0.5 * (a + b)
        nx = np.polyval(n, x)
        if nx == 0:
            continue
        kx = -np.polyval(d, x) / nx
        if kx * sign <= 0:
            continue
        a_pole, a_zero = bool(np.any(ps == a)), bool(np.any(zs == a))
        if a_pole and a_zero:
            continue  # a cancellation: reported elsewhere
        if math.isinf(b):
            if a_pole and excess >= 1:
                out.append(Trap(sign, float(max(a, 0.0)), None))
            continue
        b_pole, b_zero = bool(np.any(ps == b)), bool(np.any(zs == b))
        if b_pole and b_zero:
            continue
        if a_pole and b_zero:
            out.append(Trap(sign, float(max(a, 0.0)), float(b)))
        elif a_zero and b_pole:
            out.append(Trap(sign, float(b), float(max(a, 0.0))))
    return tuple(out)


def _real_critical_points(zeros: np.ndarray, poles: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct real zeros and poles, with cancelling pole-zero pairs removed.

    A multiple root comes back from numpy.roots split by about ``eps**(1/m)``,
    so points within a relative ``1e-5`` are one point; a pole and a zero at
    one point add two to every real-axis count to their left and so drop out
    of the real-axis rule (the mode itself is reported as a common factor).
    """
    def near(a, b):
        return abs(a - b) <= 1e-5 * max(abs(a), abs(b))

    z = sorted(float(x) for x in zeros)
    p = sorted(float(x) for x in poles)
    for x in list(z):
        j = next((i for i, y in enumerate(p) if near(x, y)), None)
        if j is not None:
            p.pop(j)
            z.remove(x)

    def merge(v):
        out: list[list[float]] = []
        for x in v:
            if out and near(out[-1][-1], x):
                out[-1].append(x)
            else:
                out.append([x])
        return np.array([np.mean(c) for c in out])

    return merge(z), merge(p)


@dataclass(frozen=True)
class CoefficientBlock:
    """Why no gain of a sign makes every characteristic coefficient positive.

    ``kind`` is ``"fixed"`` (the coefficient of ``s^power`` does not depend on
    the gain and is ``<= 0``), ``"sign"`` (it is positive only for gains of the
    other sign) or ``"conflict"`` (``s^power`` needs ``K > bound`` while
    ``s^other_power`` needs ``K < other_bound <= bound``).
    """

    sign: int
    kind: str
    power: int
    d_coef: float
    n_coef: float
    bound: float | None = None
    other_power: int | None = None
    other_d: float | None = None
    other_n: float | None = None
    other_bound: float | None = None

    def to_json(self) -> dict:
        return {k: getattr(self, k) for k in ("sign", "kind", "power", "d_coef", "n_coef", "bound",
                                              "other_power", "other_d", "other_n", "other_bound")}


def _window(n: np.ndarray, d: np.ndarray, sign: int, positive: bool):
    """Open gain window of one sign where every coefficient is > 0 (or < 0); with its binding terms."""
    lo, hi = (0.0, math.inf) if sign > 0 else (-math.inf, 0.0)
    lo_k = hi_k = None
    fixed = None
    want = 1.0 if positive else -1.0
    deg = d.size - 1
    for i in range(d.size):
        dk, nk = want * d[i], want * n[i]
        if nk == 0.0:
            if dk <= 0.0 and fixed is None:
                fixed = deg - i
            continue
        b = -dk / nk
        if nk > 0 and b > lo:
            lo, lo_k = b, deg - i
        elif nk < 0 and b < hi:
            hi, hi_k = b, deg - i
    return lo, hi, lo_k, hi_k, fixed


def coefficient_block(num, den, sign: int) -> CoefficientBlock | None:
    """The Routh necessary condition, one sign of gain: a reason no such gain can stabilise.

    A stable polynomial has all coefficients of one strict sign. Returns
    ``None`` when some gain of the sign passes this test.
    """
    n, d = loop_polys(num, den)
    if d.size < 2:
        return None
    lo, hi, lo_k, hi_k, fixed = _window(n, d, sign, True)
    if fixed is None and lo < hi:
        return None
    mlo, mhi, _, _, mfixed = _window(n, d, sign, False)
    if mfixed is None and mlo < mhi:
        return None
    deg = d.size - 1

    def co(power):
        return float(d[deg - power]), float(n[deg - power])

    if fixed is not None:
        dk, nk = co(fixed)
        return CoefficientBlock(sign, "fixed", fixed, dk, nk)
    # a single coefficient whose threshold lies on the other side of zero
    for power in range(deg + 1):
        dk, nk = co(power)
        if nk == 0.0:
            continue
        b = -dk / nk
        if (sign > 0 and nk < 0 and b <= 0) or (sign < 0 and nk > 0 and b >= 0):
            return CoefficientBlock(sign, "sign", power, dk, nk, b + 0.0)
    dk, nk = co(lo_k)
    od, on = co(hi_k)
    return CoefficientBlock(sign, "conflict", lo_k, dk, nk, float(lo), hi_k, od, on, float(hi))


@dataclass(frozen=True)
class CountStep:
    """Number of closed-loop poles in the closed RHP over an open gain interval."""

    lo: float | None
    hi: float | None
    count: int

    def to_json(self) -> dict:
        return {"interval": [self.lo, self.hi], "rhp_poles": self.count}


def rhp_count_profile(num, den, sign: int, crossings=None) -> tuple[CountStep, ...]:
    """How many closed-loop poles lie in ``Re s >= 0`` between consecutive boundary gains of a sign.

    The count changes only where a pole crosses the imaginary axis or passes
    through infinity, so one root computation per gap decides it.
    """
    n, d = loop_polys(num, den)
    cr = axis_crossings(n, d) if crossings is None else crossings
    ev = [c.gain for c in cr if c.gain * sign > 0]
    kd = degree_drop_gain(n, d)
    if kd is not None and kd * sign > 0:
        ev.append(kd)
    mags = np.unique(np.abs(np.asarray(ev, dtype=float)))
    mags = mags[mags > 0]
    if mags.size > 1:  # numerically coincident events are one event
        mags = mags[np.concatenate([[True], np.diff(mags) > 1e-9 * mags[1:]])]
    edges = np.concatenate([[0.0], mags, [np.inf]])
    # beyond the last event any gain will do; with none, the loop's own gain scale
    last = mags[-1] if mags.size else LoopScaling.for_loop(n, d).g0
    mids = np.where(np.isinf(edges[1:]), 2.0 * last, 0.5 * (edges[:-1] + edges[1:]))
    roots = closed_loop_roots(n, d, sign * mids)
    counts = np.sum(~np.isfinite(roots) | in_closed_rhp(np.where(np.isfinite(roots), roots, 0)),
                    axis=1)
    out = []
    for a, b, c in zip(edges[:-1], edges[1:], counts, strict=True):
        lo, hi = (a, b) if sign > 0 else (-b, -a)
        out.append(CountStep(_none(lo + 0.0), _none(hi + 0.0), int(c)))
    return tuple(out)


# -- the best gain when the region is out of reach ------------------------------------------

def decay_and_damping(num, den, gains) -> tuple[np.ndarray, np.ndarray]:
    """Slowest decay rate ``min(-Re s)`` and least damping ``min(-Re s/|s|)`` of the closed loop, per gain."""
    r = closed_loop_roots(num, den, gains)
    finite = np.isfinite(r)
    rr = np.where(finite, r, -1.0)
    mag = np.abs(rr)
    zeta = np.where(mag > 0, -rr.real / np.where(mag > 0, mag, 1.0), 0.0)
    decay = np.where(finite, -rr.real, -np.inf)
    zeta = np.where(finite, zeta, -1.0)
    if r.shape[1] == 0:
        return np.full(len(gains), np.inf), np.ones(len(gains))
    return decay.min(axis=1), zeta.min(axis=1)


def _grid(lo: float | None, hi: float | None, size: int = 600, scale: float = 1.0) -> np.ndarray:
    """Interior sample gains of an open interval; unbounded ends reach far out geometrically.

    ``scale`` is the loop's own gain scale (:class:`synth.numerics.scaling.LoopScaling`),
    which sets where "far out" starts when an end is at or near 0.
    """
    if lo is not None and hi is not None:
        u = np.linspace(0.0, 1.0, size + 2)[1:-1]
        # cluster toward both ends, where the best value often sits (a kink at a boundary crossing)
        u = 0.5 - 0.5 * np.cos(np.pi * u)
        return lo + (hi - lo) * u
    w = np.geomspace(1e-6, 1e6, size)
    if lo is None and hi is None:
        return np.concatenate([-scale * w[::-1], [0.0], scale * w])
    if hi is None:
        return lo + max(scale, abs(lo)) * w
    return hi - max(scale, abs(hi)) * w


@dataclass(frozen=True)
class Optimum:
    """The best value of a score over a set of gains, and where it is reached."""

    gain: float
    value: float

    def to_json(self) -> dict:
        return {"gain": self.gain, "value": self.value}


def maximise_over(score, intervals, scale: float = 1.0) -> Optimum | None:
    """Maximise ``score(gains) -> values`` (vectorised) over a union of open intervals.

    A dense grid per interval, then bounded Brent refinement between the
    neighbours of the best grid point (R. P. Brent, *Algorithms for
    Minimization without Derivatives*, 1973, via scipy.optimize.minimize_scalar).
    """
    from scipy.optimize import minimize_scalar

    best: Optimum | None = None
    for lo, hi in intervals:
        g = _grid(lo, hi, scale=scale)
        v = score(g)
        v = np.where(np.isfinite(v), v, -np.inf)
        i = int(np.argmax(v))
        if not np.isfinite(v[i]):
            continue
        a = g[max(i - 1, 0)]
        b = g[min(i + 1, g.size - 1)]
        cand = Optimum(float(g[i]), float(v[i]))
        if b > a:
            res = minimize_scalar(lambda x: -float(score(np.array([x]))[0]), bounds=(a, b),
                                  method="bounded", options={"xatol": 1e-10 * max(scale, abs(g[i]))})
            if res.success and -res.fun > cand.value:
                cand = Optimum(float(res.x), float(-res.fun))
        if best is None or cand.value > best.value:
            best = cand
    return best


# -- sentences -------------------------------------------------------------------------------

def beyond_word(sign: int) -> str:
    """``above`` for positive gains, ``below`` for negative ones (farther from zero)."""
    return "above" if sign > 0 else "below"


def sign_range_text(sign: int) -> str:
    return "positive gain" if sign > 0 else "negative (reverse-acting) gain"


def trap_reason(t: Trap) -> Reason:
    where = (f"between the plant pole at s = {f.num(t.pole)} and its zero at s = {f.num(t.zero)}"
             if t.zero is not None else
             f"to the right of the plant pole at s = {f.num(t.pole)} "
             f"(that branch runs out to +infinity along the positive real axis)")
    text = (f"For every {sign_range_text(t.sign)} a closed-loop pole stays on the real axis {where}, "
            f"in the right half-plane, so no {SIGN_WORD[t.sign]} gain stabilises.")
    return Reason("trap", t.sign, text, t.to_json())


def _coef_name(power: int) -> str:
    return "constant" if power == 0 else ("s" if power == 1 else f"s^{power}")


def coefficient_reason(b: CoefficientBlock, both_signs: bool = False) -> Reason:
    """The sentence for a coefficient block; ``both_signs`` for a fixed coefficient that blocks every gain."""
    word = SIGN_WORD[b.sign]
    if b.kind == "fixed" and both_signs:
        text = (f"The {_coef_name(b.power)} coefficient of the characteristic polynomial is "
                f"{f.num(b.d_coef)} for every gain (the plant numerator has no {_coef_name(b.power)} "
                "term), and a stable polynomial needs every coefficient positive, so no gain of "
                "either sign stabilises.")
        return Reason("coefficient", 0, text, {**b.to_json(), "sign": 0})
    if b.kind == "fixed":
        text = (f"The {_coef_name(b.power)} coefficient of the characteristic polynomial is "
                f"{f.num(b.d_coef)} for every gain (the plant numerator has no {_coef_name(b.power)} "
                f"term), and a stable polynomial needs every coefficient positive, "
                f"so no {word} gain stabilises.")
    elif b.kind == "sign":
        rel = ">" if b.n_coef > 0 else "<"
        text = (f"The {_coef_name(b.power)} coefficient of the characteristic polynomial is "
                f"{f.num(b.d_coef)} {_k_term(b.n_coef)}, "
                f"positive only for K {rel} {f.num(b.bound)}, so no {word} gain makes every "
                f"coefficient positive and none stabilises.")
    else:
        text = (f"The {_coef_name(b.power)} coefficient {f.num(b.d_coef)} "
                f"{_k_term(b.n_coef)} needs K > {f.num(b.bound)} "
                f"while the {_coef_name(b.other_power)} coefficient {f.num(b.other_d)} "
                f"{_k_term(b.other_n)} needs "
                f"K < {f.num(b.other_bound)}, so no {word} gain makes every coefficient positive "
                f"and none stabilises.")
    return Reason("coefficient", b.sign, text, b.to_json())


def _k_term(n: float) -> str:
    """``+ 2.5 K``, ``- K``: the gain term of a coefficient, written as an engineer would."""
    sign = "+" if n >= 0 else "-"
    mag = abs(n)
    return f"{sign} K" if mag == 1.0 else f"{sign} {f.num(mag)} K"


def asymptote_reason(a: AsymptoteFacts, last: Crossing | None, beyond: float | None) -> Reason | None:
    """Branches that the asymptotes carry into the RHP at high gain (``None`` when none do)."""
    if a.into_rhp == 0 and not a.on_axis:
        return None
    angles = ", ".join(f.num(x) for x in a.angles_deg)
    if a.excess == 1:
        base = (f"With relative degree 1, the one far branch of the {SIGN_WORD[a.sign]}-gain locus "
                f"runs along the real axis at {angles} deg")
    else:
        base = (f"With relative degree {a.excess}, the {SIGN_WORD[a.sign]}-gain asymptotes leave the "
                f"centroid s = {f.num(a.centroid)} at {angles} deg")
    data = {**a.to_json(), "excess": a.excess, "last_crossing": None if last is None else
            last.to_json(), "unstable_beyond": beyond}
    if a.on_axis:
        return Reason("asymptotes", a.sign, base + ", along the imaginary axis itself: at high gain "
                      "two closed-loop poles become ever more lightly damped.", data)
    if a.excess == 1:
        text = base + ", out to +infinity in the right half-plane"
    else:
        verb = "heads" if a.into_rhp == 1 else "head"
        text = base + (f", so {f.plural(a.into_rhp, 'branch', 'branches')} {verb} into the right "
                       "half-plane")
    past = beyond_word(a.sign)
    if beyond is not None and last is not None:
        text += (f"; closed-loop poles reach the imaginary axis at K = {f.num(last.gain)} "
                 f"({_axis_point(last.frequency)}) and every gain {past} K = {f.num(beyond)} is "
                 "unstable.")
    elif beyond is not None:
        text += f"; every gain {past} K = {f.num(beyond)} is unstable."
    elif last is not None:
        text += (f"; the last imaginary-axis crossing is at K = {f.num(last.gain)} "
                 f"({_axis_point(last.frequency)}).")
    else:
        text += "."
    return Reason("asymptotes", a.sign, text, data)


def zero_reason(zeros_rhp, sign: int, beyond: float | None, pade_zeros=()) -> Reason | None:
    """Closed-loop poles tend to the plant zeros as ``|K|`` grows: RHP zeros cap the gain."""
    z = [complex(x) for x in zeros_rhp if in_open_rhp(x)]
    if not z:
        return None
    many = len(z) > 1
    pade = any(np.min(np.abs(np.asarray(pade_zeros, complex) - x)) <= 1e-6 * abs(x)
               for x in z) if len(pade_zeros) else False
    what = f"zero{'s' if many else ''}" + (" (the dead time's Pade form included)" if pade else "")
    text = (f"As |K| grows, closed-loop poles approach the plant zeros, and the right-half-plane "
            f"{what} at s = {f.points(z)} pull{'' if many else 's'} a pole into the right "
            f"half-plane for large {SIGN_WORD[sign]} gains")
    text += (f" (every gain {beyond_word(sign)} K = {f.num(beyond)} is unstable)."
             if beyond is not None else ".")
    return Reason("high_gain", sign, text,
                  {"zeros": [[x.real, x.imag] for x in z], "unstable_beyond": beyond})


def count_reason(steps: tuple[CountStep, ...], sign: int, crossings,
                 stable_somewhere: bool = False) -> Reason:
    """The number of closed-loop RHP poles, interval by interval, over gains of one sign."""
    parts = [f"{st.count} for {f.interval(st.lo, st.hi)}" for st in steps]
    tail = ("" if stable_somewhere else " - the count never reaches zero")
    text = (f"Counting closed-loop poles in the closed right half-plane over {SIGN_WORD[sign]} "
            f"gains: " + "; ".join(parts) + tail)
    cr = [c for c in crossings if c.gain * sign > 0]
    if cr:
        text += ("; it changes where poles cross the imaginary axis ("
                 + ", ".join(f"K = {f.num(c.gain)} at {_axis_point(c.frequency)}" for c in cr) + ")")
    text += "."
    return Reason("count", sign, text, {"steps": [s.to_json() for s in steps],
                                        "crossings": [c.to_json() for c in cr]})


def _axis_point(w: float) -> str:
    return "s = 0" if w == 0.0 else f"s = ±{f.num(w)}j"


def edge_reason(k: float, crossings, kdrop: float | None, lower: bool, iv: Interval) -> Reason | None:
    """What happens at a finite end of a stabilising interval."""
    near = [c for c in crossings if abs(c.gain - k) <= 1e-6 * abs(k)]
    which = "begins" if lower else "ends"
    span = f.interval(*iv)
    if near:
        freqs = sorted({c.frequency for c in near})
        bits = []
        for w in freqs:
            bits.append("s = 0" if w == 0.0 else f"s = ±{f.num(w)}j")
        onaxis = " and ".join(bits)
        if k == 0.0:
            many = len(freqs) > 1 or freqs[0] > 0
            text = (f"At K = 0 the plant's own pole{'s' if many else ''} on the imaginary axis "
                    f"({onaxis}) {'are closed-loop poles' if many else 'is a closed-loop pole'}, "
                    f"which {which} the stable range {span}.")
        else:
            moving = "a closed-loop pole passes through" if freqs == [0.0] else "closed-loop poles cross the imaginary axis at"
            text = f"At K = {f.num(k)} {moving} {onaxis}, which {which} the stable range {span}."
        return Reason("crossing", 1 if k > 0 else (-1 if k < 0 else 0), text,
                      {"gain": k, "frequencies": freqs, "interval": list(iv)})
    if kdrop is not None and abs(kdrop - k) <= 1e-9 * abs(k):
        text = (f"At K = {f.num(k)} the closed-loop degree drops and a pole passes through infinity, "
                f"which {which} the stable range {span}.")
        return Reason("crossing", 1 if k > 0 else -1, text,
                      {"gain": k, "frequencies": [], "through_infinity": True, "interval": list(iv)})
    return None
