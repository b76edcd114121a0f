"""The ``[sampling]`` table: the controller runs in discrete time.

``period`` is the sample time ``T`` in seconds (> 0); ``compute_delay`` the
time ``tau`` from taking a sample to applying the new output
(``0 <= tau <= T``, default 0).  :func:`parse_sampling` validates the table
with one-line errors; :func:`asked_bandwidth` reads from the requirements the
closed-loop bandwidth they ask for, which :func:`sampling_advice` compares
with the sample rate (common practice: sample 10 to 30 times faster than the
closed-loop bandwidth).

References
----------
.. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
   Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 11 (choice of the
   sample rate: 10 to 30 times the closed-loop bandwidth, and the phase lag
   ``w T / 2`` of the hold), from memory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from synth.errors import InputError

__all__ = [
    "RATE_NOTE",
    "RATE_WARNING",
    "SAMPLING_KEYS",
    "Sampling",
    "SamplingAdvice",
    "asked_bandwidth",
    "parse_sampling",
    "rate_message",
    "sampling_advice",
    "search_problem",
]

#: Keys of the ``[sampling]`` table.
SAMPLING_KEYS = ("period", "compute_delay")

#: Below this many times the closed-loop bandwidth the sample rate earns a warning
#: (common practice: 10 to 30 times; Franklin, Powell and Workman).
RATE_WARNING = 10.0
#: Below this many times, a note with the numbers.
RATE_NOTE = 30.0


@dataclass(frozen=True)
class Sampling:
    """When the controller runs.

    Attributes
    ----------
    period : float
        Sample time ``T`` in seconds, ``> 0``.
    compute_delay : float
        Seconds from the sample to the new output, ``0 <= compute_delay <= period``.
    """

    period: float
    compute_delay: float = 0.0

    def __post_init__(self):
        if not (math.isfinite(self.period) and self.period > 0):
            raise ValueError(f"period must be a finite number > 0, got {self.period!r}")
        if not (math.isfinite(self.compute_delay) and 0 <= self.compute_delay <= self.period):
            raise ValueError(f"compute_delay must lie in [0, period], got {self.compute_delay!r}")

    @property
    def sample_rate(self) -> float:
        """The sampling frequency ``2 pi / T`` in rad/s."""
        return 2.0 * math.pi / self.period

    @property
    def nyquist(self) -> float:
        """The Nyquist frequency ``pi / T`` in rad/s."""
        return math.pi / self.period

    def to_json(self) -> dict:
        """``{"period", "compute_delay"}``."""
        return {"period": self.period, "compute_delay": self.compute_delay}


def parse_sampling(table, source: str, number) -> Sampling:
    """Validate a ``[sampling]`` table.

    Parameters
    ----------
    table : object
        The parsed TOML value of ``sampling``.
    source : str
        The file, for messages.
    number : callable
        The schema's number validator ``number(value, source, key, lo=, lo_open=)``
        (so that magnitudes, types and finiteness are checked as for every key).

    Returns
    -------
    Sampling

    Raises
    ------
    InputError
        Not a table, an unknown or missing key, a period that is not > 0, a
        compute delay outside ``[0, period]``.
    """
    if not isinstance(table, dict):
        raise InputError(f"must be a table ([sampling]), got {type(table).__name__}", source,
                         "sampling")
    for key in table:
        if key not in SAMPLING_KEYS:
            name = key if len(key) <= 60 else f"{key[:57]}..."
            raise InputError(f"unknown key; [sampling] takes {', '.join(SAMPLING_KEYS)}", source,
                             f"sampling.{name}")
    if "period" not in table:
        raise InputError("missing; [sampling] needs the sample time in seconds", source,
                         "sampling.period")
    period = number(table["period"], source, "sampling.period", lo=0, lo_open=True)
    tau = number(table.get("compute_delay", 0.0), source, "sampling.compute_delay", lo=0)
    if tau > period:
        raise InputError(f"must not exceed the period {period:g} s, got {tau:g} s (an output "
                         "computed later than the next sample belongs to a longer period)",
                         source, "sampling.compute_delay")
    return Sampling(period=period, compute_delay=tau)


def check_delay_samples(sampling: Sampling, dead_time: float, source: str) -> None:
    """Refuse a dead time plus computation delay of more than ``MAX_DELAY_SAMPLES`` periods.

    Raises
    ------
    InputError
        Naming ``sampling.period``, with the number of periods and the limit.
    """
    from synth.problem.limits import MAX_DELAY_SAMPLES

    periods = (dead_time + sampling.compute_delay) / sampling.period
    if periods > MAX_DELAY_SAMPLES:
        raise InputError(f"the dead time plus the computation delay span {periods:.4g} periods; "
                         f"synth's sampled-loop verifier holds at most {MAX_DELAY_SAMPLES} "
                         "(each period of delay is a state of the loop): sample slower",
                         source, "sampling.period")


def asked_bandwidth(requirements) -> tuple[float, str] | None:
    """The closed-loop bandwidth (rad/s) the requirements ask for, and what asks for it.

    A 10-90 % rise time ``tr`` asks for about ``ln(9) / tr`` (the bandwidth of
    a first-order loop with that rise time); a settling time ``Ts`` in a band
    of ``p`` percent for at least the decay rate ``ln(100 / p) / Ts`` of the
    requirement region (a first-order loop with that pole has that
    bandwidth).  The larger of the two is returned.

    Parameters
    ----------
    requirements : synth.problem.requirements.Requirements

    Returns
    -------
    (float, str) or None
        The bandwidth and the requirement (its text, with its value) that
        sets it; ``None`` when no speed requirement is given.

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and A. Emami-Naeini, *Feedback Control
       of Dynamic Systems*, Pearson, ch. 3 (rise time, settling time and
       bandwidth of first- and second-order systems), from memory.
    """
    from synth.problem.catalogue import requirement_for

    found: list[tuple[float, str]] = []
    tr = requirements.limit("rise_time")
    if tr is not None and tr > 0:
        found.append((math.log(9.0) / tr, f"{requirement_for('rise_time').key} = {tr:g} s"))
    ts = requirements.limit("settling_time")
    if ts is not None and ts > 0:
        rate = math.log(100.0 / requirements.settling_band) / ts
        found.append((rate, f"{requirement_for('settling_time').key} = {ts:g} s"))
    if not found:
        return None
    return max(found, key=lambda x: x[0])


@dataclass(frozen=True)
class SamplingAdvice:
    """The sample rate against the bandwidth the requirements ask for.

    Attributes
    ----------
    sampling : Sampling
    bandwidth : float or None
        The asked-for closed-loop bandwidth in rad/s (``None``: no speed requirement).
    asked_by : str
        The requirement that asks for it.
    ratio : float or None
        Sample rate ``2 pi / T`` over that bandwidth.
    message : str or None
        ``"warning: ..."`` below :data:`RATE_WARNING` times, ``"note: ..."``
        below :data:`RATE_NOTE` times, ``None`` otherwise.
    """

    sampling: Sampling
    bandwidth: float | None
    asked_by: str
    ratio: float | None
    message: str | None

    def to_json(self) -> dict:
        """The design JSON's document-level ``sampling`` object."""
        return {**self.sampling.to_json(), "sample_rate": self.sampling.sample_rate,
                "nyquist_frequency": self.sampling.nyquist,
                "asked_bandwidth": self.bandwidth, "asked_by": self.asked_by or None,
                "ratio": self.ratio, "message": self.message}


