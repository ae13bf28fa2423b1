"""Sweep views: margins over many variants (histogram or scatter), a tornado chart, the gain schedule along flow."""

from __future__ import annotations

import html
import math
from typing import Any

import bqplot as bq
import ipywidgets as w
import numpy as np

from ..units import ParameterError
from .base import PALETTE, array, figure

__all__ = ["GainScheduleView", "SweepView", "TornadoView"]

#: Bars of the histogram. [-]
HISTOGRAM_BINS = 30


def _numeric(frame: Any) -> list[str]:
    from pandas.api.types import is_numeric_dtype

    return [str(c) for c in frame.columns if is_numeric_dtype(frame[c].dtype)]


def _table(frame: Any) -> str:
    head = "".join(f"<th>{html.escape(str(c))}</th>" for c in frame.columns)
    body = "".join(
        "<tr>"
        + "".join(
            f"<td style='text-align:right'>{v:.4g}</td>" if isinstance(v, float) else f"<td>{html.escape(str(v))}</td>"
            for v in row
        )
        + "</tr>"
        for row in frame.itertuples(index=False)
    )
    return f"<table class='dk-table'><tr>{head}</tr>{body}</table>"


class _Box(w.VBox):
    def _finish(self, children: list[w.Widget], css: str) -> None:
        self.note = w.HTML("")
        self.note.add_class("dk-view-note")
        super().__init__([*children, self.note])
        self.add_class("dk-view")
        self.add_class(css)

    def say(self, text: str) -> None:
        """Show a plain-words note under the figure."""
        self.note.value = f"<span style='color:#555'>{html.escape(text)}</span>" if text else ""


