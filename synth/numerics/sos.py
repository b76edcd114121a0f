"""Convex synthesis on an affine parametrisation of the closed loop.

Once the compensator denominator is fixed, the closed-loop characteristic
polynomial is affine in the remaining compensator parameters x:

    c(s; x) = c0 + M @ x        (descending powers of s, length n + 1)

with box bounds lo <= x <= hi. This module knows nothing about compensator
structures; the design pipeline builds (c0, M, lo, hi) from a structure with
its fixed part chosen, and maps x back to a compensator.

Two tools:

* :func:`place_poles_ls` -- constrained pole placement: a least-squares match
  of c(s; x) to a target polynomial with box bounds (a QP);
* :func:`certified_region_design` -- the convex inner approximation of the
  set of parameters that put every closed-loop root in the region
  R = {Re s <= -sigma} intersected with {damping >= zeta}: strict positive
  realness of c~ / d~ against a central polynomial d, on the polynomial
  shifted by the decay rate and on the polynomial rotated by the damping
  angle, each written as a sum-of-squares (semidefinite) constraint; the
  central polynomial is then moved to the last solution and the problem
  solved again.

The certificate is a sufficient condition and a solver's tolerance is not a
proof: every design returned here is re-checked (roots by the screening
kernel, the positivity of the certificate on a dense frequency grid) and the
pipeline verifies it again with the engine. The result comes from a linear
model: before use on a machine, check it against a model with saturation,
delay and nonlinearity, commission with reduced gains and hardware limits,
and follow the applicable codes, functional-safety standards and licensed
engineering practice.

cvxpy is imported inside the functions that need it, never at module import.

References
----------
.. [1] D. Henrion, M. Sebek and V. Kucera, "Positive polynomials and robust
   stabilization with fixed-order controllers", IEEE Trans. Automatic
   Control 48(7), 2003, pp. 1178-1186.
.. [2] Y. Nesterov, "Squared functional systems and optimization problems",
   in H. Frenk et al. (eds.), High Performance Optimization, Kluwer, 2000
   (Gram-matrix representation of nonnegative univariate polynomials).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from synth.numerics.screening import (
    in_region_batch,
    region_parameters,
    rotate_batch,
    taylor_shift_batch,
)

__all__ = [
    "Certificate",
    "CertifiedDesign",
    "certified_region_design",
    "place_poles_ls",
    "spr_polynomial",
    "target_polynomial",
]

#: Lower bound on the SOS margin eps in normalised units (frequency scaled so
#: the central polynomial's roots have unit geometric mean, leading coefficients
#: one); a certificate with less room than this is not trusted.
EPS_MIN = 1e-6
#: Upper cap on eps, so that a leading coefficient that grows with x cannot
#: make the margin objective unbounded.
EPS_MAX = 10.0
_GRID_POINTS = 4000


# ----------------------------------------------------------------------------
# values
# ----------------------------------------------------------------------------


def _frozen(a) -> np.ndarray:
    arr = np.array(a, dtype=float)
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True)
class Certificate:
    """One positivity certificate of a certified design.

    Attributes
    ----------
    kind : str
        ``"decay"`` (the shifted polynomial c(w - sigma); with sigma = 0 plain
        stability) or ``"damping"`` (the rotated polynomial c(w e^{j beta}),
        beta = pi/2 - arccos(zeta)).
    sigma, zeta : float
        The region the certificate was written for: the requested region or
        a tightened one inside it (see :func:`certified_region_design`), so
        it certifies the requested region too.
    central : ndarray
        The central polynomial d (descending powers of s, original units).
    poly : ndarray
        Real coefficients, descending powers of the real frequency w (rad/s),
        of p(w) = Re[c~(jw) conj(d~(jw))] for the returned c. p(w) > 0 for
        every real w is the certificate.
    gram : ndarray
        The positive semidefinite Gram matrix Q found by the solver, for the
        normalised problem (frequency w / omega0, c and d scaled).
    eps : float
        The normalised margin:
        p_n(v) - eps (1 + v^2)^n = [1, v, ..., v^n] Q [1, v, ..., v^n]'.
    omega0, scale : float
        The normalisation: p_n(v) = p(omega0 v) / scale.
    """

    kind: str
    sigma: float
    zeta: float
    central: np.ndarray
    poly: np.ndarray
    gram: np.ndarray
    eps: float
    omega0: float = 1.0
    scale: float = 1.0


@dataclass(frozen=True)
class CertifiedDesign:
    """Result of :func:`certified_region_design`.

    Attributes
    ----------
    x : ndarray or None
        The parameters (None when no feasible point was found).
    certified : bool
        True when the solver reported an optimal solution with eps >= EPS_MIN
        for every condition AND the a-posteriori checks passed: all roots of
        c(s; x) inside the requested region (eigenvalue-free screening kernel)
        and every certificate polynomial positive on a dense frequency grid.
    char_poly : ndarray or None
        c0 + M @ x, descending powers of s.
    depth : float
        How deep inside the region the roots of c lie (Notes of
        :func:`certified_region_design`); > 0 inside; nan when infeasible.
    margin : float
        The SOS margin eps of the returned design (normalised units).
    central : tuple of ndarray
        The central polynomials d used, in order (descending powers of s,
        monic).
    iterations : int
        Number of semidefinite programs solved.
    certificates : tuple of Certificate
        The certificates of the returned design (empty if none).
    status : str
        ``"certified"``; ``"unverified"`` (the solver claims feasibility, the
        a-posteriori check disagrees: do not trust x); ``"infeasible"``.
    omega_ref : float
        Frequency scale (rad/s) of the depth measure.
    """

    x: np.ndarray | None
    certified: bool
    char_poly: np.ndarray | None
    depth: float
    margin: float
    central: tuple = field(default_factory=tuple)
    iterations: int = 0
    certificates: tuple = field(default_factory=tuple)
    status: str = "infeasible"
    omega_ref: float = 1.0


# ----------------------------------------------------------------------------
# validation
# ----------------------------------------------------------------------------


def _check_affine(c0, M, lo, hi) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    try:
        c0 = np.asarray(c0, dtype=float)
        M = np.asarray(M, dtype=float)
    except (TypeError, ValueError):
        raise ValueError("c0 and M must be real numeric arrays") from None
    if c0.ndim != 1 or c0.size < 2:
        raise ValueError(f"c0 must be a 1-D coefficient array of length >= 2, got shape {c0.shape}")
    if M.ndim == 1:
        M = M[:, None]
    if M.ndim != 2 or M.shape[0] != c0.size or M.shape[1] == 0:
        raise ValueError(f"M must have shape ({c0.size}, p) with p >= 1, got {M.shape}")
    if not (np.isfinite(c0).all() and np.isfinite(M).all()):
        raise ValueError("c0 and M must be finite")
    p = M.shape[1]
    lo = np.broadcast_to(np.asarray(-np.inf if lo is None else lo, dtype=float), (p,)).copy()
    hi = np.broadcast_to(np.asarray(np.inf if hi is None else hi, dtype=float), (p,)).copy()
    if np.isnan(lo).any() or np.isnan(hi).any():
        raise ValueError("bounds lo and hi must not be nan")
    if np.any(lo > hi):
        k = int(np.flatnonzero(lo > hi)[0])
        raise ValueError(f"empty box: lo[{k}] = {lo[k]} > hi[{k}] = {hi[k]}")
    return c0, M, lo, hi


def _reference_point(lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Box centre where both ends are finite, else the point of the box nearest 0."""
    mid = np.clip(np.zeros_like(lo), lo, hi)
    both = np.isfinite(lo) & np.isfinite(hi)
    mid[both] = 0.5 * (lo[both] + hi[both])
    return mid


