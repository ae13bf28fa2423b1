"""Identification from a step (bump) test: first-order, second-order and integrating models with dead time.

A bump test puts the controller in manual, steps its output and records the
process value. From that record this module finds the step, removes a slow
linear drift seen before the step, and fits

* :func:`fopdt` -- gain, time constant and dead time, by Smith's two-point
  method, by Sundaresan and Krishnaswamy's two-point method, or by least
  squares with the dead time as a parameter;
* :func:`sopdt` -- gain, two time constants and dead time, by least squares;
* :func:`integrating` -- integrator gain and dead time (a level, a tank), by
  least squares or from the tangent to the final ramp.

Each returns a :class:`StepFit` with the step found, the fit quality
(residual RMS, R**2, approximate 95 % intervals), the fitted curve for
plotting, ``.table()`` and ``.to_model()``. :func:`read_step_test` reads a CSV
log whose header carries the units (``time [s], flow [m3/h], output [%]``);
:func:`bump_test_plan` proposes the step, duration, sample interval and abort
limits of a test from a model already known.

Units: time in s; the process value in SI (m**3/s, Pa, ...) unless it is
logged in % of span, which stays in %; the controller output stays in % (the
unit controllers are set in). The gain is therefore in SI output units per %
(for example (m**3/s)/%), and :attr:`StepFit.gain_quantity` gives it in the
units of the record (for example (m**3/h)/%).
"""

from __future__ import annotations

import dataclasses
import math
import pathlib
import re
from collections.abc import Callable
from typing import Any

import numpy as np
import pint
import scipy.optimize
import scipy.signal

from .units import ParameterError, ureg

__all__ = [
    "MIN_SAMPLES",
    "SK_TAU_FACTOR",
    "BumpTestPlan",
    "StepFit",
    "StepTest",
    "bump_test_plan",
    "fopdt",
    "integrating",
    "read_step_test",
    "sopdt",
    "step_test",
]

#: Fewest samples a record may have. [-] Common practice, no source.
MIN_SAMPLES = 10
#: Fewest samples before the step (to fix the starting level). [-] Common practice, no source.
_MIN_BEFORE = 3
#: Fewest samples before the step to estimate a drift from. [-] Common practice, no source.
_MIN_FOR_DRIFT = 5
#: Response fractions of Smith's method (Seborg et al., 3rd ed., §7.2).
_SMITH_LEVELS = (0.283, 0.632)
#: Response fractions of Sundaresan and Krishnaswamy (1978).
_SK_LEVELS = (0.353, 0.853)
#: tau = 0.67 (t2 - t1), the constant as printed by Sundaresan and Krishnaswamy
#: (1978). Not 2/3: the exact value for a first-order lag is
#: 1/ln(0.647/0.147) = 0.6748, and the paper rounds it to 0.67.
SK_TAU_FACTOR = 0.67
#: theta = 1.3 t1 - 0.29 t2 (Sundaresan and Krishnaswamy, 1978).
_SK_THETA = (1.3, 0.29)
_Z95 = 1.959964  # two-sided 95 % point of the normal distribution


# ---------------------------------------------------------------- records and units
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


# ---------------------------------------------------------------- step and drift
@dataclasses.dataclass(frozen=True, eq=False)
class _Prepared:
    test: StepTest
    k: int  # index of the first sample at the new output
    end: int  # first index of a later output change (or len)
    step_time: float
    step_size: float
    drift: float
    baseline: float
    y: np.ndarray  # process value with the drift removed
    cautions: tuple[str, ...]


def _prepare(test: StepTest, drift: bool) -> _Prepared:
    t, y, u = test.time, test.process_value, test.controller_output
    du = np.diff(u)
    k = int(np.argmax(np.abs(du))) + 1
    jump = abs(du[k - 1])
    others = np.delete(du, k - 1)
    noise = 1.4826 * float(np.median(np.abs(others - np.median(others)))) if len(others) else 0.0
    if jump == 0.0 or jump <= 5.0 * noise:
        raise ParameterError(
            f"`u`: no step found in the controller output (largest change {jump:g}, noise about {noise:g} "
            f"{_pretty(test.controller_output_unit)}); expected one clear step"
        )
    if k < _MIN_BEFORE:
        raise ParameterError(
            f"`u`: the step is at sample {k} (t = {t[k]:g} s), expected at least {_MIN_BEFORE} samples "
            "before it to fix the starting level"
        )
    if len(t) - k < 5:
        raise ParameterError(f"`u`: the step is {len(t) - k} samples from the end, expected at least 5 after it")
    m = min(5, k, len(t) - k)
    size = float(np.mean(u[k : k + m]) - np.mean(u[k - m : k]))
    later = np.flatnonzero(np.abs(du[k:]) > 0.5 * abs(size))
    end = k + int(later[0]) + 1 if len(later) else len(t)
    ts = float(t[k])
    cautions = []
    rate = 0.0
    if drift and k >= _MIN_FOR_DRIFT:
        rate = float(np.polyfit(t[:k] - ts, y[:k], 1)[0])
    elif drift:
        cautions.append(f"only {k} samples before the step: no drift removed")
    yd = y - rate * (t - ts)
    return _Prepared(test, k, end, ts, size, rate, float(np.mean(yd[:k])), yd, tuple(cautions))


