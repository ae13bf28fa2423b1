"""Loop views: step, Bode, Nyquist, sensitivity, root locus, pole-zero. Each draws one LoopData."""

from __future__ import annotations

import html
import math
from typing import Any

import bqplot as bq
import ipywidgets as w
import numpy as np

from ..units import ParameterError
from .base import PALETTE, View, array, figure
from .model import DesignModel

__all__ = ["BodeView", "NyquistView", "PoleZeroView", "RootLocusView", "SensitivityView", "StepView"]

_NO_LOOP = "no controller in the design: nothing to close the loop with"


def _db(x: np.ndarray) -> np.ndarray:
    return 20.0 * np.log10(np.maximum(np.abs(x), 1e-300))


def _finite(x: float) -> bool:
    return x is not None and math.isfinite(x)


class StepView(View):
    """Setpoint and load-step responses of the measurement, and the controller output with its limits.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.

    Attributes
    ----------
    measurement : bqplot.Lines
        Measurement after a setpoint step (row 0) and after a load step (row 1),
        in the trade's unit (m³/h, rpm); x in s.
    output : bqplot.Lines
        Controller output for the same two steps (rows 0 and 1), with its
        limits (rows 2 and 3, flat lines).
    settling : bqplot.Lines
        Settling time marker on the measurement plot.
    """

    css = "dk-step"

    def __init__(self, model: DesignModel) -> None:
        t = bq.LinearScale(min=0.0)
        y = bq.LinearScale()
        u = bq.LinearScale()
        colors = [PALETTE["blue"], PALETTE["vermillion"]]
        self.measurement = bq.Lines(
            x=[0.0, 1.0],
            y=[[0.0, 0.0], [0.0, 0.0]],
            scales={"x": t, "y": y},
            colors=colors,
            stroke_width=2,
            labels=["setpoint step", "load step"],
            display_legend=True,
        )
        self.setpoint = bq.Lines(
            x=[0.0, 1.0], y=[0.0, 0.0], scales={"x": t, "y": y}, colors=[PALETTE["grey"]], line_style="dashed"
        )
        self.settling = bq.Lines(
            x=[0.0, 0.0], y=[0.0, 0.0], scales={"x": t, "y": y}, colors=[PALETTE["green"]], line_style="dotted"
        )
        self.output = bq.Lines(
            x=[0.0, 1.0],
            y=[[0.0, 0.0]] * 4,
            scales={"x": t, "y": u},
            colors=[*colors, PALETTE["black"], PALETTE["black"]],
            stroke_width=1.6,
        )
        self.y_axis = bq.Axis(scale=y, side="left", label="measurement", grid_lines="dashed", tick_format=".4g")
        self.u_axis = bq.Axis(scale=u, side="left", label="controller output", grid_lines="dashed", tick_format=".4g")
        self.figure = figure(
            [self.setpoint, self.measurement, self.settling],
            [bq.Axis(scale=t, label="time [s]", grid_lines="dashed"), self.y_axis],
            "Step responses",
            "dk-fig-step",
        )
        self.output_figure = figure(
            [self.output],
            [bq.Axis(scale=t, label="time [s]", grid_lines="dashed"), self.u_axis],
            "Controller output",
            "dk-fig-output",
            height="200px",
        )
        self._start(model, [self.figure, self.output_figure])

    def draw(self, result: Any) -> None:
        """Update the responses for ``result``."""
        loop = result.loop
        if loop is None:
            self.say(_NO_LOOP)
            return
        plant = result.plant
        op = result.operating_point
        scale = plant.display_scale
        y0 = (op.flow if result.design.train.is_pump else op.machine_speed) * scale
        u0 = op.u_si
        t = array(loop.time)
        ys = y0 + np.vstack([loop.setpoint_y, loop.load_y]) * scale
        us = u0 + np.vstack([loop.setpoint_u, loop.load_u])
        limits = result.design.output_span or getattr(result.design.controller, "output_limits", None)
        lo, hi = limits if limits is not None else (math.nan, math.nan)
        ones = np.ones_like(t)
        rows = np.vstack([us, lo * ones, hi * ones]) if limits is not None else np.vstack([us, us[:1], us[:1]])
        with self.measurement.hold_sync():
            self.measurement.x = t
            self.measurement.y = array(ys)
        r = y0 + loop.setpoint_step * scale
        with self.setpoint.hold_sync():
            self.setpoint.x = array([0.0, t[-1]])
            self.setpoint.y = array([r, r])
        ts = loop.settling_time if _finite(loop.settling_time) else 0.0
        with self.settling.hold_sync():
            self.settling.x = array([ts, ts])
            self.settling.y = array([y0, r] if ts else [y0, y0])
        with self.output.hold_sync():
            self.output.x = t
            self.output.y = array(rows)
        unit = plant.output_display_unit.replace("**3", "³")
        self.y_axis.label = f"{plant.output_name} [{unit}]"
        self.u_axis.label = f"controller output [{plant.input_unit}]"
        self.say(
            f"setpoint step {loop.setpoint_step * scale:.3g} {unit}, load step {loop.load_step:.3g} "
            f"{plant.input_unit} at the plant input; settling (2 %) {ts:.3g} s"
            if ts
            else "the closed loop does not settle"
        )


