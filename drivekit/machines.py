"""Driven machines other than pumps: fans (torque rising with speed squared) and conveyors."""

from __future__ import annotations

import dataclasses
from typing import Any

from .units import convert_fields, param

__all__ = ["Conveyor", "Fan"]


@dataclasses.dataclass(frozen=True, kw_only=True)
class Fan:
    """Fan or blower on a fixed duct system: torque rises with the square of speed.

    Parameters
    ----------
    rated_speed : float, Quantity or str
        Speed of the duty point. [rad/s]
    rated_power : float, Quantity or str
        Shaft power at the duty point. [W]
    J : float, Quantity or str
        Inertia of the impeller and shaft. [kg*m**2]
    b : float, Quantity or str
        Viscous friction of the bearings. [N*m*s/rad]
    rated_flow : float, Quantity or str, optional
        Air flow at the duty point, for the flow estimate. [m**3/s]
    name : str
        Label.

    Notes
    -----
    On a fixed system (no damper moving) the fan laws give
    ``Q ~ w``, ``p ~ w**2``, ``P ~ w**3``, so the torque is
    ``T = (P_r / w_r) (w / w_r)**2 + b w``.

    References
    ----------
    ASHRAE Handbook, *HVAC Systems and Equipment*, Ch. "Fans" (fan laws),
    from memory.
    """

    rated_speed: Any = param("rad/s", "duty-point speed", minimum=0.0, include_minimum=False, kind="shaft_speed")
    rated_power: Any = param("W", "duty-point shaft power", minimum=0.0, include_minimum=False)
    J: Any = param("kg*m**2", "impeller inertia", minimum=0.0, include_minimum=False)
    b: Any = param("N*m*s/rad", "viscous friction", default=0.0, minimum=0.0)
    rated_flow: Any = param("m**3/s", "duty-point air flow", default=None, minimum=0.0, include_minimum=False)
    name: str = "fan"

    def __post_init__(self) -> None:
        convert_fields(self)

    def torque(self, speed: Any, flow: Any = None, density: Any = None) -> Any:
        """Shaft torque at ``speed`` [rad/s]. [N*m] (``flow`` and ``density`` are unused.)"""
        r = speed / self.rated_speed
        return self.rated_power / self.rated_speed * r * abs(r) + self.b * speed

    def flow(self, speed: Any) -> Any:
        """Air flow by the fan law Q = Q_r w / w_r; NaN without ``rated_flow``. [m**3/s]"""
        if self.rated_flow is None:
            return float("nan")
        return self.rated_flow * speed / self.rated_speed


@dataclasses.dataclass(frozen=True, kw_only=True)
class Conveyor:
    """Belt conveyor (or other constant-torque machine) seen at its drive pulley.

    Parameters
    ----------
    load_torque : float, Quantity or str
        Torque at the drive pulley to move the loaded belt at steady speed,
        independent of speed (friction and lift). [N*m]
    J : float, Quantity or str
        Inertia of pulleys, idlers, belt and material referred to the drive
        pulley shaft. [kg*m**2]
    b : float, Quantity or str
        Viscous part of the resistance. [N*m*s/rad]
    pulley_diameter : float, Quantity or str, optional
        Drive pulley diameter, for belt speed. [m]
    name : str
        Label.

    Notes
    -----
    ``T = T_load + b w`` for forward running. The belt's own elasticity is
    not modelled; give the transmission a ``stiffness`` to study a flexible
    drive. Referring the belt and load mass m to the pulley gives
    ``J = m (D/2)**2`` (rigid-body kinematics).
    """

    load_torque: Any = param("N*m", "load torque", minimum=0.0)
    J: Any = param("kg*m**2", "inertia at the pulley shaft", minimum=0.0, include_minimum=False)
    b: Any = param("N*m*s/rad", "viscous friction", default=0.0, minimum=0.0)
    pulley_diameter: Any = param("m", "drive pulley diameter", default=None, minimum=0.0, include_minimum=False)
    name: str = "conveyor"

    def __post_init__(self) -> None:
        convert_fields(self)

    def torque(self, speed: Any, flow: Any = None, density: Any = None) -> Any:
        """Shaft torque at ``speed`` [rad/s]. [N*m]"""
        return self.load_torque + self.b * speed

    def belt_speed(self, speed: Any) -> Any:
        """Belt speed w D / 2; NaN without ``pulley_diameter``. [m/s]"""
        if self.pulley_diameter is None:
            return float("nan")
        return speed * self.pulley_diameter / 2.0


@dataclasses.dataclass(frozen=True, kw_only=True)
class NoLoad:
    """A free shaft: the motor (and any rigid gear) with nothing driven, for motor-only studies.

    :class:`~drivekit.drivetrain.DriveTrain` puts one in when no driven
    machine is given, so ``DriveTrain(DCMotor(...))`` is the motor alone, as
    in textbook motor examples. It adds no inertia, friction or torque.

    Parameters
    ----------
    name : str
        Label.
    """

    name: str = "free shaft"
    J = 0.0
    b = 0.0

    def torque(self, speed: Any, flow: Any = None, density: Any = None) -> Any:
        """No torque at any speed. [N*m]"""
        return 0.0 * speed
