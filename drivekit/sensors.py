"""Measurements the controller sees: flow, speed and pressure transmitters."""

from __future__ import annotations

import dataclasses
from typing import Any

from .units import ParameterError, convert_fields, param

__all__ = ["FlowMeter", "PressureSensor", "SpeedSensor"]


@dataclasses.dataclass(frozen=True, kw_only=True)
class _Sensor:
    time_constant: Any = param("s", "first-order lag", default=0.0, minimum=0.0)
    dead_time: Any = param("s", "dead time", default=0.0, minimum=0.0)
    name: str = "sensor"

    #: The drive-train quantity this sensor reads.
    quantity = ""

    def __post_init__(self) -> None:
        convert_fields(self)


@dataclasses.dataclass(frozen=True, kw_only=True)
class FlowMeter(_Sensor):
    """Flow transmitter: a first-order lag (damping, filtering) and a dead time.

    Parameters
    ----------
    time_constant : float, Quantity or str
        Lag of the reading (transmitter damping plus input filter). [s]
    dead_time : float, Quantity or str
        Transport and update delay. [s]
    name : str
        Label.

    Notes
    -----
    ``y(s) = e^{-theta s} / (tau s + 1) Q(s)``. The dead time is kept exact
    in frequency responses and time shifts; a Pade approximation is used only
    where a rational model is asked for.
    """

    name: str = "flow meter"
    quantity = "flow"


@dataclasses.dataclass(frozen=True, kw_only=True)
class SpeedSensor(_Sensor):
    """Speed feedback (encoder or tachometer, or the drive's speed estimate).

    Parameters
    ----------
    time_constant : float, Quantity or str
        Filter lag. [s]
    dead_time : float, Quantity or str
        Delay. [s]
    location : str
        ``"machine"`` (after the transmission) or ``"motor"``.
    name : str
        Label.
    """

    location: str = "machine"
    name: str = "speed sensor"

    def __post_init__(self) -> None:
        super().__post_init__()
        if self.location not in ("machine", "motor"):
            raise ParameterError(f"`location`: got {self.location!r}, expected 'machine' or 'motor'")

    @property
    def quantity(self) -> str:  # type: ignore[override]
        """The speed it reads: ``"machine_speed"`` or ``"motor_speed"``."""
        return f"{self.location}_speed"


@dataclasses.dataclass(frozen=True, kw_only=True)
class PressureSensor(_Sensor):
    """Pressure transmitter across the pump (differential pressure, discharge minus suction).

    Parameters
    ----------
    time_constant : float, Quantity or str
        Lag of the reading. [s]
    dead_time : float, Quantity or str
        Delay. [s]
    name : str
        Label.
    """

    name: str = "pressure transmitter"
    quantity = "pump_pressure"
