"""The requirements file: TOML schema, validation and the s-plane region.

A requirements file (format 1, see ``docs/requirements-file.md``) has three
tables: ``[plant]``, ``[requirements]`` and ``[search]``.  Everything is
validated strictly: unknown keys, wrong types, non-finite numbers and values
out of range raise :class:`synth.errors.InputError` naming the file and key.

Time-domain requirements map to a region of the s-plane
``R = {Re s <= -sigma} ∩ {damping >= zeta}``:

* damping from the overshoot limit, with the second-order relation
  ``zeta = -ln(Mp) / sqrt(pi^2 + ln(Mp)^2)``;
* decay rate from the settling time, ``sigma = ln(100 / band_percent) / Ts``
  (the envelope ``exp(-sigma t)`` of the slowest mode falls below the band
  by ``Ts``; it neglects the ``1/sqrt(1-zeta^2)`` factor of the envelope).

Both relations are exact only for a dominant, zero-free pole pair; the final
verdicts come from simulation in the verifier.

References
----------
K. Ogata, *Modern Control Engineering*, 5th ed., Prentice Hall, 2010, ch. 5
(transient-response specifications of second-order systems).
"""

from __future__ import annotations

import difflib
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from synth.errors import InputError
from synth.problem.plant import Plant
from synth.problem.region import Region, damping_from_overshoot, decay_rate_from_settling


def __getattr__(name: str):
    # STRUCTURES is read from the family registry, the one place that knows the
    # structure names; looked up lazily so that importing this module never
    # imports the families (which import the plant from this package)
    if name == "STRUCTURES":
        from synth.families import structure_names

        return structure_names()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

_TOP_KEYS = {"format", "plant", "requirements", "search"}


_PLANT_KEYS = {"label", "numerator", "denominator", "zeros", "poles", "gain", "expression",
               "dead_time", "dead_time_order"}


@dataclass(frozen=True)
class Requirements:
    """The ``[requirements]`` table; ``None`` means "not required"."""

    max_overshoot_percent: float | None = None
    max_settling_time: float | None = None
    settling_band_percent: float = 2.0
    min_damping_ratio: float | None = None
    max_rise_time: float | None = None
    max_steady_state_error: float | None = None
    plant_gain_range: tuple[float, float] | None = None
    gain_range: tuple[float, float] | None = None
    min_phase_margin_deg: float | None = None
    min_gain_margin_db: float | None = None
    max_peak_sensitivity: float | None = None
    max_control_effort: float | None = None

    def region(self) -> Region:
        """The s-plane region implied by the overshoot, damping and settling limits."""
        zeta = 0.0
        if self.max_overshoot_percent is not None:
            zeta = max(zeta, damping_from_overshoot(self.max_overshoot_percent))
        if self.min_damping_ratio is not None:
            zeta = max(zeta, self.min_damping_ratio)
        sigma = 0.0
        if self.max_settling_time is not None:
            sigma = decay_rate_from_settling(self.max_settling_time, self.settling_band_percent)
        return Region(sigma=sigma, zeta=min(zeta, 0.999999))

    def given(self) -> dict[str, Any]:
        """The keys the file set (band only when another key needs it), as plain JSON values."""
        out = {}
        for name in _REQ_SPEC:
            v = getattr(self, name)
            if name == "settling_band_percent" and self.max_settling_time is None:
                continue
            if v is not None:
                out[name] = list(v) if isinstance(v, tuple) else v
        return out

    @property
    def is_empty(self) -> bool:
        return not any(getattr(self, n) is not None for n in _REQ_SPEC
                       if n != "settling_band_percent")


@dataclass(frozen=True)
class SearchSettings:
    """The ``[search]`` table."""

    structures: tuple[str, ...] | None = None
    general_order: int = 2
    max_frequency: float = 1000.0
    seed: int = 0
    keep: int = 10
    #: seconds of wall clock after which the search stops as a safety limit (the
    #: amount of search is counted in work, never timed; see ``effort``)
    time_budget: float = 600.0
    #: relative amount of search work per structure (deterministic)
    effort: float = 1.0


@dataclass(frozen=True)
class Problem:
    """Everything a command needs: plant, requirements, search settings, source file."""

    plant: Plant
    requirements: Requirements = field(default_factory=Requirements)
    search: SearchSettings = field(default_factory=SearchSettings)
    source: str = "<string>"

    @property
    def region(self) -> Region:
        return self.requirements.region()


