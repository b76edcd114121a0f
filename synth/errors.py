"""One exception hierarchy for everything a user can get wrong, and the interrupts.

The CLI turns any :class:`SynthError` into a single line on standard error
and exit code 2; anything else reaching the user is a bug.  Every message
passes through :func:`one_line`, so text taken from a file (a key with a
newline in it, a label with a terminal escape) can never break the line.

An interrupt is a :class:`KeyboardInterrupt`: SIGINT raises it as Python
always does, and the CLI's SIGTERM handler raises :class:`Terminated`, a
subclass, so one code path (``finally`` blocks, context managers) cleans up
after both.
"""

from __future__ import annotations

import signal
import unicodedata

# control characters, format characters (bidi overrides, zero-width marks) and
# the Unicode line and paragraph separators: all can break or disguise a line
_ESCAPED_CATEGORIES = frozenset({"Cc", "Cf", "Zl", "Zp"})
_NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def one_line(text: str) -> str:
    """Return ``text`` with every control, format and line-separator character escaped.

    Parameters
    ----------
    text : str
        Any message, possibly holding text from a user's file.

    Returns
    -------
    str
        The same text on one line: ``"\\n"`` becomes the two characters
        backslash and ``n``, other such characters ``\\xNN``, ``\\uNNNN`` or
        ``\\UNNNNNNNN`` as in a Python string literal. Printable text,
        backslashes included, is unchanged, so the function is idempotent.

    References
    ----------
    .. [1] The Unicode Standard, section 4.5 (General Category: Cc, Cf, Zl, Zp).
    """
    if text.isprintable():  # fast path: nothing to escape (spaces are printable)
        return text
    out = []
    for ch in text:
        if ch in _NAMED:
            out.append(_NAMED[ch])
        elif unicodedata.category(ch) in _ESCAPED_CATEGORIES:
            code = ord(ch)
            out.append(f"\\x{code:02x}" if code < 0x100 else
                       f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}")
        else:
            out.append(ch)
    return "".join(out)


class SynthError(Exception):
    """Base class for user-facing errors (bad input, bad option)."""

    def __str__(self) -> str:
        return one_line(super().__str__())


class InputError(SynthError):
    """A requirements file (or another input) is unreadable or invalid.

    Parameters
    ----------
    message : str
        What is wrong, in plain words.
    source : str, optional
        The file (or ``"<string>"``) the problem was found in.
    key : str, optional
        The dotted key, e.g. ``"requirements.<key>"``.
    """

    def __init__(self, message: str, source: str | None = None, key: str | None = None):
        self.message = message
        self.source = source
        self.key = key
        parts = [p for p in (source, key) if p]
        super().__init__(": ".join([*parts, message]))


class OptionError(SynthError):
    """A command-line option has a bad value."""


class Terminated(KeyboardInterrupt):
    """Raised by the CLI's SIGTERM handler, so a termination cleans up like Ctrl-C.

    Parameters
    ----------
    signum : int
        The signal received (``signal.SIGTERM``).
    """

    def __init__(self, signum: int = signal.SIGTERM):
        super().__init__(signum)
        self.signum = signum


class StrategyDeclined(SynthError):
    """A design strategy cannot handle this problem with this structure family.

    Raised from ``Strategy.propose`` for a real decline (say, the gain range
    excludes the only useful gain sign); :func:`synth.design.run_design`
    records the message in ``search.declined`` of the design JSON and goes
    on with the other strategies.  Any other exception from a strategy is a
    bug and propagates.
    """