class SweepView(_Box):
    """One loop metric over all variants of a sweep: histogram, or scatter against an input or another metric.

    Parameters
    ----------
    sweep : SweepResult
        From :func:`drivekit.sweep.run`.
    metric : str
        Metric column drawn (``"phase margin [deg]"``, ``"Ms [-]"``...).
    kind : str
        ``"histogram"`` or ``"scatter"``.
    x : str, optional
        Column on the scatter's x axis: a swept input or another metric;
        the first swept input by default.
    limit : float, optional
        A target drawn as a line (e.g. 45 for a phase margin). [unit of the metric]

    Attributes
    ----------
    bars : bqplot.Bars
        Histogram: variants per bin of the metric (variants without a value left out).
    points : bqplot.Scatter
        Scatter: the metric of each variant against ``x``.
    """

    def __init__(
        self,
        sweep: Any,
        *,
        metric: str = "phase margin [deg]",
        kind: str = "histogram",
        x: str | None = None,
        limit: float | None = None,
    ) -> None:
        if kind not in ("histogram", "scatter"):
            raise ParameterError(f"`kind`: got {kind!r}, expected 'histogram' or 'scatter'")
        self.limit = limit
        hx, hy = bq.LinearScale(), bq.LinearScale(min=0.0)
        self.bars = bq.Bars(x=[0.0], y=[0.0], scales={"x": hx, "y": hy}, colors=[PALETTE["blue"]], padding=0.05)
        self.hist_limit = bq.Lines(
            x=[0.0, 0.0], y=[0.0, 1.0], scales={"x": hx, "y": hy}, colors=[PALETTE["vermillion"]], line_style="dashed"
        )
        self.hist_x_axis = bq.Axis(scale=hx, label=metric, grid_lines="dashed", tick_format=".4g")
        self.histogram = figure(
            [self.bars, self.hist_limit],
            [self.hist_x_axis, bq.Axis(scale=hy, side="left", label="variants", grid_lines="dashed")],
            "Sweep: distribution",
            "dk-fig-sweep-hist",
        )
        sx, sy = bq.LinearScale(), bq.LinearScale()
        self.points = bq.Scatter(
            x=[0.0],
            y=[0.0],
            scales={"x": sx, "y": sy},
            colors=[PALETTE["blue"]],
            default_size=12,
            opacities=[0.6],
        )
        self.scatter_limit = bq.Lines(
            x=[0.0, 1.0], y=[0.0, 0.0], scales={"x": sx, "y": sy}, colors=[PALETTE["vermillion"]], line_style="dashed"
        )
        self.scatter_x_axis = bq.Axis(scale=sx, label="", grid_lines="dashed", tick_format=".4g")
        self.scatter_y_axis = bq.Axis(scale=sy, side="left", label=metric, grid_lines="dashed", tick_format=".4g")
        self.scatter = figure(
            [self.points, self.scatter_limit],
            [self.scatter_x_axis, self.scatter_y_axis],
            "Sweep",
            "dk-fig-sweep-scatter",
        )
        self.sweep = sweep
        metrics = [c for c in _numeric(sweep.metrics) if c != "stable"]
        if metric not in metrics:
            raise ParameterError(f"`metric`: got {metric!r}, expected one of {metrics}")
        xs = _numeric(sweep.inputs) + metrics
        x = x if x is not None else xs[0]
        if x not in xs:
            raise ParameterError(f"`x`: got {x!r}, expected one of {xs}")
        self.kind = w.ToggleButtons(options=["histogram", "scatter"], value=kind)
        self.kind.add_class("dk-sweep-kind")
        self.metric = w.Dropdown(options=metrics, value=metric, description="metric")
        self.metric.add_class("dk-sweep-metric")
        self.x = w.Dropdown(options=xs, value=x, description="against")
        self.x.add_class("dk-sweep-x")
        self._finish([w.HBox([self.kind, self.metric, self.x]), self.histogram, self.scatter], "dk-sweep")
        for control in (self.kind, self.metric, self.x):
            control.observe(lambda _c: self.draw(self.sweep), names="value")
        self.draw(sweep)

    def _values(self, sweep: Any, column: str) -> np.ndarray:
        frame = sweep.inputs if column in sweep.inputs.columns else sweep.metrics
        return np.asarray(frame[column], dtype=float)

    def draw(self, sweep: Any) -> None:
        """Draw ``sweep`` (a SweepResult) as the controls say."""
        self.sweep = sweep
        metric = self.metric.value
        y = self._values(sweep, metric)
        valid = np.isfinite(y)
        hist = self.kind.value == "histogram"
        self.histogram.layout.display = None if hist else "none"
        self.scatter.layout.display = "none" if hist else None
        self.x.layout.visibility = "hidden" if hist else "visible"
        lim = self.limit if self.limit is not None else math.nan
        if hist:
            counts, edges = np.histogram(y[valid], bins=HISTOGRAM_BINS)
            with self.bars.hold_sync():
                self.bars.x = array(0.5 * (edges[:-1] + edges[1:]))
                self.bars.y = array(counts)
            with self.hist_limit.hold_sync():
                self.hist_limit.x = array([lim, lim])
                self.hist_limit.y = array([0.0, float(counts.max()) if counts.size else 1.0])
            self.hist_x_axis.label = metric
        else:
            x = self._values(sweep, self.x.value)
            with self.points.hold_sync():
                self.points.x = array(x)
                self.points.y = array(y)
            finite_x = x[np.isfinite(x)]
            ends = [float(finite_x.min()), float(finite_x.max())] if finite_x.size else [0.0, 1.0]
            with self.scatter_limit.hold_sync():
                self.scatter_limit.x = array(ends)
                self.scatter_limit.y = array([lim, lim])
            self.scatter_x_axis.label = self.x.value
            self.scatter_y_axis.label = metric
        missing = int((~valid).sum())
        pct = sweep.percentiles((5, 50, 95))[metric] if valid.any() else None
        text = f"{int(valid.sum())} variants"
        if pct is not None:
            text += f"; 5 % / 50 % / 95 %: {pct.iloc[0]:.4g} / {pct.iloc[1]:.4g} / {pct.iloc[2]:.4g}"
        if missing:
            text += f"; {missing} without a value (see the sweep's reason column)"
        self.say(text)


