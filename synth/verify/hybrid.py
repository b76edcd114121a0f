"""The sampled-data loop: a continuous plant behind a zero-order hold, run by the discrete controller.

The loop that runs on the machine::

    r --> [ discrete controller, every T ] --u[k]--> hold --> delay tau + dead time --> G(s) --> y(t)
                   ^                                                                       |
                   +------------------------ y(kT), sampled -------------------------------+

* :class:`HeldPlant` -- the plant's rational part ``G(s)`` with its input
  delayed by the dead time plus the computation delay ``theta = d T + phi``
  (``d`` whole periods, ``0 <= phi < T``): within each period the plant sees
  the output of ``d + 1`` samples ago until ``phi``, then the output of ``d``
  samples ago.  Everything is exact: the state over a held input moves by
  ``Phi(h) = expm(A h)`` and ``Gamma(h) = int_0^h expm(A t) dt B`` (Van Loan's
  block exponential), ``Phi - I`` is kept as ``A Psi`` so that fast sampling
  (``|A| T`` small) loses no digits.  The sample the controller reads is the
  output just before the new output acts (the left limit), so a plant with
  direct feedthrough never closes an algebraic loop.
* the controller is :meth:`synth.verify.discrete.DiscreteController.state_space`
  (the linear map read off the very program the exports print) or, with limits,
  the program itself run sample by sample.
* :class:`SampledLoop` joins them: the closed loop from sample to sample
  (its eigenvalues are the sampled loop's poles), the loop transfer function
  on the unit circle, the plant-gain factors that keep it stable, and the
  continuous output between the samples (:meth:`SampledLoop.simulate`).

Definitions (the sampled loop).  ``L(z) = C(z) Gd(z)`` with ``Gd`` the plant
behind the hold with its dead time and the computation delay, evaluated on
``z = exp(j w T)`` for ``0 < w <= pi / T``.  Gain crossover, phase margin,
gain margin and delay margin are read from ``L`` exactly as for a continuous
loop; ``Ms = max |1/(1 + L)|``, ``Mt = max |L/(1 + L)|`` and the noise gain
``max |C/(1 + L)|`` over the same range.  These are the sensitivities at the
sampling instants; the ripple between samples is judged in the time domain.

References
----------
.. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
   Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 4 (zero-order-hold
   equivalent, modified z-transform for a fractional delay), ch. 6 (frequency
   response of sampled systems), from memory.
.. [2] K. J. Astrom and B. Wittenmark, *Computer-Controlled Systems*, 3rd ed.,
   Prentice Hall, 1997, ch. 2 and 7 (sampling a system with a time delay; the
   inter-sample behaviour and the sensitivity of sampled loops), from memory.
.. [3] C. F. Van Loan, "Computing integrals involving the matrix exponential",
   IEEE Trans. Automatic Control 23(3), 1978.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.verify.simulation import realise

__all__ = [
    "MAX_NONLINEAR_SAMPLES",
    "UNIT_CIRCLE_TOL",
    "HeldPlant",
    "HybridResponse",
    "SampledFrequency",
    "SampledLoop",
    "factor_intervals",
    "held_plant",
    "real_points",
    "sampled_loop",
    "split_delay",
]

#: A closed-loop pole within this distance of the unit circle counts as on it (relative to the
#: circle's own radius 1, so no absolute tolerance on a frequency).
UNIT_CIRCLE_TOL = 1e-10

#: Samples per segment of the linear simulation; after each segment the stride doubles.
_SEGMENT = 2000
#: Output points per period between the samples (at least; a short run gets more).
_MIN_POINTS = 8
_MAX_POINTS = 32
#: Samples the saturated (sample-by-sample) simulation runs at most.
MAX_NONLINEAR_SAMPLES = 50_000


def split_delay(delay: float, period: float) -> tuple[int, float]:
    """``delay = whole * period + frac`` with ``0 <= frac < period`` (rounding at 1e-12 of T)."""
    whole = math.floor(delay / period + 1e-12)
    frac = delay - whole * period
    if frac <= 1e-12 * period:
        frac = 0.0
    return int(whole), float(frac)


def _pieces(A: np.ndarray, B: np.ndarray, h: float) -> tuple[np.ndarray, np.ndarray]:
    """``(Phi(h) - I, Gamma(h))`` for a held input, via ``Psi(h) = int_0^h expm(A t) dt``.

    ``Psi`` is read from the exponential of ``[[A, I], [0, 0]] h`` (Van Loan);
    ``Phi - I = A Psi`` and ``Gamma = Psi B`` keep their digits when ``|A| h`` is small.
    """
    from scipy.linalg import expm

    n = A.shape[0]
    if n == 0:
        return np.zeros((0, 0)), np.zeros(0)
    M = np.zeros((2 * n, 2 * n))
    M[:n, :n] = A * h
    M[:n, n:] = np.eye(n) * h
    P = expm(M)[:n, n:]
    return A @ P, P @ B


@dataclass(frozen=True, eq=False)
class HeldPlant:
    """The plant behind a zero-order hold with its input delay (see the module text).

    Attributes
    ----------
    period : float
        ``T``, seconds.
    delay : float
        Dead time plus computation delay, seconds.
    whole, frac : int, float
        ``delay = whole T + frac``, ``0 <= frac < T``.
    A, B, C, D : ndarray, ndarray, ndarray, float
        The rational part ``G(s)`` (:func:`synth.verify.simulation.realise`),
        ``B`` and ``C`` as vectors.
    dead_time : float
        The plant's own dead time (a load at the plant input reaches the
        rational part after it).
    map : tuple of ndarray
        ``(Phi(T) - I, G_old, G_new)``: ``x[k+1] = Phi x + G_old u[k-d-1] + G_new u[k-d]``.
    """

    period: float
    delay: float
    whole: int
    frac: float
    A: np.ndarray
    B: np.ndarray
    C: np.ndarray
    D: float
    dead_time: float
    map: tuple[np.ndarray, np.ndarray, np.ndarray]

    @property
    def order(self) -> int:
        return self.A.shape[0]

    @property
    def pipeline(self) -> int:
        """Past outputs the loop must remember: ``u[k-1] .. u[k-pipeline]``."""
        if self.frac > 0 or self.D != 0:
            return self.whole + 1
        return self.whole

    def pieces(self, h: float) -> tuple[np.ndarray, np.ndarray]:
        """``(Phi(h) - I, Gamma(h))`` for a held input over ``h`` seconds."""
        return _pieces(self.A, self.B, h)

    def period_map(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """``(Phi(T) - I, G_old, G_new)``: ``x[k+1] = Phi x + G_old u[k-d-1] + G_new u[k-d]``."""
        return self.map

    def response(self, q) -> np.ndarray:
        """``Gd(z)`` at ``z = exp(q)`` (``q = s T``; ``q = j w T`` on the unit circle), vectorised.

        ``Gd(z) = C (zI - Phi)^-1 (G_old z^-(d+1) + G_new z^-d) + D z^-(d+1)``; ``zI - Phi``
        is formed as ``(z - 1) I - (Phi - I)`` with ``z - 1 = expm1(q)``.
        """
        q = np.asarray(q, dtype=complex)
        z = np.exp(q)
        zm1 = np.expm1(q)
        d = self.whole
        out = self.D * z ** (-(d + 1))
        n = self.order
        if n == 0:
            return out
        PmI, Go, Gn = self.period_map()
        M = zm1[..., None, None] * np.eye(n) - PmI
        rhs = np.broadcast_to(np.stack([Go, Gn], axis=-1), M.shape[:-2] + (n, 2))
        try:
            X = np.linalg.solve(M, rhs)
        except np.linalg.LinAlgError:
            # z exactly at a pole of the plant (1/s at z = 1): infinite there, finite elsewhere
            flat, rf = M.reshape(-1, n, n), rhs.reshape(-1, n, 2)
            X = np.empty(rf.shape, dtype=complex)
            for i in range(flat.shape[0]):
                try:
                    X[i] = np.linalg.solve(flat[i], rf[i])
                except np.linalg.LinAlgError:
                    X[i] = complex(math.inf, 0.0)
            X = X.reshape(rhs.shape)
        cx = np.einsum("i,...ij->...j", self.C, X)
        return out + cx[..., 0] * z ** (-(d + 1)) + cx[..., 1] * z ** (-d)


def held_plant(plant, period: float, compute_delay: float = 0.0) -> HeldPlant:
    """The plant of ``plant`` behind a hold sampled every ``period`` with ``compute_delay``.

    Parameters
    ----------
    plant : synth.problem.plant.Plant
        Its rational part and exact dead time.
    period, compute_delay : float
        Seconds.

    Returns
    -------
    HeldPlant
    """
    A, B, C, D = realise(plant.rational_num, plant.rational_den)
    T = float(period)
    delay = float(plant.dead_time) + float(compute_delay)
    whole, frac = split_delay(delay, T)
    b = B[:, 0].copy() if B.size else np.zeros(0)
    n = A.shape[0]

    def pieces(h):
        return _pieces(A, b, h)

    with np.errstate(over="ignore", invalid="ignore"):  # judged below: finite or refused
        if frac == 0.0:
            PmI, G = pieces(T)
            period_map = (PmI, np.zeros_like(G), G)
        else:
            Pa, Ga = pieces(T - frac)
            Pb, Gb = pieces(frac)
            # (Pa + I)(Pb + I) - I, without forming I + something small
            period_map = (Pa + Pb + Pa @ Pb, (Pa + np.eye(n)) @ Gb, Ga)
    from synth.problem.limits import MAX_MAGNITUDE

    if not all(np.all(np.isfinite(m)) and np.all(np.abs(m) <= MAX_MAGNITUDE)
               for m in period_map):
        from synth.errors import InputError

        fast = max(np.real(np.linalg.eigvals(A))) if n else 0.0
        raise InputError(f"over one period of {T:g} s the plant's unstable mode (growth rate "
                         f"{fast:.4g} 1/s) grows by more than {MAX_MAGNITUDE:g}, beyond any "
                         "sampled control; sample faster", key="sampling.period")
    return HeldPlant(period=T, delay=delay, whole=whole, frac=frac, A=A, B=b,
                     C=C[0].copy() if C.size else np.zeros(0), D=float(D[0, 0]),
                     dead_time=float(plant.dead_time), map=period_map)


# ----------------------------------------------------------------------------------------------
# the period map of the plant with output points between the samples
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class _PlantPeriod:
    """One period of the plant for held inputs, with the output at points inside it.

    ``x' = x + PmI x + g_old v_old + g_new v_new + g_load dl``;
    ``y(points) = Yx x + y_old v_old + y_new v_new + y_load dl``.
    ``v_old`` acts on ``[0, frac)``, ``v_new`` on ``[frac, T)``; the load ``dl`` is
    gated off before ``switch`` and on after it (``gate`` gives both sides).
    """

    points: np.ndarray
    PmI: np.ndarray
    g_old: np.ndarray
    g_new: np.ndarray
    g_load: np.ndarray
    Yx: np.ndarray
    y_old: np.ndarray
    y_new: np.ndarray
    y_load: np.ndarray


def _plant_period(hp: HeldPlant, m: int, gate: tuple[bool, bool, bool],
                  switch: float | None = None) -> _PlantPeriod:
    """The plant over one period, output at ``m`` even points plus the input switch points.

    ``gate = (before the period, on [0, switch), on [switch, T))`` for the load;
    without ``switch`` the middle flag holds over the whole period.
    """
    T, f, n = hp.period, hp.frac, hp.order
    pts = {j * T / m for j in range(m)}
    if 0 < f < T:
        pts.add(f)
    if switch is not None and 0 < switch < T:
        pts.add(switch)
    points = np.array(sorted(pts))
    ends = np.append(points[1:], T)
    cache: dict[float, tuple[np.ndarray, np.ndarray]] = {}

    def piece(h):
        if h not in cache:
            cache[h] = hp.pieces(h)
        return cache[h]

    # x(s) = (I + P) x0 + a v_old + b v_new + c dl, tracked through the pieces
    P = np.zeros((n, n))
    a, b, c = np.zeros(n), np.zeros(n), np.zeros(n)
    Yx = np.zeros((points.size, n))
    yo, yn, yl = np.zeros(points.size), np.zeros(points.size), np.zeros(points.size)
    D = hp.D
    # the output at the start of the period: the input just before it
    Yx[0] = hp.C
    yo[0] = D
    yl[0] = D * float(gate[0])
    for i, (s0, s1) in enumerate(zip(points, ends, strict=True)):
        old = s0 < f
        on = gate[1] if (switch is None or s0 < switch) else gate[2]
        h = float(s1 - s0)
        PmI, G = piece(h)
        # x(s1) = x(s0) + PmI x(s0) + G v
        P = P + PmI + PmI @ P
        a, b, c = a + PmI @ a, b + PmI @ b, c + PmI @ c
        if old:
            a = a + G
        else:
            b = b + G
        if on:
            c = c + G
        if i + 1 < points.size:
            k = i + 1
            Yx[k] = hp.C + hp.C @ P
            yo[k] = hp.C @ a + (D if old else 0.0)
            yn[k] = hp.C @ b + (0.0 if old else D)
            yl[k] = hp.C @ c + (D if on else 0.0)
    return _PlantPeriod(points=points, PmI=P, g_old=a, g_new=b, g_load=c, Yx=Yx, y_old=yo,
                        y_new=yn, y_load=yl)


# ----------------------------------------------------------------------------------------------
# the loop
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class HybridResponse:
    """The sampled loop's response: the continuous output between samples, the sampled output.

    Attributes
    ----------
    t, y : ndarray
        Times and the plant output there (points inside every simulated
        period, the samples included; left limits at input switches).
    u : ndarray
        The controller's output held from each sample time in ``t`` (the
        value acting on the interval that starts there, before the
        computation delay and dead time).
    t_samples, y_samples, u_samples : ndarray
        At the sampling instants: the measurement the controller read and
        the output it computed.
    final_value : float
        The linear loop's exact steady output (NaN when unstable).
    stride : int
        Largest stride between simulated periods (1: every period simulated;
        more on long horizons, where the periods in between are skipped).
    limited : bool
        Simulated sample by sample through the limits.
    """

    t: np.ndarray
    y: np.ndarray
    u: np.ndarray
    t_samples: np.ndarray
    y_samples: np.ndarray
    u_samples: np.ndarray
    final_value: float
    stride: int = 1
    limited: bool = False


@dataclass(frozen=True)
class SampledFrequency:
    """The sampled loop's frequency response on the unit circle and the facts read from it.

    Attributes
    ----------
    w : ndarray
        Frequencies (rad/s), up to the Nyquist frequency ``pi / T`` inclusive.
    loop : ndarray of complex
        ``L(exp(j w T)) = C(z) Gd(z)``.
    crossover_frequency, phase_margin_deg, gain_margin_db, delay_margin : float or None
        As for a continuous loop (``None``: unbounded or undefined).
    peak_sensitivity, peak_complementary_sensitivity, noise_gain : float
        ``max |1/(1+L)|``, ``max |L/(1+L)|``, ``max |C/(1+L)|``.
    real_crossings : tuple of (float, float)
        ``(w, L)`` where ``L`` is real (candidate gain boundaries ``-1/L``).
    """

    w: np.ndarray
    loop: np.ndarray
    crossover_frequency: float | None
    phase_margin_deg: float | None
    gain_margin_db: float | None
    delay_margin: float | None
    peak_sensitivity: float
    peak_complementary_sensitivity: float
    noise_gain: float
    real_crossings: tuple[tuple[float, float], ...]

    def metrics(self) -> dict:
        """The verdict's frequency metrics."""
        return {"gain_margin_db": self.gain_margin_db, "phase_margin_deg": self.phase_margin_deg,
                "delay_margin": self.delay_margin,
                "crossover_frequency": self.crossover_frequency,
                "peak_sensitivity": self.peak_sensitivity,
                "peak_complementary_sensitivity": self.peak_complementary_sensitivity,
                "noise_gain": self.noise_gain}


