"""The ``[controller]`` table of a design file: a :class:`drivekit.PID` and its settings.

Layout::

    [controller]
    type = "PID"
    form = "ideal"               # "ideal", "parallel" or "series"
    kp = 0.0264                  # controller output per measured value, both in SI (e.g. % per m**3/s)
    ti = "12 s"                  # reset time; left out for no integral action
    td = "0 s"                   # derivative time
    derivative_filter = 10.0     # N: derivative filtered with td/N
    setpoint_weights = [1.0, 0.0]
    output_limits = [0.0, 100.0] # in the controller output's unit; left out for none
    sample_time = "0.1 s"        # left out for a continuous controller
"""

from __future__ import annotations

import math
from typing import Any

from ..units import ParameterError, ParamSpec

__all__ = ["controller_rows", "read_controller"]

_KEYS = ("type", "form", "kp", "ti", "td", "derivative_filter", "setpoint_weights", "output_limits", "sample_time")
_TIME = ParamSpec("s", "time", minimum=0.0)
_PLAIN = ParamSpec("", "number")


def _pid_class() -> type:
    from ..pid import PID  # the controllers module; imported only when a design has a controller

    return PID


def controller_rows(controller: Any) -> list[tuple[str, Any]]:
    """Rows of the ``[controller]`` table for ``controller`` (a :class:`drivekit.PID`)."""
    from .designfile import quantity_text

    if type(controller).__name__ != "PID":
        raise ParameterError(f"`controller`: got {type(controller).__name__}, expected a drivekit PID to save")
    rows: list[tuple[str, Any]] = [("type", "PID"), ("form", str(controller.form)), ("kp", float(controller.kp))]
    if math.isfinite(float(controller.ti)):
        rows.append(("ti", quantity_text(float(controller.ti), _TIME, "ti")))
    rows.append(("td", quantity_text(float(controller.td), _TIME, "td")))
    rows.append(("derivative_filter", float(controller.derivative_filter)))
    rows.append(("setpoint_weights", [float(w) for w in controller.setpoint_weights]))
    if controller.output_limits is not None:
        rows.append(("output_limits", [float(v) for v in controller.output_limits]))
    if controller.sample_time is not None:
        rows.append(("sample_time", quantity_text(float(controller.sample_time), _TIME, "sample_time")))
    return rows


def read_controller(reader: Any, raw: dict[str, Any]) -> Any:
    """Build the PID of a ``[controller]`` table; ``reader`` is the design-file reader (for messages)."""
    reader.table(raw, "controller", _KEYS)
    if raw.get("type") != "PID":
        raise reader.fail("controller.type", f"got {reader.describe(raw.get('type'))}, expected 'PID'")
    if "kp" not in raw:
        raise reader.fail("controller", "missing `kp`")
    kwargs: dict[str, Any] = {"kp": reader.quantity(raw["kp"], "controller.kp", ParamSpec("", "proportional gain"))}
    for name in ("ti", "td", "sample_time"):
        if name in raw:
            kwargs[name] = reader.quantity(raw[name], f"controller.{name}", _TIME)
    if "form" in raw:
        kwargs["form"] = reader.text_value(raw["form"], "controller.form")
    if "derivative_filter" in raw:
        kwargs["derivative_filter"] = reader.quantity(raw["derivative_filter"], "controller.derivative_filter", _PLAIN)
    for name in ("setpoint_weights", "output_limits"):
        if name in raw:
            values = raw[name]
            if not isinstance(values, list) or len(values) != 2:
                raise reader.fail(f"controller.{name}", f"got {reader.describe(values)}, expected a pair [a, b]")
            kwargs[name] = tuple(reader.quantity(v, f"controller.{name}", _PLAIN) for v in values)
    try:
        pid = _pid_class()
    except ImportError:
        raise reader.fail("controller", "this drivekit has no PID controller module to read it") from None
    try:
        return pid(**kwargs)
    except (ParameterError, TypeError) as exc:
        raise reader.fail("controller", str(exc)) from None