def _num(v, src, key, *, lo=None, hi=None, lo_open=False, hi_open=False, integer=False):
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise InputError(f"must be a number, got {type(v).__name__} {v!r}", src, key)
    if integer and not isinstance(v, int):
        raise InputError(f"must be a whole number, got {v!r}", src, key)
    if not math.isfinite(v):
        raise InputError(f"must be finite, got {v!r}", src, key)
    if lo is not None and (v < lo or (lo_open and v == lo)):
        raise InputError(f"must be {'>' if lo_open else '>='} {lo:g}, got {v:g}", src, key)
    if hi is not None and (v > hi or (hi_open and v == hi)):
        raise InputError(f"must be {'<' if hi_open else '<='} {hi:g}, got {v:g}", src, key)
    return int(v) if integer else float(v)


def _numlist(v, src, key, *, nonempty=True):
    if not isinstance(v, list):
        raise InputError(f"must be a list of numbers, got {type(v).__name__}", src, key)
    if nonempty and not v:
        raise InputError("must not be empty", src, key)
    out = []
    for i, x in enumerate(v):
        if isinstance(x, bool) or not isinstance(x, (int, float)):
            raise InputError(f"entry {i + 1} must be a number, got {x!r}", src, key)
        if not math.isfinite(x):
            raise InputError(f"entry {i + 1} must be finite, got {x!r}", src, key)
        out.append(float(x))
    return out


def _range(v, src, key, *, positive=False):
    vals = _numlist(v, src, key)
    if len(vals) != 2:
        raise InputError(f"must be a list of two numbers [low, high], got {len(vals)}", src, key)
    lo, hi = vals
    if not lo < hi:
        raise InputError(f"is an empty range: low {lo:g} must be below high {hi:g}", src, key)
    if positive and lo <= 0:
        raise InputError(f"factors must be positive, got low {lo:g}", src, key)
    return (lo, hi)


# name -> validator(value, src, key)
_REQ_SPEC = {
    # 0 is a real requirement ("no overshoot"): the region then asks for real poles
    "max_overshoot_percent": lambda v, s, k: _num(v, s, k, lo=0, hi=100, hi_open=True),
    "max_settling_time": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True),
    "settling_band_percent": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True, hi=50),
    "min_damping_ratio": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True, hi=1, hi_open=True),
    "max_rise_time": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True),
    "max_steady_state_error": lambda v, s, k: _num(v, s, k, lo=0, hi=1),
    "plant_gain_range": lambda v, s, k: _range(v, s, k, positive=True),
    "gain_range": lambda v, s, k: _range(v, s, k),
    "min_phase_margin_deg": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True, hi=180, hi_open=True),
    "min_gain_margin_db": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True),
    "max_peak_sensitivity": lambda v, s, k: _num(v, s, k, lo=1),
    "max_control_effort": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True),
}


def _structures(v, src, key):
    from synth.families import structure_names

    names = structure_names()
    if not isinstance(v, list) or not v:
        raise InputError(f"must be a non-empty list of names from {', '.join(names)}", src, key)
    seen = []
    for x in v:
        if not isinstance(x, str) or x not in names:
            raise InputError(f"unknown structure {x!r}; choose from {', '.join(names)}", src, key)
        if x in seen:
            raise InputError(f"structure {x!r} is listed twice", src, key)
        seen.append(x)
    return tuple(seen)


_SEARCH_SPEC = {
    "structures": _structures,
    "general_order": lambda v, s, k: _num(v, s, k, lo=1, hi=3, integer=True),
    "max_frequency": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True),
    "seed": lambda v, s, k: _num(v, s, k, lo=0, integer=True),
    "keep": lambda v, s, k: _num(v, s, k, lo=1, hi=1000, integer=True),
    "time_budget": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True, hi=3600),
    "effort": lambda v, s, k: _num(v, s, k, lo=0.05, hi=20),
}


def _table(doc, name, src):
    v = doc.get(name, {})
    if not isinstance(v, dict):
        raise InputError(f"must be a table ([{name}]), got {type(v).__name__}", src, name)
    return v


def _unknown(table, allowed, src, prefix):
    for k in table:
        if k not in allowed:
            close = difflib.get_close_matches(k, sorted(allowed), n=1, cutoff=0.6)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise InputError(f"unknown key{hint}", src, f"{prefix}{k}")


