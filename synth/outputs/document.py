"""The design document model: ``synth.design/1`` read once into typed, frozen records.

Every output that starts from a design JSON (compare, the compare overlay,
the implementation forms, ``trace --design``, the report, and the coming
export, batch and frontier commands) reads it with :func:`read_design` (a
parsed dict) or :func:`load_design` (a file) and works on the records, never
on the raw dict.  A malformed document gives one :class:`synth.errors.InputError`
naming the file and the field (``designs[2].compensator.numerator``).

What is required: ``schema`` = ``"synth.design/1"``, a ``designs`` list whose
entries have an integer ``rank``, a text ``structure`` and a ``compensator``
with ``numerator`` and ``denominator`` or ``zeros``, ``poles`` and ``gain``
(the other form is derived).  Everything else is optional and read when
present: the plant (:meth:`DesignDocument.need_plant` asks for it), the
requirements, region, search settings, and the second round's per-design
``worst_case``, ``robustness``, ``reference_filter`` / ``setpoint_weights``,
``anti_windup`` and ``discrete`` objects and the document's ``objective``,
``actuator`` and ``models`` (typed by :meth:`DesignDocument.controller`,
:meth:`DesignDocument.discrete_form`, :class:`ActuatorRecord`;
:meth:`DesignDocument.model_plant` rebuilds any model's plant).  Fields the model
does not know are kept in ``raw`` untouched, so writers that add to a
document lose nothing.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType
from typing import Any

import numpy as np

from synth.errors import InputError

__all__ = [
    "SCHEMA",
    "ActuatorRecord",
    "CompensatorRecord",
    "DiscreteRecord",
    "DesignDocument",
    "DesignRecord",
    "PlantRecord",
    "load_design",
    "read_design",
]

SCHEMA = "synth.design/1"


def _frozen(value: Any) -> Any:
    """A read-only copy of nested JSON values (dicts become mapping proxies, lists tuples)."""
    if isinstance(value, dict):
        return MappingProxyType({k: _frozen(v) for k, v in value.items()})
    if isinstance(value, list):
        return tuple(_frozen(v) for v in value)
    return value


def thaw(value: Any) -> Any:
    """Plain JSON values from :func:`_frozen` ones (for writing a record back out)."""
    if isinstance(value, Mapping):
        return {k: thaw(v) for k, v in value.items()}
    if isinstance(value, tuple):
        return [thaw(v) for v in value]
    return value


# ----------------------------------------------------------------------------------------------
# records
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class PlantRecord:
    """The document's plant.

    Attributes
    ----------
    numerator, denominator : tuple of float
        Engine form (a dead time by its Pade form), as the contract writes it.
    label : str
    dead_time : float
        Seconds (0 without one).
    dead_time_order : int
        Order of the Pade form in the engine form.
    delay_free : (tuple, tuple) or None
        Numerator and denominator of the rational part when the document
        carries them (it does whenever there is a dead time).
    """

    numerator: tuple[float, ...]
    denominator: tuple[float, ...]
    label: str = ""
    dead_time: float = 0.0
    dead_time_order: int = 3
    delay_free: tuple[tuple[float, ...], tuple[float, ...]] | None = None

    def plant(self):
        """The :class:`synth.problem.plant.Plant`: exact dead time when the document has its
        delay-free part, else the engine form as it stands."""
        from synth.problem.plant import Plant

        if self.dead_time > 0 and self.delay_free is not None:
            return Plant.from_coefficients(self.delay_free[0], self.delay_free[1],
                                           dead_time=self.dead_time,
                                           pade_order=self.dead_time_order, label=self.label)
        return Plant.from_coefficients(self.numerator, self.denominator, label=self.label)


@dataclass(frozen=True)
class CompensatorRecord:
    """``C(s) = gain * monic numerator / monic denominator``.

    Attributes
    ----------
    numerator, denominator : tuple of float
        Descending powers of s (numerator = gain times the monic numerator).
    zeros, poles : tuple of complex
    gain : float
        The root-locus gain ``K``.
    """

    numerator: tuple[float, ...]
    denominator: tuple[float, ...]
    zeros: tuple[complex, ...]
    poles: tuple[complex, ...]
    gain: float

    @property
    def num(self) -> np.ndarray:
        return np.asarray(self.numerator, dtype=float)

    @property
    def den(self) -> np.ndarray:
        return np.asarray(self.denominator, dtype=float)


@dataclass(frozen=True)
class DiscreteRecord:
    """A design's discrete form: the contract's ``discrete`` object (or the older
    ``implementation.discrete`` of ``design --sample-time``).

    Attributes
    ----------
    period, compute_delay : float
        Seconds.
    numerator, denominator : tuple of float
        ``C(z)``, descending powers of z.
    method : str or None
        ``"tustin-prewarp"`` or ``"tustin"`` (how ``C(s)`` was mapped);
        ``None`` when the document does not say (the form is then taken as
        given in z).
    warp_frequency : float or None
        rad/s, for ``"tustin-prewarp"``.
    key : str
        Where in the document it is (for messages).
    """

    period: float
    compute_delay: float
    numerator: tuple[float, ...]
    denominator: tuple[float, ...]
    method: str | None
    warp_frequency: float | None
    key: str


@dataclass(frozen=True)
class ActuatorRecord:
    """The document's ``actuator`` object (the ``[actuator]`` table the run used).

    Attributes
    ----------
    limits : (float, float) or None
        Controller output range.
    max_rate : float or None
        Units per second.
    reference_step : float
        Size of the reference step of the saturated simulations (default 1).
    operating_point : float
        Actuator output at which the plant model was linearised; the loop's
        control signal is the deviation from it (default 0).
    load_step : float
        Size of the load step of the saturated simulations (default 1).
    """

    limits: tuple[float, float] | None
    max_rate: float | None
    reference_step: float = 1.0
    operating_point: float = 0.0
    load_step: float = 1.0

    @property
    def deviation_limits(self) -> tuple[float, float] | None:
        """The limits on the loop's control signal: the range less the operating point."""
        if self.limits is None:
            return None
        return (self.limits[0] - self.operating_point, self.limits[1] - self.operating_point)


