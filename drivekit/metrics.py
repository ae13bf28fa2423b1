"""Metrics of time responses: a setpoint step (rise, settling, overshoot, IAE) and a load step (peak, recovery, IAE).

Reached through :mod:`drivekit.margins` and ``drivekit`` as well.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from .loop import Loop
from .responses import StepResponse, step_response
from .units import ParameterError

__all__ = ["LoadMetrics", "StepMetrics", "load_metrics", "step_metric_arrays", "step_metrics"]


@dataclasses.dataclass(frozen=True)
class StepMetrics:
    """Metrics of a step response.

    Attributes
    ----------
    rise_time : float
        Time from 10 % to 90 % of the final change (limits a parameter). [s]
    settling_time : float
        Time after which the output stays within the band (2 % by default)
        of the final value. [s]
    overshoot : float
        Peak beyond the final value, relative to it. [%]
    undershoot : float
        Initial move in the wrong direction, relative to the final value. [%]
    peak : float
        Peak output. [SI output unit]
    peak_time : float
        Time of the peak. [s]
    final_value : float
        Steady-state output from the model. [SI output unit]
    steady_state_error : float
        Setpoint minus final value (closed loop), nan for an open loop. [SI output unit]
    iae : float
        Integral of |error| (setpoint - y; final value - y for an open loop). [unit*s]
    itae : float
        Integral of t |error|. [unit*s**2]
    """

    rise_time: float
    settling_time: float
    overshoot: float
    undershoot: float
    peak: float
    peak_time: float
    final_value: float
    steady_state_error: float
    iae: float
    itae: float

    def table(self) -> list[tuple[str, str, str]]:
        """Rows (quantity, value, unit) for display."""
        return [
            ("rise time (10-90 %)", f"{self.rise_time:.4g}", "s"),
            ("settling time", f"{self.settling_time:.4g}", "s"),
            ("overshoot", f"{self.overshoot:.3g}", "%"),
            ("undershoot", f"{self.undershoot:.3g}", "%"),
            ("peak", f"{self.peak:.4g}", ""),
            ("peak time", f"{self.peak_time:.4g}", "s"),
            ("final value", f"{self.final_value:.4g}", ""),
            ("steady-state error", f"{self.steady_state_error:.3g}", ""),
            ("IAE", f"{self.iae:.4g}", "unit*s"),
            ("ITAE", f"{self.itae:.4g}", "unit*s^2"),
        ]


def _first_crossing(t: np.ndarray, s: np.ndarray, level: np.ndarray) -> np.ndarray:
    """First time each row of s (sign-normalised) reaches level, linearly interpolated (nan if never)."""
    above = s >= level[:, None]
    i = np.argmax(above, axis=1)
    found = above[np.arange(len(i)), i]
    i0 = np.maximum(i - 1, 0)
    rows = np.arange(len(i))
    y0, y1 = s[rows, i0], s[rows, i]
    t0, t1 = t[rows, i0], t[rows, i]
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(y1 > y0, (level - y0) / (y1 - y0), 0.0)
    out = np.where(i == 0, t[rows, 0], t0 + np.clip(frac, 0, 1) * (t1 - t0))
    return np.where(found, out, np.nan)


def step_metric_arrays(
    t: np.ndarray,
    y: np.ndarray,
    final: np.ndarray,
    setpoint: np.ndarray | None,
    threshold: float,
    rise: tuple,
    uniform: bool = False,
) -> dict[str, np.ndarray]:
    """Step metrics for each row of y (shape (N, T)) at times t (shape (N, T)); arrays of length N.

    ``uniform`` says that each row of t is k h (k = 0, 1, ...), so the
    trapezoidal integrals are h (sum - (first + last)/2).
    """
    final = np.asarray(final, float)
    rows = np.arange(y.shape[0])
    sgn = np.where(final < 0, -1.0, 1.0)
    s = y * sgn[:, None]
    fin = np.abs(final)
    ok = np.isfinite(fin) & (fin > 0)
    t_lo = _first_crossing(t, s, rise[0] * fin)
    t_hi = _first_crossing(t, s, rise[1] * fin)
    outside = np.abs(s - fin[:, None]) > threshold * fin[:, None]
    last = y.shape[1] - 1 - np.argmax(outside[:, ::-1], axis=1)
    any_out = outside.any(axis=1)
    nxt = np.minimum(last + 1, y.shape[1] - 1)
    # interpolate the last exit from the band
    e0 = np.abs(s[rows, last] - fin) - threshold * fin
    e1 = np.abs(s[rows, nxt] - fin) - threshold * fin
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(e0 != e1, e0 / (e0 - e1), 0.0)
    ts = t[rows, last] + np.clip(frac, 0, 1) * (t[rows, nxt] - t[rows, last])
    ts = np.where(any_out, np.where(last == y.shape[1] - 1, np.nan, ts), t[:, 0])
    ipk = np.argmax(s, axis=1)
    peak_s, peak_t = _parabola_peak(t, s, ipk)
    over = np.maximum(0.0, (peak_s - fin) / fin * 100.0)
    under = np.maximum(0.0, -np.min(s, axis=1) / fin * 100.0)
    target = setpoint if setpoint is not None else final
    err = np.abs(target[:, None] - y)
    if uniform:
        h = t[:, 1] - t[:, 0]
        et = err * t
        iae = h * (err.sum(axis=1) - 0.5 * (err[:, 0] + err[:, -1]))
        itae = h * (et.sum(axis=1) - 0.5 * (et[:, 0] + et[:, -1]))
    else:
        iae = np.trapezoid(err, t, axis=1)
        itae = np.trapezoid(err * t, t, axis=1)
    sse = (setpoint - final) if setpoint is not None else np.full(len(final), np.nan)
    nan = np.full(len(final), np.nan)
    return {
        "rise_time": np.where(ok, t_hi - t_lo, nan),
        "settling_time": np.where(ok, ts, nan),
        "overshoot": np.where(ok, over, nan),
        "undershoot": np.where(ok, under, nan),
        "peak": peak_s * sgn,
        "peak_time": peak_t,
        "final_value": final,
        "steady_state_error": sse,
        "iae": np.where(np.isfinite(target), iae, nan),
        "itae": np.where(np.isfinite(target), itae, nan),
    }


def _parabola_peak(t: np.ndarray, s: np.ndarray, i: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Peak value and time from a parabola through the grid maximum and its neighbours."""
    rows = np.arange(len(i))
    inner = (i > 0) & (i < s.shape[1] - 1)
    j = np.clip(i, 1, s.shape[1] - 2)
    a, b, c = s[rows, j - 1], s[rows, j], s[rows, j + 1]
    h = t[rows, j + 1] - t[rows, j]
    den = a - 2 * b + c
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.where(den < 0, 0.5 * (a - c) / den, 0.0)
    x = np.clip(x, -1.0, 1.0)
    pk = b - 0.25 * (a - c) * x
    use = inner & (den < 0)
    return np.where(use, pk, s[rows, i]), np.where(use, t[rows, j] + x * h, t[rows, i])


