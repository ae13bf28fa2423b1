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
from collections.abc import Callable
from typing import Any

import numpy as np
import pint
import scipy.optimize
import scipy.signal

from .bumptest import PLAN_CAUTION, BumpTestPlan, bump_test_plan
from .steptest import MIN_SAMPLES, StepTest, _as_test, _is_percent, _pretty, _scale_offset, read_step_test, step_test
from .units import ParameterError, ureg

__all__ = [
    "MIN_SAMPLES",
    "PLAN_CAUTION",
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