@dataclass(frozen=True)
class DesignRecord:
    """One entry of ``designs``.

    Attributes
    ----------
    index : int
        Position in the document's list (for error messages).
    rank, structure, origin, feasible
        As in the contract (``origin`` ``""`` when absent).
    compensator : CompensatorRecord
    closed_loop_poles : tuple of complex
    metrics : mapping
        Metric key -> value (``None`` = unbounded or undefined; the stable
        plant-gain range a pair).
    violations, notes : tuple of str
    description : str
        The document's description, or one built from the factors.
    score : float or None
    params, provenance, implementation : mapping or None
    worst_case, reference_filter, setpoint_weights, anti_windup, discrete : mapping or None
        Second-round fields, when the document has them.
    raw : mapping
        The entry as read (read-only).
    robustness : mapping or None
        With several plant models: how they were checked (models, vertices,
        samples, local searches, the robust stability test).
    """

    index: int
    rank: int
    structure: str
    origin: str
    feasible: bool
    compensator: CompensatorRecord
    closed_loop_poles: tuple[complex, ...]
    metrics: Mapping[str, Any]
    violations: tuple[str, ...]
    notes: tuple[str, ...]
    description: str
    score: float | None
    params: Mapping[str, Any] | None
    provenance: Mapping[str, Any] | None
    implementation: Mapping[str, Any] | None
    worst_case: Mapping[str, Any] | None
    reference_filter: Mapping[str, Any] | None
    setpoint_weights: Mapping[str, Any] | None
    anti_windup: Mapping[str, Any] | None
    discrete: Mapping[str, Any] | None
    raw: Mapping[str, Any]
    robustness: Mapping[str, Any] | None = None

    def metric(self, key: str) -> Any:
        """A metric's value (``None`` when absent or unbounded).

        The compensator gain (metric ``"gain"``, the one the allowed gain
        range limits) comes from the compensator when ``metrics`` does not list it.
        """
        if key == "gain" and key not in self.metrics:
            return self.compensator.gain
        return self.metrics.get(key)

    def has_metric(self, key: str) -> bool:
        """Whether the document gives this metric (possibly as ``null``)."""
        return key in self.metrics or key == "gain"

    def shaping(self, source: str = "<design>"):
        """The design's reference shaping as a :class:`synth.verify.controller.ReferenceShaping`.

        From the contract's ``reference_filter`` (a prefilter ``{numerator,
        denominator}`` or ``{setpoint_weights: {b, c}}``) or a design-level
        ``setpoint_weights``; ``None`` without one.

        Raises
        ------
        InputError
            A malformed object, naming ``source`` and the field.
        """
        from synth.verify.controller import ReferenceShaping

        key = f"designs[{self.index}]"
        rf, sw = self.reference_filter, self.setpoint_weights
        method = rf.get("method") if rf is not None and isinstance(rf.get("method"), str) else ""
        if rf is not None and "setpoint_weights" in rf:
            if sw is not None:
                raise InputError("set-point weights are given twice (also in reference_filter)",
                                 source, f"{key}.setpoint_weights")
            sw = rf["setpoint_weights"]
            swkey = f"{key}.reference_filter.setpoint_weights"
            rf = None
        else:
            swkey = f"{key}.setpoint_weights"
        if rf is not None:
            if sw is not None:
                raise InputError("give a prefilter or set-point weights, not both", source,
                                 f"{key}.reference_filter")
            num = _coefficients(thaw(rf.get("numerator")), source,
                                f"{key}.reference_filter.numerator", zero_ok=False)
            den = _coefficients(thaw(rf.get("denominator")), source,
                                f"{key}.reference_filter.denominator", zero_ok=False)
            return ReferenceShaping(numerator=num, denominator=den, method=method or "prefilter")
        if sw is not None:
            return ReferenceShaping(setpoint_weights=_weights(sw, self.compensator, source, swkey),
                                    method=method or "set-point weights")
        return None


