"""Plant models fitted to recorded step-test (bump-test) data.

A bump test records the controller output (``input``) and the measured
process value (``output``) against ``time`` while the input is moved, usually
by one step with the loop in manual.  :func:`fit_step_test` fits one of three
models, each with a dead time ``theta``:

============== ==================================================== =====================
model          transfer function                                    parameters
============== ==================================================== =====================
first-order    ``K exp(-theta s) / (T s + 1)``                      K, T, theta
second-order   ``K exp(-theta s) / ((T1 s + 1)(T2 s + 1))``         K, T1 >= T2, theta
integrating    ``K exp(-theta s) / s`` or ``K exp(-theta s) / (s (T s + 1))``  K, [T], theta
============== ==================================================== =====================

plus the output's offset (its steady value before the test) and, for the
integrating model, a constant drift (an integrating process drifts when the
input before the test was not exactly its balance value).

Simulation.  The model runs on the recorded input itself, which need not be an
ideal step: between samples the input is taken as **piecewise linear** (a
first-order hold through the recorded points; a step logged between two
samples is a ramp over that interval, centred on its midpoint on average).
Before the first sample the process is at rest with the first input value.
The state is advanced exactly over every sampling interval, whatever its
length (uneven sampling is ordinary), with closed-form solutions of the
linear differential equations for a linear input; the dead time is exact: the
output at time ``t`` is the delay-free model's output at ``t - theta``,
evaluated by one more exact partial step from the sample before it.  The
closed forms are written with the functions ``f_k(y) = phi_k(-y)`` of
exponential integrators and their divided differences, evaluated without
cancellation (Gauss-Legendre quadrature of their integral forms for short
steps, symmetric closed forms otherwise), so equal or nearly equal time
constants and steps much shorter or much longer than a time constant are all
ordinary.

Fitting.  Time is normalised by the record length, the input by its largest
excursion and the output by its range, so a process with minutes of dead time
and a drive with milliseconds are the same problem numerically.  Starting
values come from the graphical methods engineers use by hand: the two-point
method of Smith (1972) (28.3 % and 63.2 % of the response), the half rule of
Skogestad (2003) run backwards to split a first-order estimate into two time
constants, and the final asymptote of an integrating response.  A few such
starts are scored by their residual (the gain and offset solved by linear
least squares for each) and the best is refined by
:func:`scipy.optimize.least_squares` (trust-region reflective, bounded:
time constants positive, dead time >= 0).

Uncertainty.  Standard errors come from the Jacobian at the solution,
``cov = s^2 (J^T J)^-1`` with ``s^2`` the residual variance (``N - p``
degrees of freedom).  They assume white measurement noise and a model of the
right structure; coloured noise or an unmodelled disturbance during the test
makes them too small.  A parameter whose standard error exceeds its value is
reported as poorly determined.

References
----------
C. L. Smith, *Digital Computer Process Control*, Intext, 1972 (the two-point
method for first-order-plus-dead-time models).

R. Sundaresan and P. R. Krishnaswamy, "Estimation of time delay, time
constant parameters in time, frequency and Laplace domains", *Canadian
Journal of Chemical Engineering* 56 (1978) 257-262.

S. Skogestad, "Simple analytic rules for model reduction and PID controller
tuning", *Journal of Process Control* 13 (2003) 291-309 (the half rule).

D. E. Seborg, T. F. Edgar and D. A. Mellichamp, *Process Dynamics and
Control*, 2nd ed., Wiley, 2004, ch. 7 (graphical fitting of step responses).

M. Hochbruck and A. Ostermann, "Exponential integrators", *Acta Numerica* 19
(2010) 209-286 (the phi functions).

D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its
Applications*, Wiley, 1988, ch. 2 (linearised standard errors).
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from synth.errors import InputError

__all__ = ["MODELS", "FIT_SCHEMA", "FIT_CAUTION", "MIN_SAMPLES", "FitResult", "StepData",
           "fit_step_test", "half_rule", "read_step_csv", "smith_two_point",
           "step_test_fit_from_table", "sundaresan_krishnaswamy", "requirements_skeleton"]

#: The model names users write (``--model`` and ``plant.step_test.model``).
MODELS = ("first-order", "second-order", "integrating")

FIT_SCHEMA = "synth.fit/1"

#: Fewer samples than this cannot support a fit with up to six parameters.
MIN_SAMPLES = 20

FIT_CAUTION = ("This model is fitted to one recorded test and is linear. Designs built on it "
               "must be verified against actuator saturation, delays, sampling and "
               "nonlinearity, commissioned with reduced gains and hardware limits in place, "
               "and follow local codes, functional-safety standards and licensed engineering "
               "practice.")

_STEP_TEST_KEYS = {"data", "model", "ranges_from_fit"}

# Gauss-Legendre nodes and weights on [0, 1] (numpy.polynomial.legendre.leggauss); eight
# nodes integrate the smooth integrands used below (|exponent| <= 1) to rounding level.
_GL_X, _GL_W = np.polynomial.legendre.leggauss(8)
_GL_U = 0.5 * (_GL_X + 1.0)
_GL_W = 0.5 * _GL_W
_GL_U.setflags(write=False)
_GL_W.setflags(write=False)


# ---------------------------------------------------------------------------
# reading the data
# ---------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class StepData:
    """Recorded step-test samples, validated: strictly increasing finite time."""

    time: np.ndarray = field(repr=False)
    input: np.ndarray = field(repr=False)
    output: np.ndarray = field(repr=False)
    source: str = "<data>"

    @property
    def samples(self) -> int:
        return int(self.time.size)


def _decode(raw: bytes, src: str) -> str:
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError("is not UTF-8 text (expected a CSV file with columns time,input,output)",
                         src) from None


def read_step_csv(source: str | Path, raw: bytes | None = None) -> StepData:
    """Read and validate a step-test CSV file.

    The first non-blank line that does not start with ``#`` is the header; it
    must name the columns ``time``, ``input`` and ``output`` (any order, any
    case; other columns are ignored).  Blank lines and ``#`` comment lines are
    skipped.  Time must increase strictly.

    Parameters
    ----------
    source : str or Path
        The file (also the name used in error messages).
    raw : bytes, optional
        The file's content, when already read (batch runs ship it to workers).

    Raises
    ------
    InputError
        One line naming the file, the line and the problem.
    """
    src = str(source)
    if raw is None:
        try:
            raw = Path(source).read_bytes()
        except FileNotFoundError:
            raise InputError("no such file", src) from None
        except IsADirectoryError:
            raise InputError("is a folder, not a CSV file", src) from None
        except OSError as err:
            raise InputError(f"cannot be read: {err.strerror or err}", src) from None
    text = _decode(raw, src)
    try:
        rows = list(csv.reader(io.StringIO(text)))
    except csv.Error as err:
        raise InputError(f"is not readable as CSV: {err}", src) from None
    header = None
    cols: dict[str, int] = {}
    values: list[tuple[float, float, float]] = []
    lines: list[int] = []
    for lineno, row in enumerate(rows, start=1):
        cells = [c.strip() for c in row]
        if not any(cells) or cells[0].startswith("#"):
            continue
        if header is None:
            header = [c.lower() for c in cells]
            if len(header) == 1 and any(sep in cells[0] for sep in ";\t"):
                raise InputError("columns must be separated by commas", src, f"line {lineno}")
            missing = [c for c in ("time", "input", "output") if c not in header]
            if missing:
                raise InputError(f"missing column{'s' if len(missing) > 1 else ''} "
                                 f"{', '.join(missing)}; the header must name time, input "
                                 "and output", src, f"line {lineno}")
            for c in ("time", "input", "output"):
                if header.count(c) > 1:
                    raise InputError(f"column {c} appears twice in the header", src,
                                     f"line {lineno}")
                cols[c] = header.index(c)
            continue
        rec = []
        for c in ("time", "input", "output"):
            i = cols[c]
            if i >= len(cells) or not cells[i]:
                raise InputError(f"no {c} value", src, f"line {lineno}")
            try:
                v = float(cells[i])
            except ValueError:
                raise InputError(f"{c} {cells[i]!r} is not a number", src,
                                 f"line {lineno}") from None
            if not math.isfinite(v):
                raise InputError(f"{c} is {cells[i]} (must be a finite number)", src,
                                 f"line {lineno}")
            rec.append(v)
        if values and not rec[0] > values[-1][0]:
            raise InputError(f"time {rec[0]:g} does not increase (the line before has "
                             f"{values[-1][0]:g})", src, f"line {lineno}")
        values.append((rec[0], rec[1], rec[2]))
        lines.append(lineno)
    if header is None:
        raise InputError("has no header line (expected time,input,output)", src)
    if len(values) < MIN_SAMPLES:
        raise InputError(f"has {len(values)} samples; a fit needs at least {MIN_SAMPLES}", src)
    arr = np.asarray(values, dtype=float)
    t, u, y = (np.ascontiguousarray(arr[:, i]) for i in range(3))
    for a in (t, u, y):
        a.setflags(write=False)
    return StepData(time=t, input=u, output=y, source=src)


# ---------------------------------------------------------------------------
# graphical methods (starting values)
# ---------------------------------------------------------------------------

def smith_two_point(t28: float, t63: float) -> tuple[float, float]:
    """Time constant and dead time from the 28.3 % and 63.2 % times of a step response.

    Times are measured from the input step.  For ``K exp(-theta s)/(T s + 1)``
    the response reaches ``1 - exp(-1/3)`` (28.3 %) at ``theta + T/3`` and
    ``1 - exp(-1)`` (63.2 %) at ``theta + T``, hence ``T = 1.5 (t63 - t28)``
    and ``theta = t63 - T``.

    References
    ----------
    C. L. Smith, *Digital Computer Process Control*, Intext, 1972; as given in
    D. E. Seborg, T. F. Edgar, D. A. Mellichamp, *Process Dynamics and
    Control*, 2nd ed., 2004, section 7.2.
    """
    tau = 1.5 * (t63 - t28)
    return tau, t63 - tau


def sundaresan_krishnaswamy(t35: float, t85: float) -> tuple[float, float]:
    """Time constant and dead time from the 35.3 % and 85.3 % times of a step response.

    ``T = 0.67 (t85 - t35)`` and ``theta = 1.3 t35 - 0.29 t85`` (times from the
    input step).

    References
    ----------
    R. Sundaresan and P. R. Krishnaswamy, *Can. J. Chem. Eng.* 56 (1978) 257-262;
    as given in Seborg, Edgar and Mellichamp (2004), section 7.2.
    """
    return 0.67 * (t85 - t35), 1.3 * t35 - 0.29 * t85


def half_rule(time_constants, dead_time: float, keep: int = 1) -> tuple[tuple[float, ...], float]:
    """Reduce lags plus dead time to ``keep`` lags by Skogestad's half rule.

    The largest neglected time constant is split evenly between the smallest
    kept one and the dead time; the smaller neglected ones go to the dead time.

    References
    ----------
    S. Skogestad, *J. Process Control* 13 (2003) 291-309, section 2.
    """
    taus = sorted((float(x) for x in time_constants), reverse=True)
    if keep >= len(taus):
        return tuple(taus), float(dead_time)
    kept, dropped = taus[:keep], taus[keep:]
    theta = float(dead_time) + dropped[0] / 2.0 + sum(dropped[1:])
    if kept:
        kept[-1] += dropped[0] / 2.0
    else:
        theta += dropped[0] / 2.0
    return tuple(kept), theta


# ---------------------------------------------------------------------------
# exact simulation with a piecewise-linear input
# ---------------------------------------------------------------------------

def _sinhc(x: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        out = np.sinh(x) / x
    return np.where(x == 0.0, 1.0, out)


def _fk(y: np.ndarray, k: int) -> np.ndarray:
    """``f_k(y) = phi_k(-y) = int_0^1 (1-u)^(k-1)/(k-1)! exp(-u y) du`` for y >= 0, k = 1..3."""
    y = np.asarray(y, dtype=float)
    small = y <= 1.0
    out = np.empty_like(y)
    if np.any(small):
        ys = y[small][..., None]
        w = _GL_W * (1.0 - _GL_U) ** (k - 1) / math.factorial(k - 1)
        out[small] = np.sum(w * np.exp(-_GL_U * ys), axis=-1)
    if np.any(~small):
        yl = y[~small]
        f = -np.expm1(-yl) / yl
        for j in range(2, k + 1):  # f_j = (1/(j-1)! - f_{j-1}) / y; stable for y > 1
            f = (1.0 / math.factorial(j - 1) - f) / yl
        out[~small] = f
    return out


def _neg_dd(y1: np.ndarray, y2: np.ndarray, k: int) -> np.ndarray:
    """``-f_k[y1, y2]``, the negated divided difference, for y1, y2 >= 0, k = 1, 2.

    Three regimes, each free of cancellation: both points small (quadrature of
    ``int w_k(u) u exp(-u ym) sinhc(u eps) du``), points within a factor two
    of each other (symmetric closed form in the mean ``ym`` and half
    difference ``eps``), and well separated points (the plain difference).
    """
    y1 = np.asarray(y1, dtype=float)
    y2 = np.asarray(y2, dtype=float)
    ym = 0.5 * (y1 + y2)
    eps = 0.5 * (y1 - y2)
    hi = np.maximum(y1, y2)
    lo = np.minimum(y1, y2)
    out = np.empty_like(ym)
    small = hi <= 1.0
    close = ~small & (hi <= 2.0 * lo)
    apart = ~small & ~close
    if np.any(small):
        u = _GL_U
        w = _GL_W * (u if k == 1 else u * (1.0 - u))
        e = eps[small][..., None]
        m = ym[small][..., None]
        out[small] = np.sum(w * np.exp(-u * m) * _sinhc(u * e), axis=-1)
    if np.any(close):
        m, e = ym[close], eps[close]
        ex = np.exp(-m)
        if k == 1:
            # S2 / (y1 y2) with S2 = 1 - exp(-ym) (ym sinhc(eps) + cosh(eps))
            val = (1.0 - ex * (m * _sinhc(e) + np.cosh(e))) / (m * m - e * e)
        else:
            num = 2.0 * m - ex * ((m * m + e * e) * _sinhc(e) + 2.0 * m * np.cosh(e))
            val = (1.0 - num / (m * m - e * e)) / (m * m - e * e)
        out[close] = val
    if np.any(apart):
        a, b = lo[apart], hi[apart]
        out[apart] = (_fk(a, k) - _fk(b, k)) / (b - a)
    return out


def _coupling(y1: np.ndarray, y2: np.ndarray) -> np.ndarray:
    """``y2 int_0^1 exp(-y2 (1-s)) exp(-y1 s) ds``: first lag's state into the second."""
    ym = 0.5 * (y1 + y2)
    eps = 0.5 * (y1 - y2)
    near = np.abs(eps) <= 1.0
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        far = (np.exp(-y2) - np.exp(-y1)) / (y1 - y2)
    return y2 * np.where(near, np.exp(-ym) * _sinhc(np.where(near, eps, 0.0)), far)