class BodeView(View):
    """Bode plot of the open loop L(jw): magnitude and phase sharing one frequency scale.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.
    hertz : bool
        Frequency axis in Hz instead of rad/s.

    Attributes
    ----------
    magnitude, phase : bqplot.Lines
        |L| in dB and its phase in degrees over frequency.
    crossovers : bqplot.Scatter
        Gain crossover (on the magnitude plot).
    phase_marks : bqplot.Scatter
        Phase at the gain crossover and the -180 deg crossing (on the phase plot).
    """

    css = "dk-bode"

    def __init__(self, model: DesignModel, hertz: bool = False) -> None:
        self.freq_scale = bq.LogScale()
        mag = bq.LinearScale()
        ph = bq.LinearScale(min=-540.0, max=90.0)  # beyond -540 deg the dead time only winds on
        self.magnitude = bq.Lines(
            x=[1.0, 2.0],
            y=[0.0, 0.0],
            scales={"x": self.freq_scale, "y": mag},
            colors=[PALETTE["blue"]],
            stroke_width=2,
        )
        self.unity = bq.Lines(
            x=[1.0, 2.0],
            y=[0.0, 0.0],
            scales={"x": self.freq_scale, "y": mag},
            colors=[PALETTE["grey"]],
            line_style="dashed",
        )
        self.crossovers = bq.Scatter(
            x=[1.0], y=[0.0], scales={"x": self.freq_scale, "y": mag}, colors=[PALETTE["vermillion"]], default_size=40
        )
        self.phase = bq.Lines(
            x=[1.0, 2.0], y=[0.0, 0.0], scales={"x": self.freq_scale, "y": ph}, colors=[PALETTE["blue"]], stroke_width=2
        )
        self.minus180 = bq.Lines(
            x=[1.0, 2.0],
            y=[-180.0, -180.0],
            scales={"x": self.freq_scale, "y": ph},
            colors=[PALETTE["grey"]],
            line_style="dashed",
        )
        self.phase_marks = bq.Scatter(
            x=[1.0], y=[0.0], scales={"x": self.freq_scale, "y": ph}, colors=[PALETTE["vermillion"]], default_size=40
        )
        self.freq_axis = bq.Axis(
            scale=self.freq_scale, label="frequency [rad/s]", grid_lines="dashed", tick_format=".0e", num_ticks=6
        )
        self.freq_axis_2 = bq.Axis(
            scale=self.freq_scale, label="frequency [rad/s]", grid_lines="dashed", tick_format=".0e", num_ticks=6
        )
        self.mag_figure = figure(
            [self.unity, self.magnitude, self.crossovers],
            [self.freq_axis, bq.Axis(scale=mag, side="left", label="|L| [dB]", grid_lines="dashed")],
            "Bode: magnitude",
            "dk-fig-bode-mag",
            height="200px",
        )
        self.phase_figure = figure(
            [self.minus180, self.phase, self.phase_marks],
            [self.freq_axis_2, bq.Axis(scale=ph, side="left", label="phase [deg]", grid_lines="dashed")],
            "Bode: phase",
            "dk-fig-bode-phase",
            height="200px",
        )
        self.hertz = w.ToggleButtons(options=[("rad/s", False), ("Hz", True)], value=hertz)
        self.hertz.add_class("dk-hz")
        self.hertz.observe(lambda _c: self._redraw(), names="value")
        self._start(model, [self.hertz, self.mag_figure, self.phase_figure])

    def _redraw(self) -> None:
        if self.model.result is not None:
            self.draw(self.model.result)

    def draw(self, result: Any) -> None:
        """Update the Bode plot for ``result``."""
        loop = result.loop
        if loop is None:
            self.say(_NO_LOOP)
            return
        k = 1.0 / (2.0 * math.pi) if self.hertz.value else 1.0
        unit = "Hz" if self.hertz.value else "rad/s"
        f = array(loop.omega) * k
        phase = np.degrees(np.unwrap(np.angle(loop.open_loop)))
        ends = array([f[0], f[-1]])
        with self.magnitude.hold_sync():
            self.magnitude.x = f
            self.magnitude.y = array(_db(loop.open_loop))
        with self.unity.hold_sync():
            self.unity.x = ends
            self.unity.y = array([0.0, 0.0])
        with self.phase.hold_sync():
            self.phase.x = f
            self.phase.y = array(phase)
        with self.minus180.hold_sync():
            self.minus180.x = ends
            self.minus180.y = array([-180.0, -180.0])
        xs, ps = [], []
        if _finite(loop.gain_crossover):
            xs.append(loop.gain_crossover * k)
            ps.append(float(np.interp(loop.gain_crossover, loop.omega, phase)))
        with self.crossovers.hold_sync():
            self.crossovers.x = array(xs or [f[0]])
            self.crossovers.y = array([0.0] * len(xs) or [float(_db(loop.open_loop)[0])])
        if _finite(loop.phase_crossover):
            xs.append(loop.phase_crossover * k)
            ps.append(-180.0)
        with self.phase_marks.hold_sync():
            self.phase_marks.x = array(xs or [f[0]])
            self.phase_marks.y = array(ps or [float(phase[0])])
        self.freq_axis.label = self.freq_axis_2.label = f"frequency [{unit}]"
        gm = f"{20 * math.log10(loop.gain_margin):.3g} dB" if _finite(loop.gain_margin) else "infinite"
        wc = f"{loop.gain_crossover * k:.3g} {unit}" if _finite(loop.gain_crossover) else "none"
        self.say(f"phase margin {loop.phase_margin:.3g} deg at {wc}; gain margin {gm}")


