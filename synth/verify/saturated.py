"""The loop with a limited actuator: reference and load steps through saturation and rate limit.

With ``[actuator]`` set, the verifier judges the time-domain requirements on
these responses instead of the linear ones (:func:`saturated_metrics`, called
by :func:`synth.verify.verdict.evaluate_model` for each plant model).  Two
experiments, as the contract's loop diagram has them:

* **reference**: a step of ``actuator.reference_step`` in the reference, no load;
* **load**: a step of ``actuator.load_step`` at the plant input (before the
  dead time, like the actuator output), reference 0.

The controller is implemented by the anti-windup law of
:mod:`synth.verify.antiwindup` (``A_o v = T r - S y + (A_o - R) u``), its
reference shaping included; ``u`` is ``v`` limited to the actuator's range
(as deviations from the operating point) and, with ``max_rate``, moved by at
most ``max_rate h`` per step.

Method.  A fixed step ``h`` (``h = T/m`` with a dead time ``T``, so the
delayed actuator output is already computed).  Plant, controller and
prefilter advance together with the exact hold integrals of
:func:`synth.verify.simulation.hold_integrals` for inputs linear over the
step, so the only approximation is that ``u`` is linear between samples
(exact while the actuator sits at a limit or ramps at its rate; error
``O(h^2)`` elsewhere).  ``u`` at the end of a step enters the controller and,
without dead time, the plant: since everything is linear in it, the end value
solves ``u = clip(a + beta u, L, H)`` exactly, ``u = clip(a / (1 - beta), L, H)``
(``L, H`` the position limits narrowed by the rate window).  Several
controllers (and both experiments) run as one batch on a common grid, so a
search over tracking times costs one time loop.

Horizon.  The linear loop's horizon (:func:`synth.verify.simulation.step_horizon`)
to begin with; the simulation then continues until a full linear horizon has
passed since the actuator was last limited, up to :data:`HORIZON_CAP` times
the linear horizon (a response still limited then is reported as not
settled, with a note).

References
----------
.. [1] G. F. Franklin, J. D. Powell and M. Workman, *Digital Control of
   Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 6 (hold equivalents).
.. [2] C. F. Van Loan, "Computing integrals involving the matrix
   exponential", IEEE Trans. Automatic Control 23(3), 1978.
.. [3] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
   sec. 3.5 (windup and its cures).
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np

from synth.verify.antiwindup import Implementation, implementation
from synth.verify.controller import Controller
from synth.verify.simulation import (
    StepResponse,
    hold_integrals,
    realise,
    step_horizon,
    step_metrics,
)

__all__ = [
    "HORIZON_CAP",
    "SaturatedLoop",
    "SaturatedResponse",
    "SaturatedVerdict",
    "saturated_metrics",
    "simulate_saturated",
]

#: Steps per linear horizon (the step is also at most a fifth of the fastest pole's time constant).
STEPS = 2000

#: Most steps per linear horizon: beyond it the step stays coarser and a note says so.
MAX_STEPS = 20000

#: Longest saturated simulation, in linear horizons.
HORIZON_CAP = 4.0

#: The saturated experiments, in order.
EXPERIMENTS = ("reference", "load")


@dataclass(frozen=True)
class SaturatedResponse:
    """One experiment of the loop with a limited actuator, normalised by its step size.

    Attributes
    ----------
    kind : {"reference", "load"}
    step : float
        Size of the step (reference or load).
    t : ndarray
        Sample times (s).
    y : ndarray
        Output over the step size.
    u : ndarray
        Actuator output (deviation from the operating point) over the step size.
    v : ndarray
        The controller's unlimited output over the step size.
    final_value : float or None
        Normalised output at rest (the linear loop's when its actuator value
        lies within the limits, else the output with the actuator held at the
        limit); ``None`` when there is no rest (the output ramps).
    limited_time : float
        Seconds during which the actuator was at a limit or at its rate.
    capped : bool
        The simulation reached :data:`HORIZON_CAP` with the actuator still limited.
    exact_delay : bool
    """

    kind: str
    step: float
    t: np.ndarray
    y: np.ndarray
    u: np.ndarray
    v: np.ndarray
    final_value: float | None
    limited_time: float
    capped: bool
    exact_delay: bool

    def as_step(self) -> StepResponse:
        """The response as a :class:`StepResponse` (for :func:`step_metrics`)."""
        return StepResponse(t=self.t, y=self.y, u=self.u,
                            final_value=math.nan if self.final_value is None
                            else self.final_value, exact_delay=self.exact_delay)


@dataclass(frozen=True)
class SaturatedLoop:
    """The two saturated experiments of one controller (``None``: not simulated)."""

    reference: SaturatedResponse | None
    load: SaturatedResponse | None


# ----------------------------------------------------------------------------------------------
# one system: plant + controller (+ prefilter) as hold-integral matrices
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _System:
    """The joint linear part of one loop, for inputs ``w = [u, p, 1]`` linear over a step."""

    A: np.ndarray          # (n, n)
    Bw: np.ndarray         # (n, 3): columns u (controller's anti-windup input), p (plant input), 1
    cv: np.ndarray         # v = cv z + dv_p p + dv_1
    dv_p: float
    dv_1: float
    cy: np.ndarray         # y = cy z + dy p
    dy: float


def _controller_ss(impl: Implementation):
    """State space of ``v = (T r - S y + (A_o - R) u) / A_o``: inputs ``[r, y, u]``.

    The transpose of :func:`scipy.signal.tf2ss`'s single-input realisation of
    the column ``[T, -S, A_o - R] / A_o`` (observer canonical form, minimal
    for the common denominator).
    """
    from scipy.signal import BadCoefficients, tf2ss

    A_o = np.asarray(impl.A_o, dtype=float)
    n = A_o.size - 1
    rows = np.zeros((3, n + 1))
    for i, p in enumerate((impl.T, -np.asarray(impl.S), np.polysub(A_o, impl.R))):
        p = np.asarray(p, dtype=float)
        rows[i, n + 1 - p.size:] = p
    if n == 0:
        return np.zeros((0, 0)), np.zeros((0, 3)), np.zeros((1, 0)), rows[:, 0][None, :] / A_o[0]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", BadCoefficients)
        A, B, C, D = tf2ss(rows, A_o)
    return A.T, C.T, B.T, D.T


def _system(plant_num, plant_den, impl: Implementation, r0: float) -> _System:
    """Joint state ``[plant, controller, prefilter]`` driven by ``u``, ``p`` and the reference ``r0``."""
    Ag, Bg, Cg, Dg = realise(plant_num, plant_den)
    Ac, Bc, Cc, Dc = _controller_ss(impl)
    if impl.prefilter is not None:
        Af, Bf, Cf, Df = realise(*impl.prefilter)
    else:
        Af, Bf, Cf, Df = (np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)),
                          np.ones((1, 1)))
    ng, nc, nf = Ag.shape[0], Ac.shape[0], Af.shape[0]
    n = ng + nc + nf
    dg, df = float(Dg[0, 0]), float(Df[0, 0])
    dcr, dcy = float(Dc[0, 0]), float(Dc[0, 1])
    A = np.zeros((n, n))
    Bw = np.zeros((n, 3))
    g, c, f = slice(0, ng), slice(ng, ng + nc), slice(ng + nc, n)
    A[g, g] = Ag
    A[c, g] = Bc[:, 1:2] @ Cg
    A[c, c] = Ac
    A[c, f] = Bc[:, 0:1] @ Cf
    A[f, f] = Af
    Bw[c, 0] = Bc[:, 2]
    Bw[g, 1] = Bg[:, 0]
    Bw[c, 1] = Bc[:, 1] * dg
    Bw[c, 2] = Bc[:, 0] * df * r0
    Bw[f, 2] = Bf[:, 0] * r0
    cv = np.concatenate([dcy * Cg[0], Cc[0], dcr * Cf[0]])
    cy = np.concatenate([Cg[0], np.zeros(nc + nf)])
    return _System(A=A, Bw=Bw, cv=cv, dv_p=dcy * dg, dv_1=dcr * df * r0, cy=cy, dy=dg)


def _rest(impl: Implementation, gnum, gden, r0: float, d0: float, lo: float, hi: float):
    """Output at rest of the limited loop, per unit of the step (see :attr:`SaturatedResponse.final_value`).

    One of ``r0`` (reference step) and ``d0`` (load step) is non-zero.  The
    linear loop's equilibrium comes from the unreduced polynomials at s = 0;
    when its actuator value lies outside ``[lo, hi]`` the actuator rests at
    the nearer limit and the plant's static gain gives the output (``None``
    for a plant with a pole at 0 held at a non-zero input, or a loop with a
    closed-loop pole at 0).
    """
    R0, S0, T0 = (float(np.polyval(p, 0.0)) for p in (impl.R, impl.S, impl.T))
    F0 = 1.0 if impl.prefilter is None else float(np.polyval(impl.prefilter[0], 0.0)
                                                  / np.polyval(impl.prefilter[1], 0.0))
    gn0, gd0 = float(np.polyval(gnum, 0.0)), float(np.polyval(gden, 0.0))
    char0 = R0 * gd0 + S0 * gn0
    if char0 == 0.0:
        return None
    size = r0 if r0 else d0
    if r0:   # per unit of reference: y = F T Gn / char, u = F T Gd / char
        y, u = F0 * T0 * gn0 / char0, F0 * T0 * gd0 / char0
    else:    # per unit of load at the plant input: y = Gn R / char, u = -S Gn / char
        y, u = gn0 * R0 / char0, -S0 * gn0 / char0
    if lo <= u * size <= hi:
        return y
    held = min(max(u * size, lo), hi)
    load = d0 if not r0 else 0.0
    if gd0 == 0.0:
        return None if held + load != 0.0 else 0.0
    return gn0 / gd0 * (held + load) / size


# ----------------------------------------------------------------------------------------------
# the time loop: affine modes, advanced a block of steps at a time
# ----------------------------------------------------------------------------------------------

#: Steps advanced by one block without dead time (matrix powers up to this order per mode).
BLOCK = 256

#: Steps of one block with a dead time (at most the steps per dead time): the block's
#: convolution with the delayed input grows with the square of its length.
DELAY_BLOCK = 64

#: Actuator modes: unlimited, at the upper or lower end, ramping up or down at the rate limit.
_MODES = ("free", "high", "low", "up", "down")


class _Row:
    """One loop and one experiment on the fixed grid ``t_k = k h``.

    The state ``s_k = [z_k, u_k, 1]`` (joint linear state, actuator output,
    a constant) moves by an affine map that depends only on the actuator's
    mode over the step (:data:`_MODES`), plus, with a dead time, the delayed
    plant input, which is known ``m`` steps ahead.  A block of up to
    :data:`BLOCK` steps in one mode is one matrix product with precomputed
    powers; the first step whose own mode differs (``u = clip(v*, L, H)``
    decides it) ends the block and starts the next one in that mode.  When a
    dead time spans fewer than :data:`DELAY_BLOCK` steps, the state past step
    ``m`` also carries the last ``m`` actuator outputs (the delay line,
    :meth:`_register_mode`), so a block may span many dead times.  The
    instance is the simulation's scratch space, used by one call only.
    """

    def __init__(self, sysm: _System, hold, h: float, m: int, lo: float, hi: float,
                 rate: float | None, r0: float, d0: float, k_cap: int):
        n = sysm.A.shape[0]
        self.n, self.m, self.d0 = n, m, d0
        self.lo, self.hi = lo, hi
        self.rh = math.inf if rate is None else rate * h
        # the system was built for a unit reference: the reference enters linearly
        Phi, G0, G1 = hold
        G0, G1 = G0.copy(), G1.copy()
        G0[:, 2] *= r0
        G1[:, 2] *= r0
        sysm = dataclasses.replace(sysm, dv_1=sysm.dv_1 * r0)
        if m:
            g0, g1 = G0[:, 0], G1[:, 0]
            gc = G0[:, 2] + G1[:, 2]
            const_v = sysm.dv_1
        else:
            # without dead time the plant input is u + d0 at every instant
            g0, g1 = G0[:, 0] + G0[:, 1], G1[:, 0] + G1[:, 1]
            gc = G0[:, 2] + G1[:, 2] + (G0[:, 1] + G1[:, 1]) * d0
            const_v = sysm.dv_1 + sysm.dv_p * d0
        beta = float(sysm.cv @ g1) + (0.0 if m else sysm.dv_p)
        self.ill_posed = not 1.0 - beta > 0.0
        gain = 1.0 if self.ill_posed else 1.0 / (1.0 - beta)
        # v*_{k+1} = alpha . s_k + rho . pi_k ;  pi_k = [p_start, p_end, p_right(k+1)]
        self.alpha = gain * np.concatenate([sysm.cv @ Phi, [sysm.cv @ g0, sysm.cv @ gc + const_v]])
        self.rho = gain * np.array([sysm.cv @ G0[:, 1], sysm.cv @ G1[:, 1], sysm.dv_p]) if m \
            else np.zeros(3)
        self.Phi, self.g0, self.g1, self.gc = Phi, g0, g1, gc
        self.Ep = np.stack([G0[:, 1], G1[:, 1]], axis=1) if m else np.zeros((n, 2))
        self.cy, self.dy = sysm.cy, sysm.dy
        self.dv_1, self.dv_p = sysm.dv_1, sysm.dv_p
        self._modes: dict[str, tuple] = {}
        self._maps: dict[str, tuple] = {}
        self._registers: dict[str, tuple] = {}
        self.S = np.zeros((k_cap + 1, n + 2))    # s_k
        self.S[:, n + 1] = 1.0
        self.V = np.zeros(k_cap + 1)             # v*_k, the controller's unlimited output
        self.limited = np.zeros(k_cap + 1, dtype=bool)   # u_k != v*_k (the actuator's mode)
        self.k = 0

    # -- the affine map of each mode ---------------------------------------------------------
    def _mode(self, name: str):
        """``(powers F^1..F^L, convolution matrix or None)`` of a mode, built on first use."""
        if name in self._modes:
            return self._modes[name]
        n = self.n
        F = np.zeros((n + 2, n + 2))
        E = np.zeros((n + 2, 3))
        F[:n, :n] = self.Phi
        F[:n, n] = self.g0
        F[:n, n + 1] = self.gc
        F[n + 1, n + 1] = 1.0
        E[:n, :2] = self.Ep
        if name == "free":
            F[:n] += np.outer(self.g1, self.alpha)
            F[n] = self.alpha
            E[:n] += np.outer(self.g1, self.rho)
            E[n] = self.rho
        elif name in ("high", "low"):
            c = self.hi if name == "high" else self.lo
            F[:n, n + 1] += self.g1 * c
            F[n, n + 1] = c
        else:
            step = self.rh if name == "up" else -self.rh
            F[:n, n] += self.g1
            F[:n, n + 1] += self.g1 * step
            F[n, n] = 1.0
            F[n, n + 1] = step
        self._maps[name] = (F, E)
        L = min(DELAY_BLOCK, self.m) if self.m else BLOCK
        powers = _powers(F, L)
        conv = None
        if self.m:
            # s_{k+j} gets sum_{i<j} F^(j-1-i) E pi_{k+i}: a block-Toeplitz matrix on the pi's
            PE = powers[:L] @ E                                   # (L, n+2, 3)
            conv = np.zeros((L, n + 2, L, 3))
            for j in range(1, L + 1):
                conv[j - 1, :, :j, :] = PE[j - 1::-1].transpose(1, 0, 2)
            conv = conv.reshape(L * (n + 2), L * 3)
        self._modes[name] = (powers[1:], conv)
        return self._modes[name]

    def _register_mode(self, name: str):
        """``(powers, a)`` of a mode on the state with the delay line, ``[s, u_{k-1} .. u_{k-m}]``.

        With fewer than :data:`DELAY_BLOCK` steps per dead time, the delayed
        input is known only a few steps ahead; past step ``m`` it is the
        actuator's own output ``m`` steps back, so the state carries those
        ``m`` values and a block spans many dead times.  ``a`` gives ``v*`` at
        the next step from the state.
        """
        if name in self._registers:
            return self._registers[name]
        self._mode(name)
        F, E = self._maps[name]
        n, m, d0 = self.n, self.m, self.d0
        D = n + 2 + m
        reg = n + 2                                   # index of u_{k-1}; u_{k-i} at reg + i - 1
        late = n if m == 1 else reg + m - 2           # u_{k+1-m}: the plant input's end value
        Fa = np.zeros((D, D))
        Fa[:n + 2, :n + 2] = F
        Fa[:n + 2, n + 1] += E @ np.full(3, d0)
        Fa[:n + 2, reg + m - 1] += E[:, 0]
        Fa[:n + 2, late] += E[:, 1] + E[:, 2]
        Fa[reg, n] = 1.0
        for i in range(1, m):
            Fa[reg + i, reg + i - 1] = 1.0
        a = np.zeros(D)
        a[:n + 2] = self.alpha
        a[n + 1] += float(self.rho.sum()) * d0
        a[reg + m - 1] += self.rho[0]
        a[late] += self.rho[1] + self.rho[2]
        # a block as long as memory allows (about 2 MB of powers), 64 to 256 steps
        L = int(min(BLOCK, max(DELAY_BLOCK, (1 << 18) // (D * D))))
        self._registers[name] = (_powers(Fa, L)[1:], a)
        return self._registers[name]

    def _forcing(self, k0: int, L: int) -> np.ndarray:
        """``pi_k`` for k0 <= k < k0 + L: the delayed plant input, known ``m`` steps ahead.

        ``[p(t_k+), p(t_k+1 -), p(t_k+1 +)]`` with ``p(t) = u(t - T) + d0`` for
        ``t > T`` and 0 before: the left and right limits differ only at ``t = T``.
        """
        n, m, d0 = self.n, self.m, self.d0
        j0 = k0 - m
        out = np.empty((L, 3))
        if j0 >= 0:   # the usual case: all of it behind the delay, no limit to tell apart
            q = self.S[j0:j0 + L + 1, n] + d0
            out[:, 0] = q[:L]
            out[:, 1] = out[:, 2] = q[1:]
            return out
        # q_j = u_j + d0 for j in [j0, j0 + L], zero for j < 0
        j = np.arange(j0, j0 + L + 1)
        q = np.zeros(L + 1)
        ok = j >= 0
        q[ok] = self.S[j[ok], n] + d0
        out[:, 0] = q[:L]
        out[:, 2] = q[1:]
        out[:, 1] = np.where(j[1:] >= 1, q[1:], 0.0)
        return out

    def _label(self, vstar, u) -> np.ndarray:
        """The mode (index into :data:`_MODES`) ``u' = clip(v*, L, H)`` picks at each step."""
        lo, hi, rh = self.lo, self.hi, self.rh
        if rh == math.inf:
            return (vstar > hi) * 1 + (vstar < lo) * 2
        up = u + rh
        down = u - rh
        out = np.where(vstar > np.minimum(hi, up), np.where(up >= hi, 1, 3), 0)
        return np.where(vstar < np.maximum(lo, down), np.where(down <= lo, 2, 4), out)

    def _label_one(self, vstar: float, u: float) -> int:
        """:meth:`_label` of one step, in plain floats."""
        up, down = u + self.rh, u - self.rh
        if vstar > min(self.hi, up):
            return 1 if up >= self.hi else 3
        if vstar < max(self.lo, down):
            return 2 if down <= self.lo else 4
        return 0

    def start(self) -> None:
        """The actuator at t = 0+, from the zero state (a rate-limited one cannot jump)."""
        n = self.n
        if self.m:
            v0 = self.dv_1                     # the plant input is still 0 behind the delay
        else:
            # v = dv_1 + dv_p (u + d0) with u = v: the loop's algebraic part at t = 0+
            q = 1.0 - self.dv_p
            v0 = (self.dv_1 + self.dv_p * self.d0) / q if q > 0 else self.dv_1
        self.V[0] = v0
        self.S[0, n] = 0.0 if self.rh != math.inf else min(max(v0, self.lo), self.hi)
        self.limited[0] = self.S[0, n] != v0

    def run(self, k_end: int) -> None:
        """Advance from the current step to ``k_end``."""
        n, m = self.n, self.m
        alpha, rho = self.alpha, self.rho
        k = self.k
        while k < k_end:
            if m and m < DELAY_BLOCK and k >= m:
                k = self._register_block(k, k_end)
                continue
            s = self.S[k]
            if m:
                Lmax = min(DELAY_BLOCK, m - k) if m < DELAY_BLOCK else DELAY_BLOCK
                Pi = self._forcing(k, Lmax)
                v_next = float(alpha @ s + rho @ Pi[0])
            else:
                v_next = float(alpha @ s)
            mode = self._label_one(v_next, float(s[n]))
            powers, conv = self._mode(_MODES[mode])
            L = min(powers.shape[0], k_end - k)
            block = powers[:L] @ s
            if m:
                L = min(L, Lmax)
                block = block[:L] + (conv @ np.pad(Pi, ((0, conv.shape[1] // 3 - Lmax), (0, 0)))
                                     .ravel()).reshape(-1, n + 2)[:L]
                vstar = block[:-1] @ alpha + Pi[1:L] @ rho
            else:
                vstar = block[:-1] @ alpha
            k = self._accept(k, mode, v_next, block, vstar)
        self.k = k

    def _accept(self, k: int, mode: int, v_next: float, block, vstar) -> int:
        """Keep the block's steps up to the first whose own mode differs; the new step index.

        The first step that differs ends the block: its state is right (the
        step before it was in the block's mode), and the next block starts
        from it in its own mode.
        """
        n = self.n
        wrong = np.flatnonzero(self._label(vstar, block[:-1, n]) != mode)
        take = block.shape[0] if wrong.size == 0 else int(wrong[0]) + 1
        self.S[k + 1:k + 1 + take] = block[:take, :n + 2]
        self.V[k + 1] = v_next
        self.V[k + 2:k + 1 + take] = vstar[:take - 1]
        self.limited[k + 1:k + 1 + take] = mode != 0
        return k + take

    def _register_block(self, k: int, k_end: int) -> int:
        """One block on the state with the delay line (:meth:`_register_mode`), from step k >= m."""
        n, m = self.n, self.m
        sigma = np.concatenate([self.S[k], self.S[k - 1::-1, n][:m] if k >= 1 else []])
        # the mode of the step from k, then the block in it
        a0 = self._register_mode("free")[1]
        v_next = float(a0 @ sigma)
        mode = self._label_one(v_next, float(sigma[n]))
        powers, a = self._register_mode(_MODES[mode])
        L = min(powers.shape[0], k_end - k)
        full = powers[:L] @ sigma
        vstar = full[:-1] @ a
        return self._accept(k, mode, v_next, full, vstar)

    def outputs(self, steps: int):
        """``(y, u, v, limited)`` at steps ``0..steps-1``."""
        n = self.n
        u = self.S[:steps, n]
        if self.m:
            j = np.arange(steps) - self.m
            p = np.where(j >= 0, u[np.maximum(j, 0)] + self.d0, 0.0)
        else:
            p = u + self.d0
        y = self.S[:steps, :n] @ self.cy + self.dy * p
        return y, u, self.V[:steps], self.limited[:steps]


def _powers(F: np.ndarray, L: int) -> np.ndarray:
    """``F^0 .. F^L`` by doubling: the first ``2^i`` powers times ``F^(2^i)`` give the next ones."""
    D = F.shape[0]
    powers = np.empty((L + 1, D, D))
    powers[0] = np.eye(D)
    have, Fp = 1, F
    while have <= L:
        take = min(have, L + 1 - have)
        powers[have:have + take] = powers[:take] @ Fp
        have += take
        Fp = Fp @ Fp
    return powers


def _step_size(plant, poles_fast: float, horizon: float, use_delay: bool):
    """``(h, m, coarse)``: step, steps per dead time (0 without one), whether MAX_STEPS bit."""
    h = horizon / STEPS
    if poles_fast > 0:
        h = min(h, 0.2 / poles_fast)
    coarse = h < horizon / MAX_STEPS
    h = max(h, horizon / MAX_STEPS)
    if not use_delay:
        return h, 0, coarse
    m = max(1, int(math.ceil(plant.dead_time / h)))
    return plant.dead_time / m, m, coarse


def simulate_saturated(plant, controllers, actuator, requirements=None,
                       exact_delay: bool = True, experiments=EXPERIMENTS
                       ) -> tuple[list[SaturatedLoop], dict[str, Any]]:
    """Reference and load steps of the loop with a limited actuator, for several controllers.

    Parameters
    ----------
    plant : synth.problem.plant.Plant
    controllers : sequence of Controller
        Simulated on one time grid (the finest and longest any of them needs).
    actuator : synth.problem.actuator.Actuator
    requirements : synth.problem.requirements.Requirements, optional
        For the horizon (settling and rise-time limits).
    exact_delay : bool
        Simulate a dead time exactly (default) or by the plant's Pade form.
    experiments : tuple of {"reference", "load"}
        Which steps to simulate (default both; the others are ``None``).

    Returns
    -------
    loops : list of SaturatedLoop
        One per controller.
    info : dict
        ``step`` (s), ``horizon`` (the linear one, s), ``coarse`` (the step
        limit bit), ``ill_posed`` (indices of controllers whose loop has no
        unique actuator value: ``1 + D_C D_G <= 0``).
    """
    from synth.numerics.poly import scaled_roots
    from synth.verify.loop import loop_polynomials

    controllers = [Controller.of(c) for c in controllers]
    impls = [implementation(c) for c in controllers]
    use_delay = exact_delay and plant.dead_time > 0
    horizon, fast = 0.0, 0.0
    for c in controllers:
        _, _, char = loop_polynomials(plant, c.num, c.den)
        poles = scaled_roots(char) if char.size > 1 else np.zeros(0, complex)
        horizon = max(horizon, step_horizon(poles, requirements, plant.dead_time))
        # the step resolves the loop's own fastest pole; with the exact delay, that of the
        # delay-free loop (the Pade form's fast poles only approximate the delay, which is
        # simulated exactly)
        if use_delay:
            char = np.polyadd(np.polymul(c.den, plant.rational_den),
                              np.polymul(c.num, plant.rational_num))
        poles = scaled_roots(char) if char.size > 1 else np.zeros(0, complex)
        if poles.size:
            fast = max(fast, float(np.max(np.abs(poles))))
    h, m, coarse = _step_size(plant, fast, horizon, use_delay)
    if use_delay and horizon / h > MAX_STEPS:
        # a dead time too short to resolve against the horizon: its Pade form
        use_delay = False
        h, m, coarse = _step_size(plant, fast, horizon, False)
    gnum, gden = ((plant.rational_num, plant.rational_den) if use_delay
                  else (plant.num, plant.den))
    lo, hi = actuator.deviation_limits
    k_first = int(math.ceil(horizon / h))
    k_cap = int(math.ceil(HORIZON_CAP * horizon / h))
    loops, ill = [], []
    for i, impl in enumerate(impls):
        pair = {}
        sysm = _system(gnum, gden, impl, 1.0)
        hold = hold_integrals(sysm.A, sysm.Bw, h)
        for kind in experiments:
            r0 = actuator.reference_step if kind == "reference" else 0.0
            d0 = actuator.load_step if kind == "load" else 0.0
            row = _Row(sysm, hold, h, m, lo, hi, actuator.max_rate, r0, d0, k_cap)
            if row.ill_posed and i not in ill:
                ill.append(i)
            row.start()
            row.run(k_first)
            # go on until a whole linear horizon has passed since the actuator was last limited
            while row.k < k_cap:
                hit = np.flatnonzero(row.limited[:row.k + 1])
                need = (int(hit[-1]) * h if hit.size else -math.inf) + horizon
                if need <= row.k * h:
                    break
                row.run(min(k_cap, max(row.k + 1, int(math.ceil(need / h)))))
            steps = row.k + 1
            y, u, v, limited = row.outputs(steps)
            size = r0 if kind == "reference" else d0
            y_rest = _rest(impl, plant.rational_num, plant.rational_den, r0, d0, lo, hi)
            pair[kind] = (SaturatedResponse(
                kind=kind, step=size, t=h * np.arange(steps), y=y / size, u=u / size,
                v=v / size, final_value=y_rest,
                limited_time=float(np.count_nonzero(limited[:-1]) * h),
                capped=bool(row.k >= k_cap and limited[-1]),
                exact_delay=use_delay or plant.dead_time == 0))
        loops.append(SaturatedLoop(reference=pair.get("reference"), load=pair.get("load")))
    info = {"step": h, "horizon": horizon, "coarse": coarse, "ill_posed": ill}
    return loops, info


# ----------------------------------------------------------------------------------------------
# metrics
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class SaturatedVerdict:
    """Time-domain metrics of the limited loop, and what a reader should know about them.

    Attributes
    ----------
    metrics : dict
        ``overshoot_percent``, ``settling_time``, ``rise_time``,
        ``steady_state_error``, ``final_value``, ``peak_control_effort``
        (reference step, normalised by its size), ``load_iae``, ``load_peak``
        (load step, normalised by its size), ``limited_time`` (reference
        step, seconds the actuator was limited).
    notes : tuple of str
    loop : SaturatedLoop
    """

    metrics: dict[str, Any]
    notes: tuple[str, ...]
    loop: SaturatedLoop


def response_metrics(loop: SaturatedLoop, band_percent: float) -> dict[str, Any]:
    """The metrics of :class:`SaturatedVerdict` from the two responses."""
    ref, load = loop.reference, loop.load
    if ref.final_value is None or not np.all(np.isfinite(ref.y)):
        out: dict[str, Any] = {"overshoot_percent": None, "settling_time": None,
                               "rise_time": None, "steady_state_error": None,
                               "final_value": None,
                               "peak_control_effort": float(np.max(np.abs(ref.u)))}
    else:
        out = step_metrics(ref.as_step(), band_percent)
    y = np.abs(load.y)
    out["load_iae"] = float(np.trapezoid(y, load.t)) if np.all(np.isfinite(y)) else None
    out["load_peak"] = float(np.max(y)) if np.all(np.isfinite(y)) else None
    out["limited_time"] = ref.limited_time
    return out


def saturated_metrics(problem, plant, controller, exact_delay: bool = True) -> SaturatedVerdict:
    """The time-domain metrics of one controller with the problem's actuator.

    Parameters
    ----------
    problem : synth.problem.requirements.Problem
        Its ``actuator`` (must be set) and requirements (settling band, horizon).
    plant : synth.problem.plant.Plant
        The plant model.
    controller : Controller
    exact_delay : bool

    Returns
    -------
    SaturatedVerdict
    """
    act = problem.actuator
    (loop,), info = simulate_saturated(plant, [controller], act, problem.requirements,
                                       exact_delay)
    notes = _notes(loop, info, act, problem)
    return SaturatedVerdict(metrics=response_metrics(loop, problem.requirements.settling_band),
                            notes=tuple(notes), loop=loop)


def combine_responses(linear: dict[str, Any], saturated: dict[str, Any]) -> dict[str, Any]:
    """Each time-domain metric as the worse of the linear and the saturated response.

    The linear loop is the loop's answer to small steps (the actuator never
    reaches a limit); the saturated one its answer to the actuator table's
    steps.  A requirement holds when it holds for both, so the metric is the
    worse value by the catalogue's order (an undefined value counts as
    unbounded); metrics without an order (the final value) and metrics the
    linear loop does not give come from the saturated response.
    """
    from synth.problem.catalogue import METRICS

    out = {}
    for key, sat in saturated.items():
        metric = METRICS.get(key)
        if key not in linear or metric is None or metric.better not in ("lower", "higher"):
            out[key] = sat
        else:
            lin = linear[key]
            out[key] = lin if metric.worse(lin, sat) else sat
    return out


def saturation_remark(entry, linear_value, saturated_value, limit, context=None) -> str:
    """What a violated time-domain limit's text adds with actuator limits: which response breaks it.

    ``" with the actuator limited; without saturation 8.1 %, which meets it"``:
    a design that meets a requirement only without saturation says so in
    its violations.  ``context`` is what :meth:`Requirement.assess` formats
    texts with (the file's requirements by key).
    """
    from synth.problem.catalogue import METRICS

    unit = METRICS[entry.metric].unit

    def shown(v):
        return "undefined" if v is None else f"{v:.3g}{' ' + unit if unit else ''}"

    lin_ok = entry.assess(linear_value, limit, context) is None
    sat_ok = entry.assess(saturated_value, limit, context) is None
    if lin_ok and not sat_ok:
        return (f" with the actuator limited; without saturation {shown(linear_value)}, "
                "which meets it")
    if sat_ok and not lin_ok:
        return (f" for small steps (the actuator within its limits); with it limited "
                f"{shown(saturated_value)}")
    return (f" (without saturation {shown(linear_value)}; with the actuator limited "
            f"{shown(saturated_value)})")


def _notes(loop: SaturatedLoop, info, act, problem) -> list[str]:
    """What a reader of the saturated metrics should know."""
    notes = []
    ref = loop.reference
    if info["ill_posed"]:
        notes.append("with the actuator limited the loop has no unique actuator value "
                     "(1 + D_C D_G <= 0 at infinite frequency): the saturated responses "
                     "are not meaningful")
    if info["coarse"]:
        notes.append(f"saturated simulation step {info['step']:.3g} s is coarser than the "
                     "fastest closed-loop pole asks for: its metrics are approximate")
    for r, what in ((ref, "reference"), (loop.load, "load")):
        scale = max(1.0, abs(r.final_value or 0.0))
        if not np.isfinite(r.y[-1]) or abs(r.y[-1]) > 100.0 * scale:
            notes.append(f"the output runs away after the {what} step of {r.step:.4g}: with the "
                         "actuator at a limit the loop cannot hold the plant")
        elif r.capped:
            notes.append(f"the actuator is still limited after {r.t[-1]:.4g} s of the {what} "
                         f"step of {r.step:.4g}: the loop cannot reach rest within its range")
    if ref.final_value is not None and ref.limited_time > 0:
        notes.append(f"the actuator is limited for {ref.limited_time:.3g} s of the reference "
                     f"step of {ref.step:.4g} ({act.describe()})")
    return notes
