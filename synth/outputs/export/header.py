"""The words at the top of exported controller code: design, timing, units, realisation, cautions.

Both targets print the same :class:`HeaderFacts` in their comment syntax;
the text is plain ASCII (a label from a requirements file is transliterated),
so no comment can be closed early and no tool chokes on it.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass

import numpy as np

from synth.outputs.cautions import CAUTIONS

__all__ = ["HeaderFacts", "ascii_text", "header_facts"]

_WIDTH = 92


def ascii_text(text: str) -> str:
    """``text`` as printable ASCII without comment delimiters of C or Structured Text."""
    out = "".join(c if 32 <= ord(c) < 127 else "?" for c in str(text))
    for bad, good in (("*/", "* /"), ("/*", "/ *"), ("(*", "( *"), ("*)", "* )")):
        out = out.replace(bad, good)
    return out


def _wrap(text: str, indent: str = "") -> list[str]:
    return textwrap.wrap(ascii_text(text), _WIDTH, initial_indent=indent,
                         subsequent_indent=indent + "  ") or [indent]


@dataclass(frozen=True)
class HeaderFacts:
    """Sections of the header comment, each a tuple of lines (ASCII, at most ~92 columns).

    Attributes
    ----------
    title, design, timing, units, realisation, behaviour, vectors, cautions : tuple of str
    period : float
        Seconds (for a named constant).
    """

    title: tuple[str, ...]
    design: tuple[str, ...]
    timing: tuple[str, ...]
    units: tuple[str, ...]
    realisation: tuple[str, ...]
    behaviour: tuple[str, ...]
    vectors: tuple[str, ...]
    cautions: tuple[str, ...]
    period: float


def _poly(coeffs) -> str:
    return "[" + ", ".join(f"{float(c):.10g}" for c in coeffs) + "]"


def header_facts(document, design, model, vectors, name: str, language: str) -> HeaderFacts:
    """Everything the header says about one exported design.

    Parameters
    ----------
    document : synth.outputs.document.DesignDocument
    design : synth.outputs.document.DesignRecord
    model : synth.verify.discrete.DiscreteController
    vectors : synth.verify.sampled.ControllerVectors
    name : str
    language : str
        ``"c"`` or ``"st"`` (for the names the text uses).
    """
    from synth.outputs.forms import factored_text

    c = design.compensator
    plant = document.need_plant()
    target = "C99" if language == "c" else "IEC 61131-3 Structured Text"
    title = (f"{name}: discrete controller exported by synth ({target})",
             f"from {document.source}, design {design.rank} ({design.structure})")
    lines = [f"C(s) = {factored_text(c.num, c.den)}  (continuous design)"]
    if plant.label:
        lines.append(f"plant: {plant.label}")
    lines.append("meets every requirement of its run" if design.feasible else
                 "does NOT meet every requirement of its run: " + "; ".join(design.violations))
    num, den = model.transfer()
    lines.append(f"C(z) numerator   {_poly(num)}")
    lines.append(f"C(z) denominator {_poly(den)}  (descending powers of z)")
    lines.append(f"mapped by {model.zmap.describe()}")
    design_lines = [w for text in lines for w in _wrap(text)]

    call = f"{name}_step" if language == "c" else f"{name}"
    timing = [
        f"sample time T = {model.period:.10g} s: call {call} exactly once per sample, right "
        "after sampling the measurement, from a periodic task of that period (jitter changes "
        "the loop).",
        f"the design assumed the output is applied {model.compute_delay:.6g} s after the sample "
        "(computation delay); a longer delay costs phase margin.",
    ]
    units = [
        "time in seconds; reference and measurement in the units of the plant output as the "
        "model was written, the output in the units of the plant input (the actuator command).",
        "all arithmetic in double precision (LREAL); the state starts from rest (every state 0: "
        "zero output for zero error).",
        "validate the measurement (range, staleness, NaN) before the call: the controller does "
        "not, and a NaN input stays in its state until it is initialised again.",
    ]
    if model.realisation == "direct form II transposed":
        why = (f"one section of order {model.order} in direct form II transposed: at order <= 2 "
               "the polynomial's own coefficients are well conditioned, and the transposed form "
               "adds terms of like size (common practice).")
    else:
        why = (f"a cascade of {len(model.sections)} sections of order <= 2, each in direct form "
               f"II transposed (order {model.order} in all): the coefficients of a polynomial of "
               "order > 2 with poles near z = 1 are ill-conditioned (a rounding error moves the "
               "poles far) while its factors are not (common practice; scipy.signal.zpk2sos "
               "pairing).")
    realisation = [why, "the coefficients are printed to 17 significant digits: each is the "
                        "double synth computed with."]
    realisation += [f"note: {n}" for n in model.notes]
    behaviour = []
    if model.shaping == "prefilter":
        fn, fd = np.ones(1), np.ones(1)
        for s in model.prefilter:
            fn, fd = np.polymul(fn, s.b), np.polymul(fd, s.a)
        behaviour.append(f"reference prefilter F(z) = {_poly(fn)} / {_poly(fd)} ahead of the "
                         "error, same map as C (sections f1...)")
    elif model.shaping == "setpoint-weights":
        b, cw = model.setpoint_weights
        behaviour.append(f"set-point weights b = {b:g} (proportional), c = {cw:g} (derivative): "
                         "u = Kp (b r - y) + Ki/s (r - y) + Kd s/(Tf s + 1) (c r - y), one "
                         "two-input section")
    else:
        behaviour.append("error e = reference - measurement into C(z) (no reference shaping)")
    if model.limits is not None:
        behaviour.append(f"output limited to [{model.limits[0]:g}, {model.limits[1]:g}]")
    if model.max_rate is not None:
        behaviour.append(f"output rate limited to {model.max_rate:g} per second "
                         f"({model.max_rate * model.period:.6g} per sample)")
    if model.limits is None and model.max_rate is None:
        behaviour.append("no output limits in the design: put the actuator's limits in the "
                         "requirements ([actuator]) and design again, or the exported "
                         "controller will wind up against them")
    if model.anti_windup is not None:
        params = ", ".join(f"{k} = {v:g} s" for k, v in model.anti_windup_parameters.items())
        behaviour.append(f"anti-windup: {model.anti_windup}{' (' + params + ')' if params else ''}"
                         ", in observer form: the last section runs A_aw v = B x + (A_aw - A) u "
                         "with the limited output u, so nothing changes while the output is "
                         f"free; tracking polynomial {_poly(model.tracking_polynomial())}")
    vec = [f"{name}_vectors.csv: {vectors.reference.size} samples from one init, columns "
           "reference,measurement,output; output is what the step must return, from synth's "
           "own discrete model, to rounding (1e-9 of the largest output).",
           "segments: " + "; ".join(f"{label} (rows {a + 1}-{b})"
                                    for label, a, b in vectors.segments),
           ("the measurement comes from the sampled loop's own simulation (plant by zero-order "
            "hold, dead time and computation delay, plus 1e-3 noise)" if vectors.closed_loop
            else "the measurement is synthetic (the sampled loop is unstable at this sample "
                 "time)")]
    cautions = ["CAUTION - a controller runs a machine:",
                *(c.replace("this report", "this code") for c in CAUTIONS),
                "Exported code changes nothing of that: test it against the vectors on the "
                "target, then in closed loop on a simulation with the actuator's saturation, "
                "rate limits, delays and the plant's nonlinearity, before it meets hardware."]
    return HeaderFacts(title=title, design=tuple(design_lines), timing=_wrap_all(timing),
                       units=_wrap_all(units), realisation=_wrap_all(realisation),
                       behaviour=_wrap_all(behaviour), vectors=_wrap_all(vec),
                       cautions=_wrap_all(cautions), period=model.period)


def _wrap_all(items) -> tuple[str, ...]:
    return tuple(w for text in items for w in _wrap(text))


def header_lines(facts: HeaderFacts) -> list[str]:
    """The header as plain lines with section titles (the targets wrap them in comments)."""
    out = [*facts.title, ""]
    for title, body in (("Design", facts.design), ("Timing", facts.timing),
                        ("Units", facts.units), ("Realisation", facts.realisation),
                        ("Behaviour", facts.behaviour), ("Test vectors", facts.vectors),
                        ("Safety", facts.cautions)):
        out.append(f"{title}:")
        out.extend(f"  {line}" for line in body)
        out.append("")
    return out[:-1]
