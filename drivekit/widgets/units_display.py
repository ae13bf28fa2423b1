"""Display units the trade uses for each SI unit, and slider ranges around a file value.

Only unit conversion lives here (through :mod:`drivekit.units`); head shown
as pressure uses the design's fluid density, ``p = rho g h``.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from typing import Any

from ..constants import STANDARD_GRAVITY
from ..design import Design, DesignParameter
from ..units import ureg

__all__ = ["DisplayUnit", "SliderRange", "display_units", "slider_range"]


@dataclasses.dataclass(frozen=True)
class DisplayUnit:
    """One way of showing a parameter.

    Attributes
    ----------
    label : str
        What the unit menu shows (``"rpm"``, ``"m³/h"``, ``"min/repeat"``).
    to_display : callable
        ``(si_value, design) -> shown value``.
    to_si : callable
        ``(shown value, design) -> si_value``.
    pint_unit : str or None
        The unit as pint spells it, when pint can convert it alone.
    """

    label: str
    to_display: Callable[[float, Design], float]
    to_si: Callable[[float, Design], float]
    pint_unit: str | None


def _pint(label: str, unit: str, si_unit: str) -> DisplayUnit:
    if unit == si_unit:
        return DisplayUnit(label, lambda v, d: float(v), lambda v, d: float(v), unit)
    factor = float(ureg.Quantity(1.0, si_unit).to(unit).magnitude)
    return DisplayUnit(label, lambda v, d: float(v) * factor, lambda v, d: float(v) / factor, unit)


def _head_as_pressure(label: str, pascal_per_unit: float) -> DisplayUnit:
    def to_display(v: float, d: Design) -> float:
        return float(v) * d.train.fluid.density * STANDARD_GRAVITY / pascal_per_unit

    def to_si(v: float, d: Design) -> float:
        return float(v) * pascal_per_unit / (d.train.fluid.density * STANDARD_GRAVITY)

    return DisplayUnit(label, to_display, to_si, None)


_CHOICES: dict[str, tuple[tuple[str, str], ...]] = {
    "rad/s": (("rpm", "rpm"), ("rad/s", "rad/s")),
    "m**3/s": (("m³/h", "m**3/h"), ("L/s", "L/s"), ("m³/s", "m**3/s")),
    "s": (("s", "s"), ("min", "min")),
    "W": (("kW", "kW"), ("W", "W")),
    "Pa": (("bar", "bar"), ("kPa", "kPa"), ("Pa", "Pa")),
    "Pa*s": (("mPa·s", "mPa*s"), ("Pa·s", "Pa*s")),
    "H": (("mH", "mH"), ("H", "H")),
}


def display_units(p: DesignParameter) -> tuple[DisplayUnit, ...]:
    """The units a parameter can be shown in, the trade's usual one first.

    Parameters
    ----------
    p : DesignParameter
        The parameter.

    Returns
    -------
    tuple of DisplayUnit
    """
    si = p.spec.unit
    if p.key == "controller.kp" and "/(" in si:
        return _gain_units(si)
    if p.key == "controller.ti":
        return (_pint("s", "s", si), _pint("min/repeat", "min", si))
    if si == "m" and "head" in p.spec.description:
        return (_pint("m", "m", si), _head_as_pressure("bar", 1e5), _head_as_pressure("kPa", 1e3))
    if si == "m" and p.name in ("diameter", "roughness"):
        return (_pint("mm", "mm", si), _pint("m", "m", si))
    if si == "rad/s" and p.spec.kind != "shaft_speed":
        return (_pint("rad/s", "rad/s", si),)
    if si in _CHOICES:
        return tuple(_pint(label, unit, si) for label, unit in _CHOICES[si])
    if si in ("", "dimensionless"):
        return (_pint("-", "", ""),) if si == "" else (_pint("-", si, si),)
    label = f"{ureg.Unit(si):~P}"
    return (_pint(label, si, si),)


def _gain_units(si: str) -> tuple[DisplayUnit, ...]:
    """A controller gain ``"<output unit>/(<measured SI unit>)"`` per each display unit of the measurement."""
    num, den = si.split("/(", 1)
    den = den[:-1]
    top = "%" if num == "percent" else f"{ureg.Unit(num):~P}"
    choices = _CHOICES.get(den, ((f"{ureg.Unit(den):~P}", den),))
    return tuple(_pint(f"{top}/({label})", f"{num}/({unit})", si) for label, unit in choices)


#: SI units of quantities that commonly span decades; their sliders are logarithmic.
LOG_UNITS = frozenset({"kg*m**2", "s", "Pa*s", "N*m*s/rad", "H", "ohm", "N*m/rad"})


@dataclasses.dataclass(frozen=True)
class SliderRange:
    """Slider bounds around a file value, in SI.

    Attributes
    ----------
    low, high : float
        Bounds. [SI unit of the parameter]
    log : bool
        Whether the slider moves in equal ratios.
    """

    low: float
    high: float
    log: bool


def slider_range(p: DesignParameter, value: Any) -> SliderRange | None:
    """A sensible slider range around ``value``: a decade either side (log) or +-50 % (linear).

    Parameters
    ----------
    p : DesignParameter
        The parameter (its spec bounds the range).
    value : float or None
        Value to centre on. [SI]

    Returns
    -------
    SliderRange or None
        ``None`` where a slider makes no sense (absent optional value,
        infinite value such as "no integral action").
    """
    if value is None or not math.isfinite(value):
        return None
    spec = p.spec
    log = (spec.unit in LOG_UNITS or p.role == "controller") and value > 0.0
    if log:
        low, high = value / 10.0, value * 10.0
    elif value == 0.0:
        low, high = 0.0, 1.0
    else:
        low, high = sorted((value * 0.5, value * 1.5))
    lo_lim = spec.minimum if spec.include_minimum else spec.minimum + abs(value) * 1e-3
    low = max(low, lo_lim)
    high = min(high, spec.maximum)
    if log and low <= 0.0:
        low = value / 10.0
    if not high > low:
        return None
    return SliderRange(low, high, log)