def _parse_plant(t: dict, src: str) -> Plant:
    _unknown(t, _PLANT_KEYS, src, "plant.")
    forms = []
    if "numerator" in t or "denominator" in t:
        forms.append("numerator/denominator")
    if "zeros" in t or "poles" in t or "gain" in t:
        forms.append("zeros/poles/gain")
    if "expression" in t:
        forms.append("expression")
    if not forms:
        raise InputError("no plant given: set numerator and denominator, or zeros/poles/gain, "
                         "or expression", src, "plant")
    if len(forms) > 1:
        raise InputError(f"give exactly one plant form, found {' and '.join(forms)}", src, "plant")
    label = t.get("label", "")
    if not isinstance(label, str):
        raise InputError("must be text", src, "plant.label")
    dead = _num(t.get("dead_time", 0.0), src, "plant.dead_time", lo=0)
    order = _num(t.get("dead_time_order", 3), src, "plant.dead_time_order", lo=1, hi=10,
                 integer=True)
    kw = {"dead_time": dead, "pade_order": order, "label": label}
    try:
        if forms[0] == "numerator/denominator":
            for k in ("numerator", "denominator"):
                if k not in t:
                    raise InputError("missing; the coefficient form needs both numerator and "
                                     "denominator", src, f"plant.{k}")
            num = _numlist(t["numerator"], src, "plant.numerator")
            den = _numlist(t["denominator"], src, "plant.denominator")
            return Plant.from_coefficients(num, den, **kw)
        if forms[0] == "zeros/poles/gain":
            if "poles" not in t:
                raise InputError("missing; the zeros/poles/gain form needs poles (use [] for none)",
                                 src, "plant.poles")
            gain = _num(t.get("gain", 1.0), src, "plant.gain")
            return Plant.from_roots(t.get("zeros", []), t["poles"], gain, **kw)
        expr = t["expression"]
        if not isinstance(expr, str) or not expr.strip():
            raise InputError("must be a non-empty text expression in s", src, "plant.expression")
        return Plant.from_expression(expr, **kw)
    except InputError as err:
        if err.source is None:
            raise InputError(err.message, src, err.key or "plant") from None
        raise


def parse_problem(doc: dict, source: str = "<string>") -> Problem:
    """Validate a parsed TOML document and build the :class:`Problem`.

    Raises
    ------
    InputError
        On the first problem found, naming ``source`` and the key.
    """
    src = source
    if not isinstance(doc, dict):
        raise InputError("the document is not a TOML table", src)
    _unknown(doc, _TOP_KEYS, src, "")
    if "format" in doc:
        fmt = doc["format"]
        if isinstance(fmt, bool) or not isinstance(fmt, int) or fmt != 1:
            raise InputError(f"unsupported format {fmt!r}; this synth reads format 1", src, "format")
    if "plant" not in doc:
        raise InputError("missing [plant] table", src, "plant")
    plant = _parse_plant(_table(doc, "plant", src), src)

    rt = _table(doc, "requirements", src)
    _unknown(rt, set(_REQ_SPEC), src, "requirements.")
    req = Requirements(**{k: _REQ_SPEC[k](v, src, f"requirements.{k}") for k, v in rt.items()})

    st = _table(doc, "search", src)
    _unknown(st, set(_SEARCH_SPEC), src, "search.")
    search = SearchSettings(**{k: _SEARCH_SPEC[k](v, src, f"search.{k}") for k, v in st.items()})
    return Problem(plant=plant, requirements=req, search=search, source=src)


def problem_from_text(text: str, source: str = "<string>") -> Problem:
    """Parse TOML text into a :class:`Problem`."""
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"not valid TOML: {err}", source) from None
    return parse_problem(doc, source)


def load_problem(path) -> Problem:
    """Read and validate a requirements file.

    Raises
    ------
    InputError
        When the file cannot be read, is not TOML or is invalid.
    """
    p = Path(path)
    src = str(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise InputError("no such file", src) from None
    except IsADirectoryError:
        raise InputError("is a directory, not a requirements file", src) from None
    except OSError as err:
        raise InputError(f"cannot be read: {err.strerror or err}", src) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError("is not UTF-8 text", src) from None
    return problem_from_text(text, src)
