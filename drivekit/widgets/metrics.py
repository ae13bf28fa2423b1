"""Metrics table: margins, step metrics and controller settings, each against its target."""

from __future__ import annotations

import dataclasses
import html
import math
from typing import Any

import ipywidgets as w

from .base import View
from .model import DesignModel

__all__ = ["MetricRow", "MetricsTable", "metric_rows"]


@dataclasses.dataclass(frozen=True)
class MetricRow:
    """One line of the metrics table.

    Attributes
    ----------
    name : str
        What is measured.
    value : float
        Its value. [unit]
    unit : str
        Unit shown.
    target : str
        The target in words (``">= 45"``), ``""`` when none.
    met : bool or None
        Whether the target is met; ``None`` without a target.
    """

    name: str
    value: float
    unit: str
    target: str = ""
    met: bool | None = None


def _check(value: float, limit: float | None, at_least: bool) -> tuple[str, bool | None]:
    if limit is None or not math.isfinite(limit):
        return "", None
    if not math.isfinite(value):
        ok = at_least and value > 0  # an infinite margin meets a least-margin target
        return (">= " if at_least else "<= ") + f"{limit:.3g}", ok
    return (">= " if at_least else "<= ") + f"{limit:.3g}", (value >= limit) if at_least else (value <= limit)


def metric_rows(result: Any) -> list[MetricRow]:
    """The rows of the metrics table for one result, each checked against the design's targets.

    Parameters
    ----------
    result : BoardResult
        The computed result.

    Returns
    -------
    list of MetricRow
    """
    loop = result.loop
    if loop is None:
        return []
    tg = result.design.targets
    rows = []
    for name, value, unit, limit, at_least in (
        ("phase margin", loop.phase_margin, "deg", tg.phase_margin, True),
        ("gain margin", loop.gain_margin, "-", tg.gain_margin, True),
        ("peak sensitivity Ms", loop.ms, "-", tg.max_ms, False),
        ("peak complementary sensitivity Mt", loop.mt, "-", None, False),
        ("gain crossover", loop.gain_crossover, "rad/s", None, False),
        ("rise time 10-90 %", loop.rise_time, "s", None, False),
        ("settling time 2 %", loop.settling_time, "s", tg.settling_time, False),
        ("overshoot", loop.overshoot, "%", tg.overshoot, False),
    ):
        target, met = _check(value, limit, at_least)
        rows.append(MetricRow(name, value, unit, target, met))
    return rows


def _settings_rows(design: Any) -> list[tuple[str, str, str]]:
    c = design.controller
    if c is None or design.measurement_span is None or not hasattr(c, "settings"):
        return []
    span = design.output_span or (0.0, 100.0)
    return list(c.settings(measurement_span=design.measurement_span, output_span=span).table())


class MetricsTable(View):
    """HTML table of margins, step metrics and controller settings, each against its target.

    Parameters
    ----------
    model : DesignModel
        The design model to observe.

    Attributes
    ----------
    rows : list of MetricRow
        The rows last drawn.
    """

    css = "dk-metrics"

    def __init__(self, model: DesignModel) -> None:
        self.rows: list[MetricRow] = []
        self.table = w.HTML("")
        self.table.add_class("dk-metrics-table")
        self.cautions = w.HTML("")
        self.cautions.add_class("dk-cautions")
        self._start(model, [self.table, self.cautions])

    def draw(self, result: Any) -> None:
        """Rewrite the table for ``result``."""
        self.rows = metric_rows(result)
        if result.loop is None:
            self.table.value = "<i>no controller in the design</i>"
        else:
            body = []
            for r in self.rows:
                verdict = {True: "met", False: "missed", None: ""}[r.met]
                color = {True: "#1a7f37", False: "#b2182b", None: "inherit"}[r.met]
                body.append(
                    f"<tr class='dk-metric'><td>{html.escape(r.name)}</td>"
                    f"<td class='dk-value' style='text-align:right'>{r.value:.4g}</td><td>{html.escape(r.unit)}</td>"
                    f"<td>{html.escape(r.target)}</td>"
                    f"<td class='dk-{verdict or 'none'}' style='color:{color};font-weight:bold'>{verdict}</td></tr>"
                )
            settings = "".join(
                f"<tr><td>{html.escape(a)}</td><td style='text-align:right'>{html.escape(str(b))}</td>"
                f"<td>{html.escape(str(c))}</td><td></td><td></td></tr>"
                for a, b, c in _settings_rows(result.design)
            )
            head = "<tr><th>quantity</th><th>value</th><th>unit</th><th>target</th><th></th></tr>"
            self.table.value = f"<table class='dk-table'>{head}{''.join(body)}{settings}</table>"
        cautions = "".join(f"<li>{html.escape(c)}</li>" for c in result.cautions)
        self.cautions.value = f"<b>Cautions</b><ul>{cautions}</ul>" if cautions else ""
