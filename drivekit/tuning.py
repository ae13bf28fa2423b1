"""PID tuning by published rules, and a numerical PI tuning for a robustness target.

Every rule has the same shape: ``rule(model, controller="PI", ...) -> PID``,
with the PID in ideal form and SI values (kp in the plant's input unit per
SI unit of its output, times in seconds). ``model`` may be a
:class:`~drivekit.models.FOPDT`, :class:`~drivekit.models.SOPDT`,
:class:`~drivekit.models.IntegratingDeadTime` or a full
:class:`~drivekit.linear.LinearModel`, which is reduced by Skogestad's half
rule (:func:`~drivekit.models.half_rule`) to the model the rule needs.
:data:`RULES` lists the rules for a widget.

:func:`robust_pi` is not a rule of thumb: it finds, on the full linear model
with its exact dead time, the PI with the largest integral gain kp/ti whose
maximum sensitivity Ms stays within a target.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np
import scipy.optimize

from .linear import LinearModel
from .models import FOPDT, SOPDT, IntegratingDeadTime, half_rule
from .pid import PID
from .robust import _frequency_grid, _gain_sign, _ideal, _response_function, robust_pi
from .units import ParameterError

__all__ = [
    "RULES",
    "RuleComparison",
    "RuleResult",
    "amigo",
    "cohen_coon",
    "compare_rules",
    "lambda_tuning",
    "robust_pi",
    "simc",
    "ultimate_gain_period",
    "ziegler_nichols",
    "ziegler_nichols_step",
    "ziegler_nichols_ultimate",
]

Model = FOPDT | SOPDT | IntegratingDeadTime | LinearModel


# -- model handling -------------------------------------------------------------------------
def _check_controller(controller: str, allowed: tuple[str, ...], rule: str) -> None:
    if controller not in allowed:
        raise ParameterError(
            f"`controller`: got {controller!r}, expected one of {', '.join(map(repr, allowed))} for {rule}"
        )


def _first_order(model: Any) -> FOPDT | IntegratingDeadTime:
    """FOPDT (or integrating + dead time) by the half rule where the model is richer."""
    if isinstance(model, FOPDT):
        return model
    if isinstance(model, SOPDT):
        t2 = model.time_constant_2
        return FOPDT(gain=model.gain, time_constant=model.time_constant + t2 / 2, dead_time=model.dead_time + t2 / 2)
    if isinstance(model, IntegratingDeadTime):
        if model.time_constant_2 == 0.0:
            return model
        t2 = model.time_constant_2
        return IntegratingDeadTime(gain=model.gain, dead_time=model.dead_time + t2 / 2)
    if isinstance(model, LinearModel):
        return half_rule(model, order=1)  # type: ignore[return-value]
    raise ParameterError(
        f"`model`: got {type(model).__name__}, expected FOPDT, SOPDT, IntegratingDeadTime or LinearModel"
    )


def _second_order(model: Any) -> SOPDT | IntegratingDeadTime | FOPDT:
    if isinstance(model, LinearModel):
        if sum(1 for p in model.poles if abs(p) > 0) < 2:
            return half_rule(model, order=1)  # one lag: first order is all there is
        return half_rule(model, order=2)
    if isinstance(model, (FOPDT, SOPDT, IntegratingDeadTime)):
        return model
    raise ParameterError(
        f"`model`: got {type(model).__name__}, expected FOPDT, SOPDT, IntegratingDeadTime or LinearModel"
    )


def _need_dead_time(theta: float, rule: str) -> None:
    if theta <= 0:
        raise ParameterError(f"`model`: got a dead time of {theta:g} s, expected a dead time > 0 s for {rule}")


# -- SIMC ---------------------------------------------------------------------------------------
def simc(model: Model, controller: str = "PI", *, tau_c: float | None = None) -> PID:
    """SIMC tuning (Skogestad's IMC rules).

    Parameters
    ----------
    model : FOPDT, SOPDT, IntegratingDeadTime or LinearModel
        The process. A LinearModel is reduced by the half rule (to FOPDT for
        a PI, SOPDT for a PID), as the paper does.
    controller : str
        ``"PI"`` or ``"PID"``. The PID needs a second lag (SOPDT, or an
        integrating model with a lag).
    tau_c : float, optional
        Desired closed-loop time constant; default the effective dead time
        (Skogestad's recommended "tight" choice). [s]

    Returns
    -------
    PID
        Ideal form. The SIMC PID is derived in series form and converted by
        the paper's formula (no filter): ``kp = Kc (1 + tau_D/tau_I)``,
        ``ti = tau_I + tau_D``, ``td = tau_D / (1 + tau_D/tau_I)``.

    Notes
    -----
    Self-regulating ``k e^{-theta s}/((tau1 s+1)(tau2 s+1))``:
    ``Kc = tau1 / (k (tau_c + theta))``, ``tau_I = min(tau1, 4 (tau_c + theta))``,
    ``tau_D = tau2``. Integrating ``k' e^{-theta s}/(s (tau2 s + 1))``:
    ``Kc = 1/(k' (tau_c + theta))``, ``tau_I = 4 (tau_c + theta)``,
    ``tau_D = tau2``. With tau_c = theta the gain margin is about 3 and Ms
    about 1.6-1.7 for FOPDT processes (paper's §4, from memory).

    References
    ----------
    S. Skogestad, "Simple analytic rules for model reduction and PID
    controller tuning", J. Process Control 13 (2003) 291-309, Table 1 (SIMC
    settings) and the series-to-ideal conversion in the same paper (from
    memory). DOI 10.1016/S0959-1524(02)00062-8.
    """
    _check_controller(controller, ("PI", "PID"), "SIMC")
    m: Any = _first_order(model) if controller == "PI" else _second_order(model)
    no_lag = isinstance(m, FOPDT) or (isinstance(m, IntegratingDeadTime) and m.time_constant_2 == 0.0)
    if controller == "PID" and no_lag:
        raise ParameterError(
            "`controller`: got 'PID' for a first-order model, expected 'PI': SIMC gives derivative action "
            "only for a second lag (SOPDT); pass an SOPDT or the full LinearModel"
        )
    theta = m.dead_time
    if tau_c is None:
        if theta <= 0:
            raise ParameterError("`tau_c`: got None for a model without dead time, expected a closed-loop time > 0 s")
        tau_c = theta
    if not (isinstance(tau_c, (int, float)) and math.isfinite(tau_c) and tau_c > 0):
        raise ParameterError(f"`tau_c`: got {tau_c!r} s, expected a closed-loop time constant > 0 s")
    if isinstance(m, IntegratingDeadTime):
        kc = 1.0 / (m.gain * (tau_c + theta))
        tau_i = 4.0 * (tau_c + theta)
        tau_d = m.time_constant_2 if controller == "PID" else 0.0
    else:
        tau1 = m.time_constant
        kc = tau1 / (m.gain * (tau_c + theta))
        tau_i = min(tau1, 4.0 * (tau_c + theta))
        tau_d = m.time_constant_2 if controller == "PID" else 0.0
    return _ideal(kc * (1.0 + tau_d / tau_i), tau_i + tau_d, tau_d / (1.0 + tau_d / tau_i))


# -- lambda (IMC) tuning ----------------------------------------------------------------------
def lambda_tuning(model: Model, controller: str = "PI", *, closed_loop_time_constant: float | None = None) -> PID:
    """Lambda (IMC-PID) tuning: the closed loop follows a first-order response of time constant lambda.

    Parameters
    ----------
    model : FOPDT, SOPDT, IntegratingDeadTime or LinearModel
        The process, reduced to FOPDT (or integrating + dead time) by the half rule.
    controller : str
        ``"PI"`` or ``"PID"`` (PID for self-regulating processes only).
    closed_loop_time_constant : float, optional
        lambda. Default: the open-loop time constant but at least three dead
        times for a self-regulating process, three dead times for an
        integrating one (common practice, no source). [s]

    Returns
    -------
    PID
        Ideal form.

    Notes
    -----
    Implemented (FOPDT ``k, tau, theta``; integrating ``k', theta``):

    * PI, self-regulating: ``kp = tau / (k (lambda + theta))``, ``ti = tau``
      (IMC with ``e^{-theta s} ~ 1 - theta s``; the "lambda tuning" of plant
      practice);
    * PID, self-regulating: ``kp = (2 tau + theta) / (k (2 lambda + theta))``,
      ``ti = tau + theta/2``, ``td = tau theta / (2 tau + theta)`` (IMC with a
      first-order Pade approximation of the dead time); Rivera et al.
      recommend lambda > 0.8 theta;
    * PI, integrating: ``kp = (2 lambda + theta) / (k' (lambda + theta)^2)``,
      ``ti = 2 lambda + theta``.

    Rivera et al. also tabulate a PI from the Pade approximation
    (``kp = (2 tau + theta)/(2 k lambda)``, ``ti = tau + theta/2``); the
    Taylor version is implemented for the PI because it is the one plant
    engineers call lambda tuning (ti equal to the process lag).

    References
    ----------
    D. E. Rivera, M. Morari, S. Skogestad, "Internal model control. 4. PID
    controller design", Ind. Eng. Chem. Process Des. Dev. 25 (1986) 252-265,
    Table I (from memory). Integrating case: I.-L. Chien, P. S. Fruehauf,
    Chem. Eng. Prog. 86 (1990) 33-41, as tabulated in Seborg, Edgar,
    Mellichamp, Doyle, *Process Dynamics and Control*, 3rd ed., Table 12.1
    (from memory).
    """
    _check_controller(controller, ("PI", "PID"), "lambda tuning")
    m = _first_order(model)
    theta = m.dead_time
    lam = closed_loop_time_constant
    if lam is None:
        if isinstance(m, IntegratingDeadTime):
            _need_dead_time(theta, "the default lambda of an integrating process (3 dead times)")
            lam = 3.0 * theta
        else:
            lam = max(m.time_constant, 3.0 * theta)
    if not (isinstance(lam, (int, float)) and math.isfinite(lam) and lam > 0):
        raise ParameterError(f"`closed_loop_time_constant`: got {lam!r} s, expected lambda > 0 s")
    if isinstance(m, IntegratingDeadTime):
        if controller == "PID":
            raise ParameterError("`controller`: got 'PID' for an integrating process, expected 'PI' for lambda tuning")
        return _ideal((2 * lam + theta) / (m.gain * (lam + theta) ** 2), 2 * lam + theta)
    k, tau = m.gain, m.time_constant
    if controller == "PI":
        return _ideal(tau / (k * (lam + theta)), tau)
    return _ideal((2 * tau + theta) / (k * (2 * lam + theta)), tau + theta / 2, tau * theta / (2 * tau + theta))


# -- Ziegler-Nichols --------------------------------------------------------------------------
def ziegler_nichols(*, ultimate_gain: float, ultimate_period: float, controller: str = "PI") -> PID:
    """Ziegler-Nichols ultimate-sensitivity (closed-loop cycling) rule.

    Parameters
    ----------
    ultimate_gain : float
        Proportional gain Ku at which the loop cycles steadily. [input unit / output unit]
    ultimate_period : float
        Period Pu of that cycle. [s]
    controller : str
        ``"P"``, ``"PI"`` or ``"PID"``.

    Returns
    -------
    PID
        Ideal form: P ``0.5 Ku``; PI ``0.45 Ku``, ``ti = Pu/1.2``; PID ``0.6 Ku``,
        ``ti = Pu/2``, ``td = Pu/8``.

    Notes
    -----
    The PID has ti = 4 td exactly, the limit where the ideal and series forms
    have a double zero; the rule is applied to the ideal form, as later
    tables do. Known to give an oscillatory loop (Ms often above 2).

    References
    ----------
    J. G. Ziegler, N. B. Nichols, "Optimum settings for automatic
    controllers", Trans. ASME 64 (1942) 759-768 (ultimate sensitivity method).
    """
    _check_controller(controller, ("P", "PI", "PID"), "Ziegler-Nichols")
    ku, pu = ultimate_gain, ultimate_period
    if not (isinstance(ku, (int, float)) and math.isfinite(ku) and ku != 0):
        raise ParameterError(f"`ultimate_gain`: got {ku!r}, expected a finite nonzero gain")
    if not (isinstance(pu, (int, float)) and math.isfinite(pu) and pu > 0):
        raise ParameterError(f"`ultimate_period`: got {pu!r} s, expected a period > 0 s")
    if controller == "P":
        return _ideal(0.5 * ku)
    if controller == "PI":
        return _ideal(0.45 * ku, pu / 1.2)
    return _ideal(0.6 * ku, pu / 2.0, pu / 8.0)


def ultimate_gain_period(model: Model) -> tuple[float, float]:
    """Ultimate gain and period of a model under proportional control, from its exact frequency response.

    Parameters
    ----------
    model : FOPDT, SOPDT, IntegratingDeadTime or LinearModel
        The process (dead time exact).

    Returns
    -------
    tuple of float
        ``(Ku, Pu)``: Ku = 1/|G(j w180)| with the sign of the process gain
        [input unit / output unit], Pu = 2 pi / w180 [s], at the first
        frequency w180 where the phase reaches -180 degrees.

    Raises
    ------
    ParameterError
        Where the phase never reaches -180 degrees (no ultimate gain).
    """
    g = _response_function(model)
    sign = _gain_sign(model)
    w = _frequency_grid(model, 4000)
    resp = sign * g(w)
    phase = np.unwrap(np.angle(resp))
    below = np.nonzero(phase <= -np.pi)[0]
    if below.size == 0 or below[0] == 0:
        raise ParameterError(
            "`model`: its phase does not reach -180 degrees, expected a process with an ultimate gain "
            "(dead time or at least three lags)"
        )
    i = below[0]

    def imag(x: float) -> float:
        return float((sign * g(np.array([x])))[0].imag)

    w180 = scipy.optimize.brentq(imag, w[i - 1], w[i], xtol=1e-14, rtol=1e-13)
    mag = abs(g(np.array([w180]))[0])
    return sign / mag, 2.0 * math.pi / w180


def ziegler_nichols_ultimate(model: Model, controller: str = "PI") -> PID:
    """Ziegler-Nichols ultimate-sensitivity rule with Ku and Pu computed from the model.

    Parameters
    ----------
    model : FOPDT, SOPDT, IntegratingDeadTime or LinearModel
        The process.
    controller : str
        ``"P"``, ``"PI"`` or ``"PID"``.

    Returns
    -------
    PID
        See :func:`ziegler_nichols` and :func:`ultimate_gain_period`.

    References
    ----------
    J. G. Ziegler, N. B. Nichols, Trans. ASME 64 (1942) 759-768.
    """
    ku, pu = ultimate_gain_period(model)
    return ziegler_nichols(ultimate_gain=ku, ultimate_period=pu, controller=controller)


def ziegler_nichols_step(model: Model, controller: str = "PI") -> PID:
    """Ziegler-Nichols process-reaction-curve (step response) rule.

    Parameters
    ----------
    model : FOPDT, SOPDT, IntegratingDeadTime or LinearModel
        The process, reduced to FOPDT or integrating + dead time.
    controller : str
        ``"P"``, ``"PI"`` or ``"PID"``.

    Returns
    -------
    PID
        Ideal form. With the reaction rate R (steepest slope per unit
        input step, k/tau or k') and lag L (dead time), ``a = R L``:
        P ``1/a``; PI ``0.9/a``, ``ti = L/0.3 = 3.33 L``; PID ``1.2/a``,
        ``ti = 2 L``, ``td = 0.5 L``.

    Notes
    -----
    The 1942 paper gives the PI reset as a reset rate of 0.3/L per minute,
    i.e. ``ti = 3.33 L``; many later tables print ``3 L``. The paper's value
    is implemented.

    References
    ----------
    J. G. Ziegler, N. B. Nichols, "Optimum settings for automatic
    controllers", Trans. ASME 64 (1942) 759-768 (process reaction curve).
    """
    _check_controller(controller, ("P", "PI", "PID"), "the Ziegler-Nichols step rule")
    m = _first_order(model)
    theta = m.dead_time
    _need_dead_time(theta, "the Ziegler-Nichols step rule")
    rate = m.gain if isinstance(m, IntegratingDeadTime) else m.gain / m.time_constant
    a = rate * theta
    if controller == "P":
        return _ideal(1.0 / a)
    if controller == "PI":
        return _ideal(0.9 / a, theta / 0.3)
    return _ideal(1.2 / a, 2.0 * theta, 0.5 * theta)


# -- Cohen-Coon -------------------------------------------------------------------------------
def cohen_coon(model: Model, controller: str = "PI") -> PID:
    """Cohen-Coon rule for a self-regulating FOPDT process.

    Parameters
    ----------
    model : FOPDT, SOPDT or LinearModel
        The process, reduced to FOPDT (k, tau, theta); r = theta/tau.
    controller : str
        ``"P"``, ``"PI"`` or ``"PID"``.

    Returns
    -------
    PID
        Ideal form:

        * P: ``kp = (tau/(k theta)) (1 + r/3)``;
        * PI: ``kp = (tau/(k theta)) (0.9 + r/12)``,
          ``ti = theta (30 + 3 r)/(9 + 20 r)``;
        * PID: ``kp = (tau/(k theta)) (4/3 + r/4)``,
          ``ti = theta (32 + 6 r)/(13 + 8 r)``, ``td = 4 theta/(11 + 2 r)``.

    Notes
    -----
    The PI gain factor is ``0.9 + r/12``; a misprint ``1.1 + r/12`` circulates
    and is not used. Designed for a quarter-amplitude decay: oscillatory.

    References
    ----------
    G. H. Cohen, G. A. Coon, "Theoretical consideration of retarded
    control", Trans. ASME 75 (1953) 827-834; as tabulated in Seborg, Edgar,
    Mellichamp, Doyle, *Process Dynamics and Control*, 3rd ed., Table 12.5
    (from memory).
    """
    _check_controller(controller, ("P", "PI", "PID"), "Cohen-Coon")
    m = _first_order(model)
    if isinstance(m, IntegratingDeadTime):
        raise ParameterError("`model`: got an integrating process, expected a self-regulating one for Cohen-Coon")
    k, tau, theta = m.gain, m.time_constant, m.dead_time
    _need_dead_time(theta, "Cohen-Coon")
    if tau <= 0:
        raise ParameterError(f"`model`: got a time constant of {tau:g} s, expected > 0 s for Cohen-Coon")
    r = theta / tau
    base = tau / (k * theta)
    if controller == "P":
        return _ideal(base * (1.0 + r / 3.0))
    if controller == "PI":
        return _ideal(base * (0.9 + r / 12.0), theta * (30.0 + 3.0 * r) / (9.0 + 20.0 * r))
    return _ideal(
        base * (4.0 / 3.0 + r / 4.0), theta * (32.0 + 6.0 * r) / (13.0 + 8.0 * r), 4.0 * theta / (11.0 + 2.0 * r)
    )


# -- AMIGO --------------------------------------------------------------------------------------
def amigo(model: Model, controller: str = "PI") -> PID:
    """AMIGO rules (Åström and Hägglund), robust settings for an Ms of about 1.4.

    Parameters
    ----------
    model : FOPDT, SOPDT, IntegratingDeadTime or LinearModel
        The process, reduced to FOPDT (K, T, L) or integrating + dead time (Kv, L).
    controller : str
        ``"PI"`` or ``"PID"``.

    Returns
    -------
    PID
        Ideal form. For the PID the setpoint weight is b = 0 where the
        normalised dead time ``L/(L + T) <= 0.5``, else b = 1 (2004 paper,
        from memory); the PI keeps b = 1.

    Notes
    -----
    PID, self-regulating (2004 paper): ``K = (0.2 + 0.45 T/L)/Kp``,
    ``Ti = L (0.4 L + 0.8 T)/(L + 0.1 T)``, ``Td = 0.5 L T/(0.3 L + T)``;
    integrating: ``K = 0.45/(Kv L)``, ``Ti = 8 L``, ``Td = 0.5 L``.

    PI, self-regulating (2006 book): ``K = 0.15/Kp + (0.35 - L T/(L + T)^2) T/(Kp L)``,
    ``Ti = 0.35 L + 13 L T^2/(T^2 + 12 L T + 7 L^2)``; integrating:
    ``K = 0.35/(Kv L)``, ``Ti = 13.4 L``.

    Other power-law formulas circulate under the AMIGO name; these are the
    ones implemented. Derived for a wide test batch with 0 < L/(L+T) <= 1;
    conservative for dead-time-dominant processes.

    References
    ----------
    K. J. Åström, T. Hägglund, "Revisiting the Ziegler-Nichols step response
    method for PID control", J. Process Control 14 (2004) 635-650,
    doi:10.1016/j.jprocont.2004.01.002 (PID rule). K. J. Åström,
    T. Hägglund, *Advanced PID Control*, ISA 2006, §7 (AMIGO PI rule) (from
    memory).
    """
    _check_controller(controller, ("PI", "PID"), "AMIGO")
    m = _first_order(model)
    L = m.dead_time
    _need_dead_time(L, "AMIGO")
    if isinstance(m, IntegratingDeadTime):
        kv = m.gain
        if controller == "PI":
            return _ideal(0.35 / (kv * L), 13.4 * L)
        return _ideal(0.45 / (kv * L), 8.0 * L, 0.5 * L, b=0.0)
    kp, T = m.gain, m.time_constant
    if controller == "PI":
        k = 0.15 / kp + (0.35 - L * T / (L + T) ** 2) * T / (kp * L)
        ti = 0.35 * L + 13.0 * L * T**2 / (T**2 + 12.0 * L * T + 7.0 * L**2)
        return _ideal(k, ti)
    k = (0.2 + 0.45 * T / L) / kp
    ti = L * (0.4 * L + 0.8 * T) / (L + 0.1 * T)
    td = 0.5 * L * T / (0.3 * L + T)
    b = 0.0 if L / (L + T) <= 0.5 else 1.0
    return _ideal(k, ti, td, b=b)


#: The published rules, each ``rule(model, controller=...) -> PID``, for lists in the widgets.
RULES: tuple[Callable[..., PID], ...] = (
    simc,
    lambda_tuning,
    amigo,
    ziegler_nichols_step,
    ziegler_nichols_ultimate,
    cohen_coon,
)


# -- comparison on the full model ------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class RuleResult:
    """One rule's controller and how it performs on the full plant model.

    Attributes
    ----------
    rule : str
        Function name of the rule.
    controller : str
        ``"PI"`` or ``"PID"`` as asked.
    pid : PID or None
        The settings (None where the rule does not apply; see ``note``).
    gain : float
        Controller gain in %/% (nan without spans). [%/%]
    gain_margin : float
        [-]
    phase_margin : float
        [deg]
    ms : float
        Peak sensitivity. [-]
    rise_time : float
        10-90 % setpoint-step rise time. [s]
    settling_time : float
        2 % settling time. [s]
    overshoot : float
        Setpoint-step overshoot. [%]
    load_iae : float
        Integrated absolute error after a unit load step at the plant input.
        [output SI unit * s]
    stable : bool
        Closed-loop stability.
    note : str
        Why a rule gave no controller, else "".
    """

    rule: str
    controller: str
    pid: PID | None
    gain: float
    gain_margin: float
    phase_margin: float
    ms: float
    rise_time: float
    settling_time: float
    overshoot: float
    load_iae: float
    stable: bool
    note: str


@dataclasses.dataclass(frozen=True)
class RuleComparison:
    """Every rule's settings and their margins and responses on the full model.

    Attributes
    ----------
    results : tuple of RuleResult
        One per rule, in the order asked.
    """

    results: tuple[RuleResult, ...]

    def table(self) -> list[tuple[str, ...]]:
        """Rows with a header row first: rule, kp, ti [s], td [s], gain [%/%], GM, PM [deg], Ms, ..."""
        rows: list[tuple[str, ...]] = [
            (
                "rule",
                "kp",
                "ti [s]",
                "td [s]",
                "gain [%/%]",
                "GM [-]",
                "PM [deg]",
                "Ms [-]",
                "rise [s]",
                "settling [s]",
                "overshoot [%]",
                "load IAE",
                "note",
            ),
        ]
        for r in self.results:
            if r.pid is None:
                rows.append((f"{r.rule} {r.controller}", *([""] * 11), r.note))
                continue
            rows.append(
                (
                    f"{r.rule} {r.controller}",
                    f"{r.pid.kp:.4g}",
                    f"{r.pid.ti:.4g}",
                    f"{r.pid.td:.3g}",
                    f"{r.gain:.3g}",
                    f"{r.gain_margin:.3g}",
                    f"{r.phase_margin:.3g}",
                    f"{r.ms:.3g}",
                    f"{r.rise_time:.3g}",
                    f"{r.settling_time:.3g}",
                    f"{r.overshoot:.3g}",
                    f"{r.load_iae:.3g}",
                    r.note,
                )
            )
        return rows

    def to_frame(self) -> Any:
        """A pandas DataFrame, one row per rule, SI units."""
        import pandas as pd

        recs = []
        for r in self.results:
            rec = {f.name: getattr(r, f.name) for f in dataclasses.fields(r) if f.name != "pid"}
            rec.update(
                kp=r.pid.kp if r.pid else math.nan,
                ti=r.pid.ti if r.pid else math.nan,
                td=r.pid.td if r.pid else math.nan,
            )
            recs.append(rec)
        return pd.DataFrame.from_records(recs)


def compare_rules(
    plant: LinearModel,
    rules: Sequence[Callable[..., PID]] = RULES,
    *,
    controller: str = "PI",
    measurement_span: tuple[Any, Any] | None = None,
    output_span: tuple[Any, Any] = (0.0, 100.0),
    max_ms: float | None = 1.4,
) -> RuleComparison:
    """Tune the plant by every rule and evaluate each controller on the full model.

    Parameters
    ----------
    plant : LinearModel
        Full plant model with its dead time; rules that need FOPDT/SOPDT get
        its half-rule reduction, the evaluation uses the full model.
    rules : sequence of callables
        Rules of the shape ``rule(model, controller=...) -> PID``; default :data:`RULES`.
    controller : str
        ``"PI"`` or ``"PID"``.
    measurement_span, output_span : tuple, optional
        Spans for the %/% gain (see :meth:`PID.settings`).
    max_ms : float or None
        Also add :func:`robust_pi` with this Ms target (PI only); None to leave it out. [-]

    Returns
    -------
    RuleComparison

    Notes
    -----
    Margins from :func:`drivekit.margins.loop_margins`; setpoint-step
    metrics from :func:`drivekit.margins.step_metrics` of the loop, with the
    setpoint weights each rule sets (the loop takes the PID's setpoint path);
    load IAE from a
    unit step at the plant input (:func:`drivekit.margins.load_metrics`).
    A rule that does not apply (e.g. SIMC PID on a first-order plant) gives
    a row with its reason in ``note``.
    """
    from .loop import Loop
    from .margins import load_metrics, loop_margins, step_metrics
    from .responses import load_response, step_response

    if not isinstance(plant, LinearModel):
        raise ParameterError(f"`plant`: got {type(plant).__name__}, expected a drivekit LinearModel")
    jobs: list[tuple[str, Callable[[], PID]]] = [
        (rule.__name__, functools.partial(rule, plant, controller=controller)) for rule in rules
    ]
    if max_ms is not None and controller == "PI":
        jobs.append((f"robust_pi (Ms {max_ms:g})", lambda: robust_pi(plant, max_ms)))
    results = []
    nan = math.nan
    for name, make in jobs:
        try:
            pid = make()
        except ParameterError as exc:
            results.append(RuleResult(name, controller, None, nan, nan, nan, nan, nan, nan, nan, nan, False, str(exc)))
            continue
        loop = Loop(plant, pid)
        m = loop_margins(loop)
        gain = pid.settings(measurement_span, output_span).gain if measurement_span is not None else nan
        if m.stable:
            sm = step_metrics(step_response(loop))
            lm = load_metrics(load_response(loop))
            rise, settle, over, iae, note = sm.rise_time, sm.settling_time, sm.overshoot, lm.iae, ""
        else:
            rise = settle = over = iae = nan
            note = "closed loop unstable on the full model"
        results.append(
            RuleResult(
                name,
                controller,
                pid,
                gain,
                m.gain_margin,
                m.phase_margin,
                m.ms,
                rise,
                settle,
                over,
                iae,
                m.stable,
                note,
            )
        )
    return RuleComparison(tuple(results))