# ---------------------------------------------------------------- model responses
def _unit_first_order(x: np.ndarray, tau: float) -> np.ndarray:
    return -np.expm1(-np.maximum(x, 0.0) / tau)


def _unit_second_order(x: np.ndarray, t1: float, t2: float) -> np.ndarray:
    x = np.maximum(x, 0.0)
    if abs(t1 - t2) <= 1e-6 * max(t1, t2):
        tm = 0.5 * (t1 + t2)
        return 1.0 - (1.0 + x / tm) * np.exp(-x / tm)
    return 1.0 - (t1 * np.exp(-x / t1) - t2 * np.exp(-x / t2)) / (t1 - t2)


def _unit_ramp(x: np.ndarray) -> np.ndarray:
    return np.maximum(x, 0.0)


def _simulate(t: np.ndarray, u: np.ndarray, theta: float, unit: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
    """Response to the recorded input (held from each sample to the next) by superposition of steps.

    y(t) = sum_k (u_k - u_{k-1}) s(t - t_k - theta), with s the unit-step response.
    """
    du = np.diff(u, prepend=u[0])
    idx = np.flatnonzero(du)
    if len(idx) > 32:
        dt = np.diff(t)
        if np.ptp(dt) <= 1e-6 * dt.mean():  # uniform sampling: the sum is a convolution
            kernel = unit(t - t[0] - theta)
            return scipy.signal.fftconvolve(du, kernel)[: len(t)]
    out = np.zeros_like(t)
    for start in range(0, len(idx), 256):
        chunk = idx[start : start + 256]
        out += du[chunk] @ unit(t[None, :] - t[chunk, None] - theta)
    return out


# ---------------------------------------------------------------- results
@dataclasses.dataclass(frozen=True, eq=False)
class StepFit:
    """A model fitted to a step test, with the step found and the fit quality.

    Attributes
    ----------
    model : str
        ``"FOPDT"``, ``"SOPDT"`` or ``"integrating plus dead time"``.
    method : str
        ``"smith"``, ``"sundaresan_krishnaswamy"``, ``"least_squares"`` or ``"tangent"``.
    gain : float
        Process gain, change of process value per change of controller output
        (integrating: rate of change per change of output, per second).
        [SI output unit / input unit] (e.g. (m**3/s)/%; integrating (m**3/s)/%/s)
    time_constant : float or None
        Time constant (the larger one for SOPDT); None for an integrator. [s]
    time_constant_2 : float or None
        Second (smaller) time constant of an SOPDT model. [s]
    dead_time : float
        Dead time from the step to the start of the response. [s]
    step_time : float
        Time of the first sample at the new controller output. [s]
    step_size : float
        Size of the step. [input unit, usually %]
    baseline : float
        Process value before the step (drift removed). [SI output unit]
    drift : float
        Linear drift removed, estimated before the step. [SI output unit / s]
    residual_rms : float
        Root mean square of measured minus fitted. [SI output unit]
    r_squared : float
        Coefficient of determination of the fit over the whole record. [-]
    gain_interval, time_constant_interval, time_constant_2_interval, dead_time_interval : tuple or None
        Approximate 95 % confidence intervals (low, high) from the Jacobian
        of the least-squares fit (None for the two-point methods). [as the value]
    time, measured, fitted : numpy.ndarray
        The record and the fitted curve (drift added back), for plotting. [s], [SI output unit]
    output_unit, input_unit, output_si_unit, input_si_unit : str
        Units of the record (display) and of the values held.
    cautions : tuple of str
        Plain warnings about the record or the fit.
    """

    model: str
    method: str
    gain: float
    time_constant: float | None
    time_constant_2: float | None
    dead_time: float
    step_time: float
    step_size: float
    baseline: float
    drift: float
    residual_rms: float
    r_squared: float
    gain_interval: tuple[float, float] | None
    time_constant_interval: tuple[float, float] | None
    time_constant_2_interval: tuple[float, float] | None
    dead_time_interval: tuple[float, float] | None
    time: np.ndarray
    measured: np.ndarray
    fitted: np.ndarray
    output_unit: str
    input_unit: str
    output_si_unit: str
    input_si_unit: str
    cautions: tuple[str, ...] = ()

    @property
    def _gain_units(self) -> tuple[str, str]:
        per = "/second" if self.model.startswith("integrating") else ""
        si = f"({self.output_si_unit or 'dimensionless'})/({self.input_si_unit or 'dimensionless'}){per}"
        show = f"({self.output_unit or 'dimensionless'})/({self.input_unit or 'dimensionless'}){per}"
        return si, show

    @property
    def gain_quantity(self) -> Any:
        """The gain as a pint Quantity in the units of the record, e.g. (m**3/h)/%."""
        si, show = self._gain_units
        q = ureg.Quantity(self.gain, si)
        try:
            return q.to(show)
        except (pint.DimensionalityError, pint.OffsetUnitCalculusError):
            return q

    def table(self) -> list[tuple[str, float, str]]:
        """Rows (quantity, value, unit), gain in the units of the record, times in s."""
        g = self.gain_quantity
        scale = g.magnitude / self.gain if self.gain else 1.0
        gu = f"{g.units:~P}"
        rows: list[tuple[str, float, str]] = [("process gain", g.magnitude, gu)]
        if self.gain_interval:
            rows.append(("process gain, 95 % half-width", scale * _half(self.gain_interval), gu))
        for label, value, interval in (
            ("time constant", self.time_constant, self.time_constant_interval),
            ("second time constant", self.time_constant_2, self.time_constant_2_interval),
            ("dead time", self.dead_time, self.dead_time_interval),
        ):
            if value is None:
                continue
            rows.append((label, value, "s"))
            if interval:
                rows.append((f"{label}, 95 % half-width", _half(interval), "s"))
        y_scale, _ = _scale_offset(self.output_unit)
        yu = _pretty(self.output_unit)
        rows += [
            ("step time", self.step_time, "s"),
            ("step size", self.step_size, _pretty(self.input_unit)),
            ("drift removed", self.drift / y_scale, f"{yu}/s"),
            ("residual RMS", self.residual_rms / y_scale, yu),
            ("R**2", self.r_squared, "-"),
        ]
        return rows

    def to_frame(self) -> Any:
        """:meth:`table` as a pandas DataFrame."""
        import pandas as pd

        return pd.DataFrame(self.table(), columns=["quantity", "value", "unit"]).set_index("quantity")

    def curves(self) -> Any:
        """Time, measured and fitted process value in the units of the record, as a pandas DataFrame."""
        import pandas as pd

        scale, off = _scale_offset(self.output_unit)
        return pd.DataFrame(
            {"time": self.time, "measured": (self.measured - off) / scale, "fitted": (self.fitted - off) / scale}
        )

    def to_model(self) -> Any:
        """The fitted model as :class:`drivekit.models.FOPDT`, ``SOPDT`` or ``IntegratingDeadTime`` (SI)."""
        from . import models

        labels = {
            "input_unit": "%" if _is_percent(self.input_unit) else self.input_si_unit,
            "output_unit": self.output_si_unit,
            "output_display_unit": self.output_unit,
        }
        if self.model == "FOPDT":
            return models.FOPDT(gain=self.gain, time_constant=self.time_constant, dead_time=self.dead_time, **labels)
        if self.model == "SOPDT":
            return models.SOPDT(
                gain=self.gain,
                time_constant=self.time_constant,
                time_constant_2=self.time_constant_2,
                dead_time=self.dead_time,
                **labels,
            )
        return models.IntegratingDeadTime(gain=self.gain, dead_time=self.dead_time, **labels)


def _half(interval: tuple[float, float]) -> float:
    return 0.5 * (interval[1] - interval[0])


def _quality(y: np.ndarray, fit: np.ndarray) -> tuple[float, float]:
    res = y - fit
    sst = float(np.sum((y - y.mean()) ** 2))
    r2 = 1.0 - float(np.sum(res**2)) / sst if sst > 0 else 0.0
    return float(np.sqrt(np.mean(res**2))), r2


def _make_result(
    p: _Prepared,
    model: str,
    method: str,
    params: dict[str, float],
    curve: np.ndarray,
    intervals: dict[str, tuple[float, float]],
    cautions: list[str],
) -> StepFit:
    test = p.test
    rms, r2 = _quality(p.y, curve)
    return StepFit(
        model=model,
        method=method,
        gain=params["gain"],
        time_constant=params.get("time_constant"),
        time_constant_2=params.get("time_constant_2"),
        dead_time=params["dead_time"],
        step_time=p.step_time,
        step_size=p.step_size,
        baseline=p.baseline,
        drift=p.drift,
        residual_rms=rms,
        r_squared=r2,
        gain_interval=intervals.get("gain"),
        time_constant_interval=intervals.get("time_constant"),
        time_constant_2_interval=intervals.get("time_constant_2"),
        dead_time_interval=intervals.get("dead_time"),
        time=test.time,
        measured=test.process_value,
        fitted=curve + p.drift * (test.time - p.step_time),
        output_unit=test.process_value_unit,
        input_unit=test.controller_output_unit,
        output_si_unit=test.process_value_si_unit,
        input_si_unit=test.controller_output_si_unit,
        cautions=p.cautions + tuple(cautions),
    )


# ---------------------------------------------------------------- two-point methods
def _time_below(t: np.ndarray, r: np.ndarray, level: float) -> float:
    """Time the linearly interpolated response spends below ``level`` (from t[0]).

    For a noise-free rising response this is exactly the interpolated
    crossing time; with noise, early and late crossings cancel.
    """
    a, b = r[:-1] - level, r[1:] - level
    h = np.diff(t)
    both = (a < 0) & (b < 0)
    mixed = (a < 0) != (b < 0)
    frac = np.where(mixed, np.where(a < 0, a / np.where(mixed, a - b, 1.0), b / np.where(mixed, b - a, 1.0)), 0.0)
    return float(np.sum(h[both]) + np.sum(h * frac))


def _final_value(p: _Prepared) -> tuple[float, list[str]]:
    seg = p.y[p.k : p.end]
    n = max(5, len(seg) // 10)
    last, before = seg[-n:], seg[-2 * n : -n]
    final = float(np.mean(last))
    change = final - p.baseline
    cautions = []
    if len(before) == n:
        spread = float(np.std(p.y[: p.k])) if p.k > 1 else 0.0
        if abs(np.mean(last) - np.mean(before)) > max(0.02 * abs(change), 3.0 * spread * math.sqrt(2.0 / n)):
            cautions.append(
                "the process value was still moving at the end of the step: the record may end before "
                "the response settled, so the gain and time constant may be too small; record for about "
                "5 x (time constant + dead time) after the step"
            )
    return final, cautions


def _two_point(p: _Prepared, levels: tuple[float, float]) -> tuple[float, float, float, list[str]]:
    final, cautions = _final_value(p)
    change = final - p.baseline
    noise = float(np.std(p.y[: p.k])) if p.k > 1 else 0.0
    if change == 0.0 or abs(change) < 3.0 * noise:
        raise ParameterError(
            f"`y`: the process value changed by {change:g} against noise of about {noise:g} "
            "(SI units), expected a response clear of the noise; make a larger step"
        )
    seg = slice(p.k - 1, p.end)
    r = (p.y[seg] - p.baseline) / change
    t = p.test.time[seg]
    # the step acts from t_k: the interval before it counts as no time
    t = np.concatenate(([p.step_time], t[1:]))
    r[0] = min(r[0], 0.0)
    t1, t2 = (_time_below(t, r, lv) for lv in levels)
    return final, t1, t2, cautions


def _fopdt_two_point(p: _Prepared, method: str) -> tuple[dict[str, float], list[str]]:
    if method == "smith":
        final, t1, t2, cautions = _two_point(p, _SMITH_LEVELS)
        tau = 1.5 * (t2 - t1)
        theta = t2 - tau
    else:
        final, t1, t2, cautions = _two_point(p, _SK_LEVELS)
        tau = SK_TAU_FACTOR * (t2 - t1)
        theta = _SK_THETA[0] * t1 - _SK_THETA[1] * t2
    if theta < 0.0:
        cautions.append(f"the method gave a negative dead time ({theta:.3g} s), set to 0")
        theta = 0.0
    if tau <= 0.0:
        raise ParameterError("`y`: the response does not rise between the two points, expected a first-order shape")
    gain = (final - p.baseline) / p.step_size
    return {"gain": gain, "time_constant": tau, "dead_time": theta}, cautions


# ---------------------------------------------------------------- least squares
def _least_squares(
    p: _Prepared,
    names: tuple[str, ...],
    unit_of: Callable[[np.ndarray], Callable[[np.ndarray], np.ndarray]],
    starts: list[np.ndarray],
    lower: np.ndarray,
    upper: np.ndarray,
) -> tuple[np.ndarray, dict[str, tuple[float, float]], np.ndarray]:
    """Fit [gain, *shape, dead_time, baseline] by least squares; the dead time is the last shape parameter."""
    t, u, y = p.test.time, p.test.controller_output, p.y

    def curve(x: np.ndarray) -> np.ndarray:
        return x[-1] + x[0] * _simulate(t, u, x[-2], unit_of(x))

    best = None
    for x0 in starts:
        x0 = np.minimum(np.maximum(x0, lower), upper)
        res = scipy.optimize.least_squares(lambda x: curve(x) - y, x0, bounds=(lower, upper), x_scale="jac")
        if best is None or res.cost < best.cost:
            best = res
    assert best is not None
    x = best.x
    dof = max(len(y) - len(x), 1)
    s2 = 2.0 * best.cost / dof
    cov = np.linalg.pinv(best.jac.T @ best.jac) * s2
    half = _Z95 * np.sqrt(np.maximum(np.diag(cov), 0.0))
    intervals = {n: (float(x[i] - half[i]), float(x[i] + half[i])) for i, n in enumerate(names)}
    return x, intervals, curve(x)


def _span(p: _Prepared) -> float:
    return float(p.test.time[-1] - p.step_time)


def _first_guess(p: _Prepared) -> tuple[float, float, float]:
    """Gain, time constant and dead time by Smith's method, or rough values if it fails."""
    try:
        g, _ = _fopdt_two_point(p, "smith")
        return g["gain"], max(g["time_constant"], 1e-3 * _span(p)), g["dead_time"]
    except ParameterError:
        rise = float(np.mean(p.y[-max(3, len(p.y) // 10) :]) - p.baseline)
        return rise / p.step_size, 0.2 * _span(p), 0.05 * _span(p)


# ---------------------------------------------------------------- public fits
_FOPDT_METHODS = ("least_squares", "smith", "sundaresan_krishnaswamy")


def fopdt(
    t: Any,
    y: Any = None,
    u: Any = None,
    *,
    method: str = "least_squares",
    drift: bool = True,
    time_unit: str = "s",
    output_unit: str = "",
    input_unit: str = "%",
) -> StepFit:
    """Fit a first-order-plus-dead-time model K e^{-theta s} / (tau s + 1) to a step test.

    Parameters
    ----------
    t : array, Quantity, StepTest, str or pathlib.Path
        Sample times [s, or ``time_unit``]; or a whole record (a
        :class:`StepTest` or the path of a CSV file, see :func:`read_step_test`).
    y : array or Quantity
        Process value. [``output_unit``]
    u : array or Quantity
        Controller output with one step anywhere in the record. [``input_unit``]
    method : {"least_squares", "smith", "sundaresan_krishnaswamy"}
        ``"smith"``: tau = 1.5 (t_63.2 - t_28.3), theta = t_63.2 - tau.
        ``"sundaresan_krishnaswamy"``: tau = 0.67 (t_85.3 - t_35.3),
        theta = 1.3 t_35.3 - 0.29 t_85.3 (the paper's constant 0.67, not 2/3).
        ``"least_squares"``: gain, tau, theta and the starting level fitted to
        the whole record, the model simulated on the recorded controller output.
    drift : bool
        Estimate a straight-line trend from the samples before the step and
        subtract it from the whole record. [-]
    time_unit, output_unit, input_unit : str
        Units of plain arrays, e.g. ``"min"``, ``"m**3/h"``, ``"%"``. [-]

    Returns
    -------
    StepFit

    Raises
    ------
    ParameterError
        Too short a record, no step found, time not increasing, no response.

    Notes
    -----
    The two-point times t_p are measured from the step to where the response
    (from the level before the step to the mean of the last tenth of the
    record) reaches the fraction p; the time is read as the time the
    interpolated response spends below p, which equals the crossing time for
    a clean rising response and averages out noise near the crossing. The
    two-point methods assume the output is held after the step and the
    response has settled by the end of the record; least squares uses any
    input record (a pulse, several steps). The drift removal assumes the
    trend seen before the step carries on unchanged through the test; a
    short or noisy pre-step record makes that estimate uncertain
    (:attr:`StepFit.drift` reports it). The 95 % intervals assume white
    noise and leave out the uncertainty of the drift estimate: approximate.

    References
    ----------
    C. L. Smith, *Digital Computer Process Control*, Intext, 1972, as given in
    D. E. Seborg, T. F. Edgar, D. A. Mellichamp and F. J. Doyle III, *Process
    Dynamics and Control*, 3rd ed., Wiley, 2011, §7.2.

    S. Sundaresan and P. R. Krishnaswamy, "Estimation of time delay, time
    constant parameters in time, frequency, and Laplace domains", Can. J.
    Chem. Eng. 56 (1978) 257-262.

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(0.0, 60.0, 0.1)
    >>> u = np.where(t >= 10.0, 55.0, 50.0)
    >>> y = 0.2 + 0.01 * np.where(t >= 11.0, -np.expm1(-(t - 11.0) / 4.0), 0.0) * 5
    >>> fit = fopdt(t, y, u, output_unit="m**3/s")
    >>> round(fit.gain, 4), round(fit.time_constant, 2), round(fit.dead_time, 2)
    (0.01, 4.0, 1.0)
    """
    if method not in _FOPDT_METHODS:
        raise ParameterError(f"`method`: got {method!r}, expected one of {', '.join(map(repr, _FOPDT_METHODS))}")
    p = _prepare(_as_test(t, y, u, (time_unit, output_unit, input_unit)), drift)
    if method != "least_squares":
        params, cautions = _fopdt_two_point(p, method)
        tau = params["time_constant"]
        sim = _simulate(p.test.time, p.test.controller_output, params["dead_time"], lambda x: _unit_first_order(x, tau))
        curve = p.baseline + params["gain"] * sim
        return _make_result(p, "FOPDT", method, params, curve, {}, cautions)
    k0, tau0, th0 = _first_guess(p)
    span = _span(p)
    dt = float(np.min(np.diff(p.test.time)))
    lower = np.array([-np.inf, 1e-3 * dt, 0.0, -np.inf])
    upper = np.array([np.inf, 20.0 * span, 0.9 * span, np.inf])
    starts = [np.array([k0, tau0, th0, p.baseline]), np.array([k0, 1.3 * tau0, 0.5 * th0, p.baseline])]
    x, iv, curve = _least_squares(
        p,
        ("gain", "time_constant", "dead_time", "baseline"),
        lambda x: lambda s: _unit_first_order(s, x[1]),
        starts,
        lower,
        upper,
    )
    cautions = _final_value(p)[1] if p.end == len(p.y) else []
    params = {"gain": float(x[0]), "time_constant": float(x[1]), "dead_time": float(x[2])}
    return _make_result(p, "FOPDT", method, params, curve, iv, cautions)


def sopdt(
    t: Any,
    y: Any = None,
    u: Any = None,
    *,
    method: str = "least_squares",
    drift: bool = True,
    time_unit: str = "s",
    output_unit: str = "",
    input_unit: str = "%",
) -> StepFit:
    """Fit a second-order-plus-dead-time model K e^{-theta s} / ((tau1 s + 1)(tau2 s + 1)) to a step test.

    Parameters
    ----------
    t, y, u : see :func:`fopdt`
        Record: times [s], process value [``output_unit``], controller output [``input_unit``].
    method : {"least_squares"}
        Least squares on the whole record with the dead time as a parameter
        (the published two-point methods here fit first-order models). [-]
    drift : bool
        Remove a straight-line trend estimated before the step. [-]
    time_unit, output_unit, input_unit : str
        Units of plain arrays. [-]

    Returns
    -------
    StepFit
        With ``time_constant >= time_constant_2``.

    Notes
    -----
    Overdamped (real) time constants only. When the second time constant is
    small against the first, its interval is wide: the record cannot tell it
    from dead time, and an FOPDT model is the honest answer.

    References
    ----------
    D. E. Seborg, T. F. Edgar, D. A. Mellichamp and F. J. Doyle III, *Process
    Dynamics and Control*, 3rd ed., Wiley, 2011, §7.2 (fitting by least squares).
    """
    if method != "least_squares":
        raise ParameterError(
            f"`method`: got {method!r}, expected 'least_squares' (the two-point methods fit first-order models)"
        )
    p = _prepare(_as_test(t, y, u, (time_unit, output_unit, input_unit)), drift)
    k0, tau0, th0 = _first_guess(p)
    span = _span(p)
    dt = float(np.min(np.diff(p.test.time)))
    lower = np.array([-np.inf, 1e-3 * dt, 1e-3 * dt, 0.0, -np.inf])
    upper = np.array([np.inf, 20.0 * span, 20.0 * span, 0.9 * span, np.inf])
    b = p.baseline
    starts = [
        np.array([k0, 0.75 * tau0, 0.25 * tau0, 0.8 * th0, b]),
        np.array([k0, 0.5 * tau0, 0.45 * tau0, 0.5 * th0, b]),
        np.array([k0, 0.95 * tau0, 0.05 * tau0, th0, b]),
    ]
    x, iv, curve = _least_squares(
        p,
        ("gain", "time_constant", "time_constant_2", "dead_time", "baseline"),
        lambda x: lambda s: _unit_second_order(s, x[1], x[2]),
        starts,
        lower,
        upper,
    )
    if x[2] > x[1]:
        x[[1, 2]] = x[[2, 1]]
        iv["time_constant"], iv["time_constant_2"] = iv["time_constant_2"], iv["time_constant"]
    cautions = _final_value(p)[1] if p.end == len(p.y) else []
    params = {"gain": float(x[0]), "time_constant": float(x[1]), "time_constant_2": float(x[2])}
    params["dead_time"] = float(x[3])
    return _make_result(p, "SOPDT", method, params, curve, iv, cautions)


def integrating(
    t: Any,
    y: Any = None,
    u: Any = None,
    *,
    method: str = "least_squares",
    drift: bool = True,
    time_unit: str = "s",
    output_unit: str = "",
    input_unit: str = "%",
) -> StepFit:
    """Fit an integrator with dead time, K e^{-theta s} / s, to a step test (a level, a tank).

    Parameters
    ----------
    t, y, u : see :func:`fopdt`
        Record: times [s], process value [``output_unit``], controller output [``input_unit``].
    method : {"least_squares", "tangent"}
        ``"tangent"``: a straight line through the last 30 % of the response
        after the step; its slope over the step size is the gain and its
        crossing of the starting level gives the dead time (common practice,
        no source). ``"least_squares"``: gain, dead time and starting level
        fitted to the whole record. [-]
    drift : bool
        Remove the trend before the step (for an integrating process, the
        imbalance of flows before the test). [-]
    time_unit, output_unit, input_unit : str
        Units of plain arrays. [-]

    Returns
    -------
    StepFit
        ``gain`` in [SI output unit / input unit / s]; ``time_constant`` None.

    References
    ----------
    D. E. Seborg, T. F. Edgar, D. A. Mellichamp and F. J. Doyle III, *Process
    Dynamics and Control*, 3rd ed., Wiley, 2011, §5.3 (integrating process
    response to a step; from memory).
    """
    if method not in ("least_squares", "tangent"):
        raise ParameterError(f"`method`: got {method!r}, expected 'least_squares' or 'tangent'")
    p = _prepare(_as_test(t, y, u, (time_unit, output_unit, input_unit)), drift)
    tt, yy = p.test.time[p.k : p.end], p.y[p.k : p.end]
    n = max(3, int(0.3 * len(tt)))
    slope, icpt = np.polyfit(tt[-n:] - p.step_time, yy[-n:], 1)
    if slope == 0.0:
        raise ParameterError("`y`: the process value does not ramp after the step, expected an integrating response")
    k0 = float(slope / p.step_size)
    th0 = float(max((p.baseline - icpt) / slope, 0.0))
    if method == "tangent":
        curve = p.baseline + k0 * _simulate(p.test.time, p.test.controller_output, th0, _unit_ramp)
        return _make_result(p, "integrating plus dead time", method, {"gain": k0, "dead_time": th0}, curve, {}, [])
    span = _span(p)
    lower, upper = np.array([-np.inf, 0.0, -np.inf]), np.array([np.inf, 0.9 * span, np.inf])
    x, iv, curve = _least_squares(
        p, ("gain", "dead_time", "baseline"), lambda x: _unit_ramp, [np.array([k0, th0, p.baseline])], lower, upper
    )
    params = {"gain": float(x[0]), "dead_time": float(x[1])}
    return _make_result(p, "integrating plus dead time", method, params, curve, iv, [])


# ---------------------------------------------------------------- planning a test
#: Caution printed with every plan.
PLAN_CAUTION = (
    "A bump test moves the real plant. Follow the site's procedures and permits, agree the step, the "
    "limits and who calls the abort with the operators and the process owner before the test, and "
    "abort by returning the output to its starting value."
)


@dataclasses.dataclass(frozen=True)
class BumpTestPlan:
    """A proposed bump test: the step, how long to record, how often to sample and when to abort.

    Attributes
    ----------
    step_size : float
        Signed step of the controller output. [input unit, usually %]
    output_before, output_after : float or None
        Controller output before and after the step, when the present output was given. [%]
    expected_change : float
        Expected change of the process value at the end (integrating: at the
        end of the hold). [SI output unit]
    record_before : float
        Steady record to take before the step. [s]
    record_after : float
        Record to take after the step (integrating: how long to hold the step). [s]
    sample_interval : float
        Longest sample interval. [s]
    abort_low, abort_high : float
        Abort if the process value leaves this band (absolute when the present
        value was given, else as a deviation from it). [SI output unit]
    output_unit : str
        Unit the process value is shown in (pint syntax); empty for SI.
    output_si_unit : str
        Unit of the values held.
    absolute : bool
        Whether the abort band is absolute (True) or a deviation (False).
    cautions : tuple of str
        Plain warnings, always ending with :data:`PLAN_CAUTION`.
    """

    step_size: float
    output_before: float | None
    output_after: float | None
    expected_change: float
    record_before: float
    record_after: float
    sample_interval: float
    abort_low: float
    abort_high: float
    output_unit: str
    output_si_unit: str
    absolute: bool
    cautions: tuple[str, ...]

    def table(self) -> list[tuple[str, Any, str]]:
        """Rows (item, value, unit) for the operators' sheet, process values in the display unit."""
        scale, off = _scale_offset(self.output_unit) if self.output_unit else (1.0, 0.0)
        yu = _pretty(self.output_unit) if self.output_unit else _pretty(self.output_si_unit)
        off = off if self.absolute else 0.0
        rows: list[tuple[str, Any, str]] = []
        if self.output_before is not None and self.output_after is not None:
            rows += [
                ("output before the step", self.output_before, "%"),
                ("output after the step", self.output_after, "%"),
            ]
        rows += [
            ("step", self.step_size, "%"),
            ("expected change of the process value", self.expected_change / scale, yu),
            ("steady record before the step, at least", self.record_before, "s"),
            ("record after the step, about", self.record_after, "s"),
            ("sample interval, at most", self.sample_interval, "s"),
            ("abort below" if self.absolute else "abort below (change from start)", (self.abort_low - off) / scale, yu),
            (
                "abort above" if self.absolute else "abort above (change from start)",
                (self.abort_high - off) / scale,
                yu,
            ),
        ]
        return rows

    def text(self) -> str:
        """The plan as printable text, with its cautions."""
        lines = ["Bump test plan"] + [f"  {q:<45s} {v:>10.4g} {u}" for q, v, u in self.table()]
        return "\n".join(lines + [f"Caution: {c}" for c in self.cautions])

    def __str__(self) -> str:
        return self.text()


def bump_test_plan(
    model: Any,
    *,
    step_size: float = 5.0,
    output_now: float | None = None,
    output_limits: tuple[float, float] = (0.0, 100.0),
    process_value_now: float | None = None,
    process_limits: tuple[float, float] | None = None,
    output_unit: str | None = None,
) -> BumpTestPlan:
    """Propose a bump test for a process whose model is roughly known.

    Parameters
    ----------
    model : StepFit or drivekit.models.FOPDT, SOPDT, IntegratingDeadTime
        Anything with ``gain`` [SI output / %], ``dead_time`` [s] and, for a
        self-regulating process, ``time_constant`` (and ``time_constant_2``) [s].
    step_size : float
        Signed step of the controller output; negative steps down. [%]
        Default 5 %: large enough to stand clear of noise, small enough not to
        upset the process (common practice, no source; 2-10 % is usual).
    output_now : float, optional
        Present controller output, checked against ``output_limits``. [%]
    output_limits : tuple of float
        Lowest and highest controller output. [%]
    process_value_now : float, optional
        Present process value, making the abort band absolute. [SI output unit]
    process_limits : tuple of float, optional
        Process values the test must not cross (low, high). [SI output unit]
    output_unit : str, optional
        Unit to show the process value in (e.g. ``"m**3/h"``); taken from a
        :class:`StepFit` when not given. [-]

    Returns
    -------
    BumpTestPlan

    Notes
    -----
    Record at least tau + theta of steady data before the step and about
    5 (tau_sum + theta) after it, sampling every tau/10 or faster (and theta/5
    or faster, to resolve the dead time); abort if the process value goes
    further than 1.5 times the expected change in the step's direction or
    0.5 times against it. For an integrating process, hold the step for
    6 theta and return the output. All common practice, no source; the
    98 % settling of a first-order lag in 4 tau is in Seborg et al., *Process
    Dynamics and Control*, 3rd ed., §5.2.
    """
    gain = float(model.gain)
    theta = float(model.dead_time)
    tau = getattr(model, "time_constant", None)
    tau_sum = (tau or 0.0) + (getattr(model, "time_constant_2", None) or 0.0)
    if gain == 0.0 or not math.isfinite(gain):
        raise ParameterError(f"`model`: got gain {gain:g}, expected a finite non-zero process gain")
    if step_size == 0.0:
        raise ParameterError("`step_size`: got 0 %, expected a non-zero step of the controller output")
    cautions = []
    after = None
    if output_now is not None:
        after = output_now + step_size
        lo, hi = output_limits
        if not lo <= after <= hi:
            raise ParameterError(
                f"`step_size`: got {step_size:g} % from {output_now:g} %, which leaves the output range "
                f"{lo:g}-{hi:g} %; expected a step that stays inside it (step the other way)"
            )
    if tau is None:  # integrating
        if theta <= 0.0:
            raise ParameterError("`model`: an integrating model needs a dead time > 0 s to plan the hold time")
        before, hold = 5.0 * theta, 6.0 * theta
        change = gain * step_size * (hold - theta)
        sample = theta / 5.0
        cautions.append("integrating process: the value keeps moving until the output is returned")
    else:
        before, hold = max(tau_sum + theta, 1e-9), 5.0 * (tau_sum + theta)
        change = gain * step_size
        sample = min(tau_sum / 10.0, theta / 5.0) if theta > 0 else tau_sum / 10.0
    band = sorted((-0.5 * change, 1.5 * change))
    ref = process_value_now if process_value_now is not None else 0.0
    low, high = ref + band[0], ref + band[1]
    if process_limits is not None:
        if process_value_now is None:
            raise ParameterError("`process_value_now`: got None, expected the present value to check `process_limits`")
        end = process_value_now + change
        if not process_limits[0] <= end <= process_limits[1]:
            cautions.append(
                f"the expected end value {end:.4g} lies outside the process limits "
                f"{process_limits[0]:.4g}-{process_limits[1]:.4g}: make the step smaller or step the other way"
            )
        low, high = max(low, process_limits[0]), min(high, process_limits[1])
    unit = output_unit if output_unit is not None else getattr(model, "output_unit", "")
    si = getattr(model, "output_si_unit", _si_unit(_normalise_unit(unit), "output_unit"))
    return BumpTestPlan(
        step_size=step_size,
        output_before=output_now,
        output_after=after,
        expected_change=change,
        record_before=before,
        record_after=hold,
        sample_interval=sample,
        abort_low=low,
        abort_high=high,
        output_unit=_normalise_unit(unit),
        output_si_unit=si,
        absolute=process_value_now is not None,
        cautions=(*cautions, PLAN_CAUTION),
    )
