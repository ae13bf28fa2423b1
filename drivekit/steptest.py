"""Step-test records: time, process value and controller output with the units of the log.

:func:`read_step_test` reads a CSV log whose header carries the units
(``time [s], flow [m3/h], output [%]`` or ``t (min)``); :func:`step_test`
builds the same record from arrays or pint quantities. Inside, time is in s,
the process value in SI unless it is logged in % of span, and the controller
output in % (the unit controllers are set in).
"""

from __future__ import annotations

import dataclasses
import pathlib
import re
from typing import Any

import numpy as np
import pint

from .units import ParameterError, ureg

__all__ = ["MIN_SAMPLES", "StepTest", "read_step_test", "step_test"]

#: Fewest samples a record may have. [-] Common practice, no source.
MIN_SAMPLES = 10


@dataclasses.dataclass(frozen=True, eq=False)
class StepTest:
    """A step-test record: time, process value and controller output, in SI (or %) with their units.

    Attributes
    ----------
    time : numpy.ndarray
        Sample times, strictly increasing. [s]
    process_value : numpy.ndarray
        Measured process value, in ``process_value_si_unit``. [SI or %]
    controller_output : numpy.ndarray
        Controller output, in ``controller_output_si_unit``. [% or SI]
    time_unit, process_value_unit, controller_output_unit : str
        Units as recorded (the display units), pint syntax.
    process_value_si_unit, controller_output_si_unit : str
        Units the arrays are held in.
    names : tuple of str
        Column names (time, process value, controller output).
    source : str
        File path, or ``"arrays"``.
    """

    time: np.ndarray
    process_value: np.ndarray
    controller_output: np.ndarray
    time_unit: str = "s"
    process_value_unit: str = ""
    controller_output_unit: str = "percent"
    process_value_si_unit: str = ""
    controller_output_si_unit: str = "percent"
    names: tuple[str, str, str] = ("time", "process value", "controller output")
    source: str = "arrays"

    def to_frame(self) -> Any:
        """The record as a pandas DataFrame in the recorded units."""
        import pandas as pd

        t_scale, t_off = _scale_offset(self.time_unit)
        y_scale, y_off = _scale_offset(self.process_value_unit)
        u_scale, u_off = _scale_offset(self.controller_output_unit)
        return pd.DataFrame(
            {
                f"{self.names[0]} [{_pretty(self.time_unit)}]": (self.time - t_off) / t_scale,
                f"{self.names[1]} [{_pretty(self.process_value_unit)}]": (self.process_value - y_off) / y_scale,
                f"{self.names[2]} [{_pretty(self.controller_output_unit)}]": (self.controller_output - u_off) / u_scale,
            }
        )


def _normalise_unit(text: str | None) -> str:
    """Unit as written in a log header -> pint syntax (``m3/h`` -> ``m**3/h``, ``%`` -> ``percent``)."""
    if text is None:
        return ""
    s = text.strip().replace("³", "**3").replace("²", "**2").replace("%", "percent").replace("°C", "degC")
    s = re.sub(r"(?<=[A-Za-z])(\d+)", r"**\1", s)
    return s


def _is_percent(unit: str) -> bool:
    return unit in ("percent", "pct")


def _scale_offset(unit: str) -> tuple[float, float]:
    """SI value = scale * value + offset; % and dimensionless stay as they are."""
    if not unit or _is_percent(unit):
        return 1.0, 0.0
    q0 = ureg.Quantity(0.0, unit).to_base_units().magnitude
    q1 = ureg.Quantity(1.0, unit).to_base_units().magnitude
    return float(q1 - q0), float(q0)


def _si_unit(unit: str, name: str) -> str:
    if not unit or _is_percent(unit):
        return unit
    try:
        return f"{ureg.Quantity(1.0, unit).to_base_units().units:~C}"
    except (pint.UndefinedUnitError, pint.DimensionalityError, AttributeError, ValueError) as exc:
        raise ParameterError(
            f"`{name}`: could not read the unit {unit!r} ({exc}); expected a unit such as 'm**3/h'"
        ) from None


def _pretty(unit: str) -> str:
    if not unit:
        return "-"
    if _is_percent(unit):
        return "%"
    return f"{ureg.Unit(unit):~P}"


def _column(values: Any, unit: str | None, name: str) -> tuple[np.ndarray, str, str]:
    """A column as (SI array, recorded unit, SI unit); a pint Quantity brings its own unit."""
    if isinstance(values, pint.Quantity):
        unit = str(values.units)
        values = values.magnitude
    unit = _normalise_unit(unit)
    try:
        arr = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError):
        raise ParameterError(f"`{name}`: got {type(values).__name__}, expected a sequence of numbers") from None
    si = _si_unit(unit, name)
    if not np.all(np.isfinite(arr)):
        bad = int(np.flatnonzero(~np.isfinite(arr))[0])
        raise ParameterError(f"`{name}`: sample {bad} is {arr[bad]}, expected finite numbers (remove gaps first)")
    scale, off = _scale_offset(unit)
    return arr * scale + off, unit, si