#: Interior-point iteration cap of one conic solve: the solver's own effort is
#: counted in iterations, never in seconds, so a run does not depend on the load.
SOLVER_MAX_ITER = 200
#: Iteration cap of the first-order fallback solver (SCS).
FALLBACK_MAX_ITER = 4000


def _solve(problem) -> bool:
    """Solve with Clarabel, falling back to SCS; True when optimal.

    Each solver runs under an iteration cap, never a time limit.  Only the
    solver's own failure (:class:`cvxpy.error.SolverError`: a numerical
    breakdown or an exhausted iteration cap) moves on to the fallback; any
    other exception is a bug and propagates.
    """
    import cvxpy as cp
    from cvxpy.error import SolverError

    for solver, opts in (("CLARABEL", {"max_iter": SOLVER_MAX_ITER}),
                         ("SCS", {"max_iters": FALLBACK_MAX_ITER})):
        # (a solver that is not installed raises SolverError too: the next one is tried)
        try:
            with warnings.catch_warnings():
                # an inaccurate solution is rejected below; no warning for users
                warnings.simplefilter("ignore")
                problem.solve(solver=solver, **opts)
        except SolverError:
            continue
        if problem.status == cp.OPTIMAL:
            return True
        if problem.status in (cp.INFEASIBLE, cp.UNBOUNDED):
            return False
    return False


# ----------------------------------------------------------------------------
# target polynomial
# ----------------------------------------------------------------------------