@dataclass(frozen=True)
class _StepCoefficients:
    """Exact update over intervals of length h for input a -> b (linear in between).

    ``x_new = E x + Ga a + Gb (b - a)`` with E (n, n) and Ga, Gb (n,) per interval.
    """

    E: np.ndarray
    Ga: np.ndarray
    Gb: np.ndarray


def _coefficients(kind: str, taus: tuple[float, ...], h: np.ndarray) -> _StepCoefficients:
    """Per-interval exact update coefficients, vectorised over the interval lengths ``h``.

    States: "lag" x1 (unit DC gain); "lag2" x1 -> x2 (unit DC gain);
    "int" z (integral of the input); "lagint" x1 -> z (integral of x1).
    """
    h = np.asarray(h, dtype=float)
    m = h.size
    if kind == "int":
        E = np.ones((m, 1, 1))
        Ga = h[:, None].copy()
        Gb = 0.5 * h[:, None]
        return _StepCoefficients(E, Ga, Gb)
    y1 = h / taus[0]
    e1 = np.exp(-y1)
    g1a = -np.expm1(-y1)                 # 1 - exp(-y1)
    g1b = y1 * _fk(y1, 2)                # ramp 0 -> 1 over the interval
    if kind == "lag":
        return _StepCoefficients(e1[:, None, None], g1a[:, None], g1b[:, None])
    E = np.zeros((m, 2, 2))
    E[:, 0, 0] = e1
    if kind == "lag2":
        y2 = h / taus[1]
        E[:, 1, 0] = _coupling(y1, y2)
        E[:, 1, 1] = np.exp(-y2)
        Ga = np.stack([g1a, y1 * y2 * _neg_dd(y1, y2, 1)], axis=1)
        Gb = np.stack([g1b, y1 * y2 * _neg_dd(y1, y2, 2)], axis=1)
        return _StepCoefficients(E, Ga, Gb)
    if kind == "lagint":
        E[:, 1, 0] = h * _fk(y1, 1)
        E[:, 1, 1] = 1.0
        Ga = np.stack([g1a, h * y1 * _fk(y1, 2)], axis=1)
        Gb = np.stack([g1b, h * y1 * _fk(y1, 3)], axis=1)
        return _StepCoefficients(E, Ga, Gb)
    raise ValueError(f"unknown model kind {kind!r}")