def step_metrics(
    sys: Any, settling_threshold: float = 0.02, rise_limits: tuple[float, float] = (0.1, 0.9)
) -> StepMetrics:
    """Rise time, settling time, overshoot, peak, steady-state error, IAE and ITAE of a step response.

    Parameters
    ----------
    sys : StepResponse, LinearModel, Loop or python-control LTI
        A computed step response, or a model (open-loop step) or loop
        (setpoint step) to compute it from.
    settling_threshold : float
        Half-width of the settling band relative to the final value. [-]
    rise_limits : tuple of float
        Fractions of the final value between which the rise time is taken. [-]

    Returns
    -------
    StepMetrics

    Notes
    -----
    Definitions as in Ogata, *Modern Control Engineering*, 5th ed., §5-3 and
    python-control's ``step_info``; crossing times are interpolated linearly
    between samples and the peak by a parabola through the three highest
    samples. The final value comes from the model, not the last sample.
    """
    if not 0 < settling_threshold < 1:
        raise ParameterError(f"`settling_threshold`: got {settling_threshold!r}, expected a fraction between 0 and 1")
    lo, hi = rise_limits
    if not 0 <= lo < hi <= 1:
        raise ParameterError(f"`rise_limits`: got {rise_limits!r}, expected (low, high) with 0 <= low < high <= 1")
    resp = sys if isinstance(sys, StepResponse) else step_response(sys)
    closed = resp.kind.startswith("setpoint")
    sp = np.array([resp.setpoint[-1]]) if closed else None
    vals = step_metric_arrays(
        resp.t[None, :], resp.y[None, :], np.array([resp.final_value]), sp, settling_threshold, rise_limits
    )
    return StepMetrics(**{k: float(v[0]) for k, v in vals.items()})