def real_points(fun, t) -> list[tuple[float, complex]]:
    """Where a complex function of a real parameter is real: ``[(t, fun(t)), ...]``.

    Sign changes of ``Im f / |f|`` on the grid ``t`` (ascending), each refined
    by :func:`scipy.optimize.brentq`; grid points where it is exactly real
    count too.  ``fun`` takes an array of parameters (vectorised) and a scalar.
    """
    from scipy.optimize import brentq

    t = np.asarray(t, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        f = np.asarray(fun(t), dtype=complex)
        im = np.where(np.isfinite(f), f.imag / np.maximum(np.abs(f), 1e-300), np.nan)
    out: list[tuple[float, complex]] = []

    def rel_im(x):
        v = complex(fun(x))
        return v.imag / max(abs(v), 1e-300)

    ok = np.isfinite(im[:-1]) & np.isfinite(im[1:])
    for i in np.flatnonzero(ok & (np.sign(im[:-1]) * np.sign(im[1:]) < 0)):
        try:
            x = brentq(rel_im, t[i], t[i + 1], xtol=4 * np.finfo(float).eps * abs(t[i + 1]))
        except ValueError:
            continue
        v = complex(fun(x))
        if np.isfinite(v.real):
            out.append((float(x), v))
    for i in np.flatnonzero(im == 0):
        out.append((float(t[i]), complex(f[i])))
    return out


def factor_intervals(candidates, member, scale: float = 1.0
                     ) -> list[tuple[float | None, float | None]]:
    """Open intervals of real factors where ``member(factor)`` holds, from boundary candidates.

    Membership can change only at a candidate (there a pole sits on the boundary, so the
    candidate itself is never a member); one test inside each gap, and beyond both ends,
    decides the gap.  ``scale`` is a typical factor (1 for a dimensionless plant-gain
    factor; the loop's own gain scale for a proportional gain), so the probes beyond the
    ends carry no absolute size.  ``None`` marks an unbounded end.
    """
    c = sorted({float(x) for x in candidates if np.isfinite(x)})

    def inside(a, b):
        if a is None and b is None:
            return scale
        if a is None:
            return b - max(abs(b), scale)
        if b is None:
            return a + max(abs(a), scale)
        if a > 0 and b > 0:
            return math.sqrt(a * b)
        if a < 0 and b < 0:
            return -math.sqrt(a * b)
        return 0.5 * (a + b)

    return [(a, b) for a, b in zip([None, *c], [*c, None], strict=True) if member(inside(a, b))]


def _shift_to_one(p) -> np.ndarray:
    """Coefficients of ``p(1 + e)`` in descending powers of ``e`` (Taylor shift by Horner)."""
    c = np.array(p, dtype=float)
    n = c.size - 1
    for i in range(n):
        for j in range(1, n - i + 1):
            c[j] += c[j - 1]
    return c


@dataclass(frozen=True, eq=False)
class SampledLoop:
    """The plant behind its hold and the linear discrete controller, as one loop.

    Build it with :func:`sampled_loop`.

    Attributes
    ----------
    plant : HeldPlant
    controller : synth.verify.discrete.DiscreteController
    Ac, Bc, Cc, Dc : ndarray
        :meth:`~synth.verify.discrete.DiscreteController.state_space`.
    """

    plant: HeldPlant
    controller: object
    Ac: np.ndarray
    Bc: np.ndarray
    Cc: np.ndarray
    Dc: np.ndarray

    @property
    def period(self) -> float:
        return self.plant.period

    # -- from sample to sample ------------------------------------------------------------

    def _layout(self):
        hp = self.plant
        n, L, nc = hp.order, hp.pipeline, self.Ac.shape[0]
        return n, L, nc, n + L + nc

    def closed_loop_matrix(self, factor: float = 1.0) -> np.ndarray:
        """The loop from one sample to the next with no input, the plant gain times ``factor``.

        State ``[x, u[k-1] .. u[k-L], controller states]``; its eigenvalues are the
        closed-loop poles in z (every state of plant and controller, so a hidden
        cancellation cannot hide an unstable mode).
        """
        hp = self.plant
        n, L, nc, N = self._layout()
        d = hp.whole
        PmI, Go, Gn = hp.period_map()
        # measurement row: y = factor (C x + D u[k-d-1])
        ym = np.zeros(N)
        ym[:n] = factor * hp.C
        if hp.D != 0:
            ym[n + d] += factor * hp.D
        # output row: u = Cc xc + Dm y
        u = np.zeros(N)
        u[n + L:] = self.Cc
        u += self.Dc[1] * ym
        M = np.zeros((N, N))
        M[:n, :n] = np.eye(n) + PmI
        if hp.frac > 0:
            M[:n, n + d] += Go
        if d >= 1:
            M[:n, n + d - 1] += Gn
        else:
            M[:n] += np.outer(Gn, u)
        if L:
            M[n] = u
            for i in range(1, L):
                M[n + i, n + i - 1] = 1.0
        M[n + L:, n + L:] = self.Ac
        M[n + L:] += np.outer(self.Bc[:, 1], ym)
        return M

    def poles(self, factor: float = 1.0) -> np.ndarray:
        """Closed-loop poles in z (eigenvalues of :meth:`closed_loop_matrix`), sorted."""
        from scipy.linalg import eigvals

        M = self.closed_loop_matrix(factor)
        z = eigvals(M) if M.size else np.zeros(0, complex)
        return z[np.lexsort((z.imag, z.real))] if z.size else z

    def is_stable(self, factor: float = 1.0) -> bool:
        z = self.poles(factor)
        return bool(z.size == 0 or np.max(np.abs(z)) < 1.0 - UNIT_CIRCLE_TOL)

    # -- on the unit circle ---------------------------------------------------------------

    def controller_response(self, q) -> np.ndarray:
        """``C(z)`` at ``z = exp(q)``: each section's polynomials, shifted to ``z = 1``.

        Evaluated in powers of ``z - 1 = expm1(q)``, so a section's poles and zeros near
        ``z = 1`` (fast sampling) lose no digits beyond those of its coefficients.
        """
        q = np.asarray(q, dtype=complex)
        e = np.expm1(q)
        out = np.ones(q.shape, dtype=complex)
        for s in self.controller.sections:
            out = out * np.polyval(_shift_to_one(s.b), e) / np.polyval(_shift_to_one(s.a), e)
        return out

    def loop_response(self, q) -> np.ndarray:
        """``L(z) = C(z) Gd(z)`` at ``z = exp(q)``."""
        return self.controller_response(q) * self.plant.response(q)

    def frequency(self, grid) -> SampledFrequency:
        """The loop on the unit circle up to Nyquist: margins, peaks, real-axis crossings.

        Parameters
        ----------
        grid : array_like
            Frequencies (rad/s) to start from (the continuous loop's
            :func:`synth.verify.frequency.frequency_grid`); those at or above
            ``pi / T`` are dropped and the Nyquist frequency itself added, with
            a logarithmic stretch below it.  Crossings are refined by
            :func:`scipy.optimize.brentq`, the peaks by
            :func:`scipy.optimize.minimize_scalar`.
        """
        from synth.verify.frequency import gain_crossovers, refined_peak

        T = self.period
        nyq = math.pi / T
        g = np.asarray(grid, dtype=float)
        g = g[(g > 0) & (g < nyq)]
        lo = float(g[0]) if g.size else nyq * 1e-4
        w = np.unique(np.concatenate([g, np.geomspace(min(lo, nyq * 1e-3), nyq, 400)]))
        w[-1] = nyq

        def at(x):
            return complex(self.loop_response(1j * x * T))

        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            L = self.loop_response(1j * w * T)
            Cz = self.controller_response(1j * w * T)
        finite = np.isfinite(L)
        pms, dms, wcs = gain_crossovers(w, L, at)
        # every point where L is real: the gain boundaries -1/L and the gain margin
        crossings: list[tuple[float, float]] = [
            (x, float(v.real)) for x, v in real_points(
                lambda x: self.loop_response(1j * np.asarray(x) * T), w)]
        # both ends of the circle, z = 1 and z = -1, where L is real (or infinite at a pole)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            for x in (0.0, nyq):
                end = at(x)
                if np.isfinite(end.real) and np.isfinite(end.imag):
                    crossings.append((x, float(end.real)))
        crossings.sort()
        gms = [1.0 / abs(v) for _, v in crossings if -1.0 < v < 0.0]
        with np.errstate(divide="ignore", invalid="ignore"):
            S = np.where(finite, 1.0 / np.abs(1.0 + L), 0.0)
            Tc = np.where(finite, np.abs(L / (1.0 + L)), 1.0)
            N = np.abs(Cz / (1.0 + L))

        ms = refined_peak(w, S, lambda x: 1.0 / abs(1.0 + at(x)))[0]
        mt = refined_peak(w, Tc, lambda x: (lambda v: abs(v / (1.0 + v)))(at(x)))[0]
        ng = refined_peak(w, N, lambda x: abs(complex(self.controller_response(1j * x * T))
                                              / (1.0 + at(x))))[0]
        return SampledFrequency(
            w=w, loop=L, crossover_frequency=wcs[int(np.argmin(pms))] if pms else None,
            phase_margin_deg=min(pms) if pms else None,
            gain_margin_db=20.0 * math.log10(min(gms)) if gms else None,
            delay_margin=min(dms) if dms else None, peak_sensitivity=ms,
            peak_complementary_sensitivity=mt, noise_gain=ng,
            real_crossings=tuple(crossings))

    def stable_factor_range(self, freq: SampledFrequency) -> tuple[float | None, float | None] | None:
        """The interval of plant-gain factors around 1 that keeps the sampled loop stable.

        A closed-loop pole crosses the unit circle at factor ``k`` only where
        ``1 + k L(exp(j w T)) = 0``, i.e. at ``k = -1/L`` where ``L`` is real
        (``freq.real_crossings``, and ``k = 0`` when plant or controller alone is
        not stable); between consecutive candidates stability cannot change, so one
        eigenvalue test per gap decides it (:func:`factor_intervals`).  ``None``
        when the loop is unstable at factor 1; an end is ``None`` when unbounded.
        """
        if not self.is_stable(1.0):
            return None
        return _containing(self.stable_factor_intervals(freq), 1.0)

    def stable_factor_intervals(self, freq: SampledFrequency):
        """Every open interval of loop-gain factors (all reals) with a stable sampled loop."""
        cands = [-1.0 / v for _, v in freq.real_crossings if v != 0]
        if not self.open_loop_stable():
            cands.append(0.0)
        return factor_intervals(cands, self.is_stable)

    def open_loop_stable(self) -> bool:
        """Whether plant and controller are stable by themselves (factor 0)."""
        from scipy.linalg import eigvals

        hp = self.plant
        z = [np.zeros(0)]
        if hp.order:
            z.append(eigvals(np.eye(hp.order) + hp.period_map()[0]))
        if self.Ac.size:
            z.append(eigvals(self.Ac))
        z = np.concatenate(z)
        return bool(z.size == 0 or np.max(np.abs(z)) < 1.0 - UNIT_CIRCLE_TOL)

    # -- in time ----------------------------------------------------------------------------

    def final_value(self, reference: float = 1.0, load: float = 0.0) -> float:
        """The steady output of the linear loop for a constant reference and load (NaN if unstable)."""
        if not self.is_stable():
            return math.nan
        Mz, Y, _ = self._augmented(_plant_period(self.plant, 1, (True, True, True)))
        n = Mz.shape[0] - 2
        A = Mz[:n, :n]
        B = Mz[:n, n:] @ np.array([reference, load])
        x = np.linalg.solve(np.eye(n) - A, B)
        return float(Y[0, :n] @ x + Y[0, n:] @ np.array([reference, load]))

    def _augmented(self, pp: _PlantPeriod):
        """The period map over ``Z = [x, pipeline, controller, r, dl]`` and its output rows.

        Returns ``(M, Y, U)``: ``Z' = M Z``, ``y(points) = Y Z``, ``u[k] = U Z``.
        """
        hp = self.plant
        n, L, nc, N0 = self._layout()
        N = N0 + 2
        ir, il = N0, N0 + 1
        d = hp.whole

        old = np.zeros(N)  # u[k-d-1], the input before the switch (and just before the sample)
        if L >= d + 1:
            old[n + d] = 1.0
        ym = np.zeros(N)
        ym[:n] = hp.C
        ym += hp.D * old
        # the measurement's load part (left limit) is in pp.y_load[0]
        ym[il] += pp.y_load[0]
        u = np.zeros(N)
        u[n + L:n + L + nc] = self.Cc
        u[ir] += self.Dc[0]
        u += self.Dc[1] * ym
        new = np.zeros(N)
        if d >= 1:
            new[n + d - 1] = 1.0
        else:
            new = u.copy()
        M = np.zeros((N, N))
        M[:n, :n] = np.eye(n) + pp.PmI
        M[:n] += np.outer(pp.g_old, old) + np.outer(pp.g_new, new)
        M[:n, il] += pp.g_load
        if L:
            M[n] = u
            for i in range(1, L):
                M[n + i, n + i - 1] = 1.0
        M[n + L:n + L + nc, n + L:n + L + nc] = self.Ac
        M[n + L:n + L + nc] += np.outer(self.Bc[:, 1], ym)
        M[n + L:n + L + nc, ir] += self.Bc[:, 0]
        M[ir, ir] = 1.0
        M[il, il] = 1.0
        Y = np.zeros((pp.points.size, N))
        Y[:, :n] = pp.Yx
        Y += np.outer(pp.y_old, old) + np.outer(pp.y_new, new)
        Y[:, il] += pp.y_load
        Y[0] = ym  # the sample itself: the measurement the controller reads
        return M, Y, u

    def simulate(self, t_end: float, reference: float = 1.0, load: float = 0.0,
                 points: int | None = None) -> HybridResponse:
        """The loop from rest: a reference step at ``t = 0`` and a load step at the plant input.

        The reference is a step of ``reference`` seen from the first sample on;
        the load, a step of ``load`` added to the controller's output at the
        plant input at ``t = 0``, reaches the plant's rational part after its
        dead time.  The continuous output is exact at every point (the
        plant's state moves by the exact hold integrals between points).
        With the controller's limits or rate limit the loop runs sample by
        sample through the controller's own program; otherwise the linear
        period map is raised to powers (the stride doubles every 2000
        periods on long horizons, as in :func:`synth.verify.simulation.simulate_step`).

        Parameters
        ----------
        t_end : float
            Seconds to simulate (at least one period is).
        reference, load : float
            Step sizes.
        points : int, optional
            Output points per period (default: 32 on short runs, down to 8).

        Returns
        -------
        HybridResponse
        """
        c = self.controller
        if c.limits is not None or c.max_rate is not None:
            return self._simulate_limited(t_end, reference, load, points)
        return self._simulate_linear(t_end, reference, load, points)

    def _schedule(self, t_end: float, load: float):
        T = self.period
        periods = max(1, int(math.ceil(t_end / T)) + 1)
        if load != 0:
            k0, psi = split_delay(self.plant.dead_time, T)
        else:
            k0, psi = periods, 0.0
        return periods, k0, psi

    def _simulate_linear(self, t_end, reference, load, points) -> HybridResponse:
        from synth.verify.simulation import _powers

        T = self.period
        hp = self.plant
        periods, k0, psi = self._schedule(t_end, load)
        m = points or int(np.clip(40_000 // min(periods, _SEGMENT), _MIN_POINTS, _MAX_POINTS))
        n, L, nc, N0 = self._layout()
        z = np.zeros(N0 + 2)
        z[N0], z[N0 + 1] = reference, load
        off, on = (False, False, False), (True, True, True)
        if load == 0:
            plan = [(off, None, periods, True)]
        else:
            plan = [(off, None, min(k0, periods), False)] if k0 > 0 else []
            if k0 < periods:
                plan.append(((False, False, True), psi, 1, False) if psi > 0 else
                            ((False, True, True), None, 1, False))
                if periods - k0 - 1 > 0:
                    plan.append((on, None, periods - k0 - 1, True))
        phases = [(_plant_period(hp, m, g, switch=sw), count, stride_ok)
                  for g, sw, count, stride_ok in plan]
        ts, ys, us, tk, yk, uk = [], [], [], [], [], []
        k = 0
        stride_max = 1
        for pp, count, may_stride in phases:
            M, Y, U = self._augmented(pp)
            done = 0
            stride = 1
            Ms = M
            while done < count:
                steps = min(_SEGMENT, int(math.ceil((count - done) / stride)))
                if not may_stride:
                    steps = count - done
                Z = _powers(Ms, z, steps + 1)
                idx = k + stride * np.arange(steps)
                Yv = Z[:steps] @ Y.T
                uv = Z[:steps] @ U
                ts.append((idx[:, None] * T + pp.points[None, :]).ravel())
                ys.append(Yv.ravel())
                us.append(np.repeat(uv, pp.points.size))
                tk.append(idx * T)
                yk.append(Yv[:, 0])
                uk.append(uv)
                z = Z[steps]
                k += stride * steps
                done += stride * steps
                stride_max = max(stride_max, stride)
                if may_stride and done < count:
                    Ms = Ms @ Ms
                    stride *= 2
        t = np.concatenate(ts)
        return HybridResponse(t=t, y=np.concatenate(ys), u=np.concatenate(us),
                              t_samples=np.concatenate(tk), y_samples=np.concatenate(yk),
                              u_samples=np.concatenate(uk),
                              final_value=self.final_value(reference, load), stride=stride_max)

    def _simulate_limited(self, t_end, reference, load, points) -> HybridResponse:
        T = self.period
        hp = self.plant
        periods, k0, psi = self._schedule(t_end, load)
        periods = min(periods, MAX_NONLINEAR_SAMPLES)
        m = points or _MIN_POINTS
        maps = {}

        def period_for(k):
            if k < k0:
                key = (False, False, False, None)
            elif k == k0:
                key = (False, False, True, psi) if psi > 0 else (False, True, True, None)
            else:
                key = (True, True, True, None)
            if key not in maps:
                maps[key] = _plant_period(hp, m, key[:3], switch=key[3])
            return maps[key]

        n, d, L = hp.order, hp.whole, hp.pipeline
        x = np.zeros(n)
        pipe = [0.0] * L
        run = self.controller.start()
        t, y, u, tk, yk, uk = [], [], [], [], [], []
        for k in range(periods):
            pp = period_for(k)
            v_old = pipe[d] if L >= d + 1 and (hp.frac > 0 or hp.D != 0) else 0.0
            meas = float(hp.C @ x) + hp.D * v_old + pp.y_load[0] * load
            uk_ = float(run.step(reference, meas))
            v_new = pipe[d - 1] if d >= 1 else uk_
            yv = pp.Yx @ x + pp.y_old * v_old + pp.y_new * v_new + pp.y_load * load
            yv[0] = meas
            x = x + pp.PmI @ x + pp.g_old * v_old + pp.g_new * v_new + pp.g_load * load
            if L:
                pipe = [uk_, *pipe[:-1]]
            t.append(k * T + pp.points)
            y.append(yv)
            u.append(np.full(pp.points.size, uk_))
            tk.append(k * T)
            yk.append(meas)
            uk.append(uk_)
        fv = self.final_value(reference, load)
        return HybridResponse(t=np.concatenate(t), y=np.concatenate(y), u=np.concatenate(u),
                              t_samples=np.asarray(tk), y_samples=np.asarray(yk),
                              u_samples=np.asarray(uk), final_value=fv, limited=True)


def _containing(intervals, x: float):
    for lo, hi in intervals:
        if (lo is None or lo < x) and (hi is None or x < hi):
            return (lo, hi)
    return None


def sampled_loop(plant, controller) -> SampledLoop:
    """The sampled-data loop of ``plant`` and a :class:`~synth.verify.discrete.DiscreteController`.

    The computation delay is the controller's (``controller.compute_delay``).

    Parameters
    ----------
    plant : synth.problem.plant.Plant
    controller : synth.verify.discrete.DiscreteController

    Returns
    -------
    SampledLoop
    """
    hp = held_plant(plant, controller.period, controller.compute_delay)
    Ac, Bc, Cc, Dc = controller.state_space()
    return SampledLoop(plant=hp, controller=controller, Ac=Ac, Bc=Bc, Cc=Cc, Dc=Dc)
