"""The requirements file: TOML schema, validation and the s-plane region.

A requirements file (format 1, see ``docs/requirements-file.md``) has the
tables ``[plant]``, ``[requirements]``, ``[search]`` and the optional
``[sampling]`` (:mod:`synth.problem.sampling`) and ``[actuator]``
(:mod:`synth.problem.actuator`).  Everything is
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
from synth.problem.actuator import Actuator, parse_actuator
from synth.problem.catalogue import REQUIREMENTS, RangeSpec, Requirement, requirement_for
from synth.problem.limits import (
    MAX_MAGNITUDE,
    MAX_NESTING,
    MAX_ORDER,
    MAX_PARAMETERS,
    MAX_TEXT,
    MAX_VARIANTS,
    check_magnitude,
    check_nesting,
    check_time_scales,
    describe_number,
    parse_toml_float,
)
from synth.problem.models import DEAD_TIME, ModelSet, point_text
from synth.problem.plant import Plant
from synth.problem.region import Region, damping_from_overshoot, decay_rate_from_settling
from synth.problem.sampling import Sampling, check_delay_samples, parse_sampling
from synth.problem.source import read_input_text


def __getattr__(name: str):
    # STRUCTURES is read from the family registry, the one place that knows the
    # structure names; looked up lazily so that importing this module never
    # imports the families (which import the plant from this package)
    if name == "STRUCTURES":
        from synth.families import structure_names

        return structure_names()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

_TOP_KEYS = {"format", "plant", "requirements", "search", "sampling", "actuator"}


_PLANT_KEYS = {"label", "numerator", "denominator", "zeros", "poles", "gain", "expression",
               "dead_time", "dead_time_order", "step_test", "parameters", "ranges", "variants"}

_VARIANT_KEYS = {"label", "numerator", "denominator", "zeros", "poles", "gain", "expression",
                 "dead_time", "dead_time_order"}


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
    """Everything a command needs: plant, requirements, search settings, source file.

    ``sampling`` is the ``[sampling]`` table (``None``: a continuous-time controller).
    ``actuator`` is the ``[actuator]`` table (:class:`synth.problem.actuator.Actuator`),
    ``None`` when the file has none: then the loop is judged linear.
    ``plant`` is the nominal plant; ``models`` (``None`` for a single plant)
    adds parameter ranges and variants (:class:`synth.problem.models.ModelSet`),
    which every requirement must also hold for.  :attr:`model_set` always
    gives a set (the nominal plant alone when there is nothing else).
    """

    plant: Plant
    requirements: Requirements = field(default_factory=Requirements)
    search: SearchSettings = field(default_factory=SearchSettings)
    source: str = "<string>"
    sampling: Sampling | None = None
    actuator: Actuator | None = None
    models: ModelSet | None = None

    @property
    def region(self) -> Region:
        return self.requirements.region()

    @property
    def model_set(self) -> ModelSet:
        """The plant models (:class:`ModelSet`; the nominal plant alone without ranges or variants)."""
        if self.models is not None and self.models.nominal == self.plant:
            return self.models
        return ModelSet(nominal=self.plant)


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


def _label(v, src, key) -> str:
    if not isinstance(v, str):
        raise InputError("must be text", src, key)
    if len(v) > MAX_TEXT:
        raise InputError(f"is {len(v)} characters long; at most {MAX_TEXT}", src, key)
    if not v.isprintable():
        raise InputError("must be one line of printable text (no control characters)", src, key)
    return v


def _forms(t: dict, src: str, prefix: str, step_test: bool) -> str:
    """The one plant form a table gives (``InputError`` for none or several)."""
    forms = []
    if "numerator" in t or "denominator" in t:
        forms.append("numerator/denominator")
    if "zeros" in t or "poles" in t or "gain" in t:
        forms.append("zeros/poles/gain")
    if "expression" in t:
        forms.append("expression")
    if step_test and "step_test" in t:
        forms.append("step_test")
    if not forms:
        raise InputError("no plant given: set numerator and denominator, or zeros/poles/gain, "
                         "or expression" + (", or [plant.step_test]" if step_test else ""),
                         src, prefix)
    if len(forms) > 1:
        raise InputError(f"give exactly one plant form, found {' and '.join(forms)}", src, prefix)
    return forms[0]


def _rational_plant(t: dict, form: str, src: str, prefix: str, kw: dict,
                    parameters: dict[str, float]) -> Plant:
    """The plant of one table in the coefficient, root or expression form.

    Errors of the plant constructors name ``plant.KEY``; they are moved under
    ``prefix`` (a variant's ``plant.variants[2]``).
    """
    try:
        if form == "numerator/denominator":
            for k in ("numerator", "denominator"):
                if k not in t:
                    raise InputError("missing; the coefficient form needs both numerator and "
                                     "denominator", src, f"{prefix}.{k}")
            # leading zeros count: a list longer than any plant the engine takes is refused
            # before a single entry is converted
            num = _numlist(t["numerator"], src, f"{prefix}.numerator", max_len=MAX_ORDER + 1)
            den = _numlist(t["denominator"], src, f"{prefix}.denominator",
                           max_len=MAX_ORDER + 1)
            return Plant.from_coefficients(num, den, **kw)
        if form == "zeros/poles/gain":
            if "poles" not in t:
                raise InputError("missing; the zeros/poles/gain form needs poles (use [] for none)",
                                 src, f"{prefix}.poles")
            gain = _num(t.get("gain", 1.0), src, f"{prefix}.gain")
            return Plant.from_roots(t.get("zeros", []), t["poles"], gain, **kw)
        expr = t["expression"]
        if not isinstance(expr, str) or not expr.strip():
            raise InputError("must be a non-empty text expression in s", src,
                             f"{prefix}.expression")
        from synth.problem.expression import parse_rational

        try:
            num, den = parse_rational(expr, parameters)
        except InputError as err:
            raise InputError(err.message, key="plant.expression") from None
        return Plant.from_coefficients(num, den, **kw)
    except InputError as err:
        if err.source is None:
            key = err.key or "plant"
            if prefix != "plant" and key.startswith("plant"):
                key = prefix + key[len("plant"):]
            raise InputError(err.message, src, key) from None
        raise


def _parse_plant(t: dict, src: str, read_data=None) -> tuple[Plant, ModelSet | None]:
    """The nominal plant of ``[plant]`` and, when the table describes more, its model set."""
    _unknown(t, _PLANT_KEYS, src, "plant.")
    form = _forms(t, src, "plant", step_test=True)
    label = _label(t.get("label", ""), src, "plant.label")
    dead = _num(t.get("dead_time", 0.0), src, "plant.dead_time", lo=0)
    order = _num(t.get("dead_time_order", 3), src, "plant.dead_time_order", lo=1, hi=10,
                 integer=True)
    kw = {"dead_time": dead, "pade_order": order, "label": label}
    if form == "step_test":
        for key in ("parameters", "ranges"):
            if key in t:
                raise InputError("comes from the fit when the plant is a [plant.step_test] "
                                 "(ask for ranges with plant.step_test.ranges_from_fit); remove "
                                 "it", src, f"plant.{key}")
        plant, fitted = _step_test_plant(t, src, order, label, read_data)
        if fitted is None:
            return plant, _model_set(plant, None, {}, {}, t.get("variants"), src, order)
        params = dict(fitted["parameters"])
        # a parameter the data fix exactly (zero standard error) has no range; a dead-time
        # range keeps a positive low end (a tenth of the fitted value, like the time
        # constants), and none at all when the fit finds no delay
        ranges = {}
        for k, (lo, hi) in fitted["ranges"].items():
            if k == DEAD_TIME:
                if plant.dead_time <= 0:
                    continue
                lo = max(lo, 0.1 * plant.dead_time)
            if lo < hi:
                ranges[k] = (lo, hi)
        return plant, _model_set(plant, fitted["expression"], params, ranges,
                                 t.get("variants"), src, order,
                                 range_key="plant.step_test.ranges_from_fit")
    params = _parameters(t, form, src)
    plant = _rational_plant(t, form, src, "plant", kw, params)
    expression = t["expression"] if form == "expression" else None
    if expression is not None and params:
        from synth.problem.expression import expression_names

        used = set(expression_names(expression))
        for name in params:
            if name not in used:
                raise InputError("is not used in plant.expression; remove it or use it",
                                 src, f"plant.parameters.{name}")
    ranges = _ranges(t.get("ranges"), params, dead, src)
    return plant, _model_set(plant, expression if params else None, params, ranges,
                             t.get("variants"), src, order)


def _parameters(t: dict, form: str, src: str) -> dict[str, float]:
    """``[plant.parameters]``: nominal values of the names the expression uses."""
    from synth.problem.expression import is_parameter_name

    if "parameters" not in t:
        return {}
    table = t["parameters"]
    if not isinstance(table, dict):
        raise InputError("must be a table of name = number", src, "plant.parameters")
    if form != "expression":
        raise InputError("parameters are names used in plant.expression; this plant is given "
                         f"in the {form} form", src, "plant.parameters")
    if not table:
        raise InputError("is empty; give name = nominal value for each name the expression "
                         "uses, or remove the table", src, "plant.parameters")
    if len(table) > MAX_PARAMETERS:
        raise InputError(f"has {len(table)} parameters; synth accepts at most {MAX_PARAMETERS}",
                         src, "plant.parameters")
    out = {}
    for name, v in table.items():
        shown = name if len(name) <= 40 else name[:37] + "..."
        if name == "s":
            raise InputError("'s' is the Laplace variable and cannot name a parameter", src,
                             "plant.parameters.s")
        if not is_parameter_name(name):
            raise InputError(f"{shown!r} is not a name: use letters, digits and '_', starting "
                             "with a letter", src, f"plant.parameters.{shown}")
        out[name] = _num(v, src, f"plant.parameters.{name}")
    return out


def _ranges(table, params: dict[str, float], dead: float, src: str
            ) -> dict[str, tuple[float, float]]:
    """``[plant.ranges]``: a closed interval per parameter (or dead_time) around its nominal."""
    if table is None:
        return {}
    if not isinstance(table, dict):
        raise InputError("must be a table of name = [low, high]", src, "plant.ranges")
    out = {}
    for name, v in table.items():
        shown = name if len(name) <= 40 else name[:37] + "..."
        key = f"plant.ranges.{shown}"
        if name != DEAD_TIME and name not in params:
            known = ", ".join([*params, DEAD_TIME])
            raise InputError(f"is not a parameter: ranges apply to {known} (a parameter needs "
                             "its nominal value in [plant.parameters])", src, key)
        lo, hi = _range(v, src, key)
        nominal = dead if name == DEAD_TIME else params[name]
        if name == DEAD_TIME and lo < 0:
            raise InputError(f"a dead time cannot be negative, got low {lo:g}", src, key)
        if name == DEAD_TIME and lo == 0:
            # the Pade form of a vanishing delay drops the plant's order: no single
            # characteristic polynomial describes the whole range
            raise InputError("a dead-time range must start above 0 (at 0 the delay's Pade form "
                             "vanishes and the plant changes order); use a small positive low "
                             "end, or a variant without dead time", src, key)
        if not lo <= nominal <= hi:
            what = "plant.dead_time" if name == DEAD_TIME else f"plant.parameters.{name}"
            raise InputError(f"[{lo:g}, {hi:g}] does not contain the nominal value {nominal:g} "
                             f"({what})", src, key)
        out[name] = (lo, hi)
    return out


def _variants(v, src: str, order: int, params: dict[str, float]) -> list:
    """``[[plant.variants]]``: further fixed models, each with a label and one plant form."""
    from synth.problem.models import Variant

    if v is None:
        return []
    if not isinstance(v, list) or not all(isinstance(x, dict) for x in v):
        raise InputError("must be a list of tables ([[plant.variants]] blocks)", src,
                         "plant.variants")
    if len(v) > MAX_VARIANTS:
        raise InputError(f"has {len(v)} variants; synth accepts at most {MAX_VARIANTS}", src,
                         "plant.variants")
    out: list = []
    for i, t in enumerate(v, start=1):
        prefix = f"plant.variants[{i}]"
        _unknown(t, _VARIANT_KEYS, src, f"{prefix}.")
        if "label" not in t:
            raise InputError("missing: each variant needs a label that names it in the results",
                             src, f"{prefix}.label")
        label = _label(t["label"], src, f"{prefix}.label").strip()
        if not label:
            raise InputError("must not be empty", src, f"{prefix}.label")
        if label == "nominal" or any(x.label == label for x in out):
            raise InputError(f"{label!r} is already the name of another model", src,
                             f"{prefix}.label")
        form = _forms(t, src, prefix, step_test=False)
        dead = _num(t.get("dead_time", 0.0), src, f"{prefix}.dead_time", lo=0)
        pade = _num(t.get("dead_time_order", order), src, f"{prefix}.dead_time_order", lo=1,
                    hi=10, integer=True)
        kw = {"dead_time": dead, "pade_order": pade, "label": label}
        out.append(Variant(label, _rational_plant(t, form, src, prefix, kw, params)))
    return out


def _model_set(plant: Plant, expression, params, ranges, variants, src: str, order: int,
               range_key: str = "plant.ranges") -> ModelSet | None:
    """The :class:`ModelSet`, with every model checked to describe the same input and output."""
    import numpy as np

    from synth.problem.models import ModelSet, ParameterRange, io_signature, io_text

    found = _variants(variants, src, order, params)
    if not found and not ranges:
        return None
    nominal_values = {**params, DEAD_TIME: plant.dead_time}
    models = ModelSet(nominal=plant, expression=expression, parameters=tuple(params.items()),
                      ranges=tuple(ParameterRange(k, lo, hi, nominal_values[k])
                                   for k, (lo, hi) in ranges.items()),
                      variants=tuple(found))
    sig = io_signature(plant)
    for i, var in enumerate(models.variants, start=1):
        other = io_signature(var.plant)
        if other != sig:
            raise InputError(f"has {io_text(other)} where the nominal plant has {io_text(sig)}: a "
                             "variant must describe the same input and output", src,
                             f"plant.variants[{i}]")
    if models.ranges:
        sizes = (plant.rational_num.size, plant.rational_den.size)
        lead = np.sign(plant.rational_num[0] / plant.rational_den[0])
        try:
            corners = models.corner_plants
        except InputError as err:
            raise InputError(err.message, src, range_key) from None
        for point, model in corners:
            other = io_signature(model)
            if other != sig:
                raise InputError(f"at the corner {point_text(point)} the plant has "
                                 f"{io_text(other)} where the nominal plant has {io_text(sig)}; "
                                 "keep every range on one side of a sign change", src, range_key)
            if ((model.rational_num.size, model.rational_den.size) != sizes
                    or np.sign(model.rational_num[0] / model.rational_den[0]) != lead):
                raise InputError(f"at the corner {point_text(point)} the plant's order or "
                                 "high-frequency sign differs from the nominal plant's: a range "
                                 "must not take a coefficient through zero", src, range_key)
    return models


def _rates(plant: Plant, req: Requirements, models: ModelSet | None = None,
           sampling: Sampling | None = None) -> dict[str, float]:
    """The problem's characteristic rates (1/s), named by the key that sets each.

    The plant's non-zero pole and zero magnitudes, the fastest Pade pole of
    its dead time (of every variant and every corner of the ranges too), the
    decay rate the settling limit asks for and the bandwidth the rise-time
    limit implies, and the sample rate ``1 / period``; :func:`check_time_scales`
    bounds their spread.
    """
    import numpy as np

    rates: dict[str, float] = {}

    def put(name, values):
        values = [float(v) for v in values if v > 0 and np.isfinite(v)]
        if values:
            rates[f"{name} (slowest)"] = min(values + [rates.get(f"{name} (slowest)", np.inf)])
            rates[f"{name} (fastest)"] = max(values + [rates.get(f"{name} (fastest)", 0.0)])

    plants = [("plant", plant)]
    if models is not None:
        plants += [(f"plant.variants[{i}]", v.plant)
                   for i, v in enumerate(models.variants, start=1)]
        if models.ranges:
            plants += [("plant.ranges", corner) for _, corner in models.corner_plants]
    for key, model in plants:
        for which, poly in (("zeros", model.rational_num), ("poles", model.rational_den)):
            if poly.size > 1:
                put(f"{key} {which}", np.abs(np.roots(poly)))
        if model.dead_time > 0:
            from synth.problem.delay import pade

            # the Pade poles of exp(-sT) are those of exp(-s) divided by T (no powers of T)
            unit = np.abs(np.roots(pade(1.0, model.pade_order)[1]))
            put(f"{key}.dead_time", unit / model.dead_time)
    for metric, rate in (("settling_time", lambda ts: math.log(100.0 / req.settling_band) / ts),
                         # 10-90 % rise time of a first-order lag is ln(9) times its time constant
                         ("rise_time", lambda tr: math.log(9.0) / tr)):
        limit = req.limit(metric)
        if limit is not None:
            put(f"requirements.{requirement_for(metric).key}", [rate(limit)])
    if sampling is not None:
        # z = exp(-a T) of a plant pole a: beyond the span every such pole rounds to z = 1
        rates["sampling.period"] = 1.0 / sampling.period
    return rates


def _step_test_plant(t: dict, src: str, order: int, label: str, read_data):
    """The ``[plant.step_test]`` form: the nominal model fitted to recorded data.

    Returns the plant and, with ``ranges_from_fit``, the parametric table of
    :meth:`synth.problem.fit.FitResult.plant_table` (expression with named
    parameters, their nominal values, the ranges), else ``None``.
    """
    from synth.problem.fit import step_test_fit_from_table

    if "dead_time" in t:
        raise InputError("comes from the fit when the plant is a [plant.step_test]; remove it",
                         src, "plant.dead_time")
    fit = step_test_fit_from_table(t["step_test"], src, read_data)
    plant = fit.plant(pade_order=order, label=label or None)
    if "ranges_from_fit" not in t["step_test"]:
        return plant, None
    n_sigma = t["step_test"]["ranges_from_fit"]
    try:
        table = fit.plant_table(n_sigma=n_sigma)
    except InputError as err:
        raise InputError(err.message, src, "plant.step_test.ranges_from_fit") from None
    # the expression at the fitted values is the fitted plant itself (same coefficients
    # up to rounding): build the nominal from it so the box is centred on one model
    from synth.problem.models import ModelSet

    nominal = ModelSet(nominal=plant, expression=table["expression"],
                       parameters=tuple(table["parameters"].items())).plant_at({})
    return nominal, table


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
    plant, models = _parse_plant(_table(doc, "plant", src), src, read_data)

    rt = _table(doc, "requirements", src)
    _unknown(rt, set(REQUIREMENTS), src, "requirements.")
    req = Requirements(**{k: _check_value(REQUIREMENTS[k].value, v, src, f"requirements.{k}")
                          for k, v in rt.items()})

    st = _table(doc, "search", src)
    _unknown(st, set(_SEARCH_SPEC), src, "search.")
    search = SearchSettings(**{k: _SEARCH_SPEC[k](v, src, f"search.{k}") for k, v in st.items()})
    sampling = parse_sampling(doc["sampling"], src, _num) if "sampling" in doc else None
    actuator = parse_actuator(doc["actuator"], src) if "actuator" in doc else None
    check_time_scales(_rates(plant, req, models, sampling), src)
    if sampling is not None:
        check_delay_samples(sampling, plant.dead_time, src)
    return Problem(plant=plant, requirements=req, search=search, source=src, sampling=sampling,
                   actuator=actuator, models=models)


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
