"""Planning a step (bump) test from a model already known: step, duration, sample interval, abort limits."""

from __future__ import annotations

import dataclasses
import math
from typing import Any

from .steptest import _normalise_unit, _pretty, _scale_offset, _si_unit
from .units import ParameterError

__all__ = ["PLAN_CAUTION", "BumpTestPlan", "bump_test_plan"]

#: Caution printed with every plan.
PLAN_CAUTION = (
    "A bump test moves the real plant. Follow the site's procedures and permits, agree the step, the "
    "limits and who calls the abort with the operators and the process owner before the test, and "
    "abort by returning the output to its starting value."
)


@dataclasses.dataclass(frozen=True)
class BumpTestPlan:
    """A proposed bump test: the step, how long to record, how often to sample and when to abort.

    Attributes
    ----------
    step_size : float
        Signed step of the controller output. [input unit, usually %]
    output_before, output_after : float or None
        Controller output before and after the step, when the present output was given. [%]
    expected_change : float
        Expected change of the process value at the end (integrating: at the
        end of the hold). [SI output unit]
    record_before : float
        Steady record to take before the step. [s]
    record_after : float
        Record to take after the step (integrating: how long to hold the step). [s]
    sample_interval : float
        Longest sample interval. [s]
    abort_low, abort_high : float
        Abort if the process value leaves this band (absolute when the present
        value was given, else as a deviation from it). [SI output unit]
    output_unit : str
        Unit the process value is shown in (pint syntax); empty for SI.
    output_si_unit : str
        Unit of the values held.
    absolute : bool
        Whether the abort band is absolute (True) or a deviation (False).
    cautions : tuple of str
        Plain warnings, always ending with :data:`PLAN_CAUTION`.
    """

    step_size: float
    output_before: float | None
    output_after: float | None
    expected_change: float
    record_before: float
    record_after: float
    sample_interval: float
    abort_low: float
    abort_high: float
    output_unit: str
    output_si_unit: str
    absolute: bool
    cautions: tuple[str, ...]

    def table(self) -> list[tuple[str, Any, str]]:
        """Rows (item, value, unit) for the operators' sheet, process values in the display unit."""
        scale, off = _scale_offset(self.output_unit) if self.output_unit else (1.0, 0.0)
        yu = _pretty(self.output_unit) if self.output_unit else _pretty(self.output_si_unit)
        off = off if self.absolute else 0.0
        rows: list[tuple[str, Any, str]] = []
        if self.output_before is not None and self.output_after is not None:
            rows += [
                ("output before the step", self.output_before, "%"),
                ("output after the step", self.output_after, "%"),
            ]
        rows += [
            ("step", self.step_size, "%"),
            ("expected change of the process value", self.expected_change / scale, yu),
            ("steady record before the step, at least", self.record_before, "s"),
            ("record after the step, about", self.record_after, "s"),
            ("sample interval, at most", self.sample_interval, "s"),
            ("abort below" if self.absolute else "abort below (change from start)", (self.abort_low - off) / scale, yu),
            (
                "abort above" if self.absolute else "abort above (change from start)",
                (self.abort_high - off) / scale,
                yu,
            ),
        ]
        return rows

    def text(self) -> str:
        """The plan as printable text, with its cautions."""
        lines = ["Bump test plan"] + [f"  {q:<45s} {v:>10.4g} {u}" for q, v, u in self.table()]
        return "\n".join(lines + [f"Caution: {c}" for c in self.cautions])

    def __str__(self) -> str:
        return self.text()


