"""Size and magnitude limits on everything synth reads, and the checks that enforce them.

synth refuses, with one line that states the limit, any input it cannot
treat exactly and quickly: a file too large to be a requirements file,
nesting no requirements file needs, numbers whose magnitude makes no
physical sense or leaves no room for the arithmetic of the loop, a plant
whose order the coefficient-form engine cannot resolve, and time scales so
far apart that double precision cannot hold them in one polynomial.  The
user-facing table is the "Limits" section of ``docs/requirements-file.md``;
each constant below says why it has its value.

References
----------
.. [1] IEEE Std 754-2019, *Standard for Floating-Point Arithmetic* (binary64:
   largest finite value about 1.8e308, smallest normal value about 2.2e-308,
   53-bit significand).
.. [2] J. H. Wilkinson, *Rounding Errors in Algebraic Processes*, Prentice
   Hall, 1963 (the sensitivity of polynomial roots to coefficient rounding
   grows quickly with the degree).
"""

from __future__ import annotations

import math

from synth.errors import InputError

#: Largest requirements file read, in bytes.  A real file is a few kilobytes;
#: the cap keeps a stray multi-gigabyte file (or /dev/zero behind a link) from
#: being read into memory at all.
MAX_FILE_BYTES = 1 << 20

#: Deepest nesting of arrays and inline tables below the top-level tables.
#: The schema needs one level (a list of numbers); eight leaves room for
#: mistakes to get a precise message instead of a parser's recursion failure.
MAX_NESTING = 8

#: Largest magnitude of any number written in a file (and of any number in a
#: plant expression).  Products of three such numbers (a gain, a coefficient,
#: a frequency power) stay inside binary64's range of about 1e308.
MAX_MAGNITUDE = 1e100

#: Smallest magnitude of a non-zero number written in a file.  Below it a
#: value is no physical quantity in any units, and subnormal numbers such as
#: 5e-324 have lost their precision.
MIN_MAGNITUDE = 1e-100

#: Highest degree of the plant's numerator or denominator as written (the Pade
#: form of a dead time adds its own order on top, at most 10).  The engine
#: works on coefficients; with poles spread over two decades, the roots of the
#: expanded polynomial keep at least five significant digits up to degree 30
#: (worst of 20 random plants: 2e-5 relative error, numpy.roots), but none by
#: degree 40 (relative error 0.14).  Real plants rarely exceed order 10.
MAX_ORDER = 30

#: Largest ratio between the fastest and the slowest time scale of a problem:
#: the non-zero pole and zero magnitudes of the plant, the Pade poles of its
#: dead time (about ``order / dead_time``), and the rates set by the settling
#: and rise-time limits.  Wider spans put roots more than ten decades apart in
#: one polynomial of degree up to 40, where the coefficients can no longer
#: carry the slow roots in double precision and the simulation's time grid
#: cannot resolve both ends.
MAX_TIME_SCALE_SPAN = 1e10

#: Largest magnitude of a coefficient of the plant polynomials after poles and
#: zeros are multiplied out: room is left for the loop's products with the
#: compensator and the gain without leaving binary64's range.
MAX_COEFFICIENT = 1e250

#: Longest text accepted for a label, in characters.
MAX_TEXT = 200

#: Most named parameters of a parametric plant (``[plant.parameters]``).  With a
#: range on each and on the dead time the box has up to 2^9 = 512 corners; the
#: verifier checks a fold-over two-level design of 32 of them beyond five ranges
#: (see ``docs/methods.md``), and every further parameter costs the worst-case
#: search more evaluations.  Real uncertainty descriptions name a handful.
MAX_PARAMETERS = 8

#: Most ``[[plant.variants]]``.  Each variant is evaluated exactly for every
#: reported design and joins the search's model set, so the run time grows with
#: their number; a dozen operating points covers the plants we know of.
MAX_VARIANTS = 12

#: Most sample periods the dead time plus the computation delay may span with
#: ``[sampling]``.  The sampled-data verifier keeps every output still in flight
#: as a state of the loop (one per period of delay), so a delay of N periods
#: adds N states to every eigenvalue problem and simulation; 1000 keeps one
#: verification of a candidate near a second, and a loop whose delay is more
#: than a thousand samples is sampled far faster than it can use (sample slower
#: or model the delay as a process dead time of a slower loop).
MAX_DELAY_SAMPLES = 1000


class TinyLiteral(float):
    """A literal that reads as 0.0 only because it underflowed (``1e-400``); it keeps its text.

    :func:`parse_toml_float` makes these, so the key's own check can refuse
    the value with the file and key in the message.
    """

    text: str

    def __new__(cls, text: str):
        obj = super().__new__(cls, 0.0)
        obj.text = text
        return obj


