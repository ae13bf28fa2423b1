"""Bump-test view: the recorded process value and the fitted model overlaid, the step marked, the fit in a table."""

from __future__ import annotations

import html
from typing import Any

import bqplot as bq
import ipywidgets as w
import numpy as np

from .. import identify
from ..units import ParameterError
from .base import PALETTE, array, figure

__all__ = ["FIT_METHODS", "BumpTestView"]

#: The fits the method menu offers: label -> (fitting function, its ``method``).
FIT_METHODS: dict[str, tuple[Any, str]] = {
    "FOPDT, least squares": (identify.fopdt, "least_squares"),
    "FOPDT, Smith two-point": (identify.fopdt, "smith"),
    "FOPDT, Sundaresan-Krishnaswamy two-point": (identify.fopdt, "sundaresan_krishnaswamy"),
    "SOPDT, least squares": (identify.sopdt, "least_squares"),
    "integrating, least squares": (identify.integrating, "least_squares"),
    "integrating, tangent": (identify.integrating, "tangent"),
}


def _unit_label(unit: str) -> str:
    return (unit or "-").replace("**3", "³").replace("**2", "²").replace("percent", "%")


class BumpTestView(w.VBox):
    """A bump test and the model fitted to it.

    Parameters
    ----------
    source : StepFit or StepTest
        A fit made elsewhere (:func:`drivekit.identify.fopdt` and friends),
        drawn as it is; or a step-test record, fitted here with the method
        chosen in the menu and refitted whenever the choice changes.
    method : str
        First choice of the menu, one of :data:`FIT_METHODS` (record only).

    Attributes
    ----------
    fit : StepFit
        The fit drawn.
    measured, fitted : bqplot.Lines
        The recorded process value and the model's curve, in the record's
        unit, over time in s (``StepFit.curves()``).
    step_mark : bqplot.Lines
        Vertical line at the step.
    method_menu : ipywidgets.Dropdown
        The fit method (hidden when a finished fit was given).
    table : ipywidgets.HTML
        The fit's parameters with units and its quality (``StepFit.table()``).
    """

    def __init__(self, source: Any, *, method: str = "FOPDT, least squares") -> None:
        if method not in FIT_METHODS:
            raise ParameterError(f"`method`: got {method!r}, expected one of {list(FIT_METHODS)}")
        if isinstance(source, identify.StepFit):
            self.record = None
            fit = source
        elif isinstance(source, identify.StepTest):
            self.record = source
            fit = None
        else:
            raise ParameterError(f"`source`: got {type(source).__name__}, expected a StepFit or a StepTest record")
        t = bq.LinearScale()
        y = bq.LinearScale()
        sc = {"x": t, "y": y}
        self.measured = bq.Lines(
            x=[0.0, 1.0], y=[0.0, 0.0], scales=sc, colors=[PALETTE["grey"]], stroke_width=1.2, labels=["measured"]
        )
        self.fitted = bq.Lines(
            x=[0.0, 1.0], y=[0.0, 0.0], scales=sc, colors=[PALETTE["vermillion"]], stroke_width=2.5, labels=["fitted"]
        )
        self.step_mark = bq.Lines(
            x=[0.0, 0.0], y=[0.0, 1.0], scales=sc, colors=[PALETTE["blue"]], line_style="dashed", labels=["step"]
        )
        for mark in (self.measured, self.fitted, self.step_mark):
            mark.display_legend = True
        self.y_axis = bq.Axis(scale=y, side="left", label="process value", grid_lines="dashed", tick_format=".4g")
        self.figure = figure(
            [self.measured, self.fitted, self.step_mark],
            [bq.Axis(scale=t, label="time [s]", grid_lines="dashed"), self.y_axis],
            "Bump test and fitted model",
            "dk-fig-bumptest",
        )
        self.method_menu = w.Dropdown(options=list(FIT_METHODS), value=method, description="fit")
        self.method_menu.add_class("dk-fit-method")
        if self.record is None:
            self.method_menu.layout.display = "none"
        self.table = w.HTML("")
        self.table.add_class("dk-fit-table")
        self.message = w.HTML("")
        self.message.add_class("dk-view-message")
        super().__init__([self.method_menu, self.figure, self.table, self.message])
        self.add_class("dk-view")
        self.add_class("dk-bumptest")
        self.method_menu.observe(self._on_method, names="value")
        self.fit: Any = None
        if fit is not None:
            self.draw(fit)
        else:
            self.refit()

    def refit(self) -> None:
        """Fit the record with the method chosen in the menu and draw it; a failed fit is reported, not drawn."""
        if self.record is None:
            return
        function, method = FIT_METHODS[self.method_menu.value]
        try:
            fit = function(self.record, method=method)
        except ParameterError as exc:
            self.message.value = f"<span class='dk-error' style='color:#b2182b'>{html.escape(str(exc))}</span>"
            self.add_class("dk-stale")
            return
        self.message.value = ""
        self.remove_class("dk-stale")
        self.draw(fit)

    def draw(self, fit: Any) -> None:
        """Draw ``fit`` (a StepFit): curves, step marker and table."""
        self.fit = fit
        curves = fit.curves()
        t = array(curves["time"])
        measured, fitted = array(curves["measured"]), array(curves["fitted"])
        with self.measured.hold_sync():
            self.measured.x = t
            self.measured.y = measured
        with self.fitted.hold_sync():
            self.fitted.x = t
            self.fitted.y = fitted
        both = np.concatenate([measured, fitted])
        with self.step_mark.hold_sync():
            self.step_mark.x = array([fit.step_time, fit.step_time])
            self.step_mark.y = array([np.nanmin(both), np.nanmax(both)])
        self.y_axis.label = f"process value [{_unit_label(fit.output_unit)}]"
        rows = "".join(
            f"<tr><td>{html.escape(name)}</td><td class='dk-value' style='text-align:right'>{value:.4g}</td>"
            f"<td>{html.escape(_unit_label(unit))}</td></tr>"
            for name, value, unit in fit.table()
        )
        cautions = "".join(f"<li>{html.escape(c)}</li>" for c in fit.cautions)
        self.table.value = (
            f"<b>{html.escape(fit.model)}</b>, {html.escape(fit.method.replace('_', ' '))}; "
            f"R² = {fit.r_squared:.4f}<table class='dk-table'><tr><th>quantity</th><th>value</th><th>unit</th></tr>"
            f"{rows}</table>" + (f"<ul>{cautions}</ul>" if cautions else "")
        )

    def _on_method(self, _change: dict[str, Any]) -> None:
        self.refit()
