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


def _target(check: Any) -> tuple[str, bool | None]:
    """The core's target check in words and its verdict; none without a check."""
    if check is None:
        return "", None
    return f"{check.kind} {check.limit:.3g}", bool(check.met)


def metric_rows(result: Any) -> list[MetricRow]:
    """The rows of the metrics table for one result, with the core's target checks.

    Parameters
    ----------
    result : BoardResult
        The computed result (its ``evaluation`` holds margins, step and load
        metrics and the target checks).

    Returns
    -------
    list of MetricRow
        Empty without a controller. Step and load metrics are NaN for an
        unstable loop (the core gives none).
    """
    ev = result.evaluation
    m = ev.margins
    if m is None:
        return []
    checks = {c.name: c for c in ev.checks}
    step, load = ev.step, ev.load
    nan = math.nan
    plant = ev.plant
    per_load = f"{plant.output_display_unit.replace('**3', '³')} per {plant.input_unit}"
    rows = []
    for name, value, unit, check in (
        ("phase margin", m.phase_margin, "deg", "phase margin"),
        ("gain margin", m.gain_margin, "-", "gain margin"),
        ("peak sensitivity Ms", m.ms, "-", "Ms"),
        ("peak complementary sensitivity Mt", m.mt, "-", None),
        ("gain crossover", m.gain_crossover, "rad/s", None),
        ("delay margin", m.delay_margin, "s", None),
        ("bandwidth (-3 dB of T)", m.bandwidth, "rad/s", None),
        ("rise time 10-90 %", step.rise_time if step else nan, "s", None),
        ("settling time 2 %", step.settling_time if step else nan, "s", "settling time"),
        ("overshoot", step.overshoot if step else nan, "%", "overshoot"),
        ("load step: peak deviation", load.peak_deviation * plant.display_scale if load else nan, per_load, None),
        ("load step: recovery time", load.recovery_time if load else nan, "s", None),
    ):
        target, met = _target(checks.get(check) if check else None)
        rows.append(MetricRow(name, float(value), unit, target, met))
    return rows


def _settings_rows(result: Any) -> list[tuple[str, str, str]]:
    settings = result.evaluation.settings
    if settings is None:
        return []
    return [tuple(str(x) for x in row)[:3] for row in settings.table()]  # type: ignore[misc]


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
                for a, b, c in _settings_rows(result)
            )
            head = "<tr><th>quantity</th><th>value</th><th>unit</th><th>target</th><th></th></tr>"
            self.table.value = f"<table class='dk-table'>{head}{''.join(body)}{settings}</table>"
        self.say(result.evaluation.margins.verdict if result.evaluation.margins is not None else "")
        cautions = "".join(f"<li>{html.escape(c)}</li>" for c in result.cautions)
        self.cautions.value = f"<b>Cautions</b><ul>{cautions}</ul>" if cautions else ""
