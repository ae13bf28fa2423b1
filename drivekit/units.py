"""Units at the boundary: parse user values, check their dimension, return SI floats.

Every public constructor in drivekit accepts a plain float (taken as SI), a
pint ``Quantity`` or a string such as ``"1480 rpm"``. This module turns those
into SI floats once, at construction, and raises :class:`ParameterError` with
the parameter's name, the value given and what was expected when the value is
of the wrong kind, the wrong dimension, not finite, or out of its physical
range. Inside drivekit everything is SI floats (or numpy arrays of them).

Two traps of general-purpose unit libraries are handled here explicitly:

* a shaft speed given in ``Hz`` means revolutions per second (pint treats
  ``1 Hz`` as ``1 rad/s``, which is wrong by 2 pi for a shaft);
* an electrical frequency given in ``rad/s`` is divided by 2 pi to give Hz.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Iterator
from typing import Any

import numpy as np
import pint

__all__ = [
    "Q_",
    "ParamSpec",
    "ParameterError",
    "convert_fields",
    "display",
    "param",
    "parameter_specs",
    "to_si",
    "ureg",
]

ureg: pint.UnitRegistry = pint.UnitRegistry()
ureg.formatter.default_format = "~P"
Q_ = ureg.Quantity

_TWO_PI = 2.0 * math.pi


class ParameterError(ValueError):
    """A parameter value is of the wrong kind, dimension or range.

    The message names the parameter, the value given and what was expected.
    """


@dataclasses.dataclass(frozen=True)
class ParamSpec:
    """Declaration of one physical parameter.

    Attributes
    ----------
    unit : str
        SI unit the value is stored in, as pint understands it.
    description : str
        Plain-words meaning, used in error messages and panels.
    minimum : float
        Lowest allowed value (in SI).
    include_minimum : bool
        Whether ``minimum`` itself is allowed.
    maximum : float
        Highest allowed value (in SI).
    kind : str
        ``"plain"``, ``"shaft_speed"`` (Hz read as rev/s) or ``"frequency"``
        (rad/s read as 2 pi Hz).
    optional : bool
        Whether ``None`` is accepted (the feature is then absent).
    """

    unit: str
    description: str
    minimum: float = -math.inf
    include_minimum: bool = True
    maximum: float = math.inf
    kind: str = "plain"
    optional: bool = False

    def expected(self) -> str:
        """Plain-words statement of what the parameter takes."""
        unit = _pretty_unit(self.unit)
        text = f"{self.description} in {unit}" if unit else self.description
        low = self.minimum
        if self.maximum < math.inf and low > -math.inf:
            return f"{text}, between {low:g} and {self.maximum:g}"
        if low > -math.inf:
            cmp = ">=" if self.include_minimum else ">"
            return f"{text}, {cmp} {low:g}"
        if self.maximum < math.inf:
            return f"{text}, <= {self.maximum:g}"
        return text


def _pretty_unit(unit: str) -> str:
    if unit in ("", "dimensionless"):
        return ""
    return f"{ureg.Unit(unit):~P}"


def _describe(value: Any) -> str:
    if isinstance(value, pint.Quantity):
        return f"{value:~P}"
    if isinstance(value, np.ndarray):
        return f"array of shape {value.shape}"
    return repr(value)


def to_si(value: Any, name: str, spec: ParamSpec) -> Any:
    """Convert a user value to SI and check it.

    Parameters
    ----------
    value : float, array, pint.Quantity or str
        The value as the user gave it. A plain number is taken as SI.
    name : str
        Parameter name, used in the error message.
    spec : ParamSpec
        What the parameter expects.

    Returns
    -------
    float or numpy.ndarray or None
        The value in SI units (``None`` only when the spec is optional).

    Raises
    ------
    ParameterError
        Wrong type, wrong dimension, NaN or infinite, or out of range.

    Examples
    --------
    >>> to_si("1480 rpm", "speed", ParamSpec("rad/s", "shaft speed", kind="shaft_speed"))
    154.98523757709646
    """
    if value is None:
        if spec.optional:
            return None
        raise ParameterError(f"`{name}`: got None, expected {spec.expected()}")
    given = value
    if isinstance(value, str):
        try:
            value = ureg.Quantity(value.strip())
        except Exception as exc:  # pint raises several error types when parsing
            raise ParameterError(f"`{name}`: could not read {given!r} ({exc}); expected {spec.expected()}") from None
    if isinstance(value, pint.Quantity):
        magnitude = _quantity_to_si(value, name, spec, given)
    elif isinstance(value, bool):
        raise ParameterError(f"`{name}`: got {given!r}, expected {spec.expected()}")
    elif isinstance(value, (int, float, np.integer, np.floating)):
        magnitude = float(value)
    elif isinstance(value, (np.ndarray, list, tuple)):
        try:
            magnitude = np.asarray(value, dtype=float)
        except (TypeError, ValueError):
            raise ParameterError(f"`{name}`: got {_describe(given)}, expected {spec.expected()}") from None
    else:
        raise ParameterError(f"`{name}`: got {_describe(given)}, expected {spec.expected()}")
    if not (type(magnitude) is float and math.isfinite(magnitude) and _in_range(magnitude, spec)):
        _check_range(magnitude, name, spec, given)
    return magnitude


def _quantity_to_si(q: pint.Quantity, name: str, spec: ParamSpec, given: Any) -> Any:
    units = {name for name, _ in q.unit_items()}
    target = ureg.Unit(spec.unit)
    try:
        if spec.kind == "shaft_speed" and "hertz" in units:
            q = q.to("Hz") * ureg.Quantity(_TWO_PI, "rad")
        elif spec.kind == "frequency" and "radian" in units:
            q = q.to("rad/s") / ureg.Quantity(_TWO_PI, "rad")
        mag = q.to(target).magnitude
    except pint.DimensionalityError:
        raise ParameterError(f"`{name}`: got {_describe(given)}, expected {spec.expected()}") from None
    if isinstance(mag, np.ndarray):
        return mag.astype(float)
    return float(mag)


def _check_range(magnitude: Any, name: str, spec: ParamSpec, given: Any) -> None:
    arr = np.asarray(magnitude)
    if not np.all(np.isfinite(arr)):
        raise ParameterError(
            f"`{name}`: got {_describe(given)}, which is not a finite number; expected {spec.expected()}"
        )
    low_ok = arr >= spec.minimum if spec.include_minimum else arr > spec.minimum
    if not np.all(low_ok) or not np.all(arr <= spec.maximum):
        raise ParameterError(f"`{name}`: got {_describe(given)}, expected {spec.expected()}")


def param(
    unit: str,
    description: str,
    *,
    default: Any = dataclasses.MISSING,
    minimum: float = -math.inf,
    include_minimum: bool = True,
    maximum: float = math.inf,
    kind: str = "plain",
) -> Any:
    """Declare a physical dataclass field with its SI unit and range.

    Parameters
    ----------
    unit : str
        SI unit the value is stored in.
    description : str
        Plain-words meaning of the parameter.
    default : optional
        Default value (in SI, a Quantity or a string); ``None`` makes the
        parameter optional.
    minimum, maximum : float
        Allowed range in SI.
    include_minimum : bool
        ``False`` when the minimum itself is not allowed (strictly positive).
    kind : str
        See :class:`ParamSpec`.

    Returns
    -------
    dataclasses.Field
    """
    spec = ParamSpec(
        unit=unit,
        description=description,
        minimum=minimum,
        include_minimum=include_minimum,
        maximum=maximum,
        kind=kind,
        optional=default is None,
    )
    return dataclasses.field(default=default, metadata={"spec": spec})


def parameter_specs(obj: Any) -> Iterator[tuple[str, ParamSpec]]:
    """Yield ``(name, spec)`` for every declared physical parameter of a component."""
    for f in dataclasses.fields(obj):
        spec = f.metadata.get("spec")
        if spec is not None:
            yield f.name, spec


def convert_fields(obj: Any) -> None:
    """Convert every declared field of a frozen dataclass to SI in place.

    Called from ``__post_init__`` of components. Plain floats pass through a
    fast path, so rebuilding a component on every slider move stays cheap.
    """
    for name, spec in parameter_specs(obj):
        value = getattr(obj, name)
        if type(value) is float and spec.kind == "plain":
            if not (math.isfinite(value) and _in_range(value, spec)):
                _check_range(value, name, spec, value)
            continue
        object.__setattr__(obj, name, to_si(value, name, spec))


def _in_range(value: float, spec: ParamSpec) -> bool:
    low = value >= spec.minimum if spec.include_minimum else value > spec.minimum
    return low and value <= spec.maximum


def display(value: float, si_unit: str, unit: str) -> float:
    """Convert an SI value to a display unit (``"rpm"``, ``"m**3/h"``, ``"bar"``).

    Parameters
    ----------
    value : float
        Value in ``si_unit``.
    si_unit : str
        Its SI unit.
    unit : str
        Unit to show it in.

    Returns
    -------
    float
    """
    return float(ureg.Quantity(value, si_unit).to(unit).magnitude)


_SUPERSCRIPTS = (("**-1", "⁻¹"), ("**2", "²"), ("**3", "³"), ("**4", "⁴"), ("*", "·"), ("percent", "%"))


def pretty_unit(unit: str) -> str:
    """A unit written for reading: ``"m**3/h"`` -> ``"m³/h"``, ``"N*m"`` -> ``"N·m"``, ``"(rpm)/(Hz)"`` -> ``"rpm/Hz"``.

    The order of the factors is kept as written (pint's own pretty format
    sorts them, which turns N*m into m·N).

    Parameters
    ----------
    unit : str
        A unit as drivekit writes it (pint syntax).

    Returns
    -------
    str

    Examples
    --------
    >>> pretty_unit("(m**3/h)/(%)"), pretty_unit("kg*m**2"), pretty_unit("percent/(m**3/s)")
    ('(m³/h)/%', 'kg·m²', '%/(m³/s)')
    """
    out = unit
    for a, b in _SUPERSCRIPTS:
        out = out.replace(a, b)
    for single in ("%", "Hz", "V", "rpm", "s", "m", "bar"):
        out = out.replace(f"({single})", single)
    return out