def _kind(model: str, n_lags: int) -> str:
    if model == "first-order":
        return "lag"
    if model == "second-order":
        return "lag2"
    return "lagint" if n_lags else "int"


def simulate(kind: str, taus: tuple[float, ...], dead_time: float, t: np.ndarray,
             u: np.ndarray, t_out: np.ndarray | None = None) -> np.ndarray:
    """Unit-gain model response to a piecewise-linear input, exact, with an exact dead time.

    Parameters
    ----------
    kind : {"lag", "lag2", "int", "lagint"}
        Model structure (see :func:`_coefficients`).
    taus : tuple of float
        Time constants, in the units of ``t``.
    dead_time : float
        Dead time, in the units of ``t``.
    t, u : ndarray
        Input breakpoints (strictly increasing) and the input there, as a
        deviation from the rest value (the model is at rest before ``t[0]``).
    t_out : ndarray, optional
        Output times (default ``t``).

    Returns
    -------
    ndarray
        The delay-free model's output at ``t_out - dead_time``.
    """
    t = np.asarray(t, dtype=float)
    u = np.asarray(u, dtype=float)
    t_out = t if t_out is None else np.asarray(t_out, dtype=float)
    states = _states(kind, taus, t, u)
    return _delayed_output(kind, taus, dead_time, t, u, states, t_out)


