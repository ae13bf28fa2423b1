"""A loop design: the drive train, where it runs, its controller and the targets it must meet.

:class:`Design` is plain data shared by the widgets (which edit it) and the
calculation record (which saves, re-runs and prints it). Every editable
number is addressed by a key ``"<role>.<parameter>"`` such as ``"motor.J"``,
``"pipe1.static_head"``, ``"controller.ti"`` or ``"operating.flow"``.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterator
from typing import Any

from .drivetrain import OUTPUTS, DriveTrain
from .units import ParameterError, ParamSpec, convert_fields, param, parameter_specs, to_si

__all__ = ["OPERATING_SPECS", "Design", "DesignInfo", "DesignParameter", "Targets"]

#: What an operating target may name, and its unit.
OPERATING_SPECS: dict[str, ParamSpec] = {
    "flow": ParamSpec("m**3/s", "flow", minimum=0.0, include_minimum=False),
    "speed": ParamSpec("rad/s", "machine speed", minimum=0.0, include_minimum=False, kind="shaft_speed"),
    "u": ParamSpec("", "input"),
}


@dataclasses.dataclass(frozen=True, kw_only=True)
class Targets:
    """What the loop must achieve; results are shown as met or missed against these.

    Parameters
    ----------
    phase_margin : float, Quantity or str
        Least phase margin. [deg] Default 45 deg (common practice, no source).
    gain_margin : float
        Least gain margin as a ratio. [-] Default 2 (6 dB; common practice,
        no source).
    max_ms : float
        Largest peak of the sensitivity function Ms. [-] Default 1.6; values
        1.2-2.0 are usual, 1.4 robust (Astrom & Hagglund, *Advanced PID
        Control*, ISA 2006, §4.4, from memory).
    settling_time : float, Quantity or str, optional
        Longest 2 % settling time of a setpoint step. [s]
    overshoot : float
        Largest overshoot of a setpoint step. [%] Default 10 % (common
        practice, no source).
    """

    phase_margin: Any = param("deg", "least phase margin", default=45.0, minimum=0.0, maximum=180.0)
    gain_margin: Any = param("", "least gain margin (ratio)", default=2.0, minimum=1.0)
    max_ms: Any = param("", "largest peak sensitivity Ms", default=1.6, minimum=1.0)
    settling_time: Any = param("s", "longest settling time", default=None, minimum=0.0, include_minimum=False)
    overshoot: Any = param("percent", "largest overshoot", default=10.0, minimum=0.0)

    def __post_init__(self) -> None:
        convert_fields(self)


@dataclasses.dataclass(frozen=True, kw_only=True)
class DesignInfo:
    """Header of a calculation: who, what and when.

    Parameters
    ----------
    project : str
        Project or plant name.
    loop_tag : str
        Loop tag, e.g. ``"FIC-201"``.
    title : str
        What is designed.
    revision : str
        Revision letter or number.
    prepared_by, checked_by, approved_by : str
        Names or initials.
    prepared_on, checked_on, approved_on : str
        Dates, ISO 8601 (``"2026-12-02"``).
    """

    project: str = ""
    loop_tag: str = ""
    title: str = ""
    revision: str = "A"
    prepared_by: str = ""
    prepared_on: str = ""
    checked_by: str = ""
    checked_on: str = ""
    approved_by: str = ""
    approved_on: str = ""


@dataclasses.dataclass(frozen=True)
class DesignParameter:
    """One editable number of a design.

    Attributes
    ----------
    key : str
        ``"<role>.<name>"``, e.g. ``"motor.J"``.
    role : str
        Stage role (``"motor"``, ``"pipe1"``, ``"controller"``, ``"operating"``...).
    name : str
        Parameter name on its stage.
    stage : str
        The stage's own label (e.g. ``"M-201"``).
    spec : ParamSpec
        Unit (SI), description and range.
    value : float or None
        Current value in SI.
    """

    key: str
    role: str
    name: str
    stage: str
    spec: ParamSpec
    value: Any


@dataclasses.dataclass(frozen=True, kw_only=True, eq=False)
class Design:
    """A loop design, as data.

    Parameters
    ----------
    train : DriveTrain
        The plant.
    operating : tuple
        ``(kind, value)``: where the plant runs, ``kind`` one of ``"flow"``
        [m**3/s], ``"speed"`` (machine speed) [rad/s] or ``"u"`` (input, in
        the train's input unit).
    controller : PID, optional
        The loop's controller (:class:`drivekit.PID`).
    targets : Targets
        What the loop must achieve.
    measurement_span : tuple of float, optional
        Transmitter range of the measured value, (low, high) in SI.
    output_span : tuple of float, optional
        Range of the controller output in the train's input unit, e.g.
        (0, 100) % or (0, 50) Hz.
    info : DesignInfo
        Header of the calculation.
    sources : dict
        Where each input value comes from, by parameter key
        (``{"motor.J": "motor datasheet, rev. 3"}``).
    """

    train: DriveTrain
    operating: tuple[str, Any]
    controller: Any = None
    targets: Targets = dataclasses.field(default_factory=Targets)
    measurement_span: tuple[float, float] | None = None
    output_span: tuple[float, float] | None = None
    info: DesignInfo = dataclasses.field(default_factory=DesignInfo)
    sources: dict[str, str] = dataclasses.field(default_factory=dict)

    def __post_init__(self) -> None:
        if not isinstance(self.train, DriveTrain):
            raise ParameterError(f"`train`: got {type(self.train).__name__}, expected a DriveTrain")
        kind, value = self.operating
        if kind not in OPERATING_SPECS:
            raise ParameterError(f"`operating`: got {kind!r}, expected one of {tuple(OPERATING_SPECS)}")
        spec = self._operating_spec(kind)
        object.__setattr__(self, "operating", (kind, to_si(value, f"operating.{kind}", spec)))
        if self.measurement_span is not None:
            unit = OUTPUTS[self.train.output][0]
            span = self._span(self.measurement_span, "measurement_span", ParamSpec(unit, "measured value"))
            object.__setattr__(self, "measurement_span", span)
        if self.output_span is not None:
            unit = "percent" if self.train.input_unit == "%" else self.train.input_unit
            span = self._span(self.output_span, "output_span", ParamSpec(unit, "controller output"))
            object.__setattr__(self, "output_span", span)

    @staticmethod
    def _span(value: Any, name: str, spec: ParamSpec) -> tuple[float, float]:
        try:
            lo, hi = value
        except (TypeError, ValueError):
            raise ParameterError(f"`{name}`: got {value!r}, expected a pair (low, high)") from None
        lo, hi = float(to_si(lo, f"{name}[0]", spec)), float(to_si(hi, f"{name}[1]", spec))
        if not hi > lo:
            raise ParameterError(f"`{name}`: got ({lo:g}, {hi:g}), expected low < high")
        return lo, hi

    def _operating_spec(self, kind: str) -> ParamSpec:
        if kind != "u":
            return OPERATING_SPECS[kind]
        unit = self.train.input_unit
        return ParamSpec("percent" if unit == "%" else unit, self.train.input_name)

    # -- parameters -------------------------------------------------------------------
    def parameters(self) -> Iterator[DesignParameter]:
        """Every editable number: stage parameters, controller settings, the operating target."""
        for role, stage in self.train.stage_map().items():
            for name, spec in parameter_specs(stage):
                yield DesignParameter(
                    f"{role}.{name}", role, name, getattr(stage, "name", role), spec, getattr(stage, name)
                )
        if self.controller is not None:
            for name, spec in self.controller_specs().items():
                if hasattr(self.controller, name):
                    value = getattr(self.controller, name)
                    yield DesignParameter(f"controller.{name}", "controller", name, "controller", spec, value)
        kind, value = self.operating
        yield DesignParameter(
            f"operating.{kind}", "operating", kind, "operating point", self._operating_spec(kind), value
        )

    def controller_specs(self) -> dict[str, ParamSpec]:
        """Units of the controller's settings: kp in input unit per SI unit of the measured value, ti and td in s."""
        out_unit = OUTPUTS[self.train.output][0]
        in_unit = "percent" if self.train.input_unit == "%" else self.train.input_unit
        return {
            "kp": ParamSpec(f"{in_unit}/({out_unit})", "controller gain", minimum=0.0, include_minimum=False),
            "ti": ParamSpec("s", "reset (integral) time", minimum=0.0, include_minimum=False),
            "td": ParamSpec("s", "derivative time", minimum=0.0),
        }

    def value(self, key: str) -> Any:
        """Current SI value of the parameter ``key``."""
        for p in self.parameters():
            if p.key == key:
                return p.value
        raise ParameterError(f"`key`: got {key!r}, expected one of {[p.key for p in self.parameters()]}")

    def with_value(self, key: str, value: Any) -> Design:
        """A new design with one parameter changed (units converted and checked at the boundary).

        Parameters
        ----------
        key : str
            ``"<role>.<name>"`` as listed by :meth:`parameters`.
        value : float, Quantity or str
            The new value (float = SI).

        Returns
        -------
        Design

        Raises
        ------
        ParameterError
            Unknown key, or a value of the wrong unit or range; the design
            itself is unchanged.
        """
        role, _, name = key.partition(".")
        if role == "operating":
            if name not in OPERATING_SPECS:
                raise ParameterError(f"`key`: got {key!r}, expected operating.flow, operating.speed or operating.u")
            return dataclasses.replace(self, operating=(name, value))
        if role == "controller":
            if self.controller is None:
                raise ParameterError(f"`key`: got {key!r}, but the design has no controller")
            specs = self.controller_specs()
            if name in specs:
                value = to_si(value, key, specs[name])
            return dataclasses.replace(self, controller=_replace_field(self.controller, name, value, key))
        if role == "targets":
            return dataclasses.replace(self, targets=_replace_field(self.targets, name, value, key))
        stages = self.train.stage_map()
        if role not in stages:
            raise ParameterError(
                f"`key`: got {key!r}, expected a role among {(*tuple(stages), 'controller', 'operating')}"
            )
        stage = _replace_field(stages[role], name, value, key)
        if role == "fluid":
            train = DriveTrain(*self.train.stages, fluid=stage, output=self.train._output_arg, name=self.train.name)
        else:
            train = self.train.with_stage(role, stage)
        return dataclasses.replace(self, train=train)

    def operating_point(self) -> Any:
        """The plant's operating point for :attr:`operating`."""
        kind, value = self.operating
        return self.train.operating_point(**{kind: value})

    def evaluate(self) -> Any:
        """Everything the views draw and the record prints, computed once (see :func:`drivekit.evaluation.evaluate`).

        Returns
        -------
        DesignResult
        """
        from .evaluation import evaluate

        return evaluate(self)


def _replace_field(obj: Any, name: str, value: Any, key: str) -> Any:
    names = {f.name for f in dataclasses.fields(obj)}
    if name not in names or name == "name":
        raise ParameterError(f"`key`: got {key!r}; {type(obj).__name__} has no parameter {name!r}")
    return dataclasses.replace(obj, **{name: value})
