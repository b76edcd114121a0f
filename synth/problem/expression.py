"""Safe parser for rational expressions in ``s``.

A plant may be written as text, for example ``"4/(s^2*(s+8))"`` or
``"2.5e-3 (s+1)/(s(s+10)^2)"``. This module turns such text into a numerator
and a denominator polynomial without ``eval``, ``exec`` or :mod:`ast`: a small
tokenizer feeds a recursive-descent parser whose values are polynomial
fractions, so the only operations ever performed are polynomial additions,
multiplications and integer powers.

Grammar (precedence from loosest to tightest)::

    expression := term (("+" | "-") term)*
    term       := unary (("*" | "/") unary | <implicit> unary)*
    unary      := ("+" | "-") unary | power
    power      := atom ("^" exponent)?
    exponent   := ["+" | "-"] INTEGER | "(" ["+" | "-"] INTEGER ")"
    atom       := NUMBER | "s" | NAME | "(" expression ")"

* Numbers are integers, decimals (``2``, ``0.5``, ``.5``, ``3.``) or exponent
  notation (``1e-3``, ``2.5E+4``).
* Implicit multiplication: a number, ``s`` or ``)`` directly followed by ``s``
  or ``(`` multiplies, as engineers write it: ``2s``, ``3(s+1)``,
  ``s(s+2)``, ``(s+1)(s+2)``. It binds like ``*``, so ``2s^2`` is
  ``2*(s^2)`` and ``-s^2`` is ``-(s^2)``.
* Implicit multiplication right after a divisor is refused because it is
  ambiguous: ``1/2s`` could mean ``(1/2)*s`` or ``1/(2*s)``, and
  ``1/(s+1)(s+2)`` is usually meant as ``1/((s+1)(s+2))``. Write the
  parentheses or the ``*`` explicitly.
* ``^`` takes a literal integer exponent of magnitude at most
  :data:`MAX_EXPONENT`; a negative exponent is the reciprocal power. Chained
  powers (``s^2^3``) need parentheses.
* ``NAME`` is a parameter of the plant (``[plant.parameters]``): an
  identifier other than ``s``, replaced by the number it is given in the
  ``parameters`` mapping.  The parser never evaluates code: a name is looked
  up in that mapping and becomes a constant, so a parametric expression is
  parsed again for each set of parameter values (cheap: a few hundred
  characters at most).  Names bind like ``s`` for implicit multiplication
  (``2T``, ``k (s+1)``); ``Ts`` is one (unknown) name, write ``T*s`` or ``T s``.
* Positions in error messages count characters from 1.

The result is kept *as built*: common factors between numerator and
denominator are never cancelled (a cancellation could hide an unstable mode;
the plant model reports common factors separately), and neither polynomial is
normalised (``s/2`` gives numerator ``[1, 0]`` and denominator ``[2]``). Two
fractions are added over the product of their denominators, except that equal
denominators are shared and a constant denominator is not multiplied in, so
``1/(s+1) + 1/(s+2)`` gives ``(2s + 3)/((s+1)(s+2))`` but
``1/(s+1) + 1/(s+1)^2`` gives a numerator that contains the factor ``s+1``
(reported, not hidden). Leading zero coefficients are trimmed, including
coefficients that vanish to rounding level when two terms cancel (for example
``(s+0.1)^2 - s^2``); an identically zero polynomial is returned as ``[0.]``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from synth.errors import InputError
from synth.problem.limits import MAX_ORDER, check_literal

__all__ = ["parse_rational", "expression_names", "is_parameter_name", "MAX_EXPONENT", "MAX_LENGTH", "MAX_DEGREE",
           "MAX_DEPTH", "MAX_TERMS"]

#: Largest degree allowed for the numerator or denominator while building: the
#: plant's order limit, since nothing is cancelled afterwards.
MAX_DEGREE = MAX_ORDER
#: Largest magnitude allowed for an integer exponent after ``^`` (a higher power
#: of anything but a constant exceeds :data:`MAX_DEGREE`).
MAX_EXPONENT = MAX_ORDER
#: Longest expression accepted, in characters.
MAX_LENGTH = 2000
#: Deepest nesting of parentheses and unary signs accepted.
MAX_DEPTH = 60
#: Most terms joined by ``+`` or ``-`` in the whole expression; each sum of
#: fractions multiplies denominators, so the work grows with the count.
MAX_TERMS = 200

# A coefficient produced by adding two terms is set to exactly zero when it is
# this many units of rounding below the magnitude of the terms that produced it.
_CANCEL_ULPS = 64.0

_NUMBER = re.compile(r"(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?", re.ASCII)
_NAME = re.compile(r"[A-Za-z_][A-Za-z_0-9]*", re.ASCII)
_OPERATORS = "+-*/^()"


@dataclass(frozen=True)
class _Token:
    kind: str  # "num", "s", "name", "op", "end"
    text: str
    pos: int  # 1-based column of the first character


@dataclass(frozen=True)
class _Frac:
    """A polynomial fraction, num/den, descending powers, leading zeros trimmed."""

    num: np.ndarray
    den: np.ndarray


def _tokenize(text: str, names=frozenset()) -> list[_Token]:
    """Tokens of ``text``; ``names`` are the parameter names allowed besides ``s``
    (``None``: any identifier, for :func:`expression_names`)."""
    tokens: list[_Token] = []
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch.isspace():
            i += 1
            continue
        m = _NUMBER.match(text, i)
        if m and (ch.isdigit() or ch == "."):
            tokens.append(_Token("num", m.group(0), i + 1))
            i = m.end()
            continue
        m = _NAME.match(text, i)
        if m:
            name = m.group(0)
            if name == "s":
                tokens.append(_Token("s", name, i + 1))
            elif names is None or name in names:
                tokens.append(_Token("name", name, i + 1))
            else:
                shown = name if len(name) <= 40 else name[:37] + "..."
                allowed = ("only the variable 's' is allowed" if not names else
                           "the names are s and the parameters "
                           + ", ".join(sorted(names)))
                raise InputError(f"unknown name '{shown}' at position {i + 1} ({allowed})")
            i = m.end()
            continue
        if ch in _OPERATORS:
            if ch == "*" and i + 1 < n and text[i + 1] == "*":
                raise InputError(f"unexpected '**' at position {i + 1} (use '^' for powers)")
            tokens.append(_Token("op", ch, i + 1))
            i += 1
            continue
        if ch == ".":
            raise InputError(f"malformed number at position {i + 1}")
        raise InputError(f"unexpected character {ch!r} at position {i + 1}")
    tokens.append(_Token("end", "", n + 1))
    return tokens


def _trim(p: np.ndarray) -> np.ndarray:
    nz = np.flatnonzero(p)
    if nz.size == 0:
        return np.zeros(1)
    return p[nz[0]:]


def _is_zero(p: np.ndarray) -> bool:
    return not np.any(p)


_EPS = float(np.finfo(float).eps)


def _poly_add(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    n = max(a.size, b.size)
    if a.size < n:  # left-pad with zeros (np.pad costs more than the sum on short arrays)
        a = np.concatenate((np.zeros(n - a.size), a))
    if b.size < n:
        b = np.concatenate((np.zeros(n - b.size), b))
    out = a + b
    # Terms that cancel leave rounding noise; call that an exact zero so that
    # the degree of the result is not inflated by a 1e-17 leading coefficient.
    scale = np.abs(a) + np.abs(b)
    out[np.abs(out) <= _CANCEL_ULPS * _EPS * scale] = 0.0
    return _trim(out)


def _poly_mul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return _trim(np.convolve(a, b))


def _const(p: np.ndarray) -> bool:
    return p.size == 1


class _Parser:
    def __init__(self, text: str, parameters=None):
        self.text = text
        self.parameters = dict(parameters or {})
        self.tokens = _tokenize(text, frozenset(self.parameters))
        self.i = 0
        self.depth = 0
        self.terms = 1

    # -- token helpers -------------------------------------------------------
    def peek(self) -> _Token:
        return self.tokens[self.i]

    def take(self) -> _Token:
        tok = self.tokens[self.i]
        self.i += 1
        return tok

    def is_op(self, tok: _Token, chars: str) -> bool:
        return tok.kind == "op" and tok.text in chars

    def unexpected(self, tok: _Token, hint: str = "") -> InputError:
        extra = f" ({hint})" if hint else ""
        if tok.kind == "end":
            return InputError(f"unexpected end of expression{extra}")
        return InputError(f"unexpected '{tok.text}' at position {tok.pos}{extra}")

    def enter(self, tok: _Token) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise InputError(
                f"expression nested too deeply at position {tok.pos} (at most {MAX_DEPTH} levels)"
            )

    # -- fraction arithmetic ------------------------------------------------
    def check(self, f: _Frac, tok: _Token) -> _Frac:
        deg = max(f.num.size, f.den.size) - 1
        if deg > MAX_DEGREE:
            raise InputError(
                f"expression degree exceeds {MAX_DEGREE} at position {tok.pos}"
            )
        if not (np.all(np.isfinite(f.num)) and np.all(np.isfinite(f.den))):
            raise InputError(
                f"coefficients overflow at position {tok.pos} (numbers too large)"
            )
        return f

    def add(self, a: _Frac, b: _Frac, tok: _Token) -> _Frac:
        if np.array_equal(a.den, b.den):
            return self.check(_Frac(_poly_add(a.num, b.num), a.den), tok)
        if _const(b.den):
            # a/d + c/k = (k a + d c)/(k d): a constant k need not be multiplied
            # into the denominator's degree, but keep it so nothing is rescaled.
            num = _poly_add(a.num * b.den[0], _poly_mul(b.num, a.den))
            return self.check(_Frac(num, a.den * b.den[0]), tok)
        if _const(a.den):
            num = _poly_add(_poly_mul(a.num, b.den), b.num * a.den[0])
            return self.check(_Frac(num, b.den * a.den[0]), tok)
        num = _poly_add(_poly_mul(a.num, b.den), _poly_mul(b.num, a.den))
        return self.check(_Frac(num, _poly_mul(a.den, b.den)), tok)

    def mul(self, a: _Frac, b: _Frac, tok: _Token) -> _Frac:
        return self.check(
            _Frac(_poly_mul(a.num, b.num), _poly_mul(a.den, b.den)), tok
        )

    def div(self, a: _Frac, b: _Frac, tok: _Token) -> _Frac:
        if _is_zero(b.num):
            raise InputError(f"division by a zero polynomial at position {tok.pos}")
        return self.check(
            _Frac(_poly_mul(a.num, b.den), _poly_mul(a.den, b.num)), tok
        )

    def power(self, base: _Frac, k: int, tok: _Token) -> _Frac:
        if k < 0:
            if _is_zero(base.num):
                raise InputError(
                    f"division by a zero polynomial at position {tok.pos} (negative power of zero)"
                )
            base, k = _Frac(base.den, base.num), -k
        num, den = np.ones(1), np.ones(1)
        # Repeated multiplication (k <= MAX_EXPONENT): exact for the integer
        # coefficients that matter most, e.g. binomial expansions.
        for _ in range(k):
            num = _poly_mul(num, base.num)
            den = _poly_mul(den, base.den)
            self.check(_Frac(num, den), tok)
        return _Frac(num, den)

    # -- grammar ------------------------------------------------------------
    def parse(self) -> _Frac:
        if self.peek().kind == "end":
            raise InputError("empty expression")
        value = self.expression()
        tok = self.peek()
        if tok.kind != "end":
            if self.is_op(tok, ")"):
                raise InputError(f"unexpected ')' at position {tok.pos} (no matching '(')")
            if tok.kind == "num":
                raise self.unexpected(tok, "a number cannot follow here; insert an operator")
            raise self.unexpected(tok)
        return value

    def expression(self) -> _Frac:
        value = self.term()
        while self.is_op(self.peek(), "+-"):
            op = self.take()
            self.terms += 1
            if self.terms > MAX_TERMS:
                raise InputError(f"too many terms at position {op.pos} (at most {MAX_TERMS} "
                                 "joined by '+' or '-')")
            rhs = self.term()
            if op.text == "-":
                rhs = _Frac(-rhs.num, rhs.den)
            value = self.add(value, rhs, op)
        return value

    def term(self) -> _Frac:
        value = self.unary()
        after_divisor = False
        while True:
            tok = self.peek()
            if self.is_op(tok, "*/"):
                self.take()
                rhs = self.unary()
                if tok.text == "*":
                    value = self.mul(value, rhs, tok)
                    after_divisor = False
                else:
                    value = self.div(value, rhs, tok)
                    after_divisor = True
            elif tok.kind in ("s", "name") or self.is_op(tok, "("):
                if after_divisor:
                    raise InputError(
                        f"ambiguous implicit multiplication after '/' at position {tok.pos}"
                        " (write the divisor in parentheses, or use '*')"
                    )
                rhs = self.power_()
                value = self.mul(value, rhs, tok)
            else:
                return value

    def unary(self) -> _Frac:
        tok = self.peek()
        if self.is_op(tok, "+-"):
            self.take()
            self.enter(tok)
            value = self.unary()
            self.depth -= 1
            return _Frac(-value.num, value.den) if tok.text == "-" else value
        return self.power_()

    def power_(self) -> _Frac:
        base = self.atom()
        tok = self.peek()
        if not self.is_op(tok, "^"):
            return base
        self.take()
        k = self.exponent(tok)
        value = self.power(base, k, tok)
        nxt = self.peek()
        if self.is_op(nxt, "^"):
            raise InputError(
                f"unexpected '^' at position {nxt.pos} (chained powers need parentheses)"
            )
        return value

    def exponent(self, caret: _Token) -> int:
        tok = self.peek()
        paren = self.is_op(tok, "(")
        if paren:
            self.take()
            tok = self.peek()
        sign = 1
        if self.is_op(tok, "+-"):
            self.take()
            sign = -1 if tok.text == "-" else 1
            tok = self.peek()
        if tok.kind != "num":
            raise InputError(
                f"the exponent after '^' at position {caret.pos} must be an integer"
                + (f", found '{tok.text}'" if tok.kind != "end" else "")
            )
        self.take()
        if not re.fullmatch(r"\d+", tok.text):
            raise InputError(
                f"the exponent '{tok.text}' at position {tok.pos} must be an integer"
            )
        # compare digits before int(): a 5000-digit exponent must not reach int()
        k = int(tok.text) if len(tok.text.lstrip("0")) <= 6 else MAX_EXPONENT + 1
        if k > MAX_EXPONENT:
            shown = tok.text if len(tok.text) <= 20 else tok.text[:17] + "..."
            raise InputError(
                f"the exponent {'-' if sign < 0 else ''}{shown} at position {tok.pos} is too "
                f"large (at most {MAX_EXPONENT})"
            )
        if paren:
            close = self.peek()
            if not self.is_op(close, ")"):
                raise self.unexpected(close, "expected ')' after the exponent")
            self.take()
        return sign * k

    def atom(self) -> _Frac:
        tok = self.take()
        if tok.kind == "num":
            value = check_literal(tok.text, None, None, f"at position {tok.pos}: ")
            return _Frac(np.array([value]), np.ones(1))
        if tok.kind == "s":
            return _Frac(np.array([1.0, 0.0]), np.ones(1))
        if tok.kind == "name":
            return _Frac(np.array([float(self.parameters[tok.text])]), np.ones(1))
        if self.is_op(tok, "("):
            self.enter(tok)
            if self.is_op(self.peek(), ")"):
                raise InputError(f"empty parentheses at position {tok.pos}")
            value = self.expression()
            close = self.peek()
            if not self.is_op(close, ")"):
                if close.kind == "end":
                    raise InputError(f"missing ')' for the '(' at position {tok.pos}")
                raise self.unexpected(close, f"expected ')' to close the '(' at position {tok.pos}")
            self.take()
            self.depth -= 1
            return value
        if tok.kind == "end":
            raise InputError("unexpected end of expression (an operand is missing)")
        raise self.unexpected(tok, "an operand is missing")


def _checked_text(text) -> str:
    if not isinstance(text, str):
        raise InputError(f"the expression must be a string, got {type(text).__name__}")
    if len(text) > MAX_LENGTH:
        raise InputError(f"expression too long ({len(text)} characters, at most {MAX_LENGTH})")
    return text


def is_parameter_name(name: str) -> bool:
    """Whether ``name`` can name a parameter: an ASCII identifier other than ``s``."""
    return isinstance(name, str) and name != "s" and _NAME.fullmatch(name) is not None


def expression_names(text: str) -> tuple[str, ...]:
    """The parameter names an expression uses (identifiers other than ``s``), in order of use.

    Only the tokenizer runs: nothing is evaluated.  Malformed characters
    raise :class:`synth.errors.InputError` as in :func:`parse_rational`.
    """
    seen: dict[str, None] = {}
    for tok in _tokenize(_checked_text(text), None):
        if tok.kind == "name":
            seen.setdefault(tok.text)
    return tuple(seen)


def parse_rational(text: str, parameters=None) -> tuple[np.ndarray, np.ndarray]:
    """Parse a rational expression in ``s`` into numerator and denominator.

    Parameters
    ----------
    text : str
        The expression, e.g. ``"4/(s^2*(s+8))"`` or ``"10(s+1)/(s(s+5)^2)"``.
        See the module documentation for the grammar, implicit
        multiplication and limits.
    parameters : mapping of str to float, optional
        Values of the parameter names the expression may use (a name not in
        it is an error); each name stands for its number.

    Returns
    -------
    num, den : numpy.ndarray
        Float coefficient arrays in descending powers of ``s``, leading zeros
        trimmed, not normalised and with no common factor cancelled. An
        identically zero polynomial is ``array([0.])``.

    Raises
    ------
    synth.errors.InputError
        On any malformed, unsafe or oversized expression, with a one-line
        message that names the position (counted from 1), e.g.
        ``"unexpected ')' at position 7"``, ``"division by a zero
        polynomial at position 2"``, ``"unknown name 'x' at position 1 ..."``.
        The caller adds the file and key.

    References
    ----------
    .. [1] A. V. Aho, M. S. Lam, R. Sethi and J. D. Ullman, *Compilers:
       Principles, Techniques, and Tools*, 2nd ed., Addison-Wesley, 2006,
       section 4.4 (recursive-descent parsing of expression grammars).

    Examples
    --------
    >>> num, den = parse_rational("4/(s^2*(s+8))")
    >>> num.tolist(), den.tolist()
    ([4.0], [1.0, 8.0, 0.0, 0.0])
    """
    value = _Parser(_checked_text(text), parameters).parse()
    if _is_zero(value.den):  # unreachable by construction; guard a silent wrong answer
        raise InputError("division by a zero polynomial")
    return value.num.astype(float), value.den.astype(float)
