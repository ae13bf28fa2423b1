"""Variable-speed drives: the frequency converter between the controller and the motor."""

from __future__ import annotations

import dataclasses
from typing import Any

import numpy as np

from .units import ParameterError, convert_fields, param

__all__ = ["VariableSpeedDrive"]

_REFERENCES = ("Hz", "%")


@dataclasses.dataclass(frozen=True, kw_only=True)
class VariableSpeedDrive:
    """Frequency converter that follows its speed reference with a ramp and a lag.

    Parameters
    ----------
    max_frequency : float, Quantity or str
        Highest output frequency, also 100 % of the reference. [Hz]
    min_frequency : float, Quantity or str
        Lowest output frequency while running; references below it are held
        at it. [Hz]
    time_constant : float, Quantity or str
        First-order lag of the output frequency behind the reference. [s]
        Default 0.05 s (common practice for a drive in V/f or sensorless
        vector mode, no source).
    ramp_time : float, Quantity or str
        Time to ramp from 0 to ``max_frequency``; 0 for no ramp limit. [s]
        Default 10 s (a usual factory setting, from memory; set yours).
    reference : str
        Unit of the input the controller writes: ``"Hz"`` or ``"%"`` of
        ``max_frequency`` (0-100 % maps to 0-``max_frequency``, common
        practice, no source).
    name : str
        Label.

    Notes
    -----
    The output frequency f follows the reference r as

    .. math:: \\frac{df}{dt} = \\mathrm{clip}\\left(\\frac{r - f}{\\tau},
              -\\frac{f_{max}}{t_{ramp}}, \\frac{f_{max}}{t_{ramp}}\\right)

    a first-order lag whose rate is limited to the ramp: small changes see the
    lag, large ones the ramp. The reference is clipped to
    [min_frequency, max_frequency]. The drive's own current limit is taken
    as the motor's ``torque_limit``.
    """

    max_frequency: Any = param(
        "Hz", "highest output frequency", default=50.0, minimum=0.0, include_minimum=False, kind="frequency"
    )
    min_frequency: Any = param("Hz", "lowest output frequency", default=0.0, minimum=0.0, kind="frequency")
    time_constant: Any = param("s", "output lag", default=0.05, minimum=0.0)
    ramp_time: Any = param("s", "ramp time 0 to max frequency", default=10.0, minimum=0.0)
    reference: str = "Hz"
    name: str = "variable-speed drive"

    input_quantity = "speed reference"

    def __post_init__(self) -> None:
        convert_fields(self)
        if self.reference not in _REFERENCES:
            raise ParameterError(f"`reference`: got {self.reference!r}, expected one of {_REFERENCES}")
        if np.any(self.min_frequency >= self.max_frequency):
            raise ParameterError(
                f"`min_frequency`: got {float(np.max(self.min_frequency)):g} Hz, expected below "
                f"max_frequency = {float(np.min(self.max_frequency)):g} Hz"
            )

    @property
    def input_unit(self) -> str:
        """Unit of the reference the controller writes."""
        return self.reference

    @property
    def reference_scale(self) -> Any:
        """Hz of output per unit of reference. [Hz/Hz] or [Hz/%]"""
        return self.max_frequency / 100.0 if self.reference == "%" else 1.0

    @property
    def ramp_rate(self) -> Any:
        """Largest rate of change of the output frequency; inf without ramp. [Hz/s]"""
        with np.errstate(divide="ignore"):
            return np.where(self.ramp_time > 0, self.max_frequency / np.maximum(self.ramp_time, 1e-300), np.inf)

    def frequency_demand(self, reference: Any) -> Any:
        """Output frequency the drive heads for, reference clipped to its range. [Hz]"""
        return np.clip(reference * self.reference_scale, self.min_frequency, self.max_frequency)

    def reference_for(self, frequency: Any) -> Any:
        """Reference that gives a steady output ``frequency`` [Hz], in the reference unit."""
        return frequency / self.reference_scale

    def reference_range(self) -> tuple[Any, Any]:
        """Reference values at min and max frequency, in the reference unit."""
        return self.reference_for(self.min_frequency), self.reference_for(self.max_frequency)
