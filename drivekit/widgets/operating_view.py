"""Operating-point view: pump curves at several speeds, the system curve and where the plant runs."""

from __future__ import annotations

import html
import math
from typing import Any

import bqplot as bq
import ipywidgets as w
import numpy as np

from .base import PALETTE, View, array, figure, nice_ticks, set_ticks
from .model import DesignModel

__all__ = ["OperatingPointView"]

_M3H = 3600.0
_RPM = 60.0 / (2.0 * math.pi)


class OperatingPointView(View):
    """Pump head curves (one per speed), system curve, operating point, minimum flow.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.

    Attributes
    ----------
    pump_lines : bqplot.Lines
        Pump curves, one row of ``y`` per speed; x in m³/h, y in m.
    system_line, point_line, min_flow_line : bqplot.Lines
        System curve, pump curve at the operating speed, minimum-flow marker.
    point : bqplot.Scatter
        The operating point.
    """

    css = "dk-operating"

    def __init__(self, model: DesignModel) -> None:
        x = bq.LinearScale(min=0.0)
        y = bq.LinearScale(min=0.0)
        sc = {"x": x, "y": y}
        grey = [PALETTE["grey"]]
        self.pump_lines = bq.Lines(x=[0.0, 1.0], y=[[0.0, 0.0]], scales=sc, colors=grey, stroke_width=1.2)
        self.point_line = bq.Lines(x=[0.0, 1.0], y=[0.0, 0.0], scales=sc, colors=[PALETTE["blue"]], stroke_width=2.5)
        self.system_line = bq.Lines(
            x=[0.0, 1.0], y=[0.0, 0.0], scales=sc, colors=[PALETTE["vermillion"]], stroke_width=2.5
        )
        self.min_flow_line = bq.Lines(
            x=[0.0, 0.0], y=[0.0, 1.0], scales=sc, colors=[PALETTE["purple"]], line_style="dashed", stroke_width=1.5
        )
        self.point = bq.Scatter(
            x=[0.0], y=[0.0], scales=sc, colors=[PALETTE["black"]], default_size=80, marker="circle"
        )
        self.flow_axis = bq.Axis(scale=x, label="flow [m³/h]", grid_lines="dashed")
        axes = [
            self.flow_axis,
            bq.Axis(scale=y, side="left", label="head [m]", grid_lines="dashed"),
        ]
        marks = [self.pump_lines, self.system_line, self.point_line, self.min_flow_line, self.point]
        self.figure = figure(marks, axes, "Pump and system curves", "dk-fig-operating")
        self.readout = w.HTML("")
        self.readout.add_class("dk-operating-readout")
        self._start(model, [self.figure, self.readout])

    def draw(self, result: Any) -> None:
        """Update the curves and the readout for ``result``."""
        c = result.curves
        if c is None:
            self.say("not a pump: no pump or system curves")
            return
        self.say("")
        q = array(c.flow) * _M3H
        top = float(np.nanmax(c.pump_head)) * 1.05
        set_ticks(self.flow_axis, nice_ticks(0.0, float(np.nanmax(q))))
        with self.pump_lines.hold_sync():
            self.pump_lines.x = q
            self.pump_lines.y = array(c.pump_head)
            self.pump_lines.labels = [f"{s * _RPM:.0f} rpm" for s in c.speeds]
        with self.system_line.hold_sync():
            self.system_line.x = q
            self.system_line.y = array(c.system_head)
        with self.point_line.hold_sync():
            self.point_line.x = q
            self.point_line.y = array(c.point_curve)
        qmin = c.min_flow * _M3H if math.isfinite(c.min_flow) else 0.0
        with self.min_flow_line.hold_sync():
            self.min_flow_line.x = array([qmin, qmin])
            self.min_flow_line.y = array([0.0, top if math.isfinite(c.min_flow) else 0.0])
        with self.point.hold_sync():
            self.point.x = array([c.point_flow * _M3H])
            self.point.y = array([c.point_head])
        rows = [
            ("flow", f"{c.point_flow * _M3H:.4g} m³/h"),
            ("head", f"{c.point_head:.4g} m"),
            ("pump speed", f"{c.point_speed * _RPM:.4g} rpm"),
            ("minimum flow at this speed", f"{qmin:.4g} m³/h" if math.isfinite(c.min_flow) else "not given"),
            ("least speed to lift the static head", f"{c.min_speed * _RPM:.4g} rpm"),
        ]
        cautions = "".join(f"<li>{html.escape(t)}</li>" for t in result.operating_point.cautions)
        table = "".join(f"<tr><td>{html.escape(k)}</td><td style='text-align:right'>{v}</td></tr>" for k, v in rows)
        self.readout.value = f"<table class='dk-table'>{table}</table>" + (f"<ul>{cautions}</ul>" if cautions else "")
