"""Implementation forms of a compensator, and its discrete-time equivalent.

A design is a transfer function ``C(s) = num(s)/den(s)``. Whoever implements
it in a drive, a PLC or firmware wants it in one of a few shapes:

* printed forms: polynomial and factored (:func:`polynomial_text`,
  :func:`factored_text`);
* PID gains: the parallel form ``Kp + Ki/s + Kd s/(Tf s + 1)``
  (:func:`pid_parallel_from_tf`, :func:`tf_from_pid_parallel`) and the
  standard form ``Kc (1 + 1/(Ti s) + Td s/((Td/N) s + 1))``
  (:func:`pid_standard_from_parallel`, :func:`pid_parallel_from_standard`);
* discrete time: Tustin's method with pre-warping (:func:`tustin_prewarp`,
  by :func:`scipy.signal.bilinear`), the difference equation
  (:func:`difference_equation`), and the sample-rate rule of thumb
  (:func:`sample_rate_warning`); :func:`discrete_implementation` adds the
  verifier's check of the sampled loop with the plant discretised by a
  zero-order hold (:mod:`synth.verify.sampled`, re-exported here as
  :func:`zoh_discretise` and :func:`sampled_loop_check`).

All polynomials are 1-D float arrays in descending powers (of ``s`` or of
``z``). Everything here is a linear-model computation: a design converted
here must still be verified against a model with saturation, delay and
nonlinearity, and commissioned with reduced gains and hardware limits.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np

from synth.errors import InputError
from synth.numerics.poly import coefficients
from synth.verify.sampled import SampledLoopCheck, sampled_loop_check, zoh_discretise

__all__ = [
    "PidParallel",
    "PidStandard",
    "DifferenceEquation",
    "SampledLoopCheck",
    "DiscreteImplementation",
    "polynomial_text",
    "factored_text",
    "pid_parallel_from_tf",
    "tf_from_pid_parallel",
    "pid_standard_from_parallel",
    "pid_parallel_from_standard",
    "tustin_prewarp",
    "difference_equation",
    "zoh_discretise",
    "sampled_loop_check",
    "sample_rate_warning",
    "discrete_implementation",
]

# A denominator coefficient this small relative to the largest one is read as
# an exact zero when recognising an integrator in a PID-type design.
_PID_ZERO_RTOL = 1e-10


# ---------------------------------------------------------------------------
# small helpers
# ---------------------------------------------------------------------------

def _positive_time(T, name: str = "the sample time") -> float:
    if isinstance(T, bool) or not isinstance(T, numbers.Real) or not math.isfinite(T) or T <= 0:
        raise InputError(f"{name} must be a finite number > 0, got {T!r}")
    return float(T)


def _fmt(x: float, digits: int) -> str:
    return f"{x:.{digits}g}"


def polynomial_text(coeffs, var: str = "s", digits: int = 6) -> str:
    """Write a polynomial in descending powers, e.g. ``"2 s^2 + 0.5 s - 3"``.

    Parameters
    ----------
    coeffs : array_like
        Coefficients in descending powers of ``var``.
    var : str
        The variable's name.
    digits : int
        Significant digits per coefficient.

    Returns
    -------
    str
        The polynomial; ``"0"`` for the zero polynomial.
    """
    c = coefficients(coeffs, "the polynomial")
    n = c.size - 1
    parts: list[str] = []
    for i, a in enumerate(c):
        if a == 0:
            continue
        power = n - i
        mag = abs(a)
        mono = "" if power == 0 else (var if power == 1 else f"{var}^{power}")
        body = _fmt(mag, digits) if (mag != 1 or not mono) else ""
        term = f"{body} {mono}".strip() if body and mono else (body or mono)
        sign = "-" if a < 0 else "+"
        parts.append(("-" + term if sign == "-" else term) if not parts else f" {sign} {term}")
    return "".join(parts) if parts else "0"


def _root_factors(roots: np.ndarray, var: str, digits: int) -> list[str]:
    """Monic real first- and second-order factors from a set of roots."""
    tol = 1e-9
    factors: list[str] = []
    used = np.zeros(roots.size, dtype=bool)
    order = np.argsort(np.abs(roots), kind="stable")  # smallest first: s, (s + 1), ...
    for idx in order:
        if used[idx]:
            continue
        r = roots[idx]
        used[idx] = True
        if abs(r.imag) <= tol * max(1.0, abs(r)):
            x = r.real
            if x == 0 or abs(x) <= tol:
                factors.append(var)
            else:
                factors.append(f"({var} {'+' if -x > 0 else '-'} {_fmt(abs(x), digits)})")
            continue
        # pair with its conjugate: s^2 - 2 Re(r) s + |r|^2
        free = np.flatnonzero(~used)
        if free.size:
            j = free[np.argmin(np.abs(roots[free] - np.conj(r)))]
            used[j] = True
        b, c = -2.0 * r.real, abs(r) ** 2
        factors.append(f"({polynomial_text([1.0, b, c], var, digits)})")
    return factors


def factored_text(num, den, var: str = "s", digits: int = 6) -> str:
    """Write ``num/den`` as gain times monic real factors.

    For example ``"12.5 (s + 2) / (s (s^2 + 2 s + 5))"``. Roots come from
    :func:`numpy.roots`; complex pairs are written as real quadratics.

    Parameters
    ----------
    num, den : array_like
        Coefficients in descending powers of ``var``.
    var : str
        The variable's name (``"s"`` or ``"z"``).
    digits : int
        Significant digits per number.

    Returns
    -------
    str
        The factored form.
    """
    n = coefficients(num, "the numerator")
    d = coefficients(den, "the denominator", allow_zero=False)
    if not np.any(n):
        return "0"
    gain = n[0] / d[0]
    nf = _root_factors(np.roots(n), var, digits)
    df = _root_factors(np.roots(d), var, digits)
    top = " ".join(nf)
    text = _fmt(gain, digits) + (f" {top}" if top else "")
    if df:
        bottom = " ".join(df)
        if len(df) > 1:
            bottom = f"({bottom})"
        text += f" / {bottom}"
    return text


# ---------------------------------------------------------------------------
# PID forms
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class PidParallel:
    """Parallel (independent-gain) PID form ``Kp + Ki/s + Kd s/(Tf s + 1)``.

    Attributes
    ----------
    kp, ki, kd : float
        Proportional, integral (1/s) and derivative (s) gains.
    tf : float
        Derivative filter time constant, ``>= 0``; ``0`` means no filter
        (an improper, ideal derivative).
    """

    kp: float
    ki: float
    kd: float
    tf: float

    @property
    def kind(self) -> str:
        """``"P"``, ``"PI"``, ``"PD"``, ``"PID"`` (or ``"I"``, ``"D"``, ``"ID"``)."""
        name = ("P" if self.kp != 0 else "") + ("I" if self.ki != 0 else "") + (
            "D" if self.kd != 0 else "")
        return name or "zero"

    @property
    def conventional(self) -> bool:
        """True when the nonzero gains share one sign (direct or reverse acting).

        A lead or lag network is exactly of the PD-with-filter form, but a lag
        gives a negative derivative gain; such a set of gains is valid
        arithmetic, not a textbook tuning, and a report should say so.
        """
        gains = np.array([self.kp, self.ki, self.kd])
        gains = gains[gains != 0]
        return bool(gains.size == 0 or np.all(gains > 0) or np.all(gains < 0))

    def to_json(self) -> dict:
        """Plain-number mapping ``{"kp", "ki", "kd", "tf", "kind"}``."""
        return {"kp": self.kp, "ki": self.ki, "kd": self.kd, "tf": self.tf, "kind": self.kind}


@dataclass(frozen=True)
class PidStandard:
    """Standard (ideal, ISA) form ``Kc (1 + 1/(Ti s) + Td s/((Td/N) s + 1))``.

    Attributes
    ----------
    kc : float
        Controller gain.
    ti : float
        Integral (reset) time in seconds; ``inf`` means no integral action.
    td : float
        Derivative time in seconds; ``0`` means no derivative action.
    n : float
        Derivative filter ratio ``N = Td/Tf``; ``inf`` means no filter (or no
        derivative action).
    """

    kc: float
    ti: float
    td: float
    n: float

    def to_json(self) -> dict:
        """Mapping ``{"kc", "ti", "td", "n"}``; an infinite value is ``None``."""
        return {k: (None if math.isinf(v) else v)
                for k, v in (("kc", self.kc), ("ti", self.ti), ("td", self.td), ("n", self.n))}


def pid_parallel_from_tf(num, den) -> PidParallel | None:
    """Recognise a PID-type compensator and return its parallel gains.

    Parameters
    ----------
    num, den : array_like
        ``C(s)`` in descending powers of ``s``.

    Returns
    -------
    PidParallel or None
        The gains when ``C`` equals ``Kp + Ki/s + Kd s/(Tf s + 1)`` with
        ``Tf >= 0``: denominators (up to a constant) ``1``, ``s``,
        ``Tf s + 1``, ``s (Tf s + 1)``, with a numerator of degree at most
        that of the form (one more when ``Tf = 0``: an ideal derivative).
        ``None`` otherwise (higher order, a double integrator, a derivative
        filter pole in the right half-plane, a denominator with a nonzero
        constant term and degree 2, ...). P, PI, PD and PID are special cases;
        a lead or lag network is recognised as PD with filter.

    Notes
    -----
    A denominator constant term below ``1e-10`` times its largest
    coefficient is read as zero (an integrator). Gains are found by matching
    coefficients of ``(Kp Tf + Kd) s^2 + (Kp + Ki Tf) s + Ki`` over
    ``Tf s^2 + s``.

    References
    ----------
    .. [1] K. J. Astrom and T. Hagglund, *PID Controllers: Theory, Design and
       Tuning*, 2nd ed., ISA, 1995, ch. 3 (controller forms).
    """
    n = coefficients(num, "the compensator numerator")
    d = coefficients(den, "the compensator denominator", allow_zero=False)
    dd, nd = d.size - 1, n.size - 1
    if dd > 2:
        return None
    scale = float(np.max(np.abs(d)))
    integrator = dd >= 1 and abs(d[-1]) <= _PID_ZERO_RTOL * scale
    n_asc = np.zeros(3)
    if nd > 2:
        return None
    n_asc[: nd + 1] = n[::-1]
    if dd == 0:
        if nd > 1:
            return None
        c0, c1 = n_asc[:2] / d[0]
        return PidParallel(kp=float(c0), ki=0.0, kd=float(c1), tf=0.0)
    if dd == 1 and integrator:
        # C = (c2 s^2 + c1 s + c0) / s: ideal PID (no filter), Ki = c0.
        c = n_asc / d[0]
        return PidParallel(kp=float(c[1]), ki=float(c[0]), kd=float(c[2]), tf=0.0)
    if dd == 1:
        if nd > 1:
            return None
        tf = d[0] / d[1]
        if tf < 0:
            return None
        c0, c1 = n_asc[:2] / d[1]
        kp = c0
        return PidParallel(kp=float(kp), ki=0.0, kd=float(c1 - kp * tf), tf=float(tf))
    # dd == 2: must be s (Tf s + 1)
    if not integrator or d[1] == 0:
        return None
    tf = d[0] / d[1]
    if tf < 0:
        return None
    c0, c1, c2 = n_asc / d[1]
    ki = c0
    kp = c1 - ki * tf
    kd = c2 - kp * tf
    return PidParallel(kp=float(kp), ki=float(ki), kd=float(kd), tf=float(tf))


def tf_from_pid_parallel(p: PidParallel) -> tuple[np.ndarray, np.ndarray]:
    """Transfer function of a parallel PID form.

    Parameters
    ----------
    p : PidParallel
        The gains; ``tf`` must be finite and ``>= 0``.

    Returns
    -------
    num, den : numpy.ndarray
        Descending powers of ``s``. The integrator factor ``s`` appears only
        when ``ki != 0`` and the filter factor ``Tf s + 1`` only when
        ``kd != 0`` and ``tf > 0``; leading zeros of ``num`` are trimmed.

    References
    ----------
    .. [1] K. J. Astrom and T. Hagglund, *PID Controllers: Theory, Design and
       Tuning*, 2nd ed., ISA, 1995, ch. 3.
    """
    vals = (p.kp, p.ki, p.kd, p.tf)
    if not all(isinstance(v, numbers.Real) and math.isfinite(v) for v in vals):
        raise InputError("PID gains and filter time must be finite numbers")
    if p.tf < 0:
        raise InputError(f"the derivative filter time must be >= 0, got {p.tf!r}")
    kp, ki, kd, tf = (float(v) for v in vals)
    filt = kd != 0 and tf > 0
    if filt and ki != 0:
        num = [kp * tf + kd, kp + ki * tf, ki]
        den = [tf, 1.0, 0.0]
    elif filt:
        num = [kp * tf + kd, kp]
        den = [tf, 1.0]
    elif ki != 0:
        num = [kd, kp, ki]
        den = [1.0, 0.0]
    else:
        num = [kd, kp]
        den = [1.0]
    return coefficients(num, "numerator"), np.array(den)


def pid_standard_from_parallel(p: PidParallel) -> PidStandard | None:
    """Standard form ``(Kc, Ti, Td, N)`` of a parallel PID form.

    ``Kc = Kp``, ``Ti = Kp/Ki``, ``Td = Kd/Kp``, ``N = Td/Tf`` (Astrom and
    Hagglund, from memory: ``Kp = Kc``, ``Ki = Kc/Ti``, ``Kd = Kc Td``).

    Parameters
    ----------
    p : PidParallel
        The parallel gains.

    Returns
    -------
    PidStandard or None
        ``None`` when ``Kp == 0`` (a pure I, D or ID controller has no
        standard form). ``Ti = inf`` when ``Ki == 0``; ``N = inf`` when
        ``Tf == 0`` or ``Td == 0``.

    References
    ----------
    .. [1] K. J. Astrom and T. Hagglund, *PID Controllers: Theory, Design and
       Tuning*, 2nd ed., ISA, 1995, section 3.4 (parallel and standard forms).
    """
    if p.kp == 0:
        return None
    kc = float(p.kp)
    ti = math.inf if p.ki == 0 else kc / p.ki
    td = p.kd / kc
    n = math.inf if (p.tf == 0 or td == 0) else td / p.tf
    return PidStandard(kc=kc, ti=float(ti), td=float(td), n=float(n))


def pid_parallel_from_standard(q: PidStandard) -> PidParallel:
    """Parallel gains of a standard-form PID (inverse of the above).

    ``Kp = Kc``, ``Ki = Kc/Ti`` (0 when ``Ti = inf``), ``Kd = Kc Td``,
    ``Tf = Td/N`` (0 when ``N = inf`` or ``Td = 0``).

    References
    ----------
    .. [1] K. J. Astrom and T. Hagglund, *PID Controllers: Theory, Design and
       Tuning*, 2nd ed., ISA, 1995, section 3.4.
    """
    if q.ti == 0 or q.n == 0:
        raise InputError("the standard PID form needs Ti != 0 and N != 0")
    ki = 0.0 if math.isinf(q.ti) else q.kc / q.ti
    tf = 0.0 if (math.isinf(q.n) or q.td == 0) else q.td / q.n
    return PidParallel(kp=float(q.kc), ki=float(ki), kd=float(q.kc * q.td), tf=float(tf))


# ---------------------------------------------------------------------------
# discrete time
# ---------------------------------------------------------------------------

def tustin_prewarp(num, den, T: float, w_warp: float | None = None
                   ) -> tuple[np.ndarray, np.ndarray]:
    """Discretise ``C(s)`` by Tustin's method, optionally pre-warped.

    Substitutes ``s = c (z - 1)/(z + 1)`` with ``c = w / tan(w T / 2)`` for
    ``w = w_warp``, or the plain ``c = 2/T`` when ``w_warp`` is ``None`` or
    0. With pre-warping the discrete response equals the continuous one
    exactly at ``w_warp``: ``Cd(exp(j w T)) = C(j w)``.  The substitution is
    :func:`scipy.signal.bilinear` with the sampling rate ``fs = c / 2``.

    Parameters
    ----------
    num, den : array_like
        ``C(s)`` in descending powers of ``s``; an improper ``C`` (ideal
        derivative) is allowed.
    T : float
        Sample time in seconds, ``> 0``.
    w_warp : float, optional
        Pre-warping frequency in rad/s, ``0 <= w_warp < pi/T``, typically
        the crossover frequency.

    Returns
    -------
    numd, dend : numpy.ndarray
        ``Cd(z)`` in descending powers of ``z``, both of degree
        ``max(deg num, deg den)``, scaled so that ``dend[0] == 1``.

    Raises
    ------
    synth.errors.InputError
        Bad sample time, a pre-warping frequency at or above the Nyquist
        frequency ``pi/T``, or a compensator pole at ``s = c`` (where the map
        sends it to infinity).

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
       Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 6 (Tustin's
       method with frequency pre-warping), from memory.
    """
    import warnings

    from scipy.signal import BadCoefficients, bilinear

    T = _positive_time(T)
    n = coefficients(num, "the compensator numerator")
    d = coefficients(den, "the compensator denominator", allow_zero=False)
    if w_warp is None or w_warp == 0:
        c = 2.0 / T
    else:
        if isinstance(w_warp, bool) or not isinstance(w_warp, numbers.Real) or not math.isfinite(
                w_warp) or w_warp < 0:
            raise InputError(f"the pre-warping frequency must be a finite number >= 0, got {w_warp!r}")
        nyquist = math.pi / T
        if w_warp >= nyquist:
            raise InputError(
                f"the pre-warping frequency {w_warp:g} rad/s is not below the Nyquist frequency "
                f"pi/T = {nyquist:g} rad/s; sample faster"
            )
        c = float(w_warp) / math.tan(float(w_warp) * T / 2.0)
    # the leading z coefficient of the mapped denominator is den(c): a pole at s = c
    # goes to z = infinity (compared with the coefficients' own size, so scale-free)
    order = max(n.size, d.size) - 1
    size = float(np.max(np.abs(d) * np.abs(c) ** np.arange(d.size - 1, -1, -1)))
    if abs(np.polyval(d, c)) <= 1e-12 * size:
        raise InputError(
            f"the compensator has a pole at s = {c:g} where Tustin's map is singular; "
            "change the sample time"
        )
    with warnings.catch_warnings():
        # a compensator zero at s = c gives a leading zero in z; it is padded back below
        warnings.simplefilter("ignore", BadCoefficients)
        # bilinear substitutes s = 2 fs (z - 1)/(z + 1): fs = c / 2 gives the pre-warped map
        numd, dend = bilinear(n, d, fs=c / 2.0)
    numd = np.concatenate([np.zeros(order + 1 - numd.size), numd])
    return numd.astype(float), dend.astype(float)


@dataclass(frozen=True)
class DifferenceEquation:
    """``u[k] = sum_i b[i] e[k-i] - sum_{i>=1} a[i] u[k-i]`` with ``a[0] = 1``.

    Attributes
    ----------
    b : tuple of float
        Coefficients of ``e[k], e[k-1], ...``.
    a : tuple of float
        ``(1, a1, a2, ...)``: coefficients of ``u[k], u[k-1], ...`` on the
        left-hand side.
    text : str
        The recursion written out, e.g.
        ``"u[k] = 2.5 e[k] - 2.3 e[k-1] + 1 u[k-1]"``.
    """

    b: tuple[float, ...]
    a: tuple[float, ...]
    text: str

    def to_json(self) -> dict:
        """Mapping ``{"b": [...], "a": [...], "text": str}``."""
        return {"b": list(self.b), "a": list(self.a), "text": self.text}


def difference_equation(numd, dend, digits: int = 8) -> DifferenceEquation:
    """Difference equation of ``Cd(z) = numd/dend`` (descending powers of z).

    Parameters
    ----------
    numd, dend : array_like
        Discrete compensator; ``deg numd <= deg dend`` (causal).
    digits : int
        Significant digits in ``text`` (``b`` and ``a`` keep full precision).

    Returns
    -------
    DifferenceEquation
        ``a`` normalised to ``a[0] = 1``; ``b`` padded on the left so that
        ``b[i]`` multiplies ``e[k-i]``.

    References
    ----------
    .. [1] A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal
       Processing*, 3rd ed., Pearson, 2010, section 6.1 (direct-form
       difference equations).
    """
    b = coefficients(numd, "the discrete numerator")
    a = coefficients(dend, "the discrete denominator", allow_zero=False)
    if b.size > a.size:
        raise InputError("the discrete compensator is not causal (numerator degree above denominator)")
    b = np.concatenate([np.zeros(a.size - b.size), b]) / a[0]
    a = a / a[0]
    terms: list[tuple[float, str]] = [(bi, f"e[k{'-' + str(i) if i else ''}]")
                                      for i, bi in enumerate(b)]
    terms += [(-ai, f"u[k-{i}]") for i, ai in enumerate(a) if i > 0]
    parts: list[str] = []
    for coef, sym in terms:
        if coef == 0:
            continue
        mag = _fmt(abs(coef), digits)
        if not parts:
            parts.append(f"{'-' if coef < 0 else ''}{mag} {sym}")
        else:
            parts.append(f" {'-' if coef < 0 else '+'} {mag} {sym}")
    text = "u[k] = " + ("".join(parts) if parts else "0")
    return DifferenceEquation(b=tuple(float(x) for x in b), a=tuple(float(x) for x in a), text=text)


def sample_rate_warning(T: float, bandwidth_rad_s: float) -> str | None:
    """Warn when sampling is slow compared with the closed-loop bandwidth.

    Common practice asks for a sampling frequency ``2 pi / T`` of about 10 to
    30 times the closed-loop bandwidth (Franklin, Powell and Workman, from
    memory); the rule and its words are
    :func:`synth.problem.sampling.rate_message`'s.

    Parameters
    ----------
    T : float
        Sample time in seconds, ``> 0``.
    bandwidth_rad_s : float
        Closed-loop bandwidth in rad/s, ``> 0``.

    Returns
    -------
    str or None
        ``"warning: ..."`` below 10 times, ``"note: ..."`` from 10 up to 30
        times, ``None`` at 30 times or more.
    """
    from synth.problem.sampling import rate_message

    T = _positive_time(T)
    bw = _positive_time(bandwidth_rad_s, "the closed-loop bandwidth")
    ws = 2.0 * math.pi / T
    return rate_message(ws / bw, ws, bw, "the closed-loop bandwidth")


@dataclass(frozen=True)
class DiscreteImplementation:
    """A compensator ready for a sampled controller, with its loop check.

    Attributes
    ----------
    sample_time : float
        Seconds.
    warp_frequency : float or None
        Pre-warping frequency in rad/s, ``None`` for plain Tustin.
    numerator, denominator : tuple of float
        ``Cd(z)``, descending powers of ``z``, ``denominator[0] == 1``.
    difference : DifferenceEquation
        The recursion to code.
    loop : SampledLoopCheck
        The sampled loop with the plant by zero-order hold.
    rate_note : str or None
        From :func:`sample_rate_warning` when a bandwidth was given.
    """

    sample_time: float
    warp_frequency: float | None
    numerator: tuple[float, ...]
    denominator: tuple[float, ...]
    difference: DifferenceEquation
    loop: SampledLoopCheck
    rate_note: str | None

    def to_json(self) -> dict:
        """Plain mapping for the design JSON."""
        return {"sample_time": self.sample_time, "warp_frequency": self.warp_frequency,
                "numerator": list(self.numerator), "denominator": list(self.denominator),
                "difference_equation": self.difference.to_json(),
                "sampled_loop": self.loop.to_json(), "sample_rate_note": self.rate_note}


def discrete_implementation(c_num, c_den, g_num, g_den, T: float, w_warp: float | None = None,
                            dead_time: float = 0.0, bandwidth_rad_s: float | None = None
                            ) -> DiscreteImplementation:
    """Tustin compensator, difference equation and sampled-loop check in one call.

    Parameters
    ----------
    c_num, c_den : array_like
        Continuous compensator ``C(s)``.
    g_num, g_den : array_like
        Delay-free rational plant ``G(s)`` (proper).
    T : float
        Sample time in seconds.
    w_warp : float, optional
        Pre-warping frequency (the crossover), rad/s, below ``pi/T``.
    dead_time : float, optional
        Exact plant dead time in seconds, discretised exactly with the hold.
    bandwidth_rad_s : float, optional
        Closed-loop bandwidth for :func:`sample_rate_warning`.

    Returns
    -------
    DiscreteImplementation

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
       Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, from memory.
    """
    numd, dend = tustin_prewarp(c_num, c_den, T, w_warp)
    gnd, gdd = zoh_discretise(g_num, g_den, T, dead_time)
    loop = sampled_loop_check(gnd, gdd, numd, dend, T)
    note = None if bandwidth_rad_s is None else sample_rate_warning(T, bandwidth_rad_s)
    return DiscreteImplementation(
        sample_time=float(T), warp_frequency=None if not w_warp else float(w_warp),
        numerator=tuple(float(x) for x in numd), denominator=tuple(float(x) for x in dend),
        difference=difference_equation(numd, dend), loop=loop, rate_note=note)