@dataclass(frozen=True)
class DesignDocument:
    """A ``synth.design/1`` document.

    Attributes
    ----------
    source : str
        The file (or the name given) the document came from.
    designs : tuple of DesignRecord
        In rank order.
    plant : PlantRecord or None
    requirements : mapping or None
        The ``requirements`` object (file keys and values) when present.
    region : mapping or None
        ``decay_rate``, ``damping``, ``description``.
    proportional, search : mapping or None
    objective : str or None
        Second round: what "best" meant.
    raw : mapping
        The document as read (read-only).
    actuator : ActuatorRecord or None
        The output limits and rate the run used (document-level ``actuator``).
    models : mapping or None
        Second round: the plant models besides the nominal one (``expression``,
        ``parameters``, ``ranges``, ``variants``); see :meth:`model_plant`.
    """

    source: str
    designs: tuple[DesignRecord, ...]
    plant: PlantRecord | None
    requirements: Mapping[str, Any] | None
    region: Mapping[str, Any] | None
    proportional: Mapping[str, Any] | None
    search: Mapping[str, Any] | None
    objective: str | None
    raw: Mapping[str, Any]
    actuator: ActuatorRecord | None = None
    models: Mapping[str, Any] | None = None

    def controller(self, design: DesignRecord):
        """The whole design as a :class:`synth.verify.controller.Controller`.

        The compensator with its reference shaping (``reference_filter``:
        a prefilter ``{numerator, denominator}`` or ``{"setpoint_weights":
        {b, c}}``; or a design-level ``setpoint_weights``) and its
        ``anti_windup`` (``{"scheme", "parameters"}``).

        Raises
        ------
        InputError
            A malformed shaping or anti-windup object, naming the field.
        """
        from synth.verify.controller import AntiWindup, Controller

        key = f"designs[{design.index}]"
        c = design.compensator
        shaping = design.shaping(self.source)
        aw = None
        if design.anti_windup is not None:
            awkey = f"{key}.anti_windup"
            scheme = design.anti_windup.get("scheme")
            from synth.verify.discrete import ANTI_WINDUP_SCHEMES

            if scheme not in ANTI_WINDUP_SCHEMES:
                raise InputError(f"scheme must be one of {', '.join(ANTI_WINDUP_SCHEMES)}, got "
                                 f"{scheme!r}", self.source, f"{awkey}.scheme")
            params = design.anti_windup.get("parameters") or {}
            if not isinstance(params, Mapping):
                raise InputError("must map names to positive numbers", self.source,
                                 f"{awkey}.parameters")
            for name, value in params.items():
                if not (_is_number(value) and math.isfinite(value) and value > 0):
                    raise InputError("must be a positive number", self.source,
                                     f"{awkey}.parameters.{name}")
            if scheme in ("back-calculation", "observer") and "tracking_time" not in params:
                raise InputError(f"{scheme} needs tracking_time (seconds)", self.source,
                                 f"{awkey}.parameters")
            aw = AntiWindup(scheme=scheme, parameters=MappingProxyType(
                {k: float(v) for k, v in params.items()}))
        return Controller(c.numerator, c.denominator, shaping, aw)

    def discrete_form(self, design: DesignRecord) -> DiscreteRecord | None:
        """The design's discrete form (``discrete``, else ``implementation.discrete``), or None.

        Raises
        ------
        InputError
            A malformed discrete object, naming the field.
        """
        key = f"designs[{design.index}]"
        if design.discrete is not None:
            return _discrete(design.discrete, self.source, f"{key}.discrete", "period")
        im = design.implementation
        if im is not None and im.get("discrete") is not None:
            dz = im["discrete"]
            if dz.get("numerator") is None:  # the form could not be made at that sample time
                return None
            return _discrete(dz, self.source, f"{key}.implementation.discrete", "sample_time")
        return None

    def design(self, rank: int) -> DesignRecord:
        """The design of rank ``rank`` (InputError naming the ranks present)."""
        for d in self.designs:
            if d.rank == rank:
                return d
        have = ", ".join(str(d.rank) for d in self.designs) or "none"
        raise InputError(f"has no design of rank {rank} (ranks present: {have})", self.source,
                         "designs")

    def need_plant(self) -> PlantRecord:
        """The plant, or an InputError when the document has none."""
        if self.plant is None:
            raise InputError("needs a 'plant' object", self.source, "plant")
        return self.plant

    def to_json(self) -> dict:
        """The document as plain JSON values (as read)."""
        return thaw(self.raw)

    def model_plant(self, model: Any):
        """The :class:`synth.problem.plant.Plant` of a model named as ``worst_case`` names it.

        ``"nominal"`` is the document's plant, another text a variant's label,
        an object ``{name: value}`` a point of the ranges (the expression at
        those parameter values, the dead time replaced when it is given).
        InputError naming the document when the model is not in it.
        """
        from synth.problem.plant import Plant

        nominal = self.need_plant().plant()
        models = self.models or {}
        if model == "nominal":
            return nominal
        if isinstance(model, str):
            for v in models.get("variants", ()):
                if isinstance(v, Mapping) and v.get("label") == model:
                    record = _plant(thaw(v.get("plant")), self.source)
                    if record is None:
                        raise InputError(f"variant {model!r} has no plant", self.source,
                                         "models.variants")
                    return record.plant()
            raise InputError(f"names no model {model!r}", self.source, "models.variants")
        if not isinstance(model, Mapping):
            raise InputError("a model is a label or an object of parameter values", self.source,
                             "models")
        values = dict(models.get("parameters") or {})
        dead = nominal.dead_time
        for name, v in model.items():
            if not _is_number(v) or not math.isfinite(v):
                raise InputError(f"{name} must be a finite number", self.source, "models")
            if name == "dead_time":
                dead = float(v)
            elif name in values:
                values[name] = float(v)
            else:
                raise InputError(f"names no parameter {name!r}", self.source, "models.parameters")
        expression = models.get("expression")
        if expression is None:
            return Plant(nominal.numerator, nominal.denominator, dead, nominal.pade_order,
                         nominal.label)
        from synth.problem.expression import parse_rational

        try:
            num, den = parse_rational(expression, values)
            return Plant.from_coefficients(num, den, dead_time=dead,
                                           pade_order=nominal.pade_order, label=nominal.label)
        except InputError as err:
            raise InputError(err.message, self.source, "models.expression") from None