def parse_toml_float(text: str) -> float:
    """``parse_float`` hook for :func:`tomllib.loads` that marks underflowed literals.

    References
    ----------
    .. [1] Python standard library, ``tomllib.loads(s, parse_float=float)``.
    """
    value = float(text)
    if value == 0.0 and any(c in "123456789" for c in text.lower().split("e")[0]):
        return TinyLiteral(text)
    return value


def describe_number(v) -> str:
    """A short rendering of a number for messages (a huge integer by its digit count)."""
    if isinstance(v, int) and not isinstance(v, bool) and abs(v) >= 10**15:
        return f"an integer of {len(str(abs(v)))} digits"
    try:
        return f"{v:g}"
    except (TypeError, ValueError):
        return repr(v)


def check_magnitude(v, source, key, what: str = "") -> None:
    """Raise :class:`InputError` when a finite number is too large or too small (but not 0).

    Parameters
    ----------
    v : int or float
        The number as read (an ``int`` may be arbitrarily long).
    source, key : str
        For the message.
    what : str, optional
        Prefix naming the entry, e.g. ``"entry 3 "``.
    """
    if isinstance(v, TinyLiteral):
        raise InputError(f"{what}{v.text[:40]} is too small to mean anything: use 0, or a "
                         f"magnitude of at least {MIN_MAGNITUDE:g}", source, key)
    if v == 0:
        return
    # Python compares int and float exactly, so a 400-digit integer is caught
    # here before anything converts it to float
    if abs(v) > MAX_MAGNITUDE:
        raise InputError(f"{what}{describe_number(v)} is too large: synth accepts magnitudes "
                         f"up to {MAX_MAGNITUDE:g}", source, key)
    if abs(v) < MIN_MAGNITUDE:
        raise InputError(f"{what}{describe_number(v)} is too small to mean anything: use 0, or a "
                         f"magnitude of at least {MIN_MAGNITUDE:g}", source, key)


def check_literal(text: str, source, key, what: str = "") -> float:
    """Read a decimal literal and apply :func:`check_magnitude`, catching underflow to 0.

    ``float("1e-400")`` is ``0.0``; a literal whose digits are not all zero
    but whose value is zero is refused as too small rather than read as 0.

    Returns
    -------
    float
        The value.
    """
    value = float(text)
    mantissa = text.lower().split("e")[0]
    if value == 0.0 and any(c in "123456789" for c in mantissa):
        raise InputError(f"{what}{text[:40]} is too small to mean anything: use 0, or a "
                         f"magnitude of at least {MIN_MAGNITUDE:g}", source, key)
    if not math.isfinite(value):
        raise InputError(f"{what}{text[:40]} is too large: synth accepts magnitudes up to "
                         f"{MAX_MAGNITUDE:g}", source, key)
    check_magnitude(value, source, key, what)
    return value


def check_nesting(doc, source) -> None:
    """Raise :class:`InputError` when arrays or inline tables nest deeper than :data:`MAX_NESTING`.

    The walk is iterative, so it cannot itself exhaust the stack.
    """
    stack = [(doc, 0, None)]
    while stack:
        node, depth, key = stack.pop()
        if isinstance(node, dict):
            items = ((f"{key}.{k}" if key else str(k), x) for k, x in node.items())
        elif isinstance(node, list):
            items = ((key, x) for x in node)  # entries of a list keep the list's key
        else:
            continue
        for name, child in items:
            if not isinstance(child, (dict, list)):
                continue
            if depth + 1 > MAX_NESTING + 1:  # the top-level tables are level 1
                raise InputError(f"arrays or tables nested too deeply (at most {MAX_NESTING} "
                                 "levels)", source, name)
            stack.append((child, depth + 1, name))


def check_time_scales(scales: dict[str, float], source) -> None:
    """Raise :class:`InputError` when a problem's rates span more than :data:`MAX_TIME_SCALE_SPAN`.

    Parameters
    ----------
    scales : dict
        ``{what: rate in 1/s}`` for each positive rate of the problem, for
        example ``{"plant.poles": 2.0, "plant.dead_time": 0.3}``; the message
        names the two ends.
    source : str
        The file, for the message.
    """
    items = [(k, v) for k, v in scales.items() if v > 0 and math.isfinite(v)]
    if len(items) < 2:
        return
    lo = min(items, key=lambda kv: kv[1])
    hi = max(items, key=lambda kv: kv[1])
    if hi[1] > MAX_TIME_SCALE_SPAN * lo[1]:
        raise InputError(
            f"time scales {hi[1] / lo[1]:.2g} apart ({hi[0]} at {hi[1]:.3g} rad/s, {lo[0]} at "
            f"{lo[1]:.3g} rad/s); synth handles at most {MAX_TIME_SCALE_SPAN:g} within one "
            "problem", source, hi[0] if hi[0] != "plant" else lo[0])