def _states(kind: str, taus, t: np.ndarray, u: np.ndarray) -> np.ndarray:
    c = _coefficients(kind, taus, np.diff(t))
    n = c.E.shape[1]
    du = np.diff(u)
    # forcing of each interval; the state recursion itself is sequential
    f = c.Ga * u[:-1, None] + c.Gb * du[:, None]
    X = np.zeros((t.size, n))
    if n == 1:
        e = c.E[:, 0, 0].tolist()
        fl = f[:, 0].tolist()
        x = 0.0
        out = [0.0]
        for ek, fk in zip(e, fl, strict=True):
            x = ek * x + fk
            out.append(x)
        X[:, 0] = out
        return X
    e11 = c.E[:, 0, 0].tolist()
    e21 = c.E[:, 1, 0].tolist()
    e22 = c.E[:, 1, 1].tolist()
    f1 = f[:, 0].tolist()
    f2 = f[:, 1].tolist()
    x1 = x2 = 0.0
    o1 = [0.0]
    o2 = [0.0]
    for a11, a21, a22, b1, b2 in zip(e11, e21, e22, f1, f2, strict=True):
        x1, x2 = a11 * x1 + b1, a21 * x1 + a22 * x2 + b2
        o1.append(x1)
        o2.append(x2)
    X[:, 0] = o1
    X[:, 1] = o2
    return X


def _delayed_output(kind, taus, dead_time, t, u, states, t_out) -> np.ndarray:
    tau = t_out - dead_time
    j = np.searchsorted(t, tau, side="right") - 1
    before = j < 0
    jj = np.clip(j, 0, t.size - 1)
    h = np.where(before, 0.0, tau - t[jj])
    last = jj >= t.size - 1
    # the input beyond the last sample is held at its last value
    nxt = np.minimum(jj + 1, t.size - 1)
    span = np.where(last, 1.0, t[nxt] - t[jj])
    ub = np.where(last, u[jj], u[jj] + (u[nxt] - u[jj]) * (h / span))
    c = _coefficients(kind, taus, h)
    x = states[jj]
    x_new = np.einsum("kij,kj->ki", c.E, x) + c.Ga * u[jj, None] + c.Gb * (ub - u[jj])[:, None]
    out = x_new[:, -1]
    return np.where(before, 0.0, out)


# ---------------------------------------------------------------------------
# the fit
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class FitResult:
    """A model fitted to step-test data.

    Attributes
    ----------
    model : str
        One of :data:`MODELS`.
    gain : float
        Output units per input unit (per second for ``integrating``).
    time_constants : tuple of float
        Seconds (in the data's time unit), largest first.
    dead_time : float
    se_gain, se_time_constants, se_dead_time
        Standard errors (``inf`` when the data do not determine the parameter).
    offset : float
        The output's steady value before the test.
    drift : float or None
        Output units per second (integrating model only).
    residual_rms : float
        Root mean square of the residual, in output units.
    samples : int
    source : str
    start : str
        The graphical method whose estimate started the refinement.
    evaluations : int
        Model simulations used (the effort, counted in work).
    notes : tuple of str
        Warnings a user should read (poorly determined parameters, ...).
    """

    model: str
    gain: float
    time_constants: tuple[float, ...]
    dead_time: float
    se_gain: float
    se_time_constants: tuple[float, ...]
    se_dead_time: float
    offset: float
    drift: float | None
    residual_rms: float
    samples: int
    source: str = "<data>"
    start: str = ""
    evaluations: int = 0
    notes: tuple[str, ...] = ()
    input_rest: float = 0.0
    data: StepData | None = field(default=None, repr=False, compare=False)

    # -- model forms --------------------------------------------------------------
    @property
    def numerator(self) -> list[float]:
        return [float(self.gain)]

    @property
    def denominator(self) -> list[float]:
        den = np.array([1.0]) if self.model != "integrating" else np.array([1.0, 0.0])
        for tc in self.time_constants:
            den = np.polymul(den, [tc, 1.0])
        return [float(x) for x in den]

    def plant(self, pade_order: int = 3, label: str | None = None):
        """The fitted nominal model as a :class:`synth.problem.plant.Plant`."""
        from synth.problem.plant import Plant

        text = self.default_label() if label is None else label
        return Plant.from_coefficients(self.numerator, self.denominator,
                                       dead_time=self.dead_time, pade_order=pade_order,
                                       label=text)

    def default_label(self) -> str:
        return f"{self.model} fit to {Path(self.source).name}"

    def _names(self) -> list[tuple[str, float, float]]:
        out = [("k", self.gain, self.se_gain)]
        if len(self.time_constants) == 1:
            out.append(("T", self.time_constants[0], self.se_time_constants[0]))
        else:
            for i, (tc, se) in enumerate(zip(self.time_constants, self.se_time_constants,
                                             strict=True), start=1):
                out.append((f"T{i}", tc, se))
        return out

    def expression(self) -> str:
        """The model as an expression with named parameters, e.g. ``k/((T1*s + 1)*(T2*s + 1))``."""
        names = [n for n, _, _ in self._names()[1:]]
        factors = ([] if self.model != "integrating" else ["s"]) + [f"({n}*s + 1)" for n in names]
        if not factors:
            return "k"
        den = factors[0] if len(factors) == 1 else "(" + "*".join(factors) + ")"
        return f"k/{den}"

    def ranges(self, n_sigma: float) -> dict[str, tuple[float, float]]:
        """Parameter ranges ``value +- n_sigma * standard error``, dead time included.

        Time constants keep a positive lower end (a tenth of the value at
        least) and the dead time a lower end of 0; a gain range that would
        cross zero is an error (the data do not fix the gain's sign).
        """
        if not (n_sigma > 0 and math.isfinite(n_sigma)):
            raise InputError(f"ranges_from_fit must be a positive number, got {n_sigma!r}",
                             self.source)
        out: dict[str, tuple[float, float]] = {}
        for name, v, se in [*self._names(), ("dead_time", self.dead_time, self.se_dead_time)]:
            if not math.isfinite(se):
                raise InputError(f"the data do not determine {name} (no finite standard "
                                 "error), so it has no range", self.source)
            lo, hi = v - n_sigma * se, v + n_sigma * se
            if name == "k" and lo * hi <= 0:
                raise InputError(f"the gain range {lo:.4g} .. {hi:.4g} crosses zero: the data "
                                 "do not fix the gain's sign", self.source)
            if name.startswith("T"):
                lo = max(lo, 0.1 * v)
            if name == "dead_time":
                lo = max(lo, 0.0)
            out[name] = (float(lo), float(hi))
        return out

    def plant_table(self, n_sigma: float | None = None) -> dict[str, Any]:
        """The TOML ``[plant]`` content with named parameters (for parametric plants).

        ``{"expression": "k/(T*s + 1)", "parameters": {"k": ..., "T": ...},
        "dead_time": ..., "ranges": {...}}``; ``ranges`` only when ``n_sigma``
        is given.
        """
        out: dict[str, Any] = {"label": self.default_label(), "expression": self.expression(),
                               "parameters": {n: float(v) for n, v, _ in self._names()},
                               "dead_time": float(self.dead_time)}
        if n_sigma is not None:
            out["ranges"] = {k: [lo, hi] for k, (lo, hi) in self.ranges(n_sigma).items()}
        return out

    def fitted_output(self) -> np.ndarray:
        """The model's output at the recorded times (needs the data)."""
        if self.data is None:
            raise ValueError("this FitResult carries no data")
        d = self.data
        kind = _kind(self.model, len(self.time_constants))
        z = simulate(kind, self.time_constants, self.dead_time, d.time,
                     d.input - self.input_rest)
        y = self.offset + self.gain * z
        if self.drift is not None:
            y = y + self.drift * (d.time - d.time[0])
        return y

    # -- outputs ------------------------------------------------------------------
    def to_json(self) -> dict:
        """The contract's ``synth.fit/1`` object plus extra fields; no NaN or infinity."""
        from synth.outputs.jsonout import clean

        plant = {"numerator": self.numerator, "denominator": self.denominator,
                 "dead_time": float(self.dead_time)}
        out = {
            "schema": FIT_SCHEMA,
            "model": self.model,
            "parameters": {"gain": self.gain, "time_constants": list(self.time_constants),
                           "dead_time": self.dead_time},
            "standard_errors": {"gain": self.se_gain,
                                "time_constants": list(self.se_time_constants),
                                "dead_time": self.se_dead_time},
            "residual_rms": self.residual_rms,
            "samples": self.samples,
            "plant": plant,
            "offset": self.offset,
            "source": self.source,
            "start": self.start,
            "evaluations": self.evaluations,
            "notes": list(self.notes),
            "caution": FIT_CAUTION,
        }
        if self.drift is not None:
            out["drift"] = self.drift
        return clean(out)

    def text_lines(self) -> list[str]:
        """The terminal account: parameters with standard errors, residual, caution."""
        unit = "output units per input unit" + (" per second" if self.model == "integrating"
                                                 else "")
        lines = [f"{self.model} model with dead time fitted to {self.source} "
                 f"({self.samples} samples)"]
        rows = [("gain", self.gain, self.se_gain, unit)]
        for i, (tc, se) in enumerate(zip(self.time_constants, self.se_time_constants,
                                         strict=True), start=1):
            name = "time constant" + (f" {i}" if len(self.time_constants) > 1 else "")
            rows.append((name, tc, se, "s"))
        rows.append(("dead time", self.dead_time, self.se_dead_time, "s"))
        for name, v, se, u in rows:
            set_ = f"{se:.3g}" if math.isfinite(se) else "undetermined"
            lines.append(f"  {name:<16} {v:12.5g}  +- {set_:<10} {u}")
        lines.append(f"  {'offset':<16} {self.offset:12.5g}")
        if self.drift is not None:
            lines.append(f"  {'drift':<16} {self.drift:12.5g}  output units per second")
        lines.append(f"  {'residual RMS':<16} {self.residual_rms:12.5g}")
        lines.append(f"  started from {self.start}; {self.evaluations} model simulations")
        lines.append(f"  plant: {self.plant().describe()}")
        for n in self.notes:
            lines.append(f"  note: {n}")
        lines.append("")
        lines.append("Caution: " + FIT_CAUTION)
        return lines