# ----------------------------------------------------------------------------------------------
# reading
# ----------------------------------------------------------------------------------------------


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _coefficients(value: Any, source: str, key: str, zero_ok: bool) -> tuple[float, ...]:
    if not isinstance(value, list) or not value or not all(_is_number(x) for x in value):
        raise InputError("must be a non-empty list of numbers", source, key)
    if not all(math.isfinite(x) for x in value):
        raise InputError("must be finite", source, key)
    p = np.trim_zeros(np.asarray(value, dtype=float), "f")
    if p.size == 0:
        if not zero_ok:
            raise InputError("must not be all zero", source, key)
        p = np.zeros(1)
    return tuple(float(x) for x in p)


def _roots(value: Any, source: str, key: str) -> tuple[complex, ...]:
    if not isinstance(value, list):
        raise InputError("must be a list of [re, im] pairs", source, key)
    out = []
    for v in value:
        if (not isinstance(v, list) or len(v) != 2 or not all(_is_number(x) for x in v)
                or not all(math.isfinite(x) for x in v)):
            raise InputError("must be a list of finite [re, im] pairs", source, key)
        out.append(complex(v[0], v[1]))
    return tuple(out)


def _thawed(value: Any) -> Any:
    """A read-only value back as plain JSON (lists for tuples) for the coefficient reader."""
    return thaw(value)


