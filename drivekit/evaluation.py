"""One evaluation of a design: everything the views draw and the record prints, computed once."""

from __future__ import annotations

import dataclasses
import math
from typing import TYPE_CHECKING, Any

from .linear import LinearModel
from .loop import Loop
from .margins import LoadMetrics, Margins, StepMetrics, load_metrics, loop_margins, step_metrics
from .operating import OperatingPoint
from .responses import FrequencyResponse, StepResponse, frequency_response, load_response, step_response

if TYPE_CHECKING:
    from .design import Design

__all__ = ["STANDARD_CAUTIONS", "DesignResult", "TargetCheck", "evaluate"]

#: Cautions that go with every drive-train design, in plain words.
STANDARD_CAUTIONS: tuple[str, ...] = (
    "Rotating machinery: guard couplings and shafts; lock out and isolate before any work on the machine.",
    "Electrical work on motors and drives only by qualified persons, under the local electrical codes.",
    "Fast changes of flow (drive ramps, valve strokes, pump trips) cause pressure surges in long pipes; check "
    "surge separately and keep ramps slower than the pipe period 2L/a.",
    "These results support, and do not replace, the judgement of a licensed engineer and the local codes.",
)


@dataclasses.dataclass(frozen=True)
class TargetCheck:
    """One target against its result.

    Attributes
    ----------
    name : str
        What is checked (``"phase margin"``).
    value : float
        The result. [unit]
    limit : float
        The target. [unit]
    unit : str
        Unit of value and limit.
    kind : str
        ``">="`` (value must reach the limit) or ``"<="``.
    met : bool
        Whether the target is met.
    """

    name: str
    value: float
    limit: float
    unit: str
    kind: str
    met: bool

    @property
    def text(self) -> str:
        """``"phase margin 52.1 deg >= 45 deg: met"``."""
        state = "met" if self.met else "missed"
        return f"{self.name} {self.value:.4g} {self.unit} {self.kind} {self.limit:.4g} {self.unit}: {state}"


@dataclasses.dataclass(frozen=True, eq=False)
class DesignResult:
    """Everything computed from one design.

    Attributes
    ----------
    design : Design
        What was evaluated.
    operating_point : OperatingPoint
    plant : LinearModel
        The coupled linear model at the operating point.
    loop : Loop or None
        The closed loop (None without a controller).
    setpoint_step, load_step : StepResponse or None
        Unit setpoint step and unit load step at the plant input (loop only;
        computed for an unstable loop too, to show how it diverges).
    frequency : FrequencyResponse
        Open loop L(jw) with |S| and |T| for a loop; the plant otherwise.
    margins : Margins or None
    step : StepMetrics or None
        Metrics of the setpoint step (stable loop only).
    load : LoadMetrics or None
        Metrics of the load step (stable loop only).
    settings : object or None
        Controller settings in plant units (needs both spans).
    checks : tuple of TargetCheck
        Results against the design's targets.
    cautions : tuple of str
        The operating point's cautions followed by :data:`STANDARD_CAUTIONS`.
    """

    design: Design
    operating_point: OperatingPoint
    plant: LinearModel
    loop: Loop | None
    setpoint_step: StepResponse | None
    load_step: StepResponse | None
    frequency: FrequencyResponse
    margins: Margins | None
    step: StepMetrics | None
    load: LoadMetrics | None
    settings: Any
    checks: tuple[TargetCheck, ...]
    cautions: tuple[str, ...]

    @property
    def all_targets_met(self) -> bool:
        """True when every target check is met."""
        return all(c.met for c in self.checks)

    def summary(self) -> dict[str, float]:
        """Headline results as plain numbers (SI, degrees and %), for records and comparisons."""
        op = self.operating_point
        out: dict[str, float] = {
            "input": float(op.u_si),
            "motor speed [rad/s]": op.motor_speed,
            "plant DC gain [SI]": self.plant.dc_gain_si,
            "plant slowest time constant [s]": self.plant.time_constants[0] if self.plant.order else 0.0,
        }
        if self.design.train.is_pump:
            out["flow [m3/s]"] = op.flow
            out["pump head [m]"] = op.head
        if self.margins is not None:
            m = self.margins
            out.update(
                {
                    "gain margin [-]": m.gain_margin,
                    "phase margin [deg]": m.phase_margin,
                    "delay margin [s]": m.delay_margin,
                    "Ms [-]": m.ms,
                    "Mt [-]": m.mt,
                    "stable": float(m.stable),
                }
            )
        if self.step is not None:
            out.update(
                {
                    "rise time [s]": self.step.rise_time,
                    "settling time [s]": self.step.settling_time,
                    "overshoot [%]": self.step.overshoot,
                }
            )
        if self.load is not None:
            out["load IAE"] = self.load.iae
        return out


def _checks(design: Design, margins: Margins | None, step: StepMetrics | None) -> tuple[TargetCheck, ...]:
    """Each target against its result; everything is missed when the loop is unstable."""
    if margins is None:
        return ()
    t = design.targets
    ok = margins.stable
    overshoot = step.overshoot if step is not None else math.nan
    settling = step.settling_time if step is not None else math.nan
    checks = [
        TargetCheck(
            "phase margin",
            margins.phase_margin,
            t.phase_margin,
            "deg",
            ">=",
            ok and margins.phase_margin >= t.phase_margin,
        ),
        TargetCheck(
            "gain margin", margins.gain_margin, t.gain_margin, "-", ">=", ok and margins.gain_margin >= t.gain_margin
        ),
        TargetCheck("Ms", margins.ms, t.max_ms, "-", "<=", ok and margins.ms <= t.max_ms),
        TargetCheck("overshoot", overshoot, t.overshoot, "%", "<=", ok and overshoot <= t.overshoot),
    ]
    if t.settling_time is not None:
        checks.append(
            TargetCheck(
                "settling time",
                settling,
                t.settling_time,
                "s",
                "<=",
                ok and math.isfinite(settling) and settling <= t.settling_time,
            )
        )
    return tuple(checks)


def evaluate(design: Design) -> DesignResult:
    """Operating point, coupled model, loop, responses, margins, metrics and target checks of a design.

    Parameters
    ----------
    design : Design
        The design.

    Returns
    -------
    DesignResult

    Raises
    ------
    OperatingPointError
        Where the plant has no operating point for the design's target.
    """
    op = design.operating_point()
    plant = design.train.linearize(op)
    loop = setpoint = load = margins = step = load_m = settings = None
    if design.controller is not None:
        loop = Loop(plant, design.controller)
        frequency = frequency_response(loop)
        margins = loop_margins(loop.open_loop)
        setpoint = step_response(loop)
        load = load_response(loop)
        if margins.stable:
            step = step_metrics(setpoint)
            load_m = load_metrics(load)
        if design.measurement_span is not None and design.output_span is not None:
            settings = design.controller.settings(design.measurement_span, design.output_span)
    else:
        frequency = frequency_response(plant)
    return DesignResult(
        design=design,
        operating_point=op,
        plant=plant,
        loop=loop,
        setpoint_step=setpoint,
        load_step=load,
        frequency=frequency,
        margins=margins,
        step=step,
        load=load_m,
        settings=settings,
        checks=_checks(design, margins, step),
        cautions=tuple(op.cautions) + STANDARD_CAUTIONS,
    )