@dataclass(frozen=True)
class _Scaled:
    """The data in normalised units: time over the record length, input over its largest
    excursion from the rest value, output over its range."""

    t: np.ndarray
    u: np.ndarray
    y: np.ndarray
    t0: float
    t_span: float
    u_rest: float
    u_scale: float
    y_scale: float


def _scale(d: StepData) -> _Scaled:
    t, u, y = d.time, d.input, d.output
    t_span = float(t[-1] - t[0])
    u_rest = float(u[0])
    du = u - u_rest
    u_scale = float(np.max(np.abs(du)))
    if u_scale == 0.0 or u_scale <= 1e-9 * float(np.max(np.abs(u))):
        raise InputError("the input never changes, so the test shows nothing of the process "
                         "(the input column must move, e.g. by a step)", d.source)
    y_scale = float(np.max(y) - np.min(y))
    if y_scale == 0.0 or y_scale <= 1e-12 * float(np.max(np.abs(y))):
        raise InputError("no visible response: the output never changes", d.source)
    return _Scaled(t=(t - t[0]) / t_span, u=du / u_scale, y=(y - float(y[0])) / y_scale,
                   t0=float(t[0]), t_span=t_span, u_rest=u_rest, u_scale=u_scale,
                   y_scale=y_scale)


def _noise_level(y: np.ndarray) -> float:
    """Robust noise standard deviation from first differences (median absolute deviation)."""
    d = np.diff(y)
    mad = float(np.median(np.abs(d - np.median(d))))
    return 1.4826 * mad / math.sqrt(2.0)


def _crossing(t: np.ndarray, r: np.ndarray, level: float) -> float | None:
    """First time the (normalised, rising) response r reaches ``level``; linear interpolation."""
    idx = np.flatnonzero(r >= level)
    if idx.size == 0:
        return None
    i = int(idx[0])
    if i == 0:
        return float(t[0])
    r0, r1 = r[i - 1], r[i]
    return float(t[i - 1] + (t[i] - t[i - 1]) * (level - r0) / (r1 - r0))


@dataclass(frozen=True)
class _Start:
    taus: tuple[float, ...]
    theta: float
    method: str