def _mapping(value: Any, source: str, key: str) -> Mapping | None:
    if value is None:
        return None
    if not isinstance(value, dict):
        raise InputError("must be an object", source, key)
    return _frozen(value)


def _compensator(comp: Any, source: str, key: str) -> CompensatorRecord:
    if not isinstance(comp, dict):
        raise InputError("needs a 'compensator' object", source, key)
    has_poly = "numerator" in comp and "denominator" in comp
    has_roots = all(k in comp for k in ("zeros", "poles", "gain"))
    if not (has_poly or has_roots):
        raise InputError("needs zeros, poles and gain (or numerator and denominator)",
                         source, key)
    zeros = poles = None
    gain = None
    if has_roots:
        zeros = _roots(comp["zeros"], source, f"{key}.zeros")
        poles = _roots(comp["poles"], source, f"{key}.poles")
        g = comp["gain"]
        if not _is_number(g) or not math.isfinite(g):
            raise InputError("must be a finite number", source, f"{key}.gain")
        gain = float(g)
    if has_poly:
        num = _coefficients(comp["numerator"], source, f"{key}.numerator", zero_ok=True)
        den = _coefficients(comp["denominator"], source, f"{key}.denominator", zero_ok=False)
    else:
        num = tuple(float(x) for x in gain * np.real(np.poly(zeros))) if zeros else (gain,)
        den = tuple(float(x) for x in np.real(np.poly(poles))) if poles else (1.0,)
    if zeros is None:
        n, d = np.asarray(num), np.asarray(den)
        zeros = tuple(complex(r) for r in np.roots(n)) if n.size > 1 else ()
        poles = tuple(complex(r) for r in np.roots(d)) if d.size > 1 else ()
        gain = float(n[0] / d[0])
    return CompensatorRecord(numerator=num, denominator=den, zeros=zeros, poles=poles,
                             gain=gain)