def target_polynomial(
    region,
    degree: int,
    natural_frequency: float | None = None,
    inward: float = 0.3,
    speedup: float = 2.0,
    spacing: float = 0.5,
) -> np.ndarray:
    """A monic polynomial whose roots lie inside the region, with room to spare.

    Parameters
    ----------
    region : object
        Has ``sigma`` (minimum decay rate) and ``zeta`` (minimum damping).
    degree : int
        Degree of the polynomial (>= 1).
    natural_frequency : float, optional
        Lower bound on the dominant pair's natural frequency (rad/s). Needed
        to set the speed when ``region.sigma`` is 0; defaults to 1 rad/s then.
    inward : float, optional
        How far the dominant pair moves inward from the region's corner:
        damping zeta + inward (1 - zeta) (at least 0.7) and decay rate
        (1 + inward) sigma.
    speedup, spacing : float, optional
        The other roots are real, at -wn (speedup + spacing k), k = 0, 1, ...,
        with wn the dominant pair's natural frequency.

    Returns
    -------
    ndarray, shape (degree + 1,)
        Monic coefficients, descending powers.

    Notes
    -----
    The dominant pair is placed at the corner of R (where the decay line
    meets the damping ray) moved inward: damping zeta_t = max(0.7,
    zeta + inward (1 - zeta)) capped at 0.98, decay rate
    sigma_t = max((1 + inward) sigma, zeta_t * natural_frequency), natural
    frequency wn = sigma_t / zeta_t. Degree 1 gives the single root -wn. The
    other roots are real and distinct (distinct roots keep the coefficient
    map well conditioned) and faster than the pair, the usual
    dominant-pole construction of classical design.

    References
    ----------
    .. [1] K. Ogata, "Modern Control Engineering", 5th ed., Prentice Hall,
       2010, sec. 5-3 (dominant closed-loop poles).
    """
    sigma, zeta = region_parameters(region)
    degree = int(degree)
    if degree < 1:
        raise ValueError(f"target degree must be >= 1, got {degree}")
    if not 0.0 < inward < 1.0:
        raise ValueError(f"inward must lie in (0, 1), got {inward}")
    if natural_frequency is not None and not (
        math.isfinite(natural_frequency) and natural_frequency > 0
    ):
        raise ValueError(f"natural_frequency must be a positive number, got {natural_frequency}")
    zeta_t = min(0.98, max(0.7, zeta + inward * (1.0 - zeta)))
    wn_floor = 1.0 if natural_frequency is None and sigma == 0.0 else (natural_frequency or 0.0)
    sigma_t = max((1.0 + inward) * sigma, zeta_t * wn_floor)
    wn = sigma_t / zeta_t
    if degree == 1:
        return np.array([1.0, wn])
    pair = wn * complex(-zeta_t, math.sqrt(1.0 - zeta_t**2))
    roots = [pair, pair.conjugate()]
    roots += [-wn * (speedup + spacing * k) for k in range(degree - 2)]
    return np.poly(roots).real


# ----------------------------------------------------------------------------
# constrained least-squares pole placement
# ----------------------------------------------------------------------------


def place_poles_ls(c0, M, target_poly, lo=None, hi=None) -> np.ndarray | None:
    """Bounded least-squares match of c0 + M x to a target polynomial.

    Parameters
    ----------
    c0 : array_like, shape (n + 1,)
        Closed-loop polynomial at x = 0, descending powers.
    M : array_like, shape (n + 1, p)
        Column j is d c / d x_j.
    target_poly : array_like, shape (m + 1,), m <= n
        Target polynomial (its roots are the desired closed-loop poles);
        shorter targets are left-padded with zeros.
    lo, hi : array_like or float, optional
        Box bounds (infinite entries allowed).

    Returns
    -------
    ndarray, shape (p,), or None
        The minimiser, or None when the solver fails.

    Notes
    -----
    Only the roots matter, so the target is first scaled to the closed-loop
    leading coefficient: c0[0] when that coefficient does not depend on x
    (M[0] = 0, the usual case), else its value at the box reference point
    (box centre; the point nearest 0 for an unbounded parameter). The misfit
    is measured coefficient by coefficient relative to the scaled target,
    sum_k ((c_k(x) - t_k) / |t_k|)^2 (floored at 1e-8 max|t|), which is
    invariant to the time scale of the problem. The QP is solved by cvxpy
    (Clarabel, SCS fallback).

    References
    ----------
    .. [1] S. Boyd and L. Vandenberghe, "Convex Optimization", Cambridge
       University Press, 2004, sec. 4.4 (bounded least squares as a QP).
    """
    import cvxpy as cp

    c0, M, lo, hi = _check_affine(c0, M, lo, hi)
    t = np.asarray(target_poly, dtype=float)
    if t.ndim != 1 or t.size > c0.size or t.size < 1 or not np.isfinite(t).all():
        raise ValueError(f"target_poly must be finite with at most {c0.size} coefficients")
    t = np.concatenate([np.zeros(c0.size - t.size), t])
    t_lead = t[np.flatnonzero(t)[0]] if np.any(t) else 0.0
    if t_lead == 0.0 or t[0] == 0.0:
        raise ValueError("target_poly must have the same degree as c0 + M x (nonzero leading coefficient)")
    if np.allclose(M[0], 0.0):
        lead = c0[0]
    else:
        lead = c0[0] + M[0] @ _reference_point(lo, hi)
    if lead == 0.0:
        return None
    t = t * (lead / t[0])
    w = 1.0 / np.maximum(np.abs(t), 1e-8 * np.abs(t).max())
    x = cp.Variable(M.shape[1])
    resid = cp.multiply(w, c0 + M @ x - t)
    cons = []
    fin_lo, fin_hi = np.isfinite(lo), np.isfinite(hi)
    if fin_lo.any():
        cons.append(x[np.flatnonzero(fin_lo)] >= lo[fin_lo])
    if fin_hi.any():
        cons.append(x[np.flatnonzero(fin_hi)] <= hi[fin_hi])
    prob = cp.Problem(cp.Minimize(cp.sum_squares(resid)), cons)
    if not _solve(prob) or x.value is None:
        return None
    return np.clip(np.asarray(x.value, dtype=float), lo, hi)


