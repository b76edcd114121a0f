"""The discrete controller: what runs in the firmware, exactly as synth simulates it.

A design (:class:`synth.verify.controller.Controller`: ``C(s)``, reference
shaping, anti-windup) plus a sample time and the actuator's limits becomes a
:class:`DiscreteController`:

* the map from s to z (:class:`ZMap`): Tustin's method, pre-warped at a
  chosen frequency (the loop's gain crossover) or plain; or a controller
  already given in z (``"direct"``), whose auxiliary parts (a prefilter, the
  tracking poles) then use plain Tustin;
* the realisation: one section in direct form II transposed when the
  compensator's order is at most 2, otherwise a cascade of second-order
  sections (:func:`scipy.signal.zpk2sos`, pairing ``"nearest"``), each in
  direct form II transposed (common practice: the coefficients of a
  higher-order polynomial with poles near ``z = 1`` are ill-conditioned, its
  factors are not);
* reference shaping: a prefilter ``F(z)`` (the same map, its own sections)
  ahead of the error, or PID set-point weights ``(b, c)`` as a two-input
  first section ``R v = T r - S y`` with ``T`` from the weighted parallel form;
* the output: a rate limit ``|u[k] - u[k-1]| <= max_rate T`` and the limits
  ``[low, high]``;
* anti-windup in observer form (Astrom and Wittenmark): the last section,
  which holds the poles the scheme tracks, runs
  ``A_aw v = B x + (A_aw - A) u`` with ``u`` the limited output, so
  ``A v = B x`` while nothing limits (the linear controller is untouched) and
  the tracking polynomial ``A_aw`` sets the dynamics while the output is
  held.  Schemes: ``back-calculation`` (the integrator's pole ``z = 1`` moves
  to the image of ``s = -1/tracking_time``), ``observer`` (every pole on or
  outside the unit circle moves there), ``conditioning`` (Hanus: ``A_aw`` is
  the compensator's own numerator, which must be biproper with its zeros
  inside the unit circle).

Everything the controller does per sample is one straight-line
:class:`Program` (assignments of sums of products, and clamps).  The C and
Structured Text exports print that program; :class:`ControllerRun` executes
it, on Python floats or on numpy arrays (many input sequences at once), with
the same operations in the same order, so synth's vectors and the exported
code agree to rounding.  :meth:`DiscreteController.transfer` and
:meth:`DiscreteController.reference_transfer` give the linear part as
transfer functions in z for the sampled-loop verifier.

References
----------
.. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
   Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 6 (Tustin's method
   with pre-warping), from memory.
.. [2] K. J. Astrom and B. Wittenmark, *Computer-Controlled Systems*, 3rd ed.,
   Prentice Hall, 1997, sec. 9.4 (anti-windup in observer form
   ``A_aw v = T uc - S y + (A_aw - R) u``), from memory.
.. [3] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
   ch. 3 (set-point weighting, back-calculation with a tracking time).
.. [4] R. Hanus, M. Kinnaert and J.-L. Henrotte, "Conditioning technique, a
   general anti-windup and bumpless transfer method", *Automatica* 23(6),
   1987.
.. [5] A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*,
   3rd ed., Pearson, 2010, sec. 6.3-6.5 (transposed direct form, cascade of
   second-order sections, coefficient sensitivity).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from synth.errors import InputError

__all__ = [
    "ANTI_WINDUP_SCHEMES",
    "Assign",
    "Clamp",
    "ControllerRun",
    "DiscreteController",
    "Program",
    "Section",
    "ZMap",
    "discrete_controller",
]

#: Anti-windup schemes the discrete controller implements (see the module text).
#: ``"none"`` is the scheme synth writes for a compensator with nothing to wind up.
ANTI_WINDUP_SCHEMES = ("back-calculation", "observer", "conditioning", "none")

#: Map methods: Tustin pre-warped at ``warp_frequency``, plain Tustin, or a controller given in z.
METHODS = ("tustin-prewarp", "tustin", "direct")

#: A pole within this relative distance of ``z = 1`` (or of the unit circle) is treated as
#: on it: an integrator, or a pole the observer scheme must track.  Relative to 1, the unit
#: circle's own scale, so it is no absolute tolerance on a frequency.
_ON_CIRCLE = 1e-9

#: Realisation names as the header and the JSON write them.
DF2T = "direct form II transposed"
SOS = "cascade of second-order sections"


# ----------------------------------------------------------------------------------------------
# the map from s to z
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ZMap:
    """How a continuous part becomes discrete.

    Attributes
    ----------
    method : str
        ``"tustin-prewarp"`` (``s = c (z - 1)/(z + 1)``, ``c = w / tan(w T / 2)``
        at ``w = warp_frequency``), ``"tustin"`` (``c = 2 / T``), or
        ``"direct"`` (the compensator is given in z; auxiliary parts use
        plain Tustin).
    period : float
        Sample time ``T`` in seconds.
    warp_frequency : float or None
        rad/s, below ``pi / T``; only for ``"tustin-prewarp"``.
    """

    method: str
    period: float
    warp_frequency: float | None = None

    def __post_init__(self):
        if self.method not in METHODS:
            raise ValueError(f"unknown method {self.method!r}; known: {METHODS}")
        if not (math.isfinite(self.period) and self.period > 0):
            raise ValueError(f"period must be > 0, got {self.period!r}")
        if self.method == "tustin-prewarp":
            w = self.warp_frequency
            if w is None or not (0 < w < math.pi / self.period):
                raise ValueError(f"warp_frequency must lie in (0, pi/T), got {w!r}")

    @property
    def c(self) -> float:
        """The constant of ``s = c (z - 1)/(z + 1)``."""
        if self.method == "tustin-prewarp":
            w = float(self.warp_frequency)
            return w / math.tan(w * self.period / 2.0)
        return 2.0 / self.period

    def point(self, s):
        """The image ``z = (c + s)/(c - s)`` of points ``s``."""
        s = np.asarray(s, dtype=complex)
        return (self.c + s) / (self.c - s)

    def factors(self, zeros, poles, gain: float, what: str = "the compensator"):
        """Map ``gain * prod(s - zeros) / prod(s - poles)`` to z, factor by factor.

        Each root goes through the map ``z = (c + s)/(c - s)``; the
        ``len(poles) - len(zeros)`` zeros at infinity go to ``z = -1``; the gain
        becomes ``gain * prod(c - zeros) / prod(c - poles)``.  Mapping the
        factors rather than the polynomial coefficients keeps a compensator
        with widely spread roots well conditioned (tests/test_discrete.py checks
        it against :func:`scipy.signal.cont2discrete` with ``method="bilinear"``
        on the coefficients).

        Raises
        ------
        InputError
            An improper part (more zeros than poles: it has no discrete form
            without a filter), or a pole at ``s = c`` (sent to infinity).

        References
        ----------
        A. Tustin, "A method of analysing the behaviour of linear systems in
        terms of time series", J. IEE 94(IIA), 1947.
        """
        z = np.asarray(zeros, dtype=complex)
        p = np.asarray(poles, dtype=complex)
        if z.size > p.size:
            raise InputError(f"{what} is improper (more zeros than poles) and has no discrete "
                             "form; give its derivative action a filter")
        c = self.c
        if p.size and np.any(np.abs(p - c) <= 1e-12 * c):
            raise InputError(f"{what} has a pole at s = {c:g}, where Tustin's map is singular; "
                             "change the sample time")
        zd = np.concatenate([self.point(z), -np.ones(p.size - z.size, dtype=complex)])
        pd = self.point(p)
        kd = gain * np.prod(c - z) / np.prod(c - p)
        return zd, pd, float(np.real(kd))

    def describe(self) -> str:
        """The method in words, for headers and reports."""
        if self.method == "tustin-prewarp":
            return (f"Tustin's method pre-warped at {self.warp_frequency:.6g} rad/s (the loop's "
                    "gain crossover)")
        if self.method == "tustin":
            return "Tustin's method (bilinear, no pre-warping)"
        return "given in z (reference filter and tracking poles by Tustin's method)"


# ----------------------------------------------------------------------------------------------
# realisation
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Section:
    """One section in direct form II transposed, ``a[0] = 1``.

    ``y = b0 x + w1``; ``w_i <- b_i x - a_i y + w_(i+1)``.  With ``t`` it
    has two inputs (reference ``r`` and measurement ``m``):
    ``y = t0 r - b0 m + w1``, ``w_i <- t_i r - b_i m - a_i y + w_(i+1)``.
    With ``o`` (anti-windup, last section only) the feedback uses the
    limited output ``u``: ``w_i <- ... - a_i u + o_i (u - y) + w_(i+1)``.

    Attributes
    ----------
    b, a : tuple of float
        Numerator and denominator, descending powers of z, equal length
        (order + 1), ``a[0] == 1``.
    t : tuple of float or None
        Reference-channel numerator of a two-input section.
    o : tuple of float or None
        Tracking polynomial ``A_aw`` (monic, same length).
    """

    b: tuple[float, ...]
    a: tuple[float, ...]
    t: tuple[float, ...] | None = None
    o: tuple[float, ...] | None = None

    @property
    def order(self) -> int:
        return len(self.a) - 1

    def to_json(self) -> dict:
        out = {"b": list(self.b), "a": list(self.a)}
        if self.t is not None:
            out["t"] = list(self.t)
        if self.o is not None:
            out["tracking"] = list(self.o)
        return out


def _real_poly(roots, gain: float = 1.0) -> np.ndarray:
    r = np.asarray(roots, dtype=complex)
    return gain * (np.real(np.poly(r)) if r.size else np.ones(1))


def _section_from(b: np.ndarray, a: np.ndarray, t=None) -> Section:
    """Pad ``b`` (and ``t``) on the left to the length of ``a``; normalise ``a[0] = 1``."""
    n = a.size
    lead = float(a[0])
    b = np.concatenate([np.zeros(n - b.size), b]) / lead
    out_t = None
    if t is not None:
        t = np.asarray(t, dtype=float)
        out_t = tuple(float(x) for x in np.concatenate([np.zeros(n - t.size), t]) / lead)
    return Section(b=tuple(float(x) for x in b), a=tuple(float(x) for x in a / lead), t=out_t)


def _trim_section(s: Section) -> Section:
    """Drop the structural zero of a first-order section padded to second order."""
    if s.order == 2 and s.a[2] == 0 and s.b[2] == 0 and (s.t is None or s.t[2] == 0):
        return Section(b=s.b[:2], a=s.a[:2], t=None if s.t is None else s.t[:2], o=None)
    return s


def _contains(a: tuple[float, ...], p: complex) -> bool:
    """Whether ``p`` is a root of the section polynomial ``a`` (to rounding, relative)."""
    n = len(a) - 1
    size = sum(abs(c) * abs(p) ** (n - i) for i, c in enumerate(a))
    return abs(np.polyval(np.asarray(a), p)) <= 1e-8 * max(size, 1e-300)


def _cascade(zd, pd, kd: float, tracked) -> tuple[tuple[Section, ...], str]:
    """Sections for ``kd prod(z - zd) / prod(z - pd)``; the tracked poles in the last one.

    Order <= 2: one section.  Otherwise :func:`scipy.signal.zpk2sos` with the
    ``"nearest"`` pairing; the section holding the tracked poles goes last,
    and when they are spread over several sections the whole compensator
    stays one section (so the anti-windup reaches every pole it must), with
    the reason in the returned note.
    """
    from scipy.signal import zpk2sos

    order = max(zd.size, pd.size)
    if order <= 2:
        return (_section_from(_real_poly(zd, kd), _real_poly(pd)),), ""
    sos = zpk2sos(zd, pd, kd, pairing="nearest")
    sections = [_trim_section(_section_from(row[:3], row[3:])) for row in sos]
    if len(tracked):
        holders = {i for p in tracked for i, s in enumerate(sections) if _contains(s.a, p)}
        if len(holders) > 1:
            return ((_section_from(_real_poly(zd, kd), _real_poly(pd)),),
                    "the poles the anti-windup tracks fall into different second-order sections, "
                    f"so the compensator is kept as one section of order {order}")
        if holders:
            (i,) = holders
            sections.append(sections.pop(i))
    return tuple(sections), ""


def _replace_roots(a: tuple[float, ...], old, new) -> np.ndarray:
    """The monic polynomial of ``a``'s roots with each root in ``old`` replaced by ``new``."""
    roots = list(np.roots(np.asarray(a))) if len(a) > 1 else []
    for p in old:
        if not roots:
            break
        j = int(np.argmin([abs(r - p) for r in roots]))
        roots[j] = new
    return _real_poly(roots)