def _describe(structure: str, c: CompensatorRecord) -> str:
    """``"lead: gain 2, zeros -2, poles -4"`` (one root of each conjugate pair)."""
    def text(r: complex) -> str:
        if abs(r.imag) < 1e-12 * max(1.0, abs(r)):
            return f"{r.real:.4g}"
        return f"{r.real:.4g}{r.imag:+.4g}j"

    def keep(rs):
        return [r for r in rs if r.imag >= -1e-12 * max(1.0, abs(r))]

    parts = [f"{structure}: gain {c.gain:.4g}"]
    if c.zeros:
        parts.append("zeros " + ", ".join(text(r) for r in keep(c.zeros)))
    if c.poles:
        parts.append("poles " + ", ".join(text(r) for r in keep(c.poles)))
    return ", ".join(parts)


def _number(value: Any, source: str, key: str, *, positive=False, nonneg=False) -> float:
    if not _is_number(value) or not math.isfinite(value):
        raise InputError("must be a finite number", source, key)
    if positive and value <= 0:
        raise InputError(f"must be > 0, got {value:g}", source, key)
    if nonneg and value < 0:
        raise InputError(f"must be >= 0, got {value:g}", source, key)
    return float(value)


def _weights(sw: Any, comp: CompensatorRecord, source: str, key: str) -> tuple[float, float]:
    """Set-point weights ``(b, c)``; ``c`` may be left out only without derivative action."""
    if not isinstance(sw, Mapping):
        raise InputError("must be an object {\"b\": ..., \"c\": ...}", source, key)
    if "b" not in sw:
        raise InputError("missing the proportional weight b", source, f"{key}.b")
    b = _number(sw["b"], source, f"{key}.b")
    if "c" in sw:
        return b, _number(sw["c"], source, f"{key}.c")
    from synth.outputs.forms import pid_parallel_from_tf

    par = pid_parallel_from_tf(comp.num, comp.den)
    if par is not None and par.kd != 0:
        raise InputError("missing the derivative weight c (the compensator has derivative "
                         "action)", source, f"{key}.c")
    return b, 0.0


def _discrete(dz: Mapping, source: str, key: str, period_key: str) -> DiscreteRecord:
    from synth.verify.discrete import METHODS

    if period_key not in dz:
        raise InputError(f"missing the sample time '{period_key}'", source, f"{key}.{period_key}")
    period = _number(dz[period_key], source, f"{key}.{period_key}", positive=True)
    tau = _number(dz.get("compute_delay", 0.0) or 0.0, source, f"{key}.compute_delay",
                  nonneg=True)
    if tau > period:
        raise InputError(f"must not exceed the period {period:g} s", source,
                         f"{key}.compute_delay")
    num = _coefficients(thaw(dz.get("numerator")), source, f"{key}.numerator", zero_ok=True)
    den = _coefficients(thaw(dz.get("denominator")), source, f"{key}.denominator",
                        zero_ok=False)
    method = dz.get("method")
    if method is not None and method not in METHODS:
        raise InputError(f"unknown method {method!r}; known: {', '.join(METHODS)}", source,
                         f"{key}.method")
    warp = dz.get("warp_frequency")
    if warp is not None:
        warp = _number(warp, source, f"{key}.warp_frequency", positive=True)
        if warp >= math.pi / period:
            raise InputError("must lie below the Nyquist frequency pi / period", source,
                             f"{key}.warp_frequency")
    if method == "tustin-prewarp" and warp is None:
        raise InputError("tustin-prewarp needs a warp_frequency", source, f"{key}.warp_frequency")
    if method == "direct":
        method = None
    return DiscreteRecord(period=period, compute_delay=tau, numerator=num, denominator=den,
                          method=method, warp_frequency=warp if method == "tustin-prewarp"
                          else None, key=key)