class TornadoView(_Box):
    """Tornado chart: the metric at the low and high end of each parameter, bars from the nominal value.

    Parameters
    ----------
    tornado : Tornado
        From :func:`drivekit.sweep.tornado`.

    Attributes
    ----------
    low, high : bqplot.Bars
        Horizontal bars from the nominal value to the metric at each
        parameter's low and high end, largest swing on top.
    """

    def __init__(self, tornado: Any) -> None:
        p, v = bq.OrdinalScale(reverse=True), bq.LinearScale()
        sc = {"x": p, "y": v}
        self.low = bq.Bars(
            x=["-"], y=[0.0], scales=sc, orientation="horizontal", colors=[PALETTE["blue"]], labels=["at low end"]
        )
        self.high = bq.Bars(
            x=["-"], y=[0.0], scales=sc, orientation="horizontal", colors=[PALETTE["orange"]], labels=["at high end"]
        )
        for bars in (self.low, self.high):
            bars.display_legend = True
            bars.padding = 0.3
        self.value_axis = bq.Axis(scale=v, side="bottom", label="", grid_lines="dashed", tick_format=".4g")
        self.figure = figure(
            [self.low, self.high],
            [bq.Axis(scale=p, side="left"), self.value_axis],
            "Tornado",
            "dk-fig-tornado",
        )
        self.figure.fig_margin = {"top": 30, "bottom": 40, "left": 150, "right": 15}
        self.table = w.HTML("")
        self.table.add_class("dk-tornado-table")
        self._finish([self.figure, self.table], "dk-tornado")
        self.draw(tornado)

    def draw(self, tornado: Any) -> None:
        """Draw ``tornado`` (a Tornado)."""
        rows = tornado.rows
        names = [str(n) for n in rows["parameter"]]
        for bars, column in ((self.low, "at low"), (self.high, "at high")):
            with bars.hold_sync():
                bars.x = names
                bars.y = array(rows[column])
                bars.base = float(tornado.nominal)
        self.value_axis.label = tornado.metric
        self.table.value = _table(rows)
        self.say(f"nominal {tornado.metric}: {tornado.nominal:.4g}; bars run from it to each end's value")


class GainScheduleView(_Box):
    """A gain schedule along flow: one column of the table drawn against flow, and the table itself.

    Parameters
    ----------
    schedule : GainSchedule
        From :func:`drivekit.sweep.gain_schedule`.
    quantity : str
        Column drawn first (``"kp"``, ``"ti [s]"``, ``"plant gain [SI]"``, ``"phase margin [deg]"``...).

    Attributes
    ----------
    line : bqplot.Lines
        The chosen column against flow [m³/h].
    points : bqplot.Scatter
        The same values as points (one per flow of the table).
    """

    def __init__(self, schedule: Any, *, quantity: str = "kp") -> None:
        q, v = bq.LinearScale(), bq.LinearScale()
        sc = {"x": q, "y": v}
        self.line = bq.Lines(x=[0.0, 1.0], y=[0.0, 0.0], scales=sc, colors=[PALETTE["blue"]], stroke_width=2)
        self.points = bq.Scatter(x=[0.0], y=[0.0], scales=sc, colors=[PALETTE["blue"]], default_size=30)
        self.value_axis = bq.Axis(scale=v, side="left", label=quantity, grid_lines="dashed", tick_format=".4g")
        self.figure = figure(
            [self.line, self.points],
            [bq.Axis(scale=q, label="flow [m³/h]", grid_lines="dashed"), self.value_axis],
            "Gain schedule along flow",
            "dk-fig-schedule",
        )
        options = [c for c in _numeric(schedule.table) if c != "flow [m3/h]"]
        if quantity not in options:
            raise ParameterError(f"`quantity`: got {quantity!r}, expected one of {options}")
        self.quantity = w.Dropdown(options=options, value=quantity, description="quantity")
        self.quantity.add_class("dk-schedule-quantity")
        self.table = w.HTML("")
        self.table.add_class("dk-schedule-table")
        self._finish([self.quantity, self.figure, self.table], "dk-schedule")
        self.schedule = schedule
        self.quantity.observe(lambda _c: self.draw(self.schedule), names="value")
        self.draw(schedule)

    def draw(self, schedule: Any) -> None:
        """Draw ``schedule`` (a GainSchedule)."""
        self.schedule = schedule
        table = schedule.table
        flow = array(table["flow [m3/h]"])
        values = array(table[self.quantity.value])
        for mark in (self.line, self.points):
            with mark.hold_sync():
                mark.x = flow
                mark.y = values
        self.value_axis.label = self.quantity.value
        self.table.value = _table(table)
        self.say(f"tuning rule: {schedule.rule}")
