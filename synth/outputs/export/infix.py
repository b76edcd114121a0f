"""The one way both targets print a program's sums: ``a * b + c - d * e``, left to right.

C99 and IEC 61131-3 Structured Text group ``+`` and ``-`` from the left and
bind unary minus and ``*`` tighter, so the same text evaluates in the same
order in both languages, and in that of synth's model
(:class:`synth.verify.discrete.ControllerRun`).
"""

from __future__ import annotations

__all__ = ["sum_text"]


def sum_text(terms, ref) -> str:
    """``terms`` of an :class:`~synth.verify.discrete.Assign` as infix text.

    Parameters
    ----------
    terms : tuple of (int, str, str or None)
        ``(sign, factor, second factor or None)``.
    ref : callable
        Maps a program name to the target's spelling (``s->w1``, ``setpoint``).
    """
    parts = []
    for i, (sign, a, b) in enumerate(terms):
        body = ref(a) if b is None else f"{ref(a)} * {ref(b)}"
        if i == 0:
            parts.append(body if sign > 0 else f"-{body}")
        else:
            parts.append(f"{'+' if sign > 0 else '-'} {body}")
    return " ".join(parts)


def statement_lines(statements, ref, assign: str, guard: tuple[str, str, str],
                    indent: str = "") -> list[str]:
    """A program's statements in a target's syntax.

    Parameters
    ----------
    statements : tuple of Assign or Clamp
    ref : callable
        Program name -> the target's spelling.
    assign : str
        Format of an assignment with fields ``target`` and ``value``
        (``"{target} = {value};"``).
    guard : (str, str, str)
        The three lines of a clamp's one-sided test with fields ``target``,
        ``op`` (``<`` or ``>``) and ``bound``: opening, body, closing.
    indent : str
        Prefix of every line.
    """
    from synth.verify.discrete import Assign

    out = []
    for st in statements:
        t = ref(st.target)
        if isinstance(st, Assign):
            out.append(indent + assign.format(target=t, value=sum_text(st.terms, ref)))
            continue
        for op, bound in (("<", st.low), (">", st.high)):
            if bound is not None:
                out += [indent + g.format(target=t, op=op, bound=ref(bound)) for g in guard]
    return out