class NyquistView(View):
    """Nyquist plot of L(jw) with the unit circle and the critical point -1.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.
    """

    css = "dk-nyquist"

    def __init__(self, model: DesignModel) -> None:
        x = bq.LinearScale(min=-2.5, max=1.5)
        y = bq.LinearScale(min=-2.0, max=2.0)
        sc = {"x": x, "y": y}
        a = np.linspace(0.0, 2.0 * math.pi, 181)
        self.unit_circle = bq.Lines(x=np.cos(a), y=np.sin(a), scales=sc, colors=[PALETTE["grey"]], line_style="dashed")
        self.curve = bq.Lines(
            x=[0.0, 1.0],
            y=[[0.0, 0.0], [0.0, 0.0]],
            scales=sc,
            colors=[PALETTE["blue"], PALETTE["sky"]],
            stroke_width=2,
        )
        self.critical = bq.Scatter(x=[-1.0], y=[0.0], scales=sc, colors=[PALETTE["vermillion"]], marker="cross")
        self.figure = figure(
            [self.unit_circle, self.curve, self.critical],
            [bq.Axis(scale=x, label="Re L", grid_lines="dashed"), bq.Axis(scale=y, side="left", label="Im L")],
            "Nyquist",
            "dk-fig-nyquist",
        )
        self._start(model, [self.figure])

    def draw(self, result: Any) -> None:
        """Update the Nyquist curve (w > 0 and its mirror) for ``result``."""
        loop = result.loop
        if loop is None:
            self.say(_NO_LOOP)
            return
        lw = np.asarray(loop.open_loop)
        with self.curve.hold_sync():
            self.curve.x = array(lw.real)
            self.curve.y = array(np.vstack([lw.imag, -lw.imag]))
        self.say(f"closest approach to -1: {1.0 / loop.ms:.3g} (= 1/Ms)")