# ----------------------------------------------------------------------------------------------
# the per-sample program
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Assign:
    """``target = sum of sign * name1 [* name2]``, evaluated left to right.

    Attributes
    ----------
    target : str
    terms : tuple of (int, str, str or None)
        ``(+1 or -1, factor, second factor or None)``.
    """

    target: str
    terms: tuple[tuple[int, str, str | None], ...]


@dataclass(frozen=True)
class Clamp:
    """``if target < low: target = low``; then ``if target > high: target = high``."""

    target: str
    low: str | None
    high: str | None


@dataclass(frozen=True)
class Program:
    """What the controller does per sample, as straight-line code.

    Attributes
    ----------
    inputs : tuple of str
        ``("reference", "measurement")``.
    constants : tuple of (str, float, str)
        Name, value, comment.
    states : tuple of (str, float, str)
        Name, initial value, comment: the variables kept between samples.
    temps : tuple of str
        Variables computed within a sample.
    statements : tuple of Assign or Clamp
        In order; each reads inputs, constants, states and earlier temps.
    output : str
        The temp holding the value returned (the limited output).
    """

    inputs: tuple[str, ...]
    constants: tuple[tuple[str, float, str], ...]
    states: tuple[tuple[str, float, str], ...]
    temps: tuple[str, ...]
    statements: tuple
    output: str

    def names(self) -> tuple[str, ...]:
        """Every variable name, in slot order."""
        return (*self.inputs, *(c[0] for c in self.constants), *(s[0] for s in self.states),
                *self.temps)