def bump_test_plan(
    model: Any,
    *,
    step_size: float = 5.0,
    output_now: float | None = None,
    output_limits: tuple[float, float] = (0.0, 100.0),
    process_value_now: float | None = None,
    process_limits: tuple[float, float] | None = None,
    output_unit: str | None = None,
) -> BumpTestPlan:
    """Propose a bump test for a process whose model is roughly known.

    Parameters
    ----------
    model : StepFit or drivekit.models.FOPDT, SOPDT, IntegratingDeadTime
        Anything with ``gain`` [SI output / %], ``dead_time`` [s] and, for a
        self-regulating process, ``time_constant`` (and ``time_constant_2``) [s].
    step_size : float
        Signed step of the controller output; negative steps down. [%]
        Default 5 %: large enough to stand clear of noise, small enough not to
        upset the process (common practice, no source; 2-10 % is usual).
    output_now : float, optional
        Present controller output, checked against ``output_limits``. [%]
    output_limits : tuple of float
        Lowest and highest controller output. [%]
    process_value_now : float, optional
        Present process value, making the abort band absolute. [SI output unit]
    process_limits : tuple of float, optional
        Process values the test must not cross (low, high). [SI output unit]
    output_unit : str, optional
        Unit to show the process value in (e.g. ``"m**3/h"``); taken from a
        :class:`StepFit` when not given. [-]

    Returns
    -------
    BumpTestPlan

    Notes
    -----
    Record at least tau + theta of steady data before the step and about
    5 (tau_sum + theta) after it, sampling every tau/10 or faster (and theta/5
    or faster, to resolve the dead time); abort if the process value goes
    further than 1.5 times the expected change in the step's direction or
    0.5 times against it. For an integrating process, hold the step for
    6 theta and return the output. All common practice, no source; the
    98 % settling of a first-order lag in 4 tau is in Seborg et al., *Process
    Dynamics and Control*, 3rd ed., §5.2.
    """
    gain = float(model.gain)
    theta = float(model.dead_time)
    tau = getattr(model, "time_constant", None)
    tau_sum = (tau or 0.0) + (getattr(model, "time_constant_2", None) or 0.0)
    if gain == 0.0 or not math.isfinite(gain):
        raise ParameterError(f"`model`: got gain {gain:g}, expected a finite non-zero process gain")
    if step_size == 0.0:
        raise ParameterError("`step_size`: got 0 %, expected a non-zero step of the controller output")
    cautions = []
    after = None
    if output_now is not None:
        after = output_now + step_size
        lo, hi = output_limits
        if not lo <= after <= hi:
            raise ParameterError(
                f"`step_size`: got {step_size:g} % from {output_now:g} %, which leaves the output range "
                f"{lo:g}-{hi:g} %; expected a step that stays inside it (step the other way)"
            )
    if tau is None:  # integrating
        if theta <= 0.0:
            raise ParameterError("`model`: an integrating model needs a dead time > 0 s to plan the hold time")
        before, hold = 5.0 * theta, 6.0 * theta
        change = gain * step_size * (hold - theta)
        sample = theta / 5.0
        cautions.append("integrating process: the value keeps moving until the output is returned")
    else:
        before, hold = max(tau_sum + theta, 1e-9), 5.0 * (tau_sum + theta)
        change = gain * step_size
        sample = min(tau_sum / 10.0, theta / 5.0) if theta > 0 else tau_sum / 10.0
    band = sorted((-0.5 * change, 1.5 * change))
    ref = process_value_now if process_value_now is not None else 0.0
    low, high = ref + band[0], ref + band[1]
    if process_limits is not None:
        if process_value_now is None:
            raise ParameterError("`process_value_now`: got None, expected the present value to check `process_limits`")
        end = process_value_now + change
        if not process_limits[0] <= end <= process_limits[1]:
            cautions.append(
                f"the expected end value {end:.4g} lies outside the process limits "
                f"{process_limits[0]:.4g}-{process_limits[1]:.4g}: make the step smaller or step the other way"
            )
        low, high = max(low, process_limits[0]), min(high, process_limits[1])
    unit = output_unit if output_unit is not None else getattr(model, "output_unit", "")
    si = getattr(model, "output_si_unit", _si_unit(_normalise_unit(unit), "output_unit"))
    return BumpTestPlan(
        step_size=step_size,
        output_before=output_now,
        output_after=after,
        expected_change=change,
        record_before=before,
        record_after=hold,
        sample_interval=sample,
        abort_low=low,
        abort_high=high,
        output_unit=_normalise_unit(unit),
        output_si_unit=si,
        absolute=process_value_now is not None,
        cautions=(*cautions, PLAN_CAUTION),
    )
