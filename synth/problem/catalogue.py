"""The requirement catalogue: one entry per ``[requirements]`` key, one per metric.

Every part of synth that deals with requirements reads this module and
nothing else: the schema validates a value with the entry's ``value`` spec,
the verifier judges a metric with :meth:`Requirement.assess`, the search
penalises its estimates with :meth:`Requirement.shortfall` on a
:meth:`Requirement.search_limit`, the terminal table takes its columns from
``header``, compare decides "binding" from ``kind``, the report prints
``label`` and ``asks``.  Adding a requirement therefore means one
:class:`Requirement` in :data:`REQUIREMENTS` plus the code that computes its
metric (and, when the metric is new, one :class:`Metric` in :data:`METRICS`).

Kinds of requirement
--------------------
``upper``
    the metric must not exceed the limit (``max_...`` keys);
``lower``
    the metric must not fall below the limit (``min_...`` keys);
``contain``
    the metric is an interval (``None`` for an unbounded end) that must
    contain the required ``[low, high]`` (open ends: a design stable exactly
    up to ``high`` does not contain it);
``within``
    the metric is a number that must lie in the closed ``[low, high]``;
``setting``
    no limit of its own: it sets how another requirement is measured
    (``settling_band_percent`` for the settling time).

What a requirement concerns (``concerns``): ``"reference"`` (the unit-step
reference response, so a reference prefilter or set-point weights change it),
``"load"`` (the response to a load step at the plant input), ``"loop"`` (poles
and frequency response: nothing outside the loop changes it) or
``"structure"`` (a property of the compensator itself, judged even for an
unstable loop).

Shortfall
---------
The normalised shortfall of a violated limit is ``(value - limit) /
max(|limit|, floor)`` for ``upper`` (mirrored for ``lower``): a fraction of the
limit, so requirements of different units add up (the ``floor`` only matters
for limits that may be 0, such as no overshoot at all).  A metric that is
undefined (``None``) where it must be bounded counts as a shortfall of 1.  For
``contain`` it is the sum of the logarithmic gaps at both ends, for
``within`` the distance outside the range over its largest end.

References
----------
.. [1] K. Ogata, *Modern Control Engineering*, 5th ed., Prentice Hall, 2010,
   ch. 5 (transient-response specifications) and ch. 7 (margins).
.. [2] K. J. Astrom and R. M. Murray, *Feedback Systems*, Princeton University
   Press, 2008, ch. 9-12 (sensitivity peak, robustness measures).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any, Literal

import numpy as np

__all__ = [
    "METRICS",
    "REQUIREMENTS",
    "Metric",
    "NumberSpec",
    "RangeSpec",
    "Requirement",
    "requirement",
    "requirement_for",
]

Kind = Literal["upper", "lower", "contain", "within", "setting"]
Concern = Literal["reference", "load", "loop", "structure"]


# ----------------------------------------------------------------------------------------------
# metrics
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Metric:
    """One metric of the design JSON (``designs[i].metrics``).

    Attributes
    ----------
    key : str
        The JSON key.
    label : str
        Plain name, e.g. ``"settling time"``.
    unit : str
        ``"s"``, ``"%"``, ``"deg"``, ``"dB"``, ``"rad/s"`` or ``""``.
    symbol : str
        Short column name, e.g. ``"Ts"``.
    better : {"lower", "higher", "wider"} or None
        Which way is better (``"wider"``: an interval, wider is better);
        ``None`` for a value that is neither (a frequency, a gain).  The worst
        value over several plant models is the one on the other side.
    contract : bool
        One of the metrics the public contract names.
    """

    key: str
    label: str
    unit: str
    symbol: str
    better: Literal["lower", "higher", "wider"] | None
    contract: bool = False

    @property
    def title(self) -> str:
        """``label (unit)``, or the label alone for a unit-free metric."""
        return f"{self.label} ({self.unit})" if self.unit else self.label

    def worse(self, a, b) -> bool:
        """Whether value ``a`` is worse than ``b`` (``None`` counts as unbounded).

        Used to pick the worst case over several plant models: for a
        ``lower``-is-better metric an unbounded value is the worst, for a
        ``higher``-is-better one the best.
        """
        if self.better is None or self.better == "wider":
            raise ValueError(f"metric {self.key!r} has no scalar order")
        inf = math.inf
        x = inf if a is None else float(a)
        y = inf if b is None else float(b)
        return x > y if self.better == "lower" else x < y


#: Every metric the verifier reports, in the order tables show them.
METRICS: Mapping[str, Metric] = MappingProxyType({m.key: m for m in (
    Metric("overshoot_percent", "overshoot", "%", "OS", "lower", True),
    Metric("settling_time", "settling time", "s", "Ts", "lower", True),
    Metric("rise_time", "rise time", "s", "Tr", "lower", True),
    Metric("steady_state_error", "steady-state error", "", "ess", "lower", True),
    Metric("min_damping_ratio", "least damping ratio", "", "zeta", "higher", True),
    Metric("phase_margin_deg", "phase margin", "deg", "PM", "higher", True),
    Metric("gain_margin_db", "gain margin", "dB", "GM", "higher", True),
    Metric("peak_sensitivity", "peak sensitivity", "", "Ms", "lower", True),
    Metric("peak_control_effort", "peak control effort", "", "|u|max", "lower", True),
    Metric("stable_plant_gain_range", "stable plant-gain factors", "", "kG", "wider", True),
    Metric("load_iae", "load-step IAE", "", "IAEd", "lower", True),
    Metric("load_peak", "load-step peak", "", "|y|d", "lower", True),
    Metric("peak_complementary_sensitivity", "peak complementary sensitivity", "", "Mt",
           "lower", True),
    Metric("noise_gain", "noise gain", "", "|CS|", "lower", True),
    Metric("delay_margin", "delay margin", "s", "DM", "higher"),
    Metric("crossover_frequency", "gain crossover", "rad/s", "wc", None),
    Metric("final_value", "final value", "", "y(inf)", None),
    Metric("in_region", "every pole in the region", "", "in R", None),
    Metric("gain", "compensator gain", "", "K", None),
)})


# ----------------------------------------------------------------------------------------------
# value specs (applied by the schema's helpers in synth.problem.requirements)
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class NumberSpec:
    """A number: bounds (open or closed) and whether it must be whole."""

    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    integer: bool = False

    def describe(self) -> str:
        """The allowed values in words, e.g. ``"(0, 100)"`` or ``"> 0"``."""
        if self.lo is not None and self.hi is not None:
            return (f"{'(' if self.lo_open else '['}{self.lo:g}, {self.hi:g}"
                    f"{')' if self.hi_open else ']'}")
        if self.lo is not None:
            return f"{'>' if self.lo_open else '>='} {self.lo:g}"
        if self.hi is not None:
            return f"{'<' if self.hi_open else '<='} {self.hi:g}"
        return "any number"


@dataclass(frozen=True)
class RangeSpec:
    """A ``[low, high]`` pair with ``low < high`` (both positive when ``positive``)."""

    positive: bool = False

    def describe(self) -> str:
        return "[low, high], 0 < low < high" if self.positive else "[low, high], low < high"


# ----------------------------------------------------------------------------------------------
# requirements
# ----------------------------------------------------------------------------------------------


def _ends(value) -> tuple[float, float]:
    """An interval metric as floats, ``None`` ends as -inf / +inf."""
    lo, hi = value
    return (-math.inf if lo is None else float(lo), math.inf if hi is None else float(hi))


def _interval_text(value) -> str:
    lo, hi = value
    a = "-inf" if lo is None else f"{lo:.3g}"
    b = "inf" if hi is None else f"{hi:.3g}"
    return f"({a}, {b})"


@dataclass(frozen=True)
class Requirement:
    """One ``[requirements]`` key: what it limits and how it is judged, shown and penalised.

    Attributes
    ----------
    key : str
        The file key.
    metric : str or None
        The metric key it limits (``None`` for a ``setting``).
    kind : {"upper", "lower", "contain", "within", "setting"}
        See the module docstring.
    concerns : {"reference", "load", "loop", "structure"}
        What part of the loop's behaviour it is about.
    unit : str
        Unit of the value in the file.
    label : str
        Plain name, e.g. ``"settling time"``.
    asks : str
        What the file asks for, ``{}`` standing for the value: ``"at most {} s"``.
    header : str
        Terminal column header, ``str.format`` with the value (two fields for
        a range): ``"Ts<={:g}s"``.
    value : NumberSpec or RangeSpec
        The allowed values in the file.
    violation : str
        Text of a violation, formatted with ``value``, ``limit`` (``lo``,
        ``hi`` for ranges), ``value_text`` (an interval metric), ``where``
        (where the value occurs: a pole, a model) and every requirement of the
        file by key (for settings such as the settling band).
    undefined : str or None
        Text when the metric is undefined (``None``) and that fails the
        requirement; ``None`` when an undefined metric is unbounded on the
        good side (an infinite gain margin meets any lower limit).
    floor : float
        Normalisation floor of the shortfall (see the module docstring).
    tolerance : float
        Excess allowed before a violation (only for dimensionless metrics
        compared with a fraction of the step, absorbing rounding).
    setting_of : str or None
        For a ``setting``: the key of the requirement it belongs to.
    default : object
        For a ``setting``: its value when the file does not give it.
    bound : float
        The metric's natural bound (1 for a sensitivity peak, else 0): the
        search tightens a limit towards it, never past it.
    ceiling : float or None
        The largest limit the search may aim for on a ``lower`` requirement
        (a damping ratio stays below 1, a phase margin below 180 deg).
    cap : float or None
        Largest penalty the search gives this requirement (an estimate that
        is infinite, such as a response that never rises, would otherwise
        swamp every other term).
    region : {"overshoot", "damping", "settling"} or None
        How the limit shapes the s-plane region the engine and the search aim
        for (:meth:`synth.problem.requirements.Requirements.region`): a
        least damping from an overshoot by the second-order relation, a least
        damping as it stands, or a least decay rate from a settling time.
    """

    key: str
    metric: str | None
    kind: Kind
    concerns: Concern
    unit: str
    label: str
    asks: str
    header: str
    value: NumberSpec | RangeSpec
    violation: str = ""
    undefined: str | None = None
    floor: float = 0.0
    tolerance: float = 0.0
    setting_of: str | None = None
    default: Any = None
    bound: float = 0.0
    ceiling: float | None = None
    cap: float | None = None
    region: Literal["overshoot", "damping", "settling"] | None = None

    # -- presentation -------------------------------------------------------------------------
    def column(self, limit) -> str:
        """The terminal column header for this limit."""
        return self.header.format(*limit) if isinstance(limit, (tuple, list)) else \
            self.header.format(limit)

    def asked(self, limit) -> str:
        """What the file asks for, in words."""
        if isinstance(limit, (tuple, list)):
            return self.asks.format(f"[{limit[0]:.4g}, {limit[1]:.4g}]")
        return self.asks.format(f"{limit:.4g}")

    # -- judging ------------------------------------------------------------------------------
    def shortfall(self, value, limit):
        """Normalised excess of ``value`` over ``limit`` (0 where met), vectorised.

        Parameters
        ----------
        value : float or ndarray
            The metric (for ``contain``: a pair ``(lo, hi)`` of floats or
            arrays, a non-positive ``lo`` or infinite ``hi`` meaning unbounded).
        limit : float or (float, float)

        Returns
        -------
        float or ndarray
            ``>= 0``; NaN where the value is NaN.
        """
        if self.kind == "upper":
            return np.maximum(value - limit, 0) / max(abs(limit), self.floor)
        if self.kind == "lower":
            return np.maximum(limit - value, 0) / max(abs(limit), self.floor)
        if self.kind == "contain":
            lo, hi = value
            a, b = limit
            with np.errstate(divide="ignore", invalid="ignore"):
                high = np.maximum(np.log(b / hi), 0)
                low = np.where(lo > 0, np.maximum(np.log(np.maximum(lo, 1e-300) / a), 0), 0)
            return high + low
        if self.kind == "within":
            a, b = limit
            out = np.maximum(a - value, 0) + np.maximum(value - b, 0)
            return out / max(abs(a), abs(b))
        raise ValueError(f"{self.key} is a setting; it has no shortfall")

    def violated(self, value, limit) -> bool:
        """Whether a defined metric value violates the limit (exact comparisons)."""
        if self.kind == "upper":
            return value > limit + self.tolerance
        if self.kind == "lower":
            return value < limit - self.tolerance
        if self.kind == "contain":
            lo, hi = _ends(value)
            return not (lo < limit[0] and hi > limit[1])
        if self.kind == "within":
            return not (limit[0] <= value <= limit[1])
        raise ValueError(f"{self.key} is a setting; it is never violated")

    def assess(self, value, limit, context: Mapping[str, Any] | None = None
               ) -> tuple[float, str] | None:
        """Judge one metric value: ``None`` when met, else ``(shortfall, text)``.

        Parameters
        ----------
        value : float, list or None
            The metric as the verdict holds it (``None``: undefined or unbounded).
        limit : float or (float, float)
            The file's value.
        context : mapping, optional
            Extra fields for the text: ``where`` and the file's requirements by key.
        """
        ctx = dict(context or {})
        if isinstance(limit, (tuple, list)):
            ctx.update(lo=limit[0], hi=limit[1])
        ctx.update(limit=limit, value=value)
        if value is None:
            if self.undefined is None:
                return None
            return 1.0, self.undefined.format(**ctx)
        if not self.violated(value, limit):
            return None
        if self.kind == "contain":
            lo, hi = _ends(value)
            ctx["value_text"] = _interval_text(value)
            # open ends: a range ending exactly at the required end is still short of it
            excess = max(float(self.shortfall((lo, hi), limit)), 1e-6)
        else:
            excess = float(self.shortfall(value, limit))
        return excess, self.violation.format(**ctx)

    def room(self, value, limit) -> float:
        """How much room a met limit leaves, as a fraction of the limit (of the range for ``within``).

        ``inf`` where the metric is unbounded on the good side; negative when
        the limit is violated.  A requirement is *binding* when its room is
        small (compare's binding analysis).
        """
        if self.kind in ("upper", "lower"):
            scale = max(abs(limit), self.floor)
            if value is None:
                return -math.inf if self.kind == "upper" else math.inf
            excess = value - limit if self.kind == "upper" else limit - value
            return -excess / scale if scale > 0 else (math.inf if excess <= 0 else -math.inf)
        if self.kind == "contain":
            if value is None:
                return -math.inf
            lo, hi = _ends(value)
            a, b = limit
            return min((a - lo) / abs(a), (hi - b) / abs(b))
        if self.kind == "within":
            a, b = limit
            return min(value - a, b - value) / (b - a)
        raise ValueError(f"{self.key} is a setting; it has no room")

    def search_limit(self, limit, margin: float, widen: float):
        """The limit a search aims for, with room left for its estimates' errors.

        An upper limit moves towards the metric's natural ``bound`` by the
        factor ``margin`` (< 1); a lower limit moves away from it by
        ``1/margin`` (never past ``ceiling``); an interval that must be
        contained grows by the ratio ``widen`` (> 1) at both ends.  A
        ``within`` range is returned unchanged (a structure's bounds enforce it).
        """
        if self.kind == "upper":
            return self.bound + margin * (limit - self.bound)
        if self.kind == "lower":
            aim = self.bound + (limit - self.bound) / margin
            return aim if self.ceiling is None else min(self.ceiling, aim)
        if self.kind == "contain":
            return (limit[0] / widen, limit[1] * widen)
        return limit


_POSITIVE = NumberSpec(lo=0, lo_open=True)

#: Every ``[requirements]`` key, in the order tables, violations and penalties follow.
REQUIREMENTS: Mapping[str, Requirement] = MappingProxyType({r.key: r for r in (
    Requirement(
        "max_overshoot_percent", "overshoot_percent", "upper", "reference", "%",
        "overshoot", "at most {} % on a unit step", "OS%<={:g}",
        # 0 is a real requirement ("no overshoot"): the region then asks for real poles
        NumberSpec(lo=0, hi=100, hi_open=True),
        violation="overshoot {value:.3g} % exceeds {limit:g} %",
        undefined="overshoot undefined: the final value is zero", floor=1.0,
        region="overshoot"),
    Requirement(
        "max_settling_time", "settling_time", "upper", "reference", "s",
        "settling time", "at most {} s", "Ts<={:g}s", _POSITIVE,
        violation="settling time {value:.3g} s exceeds {limit:g} s "
                  "({settling_band_percent:g} % band)",
        undefined="does not settle within the {settling_band_percent:g} % band in the "
                  "simulated horizon", region="settling"),
    Requirement(
        "settling_band_percent", None, "setting", "reference", "%",
        "settling band", "{} % around the final value", "band {:g}%",
        NumberSpec(lo=0, lo_open=True, hi=50), setting_of="max_settling_time", default=2.0),
    Requirement(
        "max_rise_time", "rise_time", "upper", "reference", "s",
        "rise time", "at most {} s (10 % to 90 %)", "Tr<={:g}s", _POSITIVE,
        violation="rise time {value:.3g} s exceeds {limit:g} s",
        undefined="the response never reaches 90 % of its final value", cap=10.0),
    Requirement(
        "max_steady_state_error", "steady_state_error", "upper", "reference", "",
        "steady-state error", "at most {} of the step", "ess<={:g}",
        NumberSpec(lo=0, hi=1),
        violation="steady-state error {value:.3g} exceeds {limit:g}",
        undefined="steady-state error undefined", floor=0.01, tolerance=1e-9),
    Requirement(
        "min_damping_ratio", "min_damping_ratio", "lower", "loop", "",
        "damping", "every closed-loop pole damped at least {}", "zeta>={:g}",
        NumberSpec(lo=0, lo_open=True, hi=1, hi_open=True),
        violation="damping ratio {value:.3g} of the pole at {where} is below {limit:g}",
        ceiling=0.9999, region="damping"),
    Requirement(
        "min_phase_margin_deg", "phase_margin_deg", "lower", "loop", "deg",
        "phase margin", "at least {} deg", "PM>={:g}",
        NumberSpec(lo=0, lo_open=True, hi=180, hi_open=True),
        violation="phase margin {value:.3g} deg is below {limit:g} deg", ceiling=179.0),
    Requirement(
        "min_gain_margin_db", "gain_margin_db", "lower", "loop", "dB",
        "gain margin", "at least {} dB", "GM>={:g}dB", _POSITIVE,
        violation="gain margin {value:.3g} dB is below {limit:g} dB"),
    Requirement(
        "max_peak_sensitivity", "peak_sensitivity", "upper", "loop", "",
        "peak sensitivity", "at most {}", "Ms<={:g}", NumberSpec(lo=1),
        violation="peak sensitivity {value:.3g} exceeds {limit:g}",
        undefined="peak sensitivity undefined", bound=1.0),
    Requirement(
        "max_peak_complementary_sensitivity", "peak_complementary_sensitivity", "upper", "loop",
        "", "peak complementary sensitivity", "at most {}", "Mt<={:g}", NumberSpec(lo=1),
        violation="peak complementary sensitivity {value:.3g} exceeds {limit:g}",
        undefined="peak complementary sensitivity unbounded", bound=1.0),
    Requirement(
        "max_noise_gain", "noise_gain", "upper", "loop", "",
        "noise gain", "peak of |C/(1+L)| at most {}", "|CS|<={:g}", _POSITIVE,
        violation="noise gain {value:.3g} exceeds {limit:g}",
        undefined="noise gain unbounded"),
    Requirement(
        "max_load_iae", "load_iae", "upper", "load", "",
        "load-step IAE", "integral of |y| after a unit load step at most {}", "IAEd<={:g}",
        _POSITIVE,
        violation="load-step IAE {value:.3g} exceeds {limit:g}",
        undefined="the output does not return to zero after a load step (no integral action): "
                  "the load-step IAE is unbounded", cap=10.0),
    Requirement(
        "max_load_peak", "load_peak", "upper", "load", "",
        "load-step peak", "peak |y| after a unit load step at most {}", "|y|d<={:g}", _POSITIVE,
        violation="load-step peak {value:.3g} exceeds {limit:g}",
        undefined="load-step peak undefined"),
    Requirement(
        "max_control_effort", "peak_control_effort", "upper", "reference", "",
        "control effort", "peak |u| at most {} for a unit step", "|u|<={:g}", _POSITIVE,
        violation="peak control effort {value:.3g} exceeds {limit:g}",
        undefined="peak control effort undefined"),
    Requirement(
        "plant_gain_range", "stable_plant_gain_range", "contain", "loop", "",
        "plant gain tolerance", "stable for plant gain factors {}", "kG in [{:g},{:g}]",
        RangeSpec(positive=True),
        violation="stable only for plant-gain factors in {value_text}; required "
                  "[{lo:.3g}, {hi:.3g}]",
        undefined="no range of plant-gain factors around 1 keeps the loop stable"),
    Requirement(
        "gain_range", "gain", "within", "structure", "",
        "compensator gain", "K within {}", "K in [{:g},{:g}]", RangeSpec(),
        violation="gain {value:.4g} is outside the allowed gain range [{lo:.3g}, {hi:.3g}]"),
)})


def requirement(key: str) -> Requirement:
    """The entry of a file key (``KeyError`` when there is none)."""
    return REQUIREMENTS[key]


def requirement_for(metric_key: str) -> Requirement | None:
    """The requirement that limits a metric, or ``None``."""
    for r in REQUIREMENTS.values():
        if r.metric == metric_key:
            return r
    return None