def _starts(model: str, s: _Scaled) -> list[_Start]:
    """Candidate starting points in normalised units, graphical methods first."""
    t, u, y = s.t, s.u, s.y
    moved = np.flatnonzero(np.abs(u) > 0.5)
    i_step = int(moved[0]) if moved.size else 1
    t_step = 0.5 * (t[max(i_step - 1, 0)] + t[i_step])
    n = t.size
    pre = y[: max(i_step, 1)]
    y_pre = float(np.mean(pre))
    tail = slice(max(int(0.9 * n), i_step + 1), n)
    u_end = float(np.mean(u[tail])) if n - tail.start > 0 else float(u[-1])
    out: list[_Start] = []
    floor = 1e-3
    if model in ("first-order", "second-order") and abs(u_end) > 0.2:
        dy = float(np.mean(y[tail])) - y_pre
        if dy != 0.0:
            r = (y - y_pre) / dy
            after = t >= t_step
            t28 = _crossing(t[after], r[after], 1.0 - math.exp(-1.0 / 3.0))
            t63 = _crossing(t[after], r[after], 1.0 - math.exp(-1.0))
            if t28 is not None and t63 is not None and t63 > t28:
                tau, theta = smith_two_point(t28 - t_step, t63 - t_step)
                tau, theta = max(tau, floor), max(theta, 0.0)
                if model == "first-order":
                    out.append(_Start((tau,), theta, "the two-point method (Smith 1972)"))
                else:
                    # the half rule backwards: tau = T1 + T2/2, theta' = theta + T2/2
                    for frac in (0.4, 2.0 / 3.0, 0.15):
                        t2 = frac * tau
                        t1 = max(tau - t2 / 2.0, t2)
                        out.append(_Start((t1, t2), max(theta - t2 / 2.0, 0.0),
                                          "the two-point method (Smith 1972) split by the "
                                          "half rule (Skogestad 2003)"))
    if model == "integrating":
        post = np.flatnonzero(t >= t_step)
        if post.size >= 6:
            k0 = post[int(0.6 * post.size):]
            slope, icept = np.polyfit(t[k0], y[k0], 1)
            pre_slope = 0.0
            if i_step >= 6:
                pre_slope = float(np.polyfit(t[:i_step], y[:i_step], 1)[0])
            if slope != pre_slope:
                # the final asymptote meets the starting level at t_step + theta + T
                lag = (y_pre - icept) / slope - t_step if slope else 0.0
                lag = min(max(float(lag), 0.0), 0.8)
                for frac in (0.5, 0.2, 0.8):
                    out.append(_Start((max(frac * lag, floor),), (1 - frac) * lag,
                                      "the final asymptote of the ramp"))
    # generic grid, always: catches inputs that are not a clean step
    for tau in (0.05, 0.2):
        for theta in (0.0, 0.05):
            taus = {"first-order": (tau,), "second-order": (tau, 0.3 * tau),
                    "integrating": (tau,)}[model]
            out.append(_Start(taus, theta, "a coarse grid"))
    return out


def _basis(model: str, n_lags: int, s: _Scaled, taus, theta: float) -> np.ndarray:
    """Columns of the linear part: [response, 1, (t for the integrating model's drift)]."""
    z = simulate(_kind(model, n_lags), tuple(taus), theta, s.t, s.u)
    cols = [z, np.ones_like(z)]
    if model == "integrating":
        cols.append(s.t)
    return np.stack(cols, axis=1)


def _lin_solve(B: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, float]:
    coef, *_ = np.linalg.lstsq(B, y, rcond=None)
    r = y - B @ coef
    return coef, float(r @ r)


def _fit_structure(model: str, n_lags: int, s: _Scaled, starts: list[_Start]):
    """Refine the best start by least squares; returns (params, jac, cost, nfev, start)."""
    from scipy.optimize import least_squares

    evaluations = 0
    scored = []
    for st in starts:
        taus = st.taus[:n_lags]
        B = _basis(model, n_lags, s, taus, st.theta)
        evaluations += 1
        coef, sse = _lin_solve(B, s.y)
        scored.append((sse, len(scored), st, coef))
    scored.sort(key=lambda x: (x[0], x[1]))
    _, _, best, coef = scored[0]
    taus0 = list(best.taus[:n_lags])
    # parameter vector: [K, taus..., theta, y0, (drift)]
    p0 = np.array([coef[0], *taus0, best.theta, *coef[1:]], dtype=float)
    n_lin_tail = 2 if model == "integrating" else 1
    lo = np.full(p0.size, -np.inf)
    hi = np.full(p0.size, np.inf)
    lo[1:1 + n_lags] = 1e-4      # time constants: a ten-thousandth of the record at least
    hi[1:1 + n_lags] = 10.0
    lo[1 + n_lags] = 0.0         # dead time within the record
    hi[1 + n_lags] = 1.0
    p0 = np.clip(p0, lo + 1e-12 * (np.isfinite(lo)), hi - 1e-12 * np.isfinite(hi))
    kind = _kind(model, n_lags)
    count = [0]

    def resid(p):
        count[0] += 1
        z = simulate(kind, tuple(p[1:1 + n_lags]), p[1 + n_lags], s.t, s.u)
        yhat = p[0] * z + p[2 + n_lags]
        if n_lin_tail == 2:
            yhat = yhat + p[3 + n_lags] * s.t
        return yhat - s.y

    res = least_squares(resid, p0, bounds=(lo, hi), method="trf", x_scale="jac",
                        max_nfev=200 * p0.size, xtol=1e-10, ftol=1e-10, gtol=1e-10)
    evaluations += count[0]
    # a central-difference Jacobian at the solution for the standard errors
    J = np.empty((s.t.size, res.x.size))
    for i in range(res.x.size):
        step = 1e-6 * max(abs(res.x[i]), 1e-3)
        e = np.zeros_like(res.x)
        e[i] = step
        plus = res.x + e
        minus = res.x - e
        if plus[i] > hi[i]:
            plus = res.x
        if minus[i] < lo[i]:
            minus = res.x
        J[:, i] = (resid(plus) - resid(minus)) / (plus[i] - minus[i])
    evaluations += 2 * res.x.size
    return res.x, J, float(res.fun @ res.fun), evaluations, best.method


def _covariance(J: np.ndarray, sse: float, n: int) -> np.ndarray:
    """``s^2 (J^T J)^-1`` through the SVD; a direction the data do not determine gives inf."""
    p = J.shape[1]
    s2 = sse / max(n - p, 1)
    _, sv, Vt = np.linalg.svd(J, full_matrices=False)
    cut = sv[0] * max(J.shape) * np.finfo(float).eps if sv.size else 0.0
    ok = sv > cut
    inv = np.where(ok, 1.0 / np.where(ok, sv, 1.0) ** 2, 0.0)
    cov = s2 * (Vt.T * inv) @ Vt
    if not np.all(ok):
        # parameters that load on an undetermined direction get an infinite variance
        bad = np.any(np.abs(Vt[~ok]) > 1e-8, axis=0)
        cov[bad, :] = np.inf
        cov[:, bad] = np.inf
    return cov


