"""The requirements file: TOML schema, validation and the s-plane region.

A requirements file (format 1, see ``docs/requirements-file.md``) has three
tables: ``[plant]``, ``[requirements]`` and ``[search]``.  Everything is
validated strictly: unknown keys, wrong types, non-finite numbers and values
out of range raise :class:`synth.errors.InputError` naming the file and key.
The ``[requirements]`` keys, their allowed values and their meaning come from
the requirement catalogue (:mod:`synth.problem.catalogue`); this module only
applies its value specs.

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
import sys
import tomllib
from dataclasses import dataclass, field
from typing import Any

from synth.errors import InputError
from synth.problem.catalogue import REQUIREMENTS, RangeSpec, Requirement, requirement_for
from synth.problem.limits import (
    MAX_MAGNITUDE,
    MAX_NESTING,
    MAX_ORDER,
    MAX_TEXT,
    check_magnitude,
    check_nesting,
    check_time_scales,
    describe_number,
    parse_toml_float,
)
from synth.problem.plant import Plant
from synth.problem.region import Region, damping_from_overshoot, decay_rate_from_settling
from synth.problem.source import read_input_text


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
               "dead_time", "dead_time_order", "step_test"}


@dataclass(frozen=True, init=False)
class Requirements:
    """The ``[requirements]`` table: the keys the file set, by the catalogue.

    Build it with keyword arguments named by file key
    (``Requirements(max_overshoot_percent=10.0)``); read a value by key as an
    attribute (``None`` when not required; a setting gives its default) or,
    in code that is about a metric rather than a key, with :meth:`limit`.
    Which keys exist and what they mean is :data:`synth.problem.catalogue.REQUIREMENTS`.

    Attributes
    ----------
    items : tuple of (str, object)
        The given keys and values, in catalogue order.
    """

    items: tuple[tuple[str, Any], ...]

    def __init__(self, **values: Any) -> None:
        unknown = [k for k in values if k not in REQUIREMENTS]
        if unknown:
            raise TypeError(f"Requirements got unknown keys {unknown}")
        items = tuple((k, values[k]) for k in REQUIREMENTS if values.get(k) is not None)
        object.__setattr__(self, "items", items)

    def __getattr__(self, name: str) -> Any:
        # only catalogue keys; anything else (including pickling's probes) is missing
        entry = REQUIREMENTS.get(name)
        if entry is None or name.startswith("_"):
            raise AttributeError(name)
        return self.value(name)

    def value(self, key: str) -> Any:
        """The file's value of ``key`` (a setting's default when not given; else ``None``)."""
        for k, v in self.__dict__.get("items", ()):
            if k == key:
                return v
        return REQUIREMENTS[key].default

    def limit(self, metric: str) -> Any:
        """The limit the file sets on a metric (by metric key), ``None`` when there is none."""
        entry = requirement_for(metric)
        return None if entry is None else self.value(entry.key)

    def limits(self) -> tuple[tuple[Requirement, Any], ...]:
        """``(entry, value)`` of every limit the file sets (settings left out), in catalogue order."""
        return tuple((REQUIREMENTS[k], v) for k, v in self.items
                     if REQUIREMENTS[k].kind != "setting")

    @property
    def settling_band(self) -> float:
        """The settling band in percent (the setting that belongs to the settling-time limit)."""
        (entry,) = (r for r in REQUIREMENTS.values() if r.setting_of
                    and REQUIREMENTS[r.setting_of].metric == "settling_time")
        return float(self.value(entry.key))

    def region(self) -> Region:
        """The s-plane region implied by the limits that shape it (the catalogue's ``region``).

        The least damping is the largest that any overshoot or damping limit
        asks for; the least decay rate comes from the settling-time limit.
        """
        zeta = 0.0
        sigma = 0.0
        for entry, limit in self.limits():
            if entry.region == "overshoot":
                zeta = max(zeta, damping_from_overshoot(limit))
            elif entry.region == "damping":
                zeta = max(zeta, limit)
            elif entry.region == "settling":
                sigma = decay_rate_from_settling(limit, self.settling_band)
        return Region(sigma=sigma, zeta=min(zeta, 0.999999))

    def given(self) -> dict[str, Any]:
        """The limits the file set, with the settings that shape them, as plain JSON values.

        A setting appears (with its default when the file leaves it out)
        exactly when the requirement it belongs to is set.
        """
        keys = {k for k, _ in self.items}
        out = {}
        for key, entry in REQUIREMENTS.items():
            if entry.setting_of is not None:
                v = self.value(key) if entry.setting_of in keys else None
            else:
                v = self.value(key)
            if v is not None:
                out[key] = list(v) if isinstance(v, tuple) else v
        return out

    @property
    def is_empty(self) -> bool:
        return not self.limits()


@dataclass(frozen=True)
class SearchSettings:
    """The ``[search]`` table."""

    structures: tuple[str, ...] | None = None
    general_order: int = 2
    #: rad/s; ``None``: derived from the problem's own scale (see ``SearchSpace.for_problem``)
    max_frequency: float | None = None
    seed: int = 0
    keep: int = 10
    #: seconds of wall clock after which the search stops as a safety limit (the
    #: amount of search is counted in work, never timed; see ``effort``)
    time_budget: float = 600.0
    #: relative amount of search work per structure (deterministic)
    effort: float = 1.0
    #: what "best" means among designs meeting every requirement (synth.problem.objectives)
    objective: str = "balanced"
    #: may a reference prefilter or set-point weights meet the reference-step requirements
    reference_shaping: bool = True


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
        raise InputError(f"must be a number, got {type(v).__name__} {_short(v)}", src, key)
    if integer and not isinstance(v, int):
        raise InputError(f"must be a whole number, got {v!r}", src, key)
    if isinstance(v, float) and not math.isfinite(v):  # (an int is finite, and may be huge)
        raise InputError(f"must be finite, got {v!r}", src, key)
    if not integer:  # whole-number keys have their own ranges ("must be <= 3")
        check_magnitude(v, src, key)
    if lo is not None and (v < lo or (lo_open and v == lo)):
        raise InputError(f"must be {'>' if lo_open else '>='} {lo:g}, got {describe_number(v)}",
                         src, key)
    if hi is not None and (v > hi or (hi_open and v == hi)):
        raise InputError(f"must be {'<' if hi_open else '<='} {hi:g}, got {describe_number(v)}",
                         src, key)
    return int(v) if integer else float(v)


def _short(v, limit: int = 40) -> str:
    """``repr`` of a value for a message, cut to ``limit`` characters (a 1 MB string stays short)."""
    if isinstance(v, (list, dict)):
        return f"with {len(v)} entries"
    text = repr(v)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _numlist(v, src, key, *, nonempty=True, max_len=None):
    if not isinstance(v, list):
        raise InputError(f"must be a list of numbers, got {type(v).__name__}", src, key)
    if nonempty and not v:
        raise InputError("must not be empty", src, key)
    if max_len is not None and len(v) > max_len:
        raise InputError(f"has {len(v)} entries; synth accepts at most {max_len}", src, key)
    out = []
    for i, x in enumerate(v):
        if isinstance(x, bool) or not isinstance(x, (int, float)):
            raise InputError(f"entry {i + 1} must be a number, got {_short(x)}", src, key)
        if isinstance(x, float) and not math.isfinite(x):
            raise InputError(f"entry {i + 1} must be finite, got {x!r}", src, key)
        check_magnitude(x, src, key, f"entry {i + 1}: ")
        out.append(float(x))
    return out


def _range(v, src, key, *, positive=False):
    if isinstance(v, list) and len(v) != 2:
        raise InputError(f"must be a list of two numbers [low, high], got {len(v)}", src, key)
    vals = _numlist(v, src, key)
    lo, hi = vals
    if not lo < hi:
        raise InputError(f"is an empty range: low {lo:g} must be below high {hi:g}", src, key)
    if positive and lo <= 0:
        raise InputError(f"factors must be positive, got low {lo:g}", src, key)
    return (lo, hi)


def _check_value(spec, v, src, key):
    """Validate one requirement value by its catalogue spec."""
    if isinstance(spec, RangeSpec):
        return _range(v, src, key, positive=spec.positive)
    return _num(v, src, key, lo=spec.lo, hi=spec.hi, lo_open=spec.lo_open,
                hi_open=spec.hi_open, integer=spec.integer)


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


def _objective(v, src, key):
    from synth.problem.objectives import OBJECTIVES

    if not isinstance(v, str) or v not in OBJECTIVES:
        raise InputError(f"must be one of {', '.join(OBJECTIVES)}, got {_short(v)}", src, key)
    return v


def _flag(v, src, key):
    if not isinstance(v, bool):
        raise InputError(f"must be true or false, got {_short(v)}", src, key)
    return v


_SEARCH_SPEC = {
    "structures": _structures,
    "objective": _objective,
    "reference_shaping": _flag,
    "general_order": lambda v, s, k: _num(v, s, k, lo=1, hi=3, integer=True),
    "max_frequency": lambda v, s, k: _num(v, s, k, lo=0, lo_open=True),
    # a seed fits a signed 64-bit integer, so every consumer (numpy, JSON readers) takes it
    "seed": lambda v, s, k: _num(v, s, k, lo=0, hi=2**63 - 1, integer=True),
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
            close = (difflib.get_close_matches(k, sorted(allowed), n=1, cutoff=0.6)
                     if len(k) <= 100 else [])
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            name = k if len(k) <= 60 else f"{k[:57]}..."  # a key of a megabyte stays short
            raise InputError(f"unknown key{hint}", src, f"{prefix}{name}")


def _parse_plant(t: dict, src: str, read_data=None) -> Plant:
    _unknown(t, _PLANT_KEYS, src, "plant.")
    forms = []
    if "numerator" in t or "denominator" in t:
        forms.append("numerator/denominator")
    if "zeros" in t or "poles" in t or "gain" in t:
        forms.append("zeros/poles/gain")
    if "expression" in t:
        forms.append("expression")
    if "step_test" in t:
        forms.append("step_test")
    if not forms:
        raise InputError("no plant given: set numerator and denominator, or zeros/poles/gain, "
                         "or expression, or [plant.step_test]", src, "plant")
    if len(forms) > 1:
        raise InputError(f"give exactly one plant form, found {' and '.join(forms)}", src, "plant")
    label = t.get("label", "")
    if not isinstance(label, str):
        raise InputError("must be text", src, "plant.label")
    if len(label) > MAX_TEXT:
        raise InputError(f"is {len(label)} characters long; at most {MAX_TEXT}", src, "plant.label")
    if not label.isprintable():
        raise InputError("must be one line of printable text (no control characters)", src,
                         "plant.label")
    dead = _num(t.get("dead_time", 0.0), src, "plant.dead_time", lo=0)
    order = _num(t.get("dead_time_order", 3), src, "plant.dead_time_order", lo=1, hi=10,
                 integer=True)
    kw = {"dead_time": dead, "pade_order": order, "label": label}
    if forms[0] == "step_test":
        return _step_test_plant(t, src, order, label, read_data)
    try:
        if forms[0] == "numerator/denominator":
            for k in ("numerator", "denominator"):
                if k not in t:
                    raise InputError("missing; the coefficient form needs both numerator and "
                                     "denominator", src, f"plant.{k}")
            # leading zeros count: a list longer than any plant the engine takes is refused
            # before a single entry is converted
            num = _numlist(t["numerator"], src, "plant.numerator", max_len=MAX_ORDER + 1)
            den = _numlist(t["denominator"], src, "plant.denominator", max_len=MAX_ORDER + 1)
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


def _rates(plant: Plant, req: Requirements) -> dict[str, float]:
    """The problem's characteristic rates (1/s), named by the key that sets each.

    The plant's non-zero pole and zero magnitudes, the fastest Pade pole of
    its dead time, the decay rate the settling limit asks for and the
    bandwidth the rise-time limit implies; :func:`check_time_scales` bounds
    their spread.
    """
    import numpy as np

    rates: dict[str, float] = {}

    def put(name, values):
        values = [float(v) for v in values if v > 0 and np.isfinite(v)]
        if values:
            rates[f"{name} (slowest)"] = min(values)
            rates[f"{name} (fastest)"] = max(values)

    for which, poly in (("zeros", plant.rational_num), ("poles", plant.rational_den)):
        if poly.size > 1:
            put(f"plant {which}", np.abs(np.roots(poly)))
    if plant.dead_time > 0:
        from synth.problem.delay import pade

        # the Pade poles of exp(-sT) are those of exp(-s) divided by T (no powers of T formed)
        unit = np.abs(np.roots(pade(1.0, plant.pade_order)[1]))
        put("plant.dead_time", unit / plant.dead_time)
    for metric, rate in (("settling_time", lambda ts: math.log(100.0 / req.settling_band) / ts),
                         # 10-90 % rise time of a first-order lag is ln(9) times its time constant
                         ("rise_time", lambda tr: math.log(9.0) / tr)):
        limit = req.limit(metric)
        if limit is not None:
            put(f"requirements.{requirement_for(metric).key}", [rate(limit)])
    return rates


def _step_test_plant(t: dict, src: str, order: int, label: str, read_data) -> Plant:
    """The ``[plant.step_test]`` form: the nominal model fitted to recorded data."""
    from synth.problem.fit import step_test_fit_from_table

    if "dead_time" in t:
        raise InputError("comes from the fit when the plant is a [plant.step_test]; remove it",
                         src, "plant.dead_time")
    fit = step_test_fit_from_table(t["step_test"], src, read_data)
    if "ranges_from_fit" in t["step_test"]:
        # HOOK(parametric plants): when [plant.parameters]/[plant.ranges] land, build the
        # parametric plant from fit.plant_table(n_sigma=t["step_test"]["ranges_from_fit"])
        # here instead of refusing.
        raise InputError("plant ranges need parametric plant support, which this synth does "
                         "not have yet; remove the key to design for the fitted nominal model",
                         src, "plant.step_test.ranges_from_fit")
    return fit.plant(pade_order=order, label=label or None)


def parse_problem(doc: dict, source: str = "<string>", *, read_data=None) -> Problem:
    """Validate a parsed TOML document and build the :class:`Problem`.

    ``read_data(path) -> bytes``, when given, supplies the content of a
    ``[plant.step_test]`` data file (batch runs ship it to their workers);
    by default the file is read from disk, relative to ``source``.

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
    plant = _parse_plant(_table(doc, "plant", src), src, read_data)

    rt = _table(doc, "requirements", src)
    _unknown(rt, set(REQUIREMENTS), src, "requirements.")
    req = Requirements(**{k: _check_value(REQUIREMENTS[k].value, v, src, f"requirements.{k}")
                          for k, v in rt.items()})

    st = _table(doc, "search", src)
    _unknown(st, set(_SEARCH_SPEC), src, "search.")
    search = SearchSettings(**{k: _SEARCH_SPEC[k](v, src, f"search.{k}") for k, v in st.items()})
    check_time_scales(_rates(plant, req), src)
    return Problem(plant=plant, requirements=req, search=search, source=src)


def problem_from_text(text: str, source: str = "<string>", *, read_data=None) -> Problem:
    """Parse TOML text into a :class:`Problem` (``read_data`` as in :func:`parse_problem`).

    Raises
    ------
    InputError
        When the text is not TOML, nests deeper than the limits, or is not a
        valid requirements document.
    """
    try:
        doc = tomllib.loads(text, parse_float=parse_toml_float)
    except RecursionError:
        # tomllib parses nested arrays recursively; depth far beyond any schema
        raise InputError(f"not valid TOML for synth: arrays or tables nested too deeply (at "
                         f"most {MAX_NESTING} levels)", source) from None
    except tomllib.TOMLDecodeError as err:
        raise InputError(f"not valid TOML: {err}", source) from None
    except ValueError:
        # int() refuses integers of more than sys.get_int_max_str_digits() digits
        raise InputError(f"an integer has more than {sys.get_int_max_str_digits()} digits "
                         f"(synth accepts magnitudes up to {MAX_MAGNITUDE:g})", source) from None
    check_nesting(doc, source)
    return parse_problem(doc, source, read_data=read_data)


def load_problem(path) -> Problem:
    """Read and validate a requirements file.

    Raises
    ------
    InputError
        When the file cannot be read, is not a regular file, is larger than
        :data:`synth.problem.limits.MAX_FILE_BYTES`, is not UTF-8 TOML or is
        invalid.
    """
    return problem_from_text(read_input_text(path), str(path))
