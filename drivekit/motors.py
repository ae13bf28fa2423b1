"""Motors: armature-controlled DC motor and induction motor (linear slip region)."""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from .units import ParameterError, ParamSpec, convert_fields, param, to_si

__all__ = ["DCMotor", "InductionMotor"]


@dataclasses.dataclass(frozen=True, kw_only=True)
class DCMotor:
    """Armature-controlled DC motor with constant field.

    Parameters
    ----------
    R : float, Quantity or str
        Armature resistance. [ohm]
    L : float, Quantity or str
        Armature inductance; 0 makes the current follow the voltage at once. [H]
    k : float, Quantity or str
        Torque constant, equal to the back-emf constant in SI units. [N*m/A]
    J : float, Quantity or str
        Rotor inertia. [kg*m**2]
    b : float, Quantity or str
        Viscous friction of the rotor and its bearings. [N*m*s/rad]
    max_voltage : float, Quantity or str, optional
        Highest armature voltage the supply gives; operating points that need
        more are refused. [V]
    max_current : float, Quantity or str, optional
        Highest armature current allowed (drive current limit). [A]
    name : str
        Label for reports.

    Notes
    -----
    .. math::

        L \\frac{di}{dt} = u - R i - k \\omega_m, \\qquad T_m = k i

    so that, with only the rotor on the shaft,

    .. math:: \\frac{\\omega_m(s)}{u(s)} = \\frac{k}{(L s + R)(J s + b) + k^2}

    References
    ----------
    Nise, *Control Systems Engineering*, 6th ed., §2.8 (DC motor transfer
    function); the University of Michigan / Carnegie Mellon "Control
    Tutorials for MATLAB and Simulink", DC Motor Speed: System Modeling.

    Examples
    --------
    The Control Tutorials' motor (J = 0.01, b = 0.1, K = 0.01, R = 1,
    L = 0.5) has a steady speed of 0.0999 rad/s per volt:

    >>> m = DCMotor(R=1.0, L=0.5, k=0.01, J=0.01, b=0.1)
    >>> round(m.k / (m.R * m.b + m.k**2), 4)
    0.0999
    """

    R: Any = param("ohm", "armature resistance", minimum=0.0, include_minimum=False)
    L: Any = param("H", "armature inductance", minimum=0.0)
    k: Any = param("N*m/A", "torque constant", minimum=0.0, include_minimum=False)
    J: Any = param("kg*m**2", "rotor inertia", minimum=0.0, include_minimum=False)
    b: Any = param("N*m*s/rad", "viscous friction", default=0.0, minimum=0.0)
    max_voltage: Any = param("V", "highest armature voltage", default=None, minimum=0.0, include_minimum=False)
    max_current: Any = param("A", "armature current limit", default=None, minimum=0.0, include_minimum=False)
    name: str = "DC motor"

    #: What the motor's input is, for reports and linear models.
    input_quantity = "armature voltage"
    input_unit = "V"

    #: Shortest electrical time constant L/R accepted other than 0 [s]; below it
    #: the model is numerically stiff to no purpose: give L = 0 instead.
    MIN_ELECTRICAL_TIME_CONSTANT = 1e-7

    def __post_init__(self) -> None:
        convert_fields(self)
        tau = np.asarray(self.L / self.R)
        if np.any((np.asarray(self.L) > 0) & (tau < self.MIN_ELECTRICAL_TIME_CONSTANT)):
            raise ParameterError(
                f"`L`: got {float(np.min(self.L)):.3g} H, expected 0 (negligible) or an electrical time "
                f"constant L/R of at least {self.MIN_ELECTRICAL_TIME_CONSTANT:g} s"
            )

    @property
    def electrical_time_constant(self) -> Any:
        """L / R. [s]"""
        return self.L / self.R

    def current(self, voltage: Any, speed: Any) -> Any:
        """Steady armature current (u - k w) / R. [A] for ``voltage`` [V], ``speed`` [rad/s]."""
        return (voltage - self.k * speed) / self.R

    def no_load_speed(self, voltage: Any) -> Any:
        """Speed with no load and no friction, u / k. [rad/s] for ``voltage`` [V]."""
        return voltage / self.k

    def voltage_for(self, torque: Any, speed: Any) -> Any:
        """Steady voltage that gives an air-gap ``torque`` [N*m] at ``speed`` [rad/s]. [V]"""
        return self.R * torque / self.k + self.k * speed

    @classmethod
    def from_nameplate(
        cls,
        *,
        voltage: Any,
        current: Any,
        speed: Any,
        power: Any,
        J: Any,
        electrical_time_constant: Any = 0.02,
        name: str = "DC motor (estimated from nameplate)",
    ) -> DCMotor:
        """Estimate the model from nameplate values. An estimate, not a measurement.

        Parameters
        ----------
        voltage : float, Quantity or str
            Rated armature voltage. [V]
        current : float, Quantity or str
            Rated armature current. [A]
        speed : float, Quantity or str
            Rated speed. [rad/s]
        power : float, Quantity or str
            Rated output (shaft) power. [W]
        J : float, Quantity or str
            Rotor inertia from the datasheet. [kg*m**2]
        electrical_time_constant : float, Quantity or str
            L/R to assume. [s] Default 20 ms, common practice for industrial
            DC motors, no source.
        name : str
            Label.

        Returns
        -------
        DCMotor

        Notes
        -----
        Assumptions: the losses at rated load, ``V I - P``, are split half to
        armature copper loss ``R I**2`` and half to friction and windage
        ``b w**2`` (a machine designed for best efficiency near rated load has
        its variable and fixed losses about equal; common practice, no
        source). Then ``k = (V - R I) / w`` from the back-emf. The result
        reproduces the nameplate exactly: at rated voltage and torque it runs
        at rated speed and draws rated current. Measure R and L at the
        terminals when you can.

        Examples
        --------
        >>> m = DCMotor.from_nameplate(voltage=440, current=50, speed="1500 rpm", power=20e3, J=0.5)
        >>> round(m.R, 3), round(m.k, 3)
        (0.4, 2.674)
        """
        v = to_si(voltage, "voltage", ParamSpec("V", "rated voltage", minimum=0.0, include_minimum=False))
        i = to_si(current, "current", ParamSpec("A", "rated current", minimum=0.0, include_minimum=False))
        w = to_si(
            speed, "speed", ParamSpec("rad/s", "rated speed", minimum=0.0, include_minimum=False, kind="shaft_speed")
        )
        p = to_si(power, "power", ParamSpec("W", "rated output power", minimum=0.0, include_minimum=False))
        tau = to_si(electrical_time_constant, "electrical_time_constant", ParamSpec("s", "L/R", minimum=0.0))
        losses = v * i - p
        if losses <= 0:
            raise ParameterError(
                f"`power`: got {p:g} W, expected less than the electrical input "
                f"voltage x current = {v * i:g} W (a motor cannot be 100 % efficient)"
            )
        r = 0.5 * losses / i**2
        k = (v - r * i) / w
        b = 0.5 * losses / w**2
        return cls(R=r, L=tau * r, k=k, J=J, b=b, max_voltage=v, name=name)