@dataclasses.dataclass(frozen=True)
class LoadMetrics:
    """Metrics of the answer to a load-disturbance step.

    Attributes
    ----------
    peak_deviation : float
        Largest deviation of the measurement from the setpoint, with its sign. [SI output unit]
    peak_time : float
        Time of the largest deviation. [s]
    recovery_time : float
        Time after which the deviation stays within the band (inf if it never does). [s]
    band : float
        Half-width of the recovery band. [SI output unit]
    offset : float
        Steady deviation left (0 with integral action). [SI output unit]
    iae : float
        Integral of |deviation| to infinity: over the response and its tail
        beyond the window (``StepResponse.tail_iae``). With integral action
        and no change of sign it equals 1/ki for a unit load step (Astrom &
        Hagglund, *Advanced PID Control*, ISA 2006, §4 (from memory)). [unit*s]
    """

    peak_deviation: float
    peak_time: float
    recovery_time: float
    band: float
    offset: float
    iae: float

    def table(self) -> list[tuple[str, str, str]]:
        """Rows (quantity, value, unit) for display."""
        return [
            ("peak deviation", f"{self.peak_deviation:.4g}", ""),
            ("time of peak", f"{self.peak_time:.4g}", "s"),
            ("recovery time", f"{self.recovery_time:.4g}", "s"),
            ("recovery band", f"{self.band:.3g}", ""),
            ("offset", f"{self.offset:.3g}", ""),
            ("IAE", f"{self.iae:.4g}", "unit*s"),
        ]


def load_metrics(response: Any, band: float = 0.05) -> LoadMetrics:
    """Peak deviation, its time, recovery time and IAE of a load-disturbance response.

    Parameters
    ----------
    response : StepResponse or Loop
        A load-step response (see :func:`drivekit.responses.load_response`) or a loop.
    band : float
        Recovery band as a fraction of the peak deviation (common practice, no source). [-]

    Returns
    -------
    LoadMetrics
    """
    from .responses import load_response

    if not 0 < band < 1:
        raise ParameterError(f"`band`: got {band!r}, expected a fraction of the peak deviation between 0 and 1")
    resp = load_response(response) if isinstance(response, Loop) else response
    if not isinstance(resp, StepResponse):
        raise ParameterError(f"`response`: got {type(response).__name__}, expected a StepResponse or a Loop")
    dev = resp.y - resp.setpoint
    i = int(np.argmax(np.abs(dev)))
    peak_s, peak_t = _parabola_peak(resp.t[None, :], (np.abs(dev))[None, :], np.array([i]))
    peak = float(peak_s[0]) * (1.0 if dev[i] >= 0 else -1.0)
    width = band * abs(peak)
    outside = np.nonzero(np.abs(dev) > width)[0]
    offset = resp.final_value - float(resp.setpoint[-1])
    if not math.isfinite(offset) or abs(offset) > width or (len(outside) and outside[-1] == len(dev) - 1):
        recovery = math.inf
    elif not len(outside):
        recovery = 0.0
    else:
        k = outside[-1]
        a, b = abs(dev[k]) - width, abs(dev[k + 1]) - width
        recovery = float(resp.t[k] + a / (a - b) * (resp.t[k + 1] - resp.t[k]))
    iae = float(np.trapezoid(np.abs(dev), resp.t)) + resp.tail_iae
    return LoadMetrics(peak, float(peak_t[0]), recovery, width, offset, iae)
