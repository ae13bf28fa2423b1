"""The coupled drive train: drive, motor, transmission, machine, pipe line and sensor as one model.

The stages are chained in the order power flows. Each contributes its states
and equations, and they are coupled through their ports: the motor's torque
drives the shaft, the machine's torque (from speed and flow) loads it back,
the pump's head drives the liquid column and the pipe's friction and static
head oppose it. Nothing is taken to be in series unless it is.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from .constants import STANDARD_GRAVITY
from .drives import VariableSpeedDrive
from .fluid import Fluid
from .linear import LinearModel
from .machines import Conveyor, Fan, NoLoad
from .motors import DCMotor, InductionMotor
from .piping import Pipe, line_friction_head, line_inertance_head, line_static_head
from .pumps import CentrifugalPump
from .sensors import FlowMeter, PressureSensor, SpeedSensor, _Sensor
from .transmissions import Transmission
from .units import ParameterError

__all__ = ["OUTPUTS", "DriveTrain"]

#: Outputs a drive train can be asked for: SI unit, trade unit, plain name.
OUTPUTS: dict[str, tuple[str, str, str]] = {
    "flow": ("m**3/s", "m**3/h", "flow"),
    "machine_speed": ("rad/s", "rpm", "machine speed"),
    "motor_speed": ("rad/s", "rpm", "motor speed"),
    "pump_pressure": ("Pa", "bar", "pump differential pressure"),
}

#: Typical magnitudes of each kind of state, to size finite-difference steps.
_STATE_SCALE = {"Hz": 1.0, "A": 1.0, "rad/s": 1.0, "rad": 1e-3, "m**3/s": 1e-3, "Pa": 1e3}


@dataclasses.dataclass(frozen=True)
class _Layout:
    """Where each state sits in the state vector (None where absent)."""

    names: tuple[str, ...]
    units: tuple[str, ...]
    stages: tuple[str, ...]
    drive: int | None
    current: int | None
    motor_speed: int
    machine_speed: int | None
    twist: int | None
    flow: int | None
    sensor: int | None


class DriveTrain:
    """A motor-driven machine as one nonlinear model dx/dt = f(x, u), y = g(x).

    Parameters
    ----------
    *stages : components
        In the order power flows: an optional :class:`VariableSpeedDrive`, a
        motor (:class:`DCMotor` or :class:`InductionMotor`), an optional
        :class:`Transmission` (direct coupling without one), a driven machine
        (:class:`CentrifugalPump`, :class:`Fan` or :class:`Conveyor`; none for
        the motor alone on a free shaft), for a
        pump one or more :class:`Pipe` runs in series, and an optional sensor
        (:class:`FlowMeter`, :class:`SpeedSensor`, :class:`PressureSensor`).
    fluid : Fluid, optional
        The pumped liquid. Default water at 20 degC.
    output : str, optional
        What the loop measures when no sensor is given: ``"flow"``,
        ``"machine_speed"``, ``"motor_speed"`` or ``"pump_pressure"``.
        Default ``"flow"`` for a pump, ``"machine_speed"`` otherwise.
    name : str
        Label.

    Notes
    -----
    States, as present: drive output frequency [Hz], armature current [A],
    motor speed [rad/s], machine speed [rad/s] and shaft twist [rad]
    (compliant transmission), flow [m**3/s], sensor reading. The equations
    are those of each stage's class; the liquid column obeys

    .. math:: \\sum \\frac{L}{g A} \\frac{dQ}{dt} = H(\\omega, Q) - h_{static} - h_f(Q)

    i.e. ``I dQ/dt = rho g (H - h_static - h_f)`` with inertance
    ``I = rho sum L/A`` (rigid column; Wylie & Streeter, *Fluid Transients in
    Systems*, 1993, §1.1).

    Examples
    --------
    >>> import drivekit as dk
    >>> curve = dk.PumpCurve(flow=["0 m**3/h", "150 m**3/h", "300 m**3/h"], head=[32, 29, 20],
    ...                      efficiency=[0, 0.72, 0.70])
    >>> train = dk.DriveTrain(
    ...     dk.VariableSpeedDrive(max_frequency="50 Hz"),
    ...     dk.InductionMotor(rated_power="22 kW", rated_speed="1470 rpm", J=0.12),
    ...     dk.CentrifugalPump(curve=curve, speed="1470 rpm", J=0.2),
    ...     dk.Pipe(length="400 m", diameter="200 mm", static_head="12 m", minor_loss=6),
    ...     dk.FlowMeter(time_constant="0.5 s"),
    ... )
    >>> op = train.operating_point(flow="180 m**3/h")
    >>> round(op.u.to("Hz").magnitude, 2)
    40.59
    """

    def __init__(
        self,
        *stages: Any,
        fluid: Fluid | None = None,
        output: str | None = None,
        name: str = "drive train",
    ) -> None:
        self.stages = tuple(stages)
        self.name = name
        self._output_arg = output
        self._assign_roles(list(stages))
        if fluid is not None and not isinstance(fluid, Fluid):
            raise ParameterError(f"`fluid`: got {type(fluid).__name__}, expected a Fluid")
        self.fluid = fluid if fluid is not None else Fluid()
        self.output = self._choose_output(output)
        self._layout = self._make_layout()
        self._precompute()

    # -- assembly -------------------------------------------------------------------
    def _assign_roles(self, stages: list[Any]) -> None:
        def take(kinds: tuple[type, ...]) -> Any:
            if stages and isinstance(stages[0], kinds):
                return stages.pop(0)
            return None

        position = len(self.stages) - len(stages)
        self.drive: VariableSpeedDrive | None = take((VariableSpeedDrive,))
        self.motor: DCMotor | InductionMotor = take((DCMotor, InductionMotor))
        if self.motor is None:
            got = type(stages[0]).__name__ if stages else "nothing"
            raise ParameterError(
                f"`stages`: stage {len(self.stages) - len(stages) + 1} is {got}; expected a motor "
                "(DCMotor or InductionMotor), optionally after a VariableSpeedDrive"
            )
        if self.drive is not None and isinstance(self.motor, DCMotor):
            raise ParameterError(
                "`stages`: a VariableSpeedDrive feeds an InductionMotor; a DCMotor takes its armature voltage directly"
            )
        self.transmission: Transmission | None = take((Transmission,))
        self.machine: CentrifugalPump | Fan | Conveyor | NoLoad = take((CentrifugalPump, Fan, Conveyor))
        if self.machine is None and (not stages or isinstance(stages[0], SpeedSensor)):
            if self.transmission is not None and self.transmission.compliant:
                raise ParameterError("`stages`: a compliant Transmission needs a driven machine after it")
            self.machine = NoLoad()
        if self.machine is None:
            got = type(stages[0]).__name__ if stages else "nothing"
            raise ParameterError(
                f"`stages`: after the motor{' and transmission' if self.transmission else ''} came {got}; "
                "expected a driven machine (CentrifugalPump, Fan or Conveyor)"
            )
        pipes = []
        while stages and isinstance(stages[0], Pipe):
            pipes.append(stages.pop(0))
        self.pipes: tuple[Pipe, ...] = tuple(pipes)
        self.sensor: _Sensor | None = take((FlowMeter, SpeedSensor, PressureSensor))
        if stages:
            raise ParameterError(
                f"`stages`: {type(stages[0]).__name__} at position {len(self.stages) - len(stages) + 1 + position} "
                "is out of place; the order is drive, motor, transmission, machine, pipes, sensor"
            )
        if self.is_pump and not self.pipes:
            raise ParameterError("`stages`: a CentrifugalPump needs at least one Pipe after it to pump into")
        if self.pipes and not self.is_pump:
            raise ParameterError(f"`stages`: a Pipe follows a {type(self.machine).__name__}; pipes follow a pump")

    def stage_map(self) -> dict[str, Any]:
        """The stages by role key: ``drive``, ``motor``, ``transmission``, ``machine``,
        ``pipe1``, ``pipe2``, ..., ``sensor`` and ``fluid`` (absent roles left out)."""
        roles: dict[str, Any] = {}
        for key, stage in (
            ("drive", self.drive),
            ("motor", self.motor),
            ("transmission", self.transmission),
            ("machine", None if isinstance(self.machine, NoLoad) else self.machine),
        ):
            if stage is not None:
                roles[key] = stage
        for i, p in enumerate(self.pipes):
            roles[f"pipe{i + 1}"] = p
        if self.sensor is not None:
            roles["sensor"] = self.sensor
        if self.is_pump:
            roles["fluid"] = self.fluid
        return roles

    def with_stage(self, role: str, stage: Any) -> DriveTrain:
        """A new drive train with the stage of ``role`` (a :meth:`stage_map` key) replaced by ``stage``."""
        roles = self.stage_map()
        if role not in roles:
            raise ParameterError(f"`role`: got {role!r}, expected one of {tuple(roles)}")
        roles[role] = stage
        fluid = roles.pop("fluid", self.fluid)
        return DriveTrain(*roles.values(), fluid=fluid, output=self._output_arg, name=self.name)

    @property
    def is_pump(self) -> bool:
        """True when the driven machine is a centrifugal pump."""
        return isinstance(self.machine, CentrifugalPump)

    def _choose_output(self, output: str | None) -> str:
        measured = self.sensor.quantity if self.sensor is not None else None
        if output is not None and output not in OUTPUTS:
            raise ParameterError(f"`output`: got {output!r}, expected one of {tuple(OUTPUTS)}")
        if measured is not None and output is not None and output != measured:
            raise ParameterError(
                f"`output`: got {output!r}, but the {self.sensor.name} measures {measured!r}; "  # type: ignore[union-attr]
                "leave `output` out or change the sensor"
            )
        chosen = measured or output or ("flow" if self.is_pump else "machine_speed")
        if chosen in ("flow", "pump_pressure") and not self.is_pump:
            raise ParameterError(f"`output`: {chosen!r} needs a CentrifugalPump in the train")
        return chosen

    def _make_layout(self) -> _Layout:
        names: list[str] = []
        units: list[str] = []
        owners: list[str] = []

        def add(name: str, unit: str, owner: str) -> int:
            names.append(name)
            units.append(unit)
            owners.append(owner)
            return len(names) - 1

        drive = None
        if self.drive is not None and np.all(self.drive.time_constant > 0):
            drive = add("drive frequency", "Hz", self.drive.name)
        current = None
        if isinstance(self.motor, DCMotor) and np.all(self.motor.L > 0):
            current = add("armature current", "A", self.motor.name)
        compliant = self.transmission is not None and self.transmission.compliant
        alone = compliant or isinstance(self.machine, NoLoad)
        shaft_owner = self.motor.name if alone else f"{self.motor.name} + {self.machine.name}"
        motor_speed = add("motor speed", "rad/s", shaft_owner)
        machine_speed = twist = None
        if compliant:
            machine_speed = add("machine speed", "rad/s", self.machine.name)
            twist = add("shaft twist", "rad", self.transmission.name)  # type: ignore[union-attr]
        flow = add("flow", "m**3/s", "pipe line") if self.is_pump else None
        sensor = None
        if self.sensor is not None and np.all(self.sensor.time_constant > 0):
            sensor = add(f"measured {OUTPUTS[self.output][2]}", OUTPUTS[self.output][0], self.sensor.name)
        return _Layout(
            tuple(names), tuple(units), tuple(owners), drive, current, motor_speed, machine_speed, twist, flow, sensor
        )

    def _precompute(self) -> None:
        t = self.transmission
        self._ratio = t.ratio if t is not None else 1.0
        self._eta = t.efficiency if t is not None else 1.0
        jm, jl = self.motor.J, self.machine.J
        self._inertia_rigid = jm + jl / (self._ratio**2 * self._eta)
        if self.is_pump:
            self._static_head = line_static_head(self.pipes)
            self._column = line_inertance_head(self.pipes)

    # -- description ------------------------------------------------------------------
    @property
    def state_names(self) -> tuple[str, ...]:
        """Names of the states, in order."""
        return self._layout.names

    @property
    def state_units(self) -> tuple[str, ...]:
        """SI unit of each state."""
        return self._layout.units

    @property
    def input_name(self) -> str:
        """What the controller writes: speed reference, armature voltage or stator frequency."""
        return self.drive.input_quantity if self.drive is not None else self.motor.input_quantity

    @property
    def input_unit(self) -> str:
        """Unit of the input: ``"Hz"``, ``"%"`` or ``"V"``."""
        return self.drive.input_unit if self.drive is not None else self.motor.input_unit

    @property
    def output_unit(self) -> str:
        """SI unit of the output."""
        return OUTPUTS[self.output][0]

    @property
    def output_display_unit(self) -> str:
        """Trade unit of the output (m**3/h, rpm, bar)."""
        return OUTPUTS[self.output][1]

    @property
    def dead_time(self) -> float:
        """Sensor dead time. [s]"""
        return float(self.sensor.dead_time) if self.sensor is not None else 0.0

    @property
    def static_head(self) -> float:
        """Total static head of the pipe line. [m]"""
        return float(self._static_head) if self.is_pump else 0.0

    def __repr__(self) -> str:
        names = " -> ".join(type(s).__name__ for s in self.stages)
        return f"DriveTrain({names}; output {self.output})"

    # -- the model --------------------------------------------------------------------
    def supply(self, u: Any) -> Any:
        """Steady motor supply (Hz or V) the input ``u`` asks for (reference clipped by the drive)."""
        return self.drive.frequency_demand(u) if self.drive is not None else u

    def motor_torque(self, supply: Any, motor_speed: Any, current: Any = None) -> Any:
        """Motor air-gap torque. [N*m]

        Parameters
        ----------
        supply : float or array
            Stator frequency [Hz] or armature voltage [V].
        motor_speed : float or array
            [rad/s]
        current : float or array, optional
            Armature current [A] of a DC motor; steady value when omitted.
        """
        m = self.motor
        if isinstance(m, DCMotor):
            if current is None:
                current = m.current(supply, motor_speed)
            return m.k * current
        return m.torque(supply, motor_speed)

    def machine_torque(self, machine_speed: Any, flow: Any) -> Any:
        """Torque the machine takes at its shaft, friction included. [N*m]"""
        return self.machine.torque(machine_speed, flow, self.fluid.density)

    def pump_head(self, machine_speed: Any, flow: Any) -> Any:
        """Pump head at ``machine_speed`` [rad/s], ``flow`` [m**3/s]. [m]"""
        return self.machine.head(machine_speed, flow)  # type: ignore[union-attr]

    def system_head(self, flow: Any) -> Any:
        """System curve: static plus friction head of the pipe line at ``flow`` [m**3/s]. [m]"""
        return self._static_head + line_friction_head(self.pipes, flow, self.fluid)

    def torque_at_motor(self, machine_torque: Any, machine_speed: Any) -> Any:
        """A machine-side torque seen at the motor shaft, through ratio and efficiency. [N*m]"""
        if self.transmission is None:
            return machine_torque
        return self.transmission.torque_at_motor(machine_torque, machine_speed)

    def derivatives(self, x: Any, u: Any) -> np.ndarray:
        """dx/dt = f(x, u), vectorised over trailing axes.

        Parameters
        ----------
        x : array, shape (n, ...)
            States in SI (see :attr:`state_names`).
        u : float or array
            Input in :attr:`input_unit`.

        Returns
        -------
        numpy.ndarray, shape of ``x`` broadcast with ``u``
        """
        lay = self._layout
        x = np.asarray(x, dtype=float)
        u = np.asarray(u, dtype=float)
        dx = np.zeros(np.broadcast_shapes(x.shape, (1, *u.shape)))
        if self.drive is not None:
            demand = self.drive.frequency_demand(u)
            if lay.drive is not None:
                f = x[lay.drive]
                rate = self.drive.ramp_rate
                dx[lay.drive] = np.clip((demand - f) / self.drive.time_constant, -rate, rate)
                supply = f
            else:
                supply = demand
        else:
            supply = u
        w_m = x[lay.motor_speed]
        w_l = x[lay.machine_speed] if lay.machine_speed is not None else w_m / self._ratio
        flow = x[lay.flow] if lay.flow is not None else 0.0
        m = self.motor
        if lay.current is not None:
            i = x[lay.current]
            dx[lay.current] = (supply - m.R * i - m.k * w_m) / m.L  # type: ignore[union-attr]
            torque = m.k * i  # type: ignore[union-attr]
        else:
            torque = self.motor_torque(supply, w_m)
        load = self.machine_torque(w_l, flow)
        if lay.twist is not None:
            t = self.transmission
            shaft = t.stiffness * x[lay.twist] + t.damping * (w_m / self._ratio - w_l)  # type: ignore[union-attr]
            dx[lay.motor_speed] = (torque - m.b * w_m - self.torque_at_motor(shaft, w_l)) / m.J
            dx[lay.machine_speed] = (shaft - load) / self.machine.J
            dx[lay.twist] = w_m / self._ratio - w_l
        else:
            dx[lay.motor_speed] = (torque - m.b * w_m - self.torque_at_motor(load, w_l)) / self._inertia_rigid
        if lay.flow is not None:
            dx[lay.flow] = (self.pump_head(w_l, flow) - self.system_head(flow)) / self._column
        if lay.sensor is not None:
            dx[lay.sensor] = (self.measured(x, u) - x[lay.sensor]) / self.sensor.time_constant  # type: ignore[union-attr]
        return dx

    def measured(self, x: Any, u: Any = 0.0) -> Any:
        """The true value of the output quantity (before the sensor), SI."""
        lay = self._layout
        x = np.asarray(x, dtype=float)
        w_m = x[lay.motor_speed]
        if self.output == "motor_speed":
            return w_m + 0.0 * np.asarray(u)
        w_l = x[lay.machine_speed] if lay.machine_speed is not None else w_m / self._ratio
        if self.output == "machine_speed":
            return w_l + 0.0 * np.asarray(u)
        flow = x[lay.flow]
        if self.output == "flow":
            return flow + 0.0 * np.asarray(u)
        return self.fluid.density * STANDARD_GRAVITY * self.pump_head(w_l, flow) + 0.0 * np.asarray(u)

    def output_of(self, x: Any, u: Any = 0.0) -> Any:
        """y = g(x, u): the sensor's reading (without its dead time), SI."""
        lay = self._layout
        if lay.sensor is not None:
            return np.asarray(x, dtype=float)[lay.sensor] + 0.0 * np.asarray(u)
        return self.measured(x, u)

    # -- steady state and linear model ------------------------------------------------
    def operating_point(self, *, u: Any = None, flow: Any = None, speed: Any = None) -> Any:
        """The steady state for a given input, flow or machine speed.

        Parameters
        ----------
        u : float, Quantity or str, optional
            Input (speed reference in Hz or %, or armature voltage in V).
        flow : float, Quantity or str, optional
            Target flow. [m**3/s]
        speed : float, Quantity or str, optional
            Target machine speed. [rad/s]

        Returns
        -------
        OperatingPoint

        Raises
        ------
        OperatingPointError
            Where no steady state exists (the pump cannot reach the static
            head, the flow is beyond the pump curve, the motor or drive
            cannot give the torque, frequency or voltage), naming the limit
            and by how much it is missed.
        """
        from .operating import solve_operating_point

        return solve_operating_point(self, u=u, flow=flow, speed=speed)

    def linearize(self, op: Any) -> LinearModel:
        """Linear model at an operating point (central differences of the full coupled model).

        Parameters
        ----------
        op : OperatingPoint
            From :meth:`operating_point`.

        Returns
        -------
        LinearModel
            Input :attr:`input_name` in :attr:`input_unit`, output in SI with
            the trade unit for display, the sensor dead time as ``delay``.

        Notes
        -----
        Steps are 1e-6 of each state's magnitude (plus a typical size), so the
        truncation error of the central difference is about 1e-12 relative;
        the pipe friction's dependence on Reynolds number is included (the
        slope of the friction head is then a few % below 2 h/Q).
        """
        x0 = np.asarray(op.x, dtype=float)
        u0 = float(op.u_si)
        n = x0.size
        lay = self._layout
        hx = 1e-6 * (np.abs(x0) + np.array([_STATE_SCALE.get(unit, 1.0) for unit in lay.units]))
        hu = 1e-6 * (abs(u0) + 1.0)
        up, down = u0 + hu, u0 - hu
        if self.drive is not None:
            lo, hi = self.drive.reference_range()
            if up > hi:  # at the top of the range: one-sided, from inside
                up = u0
            if down < lo:
                down = u0
        cols = 2 * n + 2
        xs = np.repeat(x0[:, None], cols, axis=1)
        us = np.full(cols, u0)
        idx = np.arange(n)
        xs[idx, 2 * idx] += hx
        xs[idx, 2 * idx + 1] -= hx
        us[2 * n], us[2 * n + 1] = up, down
        fs = self.derivatives(xs, us)
        ys = self.output_of(xs, us)
        a = (fs[:, 0 : 2 * n : 2] - fs[:, 1 : 2 * n : 2]) / (2.0 * hx)
        c = ((ys[0 : 2 * n : 2] - ys[1 : 2 * n : 2]) / (2.0 * hx))[None, :]
        du = up - down
        b = ((fs[:, 2 * n] - fs[:, 2 * n + 1]) / du)[:, None]
        d = np.array([[(ys[2 * n] - ys[2 * n + 1]) / du]])
        return LinearModel(
            a,
            b,
            c,
            d,
            delay=self.dead_time,
            state_names=lay.names,
            state_units=lay.units,
            state_stages=lay.stages,
            input_name=self.input_name,
            input_unit=self.input_unit,
            output_name=OUTPUTS[self.output][2],
            output_unit=self.output_unit,
            output_display_unit=self.output_display_unit,
        )

    def series_approximation(self, op: Any) -> LinearModel:
        """The textbook shortcut: one transfer function per stage, multiplied as if none loaded the next.

        Parameters
        ----------
        op : OperatingPoint
            Where the stage gains are taken.

        Returns
        -------
        LinearModel
            Product of: the drive lag; the motor with all inertia and viscous
            friction on its shaft but no load torque that changes with speed
            or flow; the gear ratio 1/N; for a pump, the liquid column driven
            by the pump head with the speed held (dQ/dw from the head curve,
            pole from the slopes of pump and system curves); the sensor lag.
            Compare with :meth:`linearize` via :meth:`LinearModel.compare`.

        Notes
        -----
        Loading ignored: the pump's torque rises with speed and flow and
        pushes back on the motor, slowing the shaft and lowering the gain;
        the shortcut drops that path. How much it matters depends on the
        machine; the comparison shows it at this operating point.
        """
        from .series import series_model

        return series_model(self, op)

    def system_curve(self, flow: Any) -> Any:
        """Head the pipe line needs at each ``flow`` [m**3/s]. [m]"""
        return self.system_head(np.asarray(flow, dtype=float))

    def pump_curves(self, speeds: Sequence[Any], flow: Any) -> np.ndarray:
        """Pump head at each speed in ``speeds`` [rad/s] over ``flow`` [m**3/s]; NaN beyond the curve. [m]"""
        q = np.asarray(flow, dtype=float)
        rows = []
        for w in speeds:
            h = np.asarray(self.pump_head(w, q), dtype=float)
            h = np.where(q <= self.machine.curve_end_flow(w) * (1 + 1e-9), h, math.nan)  # type: ignore[union-attr]
            rows.append(h)
        return np.array(rows)