def fit_step_test(data: StepData | str | Path, model: str) -> FitResult:
    """Fit a model with dead time to step-test data.

    Parameters
    ----------
    data : StepData or path
        The recorded test (see :func:`read_step_csv`).
    model : {"first-order", "second-order", "integrating"}

    Returns
    -------
    FitResult

    Raises
    ------
    InputError
        Bad data (one line naming the file, the line and the problem), an
        unknown model, or no visible response to the input.

    Notes
    -----
    For ``integrating`` a lag is fitted first; when its time constant is not
    distinguishable from zero (within two standard errors) or sits on its
    lower bound, the model without lag is used (common practice: drop a
    parameter the data do not support).

    References
    ----------
    See the module docstring: Smith (1972); Skogestad (2003); Bates and
    Watts (1988).
    """
    if model not in MODELS:
        raise InputError(f"unknown model {model!r}; choose from {', '.join(MODELS)}")
    d = data if isinstance(data, StepData) else read_step_csv(data)
    s = _scale(d)
    moved = np.flatnonzero(np.abs(s.u) > 0.5)
    if moved.size and d.samples - int(moved[0]) < 10:
        raise InputError(f"the data end {d.samples - int(moved[0])} samples after the input "
                         "change; a fit needs at least 10 samples of the response", d.source)
    starts = _starts(model, s)
    candidates = [2] if model == "second-order" else ([1, 0] if model == "integrating" else [1])
    total = 0
    result = None
    for n_lags in candidates:
        p, J, sse, evals, method = _fit_structure(model, n_lags, s, starts)
        total += evals
        cov = _covariance(J, sse, d.samples)
        se = np.sqrt(np.diag(cov))
        result = (n_lags, p, cov, sse, method)
        if model == "integrating" and n_lags == 1:
            tau, se_tau = p[1], se[1]
            if tau > 2.0 * se_tau and tau > 1.5e-4:
                break
            continue
        break
    assert result is not None
    n_lags, p, cov, sse, method = result
    return _to_result(model, n_lags, p, cov, sse, method, total, s, d)


def _to_result(model, n_lags, p, cov, sse, method, evaluations, s: _Scaled,
               d: StepData) -> FitResult:
    se = np.sqrt(np.diag(cov))
    k_unit = s.y_scale / s.u_scale
    if model == "integrating":
        k_unit /= s.t_span
    gain = float(p[0] * k_unit)
    se_gain = float(se[0] * k_unit)
    taus = p[1:1 + n_lags] * s.t_span
    se_taus = se[1:1 + n_lags] * s.t_span
    order = np.argsort(-taus, kind="stable")
    taus, se_taus = taus[order], se_taus[order]
    # a dead time on its lower bound is zero (the bounded solver stops a rounding error above it)
    theta = float(p[1 + n_lags] * s.t_span) if p[1 + n_lags] > 1e-9 else 0.0
    se_theta = float(se[1 + n_lags] * s.t_span)
    offset = float(d.output[0] + p[2 + n_lags] * s.y_scale)
    drift = None
    if model == "integrating":
        drift = float(p[3 + n_lags] * s.y_scale / s.t_span)
    rms = math.sqrt(sse / d.samples) * s.y_scale
    # visible response: the fitted response must stand clear of the noise
    z = simulate(_kind(model, n_lags), tuple(p[1:1 + n_lags]), p[1 + n_lags], s.t, s.u)
    amplitude = float(np.max(np.abs(p[0] * z))) * s.y_scale
    if not (amplitude > 5.0 * rms and abs(gain) > 3.0 * se_gain):
        raise InputError(f"no visible response: the fitted response ({amplitude:.3g}) does "
                         f"not stand clear of the noise (residual RMS {rms:.3g})", d.source)
    notes = []
    names = [("gain", gain, se_gain)] + [
        (f"time constant {i + 1}" if n_lags > 1 else "time constant", float(a), float(b))
        for i, (a, b) in enumerate(zip(taus, se_taus, strict=True))] + [
        ("dead time", theta, se_theta)]
    for name, v, e in names:
        if not math.isfinite(e) or (e > abs(v) and name != "dead time"):
            notes.append(f"the {name} is poorly determined by these data "
                         f"({v:.3g} +- {e:.3g})")
    if n_lags == 2 and np.all(np.isfinite(cov[1:3, 1:3])):
        c = cov[1:3, 1:3]
        corr = c[0, 1] / math.sqrt(c[0, 0] * c[1, 1]) if c[0, 0] * c[1, 1] > 0 else -1.0
        if corr < -0.95:
            se_sum = math.sqrt(max(float(c.sum()), 0.0)) * s.t_span
            notes.append(f"the two time constants are nearly equal or trade off against each "
                         f"other (correlation {corr:.2f}); their sum {float(taus.sum()):.4g} "
                         f"+- {se_sum:.3g} is better determined than either")
    if se_theta > max(theta, 0.0) and se_theta > 0.01 * s.t_span:
        notes.append(f"the dead time is poorly determined by these data "
                     f"({theta:.3g} +- {se_theta:.3g})")
    if theta >= 0.5 * s.t_span:
        notes.append("the dead time is more than half the record: record longer")
    if n_lags and taus[0] >= 2.0 * s.t_span:
        notes.append("the largest time constant exceeds twice the record length: the "
                     "response had not settled; record longer")
    noise = _noise_level(d.output)
    if noise > 0 and rms > 3.0 * noise:
        notes.append(f"the residual ({rms:.3g}) is well above the sample-to-sample noise "
                     f"({noise:.3g}): the model may not have the right structure")
    kind_note = ("integrating model without lag (the lag was not supported by the data)"
                 if model == "integrating" and n_lags == 0 else None)
    if kind_note:
        notes.append(kind_note)
    return FitResult(model=model, gain=gain, time_constants=tuple(float(x) for x in taus),
                     dead_time=theta, se_gain=se_gain,
                     se_time_constants=tuple(float(x) for x in se_taus),
                     se_dead_time=se_theta, offset=offset, drift=drift, residual_rms=rms,
                     samples=d.samples, source=d.source, start=method,
                     evaluations=int(evaluations), notes=tuple(notes), input_rest=s.u_rest,
                     data=d)


# ---------------------------------------------------------------------------
# the [plant.step_test] form
# ---------------------------------------------------------------------------

