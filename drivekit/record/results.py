"""Evaluating a design for the record: operating point, linear model, controller settings, loop margins.

The record, the diff and the re-run check all read their numbers from one
:class:`Evaluation`, so what a record cell shows is what the check compares.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

from ..design import Design

__all__ = ["Evaluation", "Result", "evaluate"]


@dataclasses.dataclass(frozen=True)
class Result:
    """One recorded result.

    Attributes
    ----------
    section : str
        Group, e.g. ``"operating point"``, ``"model"``, ``"loop"``.
    name : str
        Plain-words name, e.g. ``"phase margin"``.
    value : float or str
        The number (in ``unit``) or a word (``"met"``).
    unit : str
        Unit of ``value`` as shown (trade units), ``""`` for none.
    """

    section: str
    name: str
    value: float | str
    unit: str

    @property
    def key(self) -> str:
        """``"<section>: <name>"``, the key in the machine-readable results."""
        return f"{self.section}: {self.name}"

    def text(self) -> str:
        """Value and unit as one short string (4 significant figures)."""
        if isinstance(self.value, str):
            return self.value
        shown = f"{self.value:.4g}"
        return f"{shown} {self.unit}".strip()


@dataclasses.dataclass(frozen=True, eq=False)
class Evaluation:
    """Everything the record shows about a design, computed once.

    Attributes
    ----------
    design : Design
        What was evaluated.
    results : tuple of Result
        Every recorded number, in display order.
    problems : tuple of str
        What could not be computed and why (e.g. no steady state).
    operating_point : OperatingPoint or None
    model : LinearModel or None
        Coupled linear model at the operating point.
    series_model : LinearModel or None
        The series shortcut at the same point.
    settings : PlantSettings or None
        Controller settings in plant units (needs a controller and both spans).
    margins : Margins or None
        Loop margins (from :meth:`Design.evaluate`), with a controller.
    result : DesignResult or None
        The core's one evaluation of the design, which every number here comes from.
    """

    design: Design
    results: tuple[Result, ...]
    problems: tuple[str, ...]
    operating_point: Any = None
    model: Any = None
    series_model: Any = None
    settings: Any = None
    margins: Any = None
    result: Any = None

    def to_json(self) -> dict[str, dict[str, Any]]:
        """Machine-readable results: ``{key: {"value": number or text, "unit": unit}}``.

        Non-finite numbers are written as the texts ``"inf"``, ``"-inf"`` and
        ``"nan"`` (JSON has no such numbers).
        """
        out: dict[str, dict[str, Any]] = {}
        for r in self.results:
            value = r.value
            if isinstance(value, float) and not math.isfinite(value):
                value = repr(value)
            out[r.key] = {"value": value, "unit": r.unit}
        return out

    def get(self, key: str) -> Result:
        """The result of ``key`` (``"<section>: <name>"``)."""
        for r in self.results:
            if r.key == key:
                return r
        raise KeyError(key)


def _operating_results(op: Any) -> list[Result]:
    return [Result("operating point", name, float(value), unit) for name, value, unit in op.table()]


def _model_results(model: Any, series: Any) -> list[Result]:
    factored = model.factored()
    rows = [
        Result("model", "steady-state gain", float(model.dc_gain_si * model.display_scale), factored.gain_unit),
        Result("model", "dead time", float(model.delay), "s"),
        Result("model", "order", float(model.order), ""),
    ]
    for i, tc in enumerate(model.time_constants[:4]):
        rows.append(Result("model", f"time constant {i + 1}", float(tc), "s"))
    if series is not None:
        cmp = model.compare(series)
        rows.append(Result("series approximation", "steady-state gain difference", cmp.dc_gain_difference, "%"))
        rows.append(Result("series approximation", "slowest pole difference", cmp.slowest_pole_difference, "%"))
    return rows


def _settings_results(settings: Any) -> list[Result]:
    rows = [
        Result("controller", "gain", float(settings.gain), "%/%"),
        Result("controller", "proportional band", float(settings.proportional_band), "%"),
        Result("controller", "reset time", float(settings.reset_time), "s"),
        Result("controller", "derivative time", float(settings.derivative_time), "s"),
        Result("controller", "action", str(settings.action), ""),
    ]
    return rows


def _loop_results(result: Any) -> list[Result]:
    """Margins, step metrics and target checks of :meth:`Design.evaluate`'s result."""
    m = result.margins
    rows = [
        Result("loop", "phase margin", float(m.phase_margin), "deg"),
        Result("loop", "gain margin", float(m.gain_margin), ""),
        Result("loop", "gain crossover", float(m.gain_crossover), "rad/s"),
        Result("loop", "delay margin", float(m.delay_margin), "s"),
        Result("loop", "peak sensitivity Ms", float(m.ms), ""),
        Result("loop", "verdict", str(m.verdict), ""),
    ]
    if result.step is not None:
        st = result.step
        rows += [
            Result("setpoint step", "rise time 10-90 %", float(st.rise_time), "s"),
            Result("setpoint step", "settling time 2 %", float(st.settling_time), "s"),
            Result("setpoint step", "overshoot", float(st.overshoot), "%"),
        ]
    for c in result.checks:
        unit = "" if c.unit == "-" else f" {c.unit}"
        rows.append(Result("targets", f"{c.name} {c.kind} {c.limit:.4g}{unit}", "met" if c.met else "missed", ""))
    return rows


def evaluate(design: Design) -> Evaluation:
    """Evaluate ``design`` for the record.

    Parameters
    ----------
    design : Design

    Returns
    -------
    Evaluation
        Results in trade units; where a step fails (no steady state, no
        controller, no spans) the reason is in ``problems`` and the results
        that depend on it are left out.
    """
    results: list[Result] = []
    problems: list[str] = []
    found: dict[str, Any] = {}
    try:
        result = design.evaluate()
    except ValueError as exc:
        problems.append(f"no operating point: {exc}")
        return Evaluation(design, tuple(results), tuple(problems))
    op, model = result.operating_point, result.plant
    found.update(result=result, operating_point=op, model=model, margins=result.margins)
    results += _operating_results(op)
    try:
        series = design.train.series_approximation(op)
    except ValueError as exc:
        series = None
        problems.append(f"series approximation not available: {exc}")
    found["series_model"] = series
    results += _model_results(model, series)
    pid = design.controller
    if pid is None:
        problems.append("no controller in the design: loop results are left out")
    else:
        if design.measurement_span is not None:
            out_span = design.output_span if design.output_span is not None else (0.0, 100.0)
            settings = result.settings or pid.settings(design.measurement_span, out_span)
            found["settings"] = settings
            results += _settings_results(settings)
        else:
            problems.append("no measurement span: controller settings in %/% are left out")
        results += _loop_results(result)
    return Evaluation(design, tuple(results), tuple(problems), **found)
