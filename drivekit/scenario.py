"""Scenarios for a loop simulation: setpoint steps, manual output steps and disturbances of the plant.

Each disturbance rebuilds the affected stage with :func:`dataclasses.replace`
and a new :class:`~drivekit.drivetrain.DriveTrain` at its time; the simulation
carries the state over.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from typing import Any

from .drivetrain import DriveTrain
from .machines import Conveyor
from .units import ParameterError, ParamSpec, to_si

__all__ = ["DensityChange", "LoadTorqueChange", "Scenario", "StaticHeadChange", "ValveClosing"]

# -- scenarios ----------------------------------------------------------------------------


def _time(value: Any, name: str) -> float:
    return float(to_si(value, name, ParamSpec("s", "time", minimum=0.0)))


@dataclasses.dataclass(frozen=True)
class _Disturbance:
    time: Any

    def __post_init__(self) -> None:
        object.__setattr__(self, "time", _time(self.time, "time"))

    def _pipes(self, train: DriveTrain) -> tuple[Any, ...]:
        if not train.is_pump:
            raise ParameterError(f"`{type(self).__name__}`: needs a pump and its pipe line in the drive train")
        return train.pipes


@dataclasses.dataclass(frozen=True)
class DensityChange(_Disturbance):
    """The pumped liquid changes (e.g. a denser slurry arrives).

    Parameters
    ----------
    time : float, Quantity or str
        When. [s]
    sg : float
        New specific gravity. [-]
    viscosity : float, Quantity or str, optional
        New dynamic viscosity; unchanged when None. [Pa*s]
    """

    sg: float
    viscosity: Any = None

    def apply(self, train: DriveTrain) -> DriveTrain:
        """The drive train after the change."""
        self._pipes(train)
        changes: dict[str, Any] = {"sg": self.sg}
        if self.viscosity is not None:
            changes["viscosity"] = self.viscosity
        return _rebuild(train, fluid=dataclasses.replace(train.fluid, **changes))


@dataclasses.dataclass(frozen=True)
class StaticHeadChange(_Disturbance):
    """The line's total static head changes (a tank level moves); the last pipe takes the change.

    Parameters
    ----------
    time : float, Quantity or str
        When. [s]
    static_head : float, Quantity or str
        New total static head. [m]
    """

    static_head: Any

    def apply(self, train: DriveTrain) -> DriveTrain:
        """The drive train after the change."""
        last = self._pipes(train)[-1]
        new = float(to_si(self.static_head, "static_head", ParamSpec("m", "static head")))
        return _rebuild(
            train, {id(last): dataclasses.replace(last, static_head=last.static_head + new - train.static_head)}
        )


@dataclasses.dataclass(frozen=True)
class ValveClosing(_Disturbance):
    """A valve throttles: an extra loss coefficient K on one pipe run.

    Parameters
    ----------
    time : float, Quantity or str
        When. [s]
    minor_loss : float
        Extra K, on that pipe's velocity. [-]
    pipe : int
        Which pipe run, by index; default the last. [-]
    """

    minor_loss: float
    pipe: int = -1

    def apply(self, train: DriveTrain) -> DriveTrain:
        """The drive train after the change."""
        old = self._pipes(train)[self.pipe]
        return _rebuild(train, {id(old): dataclasses.replace(old, minor_loss=old.minor_loss + self.minor_loss)})


@dataclasses.dataclass(frozen=True)
class LoadTorqueChange(_Disturbance):
    """The conveyor's load changes (more material on the belt).

    Parameters
    ----------
    time : float, Quantity or str
        When. [s]
    load_torque : float, Quantity or str
        New load torque at the pulley. [N*m]
    """

    load_torque: Any

    def apply(self, train: DriveTrain) -> DriveTrain:
        """The drive train after the change."""
        if not isinstance(train.machine, Conveyor):
            raise ParameterError(f"`LoadTorqueChange`: needs a Conveyor, the train drives a {train.machine.name}")
        return _rebuild(train, {id(train.machine): dataclasses.replace(train.machine, load_torque=self.load_torque)})


def _rebuild(train: DriveTrain, replace: dict[int, Any] | None = None, fluid: Any = None) -> DriveTrain:
    """A new drive train with some stages (by identity) or the fluid replaced."""
    replace = replace or {}
    stages = [replace.get(id(s), s) for s in train.stages]
    return DriveTrain(*stages, fluid=fluid or train.fluid, output=train.output, name=train.name)


@dataclasses.dataclass(frozen=True)
class Scenario:
    """What happens during a run: where it starts, setpoint steps, disturbances.

    Parameters
    ----------
    duration : float, Quantity or str
        Length of the run. [s]
    setpoint : float, Quantity or str, optional
        Value of the measured quantity the plant starts at, steady, and the
        initial setpoint. [SI unit of the measurement, e.g. m**3/s or rad/s]
    setpoint_steps : sequence of (time, value)
        New setpoint targets. [s], [SI unit of the measurement]
    disturbances : sequence
        :class:`DensityChange`, :class:`StaticHeadChange`,
        :class:`ValveClosing`, :class:`LoadTorqueChange`.
    output_steps : sequence of (time, value)
        Manual output changes, used when the run has no controller (open
        loop). [s], [output unit]
    name : str
        Label.
    """

    duration: Any
    setpoint: Any = None
    setpoint_steps: Sequence[tuple[Any, Any]] = ()
    disturbances: Sequence[Any] = ()
    output_steps: Sequence[tuple[Any, float]] = ()
    name: str = "scenario"

    def __post_init__(self) -> None:
        duration = _time(self.duration, "duration")
        if duration <= 0:
            raise ParameterError(f"`duration`: got {self.duration!r}, expected a time > 0 s")
        object.__setattr__(self, "duration", duration)
        for name in ("setpoint_steps", "output_steps"):
            steps = tuple((_time(t, f"{name} time"), v) for t, v in getattr(self, name))
            object.__setattr__(self, name, tuple(sorted(steps, key=lambda s: s[0])))
        for d in self.disturbances:
            if not isinstance(d, _Disturbance):
                raise ParameterError(f"`disturbances`: got {d!r}, expected DensityChange, StaticHeadChange, ...")
        object.__setattr__(self, "disturbances", tuple(sorted(self.disturbances, key=lambda d: d.time)))