def _actuator(a: Any, source: str) -> ActuatorRecord | None:
    if a is None:
        return None
    if not isinstance(a, dict):
        raise InputError("must be an object", source, "actuator")
    limits = a.get("limits")
    if limits is not None:
        if (not isinstance(limits, list) or len(limits) != 2
                or not all(_is_number(x) and math.isfinite(x) for x in limits)
                or not limits[0] < limits[1]):
            raise InputError("must be [low, high] with finite low < high", source,
                             "actuator.limits")
        limits = (float(limits[0]), float(limits[1]))
    rate = a.get("max_rate")
    if rate is not None:
        rate = _number(rate, source, "actuator.max_rate", positive=True)
    step = a.get("reference_step", 1.0)
    step = 1.0 if step is None else _number(step, source, "actuator.reference_step")
    if step == 0:
        raise InputError("must not be 0", source, "actuator.reference_step")
    op = a.get("operating_point", 0.0)
    op = 0.0 if op is None else _number(op, source, "actuator.operating_point")
    load = a.get("load_step", 1.0)
    load = 1.0 if load is None else _number(load, source, "actuator.load_step")
    if load == 0:
        raise InputError("must not be 0", source, "actuator.load_step")
    return ActuatorRecord(limits=limits, max_rate=rate, reference_step=step,
                          operating_point=op, load_step=load)


def _text_list(value: Any, source: str, key: str) -> tuple[str, ...]:
    if value is None:
        return ()
    if not isinstance(value, list):
        raise InputError("must be a list of text", source, key)
    return tuple(str(v) for v in value)


def _design(i: int, d: Any, source: str) -> DesignRecord:
    key = f"designs[{i}]"
    if not isinstance(d, dict):
        raise InputError("must be an object", source, key)
    if not isinstance(d.get("structure"), str):
        raise InputError("needs a text 'structure'", source, f"{key}.structure")
    rank = d.get("rank")
    if isinstance(rank, bool) or not isinstance(rank, int):
        raise InputError("needs an integer 'rank'", source, f"{key}.rank")
    comp = _compensator(d.get("compensator"), source, f"{key}.compensator")
    metrics = _mapping(d.get("metrics"), source, f"{key}.metrics") or MappingProxyType({})
    cl = d.get("closed_loop_poles")
    poles = _roots(cl, source, f"{key}.closed_loop_poles") if cl is not None else ()
    desc = d.get("description")
    score = d.get("score")
    origin = d.get("origin")
    return DesignRecord(
        index=i, rank=rank, structure=d["structure"],
        origin=origin if isinstance(origin, str) else "",
        feasible=bool(d.get("feasible", False)), compensator=comp, closed_loop_poles=poles,
        metrics=metrics, violations=_text_list(d.get("violations"), source, f"{key}.violations"),
        notes=_text_list(d.get("notes"), source, f"{key}.notes"),
        description=desc if isinstance(desc, str) and desc else _describe(d["structure"], comp),
        score=float(score) if _is_number(score) else None,
        params=_mapping(d.get("params"), source, f"{key}.params"),
        provenance=_mapping(d.get("provenance"), source, f"{key}.provenance"),
        implementation=_mapping(d.get("implementation"), source, f"{key}.implementation"),
        worst_case=_mapping(d.get("worst_case"), source, f"{key}.worst_case"),
        reference_filter=_mapping(d.get("reference_filter"), source, f"{key}.reference_filter"),
        setpoint_weights=_mapping(d.get("setpoint_weights"), source, f"{key}.setpoint_weights"),
        anti_windup=_mapping(d.get("anti_windup"), source, f"{key}.anti_windup"),
        discrete=_mapping(d.get("discrete"), source, f"{key}.discrete"),
        raw=_frozen(d),
        robustness=_mapping(d.get("robustness"), source, f"{key}.robustness"))


