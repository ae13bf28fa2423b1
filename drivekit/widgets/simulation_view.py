"""Simulation view: the traces of a simulated run (measurement and setpoint, controller output, a chosen third)."""

from __future__ import annotations

import html
from typing import Any

import bqplot as bq
import ipywidgets as w
import numpy as np

from ..units import ParameterError
from .base import PALETTE, array, figure, nice_ticks, set_ticks

__all__ = ["SimulationView"]

_TIME = "time [s]"
#: Third-trace choices shown first when the run has them.
_PREFERRED = ("motor torque [N*m]", "motor current [A]")


def _column(frame: Any, start: str) -> str:
    for name in frame.columns:
        if name.startswith(start):
            return str(name)
    raise ParameterError(f"`result`: its table has no column starting with {start!r}; got {list(frame.columns)}")


def _round_ticks(axis: bq.Axis, *columns: Any) -> None:
    """Round ticks spanning the finite values of ``columns``."""
    values = np.concatenate([np.asarray(c, dtype=float).ravel() for c in columns])
    values = values[np.isfinite(values)]
    if values.size:
        set_ticks(axis, nice_ticks(float(values.min()), float(values.max()), 5))


class SimulationView(w.VBox):
    """Traces of a :class:`~drivekit.simulate.SimulationResult`, one figure each, on one time scale.

    Parameters
    ----------
    result : SimulationResult
        The run (from :func:`drivekit.simulate`).
    output_limits : tuple of float, optional
        Controller output limits drawn on the output trace, e.g. the PID's
        ``output_limits`` or the drive's reference range. [controller output unit]
    trace : str, optional
        Column of the third figure; motor torque by default (motor current
        when the run has no torque column).

    Attributes
    ----------
    measurement, setpoint : bqplot.Lines
        The measured value as the controller read it and the setpoint, in the
        table's trade unit (m³/h, rpm).
    output : bqplot.Lines
        The controller output.
    limits : bqplot.Lines
        Rows 0 and 1: low and high output limits (NaN without limits).
    third : bqplot.Lines
        The trace chosen in :attr:`trace_menu`.
    summary : ipywidgets.HTML
        The run's summary (``SimulationResult.table()``).
    """

    def __init__(self, result: Any, *, output_limits: tuple[float, float] | None = None, trace: str | None = None):
        if not hasattr(result, "frame") or not hasattr(result, "table"):
            raise ParameterError(f"`result`: got {type(result).__name__}, expected a SimulationResult")
        self.output_limits = output_limits
        t = bq.LinearScale()
        y, u, z = bq.LinearScale(), bq.LinearScale(), bq.LinearScale()
        self.setpoint = bq.Lines(
            x=[0.0, 1.0],
            y=[0.0, 0.0],
            scales={"x": t, "y": y},
            colors=[PALETTE["grey"]],
            line_style="dashed",
            labels=["setpoint"],
            display_legend=True,
        )
        self.measurement = bq.Lines(
            x=[0.0, 1.0],
            y=[0.0, 0.0],
            scales={"x": t, "y": y},
            colors=[PALETTE["blue"]],
            stroke_width=2,
            labels=["measured"],
            display_legend=True,
        )
        self.output = bq.Lines(x=[0.0, 1.0], y=[0.0, 0.0], scales={"x": t, "y": u}, colors=[PALETTE["orange"]])
        self.limits = bq.Lines(
            x=[0.0, 1.0], y=[[0.0, 0.0]] * 2, scales={"x": t, "y": u}, colors=[PALETTE["black"]], line_style="dashed"
        )
        self.third = bq.Lines(
            x=[0.0, 1.0], y=[0.0, 0.0], scales={"x": t, "y": z}, colors=[PALETTE["green"]], stroke_width=1.6
        )
        self.y_axis = bq.Axis(scale=y, side="left", label="measured", grid_lines="dashed", tick_format=".4g")
        self.u_axis = bq.Axis(scale=u, side="left", label="controller output", grid_lines="dashed", tick_format=".4g")
        self.z_axis = bq.Axis(scale=z, side="left", label="", grid_lines="dashed", tick_format=".4g")

        def time_axis() -> bq.Axis:
            return bq.Axis(scale=t, label="time [s]", grid_lines="dashed")

        self.figure = figure(
            [self.setpoint, self.measurement], [time_axis(), self.y_axis], "Measured value", "dk-fig-sim-measured"
        )
        self.output_figure = figure(
            [self.limits, self.output],
            [time_axis(), self.u_axis],
            "Controller output",
            "dk-fig-sim-output",
            height="200px",
        )
        self.third_figure = figure([self.third], [time_axis(), self.z_axis], "", "dk-fig-sim-third", height="200px")
        self.trace_menu = w.Dropdown(options=[], description="trace")
        self.trace_menu.add_class("dk-sim-trace")
        self.summary = w.HTML("")
        self.summary.add_class("dk-sim-summary")
        super().__init__([self.figure, self.output_figure, self.trace_menu, self.third_figure, self.summary])
        self.add_class("dk-view")
        self.add_class("dk-simulation")
        self.result: Any = None
        self._wanted = trace
        self._syncing = False
        self.draw(result)
        self.trace_menu.observe(self._on_trace, names="value")

    def draw(self, result: Any) -> None:
        """Draw a (new) run; the figures are kept and their marks updated."""
        self.result = result
        frame = result.frame
        t = array(frame[_TIME])
        sp, meas, out = _column(frame, "setpoint ["), _column(frame, "measured "), _column(frame, "controller output")
        with self.setpoint.hold_sync():
            self.setpoint.x = t
            self.setpoint.y = array(frame[sp])
        with self.measurement.hold_sync():
            self.measurement.x = t
            self.measurement.y = array(frame[meas])
        with self.output.hold_sync():
            self.output.x = t
            self.output.y = array(frame[out])
        lo, hi = self.output_limits if self.output_limits is not None else (np.nan, np.nan)
        with self.limits.hold_sync():
            self.limits.x = array([t[0], t[-1]])
            self.limits.y = array([[lo, lo], [hi, hi]])
        self.y_axis.label = meas
        self.u_axis.label = out
        _round_ticks(self.y_axis, frame[sp], frame[meas])
        _round_ticks(self.u_axis, frame[out], [lo, hi])
        others = [c for c in frame.columns if c not in (_TIME, sp, meas, out)]
        first = [c for c in _PREFERRED if c in others]
        options = first + [c for c in others if c not in first]
        chosen = self._wanted if self._wanted in options else (options[0] if options else None)
        self._syncing = True
        try:
            if tuple(self.trace_menu.options) != tuple(options):
                self.trace_menu.options = options
            self.trace_menu.value = chosen
        finally:
            self._syncing = False
        self._draw_third()
        rows = "".join(
            f"<tr><td>{html.escape(name)}</td><td class='dk-value' style='text-align:right'>{value:.4g}</td>"
            f"<td>{html.escape(unit)}</td></tr>"
            for name, value, unit in result.table()
        )
        self.summary.value = f"<table class='dk-table'>{rows}</table>"

    def _draw_third(self) -> None:
        name = self.trace_menu.value
        if not name:
            return
        frame = self.result.frame
        with self.third.hold_sync():
            self.third.x = array(frame[_TIME])
            self.third.y = array(frame[name])
        self.z_axis.label = name
        _round_ticks(self.z_axis, frame[name])

    def _on_trace(self, change: dict[str, Any]) -> None:
        if self._syncing:
            return
        self._wanted = change["new"]
        self._draw_third()