def rate_message(ratio: float, sample_rate: float, bandwidth: float, what: str) -> str | None:
    """The warning or note on a sample rate ``ratio`` times a bandwidth (``None`` when ample).

    Parameters
    ----------
    ratio : float
        ``sample_rate / bandwidth``.
    sample_rate, bandwidth : float
        rad/s, for the text.
    what : str
        Which bandwidth, e.g. ``"the closed-loop bandwidth the requirements ask for"``.
    """
    text = (f"sampling at {sample_rate:.4g} rad/s is {ratio:.3g} times {what} ({bandwidth:.4g} "
            "rad/s)")
    if ratio < RATE_WARNING:
        return (f"warning: {text}; common practice asks for 10 to 30 times (Franklin, Powell and "
                "Workman): below 10 the hold and the computation delay take a large share of "
                "the phase margin, so sample faster or expect the sampled loop to fall short of "
                "the continuous design")
    if ratio < RATE_NOTE:
        return (f"note: {text}; common practice asks for 10 to 30 times, so check the sampled "
                "loop's margins and overshoot")
    return None


def sampling_advice(sampling: Sampling, requirements) -> SamplingAdvice:
    """Compare the sample rate with the bandwidth the requirements ask for.

    Parameters
    ----------
    sampling : Sampling
    requirements : synth.problem.requirements.Requirements

    Returns
    -------
    SamplingAdvice

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
       Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 11, from memory.
    """
    asked = asked_bandwidth(requirements)
    if asked is None:
        return SamplingAdvice(sampling, None, "", None, None)
    bw, by = asked
    ratio = sampling.sample_rate / bw
    msg = rate_message(ratio, sampling.sample_rate, bw,
                       f"the closed-loop bandwidth {by} asks for")
    return SamplingAdvice(sampling, bw, by, ratio, msg)


def hold_delay(sampling: Sampling) -> float:
    """The delay the search adds for the hold and the computation: ``T / 2 + tau`` (seconds).

    A zero-order hold lags like a dead time of half a period at frequencies
    well below the Nyquist frequency, and the computation delay ``tau`` is a
    dead time (common practice; Franklin, Powell and Workman, ch. 6, from
    memory).
    """
    return 0.5 * sampling.period + sampling.compute_delay


def search_problem(problem):
    """The problem the search designs for when the controller runs sampled.

    The controller is designed as a continuous compensator and mapped to z
    afterwards (docs/methods.md); for the designs to come out feasible in the
    sampled loop, the search's loop model carries the hold and the
    computation delay as an extra dead time :func:`hold_delay` (its Pade form
    in the engine, exact in the search's frequency sweep) and no ``[sampling]``
    of its own (it is the continuous problem the search solves).  Every
    candidate is then verified on the sampled-data loop itself.  Without
    ``[sampling]`` the problem is returned unchanged.

    Parameters
    ----------
    problem : synth.problem.requirements.Problem

    Returns
    -------
    synth.problem.requirements.Problem

    References
    ----------
    .. [1] G. F. Franklin, J. D. Powell and M. L. Workman, *Digital Control of
       Dynamic Systems*, 3rd ed., Addison-Wesley, 1998, ch. 6 (design by
       emulation; the hold approximated by a delay of T/2), from memory.
    """
    from dataclasses import replace

    if problem.sampling is None:
        return problem
    plant = problem.plant
    extra = hold_delay(problem.sampling)
    # a continuous problem: the hold is in the plant's model now, not in [sampling]
    return replace(problem, plant=replace(plant, dead_time=plant.dead_time + extra),
                   sampling=None)
