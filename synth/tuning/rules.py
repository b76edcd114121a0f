"""Published PI and PID tuning rules, each from its paper.

Every rule is a plain function of a :class:`~synth.tuning.reduction.ProcessModel`
and returns a :class:`Tuning`: the parallel-form gains ``kp``, ``ki``,
``kd`` and the derivative filter, with the rule's own parameters kept in
``notes``.  The rules:

* :func:`ziegler_nichols` -- the step-response method of Ziegler and
  Nichols (1942), from ``a = K L / T`` and ``L``;
* :func:`simc` -- Skogestad's SIMC rules (2003), ``tau_c = theta`` by
  default; PI for a FOPDT model, series PID for a SOPDT model, and the
  integrating cases;
* :func:`amigo` -- Astrom and Hagglund's AMIGO formulas (2004) from K, L, T
  (and the integrating case from Kv, L);
* :func:`imc` -- the IMC-PID settings of Rivera, Morari and Skogestad
  (1986) for a FOPDT model with the first-order Pade form of the delay.

Derivative filter.  Where a paper gives none, the derivative term is
``kd s / (Tf s + 1)`` with ``Tf = Td / N`` and ``N = 10``
(:data:`DEFAULT_FILTER_N`; common practice, Astrom and Hagglund, *Advanced
PID Control*, 2006, section 3.3).  The IMC PID carries its own filter on the
whole controller, ``(kp + ki/s + kd s) / (Tf s + 1)``.

These settings come from a linear model and from rules that aim at typical
robustness, not at any particular requirement; check every one against the
requirements, saturation, delay and nonlinearity before it runs a machine.

References
----------
.. [1] J. G. Ziegler and N. B. Nichols, "Optimum settings for automatic
   controllers", Trans. ASME 64 (1942) 759-768.
.. [2] S. Skogestad, "Simple analytic rules for model reduction and PID
   controller tuning", J. Process Control 13 (2003) 291-309.
.. [3] K. J. Astrom and T. Hagglund, "Revisiting the Ziegler-Nichols step
   response method for PID control", J. Process Control 14 (2004) 635-650.
.. [4] D. E. Rivera, M. Morari and S. Skogestad, "Internal model control. 4.
   PID controller design", Ind. Eng. Chem. Process Des. Dev. 25 (1986)
   252-265.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from synth.tuning.reduction import ProcessModel, RuleNotApplicable

__all__ = ["DEFAULT_FILTER_N", "RULES", "Tuning", "amigo", "imc", "simc", "ziegler_nichols"]

#: Td / Tf of the derivative filter where the paper gives none (common practice).
DEFAULT_FILTER_N = 10.0


@dataclass(frozen=True)
class Tuning:
    """PI or PID settings from a published rule.

    The controller is ``kp + ki/s + kd s/(Tf s + 1)`` when ``filter_on`` is
    ``"derivative"``, and ``(kp + ki/s + kd s)/(Tf s + 1)`` when it is
    ``"controller"``.

    Attributes
    ----------
    rule : str
        "Ziegler-Nichols", "SIMC", "AMIGO" or "IMC".
    structure : str
        "PI" or "PID".
    kp, ki, kd : float
        Parallel-form gains (``ki = kp / Ti``, ``kd = kp Td``).
    filter_time : float
        Tf (0: no filter; a PI has none unless ``filter_on == "controller"``).
    filter_on : str
        "derivative" or "controller".
    model : ProcessModel
        The model the rule was applied to.
    notes : tuple of str
        The rule's own parameters and choices, in words.
    """

    rule: str
    structure: str
    kp: float
    ki: float
    kd: float = 0.0
    filter_time: float = 0.0
    filter_on: str = "derivative"
    model: ProcessModel | None = None
    notes: tuple[str, ...] = ()

    @property
    def ti(self) -> float:
        """Integral time ``kp / ki``."""
        return self.kp / self.ki

    @property
    def td(self) -> float:
        """Derivative time ``kd / kp``."""
        return self.kd / self.kp

    @property
    def label(self) -> str:
        return f"{self.rule} {self.structure}"

    def transfer_function(self) -> tuple[np.ndarray, np.ndarray]:
        """``(num, den)`` of C(s), descending powers of s.

        Raises
        ------
        ValueError
            For a derivative term without a filter (improper controller).
        """
        kp, ki, kd, tf = self.kp, self.ki, self.kd, self.filter_time
        if self.filter_on == "controller":
            num = np.array([kd, kp, ki])
            den = np.array([tf, 1.0, 0.0])
        elif kd == 0.0:
            num, den = np.array([kp, ki]), np.array([1.0, 0.0])
        elif tf > 0.0:
            num = np.array([kp * tf + kd, kp + ki * tf, ki])
            den = np.array([tf, 1.0, 0.0])
        else:
            raise ValueError("a derivative term needs a filter time constant")
        num = np.trim_zeros(num, "f")
        den = np.trim_zeros(den, "f")
        return num, den


def _pid(rule, model, kp, ti, td, n_filter, notes) -> Tuning:
    """A parallel PID from kp, Ti, Td with the derivative filter Tf = Td / N."""
    return Tuning(rule=rule, structure="PID", kp=kp, ki=kp / ti, kd=kp * td,
                  filter_time=td / n_filter, model=model,
                  notes=(*notes, f"derivative filter Tf = Td/{n_filter:g}"))


def _first_order(model: ProcessModel, rule: str) -> tuple[float, float, float]:
    """``(K, L, T)`` of a FOPDT model, ``(Kv, L, inf)`` of an integrating one."""
    if model.order > 1:
        raise ValueError(f"{rule} needs a first-order (or pure integrating) model, "
                         f"got order {model.order}")
    if model.integrating:
        return model.gain, model.dead_time, math.inf
    T = model.time_constants[0] if model.time_constants else 0.0
    return model.gain, model.dead_time, T


def _check_structure(structure: str) -> None:
    if structure not in ("PI", "PID"):
        raise ValueError(f"structure must be 'PI' or 'PID', got {structure!r}")


def ziegler_nichols(model: ProcessModel, structure: str = "PI",
                    filter_n: float = DEFAULT_FILTER_N) -> Tuning:
    """Ziegler and Nichols' step-response rule from ``a = K L / T`` and ``L``.

    ``PI: kp = 0.9/a, Ti = 3 L``;  ``PID: kp = 1.2/a, Ti = 2 L, Td = L/2``.
    For an integrating model ``a = Kv L``.  The PI integral time is the
    ``3 L`` of Astrom and Hagglund's table [3]_ (Table 1); the 1942 paper
    states it as a reset rate of 0.3/L repeats per unit time, i.e.
    ``Ti = 3.3 L``.

    Parameters
    ----------
    model : ProcessModel
        First order (K, L, T; use the ``"tangent"`` step-response model so
        that ``a`` is the steepest tangent's intercept) or integrating (Kv, L).
    structure : {"PI", "PID"}
    filter_n : float
        ``Td / Tf`` of the derivative filter (the paper gives none).

    References
    ----------
    .. [1] Ziegler and Nichols (1942), the "reaction curve" settings.
    .. [3] Astrom and Hagglund (2004), Table 1.
    """
    _check_structure(structure)
    K, L, T = _first_order(model, "Ziegler-Nichols")
    a = K * L if math.isinf(T) else K * L / T if T > 0 else math.inf
    if not (L > 0 and math.isfinite(a) and a != 0):
        raise RuleNotApplicable("Ziegler-Nichols needs a positive apparent dead time and lag")
    notes = (f"a = {a:.4g}, L = {L:.4g}",)
    if structure == "PI":
        kp = 0.9 / a
        return Tuning("Ziegler-Nichols", "PI", kp, kp / (3.0 * L), model=model, notes=notes)
    return _pid("Ziegler-Nichols", model, 1.2 / a, 2.0 * L, 0.5 * L, filter_n, notes)


def simc(model: ProcessModel, structure: str = "PI", tau_c: float | None = None,
         filter_n: float = DEFAULT_FILTER_N) -> Tuning:
    """Skogestad's SIMC settings.

    FOPDT ``k exp(-theta s)/(tau1 s + 1)``, PI:
    ``Kc = tau1 / (k (tau_c + theta))``, ``tauI = min(tau1, 4 (tau_c + theta))``.
    SOPDT ``.../((tau1 s + 1)(tau2 s + 1))``, series PID: the same Kc and
    tauI and ``tauD = tau2``.  Integrating ``k' exp(-theta s)/s`` (times
    ``1/(tau2 s + 1)`` for the PID): ``Kc = 1/(k' (tau_c + theta))``,
    ``tauI = 4 (tau_c + theta)``, ``tauD = tau2``.  The series PID
    ``Kc (1 + 1/(tauI s))(tauD s + 1)`` is returned in parallel form
    (``kp = Kc (1 + tauD/tauI)``, ``ki = Kc/tauI``, ``kd = Kc tauD``).  A
    model with more lags than the structure uses is first reduced by the
    half rule.

    Parameters
    ----------
    model : ProcessModel
        Normally from :func:`synth.tuning.reduction.half_rule` (order 1 for
        PI, order 2 for PID).
    structure : {"PI", "PID"}
    tau_c : float, optional
        Desired closed-loop time constant; default ``theta`` ("tight control,
        good robustness", [2]_ section 4).
    filter_n : float
        ``Td / Tf`` of the derivative filter (the paper gives none).

    References
    ----------
    .. [2] Skogestad (2003), eqs. (20)-(23), (27)-(29) and Table 4 (from memory).
    """
    _check_structure(structure)
    want = 1 if structure == "PI" else 2
    if model.order > want:
        model = model.reduced(want)
    theta = model.dead_time
    tc = theta if tau_c is None else float(tau_c)
    if not tc + theta > 0:
        raise RuleNotApplicable("SIMC needs tau_c + theta > 0: the model has no dead time, "
                                "so choose tau_c")
    taus = model.time_constants
    if model.integrating:
        kc = 1.0 / (model.gain * (tc + theta))
        ti = 4.0 * (tc + theta)
        td = taus[0] if (structure == "PID" and taus) else 0.0
    else:
        if not taus:
            raise RuleNotApplicable("SIMC needs at least one lag (a pure delay calls for "
                                    "pure integral control)")
        kc = taus[0] / (model.gain * (tc + theta))
        ti = min(taus[0], 4.0 * (tc + theta))
        td = taus[1] if (structure == "PID" and len(taus) > 1) else 0.0
    notes = (f"tau_c = {tc:.4g}, theta = {theta:.4g}",)
    if structure == "PI":
        return Tuning("SIMC", "PI", kc, kc / ti, model=model, notes=notes)
    if td == 0.0:
        raise RuleNotApplicable("SIMC PID needs a second lag (tauD = tau2); the model has one")
    kp = kc * (1.0 + td / ti)
    return Tuning("SIMC", "PID", kp, kc / ti, kc * td, filter_time=(kc * td / kp) / filter_n,
                  model=model, notes=(*notes, f"series form Kc = {kc:.4g}, tauI = {ti:.4g}, "
                                      f"tauD = {td:.4g}", f"derivative filter Tf = Td/{filter_n:g}"))


def amigo(model: ProcessModel, structure: str = "PI",
          filter_n: float = DEFAULT_FILTER_N) -> Tuning:
    """Astrom and Hagglund's AMIGO settings from K, L, T (or Kv, L).

    PI: ``kp = 0.15/K + (0.35 - L T/(L + T)^2) T/(K L)``,
    ``Ti = 0.35 L + 13 L T^2/(T^2 + 12 L T + 7 L^2)``;
    integrating: ``kp = 0.35/(Kv L)``, ``Ti = 13.4 L``.
    PID: ``kp = (0.2 + 0.45 T/L)/K``, ``Ti = L (0.4 L + 0.8 T)/(L + 0.1 T)``,
    ``Td = 0.5 L T/(0.3 L + T)``; integrating: ``kp = 0.45/(Kv L)``,
    ``Ti = 8 L``, ``Td = 0.5 L``.

    Parameters
    ----------
    model : ProcessModel
        First order or integrating; the paper identifies K, L, T from the
        step response (``"tangent-63"``).
    structure : {"PI", "PID"}
    filter_n : float
        ``Td / Tf`` of the derivative filter.

    References
    ----------
    .. [3] Astrom and Hagglund (2004), eqs. (6), (7) (PI), (9), (10) (PID)
       and the integrating-process limits (from memory).
    """
    _check_structure(structure)
    K, L, T = _first_order(model, "AMIGO")
    if not L > 0:
        raise RuleNotApplicable("AMIGO needs a positive apparent dead time L")
    notes = (f"K = {K:.4g}, L = {L:.4g}, T = {T:.4g}",)
    if structure == "PI":
        if math.isinf(T):
            kp, ti = 0.35 / (K * L), 13.4 * L
        else:
            kp = 0.15 / K + (0.35 - L * T / (L + T) ** 2) * T / (K * L)
            ti = 0.35 * L + 13.0 * L * T * T / (T * T + 12.0 * L * T + 7.0 * L * L)
        return Tuning("AMIGO", "PI", kp, kp / ti, model=model, notes=notes)
    if math.isinf(T):
        kp, ti, td = 0.45 / (K * L), 8.0 * L, 0.5 * L
    else:
        kp = (0.2 + 0.45 * T / L) / K
        ti = L * (0.4 * L + 0.8 * T) / (L + 0.1 * T)
        td = 0.5 * L * T / (0.3 * L + T)
    if td == 0.0:
        raise RuleNotApplicable("AMIGO PID has no derivative action for a pure delay")
    return _pid("AMIGO", model, kp, ti, td, filter_n, notes)


def imc(model: ProcessModel, structure: str = "PI", lam: float | None = None) -> Tuning:
    """IMC-PID settings of Rivera, Morari and Skogestad for a FOPDT model.

    With ``exp(-theta s) ~ (1 - theta s/2)/(1 + theta s/2)`` and the IMC
    filter ``1/(lam s + 1)``:

    PI: ``K kp = (2 tau + theta)/(2 lam)``, ``Ti = tau + theta/2``,
    recommended ``lam > 1.7 theta``.
    PID with filter: ``K kp = (2 tau + theta)/(2 (lam + theta))``,
    ``Ti = tau + theta/2``, ``Td = tau theta/(2 tau + theta)``, filter on the
    whole controller ``Tf = lam theta/(2 (lam + theta))``; recommended
    ``lam > 0.8 theta``.

    Parameters
    ----------
    model : ProcessModel
        FOPDT (not integrating), normally from the half rule.
    structure : {"PI", "PID"}
    lam : float, optional
        The IMC filter time constant; default the paper's lowest recommended
        value: ``1.7 theta`` (PI) or ``0.8 theta`` (PID).

    References
    ----------
    .. [4] Rivera, Morari and Skogestad (1986), Table 1, the FOPDT rows with
       the first-order Pade form (from memory).
    """
    _check_structure(structure)
    if model.integrating:
        raise RuleNotApplicable("the IMC-PID table is for self-regulating (FOPDT) models")
    K, theta, tau = _first_order(model, "IMC")
    if not theta > 0:
        raise RuleNotApplicable("IMC-PID needs a positive dead time to set lambda")
    lam = (1.7 if structure == "PI" else 0.8) * theta if lam is None else float(lam)
    ti = tau + theta / 2.0
    notes = (f"lambda = {lam:.4g}, tau = {tau:.4g}, theta = {theta:.4g}",)
    if structure == "PI":
        kp = (2.0 * tau + theta) / (2.0 * K * lam)
        return Tuning("IMC", "PI", kp, kp / ti, model=model, notes=notes)
    kp = (2.0 * tau + theta) / (2.0 * K * (lam + theta))
    td = tau * theta / (2.0 * tau + theta)
    tf = lam * theta / (2.0 * (lam + theta))
    return Tuning("IMC", "PID", kp, kp / ti, kp * td, filter_time=tf, filter_on="controller",
                  model=model, notes=(*notes, "filter on the whole controller"))


#: The rules by name, in the order reports list them.
RULES = MappingProxyType({"Ziegler-Nichols": ziegler_nichols, "SIMC": simc, "AMIGO": amigo,
                          "IMC": imc})
