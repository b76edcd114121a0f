"""What "best" means among designs that meet every requirement: the objective registry.

``[search] objective`` names one entry of :data:`OBJECTIVES`.  Each objective
turns a design's metrics (the verifier's, keyed as in the design JSON) into
one number, **lower is better**: the ranking orders feasible designs by it
and the search minimises it directly (:mod:`synth.strategies`).  A metric
that is unbounded or undefined (``None``; NaN in the vectorised form) makes
the value infinite; designs with an infinite value are then ordered by the
objective's *fallback* (:meth:`Objective.order`), so the order stays total
and meaningful (a loop without integral action has an unbounded load IAE,
but among such loops the faster and more robust one is still the better).

Objectives
----------
``disturbance``
    the load-step IAE (``load_iae``: integral of ``|y|`` after a unit step of
    the load at the plant input), the classic measure of load rejection
    (Astrom and Hagglund 2006; MIGO, Astrom, Panagopoulos and Hagglund 1998).
``speed``
    the settling time of the unit reference step (as shaped by a prefilter
    or set-point weights).
``robustness``
    the peak sensitivity Ms.
``effort``
    the peak control effort of the reference step plus the noise gain
    ``max |C/(1+L)|`` (both are controller output per unit of input).
``balanced`` (the default)
    the load-step IAE times a robustness factor ``1 + (max(0, Ms - 1.4) /
    0.4)^2`` (1 up to Ms = 1.4, the conservative end of the common 1.4 to 2.0
    range; 2 at Ms = 1.8), so it never trades robustness for a sluggish
    loop: its optimum stays where load rejection is good, typically at Ms
    1.5 to 1.7 when the file sets no limit.

The default noise bound.  ``disturbance``, ``speed`` and ``balanced`` reward
a faster loop, and a derivative term (or any compensator with as many zeros
as poles) can always buy a little more speed with more high-frequency gain.
When the file sets no ``max_noise_gain``, these objectives multiply their
value by ``max(1, noise_gain / bound)^2`` with the default bound
:data:`DEFAULT_NOISE_KU` times the plant's ultimate gain ``Ku =
1/|G(j w_u)|`` (``w_u`` the lowest frequency where the phase of ``G``,
exact dead time included, falls through -180 deg; for a plant whose phase
never does, ``1/|G(j w_char)|`` at the problem's characteristic frequency).
This is a preference, not a requirement: it never makes a design infeasible.
With ``max_noise_gain`` set, the file's limit rules instead.

Fallback order (designs whose value is infinite): ``balanced``,
``disturbance`` and ``speed`` use the settling time of the reference step
times the same robustness and noise factors; ``robustness`` and ``effort``
the balanced value.

References
----------
.. [1] K. J. Astrom and T. Hagglund, *Advanced PID Control*, ISA, 2006,
   ch. 4 (load disturbances, IAE, the robustness range Ms 1.2 to 2.0,
   measurement noise and the noise gain).
.. [2] K. J. Astrom, H. Panagopoulos and T. Hagglund, "Design of PI
   controllers based on non-convex optimization", Automatica 34(5), 1998,
   585-601 (load rejection under an Ms constraint).
.. [3] O. Garpinger, T. Hagglund and K. J. Astrom, "Performance and
   robustness trade-offs in PID control", J. Process Control 24, 2014
   (IAE against Ms and noise gain).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

__all__ = ["DEFAULT_NOISE_KU", "DEFAULT_OBJECTIVE", "OBJECTIVES", "Objective",
           "ObjectiveScales", "objective", "objective_order", "objective_value"]

#: The default objective (``[search] objective`` when the file names none).
DEFAULT_OBJECTIVE = "balanced"

#: The default noise bound in units of the plant's ultimate gain ``Ku`` (module docstring):
#: the noise gain of the classic Ziegler-Nichols PID (kp = 0.6 Ku) with the usual derivative
#: filter N = 10, ``0.6 (1 + 10) Ku``, the noisiest of the published PID rules (common
#: practice; Astrom and Hagglund 2006, sec. 3.3 on the filter).  Derivative action stays
#: available, but a design cannot buy a little load IAE with unbounded high-frequency gain.
DEFAULT_NOISE_KU = 6.6

#: The robustness factor of ``balanced``: ``1 + (max(0, Ms - MS_FREE) / MS_WIDTH)^2``.
MS_FREE = 1.4
MS_WIDTH = 0.4


@dataclass(frozen=True)
class ObjectiveScales:
    """Problem-only scales the objectives use (never the other candidates').

    Attributes
    ----------
    time : float
        Reference time ``1 / w_char`` (s).
    gain : float
        Reference controller gain: the plant's ultimate gain ``Ku`` (or
        ``1/|G(j w_char)|``, see the module docstring).
    iae : float
        Reference load IAE ``time / gain`` (what a loop about as fast as the
        plant leaves), for normalisation inside the search only.
    noise_bound : float or None
        The default noise bound ``DEFAULT_NOISE_KU * gain``; ``None`` when
        the file limits the noise gain itself.
    """

    time: float
    gain: float
    iae: float
    noise_bound: float | None

    @classmethod
    def for_problem(cls, problem) -> ObjectiveScales:
        """The scales of a problem (its plant, requirements and search space)."""
        from synth.families.base import SearchSpace

        space = SearchSpace.for_problem(problem)
        w_char = space.w_char
        gain = ultimate_gain(problem.plant, space.w_min, 1e3 * space.w_max)
        if gain is None:
            g = abs(complex(problem.plant.evaluate(np.array([1j * w_char]))[0]))
            gain = 1.0 / g if math.isfinite(g) and g > 0 else 1.0
        noise = None
        if problem.requirements.limit("noise_gain") is None:
            noise = DEFAULT_NOISE_KU * gain
        time = 1.0 / w_char
        return cls(time=time, gain=gain, iae=time / gain, noise_bound=noise)


def ultimate_gain(plant, w_lo: float, w_hi: float) -> float | None:
    """``1 / |G(j w_u)|`` at the lowest frequency where the phase of G falls through -180 deg.

    The plant's sign is taken so that its low-frequency gain is positive (a
    reverse-acting plant is controlled with a negative gain); its phase then
    starts at ``-90 deg`` times the number of integrators and is unwrapped
    upwards from ``w_lo`` on a logarithmic grid of 200 points a decade (exact
    dead time), the crossing refined by linear interpolation in log w.
    ``None`` when the phase starts at -180 deg or below (double integrators)
    or never gets there.

    References
    ----------
    .. [1] J. G. Ziegler and N. B. Nichols, "Optimum settings for automatic
       controllers", Trans. ASME 64, 1942 (the ultimate gain).
    """
    num, den = plant.rational_num, plant.rational_den
    kn = num.size - np.trim_zeros(num, "b").size
    kd = den.size - np.trim_zeros(den, "b").size
    k = kd - kn                                  # integrators net of differentiators
    low = np.trim_zeros(num, "b")[-1] / np.trim_zeros(den, "b")[-1]
    sign = 1.0 if low > 0 else -1.0
    if k >= 2:
        return None
    n = int(max(200, 200 * math.log10(w_hi / w_lo)))
    w = np.geomspace(w_lo, w_hi, n)
    g = sign * plant.evaluate(1j * w)
    ok = np.isfinite(g) & (g != 0)
    w, g = w[ok], g[ok]
    if w.size < 2:
        return None
    phase = np.unwrap(np.angle(g))
    # the low-frequency phase is -90 deg per integrator: pick that branch of the unwrapping
    phase -= 2 * math.pi * round((phase[0] + k * math.pi / 2) / (2 * math.pi))
    below = np.flatnonzero(phase <= -math.pi)
    if not below.size or below[0] == 0:
        return None
    i = int(below[0])
    a, b = phase[i - 1], phase[i]
    frac = (a + math.pi) / (a - b) if a != b else 1.0
    wu = math.exp(math.log(w[i - 1]) + frac * (math.log(w[i]) - math.log(w[i - 1])))
    mag = abs(complex(plant.evaluate(np.array([1j * wu]))[0]))
    return 1.0 / mag if math.isfinite(mag) and mag > 0 else None


def _col(metrics: Mapping[str, object], key: str) -> np.ndarray:
    """A metric as a float array; ``None`` (unbounded or undefined) becomes NaN."""
    v = metrics.get(key)
    if v is None:
        return np.array(math.nan)
    return np.asarray(v, dtype=float)


def _noise_factor(m, scales: ObjectiveScales) -> np.ndarray:
    if scales.noise_bound is None:
        return np.ones_like(_col(m, "noise_gain"))
    noise = _col(m, "noise_gain")
    return np.where(np.isfinite(noise), np.maximum(1.0, noise / scales.noise_bound) ** 2, np.inf)


def _robust_factor(m) -> np.ndarray:
    ms = _col(m, "peak_sensitivity")
    return np.where(np.isfinite(ms), 1.0 + (np.maximum(0.0, ms - MS_FREE) / MS_WIDTH) ** 2,
                    np.inf)


def _finite(x) -> np.ndarray:
    x = np.asarray(x, dtype=float)
    return np.where(np.isnan(x), np.inf, x)


def _disturbance(m, scales):
    return _finite(_col(m, "load_iae") / scales.iae) * _noise_factor(m, scales)


def _speed(m, scales):
    return _finite(_col(m, "settling_time") / scales.time) * _noise_factor(m, scales)


def _robustness(m, scales):
    return _finite(_col(m, "peak_sensitivity"))


def _effort(m, scales):
    return _finite((_col(m, "peak_control_effort") + _col(m, "noise_gain")) / scales.gain)


def _balanced(m, scales):
    return _finite(_col(m, "load_iae") / scales.iae) * _robust_factor(m) * _noise_factor(m, scales)


def _settle_fallback(m, scales):
    return (_finite(_col(m, "settling_time") / scales.time) * _robust_factor(m)
            * _noise_factor(m, scales))


@dataclass(frozen=True)
class Objective:
    """One entry of the registry: a name, the metrics it reads and its value.

    Attributes
    ----------
    name : str
        What ``[search] objective`` says.
    label : str
        What it minimises, in words (tables, reports).
    metrics : tuple of str
        Metric keys the value reads (the first is the headline metric).
    value_fn, fallback_fn : callable
        ``(metrics, scales) -> array`` (vectorised over array-valued metrics;
        NaN is undefined), lower is better; ``value_fn`` is the objective's
        value **in units of** :class:`ObjectiveScales` (only the order
        matters), ``fallback_fn`` orders designs whose value is infinite.
    """

    name: str
    label: str
    metrics: tuple[str, ...]
    value_fn: Callable
    fallback_fn: Callable

    def values(self, metrics: Mapping[str, object], scales: ObjectiveScales) -> np.ndarray:
        """Vectorised value: ``metrics`` maps metric keys to arrays (NaN = undefined)."""
        return np.asarray(self.value_fn(metrics, scales), dtype=float)

    def fallbacks(self, metrics: Mapping[str, object], scales: ObjectiveScales) -> np.ndarray:
        """Vectorised fallback value (see the module docstring)."""
        return np.asarray(self.fallback_fn(metrics, scales), dtype=float)


#: The objectives by name (read-only), in the order docs list them.
OBJECTIVES: Mapping[str, Objective] = MappingProxyType({o.name: o for o in (
    Objective("disturbance", "least load-step IAE",
              ("load_iae", "noise_gain"), _disturbance, _settle_fallback),
    Objective("speed", "least settling time", ("settling_time", "noise_gain"), _speed,
              _settle_fallback),
    Objective("robustness", "least peak sensitivity", ("peak_sensitivity",), _robustness,
              _balanced),
    Objective("effort", "least peak effort plus noise gain",
              ("peak_control_effort", "noise_gain"), _effort, _balanced),
    Objective("balanced", "least load-step IAE at a robustness of Ms about 1.4 to 1.7",
              ("load_iae", "peak_sensitivity", "noise_gain"), _balanced, _settle_fallback),
)})


def objective(name_or_problem) -> Objective:
    """The registry entry of a name, or of a problem's ``search.objective``."""
    name = name_or_problem if isinstance(name_or_problem, str) else \
        name_or_problem.search.objective
    return OBJECTIVES[name]


def objective_value(problem, metrics: Mapping[str, object],
                    scales: ObjectiveScales | None = None) -> float:
    """The value of ``problem.search.objective`` for one design's metrics (lower is better).

    Parameters
    ----------
    problem : synth.problem.Problem
    metrics : mapping
        Metric key -> value as the verifier reports them (``None`` unbounded).
    scales : ObjectiveScales, optional
        ``ObjectiveScales.for_problem(problem)``; pass it when evaluating many
        designs of one problem (it costs a frequency sweep of the plant).

    Returns
    -------
    float
        ``inf`` when a metric it needs is unbounded or undefined (then
        :func:`objective_order` still orders the design).  The value is in
        the units of the scales (only the order between designs of one
        problem is meaningful).
    """
    scales = ObjectiveScales.for_problem(problem) if scales is None else scales
    return float(objective(problem).values(metrics, scales))


def objective_order(problem, metrics: Mapping[str, object],
                    scales: ObjectiveScales | None = None) -> tuple[float, float]:
    """``(value, fallback)``: the sort key of a feasible design (both lower is better)."""
    scales = ObjectiveScales.for_problem(problem) if scales is None else scales
    obj = objective(problem)
    return float(obj.values(metrics, scales)), float(obj.fallbacks(metrics, scales))