# ----------------------------------------------------------------------------
# the positivity condition
# ----------------------------------------------------------------------------


def _transform_matrix(n: int, kind: str, sigma: float, beta: float) -> np.ndarray:
    """Matrix T (complex, (n+1, n+1)) with T @ c = coefficients of c~ (descending)."""
    eye = np.eye(n + 1)
    if kind == "decay":
        return taylor_shift_batch(eye, -sigma).T.astype(complex)
    return rotate_batch(eye, beta).T


def _spr_matrix(d_tilde: np.ndarray) -> np.ndarray:
    """G with p_asc = Re(G @ a_asc): p(w) = Re[a(jw) conj(b(jw))], b = d_tilde.

    Both a (the variable polynomial) and b are taken in ASCENDING powers
    here; G has shape (2n + 1, n + 1).
    """
    b = d_tilde[::-1]
    n = b.size - 1
    g = np.zeros((2 * n + 1, n + 1), dtype=complex)
    for m in range(n + 1):
        ell = np.arange(n + 1)
        # term a_m (j)^m conj(b_l) (-j)^l contributes to w^(m + l)
        g[m + ell, m] = np.conj(b) * (1j) ** m * (-1j) ** ell
    return g


def spr_polynomial(c, d, region_part: str, sigma: float = 0.0, zeta: float = 0.0) -> np.ndarray:
    """Coefficients of p(w) = Re[c~(jw) conj(d~(jw))] in descending powers of w.

    Parameters
    ----------
    c, d : array_like, shape (n + 1,)
        Real polynomials in s, descending powers, same length.
    region_part : {"decay", "damping"}
        ``"decay"``: c~(w) = c(w - sigma). ``"damping"``: c~(w) = c(w e^{j beta})
        with beta = pi/2 - arccos(zeta).
    sigma, zeta : float
        Decay rate and damping of the region.

    Returns
    -------
    ndarray, shape (2n + 1,)
        Real coefficients; p > 0 on the real line (with c, d leading
        coefficients of one sign and d~ Hurwitz) certifies that c~ is Hurwitz.

    References
    ----------
    .. [1] D. Henrion, M. Sebek and V. Kucera, IEEE Trans. Automatic Control
       48(7), 2003, sec. II.
    """
    c = np.asarray(c, dtype=float)
    d = np.asarray(d, dtype=float)
    if c.shape != d.shape or c.ndim != 1:
        raise ValueError("c and d must be 1-D arrays of the same length")
    if region_part not in ("decay", "damping"):
        raise ValueError(f"region_part must be 'decay' or 'damping', got {region_part!r}")
    n = c.size - 1
    beta = 0.5 * math.pi - math.acos(zeta) if region_part == "damping" else 0.0
    tr = _transform_matrix(n, region_part, sigma, beta)
    g = _spr_matrix(tr @ d)
    return np.real(g @ (tr @ c)[::-1])[::-1]


def _weight_asc(n: int) -> np.ndarray:
    """Ascending coefficients of (1 + w^2)^n."""
    out = np.zeros(2 * n + 1)
    for k in range(n + 1):
        out[2 * k] = math.comb(n, k)
    return out


def _antidiagonal_selector(n: int) -> np.ndarray:
    """S with (S @ vec(Q))_k = sum_{i + j = k} Q[i, j], Q of size n + 1."""
    size = n + 1
    ii, jj = np.meshgrid(np.arange(size), np.arange(size), indexing="ij")
    sel = np.zeros((2 * n + 1, size * size))
    sel[(ii + jj).ravel(order="F"), np.arange(size * size)] = 1.0
    return sel


def _grid_positive(poly_desc: np.ndarray, omega0: float) -> bool:
    """p(w) > 0 on a dense grid of both signs of w (p is not even for the rotation)."""
    half = omega0 * np.logspace(-4, 4, _GRID_POINTS)
    w = np.concatenate([-half[::-1], [0.0], half])
    vals = np.polyval(poly_desc, w)
    return bool(np.all(vals > 0.0)) and poly_desc[0] > 0.0