@dataclasses.dataclass(frozen=True, kw_only=True)
class InductionMotor:
    """Squirrel-cage induction motor fed at variable frequency, in its linear slip region.

    Parameters
    ----------
    rated_power : float, Quantity or str
        Rated shaft power. [W]
    rated_speed : float, Quantity or str
        Rated (full-load) speed, below synchronous speed. [rad/s]
    J : float, Quantity or str
        Rotor inertia. [kg*m**2]
    rated_frequency : float, Quantity or str
        Rated supply frequency. [Hz]
    poles : int
        Number of poles (2, 4, 6, ...). [-]
    b : float, Quantity or str
        Viscous friction of rotor and bearings. [N*m*s/rad]
    rated_current : float, Quantity or str, optional
        Nameplate current, for the current estimate. [A]
    rated_power_factor : float, optional
        Nameplate cos(phi), for the current estimate. [-]
    rated_efficiency : float, optional
        Nameplate efficiency, for the input-power estimate. [-]
    torque_limit : float
        Highest torque the motor and drive give, as a multiple of rated
        torque. [-] Default 1.5: drives are commonly rated 150 % for 60 s
        (common practice, no source).
    name : str
        Label.

    Notes
    -----
    Between no load and rated load the torque of an induction motor is close
    to proportional to slip speed; with constant volts per hertz the slope
    holds at every frequency, so

    .. math::

        T = T_r \\frac{\\omega_s - \\omega}{\\omega_{s,r} - \\omega_r},\\qquad
        \\omega_s = \\frac{4 \\pi f}{p}, \\qquad T_r = P_r / \\omega_r

    Beyond about the rated torque (towards breakdown) the curve bends and this
    model overstates the torque; operating points above ``torque_limit`` are
    refused. The field-weakening range above rated frequency is not modelled.

    References
    ----------
    Chapman, *Electric Machinery Fundamentals*, 5th ed., §6.5 (torque-speed
    characteristic, linear near synchronous speed) and §6.9 (speed control
    by changing the line frequency); section numbers from memory.

    Examples
    --------
    >>> m = InductionMotor(rated_power="55 kW", rated_speed="1480 rpm", J=0.4)
    >>> round(m.rated_torque, 1)
    354.9
    """

    rated_power: Any = param("W", "rated shaft power", minimum=0.0, include_minimum=False)
    rated_speed: Any = param("rad/s", "rated speed", minimum=0.0, include_minimum=False, kind="shaft_speed")
    J: Any = param("kg*m**2", "rotor inertia", minimum=0.0, include_minimum=False)
    rated_frequency: Any = param(
        "Hz", "rated frequency", default=50.0, minimum=0.0, include_minimum=False, kind="frequency"
    )
    poles: int = 4
    b: Any = param("N*m*s/rad", "viscous friction", default=0.0, minimum=0.0)
    rated_current: Any = param("A", "rated current", default=None, minimum=0.0, include_minimum=False)
    rated_power_factor: Any = param(
        "", "rated power factor", default=None, minimum=0.0, include_minimum=False, maximum=1.0
    )
    rated_efficiency: Any = param("", "rated efficiency", default=None, minimum=0.0, include_minimum=False, maximum=1.0)
    torque_limit: Any = param(
        "", "torque limit as a multiple of rated torque", default=1.5, minimum=0.0, include_minimum=False
    )
    name: str = "induction motor"

    input_quantity = "stator frequency"
    input_unit = "Hz"

    def __post_init__(self) -> None:
        convert_fields(self)
        if (
            isinstance(self.poles, bool)
            or not isinstance(self.poles, (int, np.integer))
            or self.poles < 2
            or self.poles % 2
        ):
            raise ParameterError(f"`poles`: got {self.poles!r}, expected an even whole number >= 2")
        sync = self.synchronous_speed(self.rated_frequency)
        if np.any(self.rated_speed >= sync):
            raise ParameterError(
                f"`rated_speed`: got {_rpm(self.rated_speed)}, expected below the synchronous "
                f"speed {_rpm(sync)} of a {self.poles}-pole motor at {_plain(self.rated_frequency)} Hz"
            )

    def synchronous_speed(self, frequency: Any) -> Any:
        """Synchronous speed 4 pi f / poles. [rad/s] for ``frequency`` [Hz]."""
        return 4.0 * math.pi * frequency / self.poles

    @property
    def rated_slip_speed(self) -> Any:
        """Synchronous minus rated speed at rated frequency. [rad/s]"""
        return self.synchronous_speed(self.rated_frequency) - self.rated_speed

    @property
    def rated_torque(self) -> Any:
        """Rated torque P_r / w_r. [N*m]"""
        return self.rated_power / self.rated_speed

    @property
    def torque_slope(self) -> Any:
        """Torque per slip speed T_r / (w_s,r - w_r). [N*m*s/rad]"""
        return self.rated_torque / self.rated_slip_speed

    def torque(self, frequency: Any, speed: Any) -> Any:
        """Air-gap torque at stator ``frequency`` [Hz] and ``speed`` [rad/s]. [N*m]"""
        return self.torque_slope * (self.synchronous_speed(frequency) - speed)

    def frequency_for(self, torque: Any, speed: Any) -> Any:
        """Stator frequency that gives ``torque`` [N*m] at ``speed`` [rad/s]. [Hz]"""
        return (speed + torque / self.torque_slope) * self.poles / (4.0 * math.pi)

    def current(self, torque: Any) -> Any:
        """Estimated stator current at ``torque`` [N*m]; NaN without nameplate data. [A]

        Notes
        -----
        With constant volts per hertz the magnetising current stays about at
        its rated value ``I_r sin(phi_r)`` and the torque-producing current is
        proportional to torque, so
        ``I = I_r sqrt(sin(phi_r)**2 + (cos(phi_r) T / T_r)**2)``.
        An estimate (common practice, no source).
        """
        if self.rated_current is None or self.rated_power_factor is None:
            return math.nan
        pf = self.rated_power_factor
        sin_phi = math.sqrt(max(0.0, 1.0 - pf**2))
        return self.rated_current * np.sqrt(sin_phi**2 + (pf * torque / self.rated_torque) ** 2)


def _rpm(w: Any) -> str:
    return f"{float(np.max(w)) * 60.0 / (2.0 * math.pi):.6g} rpm"


def _plain(x: Any) -> str:
    return f"{float(np.max(x)):g}"