class SensitivityView(View):
    """|S| and |T| over frequency with their peaks Ms and Mt.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.
    """

    css = "dk-sensitivity"

    def __init__(self, model: DesignModel) -> None:
        f = bq.LogScale()
        m = bq.LinearScale()
        self.curves = bq.Lines(
            x=[1.0, 2.0],
            y=[[0.0, 0.0], [0.0, 0.0]],
            scales={"x": f, "y": m},
            colors=[PALETTE["blue"], PALETTE["orange"]],
            labels=["|S|", "|T|"],
            display_legend=True,
            stroke_width=2,
        )
        self.peaks = bq.Scatter(x=[1.0, 1.0], y=[0.0, 0.0], scales={"x": f, "y": m}, colors=[PALETTE["vermillion"]])
        self.figure = figure(
            [self.curves, self.peaks],
            [
                bq.Axis(scale=f, label="frequency [rad/s]", grid_lines="dashed", tick_format=".0e", num_ticks=6),
                bq.Axis(scale=m, side="left", label="magnitude [dB]", grid_lines="dashed"),
            ],
            "Sensitivity",
            "dk-fig-sensitivity",
        )
        self._start(model, [self.figure])

    def draw(self, result: Any) -> None:
        """Update |S|, |T| and the peak markers for ``result``."""
        loop = result.loop
        if loop is None:
            self.say(_NO_LOOP)
            return
        s, t = _db(loop.sensitivity), _db(loop.complementary)
        with self.curves.hold_sync():
            self.curves.x = array(loop.omega)
            self.curves.y = array(np.vstack([s, t]))
        with self.peaks.hold_sync():
            self.peaks.x = array([loop.omega[int(np.argmax(s))], loop.omega[int(np.argmax(t))]])
            self.peaks.y = array([s.max(), t.max()])
        self.say(f"Ms = {loop.ms:.3g}, Mt = {loop.mt:.3g}")