# ----------------------------------------------------------------------------
# certified region design
# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class _Normalised:
    """The problem in normalised units: s = omega0 z, c scaled by 1/kappa."""

    c0: np.ndarray
    M: np.ndarray
    omega0: float
    kappa: float


def _normalise(c0, M, d, lo, hi) -> tuple[_Normalised, np.ndarray]:
    """Scale s = omega0 z (omega0 from d) and divide c by its reference leading coefficient."""
    n = c0.size - 1
    dd = d / d[0]
    omega0 = _root_scale(dd)
    # c(omega0 z) / omega0^n: the coefficient of z^(n-k) is c_k omega0^(-k)
    fs = omega0 ** np.arange(n + 1, dtype=float)
    c0n = c0 / fs
    Mn = M / fs[:, None]
    ref = c0n + Mn @ _reference_point(lo, hi)
    kappa = ref[0] if ref[0] > 0 else np.abs(ref).max()
    if not (math.isfinite(kappa) and kappa > 0):
        kappa = 1.0
    return _Normalised(c0n / kappa, Mn / kappa, omega0, kappa), dd / fs


def _root_scale(poly: np.ndarray) -> float:
    """Geometric mean modulus of the roots, |c_n / c_0|^(1/n) (1 if degenerate)."""
    n = poly.size - 1
    if n < 1 or poly[0] == 0.0 or poly[-1] == 0.0:
        return 1.0
    val = abs(poly[-1] / poly[0]) ** (1.0 / n)
    return val if math.isfinite(val) and val > 0 else 1.0


def _conditions(sigma: float, zeta: float) -> list[str]:
    """Which SPR conditions are needed: the damping sector implies stability."""
    conds = []
    if sigma > 0.0 or zeta == 0.0:
        conds.append("decay")
    if zeta > 0.0:
        conds.append("damping")
    return conds


def _depths(polys: np.ndarray, sigma: float, zeta: float, omega_ref: float) -> np.ndarray:
    """Depth of each polynomial's roots inside R (numpy.roots; small batches only).

    depth = min over roots of min((-Re s - sigma) / omega_ref,
    (damping(s) - zeta) / (1 - zeta)); the tightened region R_t of depth t
    has decay rate sigma + t omega_ref and damping zeta + t (1 - zeta).
    """
    polys = np.atleast_2d(polys)
    out = np.full(polys.shape[0], -np.inf)
    for i, p in enumerate(polys):
        r = np.roots(p)
        if r.size == 0 or not np.isfinite(r).all():
            continue
        mod = np.abs(r)
        damp = np.where(mod > 0, -r.real / np.where(mod > 0, mod, 1.0), -1.0)
        out[i] = min(
            float(np.min((-r.real - sigma) / omega_ref)),
            float(np.min((damp - zeta) / (1.0 - zeta))),
        )
    return out


def _tightened(sigma: float, zeta: float, t: float, omega_ref: float) -> tuple[float, float]:
    return sigma + t * omega_ref, min(zeta + t * (1.0 - zeta), 0.999)