def _plant(p: Any, source: str) -> PlantRecord | None:
    if p is None:
        return None
    if not isinstance(p, dict):
        raise InputError("must be an object", source, "plant")
    num = _coefficients(p.get("numerator"), source, "plant.numerator", zero_ok=False)
    den = _coefficients(p.get("denominator"), source, "plant.denominator", zero_ok=False)
    tau = p.get("dead_time", 0.0) or 0.0
    if not _is_number(tau) or not math.isfinite(tau) or tau < 0:
        raise InputError("must be a finite number >= 0", source, "plant.dead_time")
    order = p.get("dead_time_order", 3) or 3
    if isinstance(order, bool) or not isinstance(order, int) or not 1 <= order <= 10:
        raise InputError("must be a whole number from 1 to 10", source, "plant.dead_time_order")
    free = p.get("delay_free")
    delay_free = None
    if free is not None:
        if not isinstance(free, dict):
            raise InputError("must be an object", source, "plant.delay_free")
        delay_free = (
            _coefficients(free.get("numerator"), source, "plant.delay_free.numerator", False),
            _coefficients(free.get("denominator"), source, "plant.delay_free.denominator",
                          False))
    label = p.get("label", "")
    return PlantRecord(numerator=num, denominator=den, label=label if isinstance(label, str)
                       else "", dead_time=float(tau), dead_time_order=order,
                       delay_free=delay_free)


def read_design(doc: Any, source: str = "<design>") -> DesignDocument:
    """Read a parsed ``synth.design/1`` document into records.

    Parameters
    ----------
    doc : dict
        The parsed JSON (``DesignRun.to_json()`` or :func:`json.load`).
    source : str
        The file name (or another name) errors should show.

    Returns
    -------
    DesignDocument

    Raises
    ------
    InputError
        One line naming ``source`` and the field that is wrong.
    """
    if not isinstance(doc, dict):
        raise InputError("expected a JSON object (a synth.design/1 document)", source)
    schema = doc.get("schema")
    if schema != SCHEMA:
        raise InputError(f"schema is {schema!r}, expected {SCHEMA!r}", source, "schema")
    designs = doc.get("designs")
    if not isinstance(designs, list):
        raise InputError("must be a list of designs", source, "designs")
    records = sorted((_design(i, d, source) for i, d in enumerate(designs)),
                     key=lambda r: (r.rank, r.index))
    objective = doc.get("objective")
    return DesignDocument(
        source=source, designs=tuple(records), plant=_plant(doc.get("plant"), source),
        requirements=_mapping(doc.get("requirements"), source, "requirements"),
        region=_mapping(doc.get("region"), source, "region"),
        proportional=_mapping(doc.get("proportional"), source, "proportional"),
        search=_mapping(doc.get("search"), source, "search"),
        objective=objective if isinstance(objective, str) else None,
        raw=_frozen(doc), actuator=_actuator(doc.get("actuator"), source),
        models=_mapping(doc.get("models"), source, "models"))


def load_design(path: str | Path) -> DesignDocument:
    """Read a ``synth.design/1`` file (``synth design --json``) into records.

    Raises
    ------
    InputError
        Naming the file when it cannot be read, is not JSON or is not a valid document.
    """
    from synth.problem.source import read_input_text

    source = str(path)
    # regular files only, never blocking; a design run of 64 MiB is far beyond any real one
    text = read_input_text(path, max_bytes=64 << 20, kind="design JSON file")
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as err:
        raise InputError(f"not valid JSON: {err.msg} at line {err.lineno}, column {err.colno}",
                         source) from None
    except RecursionError:
        raise InputError("not a design JSON file: nested too deeply", source) from None
    except ValueError:  # an integer beyond Python's digit limit
        raise InputError("not a design JSON file: a number has too many digits", source) from None
    return read_design(doc, source)
