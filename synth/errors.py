"""One exception hierarchy for everything a user can get wrong.

The CLI turns any :class:`SynthError` into a single line on standard error
and exit code 2; anything else reaching the user is a bug.
"""

from __future__ import annotations


class SynthError(Exception):
    """Base class for user-facing errors (bad input, bad option)."""


class InputError(SynthError):
    """A requirements file (or another input) is unreadable or invalid.

    Parameters
    ----------
    message : str
        What is wrong, in plain words.
    source : str, optional
        The file (or ``"<string>"``) the problem was found in.
    key : str, optional
        The dotted key, e.g. ``"requirements.max_overshoot_percent"``.
    """

    def __init__(self, message: str, source: str | None = None, key: str | None = None):
        self.message = message
        self.source = source
        self.key = key
        parts = [p for p in (source, key) if p]
        super().__init__(": ".join([*parts, message]))


class OptionError(SynthError):
    """A command-line option has a bad value."""


class StrategyDeclined(SynthError):
    """A design strategy cannot handle this problem with this structure family.

    Raised from ``Strategy.propose`` for a real decline (say, the gain range
    excludes the only useful gain sign); :func:`synth.design.run_design`
    records the message in ``search.declined`` of the design JSON and goes
    on with the other strategies.  Any other exception from a strategy is a
    bug and propagates.
    """
