"""Implementation forms of every design in a synth.design/1 document.

:func:`add_implementation_forms` adds an ``"implementation"`` object to each
design (an extension of the contract: nothing existing changes):

``factored``
    text, e.g. ``"12.5 (s + 2) / (s + 20)"``;
``polynomial``
    ``{"numerator", "denominator", "text"}`` in descending powers of s;
``parallel`` / ``standard``
    for the PID-type structures (P, PI, PD, PID) the parallel gains
    ``{kp, ki, kd, tf}`` of ``Kp + Ki/s + Kd s/(Tf s + 1)`` and the standard
    form ``{kc, ti, td, n}`` of ``Kc (1 + 1/(Ti s) + Td s/((Td/N) s + 1))``;
    ``null`` for the other structures (an unbounded time is ``null`` too);
``discrete`` (only with a sample time)
    the compensator by Tustin's method pre-warped at the loop's gain
    crossover, its difference equation, the sampled loop with the plant
    discretised by a zero-order hold (exact dead time), and warnings.

The conversions themselves live in :mod:`synth.outputs.forms`; this module reads the
design document, finds the crossover and the closed-loop bandwidth from the
loop ``L(jw) = C(jw) G(jw)`` (exact dead time) and assembles JSON. Every
number written is finite or ``null``.
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass

import numpy as np

from synth.errors import InputError
from synth.numerics.poly import coefficients
from synth.outputs.jsonout import clean
from synth.problem.plant import Plant

__all__ = [
    "PID_STRUCTURES",
    "LoopFrequencyFacts",
    "loop_parts",
    "loop_response",
    "loop_frequency_facts",
    "add_implementation_forms",
    "implementation_lines",
]

#: Structure names whose designs are given PID gains.
PID_STRUCTURES = ("P", "PI", "PD", "PID")

#: How many designs the terminal summary covers.
_TOP = 3
#: Points per decade of the frequency grid that brackets crossings.
_PER_DECADE = 240


# ---------------------------------------------------------------------------
# reading the design document
# ---------------------------------------------------------------------------

def _floats(values, what: str, zero_ok: bool = False) -> np.ndarray:
    # the document's own key names the list, so the error points at it
    return coefficients(values, what, allow_zero=zero_ok, key=what)


@dataclass(frozen=True)
class _Loop:
    """Compensator and plant polynomials of one design, with the exact dead time."""

    c_num: np.ndarray
    c_den: np.ndarray
    g_num: np.ndarray      # delay-free rational part when the plant has a dead time
    g_den: np.ndarray
    dead_time: float
    engine_num: np.ndarray  # Pade form included (what the JSON's plant carries)
    engine_den: np.ndarray
    plant: Plant


def loop_parts(doc: dict, design: dict) -> _Loop:
    """Compensator and plant polynomials of ``design`` in the document ``doc``.

    The plant's delay-free part and exact dead time are used when the document
    carries them (``plant.delay_free`` and ``plant.dead_time``); otherwise the
    engine form stands for the plant.

    Raises
    ------
    synth.errors.InputError
        A malformed plant or compensator.
    """
    plant = doc.get("plant") or {}
    comp = design.get("compensator") or {}
    eng_n = _floats(plant.get("numerator"), "plant.numerator")
    eng_d = _floats(plant.get("denominator"), "plant.denominator")
    tau = plant.get("dead_time") or 0.0
    free = plant.get("delay_free")
    try:
        tau = float(tau)
    except (TypeError, ValueError):
        raise InputError("plant.dead_time must be a number", key="plant.dead_time") from None
    if tau > 0 and isinstance(free, dict):
        g_n = _floats(free.get("numerator"), "plant.delay_free.numerator")
        g_d = _floats(free.get("denominator"), "plant.delay_free.denominator")
        order = int(plant.get("dead_time_order") or 3)
    else:
        g_n, g_d, tau, order = eng_n, eng_d, 0.0, 3
    return _Loop(c_num=_floats(comp.get("numerator"), "compensator.numerator", zero_ok=True),
                 c_den=_floats(comp.get("denominator"), "compensator.denominator"),
                 g_num=g_n, g_den=g_d, dead_time=tau, engine_num=eng_n, engine_den=eng_d,
                 plant=Plant.from_coefficients(g_n, g_d, dead_time=tau, pade_order=order))


def loop_response(loop: _Loop, w) -> np.ndarray:
    """``L(jw) = C(jw) G(jw)`` with the exact dead time, vectorised over ``w``."""
    s = 1j * np.asarray(w, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.polyval(loop.g_num, s) / np.polyval(loop.g_den, s)
        if loop.dead_time:
            g = g * np.exp(-s * loop.dead_time)
        return g * np.polyval(loop.c_num, s) / np.polyval(loop.c_den, s)


# ---------------------------------------------------------------------------
# frequency facts of the loop
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class LoopFrequencyFacts:
    """Margins, crossovers and bandwidth of a loop ``L = C G``.

    Attributes
    ----------
    crossover : float or None
        Gain crossover (rad/s) at which the phase margin is read, from
        :func:`synth.verify.frequency_metrics`; ``None`` when ``|L|`` never
        crosses 1.
    phase_margin_deg, gain_margin_db, delay_margin : float or None
        From :func:`synth.verify.frequency_metrics` (``None`` = unbounded or
        undefined).
    peak_sensitivity : float
        Largest ``|1/(1+L(jw))|``, from the same function.
    peak_frequency : float
        Where ``|1/(1+L)|`` peaks on the grid (for marking plots).
    phase_crossovers : tuple of float
        Frequencies where ``L(jw)`` is real and negative (for marking plots).
    bandwidth : float or None
        Closed-loop bandwidth: the lowest frequency at which
        ``|T(jw)| = |L/(1+L)|`` falls below ``1/sqrt(2)`` of its low-frequency
        value.
    w_min, w_max : float
        The grid's span (rad/s).
    """

    crossover: float | None
    phase_margin_deg: float | None
    gain_margin_db: float | None
    delay_margin: float | None
    peak_sensitivity: float
    peak_frequency: float
    phase_crossovers: tuple[float, ...]
    bandwidth: float | None
    w_min: float
    w_max: float


def _grid_span(loop: _Loop) -> tuple[float, float]:
    """Frequency span covering every pole and zero corner of the loop, with room."""
    corners = []
    for p in (loop.c_num, loop.c_den, loop.g_num, loop.g_den):
        if p.size > 1:
            r = np.abs(np.roots(p))
            corners.extend(r[r > 1e-9].tolist())
    if loop.dead_time:
        corners.append(1.0 / loop.dead_time)
    if not corners:
        corners = [1.0]
    lo = max(min(corners) / 1e3, 1e-9)
    hi = max(corners) * 1e3
    if loop.dead_time:
        # beyond this the exact delay only spins the phase; keep the grid resolvable
        hi = min(hi, max(max(corners) * 10, 200.0 / loop.dead_time))
    return lo, max(hi, lo * 1e4)


def _refine(f, a: float, b: float) -> float:
    """Root of ``f`` between log-frequencies ``a`` and ``b``."""
    from scipy.optimize import brentq

    try:
        return float(10.0 ** brentq(lambda x: f(10.0 ** x), a, b, xtol=1e-12, maxiter=200))
    except (ValueError, RuntimeError):
        return float(10.0 ** (0.5 * (a + b)))


def loop_frequency_facts(loop: _Loop) -> LoopFrequencyFacts:
    """Margins (from :func:`synth.verify.frequency_metrics`), bandwidth and plot markers.

    Parameters
    ----------
    loop : object
        From :func:`loop_parts`.

    Returns
    -------
    LoopFrequencyFacts

    Notes
    -----
    The margins and the peak sensitivity are the verifier's. Only what it
    does not report is found here, on a logarithmic grid refined by
    :func:`scipy.optimize.brentq`: the closed-loop bandwidth (the -3 dB
    point of ``T = L/(1+L)``), the phase-crossover frequencies and the
    frequency of the sensitivity peak.

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and A. Emami-Naeini, *Feedback Control
       of Dynamic Systems*, Pearson, ch. 6 (bandwidth, margins), from memory.
    """
    from synth.problem.requirements import Problem
    from synth.verify.frequency import frequency_metrics

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        fm = frequency_metrics(Problem(plant=loop.plant), loop.c_num, loop.c_den)
    lo, hi = _grid_span(loop)
    n = int(max(400, _PER_DECADE * math.log10(hi / lo)))
    x = np.linspace(math.log10(lo), math.log10(hi), n)
    w = 10.0 ** x
    L = loop_response(loop, w)
    ok = np.isfinite(L)

    def at(wv: float) -> complex:
        return complex(loop_response(loop, np.array([wv]))[0])

    # phase crossovers: Im L changes sign while Re L < 0
    im = np.where(ok, L.imag, np.nan)
    px = []
    for i in np.flatnonzero(np.isfinite(im[:-1]) & np.isfinite(im[1:]) & (im[:-1] * im[1:] < 0)):
        wp = _refine(lambda wv: at(wv).imag, x[i], x[i + 1])
        if at(wp).real < 0:
            px.append(wp)
    with np.errstate(divide="ignore", invalid="ignore"):
        tm = np.abs(L / (1.0 + L))
        sm = np.abs(1.0 / (1.0 + L))
    bw = None
    if np.isfinite(tm[0]) and tm[0] > 0:
        ref = tm[0] / math.sqrt(2.0)
        below = np.flatnonzero(np.isfinite(tm) & (tm < ref))
        if below.size and below[0] > 0:
            i = below[0] - 1
            bw = _refine(lambda wv: abs(at(wv) / (1.0 + at(wv))) - ref, x[i], x[i + 1])
    sm = np.where(np.isfinite(sm), sm, 0.0)
    return LoopFrequencyFacts(
        crossover=fm.get("crossover_frequency"), phase_margin_deg=fm.get("phase_margin_deg"),
        gain_margin_db=fm.get("gain_margin_db"), delay_margin=fm.get("delay_margin"),
        peak_sensitivity=float(fm.get("peak_sensitivity") or float(np.max(sm))),
        peak_frequency=float(w[int(np.argmax(sm))]), phase_crossovers=tuple(sorted(px)),
        bandwidth=bw, w_min=float(lo), w_max=float(hi))


# ---------------------------------------------------------------------------
# JSON assembly
# ---------------------------------------------------------------------------

def _pid_forms(structure: str, loop: _Loop) -> tuple[dict | None, dict | None]:
    from synth.outputs.forms import pid_parallel_from_tf, pid_standard_from_parallel

    if structure not in PID_STRUCTURES:
        return None, None
    par = pid_parallel_from_tf(loop.c_num, loop.c_den)
    if par is None:
        return None, None
    std = pid_standard_from_parallel(par)
    pj = par.to_json()
    pj["conventional"] = par.conventional
    return pj, (None if std is None else std.to_json())


def _discrete(loop: _Loop, T: float) -> dict:
    """The ``discrete`` object for one design at sample time ``T``."""
    from synth.outputs.forms import discrete_implementation, sample_rate_warning

    warnings: list[str] = []
    facts = loop_frequency_facts(loop)
    nyquist = math.pi / T
    warp = facts.crossover
    method = "tustin-prewarp"
    if warp is None:
        warnings.append("the loop gain never crosses 1, so there is no crossover to pre-warp at; "
                        "plain Tustin (no pre-warping) is used")
        method = "tustin"
    elif warp >= nyquist:
        warnings.append(f"warning: the gain crossover {warp:.4g} rad/s is not below the Nyquist "
                        f"frequency pi/T = {nyquist:.4g} rad/s; plain Tustin is used, and the "
                        "sample time is far too long for this loop")
        warp, method = None, "tustin"
    out = {"sample_time": T, "method": method, "warp_frequency": warp,
           "crossover_frequency": facts.crossover,
           "closed_loop_bandwidth": facts.bandwidth,
           "numerator": None, "denominator": None, "difference_equation": None,
           "sampled_loop": None, "warnings": warnings}
    try:
        impl = discrete_implementation(loop.c_num, loop.c_den, loop.g_num, loop.g_den, T,
                                       w_warp=warp, dead_time=loop.dead_time)
    except InputError as err:
        warnings.append(f"warning: no discrete form at T = {T:g} s: {err.message}")
        return out
    out["numerator"] = list(impl.numerator)
    out["denominator"] = list(impl.denominator)
    out["difference_equation"] = impl.difference.to_json()
    lp = impl.loop
    out["sampled_loop"] = {"stable": lp.stable, "spectral_radius": lp.spectral_radius,
                           "overshoot_percent": lp.overshoot_percent,
                           "final_value": lp.final_value,
                           "characteristic": list(lp.characteristic)}
    if not lp.stable:
        warnings.append(f"warning: the sampled loop is UNSTABLE at T = {T:g} s (largest closed-loop "
                        f"root magnitude {lp.spectral_radius:.4g}); sample faster")
    bw = facts.bandwidth if facts.bandwidth is not None else facts.crossover
    if bw is not None and bw > 0:
        note = sample_rate_warning(T, bw)
        if note:
            warnings.append(note)
    return out


def add_implementation_forms(doc: dict, sample_time: float | None = None) -> dict:
    """Return a copy of a synth.design/1 document with implementation forms added.

    Parameters
    ----------
    doc : dict
        The design document (``run.to_json()``); it is not modified.
    sample_time : float, optional
        Sample time ``T`` in seconds; when given, each design also gets its
        discrete-time form (Tustin pre-warped at the loop's gain crossover)
        and a check of the sampled loop.

    Returns
    -------
    dict
        The same document with ``designs[i]["implementation"]`` set, and
        ``doc["implementation_settings"] = {"sample_time": T}``.

    Raises
    ------
    synth.errors.OptionError
        A sample time that is not a positive finite number.
    synth.errors.InputError
        A malformed plant or compensator in the document.

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
       Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 6 (Tustin's
       method with pre-warping), from memory.
    .. [2] K. J. Astrom and T. Hagglund, *PID Controllers: Theory, Design and
       Tuning*, 2nd ed., ISA, 1995, ch. 3 (parallel and standard forms),
       from memory.
    """
    from synth.errors import OptionError
    from synth.outputs.forms import factored_text, polynomial_text

    if sample_time is not None:
        if (isinstance(sample_time, bool) or not isinstance(sample_time, (int, float))
                or not math.isfinite(sample_time) or sample_time <= 0):
            raise OptionError(f"sample time {sample_time!r}: must be a positive number of seconds")
        sample_time = float(sample_time)
    out = copy.deepcopy(doc)
    for design in out.get("designs") or []:
        loop = loop_parts(out, design)
        par, std = _pid_forms(str(design.get("structure", "")), loop)
        impl = {
            "factored": factored_text(loop.c_num, loop.c_den),
            "polynomial": {"numerator": [float(v) for v in loop.c_num],
                           "denominator": [float(v) for v in loop.c_den],
                           "text": f"({polynomial_text(loop.c_num)}) / "
                                   f"({polynomial_text(loop.c_den)})"},
            "parallel": par,
            "standard": std,
        }
        if sample_time is not None:
            impl["discrete"] = _discrete(loop, sample_time)
        design["implementation"] = clean(impl)
    out["implementation_settings"] = {"sample_time": sample_time}
    return out


# ---------------------------------------------------------------------------
# terminal text
# ---------------------------------------------------------------------------

def _g(v, digits: int = 4, none: str = "-") -> str:
    return none if v is None else f"{v:.{digits}g}"


def implementation_lines(doc: dict, sample_time: float | None = None, top: int = _TOP) -> list[str]:
    """Short terminal text with the implementation forms of the top designs.

    Parameters
    ----------
    doc : dict
        A document from :func:`add_implementation_forms` (forms are computed
        here when it has none).
    sample_time : float, optional
        Only used when the document has no forms yet.
    top : int
        How many designs to cover (best ranks first).

    Returns
    -------
    list of str
    """
    designs = [d for d in doc.get("designs") or [] if "implementation" in d]
    if not designs and doc.get("designs"):
        doc = add_implementation_forms(doc, sample_time=sample_time)
        designs = doc.get("designs") or []
    designs = sorted(designs, key=lambda d: d.get("rank", 0))[:top]
    if not designs:
        return []
    lines = ["", "implementation forms (top designs)"]
    for d in designs:
        im = d["implementation"]
        tag = "" if d.get("feasible", True) else "  [does not meet every requirement]"
        lines.append(f"  #{d.get('rank')} {d.get('structure')}{tag}")
        lines.append(f"      C(s) = {im['factored']}")
        par, std = im.get("parallel"), im.get("standard")
        if par:
            lines.append(f"      parallel  Kp={_g(par['kp'], 6)}  Ki={_g(par['ki'], 6)}  "
                         f"Kd={_g(par['kd'], 6)}  Tf={_g(par['tf'], 6)} s")
        if std:
            lines.append(f"      standard  Kc={_g(std['kc'], 6)}  Ti={_g(std['ti'], 6, 'none')}"
                         f"{'' if std['ti'] is None else ' s'}  Td={_g(std['td'], 6)} s  "
                         f"N={_g(std['n'], 6, 'none')}")
        dz = im.get("discrete")
        if dz:
            warp = dz.get("warp_frequency")
            how = (f"Tustin pre-warped at {warp:.4g} rad/s" if warp else "Tustin")
            lines.append(f"      T = {dz['sample_time']:g} s, {how}")
            de = dz.get("difference_equation")
            if de:
                lines.append(f"      {de['text']}")
            sl = dz.get("sampled_loop")
            if sl:
                verdict = "stable" if sl["stable"] else "UNSTABLE"
                os_ = sl.get("overshoot_percent")
                lines.append(f"      sampled loop {verdict}, largest root |z| = "
                             f"{sl['spectral_radius']:.4g}"
                             + (f", overshoot {os_:.3g} %" if os_ is not None else ""))
            for w in dz.get("warnings") or []:
                lines.append(f"      {w}")
    return lines