def step_test(
    t: Any,
    y: Any,
    u: Any,
    *,
    time_unit: str = "s",
    output_unit: str = "",
    input_unit: str = "%",
) -> StepTest:
    """A :class:`StepTest` from arrays, checked.

    Parameters
    ----------
    t : array or Quantity
        Sample times, strictly increasing. [s, or ``time_unit``]
    y : array or Quantity
        Process value. [``output_unit``]
    u : array or Quantity
        Controller output. [``input_unit``]
    time_unit, output_unit, input_unit : str
        Units of plain arrays (a pint Quantity carries its own). [-]

    Returns
    -------
    StepTest

    Raises
    ------
    ParameterError
        Unequal lengths, fewer than :data:`MIN_SAMPLES` samples, gaps, or time
        not strictly increasing.
    """
    time, tu, _ = _column(t, time_unit, "t")
    if tu and ureg.Unit(tu).dimensionality != ureg.Unit("s").dimensionality:
        raise ParameterError(f"`t`: got unit {tu!r}, expected a unit of time")
    pv, yu, ysi = _column(y, output_unit, "y")
    op, uu, usi = _column(u, input_unit, "u")
    if not (len(time) == len(pv) == len(op)):
        raise ParameterError(f"`t`, `y`, `u`: got {len(time)}, {len(pv)} and {len(op)} samples, expected equal lengths")
    if len(time) < MIN_SAMPLES:
        raise ParameterError(f"`t`: got {len(time)} samples, expected at least {MIN_SAMPLES} (too short a record)")
    dt = np.diff(time)
    if np.any(dt <= 0):
        k = int(np.flatnonzero(dt <= 0)[0]) + 1
        raise ParameterError(
            f"`t`: got t = {time[k]:g} s at sample {k} after t = {time[k - 1]:g} s, "
            "expected strictly increasing (non-monotonic time: sort the log or remove repeated rows)"
        )
    return StepTest(time, pv, op, tu or "s", yu, uu, ysi, usi)


_HEADER = re.compile(r"^\s*(?P<name>.*?)\s*(?:\[(?P<u1>[^\]]*)\]|\((?P<u2>[^)]*)\))\s*$")


def _split_header(text: str) -> tuple[str, str | None]:
    m = _HEADER.match(text)
    if not m:
        return text.strip(), None
    return m.group("name"), m.group("u1") if m.group("u1") is not None else m.group("u2")


def read_step_test(path: str | pathlib.Path, *, columns: tuple[Any, Any, Any] = (0, 1, 2)) -> StepTest:
    """Read a bump-test log from a CSV file whose header names each column and its unit.

    Parameters
    ----------
    path : str or pathlib.Path
        CSV file. Lines starting with ``#`` are comments. The header gives each
        column as ``name [unit]`` or ``name (unit)``, e.g.
        ``time [s], flow [m3/h], output [%]`` or ``t (min), level (%), valve (%)``.
    columns : tuple of three int or str
        Which columns are time, process value and controller output, by
        position or by name (without the unit). [-]

    Returns
    -------
    StepTest
        Arrays converted to SI (percent stays percent), with the units read.

    Notes
    -----
    A column without a unit is read as seconds (time), dimensionless (process
    value) or % (controller output).
    """
    import pandas as pd

    p = pathlib.Path(path)
    if not p.is_file():
        raise ParameterError(f"`path`: got {str(path)!r}, expected an existing CSV file")
    frame = pd.read_csv(p, comment="#", skipinitialspace=True)
    headers = [str(c) for c in frame.columns]
    parsed = [_split_header(h) for h in headers]
    picked = []
    for role, col in zip(("time", "process value", "controller output"), columns, strict=True):
        if isinstance(col, str):
            names = [n for n, _ in parsed]
            if col not in names:
                raise ParameterError(f"`columns`: no column named {col!r} for the {role}; the file has {names}")
            col = names.index(col)
        if not 0 <= int(col) < len(headers):
            raise ParameterError(f"`columns`: got {col} for the {role}, the file has {len(headers)} columns")
        picked.append(int(col))
    (tn, tu), (yn, yu), (un, uu) = (parsed[i] for i in picked)
    test = step_test(
        frame.iloc[:, picked[0]].to_numpy(),
        frame.iloc[:, picked[1]].to_numpy(),
        frame.iloc[:, picked[2]].to_numpy(),
        time_unit=tu or "s",
        output_unit=yu or "",
        input_unit=uu or "%",
    )
    return dataclasses.replace(test, names=(tn, yn, un), source=str(p))


def _as_test(t: Any, y: Any, u: Any, units: tuple[str, str, str]) -> StepTest:
    if isinstance(t, StepTest):
        return t
    if isinstance(t, (str, pathlib.Path)) and y is None and u is None:
        return read_step_test(t)
    if y is None or u is None:
        raise ParameterError("`y`, `u`: missing; expected the process value and controller output arrays")
    return step_test(t, y, u, time_unit=units[0], output_unit=units[1], input_unit=units[2])
