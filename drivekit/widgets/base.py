"""What every view shares: observing the design model, a fixed-height figure, a message line."""

from __future__ import annotations

import html
import math
from typing import Any

import bqplot as bq
import ipywidgets as w
import numpy as np

from .model import DesignModel

__all__ = ["PALETTE", "View", "array", "decade_ticks", "figure", "nice_ticks", "set_ticks"]

#: Colour-blind-safe colours (Okabe & Ito, "Color Universal Design", 2002, from memory).
PALETTE = {
    "blue": "#0072B2",
    "orange": "#E69F00",
    "green": "#009E73",
    "vermillion": "#D55E00",
    "sky": "#56B4E9",
    "purple": "#CC79A7",
    "black": "#000000",
    "grey": "#999999",
}

#: Height of every figure, so nothing jumps when data changes.
FIGURE_HEIGHT = "300px"


def array(values: Any) -> np.ndarray:
    """Plain float ndarray (python-control's NamedSignal upsets bqplot's trait check)."""
    return np.array(np.asarray(values), dtype=float)


def decade_ticks(low: float, high: float, most: int = 6) -> np.ndarray:
    """Tick values at whole decades covering [low, high], at most ``most`` of them (every k-th decade)."""
    a, b = math.floor(math.log10(low)), math.ceil(math.log10(high))
    step = max(1, math.ceil((b - a + 1) / most))
    return np.array([10.0**e for e in range(a, b + 1, step)])


def nice_ticks(low: float, high: float, most: int = 6) -> np.ndarray:
    """Round tick values (steps of 1, 2, 2.5 or 5 times a power of ten) covering [low, high], at most about ``most``."""
    if not (math.isfinite(low) and math.isfinite(high)) or high <= low:
        return np.array([low]) if math.isfinite(low) else np.zeros(0)
    raw = (high - low) / max(most, 1)
    power = 10.0 ** math.floor(math.log10(raw))
    step = next(m * power for m in (1.0, 2.0, 2.5, 5.0, 10.0) if m * power >= raw)
    first = math.ceil(low / step - 1e-9) * step
    return np.round(np.arange(first, high + 1e-9 * step, step), 12)


def set_ticks(axis: bq.Axis, ticks: np.ndarray) -> None:
    """Give ``axis`` these tick values, sending nothing when they are already set."""
    if not np.array_equal(np.asarray(axis.tick_values), ticks):
        axis.tick_values = ticks


def figure(marks: list[Any], axes: list[Any], title: str, css: str, height: str = FIGURE_HEIGHT) -> bq.Figure:
    """A figure of fixed height with tight margins and a CSS test hook."""
    fig = bq.Figure(
        marks=marks,
        axes=axes,
        title=title,
        fig_margin={"top": 30, "bottom": 40, "left": 60, "right": 15},
        layout=w.Layout(height=height, width="100%", min_width="260px"),
        animation_duration=0,
    )
    fig.add_class(css)
    return fig


class View(w.VBox):
    """A view of a design model: draws each new result; shows errors and staleness.

    Subclasses build their figures in ``__init__`` (before calling
    :meth:`_start`) and implement :meth:`draw`.
    """

    css = "dk-view"

    def _start(self, model: DesignModel, children: list[w.Widget]) -> None:
        self.model = model
        self.message = w.HTML("")
        self.message.add_class("dk-view-message")
        self.note = w.HTML("")
        self.note.add_class("dk-view-note")
        super().__init__([*children, self.note, self.message])
        self.add_class("dk-view")
        self.add_class(self.css)
        model.observe(self._on_result, names="result")
        model.observe(self._on_error, names=["error", "stale"])
        if model.result is not None:
            self.draw(model.result)
        self._on_error(None)

    def draw(self, result: Any) -> None:
        """Update the marks for ``result``."""
        raise NotImplementedError

    def say(self, text: str) -> None:
        """Show a plain-words note about the drawn result (``""`` clears it)."""
        self.say_html(html.escape(text))

    def say_html(self, markup: str) -> None:
        """Show a note already written as HTML (the caller escapes anything it did not write itself)."""
        self.note.value = f"<span style='color:#555'>{markup}</span>" if markup else ""

    def _warn(self, text: str) -> None:
        self.message.value = f"<span class='dk-error' style='color:#b2182b'>{html.escape(text)}</span>" if text else ""

    def _on_result(self, change: dict[str, Any]) -> None:
        if change["new"] is not None:
            self.draw(change["new"])

    def _on_error(self, _change: Any) -> None:
        if self.model.error:
            self._warn(("stale: " if self.model.stale else "") + self.model.error)
            self.add_class("dk-stale")
        else:
            self._warn("")
            self.remove_class("dk-stale")
