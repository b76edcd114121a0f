"""The IEC 61131-3 Structured Text target: ``NAME.st``, one ``FUNCTION_BLOCK NAME``.

Inputs ``setpoint`` (the reference: ``REFERENCE`` is a keyword of several
PLC dialects) and ``measurement``, and ``reset`` (TRUE: back to rest before
this sample, like ``NAME_init`` in C); output ``output``; the state in
``VAR`` (kept between calls of the instance), the per-sample values in
``VAR_TEMP``, the coefficients in ``VAR CONSTANT``; LREAL (64-bit) throughout.
The body is the controller's per-sample program statement for statement,
as in the C target, so both return what synth's model returns.

References
----------
.. [1] IEC 61131-3:2013, *Programmable controllers - Part 3: Programming
   languages*, sec. 6.5.2 (function blocks), 7.3 (Structured Text: expressions
   evaluated left to right by precedence, IF statements).
"""

from __future__ import annotations

from synth.outputs.export.header import header_lines
from synth.outputs.export.infix import statement_lines

__all__ = ["st_file", "st_literal"]

#: The step's inputs as the function block names them.
_INPUTS = {"reference": "setpoint", "measurement": "measurement"}


def st_literal(x: float) -> str:
    """An LREAL literal that reads back as exactly ``x``: 17 significant digits, with a point.

    IEC 61131-3 real literals need digits on both sides of the point
    (``1.0E-05``, never ``1e-05``).
    """
    text = repr(float(x)).upper()
    mant, _, exp = text.partition("E")
    if "." not in mant:
        mant += ".0"
    return mant + (f"E{exp}" if exp else "")


def st_file(name: str, program, facts) -> tuple[tuple[str, str]]:
    """``(NAME.st, text)``.

    Parameters
    ----------
    name : str
        A valid identifier (:func:`synth.outputs.export.check_name`).
    program : synth.verify.discrete.Program
    facts : synth.outputs.export.header.HeaderFacts
    """

    def ref(n):
        return _INPUTS.get(n, n)

    out = ["(*"]
    out += [f"  {line}".rstrip() for line in header_lines(facts)]
    out += ["", f"  Call the instance once per sample time ({facts.period:.10g} s), from a cyclic "
            "task of that", "  period, right after the measurement is read; set reset := TRUE "
            "for one call to", "  restart from rest.", "*)",
            f"FUNCTION_BLOCK {name}",
            "VAR_INPUT",
            "    setpoint : LREAL; (* the reference *)",
            "    measurement : LREAL; (* the measurement just taken *)",
            "    reset : BOOL := FALSE; (* TRUE: back to rest before this sample *)",
            "END_VAR",
            "VAR_OUTPUT",
            "    output : LREAL; (* the output to apply, within the limits when the design "
            "has them *)",
            "END_VAR"]
    if program.states:
        out.append("VAR")
        out += [f"    {n} : LREAL := {st_literal(v)}; (* {c} *)" for n, v, c in program.states]
        out.append("END_VAR")
    if program.temps:
        out.append("VAR_TEMP")
        out += [f"    {n} : LREAL;" for n in program.temps]
        out.append("END_VAR")
    if program.constants:
        out.append("VAR CONSTANT")
        out += [f"    {n} : LREAL := {st_literal(v)}; (* {c} *)"
                for n, v, c in program.constants]
        out.append("END_VAR")
    out.append("")
    if program.states:
        out.append("IF reset THEN")
        out += [f"    {n} := {st_literal(v)};" for n, v, _ in program.states]
        out.append("END_IF;")
    out += statement_lines(program.statements, ref, "{target} := {value};",
                           ("IF {target} {op} {bound} THEN", "    {target} := {bound};",
                            "END_IF;"))
    out += [f"output := {ref(program.output)};", "END_FUNCTION_BLOCK", ""]
    return ((f"{name}.st", "\n".join(out)),)