def _bounded_lsq(a: np.ndarray, b: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray | None:
    """Bounded linear least squares for the sweep of starting points."""
    from scipy.optimize import lsq_linear

    try:
        res = lsq_linear(a, b, bounds=(lo, hi), method="bvls" if a.shape[1] <= 8 else "trf")
    except (ValueError, np.linalg.LinAlgError):
        return None
    return res.x if res.status >= 0 and np.isfinite(res.x).all() else None


def _pair_fits(c0, M, region, lo, hi, omega_c: float) -> list[np.ndarray]:
    """Parameters that place a dominant pair exactly, the other roots free.

    c0 + M x = (s^2 + 2 z wn s + wn^2) r(s) is linear in (x, r), so each
    pair on a grid of damping and natural frequency inside R is one bounded
    least-squares problem (the classical dominant-pole construction, see
    :func:`target_polynomial`).
    """
    sigma, zeta = float(region.sigma), float(region.zeta)
    n = c0.size - 1
    if n < 2:
        return []
    big = 1e30  # scipy's bounded solver wants finite-or-inf bounds per column
    lo_all = np.concatenate([lo, np.full(n - 1, -np.inf)])
    hi_all = np.concatenate([hi, np.full(n - 1, np.inf)])
    lo_all = np.where(np.isfinite(lo_all), lo_all, -big)
    hi_all = np.where(np.isfinite(hi_all), hi_all, big)
    out = []
    dampings = np.linspace(zeta + 0.25 * (1.0 - zeta), min(0.98, zeta + 0.9 * (1.0 - zeta)), 4)
    for z in dampings:
        wn_min = 1.05 * sigma / z if sigma > 0 else omega_c / 100.0
        for wn in np.geomspace(max(wn_min, omega_c / 100.0), max(wn_min, omega_c) * 30.0, 16):
            pair = np.array([1.0, 2.0 * z * wn, wn * wn])
            toep = np.zeros((n + 1, n - 1))
            for j in range(n - 1):
                toep[j : j + 3, j] = pair
            a = np.hstack([M, -toep])
            rows = np.maximum(np.abs(a).max(axis=1), np.abs(c0))
            rows = np.where(rows > 0, rows, 1.0)
            sol = _bounded_lsq(a / rows[:, None], -c0 / rows, lo_all, hi_all)
            if sol is not None:
                out.append(np.clip(sol[: M.shape[1]], lo, hi))
    return out


def _initial_centrals(c0, M, region, lo, hi, natural_frequency, samples, seed):
    """Starting central polynomials: the deepest achievable closed loop in R, then the target.

    Candidates: dominant-pair fits (:func:`_pair_fits`), least-squares fits
    to :func:`target_polynomial` over a sweep of natural frequencies, and
    seeded samples of a finite box (half uniform, half log-uniform in
    positive dimensions that span decades). All are screened with the
    eigenvalue-free kernel; the survivors are ranked by depth. The target
    polynomial itself comes last (inside R, maybe far from achievable).
    """
    sigma, zeta = float(region.sigma), float(region.zeta)
    n = c0.size - 1
    ref = _reference_point(lo, hi)
    lead = c0[0] + M[0] @ ref
    omega_c = _root_scale(c0 + M @ ref)
    base = target_polynomial(region, n, natural_frequency=natural_frequency)
    centre = max(omega_c, _root_scale(base))
    xs = _pair_fits(c0, M, region, lo, hi, centre)
    if lead != 0.0:
        for wn in np.geomspace(centre / 30.0, centre * 30.0, 16):
            t = target_polynomial(region, n, natural_frequency=wn)
            t = t * (lead / t[0])
            w = 1.0 / np.maximum(np.abs(t), 1e-8 * np.abs(t).max())
            x = _bounded_lsq(w[:, None] * M, w * (t - c0), lo, hi)
            if x is not None:
                xs.append(x)
    if samples > 0 and np.isfinite(lo).all() and np.isfinite(hi).all():
        rng = np.random.default_rng(seed)
        half = samples // 2
        xs.extend(lo + (hi - lo) * rng.random((samples - half, lo.size)))
        logu = lo + (hi - lo) * rng.random((half, lo.size))
        spans = (lo >= 0) & (hi > 0) & (hi > 100.0 * np.maximum(lo, 1e-300))
        if spans.any():
            a = np.log(np.maximum(lo[spans], hi[spans] * 1e-6))
            b = np.log(hi[spans])
            logu[:, spans] = np.exp(a + (b - a) * rng.random((half, int(spans.sum()))))
        xs.extend(logu)
    starts = []
    if xs:
        X = np.array(xs)
        C = c0[None, :] + X @ M.T
        inside = np.flatnonzero(in_region_batch(C, region) & (C[:, 0] > 0))
        if inside.size:
            pick = inside
            if pick.size > 300:  # root-based depth on a seeded subset only
                pick = np.random.default_rng(seed + 1).choice(inside, 300, replace=False)
            dep = _depths(C[pick], sigma, zeta, centre)
            starts.append(C[pick[int(np.argmax(dep))]])
    starts.append(base)
    return starts


def _move_into(d: np.ndarray, sigma: float, zeta: float) -> np.ndarray:
    """A polynomial like d with every root moved left just enough to lie in R(sigma, zeta).

    A root a + jb moves to (a - delta) + jb with the smallest delta >= 0 that
    gives decay > sigma and damping > zeta (both with 2 % room); roots
    already inside stay. Conjugate pairs move together, so the result is real.
    """
    r = np.roots(d)
    a, b = r.real, np.abs(r.imag)
    need_decay = 1.02 * sigma + a
    need_damp = 1.02 * zeta * b / math.sqrt(max(1.0 - (1.02 * zeta) ** 2, 1e-12)) + a
    # a real root needs -(a - delta) > 0 for damping 1: at least a tiny shift
    # (relative to the root's size, or to the polynomial's root scale for a root at 0)
    size = np.where(np.abs(r) > 0, np.abs(r), _root_scale(d))
    need_real = np.where(b == 0.0, a + 1e-9 * size, -np.inf)
    delta = np.maximum.reduce([np.zeros_like(a), need_decay, need_damp, need_real])
    delta = np.where(delta > 0, delta * 1.001, 0.0)
    return np.poly(r - delta).real * d[0]


def _sdp_once(nrm: _Normalised, d: np.ndarray, lo, hi, objective: str, sigma: float, zeta: float):
    """One semidefinite program for a fixed central polynomial (normalised units).

    ``sigma`` is in normalised units (divided by omega0).
    """
    import cvxpy as cp

    n = nrm.c0.size - 1
    kinds = _conditions(sigma, zeta)
    beta = 0.5 * math.pi - math.acos(zeta) if zeta > 0.0 else 0.0
    x = cp.Variable(nrm.M.shape[1])
    eps = cp.Variable()
    sel = _antidiagonal_selector(n)
    wgt = _weight_asc(n)
    cons = [eps >= EPS_MIN, eps <= EPS_MAX]
    grams = []
    for kind in kinds:
        tr = _transform_matrix(n, kind, sigma, beta)
        g = _spr_matrix(tr @ d)
        p0 = np.real(g @ (tr @ nrm.c0)[::-1])
        p1 = np.real(g @ (tr @ nrm.M)[::-1])
        q = cp.Variable((n + 1, n + 1), PSD=True)
        grams.append(q)
        cons.append(p0 + p1 @ x - eps * wgt == sel @ cp.vec(q, order="F"))
    fin_lo, fin_hi = np.isfinite(lo), np.isfinite(hi)
    if fin_lo.any():
        cons.append(x[np.flatnonzero(fin_lo)] >= lo[fin_lo])
    if fin_hi.any():
        cons.append(x[np.flatnonzero(fin_hi)] <= hi[fin_hi])
    if objective == "margin":
        obj = cp.Maximize(eps)
    else:  # "centre": stay near the central polynomial, relative coefficient error
        w = 1.0 / np.maximum(np.abs(d), 1e-8 * np.abs(d).max())
        obj = cp.Minimize(cp.sum_squares(cp.multiply(w, nrm.c0 + nrm.M @ x - d)))
    prob = cp.Problem(obj, cons)
    if not _solve(prob) or x.value is None or eps.value is None:
        return None
    return (
        kinds,
        np.asarray(x.value, dtype=float),
        float(eps.value),
        [np.asarray(q.value, dtype=float) for q in grams],
    )


@dataclass(frozen=True)
class _Try:
    """One solved and checked SDP."""

    x: np.ndarray
    depth: float
    eps: float
    certs: tuple
    verified: bool


def certified_region_design(
    c0,
    M,
    region,
    lo=None,
    hi=None,
    central=None,
    iterations: int = 20,
    objective: str = "margin",
    natural_frequency: float | None = None,
    samples: int = 2000,
    seed: int = 0,
    bisection_steps: int = 5,
) -> CertifiedDesign:
    """Parameters x whose closed loop c0 + M x is certified to have its roots in R.

    Parameters
    ----------
    c0 : array_like, shape (n + 1,)
        Closed-loop polynomial at x = 0, descending powers of s.
    M : array_like, shape (n + 1, p)
        Column j is d c / d x_j.
    region : object
        Has ``sigma`` (decay rate >= 0) and ``zeta`` (damping in [0, 1)).
    lo, hi : array_like or float, optional
        Box bounds on x (infinite entries allowed).
    central : array_like, shape (n + 1,), optional
        The first central polynomial d (every root inside R). When omitted,
        the deepest achievable closed loop found by a cheap screened sweep
        is used (then the convex set is certainly non-empty), and failing
        that the target polynomial of :func:`target_polynomial`.
    iterations : int, optional
        Budget of semidefinite programs (each is small: two Gram matrices of
        size n + 1).
    objective : {"margin", "centre"}, optional
        ``"margin"`` (robustness): push the certified region as deep into R
        as the structure allows (Notes). ``"centre"``: one solve per start,
        minimising the relative coefficient distance of c to d subject to
        the certificate for R.
    natural_frequency : float, optional
        Passed to :func:`target_polynomial`.
    samples : int, optional
        Box samples screened when choosing the first central polynomial.
    seed : int, optional
        Seed of those samples (same inputs + same seed = same design).
    bisection_steps : int, optional
        Bisection steps on the depth per round.

    Returns
    -------
    CertifiedDesign

    Notes
    -----
    Certificate. For each needed part of a region (the decay condition on
    c~(w) = c(w - sigma); for zeta > 0 the damping condition on
    c~(w) = c(w e^{j beta}), beta = pi/2 - arccos(zeta)), with d~ the same
    transform of d, the polynomial p(w) = Re[c~(jw) conj(d~(jw))] of degree
    2n is affine in x, and p(w) - eps (1 + w^2)^n = v' Q v with Q PSD,
    v = (1, w, ..., w^n), eps >= EPS_MIN, is enforced by coefficient
    matching; eps is maximised. p > 0 keeps c~(jw)/d~(jw) in the open right
    half plane, so by the argument principle c~ has as many left-half-plane
    roots as d~: all of them. Solved in normalised units (s = omega0 z,
    omega0 the geometric mean root modulus of d; d monic; c divided by its
    leading coefficient at the box reference point).

    Robustness objective. The tightened region R_t has decay rate
    sigma + t omega_ref and damping zeta + t (1 - zeta), t in [0, 1)
    (omega_ref: root scale of the first central polynomial); R_0 = R. The
    depth of a closed loop is the largest t with its roots in R_t. After a
    certificate for R itself, the largest t for which a certificate for R_t
    exists is found by bisection; at each t the central polynomial is d with
    its roots moved left just enough to lie in R_t (the argument needs d~
    Hurwitz; d need not be achievable). Then d is set to the deepest
    certified closed loop and the bisection repeated above the last t,
    until the budget is spent or t stops growing. Every certificate for R_t
    also certifies R, because R_t lies inside R. The deepest certified
    design is returned.

    References
    ----------
    .. [1] D. Henrion, M. Sebek and V. Kucera, "Positive polynomials and
       robust stabilization with fixed-order controllers", IEEE Trans.
       Automatic Control 48(7), 2003.
    .. [2] Y. Nesterov, "Squared functional systems and optimization
       problems", High Performance Optimization, Kluwer, 2000.
    """
    c0, M, lo, hi = _check_affine(c0, M, lo, hi)
    sigma, zeta = region_parameters(region)
    if objective not in ("margin", "centre"):
        raise ValueError(f"objective must be 'margin' or 'centre', got {objective!r}")
    iterations = int(iterations)
    if iterations < 1:
        raise ValueError(f"iterations must be >= 1, got {iterations}")

    # c must have a positive leading coefficient to match d's: flip the sign
    # of the whole parametrisation if needed (roots do not change)
    lead_ref = c0[0] + M[0] @ _reference_point(lo, hi)
    flip = -1.0 if lead_ref < 0 else 1.0
    c0s, Ms = flip * c0, flip * M

    if central is not None:
        d = np.asarray(central, dtype=float)
        if d.shape != c0.shape or not np.isfinite(d).all() or d[0] == 0.0:
            raise ValueError(
                f"central must be a finite polynomial of length {c0.size} "
                "with nonzero leading coefficient"
            )
        if not in_region_batch(d, region):
            raise ValueError("central polynomial must have every root inside the region")
        starts = [d / d[0]]
    else:
        starts = _initial_centrals(c0s, Ms, region, lo, hi, natural_frequency, int(samples), int(seed))
        starts = [s / s[0] for s in starts]

    omega_ref = _root_scale(starts[0])
    tried: list[np.ndarray] = []
    budget = [iterations]

    def attempt(t: float, d: np.ndarray, obj: str) -> _Try | None:
        if budget[0] <= 0:
            return None
        budget[0] -= 1
        sig_t, zet_t = _tightened(sigma, zeta, t, omega_ref)
        d_t = _move_into(d, sig_t, zet_t) if t > 0 else d
        d_t = d_t / d_t[0]
        tried.append(_frozen(d_t))
        nrm, dn = _normalise(c0s, Ms, d_t, lo, hi)
        out = _sdp_once(nrm, dn, lo, hi, obj, sig_t / nrm.omega0, zet_t)
        if out is None:
            return None
        kinds, x, eps, grams = out
        x = np.clip(x, lo, hi)
        c = c0s + Ms @ x
        certs = tuple(
            Certificate(
                k, sig_t, zet_t, _frozen(d_t),
                _frozen(spr_polynomial(c, d_t, k, sig_t, zet_t)), _frozen(q), eps,
                nrm.omega0, nrm.kappa * nrm.omega0 ** (2 * (c0.size - 1)),
            )
            for k, q in zip(kinds, grams, strict=True)
        )
        ok = bool(in_region_batch(c, region)) and all(
            _grid_positive(cert.poly, nrm.omega0) for cert in certs
        )
        depth = float(_depths(c, sigma, zeta, omega_ref)[0])
        return _Try(x, depth, eps, certs, ok)

    best: _Try | None = None
    unverified: _Try | None = None
    for d0 in starts:
        first = attempt(0.0, d0, objective)
        if first is None:
            continue
        if not first.verified:
            unverified = unverified or first
            continue
        best = first
        if objective == "margin":
            d, t_lo = d0, 0.0
            while budget[0] > 0:
                t_hi, found = 1.0, None
                for _ in range(bisection_steps):
                    mid = 0.5 * (t_lo + t_hi)
                    res = attempt(mid, d, "margin")
                    if res is not None and res.verified:
                        t_lo, found = mid, res
                        if res.depth > best.depth:
                            best = res
                    else:
                        t_hi = mid
                        if res is not None and unverified is None:
                            unverified = res
                if found is None:
                    break
                d = c0s + Ms @ best.x
                d = d / d[0]
        break
    central_t = tuple(tried)
    solves = iterations - budget[0]
    chosen = best if best is not None else unverified
    if chosen is None:
        return CertifiedDesign(
            None, False, None, float("nan"), float("nan"), central_t, solves, (), "infeasible",
            omega_ref,
        )
    return CertifiedDesign(
        _frozen(chosen.x), best is not None, _frozen(c0 + M @ chosen.x), chosen.depth,
        chosen.eps, central_t, solves, chosen.certs,
        "certified" if best is not None else "unverified", omega_ref,
    )
