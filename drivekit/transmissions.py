"""Transmissions between motor and machine: gearbox, chain or belt, rigid or compliant."""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from .units import ParameterError, convert_fields, param

__all__ = ["Transmission"]


@dataclasses.dataclass(frozen=True, kw_only=True)
class Transmission:
    """Speed-reducing (or increasing) transmission: gear, chain or belt drive.

    Parameters
    ----------
    ratio : float
        N = motor speed / machine speed; > 1 reduces speed. [-]
    efficiency : float
        Power out / power in when the motor drives the machine. [-] Default 1
        (lossless): give the gear maker's figure.
    stiffness : float, Quantity or str, optional
        Torsional stiffness of the flexible element (coupling, long shaft,
        chain or belt) referred to the machine shaft; ``None`` for a rigid
        transmission. [N*m/rad]
    damping : float, Quantity or str, optional
        Torsional damping across the flexible element, machine side.
        [N*m*s/rad] Default 0 when ``stiffness`` is given.
    name : str
        Label.

    Notes
    -----
    Rigid: motor and machine turn together as one mass, ``w_m = N w_l``. Seen
    from the motor, load torque T_l becomes ``T_l / (N eta)`` and load inertia
    and friction become ``J_l / (N**2 eta)`` and ``b_l / (N**2 eta)``; with
    eta = 1 these are Nise's reflected values J/N**2 and b/N**2. The gear loss
    is taken as proportional to the torque it carries (constant efficiency),
    so the efficiency divides everything the gear transmits while the motor
    drives, and multiplies it when the machine drives the motor back.

    Compliant: the flexible element sits on the machine side of the gear, so
    the shaft torque is ``T_s = K theta + c (w_m/N - w_l)`` with twist
    ``d theta/dt = w_m/N - w_l``. This adds the torsional resonance

    .. math:: \\omega_{res} = \\sqrt{K \\left(\\frac{1}{J_l}
              + \\frac{1}{N^2 \\eta J_m}\\right)}

    References
    ----------
    Nise, *Control Systems Engineering*, 6th ed., §2.7 (gears: reflected
    impedances); Shigley's *Mechanical Engineering Design*, 10th ed., Ch. 13
    (gear trains, from memory). Two-mass model: Thomson, *Theory of Vibration
    with Applications*, 5th ed., §6.1 (from memory).

    Examples
    --------
    A 100 kg m**2 drum behind a 10:1 gear looks like 1 kg m**2 at the motor:

    >>> Transmission(ratio=10).reflected_inertia(100.0)
    1.0
    """

    ratio: Any = param("", "speed ratio motor/machine", minimum=0.0, include_minimum=False)
    efficiency: Any = param("", "transmission efficiency", default=1.0, minimum=0.0, include_minimum=False, maximum=1.0)
    stiffness: Any = param("N*m/rad", "torsional stiffness", default=None, minimum=0.0, include_minimum=False)
    damping: Any = param("N*m*s/rad", "torsional damping", default=None, minimum=0.0)
    name: str = "transmission"

    def __post_init__(self) -> None:
        convert_fields(self)
        if self.damping is not None and self.stiffness is None:
            raise ParameterError(
                f"`damping`: got {float(np.max(self.damping)):g} N*m*s/rad for a rigid transmission; "
                "expected it only together with `stiffness`"
            )
        if self.stiffness is not None and self.damping is None:
            object.__setattr__(self, "damping", 0.0)

    @property
    def compliant(self) -> bool:
        """True when a stiffness is given (two-mass model)."""
        return self.stiffness is not None

    def reflected_inertia(self, inertia: Any) -> Any:
        """Machine-side inertia seen at the motor while driving, J / (N**2 eta). [kg*m**2]"""
        return inertia / (self.ratio**2 * self.efficiency)

    def reflected_friction(self, friction: Any) -> Any:
        """Machine-side viscous friction seen at the motor, b / (N**2 eta). [N*m*s/rad]"""
        return friction / (self.ratio**2 * self.efficiency)

    def torque_at_motor(self, torque: Any, speed: Any) -> Any:
        """Machine-side ``torque`` [N*m] at machine ``speed`` [rad/s] seen at the motor. [N*m]

        Divided by N eta while the motor drives (power to the machine), by
        N / eta when the machine drives back.
        """
        eta = np.where(torque * speed >= 0.0, self.efficiency, 1.0 / self.efficiency)
        return torque / (self.ratio * eta)

    def resonance(self, motor_inertia: Any, machine_inertia: Any) -> Any:
        """Undamped torsional resonance frequency of the two-mass system. [rad/s]

        Parameters
        ----------
        motor_inertia : float
            Inertia on the motor side of the gear. [kg*m**2]
        machine_inertia : float
            Inertia on the machine side. [kg*m**2]
        """
        if self.stiffness is None:
            return math.inf
        return np.sqrt(
            self.stiffness * (1.0 / machine_inertia + 1.0 / (self.ratio**2 * self.efficiency * motor_inertia))
        )