class _Builder:
    """Collects a program's declarations and statements (a local helper, never shared)."""

    def __init__(self):
        self.constants: list[tuple[str, float, str]] = []
        self.states: list[tuple[str, float, str]] = []
        self.temps: list[str] = []
        self.statements: list = []

    def const(self, name: str, value: float, comment: str = "") -> str:
        self.constants.append((name, float(value), comment))
        return name

    def state(self, name: str, comment: str, initial: float = 0.0) -> str:
        self.states.append((name, float(initial), comment))
        return name

    def temp(self, name: str) -> str:
        if name not in self.temps:
            self.temps.append(name)
        return name

    def assign(self, target: str, terms) -> None:
        terms = tuple(t for t in terms if t is not None)
        self.statements.append(Assign(target, terms))

    def section(self, prefix: str, s: Section, x: str, y: str, *, r: str | None = None,
                held: str | None = None, delta: str | None = None) -> list:
        """Declare a section's constants and states and emit its output statement.

        ``x`` is the input (the measurement of a two-input section, whose
        reference is ``r``); ``held`` and ``delta`` (the limited output and
        ``u - v``) switch on the tracking terms.  Returns the state updates,
        which the caller places (after the output is limited, for the last
        section).
        """
        n = s.order

        def consts(letter, values, what, first):
            return [None] * first + [
                self.const(f"{prefix}_{letter}{i}", values[i], f"{prefix}: {what}, z^-{i}")
                if values[i] != 0 else None for i in range(first, n + 1)]

        b = consts("b", s.b, "numerator" if s.t is None else "measurement numerator", 0)
        a = consts("a", s.a, "denominator", 1)
        t = None if s.t is None else consts("t", s.t, "reference numerator", 0)
        o = None if held is None or s.o is None else consts("o", s.o, "tracking polynomial", 1)
        w = [None] + [self.state(f"{prefix}_w{i}", f"{prefix}: state {i}") for i in range(1, n + 1)]

        def inputs(i):
            if t is None:
                return [(1, b[i], x) if b[i] else None]
            return [(1, t[i], r) if t[i] else None, (-1, b[i], x) if b[i] else None]

        def put(target, terms):
            terms = tuple(term for term in terms if term is not None)
            if not terms:  # every coefficient is zero
                terms = ((1, self.const("zero", 0.0, "zero"), None),)
            return Assign(target, terms)

        self.statements.append(put(y, [*inputs(0), (1, w[1], None) if n >= 1 else None]))
        updates = []
        for i in range(1, n + 1):
            terms = [*inputs(i)]
            if o is None:
                terms.append((-1, a[i], y) if a[i] else None)
            else:
                terms.append((-1, a[i], held) if a[i] else None)
                terms.append((1, o[i], delta) if o[i] else None)
            terms.append((1, w[i + 1], None) if i < n else None)
            updates.append(put(w[i], terms))
        return updates