ReadData = Callable[[str], bytes]


def step_test_fit_from_table(table, src: str, read_data: ReadData | None = None) -> FitResult:
    """Validate a ``[plant.step_test]`` table and fit its data.

    Parameters
    ----------
    table : dict
        The TOML table: ``data`` (path relative to the requirements file),
        ``model``, optional ``ranges_from_fit``.
    src : str
        The requirements file (errors name it; ``data`` is relative to it).
    read_data : callable, optional
        ``read_data(path) -> bytes`` for the resolved data path; default reads
        the file (batch runs pass the content shipped with the task).

    Raises
    ------
    InputError
    """
    key = "plant.step_test"
    if not isinstance(table, dict):
        raise InputError("must be a table ([plant.step_test])", src, key)
    for k in table:
        if k not in _STEP_TEST_KEYS:
            raise InputError(f"unknown key; [plant.step_test] takes {', '.join(sorted(_STEP_TEST_KEYS))}",
                             src, f"{key}.{k}")
    if "data" not in table:
        raise InputError("missing: the path of the CSV file with time,input,output (a file "
                         "without it is a batch template: run `synth batch` on its folder)",
                         src, f"{key}.data")
    data = table["data"]
    if not isinstance(data, str) or not data.strip():
        raise InputError("must be the path of a CSV file, as text", src, f"{key}.data")
    model = table.get("model")
    if model is None:
        raise InputError(f"missing; choose from {', '.join(MODELS)}", src, f"{key}.model")
    if not isinstance(model, str) or model not in MODELS:
        raise InputError(f"unknown model {model!r}; choose from {', '.join(MODELS)}", src,
                         f"{key}.model")
    if "ranges_from_fit" in table:
        v = table["ranges_from_fit"]
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not (v > 0) \
                or not math.isfinite(v):
            raise InputError(f"must be a positive number of standard errors, got {v!r}", src,
                             f"{key}.ranges_from_fit")
    path = resolve_data_path(src, data)
    raw = read_data(path) if read_data is not None else None
    return fit_step_test(read_step_csv(path, raw), model)


def resolve_data_path(src: str, data: str) -> str:
    """The data path as written, relative to the requirements file's folder."""
    p = Path(data)
    if p.is_absolute() or src.startswith("<"):
        return str(p)
    return str(Path(src).parent / p)


# ---------------------------------------------------------------------------
# a requirements file to start from
# ---------------------------------------------------------------------------

def _num(v: float) -> str:
    return f"{v:.6g}"


def _toml_str(text: str) -> str:
    """A TOML basic string (JSON's escapes are TOML's)."""
    import json

    return json.dumps(text, ensure_ascii=False)


def requirements_skeleton(fit: FitResult, data_ref: str | None = None) -> str:
    """A requirements file (TOML text) with the fitted plant and commented suggestions.

    The suggestions are common practice for process loops: peak sensitivity
    at most 1.4, a gain margin of 6 dB and a phase margin of 45 degrees, and
    a settling time from the fitted time scale (dead time plus four
    closed-loop time constants, the closed-loop time constant as large as
    the dead time or the sum of the lags, whichever is larger: the lambda
    tuning choice of Skogestad 2003).

    Parameters
    ----------
    fit : FitResult
    data_ref : str, optional
        The CSV path as the file should reference it (for the commented
        ``[plant.step_test]`` alternative).
    """
    lags = sum(fit.time_constants)
    lam = max(fit.dead_time, lags)
    settle = fit.dead_time + 4.0 * lam if lam > 0 else None
    ses = ", ".join(f"{_num(tc)} +- {_num(se)}" for tc, se in
                    zip(fit.time_constants, fit.se_time_constants, strict=True)) or "none"
    small = min([x for x in (*fit.time_constants, fit.dead_time) if x > 0], default=None)
    expr = f"{_num(fit.gain)}"
    den = [f"({_num(tc)}*s + 1)" for tc in fit.time_constants]
    if fit.model == "integrating":
        den = ["s", *den]
    if den:
        expr += "/" + (den[0] if len(den) == 1 else "(" + "*".join(den) + ")")
    lines = [
        f"# Requirements file started by `synth fit` from {fit.source!r} ({fit.model} model).",
        "#",
        "# CAUTION: " + FIT_CAUTION,
        "#",
        f"# Fit: gain {_num(fit.gain)} +- {_num(fit.se_gain)}; time constants {ses}; "
        f"dead time {_num(fit.dead_time)} +- {_num(fit.se_dead_time)};",
        f"# residual RMS {_num(fit.residual_rms)} over {fit.samples} samples.",
        "# Edit the requirements below before you design; the commented values are",
        "# starting suggestions (common practice), not requirements of your process.",
        "",
        "format = 1",
        "",
        "[plant]",
        f"label = {_toml_str(fit.default_label())}",
        f'expression = "{expr}"',
        f"dead_time = {_num(fit.dead_time)}",
        "dead_time_order = 3",
        "",
    ]
    if data_ref is not None:
        lines += [
            "# Alternatively, refit from the data every time this file is read:",
            "# [plant.step_test]",
            f"# data = {_toml_str(data_ref)}",
            f"# model = {_toml_str(fit.model)}",
            "",
        ]
    from synth.problem.catalogue import requirement_for

    def key(metric: str) -> str:  # the file's key for a metric, from the catalogue
        return requirement_for(metric).key

    lines += [
        "[requirements]",
        f"# {key('peak_sensitivity')} = 1.4        # robustness (common practice: 1.2 to 2)",
        f"# {key('gain_margin_db')} = 6.0",
        f"# {key('phase_margin_deg')} = 45.0",
    ]
    if settle is not None:
        lines.append(f"# {key('settling_time')} = {_num(settle)}      # dead time + 4 x max(dead "
                     "time, sum of lags), in the data's time unit")
    lines += [
        f"# {key('overshoot_percent')} = 10.0",
        f"# {key('steady_state_error')} = 0.0      # integral action",
        f"# {key('stable_plant_gain_range')} = [0.7, 1.4]     # process gain varies with the "
        "operating point",
        "",
        "[search]",
        'structures = ["P", "PI", "PID", "lead", "lag"]',
    ]
    if small is not None:
        lines.append(f"max_frequency = {_num(100.0 / small)}       # rad/s: 100 / (shortest "
                     "fitted time scale)")
    lines += ["seed = 0", ""]
    return "\n".join(lines)
