"""The plant: a single-input single-output transfer function, optionally with dead time.

The plant keeps its delay-free rational part exactly as the user wrote it and
derives the *engine form*, in which a dead time is replaced by a diagonal Pade
approximant multiplied into numerator and denominator.  Every root-locus and
design result uses the engine form, so the right-half-plane zeros of the Pade
form show wherever they matter.  Time-domain verdicts may still use the exact
delay (see :meth:`Plant.evaluate`).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from synth.errors import InputError
from synth.numerics.poly import common_roots, poly_from_roots, scaled_roots_with_uncertainty, trim
from synth.problem.limits import MAX_COEFFICIENT, MAX_ORDER, check_literal, check_magnitude


@dataclass(frozen=True)
class Plant:
    """A SISO plant ``G(s) = N(s)/D(s) * exp(-s*dead_time)``.

    Parameters
    ----------
    numerator, denominator : tuple of float
        Delay-free rational part, descending powers of s, leading zeros trimmed.
    dead_time : float
        Transport delay in seconds (0 for none).
    pade_order : int
        Order of the diagonal Pade form that stands in for the delay in the engine.
    label : str
        Free text from the requirements file.
    """

    numerator: tuple[float, ...]
    denominator: tuple[float, ...]
    dead_time: float = 0.0
    pade_order: int = 3
    label: str = ""

    # -- construction -------------------------------------------------------------
    @classmethod
    def from_coefficients(cls, numerator, denominator, dead_time: float = 0.0,
                          pade_order: int = 3, label: str = "") -> Plant:
        """Build from coefficient lists; validates finiteness, non-zero and properness."""
        num = np.atleast_1d(np.asarray(numerator, dtype=float))
        den = np.atleast_1d(np.asarray(denominator, dtype=float))
        for name, p in (("numerator", num), ("denominator", den)):
            if p.size == 0:
                raise InputError(f"the {name} is empty", key=f"plant.{name}")
            if not np.all(np.isfinite(p)):
                raise InputError(f"the {name} has a non-finite coefficient", key=f"plant.{name}")
            if not np.any(p != 0.0):
                raise InputError(f"the {name} is identically zero", key=f"plant.{name}")
        for name, p in (("numerator", num), ("denominator", den)):
            if p.size > MAX_ORDER + 1:
                raise InputError(f"the {name} has {p.size} coefficients; synth accepts at most "
                                 f"{MAX_ORDER + 1} (order {MAX_ORDER})", key=f"plant.{name}")
            big = float(np.max(np.abs(p)))
            if big > MAX_COEFFICIENT:
                raise InputError(f"the {name} has a coefficient of magnitude {big:.3g}; synth "
                                 f"accepts at most {MAX_COEFFICIENT:g}, to leave room for the "
                                 "loop's arithmetic", key=f"plant.{name}")
        num, den = trim(num), trim(den)
        if num.size > den.size:
            raise InputError(
                f"the plant is improper: numerator degree {num.size - 1} exceeds "
                f"denominator degree {den.size - 1}", key="plant")
        if not np.isfinite(dead_time) or dead_time < 0:
            raise InputError("dead_time must be a finite number >= 0", key="plant.dead_time")
        if not (1 <= int(pade_order) <= 10):
            raise InputError("dead_time_order must be an integer from 1 to 10",
                             key="plant.dead_time_order")
        plant = cls(tuple(float(x) for x in num), tuple(float(x) for x in den),
                    float(dead_time), int(pade_order), str(label))
        plant._check_engine_range()
        return plant

    @classmethod
    def from_roots(cls, zeros, poles, gain: float, **kw) -> Plant:
        """Build from zeros, poles and gain ``k * prod(s - z) / prod(s - p)``.

        Complex zeros and poles stand for themselves and their conjugates; pass
        each pair once (a conjugate given as well is not duplicated).
        """
        z = _expand_conjugates(zeros, "plant.zeros")
        p = _expand_conjugates(poles, "plant.poles")
        if not np.isfinite(gain) or gain == 0.0:
            raise InputError("gain must be a finite non-zero number", key="plant.gain")
        with np.errstate(over="ignore", invalid="ignore", under="ignore"):
            num, den = poly_from_roots(z, gain), poly_from_roots(p)
        for name, poly in (("zeros", num), ("poles", den)):
            if not np.all(np.isfinite(poly)):
                raise InputError("multiplied out, these give coefficients beyond double "
                                 f"precision's range (above {MAX_COEFFICIENT:g})",
                                 key=f"plant.{name}")
        return cls.from_coefficients(num, den, **kw)

    @classmethod
    def from_expression(cls, text: str, **kw) -> Plant:
        """Build from a rational expression in ``s`` such as ``"4/(s^2*(s+8))"``."""
        from synth.problem.expression import parse_rational

        try:
            num, den = parse_rational(text)
        except InputError as err:
            raise InputError(err.message, key="plant.expression") from None
        return cls.from_coefficients(num, den, **kw)

    # -- derived forms ------------------------------------------------------------
    @cached_property
    def _engine(self) -> tuple[np.ndarray, np.ndarray]:
        return self._engine_unchecked()

    def _engine_unchecked(self) -> tuple[np.ndarray, np.ndarray]:
        num, den = np.asarray(self.numerator), np.asarray(self.denominator)
        if self.dead_time > 0.0:
            from synth.problem.delay import pade

            pn, pd = pade(self.dead_time, self.pade_order)
            num, den = np.polymul(num, pn), np.polymul(den, pd)
        # Normalise so the denominator is monic: keeps coefficient scales sane.
        lead = den[0]
        return trim(num / lead), trim(den / lead)

    def _check_engine_range(self) -> None:
        """Refuse a plant whose engine form double precision cannot hold.

        The Pade form multiplies coefficients by powers of the dead time; a
        coefficient that overflows, or that normalisation pushes below the
        smallest magnitude kept with full precision, would change the plant
        silently (a pole that moves to the origin, a term that vanishes).
        """
        with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
            parts = self._engine_unchecked()
        for name, p in zip(("numerator", "denominator"), parts, strict=True):
            mags = np.abs(p[p != 0.0])
            if (not np.all(np.isfinite(p)) or mags.size == 0
                    or mags.max() > MAX_COEFFICIENT or mags.min() < 1.0 / MAX_COEFFICIENT):
                what = (f"with the dead time {self.dead_time:g} s at Pade order {self.pade_order}"
                        if self.dead_time else "normalised to a monic denominator")
                raise InputError(
                    f"the plant's {name} {what} has coefficients beyond the range synth "
                    f"accepts (magnitudes from {1.0 / MAX_COEFFICIENT:g} to "
                    f"{MAX_COEFFICIENT:g}); rescale time or gain units",
                    key="plant.dead_time" if self.dead_time else f"plant.{name}")

    @property
    def num(self) -> np.ndarray:
        """Engine-form numerator (Pade form of the dead time included)."""
        return self._engine[0].copy()

    @property
    def den(self) -> np.ndarray:
        """Engine-form denominator (monic; Pade form of the dead time included)."""
        return self._engine[1].copy()

    @property
    def rational_num(self) -> np.ndarray:
        return np.asarray(self.numerator, dtype=float)

    @property
    def rational_den(self) -> np.ndarray:
        return np.asarray(self.denominator, dtype=float)

    @property
    def order(self) -> int:
        return self._engine[1].size - 1

    @property
    def relative_degree(self) -> int:
        return self._engine[1].size - self._engine[0].size

    def poles(self) -> np.ndarray:
        """Engine-form poles."""
        return np.roots(self._engine[1]) if self._engine[1].size > 1 else np.zeros(0, complex)

    def zeros(self) -> np.ndarray:
        """Engine-form zeros (the Pade form's right-half-plane zeros included)."""
        return np.roots(self._engine[0]) if self._engine[0].size > 1 else np.zeros(0, complex)

    def evaluate(self, s, exact_delay: bool = True) -> np.ndarray:
        """Frequency response ``G(s)`` at complex points ``s`` (vectorised)."""
        s = np.asarray(s, dtype=complex)
        with np.errstate(divide="ignore", invalid="ignore"):  # a pole on the grid gives inf
            return self._evaluate(s, exact_delay)

    def _evaluate(self, s: np.ndarray, exact_delay: bool) -> np.ndarray:
        if exact_delay:
            g = np.polyval(self.rational_num, s) / np.polyval(self.rational_den, s)
            return g * np.exp(-s * self.dead_time) if self.dead_time else g
        return np.polyval(self._engine[0], s) / np.polyval(self._engine[1], s)

    def dc_gain(self) -> float:
        """``G(0)``; ``inf`` when the plant has a pole at the origin."""
        d0 = self.rational_den[-1]
        n0 = self.rational_num[-1]
        if d0 == 0.0:
            return float("inf") if n0 != 0 else float("nan")
        return float(n0 / d0)

    def common_factors(self) -> list[complex]:
        """Roots shared by the delay-free numerator and denominator (reported, never cancelled)."""
        if len(self.numerator) < 2:
            return []
        return common_roots(self.rational_num, self.rational_den)

    def scaled(self, factor: float) -> Plant:
        """The same plant with its gain multiplied by ``factor``."""
        return Plant(tuple(factor * x for x in self.numerator), self.denominator,
                     self.dead_time, self.pade_order, self.label)

    def describe(self) -> str:
        """A one-line factored description, e.g. ``4 / (s^2 (s+8))``."""
        return describe_factored(self.rational_num, self.rational_den) + (
            f" * exp(-{self.dead_time:g} s)" if self.dead_time else "")

    def to_json(self) -> dict:
        """The contract's plant object (engine form) plus the delay-free part."""
        out = {"numerator": [float(x) for x in self._engine[0]],
               "denominator": [float(x) for x in self._engine[1]]}
        if self.label:
            out["label"] = self.label
        if self.dead_time:
            out["dead_time"] = self.dead_time
            out["dead_time_order"] = self.pade_order
            out["delay_free"] = {"numerator": list(self.numerator),
                                 "denominator": list(self.denominator)}
        return out


_LITERAL = re.compile(r"(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def _expand_conjugates(values, key: str) -> np.ndarray:
    """Parse zeros/poles entries (numbers or ``"a+bj"`` strings) and add missing conjugates."""
    if not isinstance(values, (list, tuple)):
        raise InputError("must be a list of numbers or complex strings like \"-1+2j\"", key=key)
    # each complex entry may stand for two roots; count before converting anything
    if len(values) > MAX_ORDER:
        raise InputError(f"has {len(values)} entries; synth accepts at most {MAX_ORDER} "
                         f"(order {MAX_ORDER})", key=key)
    out: list[complex] = []
    for i, v in enumerate(values):
        if isinstance(v, bool):
            raise InputError(f"entry {i + 1} is a boolean, not a number", key=key)
        if isinstance(v, (int, float)):
            if isinstance(v, float) and not np.isfinite(v):
                raise InputError(f"entry {i + 1} is not finite", key=key)
            check_magnitude(v, None, key, f"entry {i + 1}: ")
            z = complex(float(v))
        elif isinstance(v, str):
            text = v.replace(" ", "").replace("i", "j")
            try:
                z = complex(text) if len(text) <= 64 else None
            except ValueError:
                z = None
            if z is None:
                shown = v if len(v) <= 40 else v[:37] + "..."
                raise InputError(f"entry {i + 1} ({shown!r}) is not a complex number like "
                                 "\"-1+2j\"", key=key) from None
            if not (np.isfinite(z.real) and np.isfinite(z.imag)):
                raise InputError(f"entry {i + 1} is not finite", key=key)
            # a part written as 1e-400 reads as 0: refuse it rather than move the root
            for literal in _LITERAL.findall(text):
                check_literal(literal, None, key, f"entry {i + 1}: ")
        else:
            raise InputError(f"entry {i + 1} is not a number", key=key)
        out.append(z)
    result: list[complex] = []
    pending = list(out)
    while pending:
        z = pending.pop(0)
        result.append(z)
        if z.imag != 0.0:
            c = z.conjugate()
            # a conjugate given explicitly is not duplicated
            for j, w in enumerate(pending):
                if abs(w - c) <= 1e-12 * abs(c):
                    pending.pop(j)
                    break
            result.append(c)
    if len(result) > MAX_ORDER:
        raise InputError(f"give {len(result)} roots with their conjugates; synth accepts at most "
                         f"{MAX_ORDER} (order {MAX_ORDER})", key=key)
    return np.asarray(result, dtype=complex)


def factor_strings(poly) -> tuple[float, list[str]]:
    """Split a real polynomial into its leading gain and readable monic factors."""
    p = trim(poly)
    k = float(p[0])
    if p.size == 1:
        return k, []
    roots = scaled_roots_with_uncertainty(p, tidy=True)[0]  # a split multiple root shows as one
    factors: list[str] = []
    used = np.zeros(roots.size, bool)
    order = np.argsort(-roots.real, kind="stable")
    for i in order:
        if used[i]:
            continue
        r = roots[i]
        used[i] = True
        if abs(r.imag) > 1e-9 * abs(r):
            # pair with its conjugate: s^2 + a s + b
            cand = np.flatnonzero(~used)
            if cand.size:
                j = cand[np.argmin(np.abs(roots[cand] - np.conj(r)))]
                used[j] = True
            a, b = -2 * r.real, abs(r) ** 2
            mid = f"{a:+.4g}s" if abs(a) > 1e-12 * math.sqrt(b) else ""
            factors.append(f"(s^2{mid}{b:+.4g})")
        elif r == 0:  # a trailing zero coefficient gives an exact zero root
            factors.append("s")
        else:
            factors.append(f"(s{-r.real:+.4g})")
    return k, factors


def describe_factored(num, den) -> str:
    """``k (s+z1)... / ((s+p1)...)`` with powers of s collected."""
    kn, fn = factor_strings(num)
    kd, fd = factor_strings(den)

    def join(fs):
        if not fs:
            return "1"
        ns = fs.count("s")
        rest = [f for f in fs if f != "s"]
        head = ["s" if ns == 1 else f"s^{ns}"] if ns else []
        return " ".join(head + rest)

    k = kn / kd
    numtxt = join(fn)
    dentxt = join(fd)
    if numtxt == "1":
        numpart = f"{k:.4g}"
    elif abs(k - 1.0) < 1e-12:
        numpart = numtxt
    else:
        numpart = f"{k:.4g} {numtxt}"
    if dentxt == "1":
        return numpart
    # a single factor needs no extra parentheses: "/ (s+2)", "/ s^2"
    single = len(fd) == 1 or all(f == "s" for f in fd)
    return f"{numpart} / {dentxt}" if single else f"{numpart} / ({dentxt})"
