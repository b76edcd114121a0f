"""The yardstick for synth's PI/PID designs: a benchmark batch and an independent optimum.

Nothing here uses synth's verifier or simulator; it is the outside check
that ``bench_peers.py`` and ``tests/test_peers_reference.py`` hold synth to.

* :data:`BATCH` -- plants over the families of the PID benchmark batch of
  Astrom and Hagglund (J. Process Control 14, 2004, eq. (4), and the IFAC
  PID'00 workshop batch), reconstructed from memory, with exact dead times.
* :func:`loop_figures` -- Ms, Mt and the noise gain ``max |C/(1+L)|`` from
  ``scipy.signal.freqresp`` with the exact delay on a dense grid refined at
  the peaks, and closed-loop stability by the Nyquist criterion (winding
  number of ``1 + L`` with the exact delay).
* :func:`load_responses` -- IAE, IE and peak of the output after a unit
  load step at the plant input (r = 0) with the exact delay: the loop is
  stepped with first-order-hold (triangle-hold) discretisations of plant and
  controller from ``scipy.linalg.expm`` and an exact delay buffer, many
  controllers at once.
* :func:`migo_pi` -- the PI with the largest integral gain ki under
  ``Ms <= limit`` (MIGO): for fixed kp the circle condition gives the
  feasible ki per frequency in closed form; then a 1-D search over kp.
* :func:`best_pi_load_iae` -- the PI with the least load IAE under the same
  Ms limit (2-D, polished with scipy.optimize).

References
----------
.. [1] K. J. Astrom and T. Hagglund, "Revisiting the Ziegler-Nichols step
   response method for PID control", J. Process Control 14 (2004) 635-650.
.. [2] K. J. Astrom, H. Panagopoulos and T. Hagglund, "Design of PI
   controllers based on non-convex optimization", Automatica 34(5) (1998)
   585-601 (MIGO: maximise ki subject to a robustness circle).
.. [3] K. J. Astrom and R. M. Murray, *Feedback Systems*, Princeton, 2008,
   ch. 9 (Nyquist criterion) and ch. 11 (load disturbances, IE = 1/ki).
.. [4] G. F. Franklin, J. D. Powell and M. Workman, *Digital Control of
   Dynamic Systems*, 3rd ed., 1998, section 6.3 (triangle-hold equivalent).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import signal
from scipy.linalg import expm
from scipy.optimize import minimize, minimize_scalar

# ----------------------------------------------------------------------------
# the batch
# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class BenchPlant:
    """``num/den * exp(-dead_time s)`` with a name and its family."""

    name: str
    family: str
    num: tuple[float, ...]
    den: tuple[float, ...]
    dead_time: float = 0.0

    @property
    def integrating(self) -> bool:
        return self.den[-1] == 0.0


def _poly(*factors) -> tuple[float, ...]:
    p = np.array([1.0])
    for f in factors:
        p = np.polymul(p, f)
    return tuple(float(x) for x in p)


def _batch() -> tuple[BenchPlant, ...]:
    out = []
    for T in (0.1, 0.3, 1.0, 3.0, 10.0, 100.0):
        out.append(BenchPlant(f"fopdt-T{T:g}", "lag + dead time", (1.0,), _poly([T, 1.0]), 1.0))
    for T in (0.1, 0.3, 1.0, 3.0, 10.0):
        out.append(BenchPlant(f"sopdt-T{T:g}", "double lag + dead time", (1.0,),
                              _poly([T, 1.0], [T, 1.0]), 1.0))
    for n in (3, 4, 8):
        out.append(BenchPlant(f"lags-n{n}", "equal lags", (1.0,), _poly(*[[1.0, 1.0]] * n)))
    for a in (0.1, 0.2, 0.5):
        out.append(BenchPlant(f"spread-a{a:g}", "four lags, ratio alpha", (1.0,),
                              _poly([1.0, 1.0], [a, 1.0], [a * a, 1.0], [a ** 3, 1.0])))
    for L, T in ((1.0, 0.0), (1.0, 1.0), (0.2, 1.0)):
        fs = [[1.0, 0.0]] + ([[T, 1.0]] if T else [])
        out.append(BenchPlant(f"int-L{L:g}-T{T:g}", "integrating + lag + dead time", (1.0,),
                              _poly(*fs), L))
    for a in (0.1, 0.5, 1.0, 2.0):
        out.append(BenchPlant(f"rhpz-a{a:g}", "right-half-plane zero", _poly([-a, 1.0]),
                              _poly([1.0, 1.0], [1.0, 1.0], [1.0, 1.0])))
    out.append(BenchPlant("osc-z0.1", "lightly damped", (9.0,), _poly([1.0, 1.0], [1.0, 0.6, 9.0])))
    out.append(BenchPlant("osc-z0.3-L0.2", "lightly damped + dead time", (1.0,),
                          _poly([1.0, 1.0], [1.0, 0.6, 1.0]), 0.2))
    return tuple(out)


#: The benchmark batch (26 plants over the families of Astrom and Hagglund 2004,
#: reconstructed from memory).
BATCH = _batch()

#: A handful for ``--quick``: one per family.
QUICK = ("fopdt-T1", "sopdt-T1", "lags-n4", "spread-a0.2", "int-L1-T1", "rhpz-a1",
         "osc-z0.3-L0.2")


# ----------------------------------------------------------------------------
# frequency domain
# ----------------------------------------------------------------------------


def _low_gain(poly) -> tuple[float, int]:
    """``(p(0) with the origin roots divided out, number of origin roots)``."""
    q = np.trim_zeros(np.asarray(poly, float), "f")
    r = np.trim_zeros(q, "b")
    return float(r[-1]), q.size - r.size


def _corners(p: BenchPlant, c_num=None, c_den=None) -> tuple[float, float]:
    """Slowest and fastest corner frequency of plant (and controller), delay included.

    With integrators in the loop, the frequency where their low-frequency
    asymptote ``|c| / w^m`` crosses 1 counts as a corner too, so that the grid
    starts where ``|L|`` is large (the Nyquist count needs it).
    """
    mags = []
    for poly in (p.num, p.den, c_num, c_den):
        if poly is None:
            continue
        r = np.roots(np.trim_zeros(np.asarray(poly, float), "f"))
        mags.extend(abs(x) for x in r if abs(x) > 0)
    if p.dead_time > 0:
        mags.append(1.0 / p.dead_time)
    if c_num is not None:
        (gn, _), (gd, mg), (cn, _), (cd, mc) = (_low_gain(x) for x in
                                                 (p.num, p.den, c_num, c_den))
        m = mg + mc
        if m:
            mags.append(abs(gn * cn / (gd * cd)) ** (1.0 / m))
    if not mags:
        mags = [1.0]
    return min(mags), max(mags)


def frequency_grid(p: BenchPlant, c_num=None, c_den=None, per_decade: int = 400) -> np.ndarray:
    """Log grid from 1e-4 x the slowest to 1e4 x the fastest corner (plant and controller)."""
    lo, hi = _corners(p, c_num, c_den)
    a, b = math.log10(lo) - 4.0, math.log10(hi) + 4.0
    return np.logspace(a, b, int((b - a) * per_decade) + 1)


def plant_response(p: BenchPlant, w) -> np.ndarray:
    """``G(jw)`` with the exact delay (scipy.signal.freqresp on the rational part)."""
    w = np.atleast_1d(np.asarray(w, float))
    _, g = signal.freqresp((np.asarray(p.num), np.asarray(p.den)), w)
    return g * np.exp(-1j * w * p.dead_time)


def controller_response(c_num, c_den, w) -> np.ndarray:
    """``C(jw)`` by scipy.signal.freqresp."""
    w = np.atleast_1d(np.asarray(w, float))
    return signal.freqresp((np.asarray(c_num, float), np.asarray(c_den, float)), w)[1]


def _origin_poles(poly) -> int:
    p = np.trim_zeros(np.asarray(poly, float), "f")
    return len(p) - len(np.trim_zeros(p, "b"))


def _rhp_poles(poly) -> int:
    p = np.trim_zeros(np.trim_zeros(np.asarray(poly, float), "f"), "b")
    if p.size <= 1:
        return 0
    return int(np.sum(np.roots(p).real > 0))


def nyquist_unstable(p: BenchPlant, c_num, c_den, w=None, L=None) -> int:
    """Number of closed-loop poles in the right half-plane, by the Nyquist criterion.

    ``Z = P - D/pi + m/2`` with P the open-loop poles in the open right
    half-plane, m those at the origin (the contour's indentation turns
    ``1 + L`` by ``-m pi``) and D the change of ``arg(1 + L(jw))`` from the
    grid's lowest to its highest frequency (the exact delay included).

    Raises
    ------
    ArithmeticError
        When the count is not an integer (grid too coarse near -1).

    References
    ----------
    .. [3] Astrom and Murray (2008), section 9.2.
    """
    if w is None:
        w = frequency_grid(p, c_num, c_den)
    if L is None:
        L = plant_response(p, w) * controller_response(c_num, c_den, w)
    phase = np.unwrap(np.angle(1.0 + L))
    P = _rhp_poles(p.den) + _rhp_poles(c_den)
    m = _origin_poles(p.den) + _origin_poles(c_den)
    Z = P - (phase[-1] - phase[0]) / math.pi + m / 2.0
    if abs(Z - round(Z)) > 0.25:
        raise ArithmeticError(f"Nyquist count {Z:.3f} is not an integer: grid too coarse")
    return int(round(Z))


@dataclass(frozen=True)
class LoopFigures:
    """Frequency-domain figures of one loop (exact delay).

    Attributes
    ----------
    stable : bool
    ms, mt, noise_gain : float
        Peaks of ``|1/(1+L)|``, ``|L/(1+L)|`` and ``|C/(1+L)|``.
    crossover : float
        Highest gain-crossover frequency (nan when ``|L|`` never crosses 1).
    """

    stable: bool
    ms: float
    mt: float
    noise_gain: float
    crossover: float


def _peak(values, w, fun) -> float:
    """Maximum of ``fun(w)`` from the grid, refined in log w between the neighbours."""
    i = int(np.argmax(values))
    best = float(values[i])
    if 0 < i < w.size - 1:
        lo, hi = math.log10(w[i - 1]), math.log10(w[i + 1])
        res = minimize_scalar(lambda x: -float(fun(10.0 ** x)[0]), bounds=(lo, hi),
                              method="bounded", options={"xatol": 1e-9 * (hi - lo)})
        best = max(best, -float(res.fun))
    return best


def loop_figures(p: BenchPlant, c_num, c_den) -> LoopFigures:
    """Ms, Mt, noise gain and Nyquist stability of the loop ``C G`` with the exact delay.

    References
    ----------
    .. [3] Astrom and Murray (2008), sections 9.2, 11.3 and 12.2.
    """
    w = frequency_grid(p, c_num, c_den)
    G = plant_response(p, w)
    C = controller_response(c_num, c_den, w)
    L = G * C
    stable = nyquist_unstable(p, c_num, c_den, w, L) == 0
    S = 1.0 / (1.0 + L)

    def S_at(x):
        return np.abs(1.0 / (1.0 + plant_response(p, x) * controller_response(c_num, c_den, x)))

    def T_at(x):
        Lx = plant_response(p, x) * controller_response(c_num, c_den, x)
        return np.abs(Lx / (1.0 + Lx))

    def N_at(x):
        Cx = controller_response(c_num, c_den, x)
        return np.abs(Cx / (1.0 + plant_response(p, x) * Cx))

    ms = _peak(np.abs(S), w, S_at)
    mt = _peak(np.abs(L * S), w, T_at)
    noise = _peak(np.abs(C * S), w, N_at)
    above = np.flatnonzero(np.abs(L) >= 1.0)
    wc = float(w[above[-1]]) if above.size and above[-1] < w.size - 1 else math.nan
    return LoopFigures(stable, ms, mt, noise, wc)


# ----------------------------------------------------------------------------
# load-step simulation
# ----------------------------------------------------------------------------


def _foh(A, B, h):
    """Triangle-hold equivalent: ``x+ = Phi x + G1 v_k + G2 v_{k+1}`` for linear v between samples.

    One block matrix exponential (Franklin, Powell and Workman, section 6.3).
    """
    n = A.shape[0]
    M = np.zeros((n + 2, n + 2))
    M[:n, :n] = A * h
    M[:n, n] = B[:, 0] * h
    M[n, n + 1] = 1.0
    E = expm(M)
    Phi, F1, F2 = E[:n, :n], E[:n, n], E[:n, n + 1]
    return Phi, F1 - F2, F2


@dataclass(frozen=True)
class LoadResponse:
    """Unit load step at the plant input, r = 0, per controller of a batch.

    Attributes
    ----------
    iae, ie, peak : ndarray
        ``int |y|``, ``int y`` and ``max |y|``.  When ``settled`` is false the
        IAE is a lower bound: the part simulated plus ``|1/ki - IE|`` (the
        rest of the integral, exact if y keeps its sign).
    settled : ndarray of bool
    step : float
        The simulation step h (the dead time is a whole number of steps).
    horizon : float
        Simulated time.
    """

    iae: np.ndarray
    ie: np.ndarray
    peak: np.ndarray
    settled: np.ndarray
    step: float
    horizon: float


def _integral_gain(c_num, c_den) -> float:
    """``lim_{s->0} s C(s)`` (0 for a controller without integral action)."""
    n = np.trim_zeros(np.asarray(c_num, float), "f")
    d = np.trim_zeros(np.asarray(c_den, float), "f")
    if d[-1] != 0.0 or d.size < 2:
        return 0.0
    if d[-2] == 0.0:
        raise ValueError("the controller has a double integrator")
    return float(n[-1] / d[-2])


def _bandwidth(p: BenchPlant, controllers) -> float:
    """Highest frequency where some loop gain ``|L|`` is still 0.05 (sets the step)."""
    top = 0.0
    for c_num, c_den in controllers:
        w = frequency_grid(p, c_num, c_den, per_decade=100)
        L = np.abs(plant_response(p, w) * controller_response(c_num, c_den, w))
        idx = np.flatnonzero(L >= 0.05)
        if idx.size:
            top = max(top, float(w[min(idx[-1] + 1, w.size - 1)]))
    return top


def _run_single(z, v, ring, zs, AT, b1, b2, cu, denom, m, steps):
    """One chunk of :func:`load_responses` for a single loop (fewer numpy calls per step)."""
    z = z[0].copy()
    v = float(v[0])
    col = ring[:, 0]
    for j in range(zs.shape[0]):
        w = z @ AT + v * b1
        if m:
            k = (steps + j + 1) % m
            v = 1.0 + col[k]
            z = w + v * b2
            col[k] = z @ cu
        else:
            v = (1.0 + w @ cu) / denom
            z = w + v * b2
        zs[j, 0] = z
    return z[None, :], np.array([v])


def load_responses(p: BenchPlant, controllers, points_per_period: int = 40,
                   max_steps: int = 100_000, chunk: int = 2000, rtol: float = 1e-6,
                   horizon: float | None = None) -> LoadResponse:
    """Load-step responses of the loops ``C_i G`` (exact delay), simulated together.

    The step h is ``2 pi / (points_per_period w_b)`` with ``w_b`` the highest
    frequency where some loop gain is still 0.05, shortened so that the
    dead time is a whole number of steps.  Plant and controllers are
    discretised with the triangle hold (exact for inputs linear between
    samples, so the scheme is second order in h); the delayed controller
    output comes from a buffer.  The run stops when every loop has settled:
    the last chunk's ``max |y|`` below ``rtol`` times the peak and the
    integral error ``1/ki - IE`` below ``rtol`` times the IAE; or after
    ``max_steps`` (then ``settled`` is false).  With ``horizon`` the run
    ignores that test and simulates exactly ``horizon`` seconds (rounded up to
    whole chunks); ``settled`` then reports the test at the end and the IAE
    has no tail added.

    Parameters
    ----------
    p : BenchPlant
        Strictly proper rational part.
    controllers : sequence of (num, den)
        Each with integral action (``ki != 0``); all are padded to the same order.

    Returns
    -------
    LoadResponse

    References
    ----------
    .. [4] Franklin, Powell and Workman (1998), section 6.3.
    """
    num, den = np.asarray(p.num, float), np.asarray(p.den, float)
    if len(np.trim_zeros(num, "f")) >= len(np.trim_zeros(den, "f")):
        raise ValueError("the plant must be strictly proper")
    A, B, Cp, _ = signal.tf2ss(num, den)
    Cp = Cp[0]
    n = A.shape[0]
    kis = np.array([_integral_gain(c_n, c_d) for c_n, c_d in controllers])
    if np.any(kis == 0.0):
        raise ValueError("every controller needs integral action for a finite load IAE")
    wb = _bandwidth(p, controllers)
    h = 2.0 * math.pi / (points_per_period * wb)
    m = 0
    if p.dead_time > 0:
        m = max(1, math.ceil(p.dead_time / h))
        h = p.dead_time / m
    Phi, G1, G2 = _foh(A, B, h)
    nb = len(controllers)
    ss = [signal.tf2ss(np.asarray(c_n, float), np.asarray(c_d, float))
          for c_n, c_d in controllers]
    nc = max(x[0].shape[0] for x in ss)
    if nc == 0:
        raise ValueError("a static controller has no integral action")
    # One state z = [x_plant, x_controller] per loop:
    #   z+ = Abig z + b1 v_k + b2 v_{k+1},  u = cu . z,  y = Cp . x_plant,
    # from x_p+ = Phi x_p + G1 v_k + G2 v_{k+1} and x_c+ = Phi_c x_c + Gc1 e_k + Gc2 e_{k+1}
    # with e = -y (r = 0); v = d + u(t - L) is the plant input.
    N = n + nc
    Abig = np.zeros((nb, N, N))
    b1 = np.zeros((nb, N))
    b2 = np.zeros((nb, N))
    cu = np.zeros((nb, N))
    Abig[:, :n, :n] = Phi
    b1[:, :n] = G1
    b2[:, :n] = G2
    holds: dict[tuple[bytes, bytes, float], tuple] = {}   # PI loops share one hold
    for i, (a_c, b_c, c_c, d_c) in enumerate(ss):
        k = a_c.shape[0]
        key = (a_c.tobytes(), b_c.tobytes(), h)
        if key not in holds:
            holds[key] = _foh(a_c, b_c, h)
        Pc, Gc1, Gc2 = holds[key]
        Abig[i, n:n + k, n:n + k] = Pc
        Abig[i, n:n + k, :n] = -(np.outer(Gc1, Cp) + np.outer(Gc2, Cp @ Phi))
        b1[i, n:n + k] = -Gc2 * float(Cp @ G1)
        b2[i, n:n + k] = -Gc2 * float(Cp @ G2)
        cu[i, :n] = -float(d_c.ravel()[0]) * Cp
        cu[i, n:n + k] = c_c[0]
    AT = np.transpose(Abig, (0, 2, 1))
    cy = np.concatenate([Cp, np.zeros(nc)])
    denom = 1.0 - np.einsum("bi,bi->b", cu, b2)       # algebraic loop without dead time
    z = np.zeros((nb, N))
    ring = np.zeros((max(m, 1), nb))     # u at the last m samples (u_k at k % m)
    v = np.ones(nb)                      # d = 1 from t = 0+, u(t - L) = 0 before L
    y_prev = np.zeros(nb)
    iae = np.zeros(nb)
    ie = np.zeros(nb)
    peak = np.zeros(nb)
    settled = np.zeros(nb, dtype=bool)
    steps = 0
    zs = np.zeros((chunk, nb, N))
    if horizon is not None:
        max_steps = chunk * math.ceil(horizon / (h * chunk))
    while steps < max_steps:
        if nb == 1:
            z, v = _run_single(z, v, ring, zs, AT[0], b1[0], b2[0], cu[0], float(denom[0]),
                               m, steps)
        else:
            for j in range(chunk):
                k1 = steps + j + 1
                w = np.matmul(z[:, None, :], AT)[:, 0, :] + v[:, None] * b1
                if m:
                    v = 1.0 + ring[k1 % m]            # 1 + u_{k+1-m}
                    z = w + v[:, None] * b2
                    ring[k1 % m] = np.einsum("bi,bi->b", z, cu)
                else:
                    v = (1.0 + np.einsum("bi,bi->b", w, cu)) / denom
                    z = w + v[:, None] * b2
                zs[j] = z
        steps += chunk
        ys = np.concatenate([y_prev[None, :], zs @ cy], axis=0)
        y_prev = ys[-1].copy()
        # exact integrals of the piecewise-linear interpolant of y
        y0, y1 = ys[:-1], ys[1:]
        a0, a1 = np.abs(y0), np.abs(y1)
        cross = y0 * y1 < 0
        seg = np.where(cross, (y0 * y0 + y1 * y1) / np.where(cross, a0 + a1, 1.0), a0 + a1)
        iae += 0.5 * h * seg.sum(axis=0)
        ie += 0.5 * h * (y0 + y1).sum(axis=0)
        chunk_max = a1.max(axis=0)
        peak = np.maximum(peak, chunk_max)
        if not np.all(np.isfinite(ys)):
            break
        settled = (chunk_max <= rtol * peak) & (np.abs(1.0 / kis - ie) <= rtol * iae)
        if horizon is not None:
            if steps * h >= horizon:
                break
        elif np.all(settled):
            break
    rest = np.where(settled | (horizon is not None), 0.0, np.abs(1.0 / kis - ie))
    return LoadResponse(iae=iae + rest, ie=ie, peak=peak, settled=settled, step=h,
                        horizon=steps * h)


def load_iae(p: BenchPlant, c_num, c_den, **kw) -> tuple[float, float, bool]:
    """``(IAE, peak, settled)`` of one loop; ``inf`` when the loop is unstable."""
    if nyquist_unstable(p, c_num, c_den):
        return math.inf, math.inf, False
    r = load_responses(p, [(c_num, c_den)], **kw)
    return float(r.iae[0]), float(r.peak[0]), bool(r.settled[0])


# ----------------------------------------------------------------------------
# MIGO: the PI with the largest integral gain under an Ms limit
# ----------------------------------------------------------------------------


def _roots(a, b, c):
    """Real roots ``lo <= hi`` of ``a k^2 + 2 b k + c`` (a > 0), nan where there are none.

    Uses ``q = -(b + sign(b) sqrt(disc))``, roots ``q/a`` and ``c/q``, which
    avoids cancellation.
    """
    disc = b * b - a * c
    ok = disc > 0
    sq = np.sqrt(np.where(ok, disc, 0.0))
    q = -(b + np.where(b >= 0, 1.0, -1.0) * sq)
    with np.errstate(divide="ignore", invalid="ignore"):
        r1 = q / a
        r2 = np.where(q != 0, c / q, r1)
    lo = np.where(ok, np.minimum(r1, r2), np.nan)
    hi = np.where(ok, np.maximum(r1, r2), np.nan)
    return lo, hi


def ki_limit(G, w, kp, ms_limit: float) -> np.ndarray:
    """Largest ki (from 0 up) keeping ``|1 + L(jw)| >= 1/Ms`` at the given frequencies.

    With ``L = (kp - j ki/w) G`` the condition is a quadratic in ki at each
    frequency; a frequency forbids the open interval between its roots.
    Returns, per kp (rows of ``kp``), the smallest positive lower root over
    the frequencies, or ``nan`` when small ki are already forbidden.

    References
    ----------
    .. [2] Astrom, Panagopoulos and Hagglund (1998), section 3.
    """
    kp = np.atleast_1d(np.asarray(kp, float))[:, None]
    r = 1.0 / ms_limit
    P = kp * G[None, :]
    Q = (-1j * G / w)[None, :]
    a = np.abs(Q) ** 2
    b = np.real((1.0 + P) * np.conj(Q))
    c = np.abs(1.0 + P) ** 2 - r * r
    lo, hi = _roots(a, b, c)
    blocked = np.any((lo <= 0) & (hi > 0), axis=1)
    bound = np.where(lo > 0, lo, np.inf)
    kmax = np.min(bound, axis=1)
    return np.where(blocked, np.nan, kmax)


@dataclass(frozen=True)
class PIDesign:
    """A reference PI with its independent figures."""

    kp: float
    ki: float
    iae: float
    peak: float
    ms: float
    noise_gain: float

    @property
    def tf(self) -> tuple[np.ndarray, np.ndarray]:
        return np.array([self.kp, self.ki]), np.array([1.0, 0.0])


@dataclass(frozen=True)
class _KiMax:
    """``ki_max(kp)`` with the binding frequency refined between grid points."""

    p: BenchPlant
    ms: float
    w: np.ndarray
    G: np.ndarray

    @classmethod
    def on_grid(cls, p: BenchPlant, ms_limit: float) -> _KiMax:
        w = frequency_grid(p)
        return cls(p, ms_limit, w, plant_response(p, w))

    def grid(self, kps) -> np.ndarray:
        return ki_limit(self.G, self.w, kps, self.ms)

    def __call__(self, kp: float) -> float:
        kp = float(kp)
        P = kp * self.G
        Q = -1j * self.G / self.w
        lo, hi = _roots(np.abs(Q) ** 2, np.real((1 + P) * np.conj(Q)),
                        np.abs(1 + P) ** 2 - self.ms ** -2)
        if np.any((lo <= 0) & (hi > 0)):
            return math.nan
        bound = np.where(lo > 0, lo, np.inf)
        i = int(np.argmin(bound))
        best = float(bound[i])
        if not math.isfinite(best) or i == 0 or i == self.w.size - 1:
            return best

        def f(x):
            wx = np.array([10.0 ** x])
            G = plant_response(self.p, wx)
            Px, Qx = kp * G, -1j * G / wx
            lo_x, _ = _roots(np.abs(Qx) ** 2, np.real((1 + Px) * np.conj(Qx)),
                             np.abs(1 + Px) ** 2 - self.ms ** -2)
            v = float(lo_x[0])
            return v if v > 0 else best

        a, b = math.log10(self.w[i - 1]), math.log10(self.w[i + 1])
        res = minimize_scalar(f, bounds=(a, b), method="bounded",
                              options={"xatol": 1e-10 * (b - a)})
        return min(best, float(res.fun))


def _kp_range(G, ms_limit: float) -> tuple[float, float]:
    """The interval around 0 of kp for which the P loop keeps ``|1 + kp G| >= 1/Ms``."""
    lo, hi = _roots(np.abs(G) ** 2, np.real(G), np.full(G.shape, 1.0 - ms_limit ** -2))
    up = lo[lo > 0]
    down = hi[hi < 0]
    return (float(np.max(down)) if down.size else -math.inf,
            float(np.min(up)) if up.size else math.inf)


def _figures(p, kp, ki) -> tuple[LoopFigures, float, float]:
    f = loop_figures(p, [kp, ki], [1.0, 0.0])
    if not f.stable:
        return f, math.inf, math.inf
    r = load_responses(p, [([kp, ki], [1.0, 0.0])])
    return f, float(r.iae[0]), float(r.peak[0])


def migo_pi(p: BenchPlant, ms_limit: float = 1.4, n_kp: int = 161) -> PIDesign:
    """The MIGO PI: largest ki subject to ``Ms <= ms_limit`` (and closed-loop stability).

    ``ki_max(kp)`` comes from :func:`ki_limit` on a dense grid with the exact
    delay (refined at the binding frequency); kp runs over a grid spanning
    the P-loop's admissible range and the best grid point is polished by a
    bounded scalar search.  Stability is checked by the Nyquist criterion.

    References
    ----------
    .. [2] Astrom, Panagopoulos and Hagglund (1998).
    """
    kim = _KiMax.on_grid(p, ms_limit)
    kp_lo, kp_hi = _kp_range(kim.G, ms_limit)
    if p.integrating:
        kp_lo = 0.0
    if not math.isfinite(kp_lo):
        kp_lo = -kp_hi
    kps = np.linspace(kp_lo, kp_hi, n_kp)[1:-1]
    kis = kim.grid(kps)
    order = np.argsort(-np.nan_to_num(kis, nan=-1.0))
    for i in order[:10]:
        if not (kis[i] > 0) or not math.isfinite(kis[i]):
            continue
        if nyquist_unstable(p, [kps[i], kis[i] * (1 - 1e-6)], [1.0, 0.0], kim.w,
                            kim.G * (kps[i] - 1j * kis[i] * (1 - 1e-6) / kim.w)):
            continue
        a = kps[max(i - 1, 0)]
        b = kps[min(i + 1, kps.size - 1)]
        res = minimize_scalar(lambda x: -np.nan_to_num(kim(x), nan=0.0), bounds=(a, b),
                              method="bounded", options={"xatol": 1e-9 * (kp_hi - kp_lo)})
        kp, ki = (float(res.x), -float(res.fun)) if -res.fun > kis[i] else (kps[i], kis[i])
        f, iae, peak = _figures(p, kp, ki)
        if not f.stable:
            kp, ki = float(kps[i]), float(kis[i])
            f, iae, peak = _figures(p, kp, ki)
        return PIDesign(kp, ki, iae, peak, f.ms, f.noise_gain)
    raise ArithmeticError(f"{p.name}: no stable PI meets Ms <= {ms_limit}")


def best_pi_load_iae(p: BenchPlant, ms_limit: float = 1.4, migo: PIDesign | None = None,
                     n_kp: int = 17, fractions=(0.5, 0.65, 0.8, 0.9, 1.0),
                     ) -> PIDesign:
    """The PI with the least load IAE subject to ``Ms <= ms_limit``.

    Parametrised as ``ki = s ki_max(kp)`` with ``0 < s <= 1``: a batched
    grid over (kp, s) around the admissible kp range, then
    scipy.optimize.minimize (Nelder-Mead with bounds) on (kp, s) with the
    IAE from :func:`load_responses`.  Returns the MIGO design when it is
    better (the IAE is non-smooth at the constraint).

    References
    ----------
    .. [2] Astrom, Panagopoulos and Hagglund (1998) (IE versus IAE).
    """
    migo = migo_pi(p, ms_limit) if migo is None else migo
    kim = _KiMax.on_grid(p, ms_limit)
    kp_lo, kp_hi = _kp_range(kim.G, ms_limit)
    if p.integrating or not math.isfinite(kp_lo):
        kp_lo = 0.0 if p.integrating else -kp_hi
    span = kp_hi - kp_lo
    kps = np.linspace(kp_lo, kp_hi, n_kp + 2)[1:-1]
    kis = kim.grid(kps)
    cands = []
    for kp, km in zip(kps, kis, strict=True):
        if not (km > 0 and math.isfinite(km)):
            continue
        for s in fractions:
            cands.append((float(kp), float(s * km), s))
    cands = [c for c in cands if not nyquist_unstable(p, [c[0], c[1]], [1.0, 0.0], kim.w,
                                                      kim.G * (c[0] - 1j * c[1] / kim.w))]
    best = (migo.iae, migo.kp, 1.0)
    if cands:
        r = load_responses(p, [([kp, ki], [1.0, 0.0]) for kp, ki, _ in cands])
        j = int(np.argmin(r.iae))
        if r.iae[j] < best[0]:
            best = (float(r.iae[j]), cands[j][0], cands[j][2])
    scale = best[0]

    def cost(x):
        kp = kp_lo + x[0] * span
        km = kim(kp)
        if not (km > 0 and math.isfinite(km)):
            return 1e3
        ki = x[1] * km
        if nyquist_unstable(p, [kp, ki], [1.0, 0.0], kim.w, kim.G * (kp - 1j * ki / kim.w)):
            return 1e3
        return float(load_responses(p, [([kp, ki], [1.0, 0.0])]).iae[0]) / scale

    x0 = np.array([(best[1] - kp_lo) / span, best[2]])
    dx = 0.02 if x0[0] < 0.98 else -0.02
    simplex = np.array([x0, x0 + [dx, 0.0], x0 - [0.0, 0.05]])
    res = minimize(cost, x0, method="Nelder-Mead", bounds=[(0.0, 1.0), (0.05, 1.0)],
                   options={"xatol": 1e-5, "fatol": 1e-7, "maxfev": 70,
                            "initial_simplex": simplex})
    kp = kp_lo + float(res.x[0]) * span
    ki = float(res.x[1]) * kim(kp)
    f, iae, peak = _figures(p, kp, ki)
    if not iae < migo.iae:
        return migo
    return PIDesign(kp, ki, iae, peak, f.ms, f.noise_gain)
