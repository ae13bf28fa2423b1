"""Loop views: step, Bode, Nyquist, sensitivity, root locus, pole-zero.

Each view draws parts of one :class:`~drivekit.widgets.compute.BoardResult`:
the core's setpoint and load steps and frequency response (dead time exact),
its margins, and its root locus (dead time as a Pade approximation, said so on
the view). Views only convert units and place marks.
"""

from __future__ import annotations

import html
import math
from typing import Any

import bqplot as bq
import ipywidgets as w
import numpy as np

from ..units import ParameterError, pretty_unit
from .base import PALETTE, View, array, decade_ticks, figure, nice_ticks, set_ticks
from .model import DesignModel

__all__ = [
    "LOAD_STEP",
    "SETPOINT_STEP",
    "BodeView",
    "NyquistView",
    "PoleZeroView",
    "RootLocusView",
    "SensitivityView",
    "StepView",
    "measured_value",
]

_NO_LOOP = "no controller in the design: nothing to close the loop with"

#: Setpoint step drawn, as a fraction of the operating value of the measurement. [-]
SETPOINT_STEP = 0.05
#: Load step drawn at the plant input, as a fraction of the output span (of 100 % without one). [-]
LOAD_STEP = 0.05


def _db(x: np.ndarray) -> np.ndarray:
    """Magnitude in dB (a unit conversion for the axis)."""
    return 20.0 * np.log10(np.maximum(np.abs(x), 1e-300))


def _finite(x: float | None) -> bool:
    return x is not None and math.isfinite(x)


def measured_value(result: Any) -> float:
    """The measurement at the operating point, SI (the sensor's reading from the core).

    Parameters
    ----------
    result : BoardResult
        The computed result.
    """
    op = result.operating_point
    return float(result.design.train.output_of(op.x, op.u_si))


def step_sizes(result: Any) -> tuple[float, float]:
    """Setpoint step [SI unit of the measurement] and load step [controller output unit] drawn by :class:`StepView`.

    Parameters
    ----------
    result : BoardResult
        The computed result.
    """
    span = result.design.output_span or (0.0, 100.0)
    return SETPOINT_STEP * abs(measured_value(result)), LOAD_STEP * (span[1] - span[0])


