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

The conversions themselves live in :mod:`synth.outputs.forms`; the crossover
(the pre-warping frequency) and the closed-loop bandwidth are the verifier's
(:func:`synth.verify.frequency.loop_frequency` on the document's plant, exact
dead time).  This module reads the document once
(:func:`synth.outputs.document.read_design`) and assembles JSON.  Every
number written is finite or ``null``.
"""

from __future__ import annotations

import copy
import math

from synth.errors import InputError
from synth.outputs.document import CompensatorRecord, read_design
from synth.outputs.jsonout import clean
from synth.outputs.text import number as _g

__all__ = [
    "PID_STRUCTURES",
    "add_implementation_forms",
    "implementation_lines",
]

#: Structure names whose designs are given PID gains.
PID_STRUCTURES = ("P", "PI", "PD", "PID")

#: How many designs the terminal summary covers.
_TOP = 3


# ---------------------------------------------------------------------------
# JSON assembly
# ---------------------------------------------------------------------------

def _pid_forms(structure: str, c: CompensatorRecord) -> tuple[dict | None, dict | None]:
    from synth.outputs.forms import pid_parallel_from_tf, pid_standard_from_parallel

    if structure not in PID_STRUCTURES:
        return None, None
    par = pid_parallel_from_tf(c.num, c.den)
    if par is None:
        return None, None
    std = pid_standard_from_parallel(par)
    pj = par.to_json()
    pj["conventional"] = par.conventional
    return pj, (None if std is None else std.to_json())


def _discrete(plant, c: CompensatorRecord, T: float) -> dict:
    """The ``discrete`` object for one design at sample time ``T``."""
    from synth.outputs.forms import discrete_implementation, sample_rate_warning
    from synth.verify.frequency import loop_frequency
    from synth.verify.sampled import design_zmap

    facts = loop_frequency(plant, c.num, c.den)
    zmap, why = design_zmap(facts.crossover_frequency, T)
    warnings: list[str] = [why] if why else []
    method, warp = zmap.method, zmap.warp_frequency
    out = {"sample_time": T, "method": method, "warp_frequency": warp,
           "crossover_frequency": facts.crossover_frequency,
           "closed_loop_bandwidth": facts.bandwidth,
           "numerator": None, "denominator": None, "difference_equation": None,
           "sampled_loop": None, "warnings": warnings}
    try:
        impl = discrete_implementation(c.num, c.den, plant.rational_num, plant.rational_den, T,
                                       w_warp=warp, dead_time=plant.dead_time)
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
                           "characteristic": list(lp.characteristic),
                           "numerically_marginal": lp.marginal}
    if lp.marginal:
        warnings.append(f"note: at T = {T:g} s the closed-loop poles crowd z = 1 (sampling far "
                        "faster than the loop's slowest mode), so the sampled loop's overshoot "
                        "and final value are numerically marginal beyond their first digits; "
                        "the continuous verdicts stand")
    if not lp.stable:
        warnings.append(f"warning: the sampled loop is UNSTABLE at T = {T:g} s (largest closed-loop "
                        f"root magnitude {lp.spectral_radius:.4g}); sample faster")
    bw = facts.bandwidth if facts.bandwidth is not None else facts.crossover_frequency
    if bw is not None and bw > 0:
        note = sample_rate_warning(T, bw)
        if note:
            warnings.append(note)
    return out


def _reference_form(shaping, sample_time: float | None) -> dict:
    """How the reference enters: the set-point-weighted law, or the prefilter (and its Tustin form).

    References
    ----------
    .. [1] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
       sec. 3.4 (set-point weighting).
    """
    from synth.outputs.forms import polynomial_text, tustin_prewarp

    if shaping.setpoint_weights is not None:
        b, c = shaping.setpoint_weights
        return {"setpoint_weights": {"b": b, "c": c},
                "law": f"u = Kp ({b:.4g} r - y) + Ki/s (r - y) + Kd s/(1 + s Tf) ({c:.4g} r - y)"}
    num, den = list(shaping.numerator), list(shaping.denominator)
    out = {"prefilter": {"numerator": num, "denominator": den,
                         "text": f"F(s) = ({polynomial_text(num)}) / ({polynomial_text(den)})"}}
    if sample_time is not None:
        nz, dz = tustin_prewarp(num, den, sample_time)
        out["prefilter"]["discrete"] = {"numerator": [float(v) for v in nz],
                                        "denominator": [float(v) for v in dz],
                                        "method": "tustin"}
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
        The same document with ``designs[i]["implementation"]`` set (with
        ``reference``: the set-point-weighted law or the prefilter, when the
        design has reference shaping), and
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
    document = read_design(doc)
    plant = document.need_plant().plant() if document.designs else None
    out = copy.deepcopy(doc)
    for d in document.designs:
        c = d.compensator
        par, std = _pid_forms(d.structure, c)
        impl = {
            "factored": factored_text(c.num, c.den),
            "polynomial": {"numerator": [float(v) for v in c.num],
                           "denominator": [float(v) for v in c.den],
                           "text": f"({polynomial_text(c.num)}) / ({polynomial_text(c.den)})"},
            "parallel": par,
            "standard": std,
        }
        if sample_time is not None:
            impl["discrete"] = _discrete(plant, c, sample_time)
        sh = d.shaping()
        if sh is not None:
            impl["reference"] = _reference_form(sh, sample_time)
        out["designs"][d.index]["implementation"] = clean(impl)
    out["implementation_settings"] = {"sample_time": sample_time}
    return out


# ---------------------------------------------------------------------------
# terminal text
# ---------------------------------------------------------------------------

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
    document = read_design(doc)
    if document.designs and all(d.implementation is None for d in document.designs):
        document = read_design(add_implementation_forms(doc, sample_time=sample_time))
    designs = [d for d in document.designs if d.implementation is not None][:top]
    if not designs:
        return []
    lines = ["", "implementation forms (top designs)"]
    for d in designs:
        im = d.implementation
        tag = "" if d.raw.get("feasible", True) else "  [does not meet every requirement]"
        lines.append(f"  #{d.rank} {d.structure}{tag}")
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