# ----------------------------------------------------------------------------------------------
# the controller
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class DiscreteController:
    """A complete discrete controller: reference shaping, ``C(z)``, limits, anti-windup.

    Build it with :func:`discrete_controller`.

    Attributes
    ----------
    zmap : ZMap
        How its parts were mapped to z.
    compute_delay : float
        Seconds from sampling to the new output (the loop's business, not the
        controller's: it shapes the sampled loop, not the program).
    sections : tuple of Section
        The compensator ``C(z)``, in cascade order (the last holds the
        tracked poles; a two-input first section implements set-point weights).
    prefilter : tuple of Section
        ``F(z)`` ahead of the error (empty: none).
    limits : (float, float) or None
        Output range ``[low, high]``.
    max_rate : float or None
        Units per second.
    anti_windup : str or None
        The scheme (see :data:`ANTI_WINDUP_SCHEMES`).
    anti_windup_parameters : mapping
        Its parameters as given (e.g. ``{"tracking_time": 1.3}``).
    shaping : str
        ``""``, ``"prefilter"`` or ``"setpoint-weights"``.
    setpoint_weights : (float, float) or None
        ``(b, c)``.
    realisation : str
        :data:`DF2T` or :data:`SOS`.
    notes : tuple of str
        Facts about the realisation worth a comment in exported code.
    """

    zmap: ZMap
    compute_delay: float
    sections: tuple[Section, ...]
    prefilter: tuple[Section, ...] = ()
    limits: tuple[float, float] | None = None
    max_rate: float | None = None
    anti_windup: str | None = None
    anti_windup_parameters: Mapping[str, float] = field(default_factory=dict)
    shaping: str = ""
    setpoint_weights: tuple[float, float] | None = None
    realisation: str = DF2T
    notes: tuple[str, ...] = ()

    # -- linear part -----------------------------------------------------------------------

    @property
    def period(self) -> float:
        return self.zmap.period

    @property
    def order(self) -> int:
        """The compensator's order (number of states of its sections)."""
        return sum(s.order for s in self.sections)

    def transfer(self) -> tuple[np.ndarray, np.ndarray]:
        """``C(z)`` from the measurement's error to the output, descending powers of z.

        The product of the sections (exactly what runs); ``den[0] == 1``.
        """
        num, den = np.ones(1), np.ones(1)
        for s in self.sections:
            num = np.polymul(num, s.b)
            den = np.polymul(den, s.a)
        return num, den

    def reference_transfer(self) -> tuple[np.ndarray, np.ndarray]:
        """The linear map from the reference to the output (measurement 0), in z.

        ``F(z) C(z)`` with a prefilter; ``T(z)/A(z)`` with set-point weights;
        ``C(z)`` otherwise.
        """
        num, den = np.ones(1), np.ones(1)
        for i, s in enumerate(self.sections):
            num = np.polymul(num, s.t if (i == 0 and s.t is not None) else s.b)
            den = np.polymul(den, s.a)
        for s in self.prefilter:
            num = np.polymul(num, s.b)
            den = np.polymul(den, s.a)
        return num, den

    def tracking_polynomial(self) -> np.ndarray:
        """``A_aw(z)`` of the whole compensator (``A(z)`` without anti-windup)."""
        den = np.ones(1)
        for s in self.sections:
            den = np.polymul(den, s.o if s.o is not None else s.a)
        return den

    # -- the program -----------------------------------------------------------------------

    def program(self) -> Program:
        """The per-sample program the exports print and :class:`ControllerRun` executes."""
        bld = _Builder()
        r, m = "reference", "measurement"
        x = r
        for j, s in enumerate(self.prefilter, start=1):
            y = bld.temp(f"f{j}_out")
            bld.statements.extend(bld.section(f"f{j}", s, x, y))
            x = y
        ref = x
        limited = self.limits is not None or self.max_rate is not None
        tracked = limited and any(s.o is not None for s in self.sections)
        v = bld.temp("v")
        u = bld.temp("u") if limited else v
        d = bld.temp("d") if tracked else None
        deferred: list = []
        two_input = bool(self.sections) and self.sections[0].t is not None
        if not two_input:
            e = bld.temp("e")
            bld.assign(e, [(1, ref, None), (-1, m, None)])
            x = e
        for j, s in enumerate(self.sections, start=1):
            last = j == len(self.sections)
            y = v if last else bld.temp(f"c{j}_out")
            r_in = ref if (j == 1 and two_input) else None
            xin = m if r_in is not None else x
            track = {"held": u, "delta": d} if (last and tracked and s.o is not None) else {}
            updates = bld.section(f"c{j}", s, xin, y, r=r_in, **track)
            if last:
                deferred = updates  # after the output is limited
            else:
                bld.statements.extend(updates)
            x = y
        if not self.sections:  # a zero controller
            bld.assign(v, [(1, bld.const("zero", 0.0, "zero"), None)])
        if limited:
            bld.assign(u, [(1, v, None)])
            if self.max_rate is not None:
                step = bld.const("du_max", self.max_rate * self.period,
                                 "largest change of the output per sample (max_rate * T)")
                start = 0.0 if self.limits is None else min(max(0.0, self.limits[0]),
                                                            self.limits[1])
                last_u = bld.state("u_last", "the previous output (rate limit)", start)
                lo, hi = bld.temp("u_lo"), bld.temp("u_hi")
                bld.assign(lo, [(1, last_u, None), (-1, step, None)])
                bld.assign(hi, [(1, last_u, None), (1, step, None)])
                bld.statements.append(Clamp(u, lo, hi))
            if self.limits is not None:
                umin = bld.const("u_min", self.limits[0], "lower output limit")
                umax = bld.const("u_max", self.limits[1], "upper output limit")
                bld.statements.append(Clamp(u, umin, umax))
            if tracked:
                bld.assign(d, [(1, u, None), (-1, v, None)])
        bld.statements.extend(deferred)
        if self.max_rate is not None:
            bld.assign("u_last", [(1, u, None)])
        # one declaration per constant name (the shared "zero")
        consts, seen = [], set()
        for c in bld.constants:
            if c[0] not in seen:
                seen.add(c[0])
                consts.append(c)
        return Program(inputs=(r, m), constants=tuple(consts), states=tuple(bld.states),
                       temps=tuple(bld.temps), statements=tuple(bld.statements), output=u)

    def state_space(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """The linear controller as the program runs it: ``x[k+1] = A x + B w``, ``v = C x + D w``.

        ``w = [reference, measurement]``; ``x`` the program's states in declaration order.
        The limits and the rate limit are left out (so the anti-windup terms vanish, as they
        do while nothing limits); everything else is the exported program, read off by one
        step from unit states and unit inputs (:class:`ControllerRun` on a batch), so the
        sampled-data verifier judges the very coefficients and structure that run.

        Returns
        -------
        A : ndarray (n, n)
        B : ndarray (n, 2)
        C : ndarray (n,)
        D : ndarray (2,)
        """
        from dataclasses import replace

        program = replace(self, limits=None, max_rate=None).program()
        names = [s[0] for s in program.states]
        n = len(names)
        basis = np.eye(n + 2)
        run = ControllerRun(program, (n + 2,))
        for i, name in enumerate(names):
            run.set(name, basis[i].copy())
        out = np.asarray(run.step(basis[n], basis[n + 1]), dtype=float)
        nxt = np.array([np.asarray(run.value(nm), dtype=float) for nm in names]).reshape(n, n + 2)
        return nxt[:, :n], nxt[:, n:], out[:n], out[n:]

    # -- running it ------------------------------------------------------------------------

    def start(self, shape: tuple[int, ...] = ()) -> ControllerRun:
        """A fresh run from rest (every state as :meth:`program` initialises it).

        Parameters
        ----------
        shape : tuple of int
            ``()`` for scalar inputs; ``(B,)`` to run ``B`` input sequences at once.
        """
        return ControllerRun(self.program(), shape)

    def simulate(self, reference, measurement) -> np.ndarray:
        """The outputs for input sequences, from rest.

        Parameters
        ----------
        reference, measurement : array_like
            Shape ``(N,)`` or ``(N, B)`` (``B`` sequences at once).

        Returns
        -------
        numpy.ndarray
            The limited outputs, shaped like the inputs.
        """
        r = np.asarray(reference, dtype=float)
        y = np.asarray(measurement, dtype=float)
        r, y = np.broadcast_arrays(r, y)
        run = self.start(r.shape[1:])
        out = np.empty(r.shape)
        for k in range(r.shape[0]):
            out[k] = run.step(r[k], y[k])
        return out

    def to_json(self) -> dict:
        """The realisation as plain values (for the design JSON)."""
        num, den = self.transfer()
        return {
            "method": self.zmap.method, "warp_frequency": self.zmap.warp_frequency,
            "realisation": self.realisation,
            "sections": [s.to_json() for s in self.sections],
            "prefilter_sections": [s.to_json() for s in self.prefilter],
            "reference_shaping": self.shaping or None,
            "anti_windup": (None if self.anti_windup is None else
                            {"scheme": self.anti_windup,
                             "parameters": dict(self.anti_windup_parameters),
                             "tracking_polynomial": [float(x) for x in
                                                     self.tracking_polynomial()]}),
            "limits": None if self.limits is None else list(self.limits),
            "max_rate": self.max_rate,
            "notes": list(self.notes),
        }


class ControllerRun:
    """One run of a :class:`Program`: its state between samples.

    A mutable object made per run (never shared).  :meth:`step` executes the
    program's statements in order with the same operations as the exported
    code: every sum from left to right, a leading negative term as
    ``-(a * b)``, clamps as two comparisons.

    Parameters
    ----------
    program : Program
    shape : tuple of int
        Batch shape of the inputs (``()`` for scalars).
    """

    def __init__(self, program: Program, shape: tuple[int, ...] = ()):
        names = program.names()
        self._slot = {n: i for i, n in enumerate(names)}
        env: list = [0.0] * len(names)
        for name, value, _ in program.constants:
            env[self._slot[name]] = value
        for name, value, _ in program.states:
            env[self._slot[name]] = np.full(shape, value) if shape else value
        self._env = env
        ops = []
        for st in program.statements:
            if isinstance(st, Assign):
                terms = tuple((sign, self._slot[a], -1 if b is None else self._slot[b])
                              for sign, a, b in st.terms)
                ops.append((0, self._slot[st.target], terms))
            else:
                ops.append((1, self._slot[st.target],
                            -1 if st.low is None else self._slot[st.low],
                            -1 if st.high is None else self._slot[st.high]))
        self._ops = tuple(ops)
        self._r, self._y = self._slot[program.inputs[0]], self._slot[program.inputs[1]]
        self._out = self._slot[program.output]
        self._array = bool(shape)

    def step(self, reference, measurement):
        """One sample: the limited output for this reference and measurement."""
        env = self._env
        env[self._r] = reference
        env[self._y] = measurement
        for op in self._ops:
            if op[0] == 0:
                acc = None
                for sign, a, b in op[2]:
                    val = env[a] if b < 0 else env[a] * env[b]
                    if acc is None:
                        acc = val if sign > 0 else -val
                    elif sign > 0:
                        acc = acc + val
                    else:
                        acc = acc - val
                env[op[1]] = acc
            else:
                val = env[op[1]]
                if op[2] >= 0:
                    val = np.maximum(val, env[op[2]]) if self._array else (
                        env[op[2]] if val < env[op[2]] else val)
                if op[3] >= 0:
                    val = np.minimum(val, env[op[3]]) if self._array else (
                        env[op[3]] if val > env[op[3]] else val)
                env[op[1]] = val
        return env[self._out]

    def value(self, name: str):
        """The current value of a program variable (a state, a temp of the last step)."""
        return self._env[self._slot[name]]

    def set(self, name: str, value) -> None:
        """Set a state of the program (to read the linear map off the program itself)."""
        self._env[self._slot[name]] = value


# ----------------------------------------------------------------------------------------------
# building it
# ----------------------------------------------------------------------------------------------


def _positive(value, what: str, source, key) -> float:
    if (isinstance(value, bool) or not isinstance(value, (int, float))
            or not math.isfinite(value) or value <= 0):
        raise InputError(f"{what} must be a finite number > 0, got {value!r}", source, key)
    return float(value)


def _tracked_poles(scheme: str, pd: np.ndarray) -> np.ndarray:
    if scheme == "back-calculation":
        return pd[np.abs(pd - 1.0) <= _ON_CIRCLE]
    if scheme == "observer":
        return pd[np.abs(pd) >= 1.0 - _ON_CIRCLE]
    return pd  # conditioning: every pole


def _pid_reference_numerator(num, den, weights, source, key):
    """``(N, Nr, D)`` in s: ``C = N/D`` and the weighted reference path ``Nr/D`` of a PID form.

    ``C = Kp + Ki/s + Kd s/(Tf s + 1)`` over ``D = s^I (Tf s + 1)^F`` (``I``:
    integral action, ``F``: derivative action); the reference path weighs the
    proportional term by ``b`` and the derivative term by ``c`` (Astrom and
    Hagglund, Advanced PID Control, ch. 3).
    """
    from synth.outputs.forms import pid_parallel_from_tf

    par = pid_parallel_from_tf(num, den)
    if par is None:
        raise InputError("set-point weights need a P, PI, PD or PID compensator "
                         "(Kp + Ki/s + Kd s/(Tf s + 1))", source, key)
    b, c = weights
    if par.kd != 0 and par.tf == 0:
        raise InputError("the compensator's derivative has no filter and no discrete form",
                         source, key)
    s1 = np.array([1.0, 0.0])
    filt = np.array([par.tf, 1.0]) if par.kd != 0 else np.ones(1)
    integ = s1 if par.ki != 0 else np.ones(1)
    d = np.polymul(integ, filt)
    i_term = par.ki * filt if par.ki != 0 else np.zeros(1)           # Ki D / s
    d_term = np.polymul(s1, integ) if par.kd != 0 else np.zeros(1)   # s D / (Tf s + 1)
    n = np.polyadd(np.polyadd(par.kp * d, i_term), par.kd * d_term)
    nr = np.polyadd(np.polyadd(par.kp * b * d, i_term), par.kd * c * d_term)
    return n, nr, d


def discrete_controller(controller, zmap: ZMap, *, compute_delay: float = 0.0,
                        limits: tuple[float, float] | None = None,
                        max_rate: float | None = None, given_z=None,
                        source: str | None = None, key: str | None = None
                        ) -> DiscreteController:
    """The discrete controller of a design.

    Parameters
    ----------
    controller : synth.verify.controller.Controller
        ``C(s)`` (numerator with the gain, denominator), its reference
        shaping and its anti-windup.
    zmap : ZMap
        The map to z (``"direct"``: ``given_z`` is the compensator).
    compute_delay : float
        Seconds (recorded; it belongs to the loop).
    limits : (float, float), optional
        Output range, ``low < high``.
    max_rate : float, optional
        Largest output rate, units per second, ``> 0``.
    given_z : (array_like, array_like), optional
        ``C(z)`` numerator and denominator (descending powers of z) for
        ``zmap.method == "direct"``.
    source, key : str, optional
        Where errors point (the design document and the design's key).

    Returns
    -------
    DiscreteController

    Raises
    ------
    InputError
        An improper compensator or prefilter, a pole at Tustin's singular
        point, set-point weights on a compensator without a PID form, an
        unknown anti-windup scheme or a missing or bad parameter, a
        back-calculation without an integrator, conditioning of a
        non-biproper or non-minimum-phase compensator, bad limits or rate.

    References
    ----------
    .. [1] K. J. Astrom and B. Wittenmark, *Computer-Controlled Systems*, 3rd
       ed., Prentice Hall, 1997, sec. 9.4, from memory.
    .. [2] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
       ch. 3.
    """
    from synth.numerics.poly import scaled_roots, trim

    notes: list[str] = []
    if limits is not None:
        lo, hi = (float(limits[0]), float(limits[1]))
        if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
            raise InputError(f"limits must be finite with low < high, got {list(limits)}",
                             source, "actuator.limits")
        limits = (lo, hi)
    if max_rate is not None:
        max_rate = _positive(max_rate, "max_rate", source, "actuator.max_rate")
    num = trim(np.asarray(controller.num, dtype=float))
    den = trim(np.asarray(controller.den, dtype=float))
    shaping = controller.shaping
    aw = controller.anti_windup
    if aw is not None and aw.scheme == "none":
        aw = None  # nothing to wind up: a plain saturation
    weights = None if shaping is None else shaping.setpoint_weights

    # -- the compensator in z (zeros, poles, gain) --------------------------------------------
    if zmap.method == "direct":
        if given_z is None:
            raise ValueError("a direct map needs given_z")
        nz = trim(np.asarray(given_z[0], dtype=float))
        dz = trim(np.asarray(given_z[1], dtype=float))
        if nz.size > dz.size:
            raise InputError("the discrete compensator is not causal (numerator degree above "
                             "denominator)", source, key)
        zd = scaled_roots(nz) if nz.size > 1 else np.zeros(0, complex)
        pd = scaled_roots(dz) if dz.size > 1 else np.zeros(0, complex)
        kd = float(nz[0] / dz[0])
        # numerator leading zeros relative to the denominator: zeros at z = 0 keep causality
    else:
        if num.size > den.size:
            raise InputError("the compensator is improper (more zeros than poles) and has no "
                             "discrete form; give its derivative action a filter", source, key)
        zs = scaled_roots(num) if num.size > 1 else np.zeros(0, complex)
        ps = scaled_roots(den) if den.size > 1 else np.zeros(0, complex)
        zd, pd, kd = zmap.factors(zs, ps, float(num[0] / den[0]))

    # -- anti-windup: which poles it tracks and where they go ---------------------------------
    scheme, params, tracked, target = None, {}, np.zeros(0, complex), None
    if aw is not None:
        scheme = aw.scheme
        params = dict(aw.parameters)
        if scheme not in ANTI_WINDUP_SCHEMES:
            raise InputError(f"unknown anti-windup scheme {scheme!r}; the discrete controller "
                             f"implements {', '.join(ANTI_WINDUP_SCHEMES)}", source,
                             f"{key}.anti_windup.scheme" if key else "anti_windup.scheme")
        pkey = f"{key}.anti_windup.parameters" if key else "anti_windup.parameters"
        if scheme in ("back-calculation", "observer"):
            if "tracking_time" not in params:
                raise InputError(f"{scheme} needs tracking_time (seconds)", source, pkey)
            tt = _positive(params["tracking_time"], "tracking_time", source,
                           f"{pkey}.tracking_time")
            tracked = _tracked_poles(scheme, pd)
            if scheme == "back-calculation" and tracked.size == 0:
                raise InputError("back-calculation needs a compensator with integral action "
                                 "(a pole at s = 0)", source, pkey)
            # the tracking pole s = -1/Tt, by the same map as the controller (plain Tustin for
            # a controller given in z)
            amap = zmap if zmap.method != "direct" else ZMap("tustin", zmap.period)
            target = complex(amap.point(-1.0 / tt))
            if tt < zmap.period / 2:
                notes.append(f"tracking time {tt:g} s is below half the sample time: the tracking "
                             f"pole z = {target.real:.4g} is negative and the tracking rings")
        else:
            if zd.size != pd.size:
                raise InputError("conditioning needs a biproper compensator (as many zeros as "
                                 "poles)", source, pkey)
            if zd.size and np.max(np.abs(zd)) >= 1.0 - _ON_CIRCLE:
                raise InputError("conditioning needs the compensator's zeros inside the unit "
                                 "circle (a minimum-phase numerator)", source, pkey)
            tracked = pd

    # -- realisation ---------------------------------------------------------------------------
    if weights is not None:
        if zmap.method == "direct":
            raise InputError("set-point weights need the continuous PID mapped by a named "
                             "method; this discrete form is given in z only", source, key)
        from scipy.signal import bilinear

        n_s, nr_s, d_s = _pid_reference_numerator(num, den, weights, source,
                                                  f"{key}.setpoint_weights" if key else None)
        c = zmap.c
        bz, az = bilinear(n_s, d_s, fs=c / 2.0)
        tz, _ = bilinear(nr_s, d_s, fs=c / 2.0)
        sec = _section_from(np.asarray(bz, float), np.asarray(az, float), np.asarray(tz, float))
        sections = (sec,)
        realisation = DF2T
        pd_eff = scaled_roots(np.asarray(sec.a)) if sec.order else np.zeros(0, complex)
        tracked = _tracked_poles(scheme, pd_eff) if scheme in ("back-calculation",
                                                                "observer") else tracked
    else:
        sections, why = _cascade(zd, pd, kd, tracked if scheme else np.zeros(0, complex))
        if why:
            notes.append(why)
        realisation = DF2T if len(sections) == 1 else SOS
    if scheme is not None:
        last = sections[-1]
        if scheme == "conditioning":
            o = tuple(float(x) for x in np.asarray(last.b) / last.b[0]) if last.b[0] != 0 else None
            if o is None or len(sections) > 1:
                raise InputError("conditioning needs the compensator in one section with a "
                                 "nonzero leading numerator coefficient", source, key)
        else:
            here = [p for p in tracked if _contains(last.a, p)]
            o = tuple(float(x) for x in _replace_roots(last.a, here, target))
        sections = (*sections[:-1], Section(b=last.b, a=last.a, t=last.t, o=o))
        if limits is None and max_rate is None:
            notes.append("the design names an anti-windup scheme but no output limits: the "
                         "scheme never acts")
    elif limits is not None and np.any(np.abs(pd) >= 1.0 - _ON_CIRCLE):
        notes.append("WITHOUT anti-windup: the compensator has integral action (or an unstable "
                     "pole) and its output is limited, so its state winds up while the output "
                     "is held")

    # -- the prefilter ---------------------------------------------------------------------------
    prefilter: tuple[Section, ...] = ()
    kind = ""
    if shaping is not None and shaping.numerator is not None:
        fn = trim(np.asarray(shaping.numerator, dtype=float))
        fd = trim(np.asarray(shaping.denominator, dtype=float))
        fmap = zmap if zmap.method != "direct" else ZMap("tustin", zmap.period)
        fz = scaled_roots(fn) if fn.size > 1 else np.zeros(0, complex)
        fp = scaled_roots(fd) if fd.size > 1 else np.zeros(0, complex)
        fzd, fpd, fkd = fmap.factors(fz, fp, float(fn[0] / fd[0]), what="the reference prefilter")
        prefilter, _ = _cascade(fzd, fpd, fkd, np.zeros(0, complex))
        kind = "prefilter"
    elif weights is not None:
        kind = "setpoint-weights"
    return DiscreteController(
        zmap=zmap, compute_delay=float(compute_delay), sections=sections, prefilter=prefilter,
        limits=limits, max_rate=max_rate, anti_windup=scheme,
        anti_windup_parameters=params, shaping=kind,
        setpoint_weights=None if weights is None else (float(weights[0]), float(weights[1])),
        realisation=realisation, notes=tuple(notes))