class StepView(View):
    """Setpoint and load-step responses of the measurement, and the controller output with its limits.

    The core gives the responses to a unit setpoint step and a unit load step
    at the plant input (dead time exact, PID setpoint weights as the core
    applies them); the view draws them around the operating point for a
    setpoint step of :data:`SETPOINT_STEP` of the measured value and a load
    step of :data:`LOAD_STEP` of the output span.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.

    Attributes
    ----------
    measurement : bqplot.Lines
        Measurement after a setpoint step (row 0) and after a load step (row 1),
        in the trade's unit (m³/h, rpm); x in s (one row shared by both when
        the core gives them on the same time grid).
    output : bqplot.Lines
        Controller output for the same two steps (rows 0 and 1), with its
        limits (rows 2 and 3, flat lines; NaN without limits).
    setpoint : bqplot.Lines
        The setpoint after the step.
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
            x=[[0.0, 1.0], [0.0, 1.0]],
            y=[[0.0, 0.0], [0.0, 0.0]],
            scales={"x": t, "y": y},
            colors=colors,
            stroke_width=2,
            labels=["setpoint step", "load step"],
        )
        self.setpoint = bq.Lines(
            x=[0.0, 1.0], y=[0.0, 0.0], scales={"x": t, "y": y}, colors=[PALETTE["grey"]], line_style="dashed"
        )
        self.settling = bq.Lines(
            x=[0.0, 0.0], y=[0.0, 0.0], scales={"x": t, "y": y}, colors=[PALETTE["green"]], line_style="dotted"
        )
        self.output = bq.Lines(
            x=[[0.0, 1.0]] * 4,
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
        ev = result.evaluation
        if ev.loop is None:
            self.say(_NO_LOOP)
            return
        sp, ld = ev.setpoint_step, ev.load_step
        plant = ev.plant
        scale = plant.display_scale
        y0 = measured_value(result)
        u0 = ev.operating_point.u_si
        r_step, d_step = step_sizes(result)
        same_grid = np.array_equal(sp.t, ld.t)
        # one shared time row when both responses use the same grid (less to send to the page)
        t = array(sp.t) if same_grid else array(np.vstack([sp.t, ld.t]))
        ys = np.vstack([y0 + r_step * sp.y, y0 + d_step * ld.y]) * scale
        limits = getattr(result.design.controller, "output_limits", None) or result.design.output_span
        lo, hi = limits if limits is not None else (math.nan, math.nan)
        ones = np.ones_like(sp.t)
        us = np.vstack([u0 + r_step * sp.u, u0 + d_step * ld.u, lo * ones, hi * ones])
        with self.measurement.hold_sync():
            self.measurement.x = t
            self.measurement.y = array(ys)
        r = (y0 + r_step) * scale
        with self.setpoint.hold_sync():
            self.setpoint.x = array([0.0, sp.t[-1]])
            self.setpoint.y = array([r, r])
        ts = ev.step.settling_time if ev.step is not None and _finite(ev.step.settling_time) else 0.0
        with self.settling.hold_sync():
            self.settling.x = array([ts, ts])
            self.settling.y = array([y0 * scale, r] if ts else [y0 * scale, y0 * scale])
        with self.output.hold_sync():
            self.output.x = array(sp.t) if same_grid else array(np.vstack([sp.t, ld.t, sp.t, sp.t]))
            self.output.y = array(us)
        finite = us[np.isfinite(us)]
        if finite.size:
            set_ticks(self.u_axis, nice_ticks(float(finite.min()), float(finite.max()), 5))
        unit = pretty_unit(plant.output_display_unit)
        self.y_axis.label = f"{plant.output_name} [{unit}]"
        self.u_axis.label = f"controller output [{plant.input_unit}]"
        if ts:
            sp = html.escape(f"setpoint step {r_step * scale:.3g} {unit}")
            ld = html.escape(f"load step {d_step:.3g} {plant.input_unit} at the plant input")
            self.say_html(
                f"<span style='color:{PALETTE['blue']}'>&#9644; {sp}</span>, "
                f"<span style='color:{PALETTE['vermillion']}'>&#9644; {ld}</span>; settling (2 %) {ts:.3g} s"
            )
        else:
            self.say(f"the closed loop does not settle: {ev.margins.verdict}")


class BodeView(View):
    """Bode plot of the open loop L(jw) (of the plant G(jw) without a controller), dead time exact.

    Magnitude and phase share one frequency scale.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.
    hertz : bool
        Frequency axis in Hz instead of rad/s.

    Attributes
    ----------
    magnitude, phase : bqplot.Lines
        |L| in dB and its continuous phase in degrees over frequency, as the
        core's :class:`~drivekit.responses.FrequencyResponse` gives them.
    crossovers : bqplot.Scatter
        Gain crossovers (on the magnitude plot, at 0 dB).
    phase_marks : bqplot.Scatter
        Phase at each gain crossover and each phase crossover (on the phase plot).
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
            scale=self.freq_scale, label="frequency [rad/s]", grid_lines="dashed", tick_format=".1g"
        )
        self.freq_axis_2 = bq.Axis(
            scale=self.freq_scale, label="frequency [rad/s]", grid_lines="dashed", tick_format=".1g"
        )
        self.mag_axis = bq.Axis(scale=mag, side="left", label="|L| [dB]", grid_lines="dashed")
        self.mag_figure = figure(
            [self.unity, self.magnitude, self.crossovers],
            [self.freq_axis, self.mag_axis],
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
        ev = result.evaluation
        fr = ev.frequency
        k = 1.0 / (2.0 * math.pi) if self.hertz.value else 1.0
        unit = "Hz" if self.hertz.value else "rad/s"
        f = array(fr.omega) * k
        ends = array([f[0], f[-1]])
        with self.magnitude.hold_sync():
            self.magnitude.x = f
            self.magnitude.y = array(fr.mag_db)
        with self.unity.hold_sync():
            self.unity.x = ends
            self.unity.y = array([0.0, 0.0])
        with self.phase.hold_sync():
            self.phase.x = f
            self.phase.y = array(fr.phase_deg)
        with self.minus180.hold_sync():
            self.minus180.x = ends
            self.minus180.y = array([-180.0, -180.0])
        crossings = ev.margins.crossings if ev.margins is not None else ()
        gains = [c for c in crossings if c.kind == "gain crossover"]
        # each crossing drawn on the plotted (continuous) phase curve at its frequency
        on_curve = [float(np.interp(c.omega, fr.omega, fr.phase_deg)) for c in crossings]
        with self.crossovers.hold_sync():
            self.crossovers.x = array([c.omega * k for c in gains] or [f[0]])
            self.crossovers.y = array([0.0] * len(gains) or [fr.mag_db[0]])
        with self.phase_marks.hold_sync():
            self.phase_marks.x = array([c.omega * k for c in crossings] or [f[0]])
            self.phase_marks.y = array(on_curve or [fr.phase_deg[0]])
        self.freq_axis.label = self.freq_axis_2.label = f"frequency [{unit}]"
        ticks = decade_ticks(float(f[0]), float(f[-1]))
        if not np.array_equal(np.asarray(self.freq_axis.tick_values), ticks):
            self.freq_axis.tick_values = self.freq_axis_2.tick_values = ticks
        self.mag_axis.label = "|L| [dB]" if ev.loop is not None else "|G| [dB, SI]"
        m = ev.margins
        if m is None:
            self.say("plant alone (no controller): no margins")
            return
        gm = f"{m.gain_margin_db:.3g} dB" if _finite(m.gain_margin) else "infinite"
        wc = f"{m.gain_crossover * k:.3g} {unit}" if _finite(m.gain_crossover) else "none"
        self.say(f"phase margin {m.phase_margin:.3g} deg at {wc}; gain margin {gm}; {m.verdict}")


class NyquistView(View):
    """Nyquist plot of L(jw) with the unit circle and the critical point -1.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.

    Attributes
    ----------
    curve : bqplot.Lines
        Row 0: L(jw) for w > 0; row 1: its mirror image (w < 0).
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
        ev = result.evaluation
        if ev.loop is None:
            self.say(_NO_LOOP)
            return
        re, im = ev.frequency.nyquist
        with self.curve.hold_sync():
            self.curve.x = array(re)
            self.curve.y = array(np.vstack([im, -im]))
        self.say(f"closest approach to -1: {1.0 / ev.margins.ms:.3g} (= 1/Ms)")


class SensitivityView(View):
    """|S| and |T| over frequency with their peaks Ms and Mt (dead time exact).

    Parameters
    ----------
    model : DesignModel
        The design model to observe.

    Attributes
    ----------
    curves : bqplot.Lines
        Row 0: |S| in dB, row 1: |T| in dB.
    peaks : bqplot.Scatter
        Ms and Mt (from the core's margins) in dB, at the grid frequency of each peak.
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
        self.freq_axis = bq.Axis(scale=f, label="frequency [rad/s]", grid_lines="dashed", tick_format=".1g")
        self.figure = figure(
            [self.curves, self.peaks],
            [self.freq_axis, bq.Axis(scale=m, side="left", label="magnitude [dB]", grid_lines="dashed")],
            "Sensitivity",
            "dk-fig-sensitivity",
        )
        self._start(model, [self.figure])

    def draw(self, result: Any) -> None:
        """Update |S|, |T| and the peak markers for ``result``."""
        ev = result.evaluation
        if ev.loop is None:
            self.say(_NO_LOOP)
            return
        fr, m = ev.frequency, ev.margins
        s, t = _db(fr.sensitivity_mag), _db(fr.complementary_mag)
        with self.curves.hold_sync():
            self.curves.x = array(fr.omega)
            self.curves.y = array(np.vstack([s, t]))
        ticks = decade_ticks(float(fr.omega[0]), float(fr.omega[-1]))
        if not np.array_equal(np.asarray(self.freq_axis.tick_values), ticks):
            self.freq_axis.tick_values = ticks
        with self.peaks.hold_sync():
            self.peaks.x = array([fr.omega[int(np.argmax(s))], fr.omega[int(np.argmax(t))]])
            self.peaks.y = array(_db(np.array([m.ms, m.mt])))
        self.say(f"Ms = {m.ms:.3g}, Mt = {m.mt:.3g}")


def _present_poles(locus: Any) -> np.ndarray:
    """Closed-loop poles at the present gain (K = 1), taken from the locus branches."""
    i = int(np.argmin(np.abs(locus.gains - 1.0)))
    return np.asarray(locus.branches[i])


class RootLocusView(View):
    """Root locus over the controller gain; clicking a branch sets the gain there.

    The dead time enters through a Pade approximation (the core's
    :func:`~drivekit.rootlocus.root_locus`); the view says so.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.

    Attributes
    ----------
    branches : bqplot.Lines
        One row per branch: the closed-loop pole as the loop gain is multiplied
        by ``RootLocus.gains``.
    current : bqplot.Scatter
        Closed-loop poles at the present gain.
    open_loop : bqplot.Scatter
        Open-loop poles, where the branches start.
    """

    css = "dk-rootlocus"

    def __init__(self, model: DesignModel) -> None:
        x = bq.LinearScale()
        y = bq.LinearScale()
        sc = {"x": x, "y": y}
        self.branches = bq.Lines(x=[[0.0, 0.0]], y=[[0.0, 0.0]], scales=sc, colors=[PALETTE["sky"]], stroke_width=1.5)
        self.open_loop = bq.Scatter(x=[0.0], y=[0.0], scales=sc, colors=[PALETTE["grey"]], marker="square")
        self.current = bq.Scatter(x=[0.0], y=[0.0], scales=sc, colors=[PALETTE["vermillion"]], marker="cross")
        self.branches.on_element_click(self._on_click)
        self.x_axis = bq.Axis(scale=x, label="real [1/s]", grid_lines="dashed", tick_format=".2g")
        self.y_axis = bq.Axis(scale=y, side="left", label="imaginary [1/s]", grid_lines="dashed", tick_format=".2g")
        self.figure = figure(
            [self.branches, self.open_loop, self.current],
            [self.x_axis, self.y_axis],
            "Root locus (controller gain)",
            "dk-fig-rootlocus",
        )
        self._gains: np.ndarray = np.ones(1)
        self._start(model, [self.figure])

    def draw(self, result: Any) -> None:
        """Update the branches and the present poles for ``result``."""
        rl = result.locus
        if rl is None:
            self.say(_NO_LOOP)
            return
        now = _present_poles(rl)
        self._gains = np.asarray(rl.gains)
        with self.branches.hold_sync():
            self.branches.x = array(rl.branches.real.T)
            self.branches.y = array(rl.branches.imag.T)
        with self.open_loop.hold_sync():
            self.open_loop.x = array(rl.open_loop_poles.real)
            self.open_loop.y = array(rl.open_loop_poles.imag)
        with self.current.hold_sync():
            self.current.x = array(now.real)
            self.current.y = array(now.imag)
        # zoom on the slow (dominant) poles; the Pade poles far out stay off screen
        size = np.abs(now.real)
        dominant = size <= 20.0 * max(float(np.min(size)), 1e-12) if now.size else np.zeros(0, bool)
        lim = 1.5 * float(np.max(np.abs(now[dominant]))) if dominant.any() else 1.0
        x_scale, y_scale = self.branches.scales["x"], self.branches.scales["y"]
        if y_scale.max is None or not 0.8 < lim / y_scale.max < 1.25:  # rescale only on a clear change
            with x_scale.hold_sync():
                x_scale.min, x_scale.max = -lim, 0.5 * lim
            with y_scale.hold_sync():
                y_scale.min, y_scale.max = -lim, lim
            set_ticks(self.x_axis, nice_ticks(-lim, 0.5 * lim, 5))
            set_ticks(self.y_axis, nice_ticks(-lim, lim, 5))
        self.say(f"{rl.note}; click a branch to set the controller gain there")

    def set_gain_at(self, index: int) -> None:
        """Multiply the controller by the locus gain factor at point ``index``.

        For the ideal and series forms the whole controller scales with kp.
        For the parallel form kp and td are multiplied and ti divided by the
        factor, and the derivative filter factor N multiplied so that the
        filter time constant td/N stays: the controller scales as a whole in
        every form.
        """
        design = self.model.design
        factor = float(self._gains[int(index)])
        c = design.controller
        try:
            if factor <= 0.0:
                raise ParameterError(f"`gain factor`: got {factor:g}, expected a factor > 0")
            self.model.set_value("controller.kp", c.kp * factor)
            if getattr(c, "form", "ideal") == "parallel":
                if math.isfinite(c.ti):
                    self.model.set_value("controller.ti", c.ti / factor)
                if c.td:
                    self.model.set_value("controller.td", c.td * factor)
                    self.model.set_value("controller.derivative_filter", c.derivative_filter * factor)
        except ParameterError as exc:
            self.say(f"refused: {exc}")

    def _on_click(self, _mark: Any, event: dict[str, Any]) -> None:
        data = event.get("data", {})
        index, x = data.get("index"), data.get("x")
        if index is None or x is None or self._gains.size < 2:
            return
        # a click on a line reports the branch and the x value; take the nearest point along that branch
        rows = np.asarray(self.branches.x)
        if rows.ndim == 2:
            self.set_gain_at(int(np.argmin(np.abs(rows[int(index)] - float(x)))))


class PoleZeroView(View):
    """Closed-loop poles and zeros with the damping and natural frequency of each pole.

    With a controller: the closed-loop poles at the present gain and the
    zeros of the open loop (the zeros of T for unity feedback), from the
    core's root locus, dead time as its Pade approximation. Without one: the
    plant's poles and zeros (exact; the dead time is not a pole) and its modes.

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
        self.x_axis = bq.Axis(scale=x, label="real [1/s]", grid_lines="dashed", tick_format=".2g")
        self.y_axis = bq.Axis(scale=y, side="left", label="imaginary [1/s]", grid_lines="dashed", tick_format=".2g")
        self.figure = figure(
            [self.poles, self.zeros],
            [self.x_axis, self.y_axis],
            "Poles (x) and zeros (o)",
            "dk-fig-polezero",
        )
        self.readout = w.HTML("")
        self.readout.add_class("dk-polezero-readout")
        self._start(model, [self.figure, self.readout])

    def draw(self, result: Any) -> None:
        """Update the poles, zeros and the damping table for ``result``."""
        rl = result.locus
        if rl is not None:
            poles, zeros = _present_poles(rl), np.asarray(rl.open_loop_zeros)
            rows = [(p.pole, p.damping, p.natural_frequency, "") for p in rl.poles[:6]]
            note = f"closed loop; {rl.note}"
        else:
            plant = result.plant
            poles, zeros = np.asarray(plant.poles), np.asarray(plant.zeros)
            rows = [(m.pole, m.damping, m.natural_frequency, m.stage) for m in plant.modes()[:6]]
            note = "plant alone (no controller); the dead time is not a pole"
        with self.poles.hold_sync():
            self.poles.x = array(poles.real if poles.size else [math.nan])
            self.poles.y = array(poles.imag if poles.size else [math.nan])
        with self.zeros.hold_sync():
            self.zeros.x = array(zeros.real if zeros.size else [math.nan])
            self.zeros.y = array(zeros.imag if zeros.size else [math.nan])
        points = np.concatenate([poles, zeros, [0.0]])
        set_ticks(self.x_axis, nice_ticks(float(np.min(points.real)), float(np.max(points.real)), 5))
        set_ticks(self.y_axis, nice_ticks(float(np.min(points.imag)), float(np.max(points.imag)), 5))
        body = "".join(
            f"<tr><td>{p.real:.4g}{'' if abs(p.imag) < 1e-12 else f' ± {abs(p.imag):.4g}j'}</td>"
            f"<td>{zeta:.3g}</td><td>{wn:.4g}</td><td>{html.escape(stage)}</td></tr>"
            for p, zeta, wn, stage in rows
        )
        self.readout.value = (
            "<table class='dk-table'><tr><th>pole [1/s]</th><th>damping [-]</th><th>natural freq. [rad/s]</th>"
            f"<th>stage</th></tr>{body}</table>"
        )
        self.say(note)