class RootLocusView(View):
    """Root locus over the controller gain; clicking a branch sets the gain there.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.

    Attributes
    ----------
    branches : bqplot.Lines
        One row per closed-loop pole: its path as the gain is multiplied by
        ``LoopData.locus_gains``.
    current : bqplot.Scatter
        Closed-loop poles at the present gain.
    """

    css = "dk-rootlocus"

    def __init__(self, model: DesignModel) -> None:
        x = bq.LinearScale()
        y = bq.LinearScale()
        sc = {"x": x, "y": y}
        self.branches = bq.Lines(
            x=[[0.0, 0.0]],
            y=[[0.0, 0.0]],
            scales=sc,
            colors=[PALETTE["sky"]],
            stroke_width=1.5,
        )
        self.current = bq.Scatter(x=[0.0], y=[0.0], scales=sc, colors=[PALETTE["vermillion"]], marker="cross")
        self.branches.on_element_click(self._on_click)
        self.figure = figure(
            [self.branches, self.current],
            [
                bq.Axis(scale=x, label="real [1/s]", grid_lines="dashed"),
                bq.Axis(scale=y, side="left", label="imaginary [1/s]", grid_lines="dashed"),
            ],
            "Root locus (controller gain)",
            "dk-fig-rootlocus",
        )
        self._gains: np.ndarray = np.ones(1)
        self._start(model, [self.figure])

    def draw(self, result: Any) -> None:
        """Update the branches and the present poles for ``result``."""
        loop = result.loop
        if loop is None:
            self.say(_NO_LOOP)
            return
        locus = np.asarray(loop.locus)
        dominant = np.abs(loop.poles.real) <= 20.0 * np.min(np.abs(loop.poles.real)) if loop.poles.size else []
        self._gains = np.asarray(loop.locus_gains)
        with self.branches.hold_sync():
            self.branches.x = array(locus.real.T)
            self.branches.y = array(locus.imag.T)
        with self.current.hold_sync():
            self.current.x = array(loop.poles.real)
            self.current.y = array(loop.poles.imag)
        lim = 1.5 * float(np.max(np.abs(loop.poles[dominant]))) if len(dominant) else 1.0
        for sc in (self.branches.scales["x"], self.branches.scales["y"]):
            sc.min, sc.max = -lim, lim * (0.5 if sc is self.branches.scales["x"] else 1.0)
        self.say("click a branch to set the controller gain there")

    def set_gain_at(self, index: int) -> None:
        """Set the controller gain to the locus point ``index`` (multiplier of the present gain)."""
        design = self.model.design
        factor = float(self._gains[int(index)])
        try:
            self.model.set_value("controller.kp", design.controller.kp * factor)
        except ParameterError as exc:
            self.say(f"refused: {exc}")

    def _on_click(self, _mark: Any, event: dict[str, Any]) -> None:
        data = event.get("data", {})
        index = data.get("index")
        if index is not None and self._gains.size > 1:
            # a click on a line reports the point's position along it through its x value
            x = data.get("x")
            if x is not None:
                row = np.asarray(self.branches.x)
                i = int(np.argmin(np.abs(row[int(index)] - float(x)))) if row.ndim == 2 else 0
                self.set_gain_at(i)


class PoleZeroView(View):
    """Closed-loop poles and zeros with damping and natural frequency of each pole.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.
    """

    css = "dk-polezero"

    def __init__(self, model: DesignModel) -> None:
        x = bq.LinearScale()
        y = bq.LinearScale()
        sc = {"x": x, "y": y}
        self.poles = bq.Scatter(x=[0.0], y=[0.0], scales=sc, marker="cross", colors=[PALETTE["vermillion"]])
        self.zeros = bq.Scatter(x=[0.0], y=[0.0], scales=sc, marker="circle", colors=[PALETTE["blue"]], fill=False)
        self.figure = figure(
            [self.poles, self.zeros],
            [
                bq.Axis(scale=x, label="real [1/s]", grid_lines="dashed"),
                bq.Axis(scale=y, side="left", label="imaginary [1/s]", grid_lines="dashed"),
            ],
            "Closed-loop poles (x) and zeros (o)",
            "dk-fig-polezero",
        )
        self.readout = w.HTML("")
        self.readout.add_class("dk-polezero-readout")
        self._start(model, [self.figure, self.readout])

    def draw(self, result: Any) -> None:
        """Update the poles, zeros and the damping table for ``result``."""
        loop = result.loop
        if loop is None:
            self.say(_NO_LOOP)
            return
        with self.poles.hold_sync():
            self.poles.x = array(loop.poles.real)
            self.poles.y = array(loop.poles.imag)
        z = loop.zeros if loop.zeros.size else np.array([np.nan])
        with self.zeros.hold_sync():
            self.zeros.x = array(np.real(z))
            self.zeros.y = array(np.imag(z))
        rows = []
        for p in loop.poles[:6]:
            if p.imag < -1e-12:
                continue
            wn = abs(p)
            zeta = -p.real / wn if wn > 0 else 1.0
            rows.append(
                f"<tr><td>{p.real:.4g}{'' if abs(p.imag) < 1e-12 else f' ± {abs(p.imag):.4g}j'}</td>"
                f"<td>{zeta:.3g}</td><td>{wn:.4g}</td></tr>"
            )
        self.readout.value = (
            "<table class='dk-table'><tr><th>pole [1/s]</th><th>damping [-]</th><th>natural freq. [rad/s]</th></tr>"
            + "".join(rows)
            + "</table>"
        )
        self.say(html.unescape("dead time shown through its Pade approximation"))
