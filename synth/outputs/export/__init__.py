"""Firmware hand-over: a design's discrete controller as C99 or IEC 61131-3 Structured Text.

:func:`export_design` reads one design of a ``synth.design/1`` document
(through :mod:`synth.outputs.document`), rebuilds its discrete controller
with :func:`synth.verify.discrete.discrete_controller` exactly as the run
mapped it (the document's ``discrete`` form: period, computation delay,
method, pre-warping frequency; a rebuilt ``C(z)`` that differs from the
document's is refused), and prints the controller's per-sample
:class:`~synth.verify.discrete.Program`:

* ``c``: ``NAME.h`` (the state struct, ``NAME_init``, ``NAME_step``) and
  ``NAME.c`` (C99, double precision, no allocation, no globals, no library);
* ``st``: ``NAME.st``, a ``FUNCTION_BLOCK NAME`` in LREAL;

and in both cases ``NAME_vectors.csv`` (``reference,measurement,output``),
the outputs of synth's own discrete model for a reference step, a load step
and runs into the output limits (:func:`synth.verify.sampled.controller_vectors`).
Every header carries the design, the sample time, the units, the
realisation and why, and the cautions (:mod:`synth.outputs.cautions`).

References
----------
.. [1] ISO/IEC 9899:1999, *Programming languages - C* (C99).
.. [2] IEC 61131-3:2013, *Programmable controllers - Part 3: Programming
   languages* (Structured Text, function blocks).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from synth.errors import InputError, OptionError

__all__ = [
    "LANGUAGES",
    "ExportResult",
    "check_name",
    "discrete_model",
    "export_design",
    "vectors_csv",
]

#: The targets ``--language`` takes.
LANGUAGES = ("c", "st")

#: Longest NAME: C99 guarantees 31 significant characters of an external identifier, and
#: NAME_state / NAME_init / NAME_step add up to six.
MAX_NAME = 25

_C_KEYWORDS = frozenset("""auto break case char const continue default do double else enum extern
float for goto if inline int long register restrict return short signed sizeof static struct
switch typedef union unsigned void volatile while _Bool _Complex _Imaginary bool true false
main""".split())

_ST_KEYWORDS = frozenset(w.upper() for w in """ACTION END_ACTION ARRAY OF AT BY CASE END_CASE
CONFIGURATION END_CONFIGURATION CONSTANT DO ELSE ELSIF EN ENO EXIT FALSE TRUE FOR END_FOR
FUNCTION END_FUNCTION FUNCTION_BLOCK END_FUNCTION_BLOCK IF END_IF THEN INITIAL_STEP END_STEP NOT
AND OR XOR MOD PROGRAM END_PROGRAM READ_ONLY READ_WRITE REPEAT END_REPEAT UNTIL RESOURCE
END_RESOURCE RETAIN NON_RETAIN RETURN STEP STRUCT END_STRUCT TASK TRANSITION END_TRANSITION TYPE
END_TYPE VAR END_VAR VAR_INPUT VAR_OUTPUT VAR_IN_OUT VAR_TEMP VAR_EXTERNAL VAR_ACCESS VAR_CONFIG
VAR_GLOBAL VAR_INST WHILE END_WHILE WITH PRIORITY SINGLE INTERVAL ON FROM TO REF_TO REF REFERENCE
METHOD END_METHOD INTERFACE END_INTERFACE EXTENDS IMPLEMENTS THIS SUPER ABSTRACT FINAL OVERRIDE
PUBLIC PRIVATE PROTECTED INTERNAL CONTINUE NULL BOOL SINT INT DINT LINT USINT UINT UDINT ULINT
REAL LREAL TIME DATE TIME_OF_DAY TOD DATE_AND_TIME DT STRING WSTRING CHAR WCHAR BYTE WORD DWORD
LWORD POINTER R_EDGE F_EDGE ANY""".split())


def check_name(name: str, language: str, taken: tuple[str, ...] = ()) -> str:
    """Validate NAME as an identifier of the target language.

    A letter, then letters, digits and single underscores (no trailing one:
    IEC 61131-3's rule, kept for C too so one name serves both), at most
    :data:`MAX_NAME` characters, no keyword of C99 or IEC 61131-3 (any case),
    and none of the program's own variable names.

    Raises
    ------
    synth.errors.OptionError
        One line saying what is wrong.
    """
    if language not in LANGUAGES:
        raise OptionError(f"--language {language}: choose from {', '.join(LANGUAGES)}")
    if not re.fullmatch(r"[A-Za-z][A-Za-z0-9]*(_[A-Za-z0-9]+)*", name or ""):
        shown = name if len(name) <= 40 else name[:37] + "..."
        raise OptionError(f"--name {shown!r}: must be a C and Structured Text identifier: a "
                          "letter, then letters, digits and single underscores, not ending in "
                          "one")
    if len(name) > MAX_NAME:
        raise OptionError(f"--name {name}: at most {MAX_NAME} characters (C99 keeps 31 "
                          "significant characters of NAME_state, NAME_init and NAME_step)")
    if name in _C_KEYWORDS or name.upper() in _ST_KEYWORDS:
        raise OptionError(f"--name {name}: is a keyword of C or IEC 61131-3; choose another name")
    if name.lower() in {t.lower() for t in taken}:
        raise OptionError(f"--name {name}: is a variable of the controller's own code; choose "
                          "another name")
    return name


@dataclass(frozen=True)
class ExportResult:
    """What ``synth export`` writes.

    Attributes
    ----------
    files : tuple of (str, str)
        File name and text, in writing order.
    model : synth.verify.discrete.DiscreteController
        The controller exported.
    vectors : synth.verify.sampled.ControllerVectors
    summary : tuple of str
        Terminal lines.
    """

    files: tuple[tuple[str, str], ...]
    model: object
    vectors: object
    summary: tuple[str, ...]


def discrete_model(document, design):
    """Rebuild a design's discrete controller from its document, as the run mapped it.

    Parameters
    ----------
    document : synth.outputs.document.DesignDocument
    design : synth.outputs.document.DesignRecord

    Returns
    -------
    synth.verify.discrete.DiscreteController

    Raises
    ------
    InputError
        No discrete form (set ``[sampling] period`` or ``design --sample-time``), a
        malformed one, or one that is not the compensator mapped by its method.
    """
    from synth.verify.discrete import ZMap, discrete_controller

    key = f"designs[{design.index}]"
    form = document.discrete_form(design)
    if form is None:
        raise InputError(f"design {design.rank} has no discrete form: set [sampling] period in "
                         "the requirements file (or run synth design --sample-time T) and design "
                         "again", document.source, f"{key}.discrete")
    controller = document.controller(design)
    act = document.actuator
    # the loop's control signal is the deviation from the operating point (docs/export.md)
    limits = None if act is None else act.deviation_limits
    rate = None if act is None else act.max_rate
    if form.method is None:
        zmap = ZMap("direct", form.period)
        given = (form.numerator, form.denominator)
    else:
        zmap = ZMap(form.method, form.period, form.warp_frequency)
        given = None
    model = discrete_controller(controller, zmap, compute_delay=form.compute_delay,
                                limits=limits, max_rate=rate, given_z=given,
                                source=document.source, key=key)
    if form.method is not None:
        _same_transfer(model.transfer(), form, document.source)
    return model


def _same_transfer(rebuilt, form, source) -> None:
    """Refuse a document whose C(z) is not the rebuilt one (relative to the coefficients' size)."""
    num, den = (np.asarray(p, dtype=float) for p in rebuilt)
    dnum = np.trim_zeros(np.asarray(form.numerator, dtype=float), "f")
    dden = np.asarray(form.denominator, dtype=float)
    dnum, dden = dnum / dden[0], dden / dden[0]
    num = np.trim_zeros(num, "f")
    for what, a, b in (("numerator", num, dnum), ("denominator", den, dden)):
        if a.size != b.size or np.max(np.abs(a - b)) > 1e-9 * np.max(np.abs(b)):
            raise InputError(f"is not the compensator mapped by {form.method} at period "
                             f"{form.period:g} s: the discrete form was edited or belongs to "
                             "another compensator", source, f"{form.key}.{what}")


def vectors_csv(vectors) -> str:
    """``reference,measurement,output`` rows, every number to full precision (round-trip)."""
    lines = ["reference,measurement,output"]
    lines += [f"{r!r},{y!r},{u!r}" for r, y, u in
              zip(vectors.reference.tolist(), vectors.measurement.tolist(),
                  vectors.output.tolist(), strict=True)]
    return "\n".join(lines) + "\n"


def export_design(document, rank: int, language: str, name: str = "controller") -> ExportResult:
    """The files that hand one design to firmware.

    Parameters
    ----------
    document : synth.outputs.document.DesignDocument
    rank : int
        Which design (1 = best).
    language : str
        ``"c"`` or ``"st"``.
    name : str
        NAME of the files, the struct and the functions (or the function block).

    Returns
    -------
    ExportResult

    Raises
    ------
    OptionError
        A bad language or NAME.
    InputError
        The document has no such design, no plant, or no (valid) discrete form.
    """
    from synth.outputs.export.c import c_files
    from synth.outputs.export.header import header_facts
    from synth.outputs.export.st import st_file
    from synth.verify.sampled import controller_vectors

    check_name(name, language)
    design = document.design(rank)
    plant = document.need_plant().plant()
    model = discrete_model(document, design)
    program = model.program()
    check_name(name, language, taken=program.names())
    step = 1.0 if document.actuator is None else document.actuator.reference_step
    vectors = controller_vectors(plant, model, reference_step=step)
    facts = header_facts(document, design, model, vectors, name, language)
    if language == "c":
        files = c_files(name, program, facts)
    else:
        files = st_file(name, program, facts)
    files = (*files, (f"{name}_vectors.csv", vectors_csv(vectors)))
    summary = (f"design {design.rank} ({design.structure}) as {'C99' if language == 'c' else 'IEC 61131-3 Structured Text'}: "
               f"{model.realisation}, order {model.order}, sample time {model.period:g} s",
               *(f"  {line}" for line in facts.behaviour),
               f"  vectors: {vectors.reference.size} samples ("
               + "; ".join(label for label, _, _ in vectors.segments) + ")")
    return ExportResult(files=files, model=model, vectors=vectors, summary=summary)
