"""Nonlinear time simulation of a drive train in closed loop with a discrete controller.

The full coupled model of :class:`~drivekit.drivetrain.DriveTrain` runs with
the plant's limits (the drive's range, ramp and current/torque limit) under a
PID controller executed at its scan time, with output limits, anti-windup,
output rate limit, setpoint ramp, deadband and a minimum output while running.
A :class:`Scenario` lists setpoint steps and disturbances (density, static
head, a valve closing, load torque); :func:`simulate` returns the run as a
table with units in the column names.

Examples
--------
>>> from drivekit import demo
>>> pi = ControllerSettings(kp=150.0, ti=3.0, sample_time=0.1)
>>> scenario = Scenario(duration=90.0, setpoint="380 m**3/h", setpoint_steps=((5.0, "340 m**3/h"),))
>>> run = simulate(demo.raw_water_pump(), pi, scenario)
>>> round(float(run.frame["flow [m3/h]"].iloc[-1]), 1)
340.0
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from .constants import STANDARD_GRAVITY
from .discrete_pid import ControllerSettings, DiscretePID, LoopOptions
from .drivetrain import OUTPUTS, DriveTrain
from .motors import DCMotor, InductionMotor
from .operating import OperatingPoint
from .piping import line_inertance_head
from .scenario import DensityChange, LoadTorqueChange, Scenario, StaticHeadChange, ValveClosing
from .units import ParameterError, ParamSpec, to_si

__all__ = [
    "ControllerSettings",
    "DensityChange",
    "DiscretePID",
    "LoadTorqueChange",
    "LoopOptions",
    "Scenario",
    "SimulationResult",
    "StaticHeadChange",
    "ValveClosing",
    "simulate",
]

_RPM = 60.0 / (2.0 * math.pi)
#: Trade unit of each SI unit in the result's column names, with its scale.
_SHOW = {"m**3/s": ("m3/h", 3600.0), "rad/s": ("rpm", _RPM), "Pa": ("bar", 1e-5)}
#: Largest |fastest eigenvalue| x integration step allowed [-]. RK4 is stable
#: for real eigenvalues down to -2.785 and imaginary ones up to 2.83 (Hairer &
#: Wanner, *Solving ODEs II*, 2nd ed., §IV.2, Fig. 2.1, from memory). At 2.0
#: the fastest modes (motor slip, drive and sensor lags: a few ms) stay stable
#: but decay at 0.33 per step instead of exp(-2) = 0.14; they settle within a
#: few steps either way, and the slow modes the loop sees keep fourth-order
#: accuracy (the benchmark measures it against solve_ivp). Our choice, no source.
STEP_TIMES_FASTEST_RATE = 2.0
#: Points of the tabulated system curve (friction head against flow). [-]
SYSTEM_CURVE_POINTS = 4097


# -- the plant on plain floats ------------------------------------------------------------


class _FastPlant:
    """The drive train's state equations on plain floats, with the drive's limits.

    Every stage law is read from the stage's own methods on plain floats
    once: the motor torque is affine in (supply, speed) and the machine torque
    and pump head are quadratic in (speed, flow), so their coefficients are
    probed from :meth:`DriveTrain.motor_torque`, :meth:`~DriveTrain.machine_torque`
    and :meth:`~DriveTrain.pump_head`; the pipe line's friction head is
    tabulated from :meth:`~DriveTrain.system_head` on a uniform grid and
    interpolated linearly. For a curve with a bounded second derivative that
    error is at most dQ**2 max|h''| / 8, reached near the mid-points of the
    grid (de Boor, *A Practical Guide to Splines*, rev. ed., 2001, Ch. II,
    from memory), so it is measured there and kept in :attr:`curve_error`. The shaft and column balances
    are those of :meth:`DriveTrain.derivatives`; :meth:`check` compares the
    two at random states and refuses a mismatch.
    """

    def __init__(self, train: DriveTrain, torque_limit: bool) -> None:
        self.train = train
        names = train.state_names
        self.n = len(names)
        find = {name: i for i, name in enumerate(names)}
        self.i_f = find.get("drive frequency")
        self.i_i = find.get("armature current")
        self.i_w = find["motor speed"]
        self.i_wl = find.get("machine speed")
        self.i_th = find.get("shaft twist")
        self.i_q = find.get("flow")
        self.i_y = next((i for i, nm in enumerate(names) if nm.startswith("measured")), None)
        d, m, t = train.drive, train.motor, train.transmission
        self.scale = float(d.reference_scale) if d is not None else 1.0
        self.fmin = float(d.min_frequency) if d is not None else -math.inf
        self.fmax = float(d.max_frequency) if d is not None else math.inf
        self.tau_d = float(d.time_constant) if d is not None else 0.0
        self.rate = float(d.ramp_rate) if d is not None else math.inf
        self.dc = isinstance(m, DCMotor)
        self.motor_b, self.motor_j = float(m.b), float(m.J)
        if self.i_i is not None:
            self.R, self.L, self.k = float(m.R), float(m.L), float(m.k)  # type: ignore[union-attr]
            self.kt = float(train.motor_torque(0.0, 0.0, 1.0))
        else:  # affine: T = t0 + ts supply + tw speed
            t0 = float(train.motor_torque(0.0, 0.0))
            self.t0, self.ts, self.tw = (
                t0,
                float(train.motor_torque(1.0, 0.0)) - t0,
                float(train.motor_torque(0.0, 1.0)) - t0,
            )
        self.tlim = math.inf
        self.vlim = math.inf
        if torque_limit and isinstance(m, InductionMotor):
            self.tlim = float(m.torque_limit * m.rated_torque)
        if torque_limit and isinstance(m, DCMotor) and m.max_current is not None:
            self.vlim = float(m.R * m.max_current)
            self.tlim = float(m.k * m.max_current)
        self.ratio = float(t.ratio) if t is not None else 1.0
        self.fwd = float(train.torque_at_motor(1.0, 1.0))
        self.back = -float(train.torque_at_motor(-1.0, 1.0))
        if t is not None and t.compliant:
            self.K, self.c_tw, self.j_l = float(t.stiffness), float(t.damping), float(train.machine.J)
        else:
            reflected = t.reflected_inertia(train.machine.J) if t is not None else train.machine.J
            self.j_rigid = float(m.J + reflected)
        # speed scale to probe over: the pump curve's speed, a fan's rated speed, else 100 rad/s
        w0 = float(getattr(train.machine, "speed", 0.0) or getattr(train.machine, "rated_speed", 0.0) or 100.0)
        q0 = float(train.machine.curve.max_flow) if train.is_pump else 0.0  # type: ignore[union-attr]
        self.load = _quadratic(train.machine_torque, w0, q0, "machine torque")
        self.density = float(train.fluid.density)
        self.output = train.output
        if train.is_pump:
            self.head = _quadratic(train.pump_head, w0, q0, "pump head")
            self.column = float(line_inertance_head(train.pipes))
            self.static = float(train.static_head)
            self._tabulate(2.0 * q0)
        if self.i_y is not None:
            self.tau_s = float(train.sensor.time_constant)  # type: ignore[union-attr]
        self._supply_band()
        self.rates = self._build_rates()

    def _tabulate(self, q_max: float) -> None:
        grid = np.linspace(0.0, q_max, SYSTEM_CURVE_POINTS)
        friction = np.asarray(self.train.system_head(grid), dtype=float) - self.static
        mids = 0.5 * (grid[1:] + grid[:-1])
        exact = np.asarray(self.train.system_head(mids), dtype=float) - self.static
        self.curve_error = float(np.max(np.abs(0.5 * (friction[1:] + friction[:-1]) - exact)))
        self.table = friction.tolist()
        self.dq = float(grid[1])
        self.q_top = q_max

    def friction(self, flow: float) -> float:
        """Friction head of the line at ``flow`` >= 0 [m**3/s] from the model, beyond the table. [m]"""
        return float(self.train.system_head(flow)) - self.static

    def _supply_band(self) -> None:
        """Supply (Hz or V) the drive lets through at motor speed w: lo0 + slope w .. hi0 + slope w."""
        self.lo0, self.hi0, self.slope = -math.inf, math.inf, 0.0
        if self.dc:
            self.slope = self.k if self.i_i is not None else -self.tw / self.ts
            self.lo0, self.hi0 = -self.vlim, self.vlim
        elif self.tlim < math.inf:
            self.slope = -self.tw / self.ts
            self.lo0, self.hi0 = (-self.tlim - self.t0) / self.ts, (self.tlim - self.t0) / self.ts

    def demand(self, u: float) -> float:
        """The supply the drive heads for at input ``u`` (reference clipped to its range)."""
        return min(max(u * self.scale, self.fmin), self.fmax)

    def applied(self, x: np.ndarray, demand: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Supply (Hz or V) and air-gap torque [N*m] over a state history ``x`` (rows), limits applied."""
        w = x[:, self.i_w]
        supply = np.clip(demand, self.lo0 + self.slope * w, self.hi0 + self.slope * w)
        if self.i_f is not None:
            supply = x[:, self.i_f]
        torque = self.kt * x[:, self.i_i] if self.i_i is not None else self.t0 + self.ts * supply + self.tw * w
        return supply, np.clip(torque, -self.tlim, self.tlim)

    def _build_rates(self) -> Any:
        """dx/dt(x, demand) on plain floats, the drive's torque/current limit applied (a closure, for speed)."""
        n, i_f, i_i, i_w, i_wl, i_th, i_q, i_y = (
            self.n, self.i_f, self.i_i, self.i_w, self.i_wl, self.i_th, self.i_q, self.i_y
        )  # fmt: skip
        lo0, hi0, slope, tlim, tau_d, rate = self.lo0, self.hi0, self.slope, self.tlim, self.tau_d, self.rate
        kt = self.kt if i_i is not None else 0.0
        t0, ts, tw = (0.0, 0.0, 0.0) if i_i is not None else (self.t0, self.ts, self.tw)
        R, L, k = (self.R, self.L, self.k) if i_i is not None else (0.0, 1.0, 0.0)
        ratio, fwd, back, bm = self.ratio, self.fwd, self.back, self.motor_b
        l0, l1, l2, l3, l4, l5 = self.load
        compliant = i_th is not None
        wl_i, th_i = (i_wl or 0), (i_th or 0)  # plain ints for the compliant branches
        K, c_tw, j_l, j_m = (self.K, self.c_tw, self.j_l, self.motor_j) if compliant else (0.0, 0.0, 1.0, 1.0)
        j_rigid = 1.0 if compliant else self.j_rigid
        measured, friction = self.measured, self.friction
        h0, h1, h2, h3, h4, h5 = self.head if i_q is not None else (0.0,) * 6
        static, column = (self.static, self.column) if i_q is not None else (0.0, 1.0)
        table, q_top = (self.table, self.q_top) if i_q is not None else ([], 0.0)
        per_dq = 1.0 / self.dq if i_q is not None else 0.0
        tau_s = self.tau_s if i_y is not None else 1.0
        pipe_only = self.output == "flow"

        def rates(x: list[float], demand: float) -> list[float]:
            dx = [0.0] * n
            w = x[i_w]
            lo, hi = lo0 + slope * w, hi0 + slope * w
            target = lo if demand < lo else (hi if demand > hi else demand)
            supply = target
            if i_f is not None:
                supply = x[i_f]
                df = (target - supply) / tau_d
                dx[i_f] = -rate if df < -rate else (rate if df > rate else df)
            if i_i is not None:
                torque = kt * x[i_i]
                dx[i_i] = (supply - R * x[i_i] - k * w) / L
            else:
                torque = t0 + ts * supply + tw * w
            torque = -tlim if torque < -tlim else (tlim if torque > tlim else torque)
            wl = x[wl_i] if compliant else w / ratio
            q = x[i_q] if i_q is not None else 0.0
            load = l0 + l1 * wl + l2 * q + l3 * wl * wl + l4 * wl * q + l5 * q * q
            if compliant:
                shaft = K * x[th_i] + c_tw * (w / ratio - wl)
                dx[i_w] = (torque - bm * w - shaft * (fwd if shaft * wl >= 0 else back)) / j_m
                dx[wl_i] = (shaft - load) / j_l
                dx[th_i] = w / ratio - wl
            else:
                dx[i_w] = (torque - bm * w - load * (fwd if load * wl >= 0 else back)) / j_rigid
            if i_q is not None:
                head = h0 + h1 * wl + h2 * q + h3 * wl * wl + h4 * wl * q + h5 * q * q
                a = -q if q < 0 else q
                if a < q_top:
                    j = a * per_dq
                    i = int(j)
                    f = table[i] + (j - i) * (table[i + 1] - table[i])
                else:
                    f = friction(a)
                dx[i_q] = (head - static - (-f if q < 0 else f)) / column
            if i_y is not None:
                dx[i_y] = ((q if pipe_only else measured(x)) - x[i_y]) / tau_s
            return dx

        return rates

    def _head(self, w: float, q: float) -> float:
        c = self.head
        return c[0] + c[1] * w + c[2] * q + c[3] * w * w + c[4] * w * q + c[5] * q * q

    def measured(self, x: list[float]) -> float:
        """The true value of the measured quantity (before the sensor), SI."""
        w = x[self.i_w]
        if self.output == "motor_speed":
            return w
        wl = x[self.i_wl] if self.i_wl is not None else w / self.ratio
        if self.output == "machine_speed":
            return wl
        q = x[self.i_q]  # type: ignore[index]
        if self.output == "flow":
            return q
        return self.density * STANDARD_GRAVITY * self._head(wl, q)

    def reading(self, x: list[float]) -> float:
        """What the sensor reads now (before its dead time), SI."""
        return x[self.i_y] if self.i_y is not None else self.measured(x)

    def check(self, x0: np.ndarray, u0: float, seed: int = 7) -> None:
        """Compare :meth:`rates` with :meth:`DriveTrain.derivatives` at random states near ``x0``; raise on mismatch."""
        rng = np.random.default_rng(seed)
        scale = np.abs(x0) + 1e-3
        for _ in range(12):
            x = x0 + 0.2 * scale * rng.standard_normal(self.n)
            if self.i_q is not None:
                x[self.i_q] = min(abs(x[self.i_q]), 0.9 * self.q_top)
            u = u0 * (1.0 + 0.1 * rng.standard_normal())
            fast = self.rates(x.tolist(), self.demand(u))
            lo, hi = self.lo0 + self.slope * x[self.i_w], self.hi0 + self.slope * x[self.i_w]
            supply = x[self.i_f] if self.i_f is not None else self.demand(u)
            if not (lo < supply < hi and lo < self.demand(u) < hi):
                continue  # the model has no torque limit; compare only inside it
            model = np.asarray(self.train.derivatives(x, u), dtype=float)
            allow = 1e-9 * (np.abs(model) + np.abs(x) + 1.0)
            if self.i_q is not None:
                allow[self.i_q] += 2.0 * self.curve_error / self.column
            if np.any(np.abs(np.asarray(fast) - model) > allow):
                raise RuntimeError(
                    f"the simulation's plant equations disagree with DriveTrain.derivatives for {self.train!r}: "
                    f"{fast} against {model.tolist()}"
                )


def _quadratic(method: Any, w0: float, q0: float, what: str) -> tuple[float, ...]:
    """Coefficients of c0 + c1 w + c2 q + c3 w**2 + c4 w q + c5 q**2 probed from ``method(w, q)``; checked exact."""
    ws = np.array([0.0, 1.0, 0.0, 0.5, 0.5, 0.0, 1.0, 0.25, 0.8, 0.3]) * 1.2 * w0
    qs = np.array([0.0, 0.0, 1.0, 0.5, 0.0, 0.5, 1.0, 0.9, 0.2, 0.6]) * 1.2 * q0
    basis = np.stack([np.ones_like(ws), ws, qs, ws * ws, ws * qs, qs * qs], axis=1)
    values = np.asarray(method(ws, qs), dtype=float)
    coef, *_ = np.linalg.lstsq(basis, values, rcond=None)
    if np.max(np.abs(basis @ coef - values)) > 1e-9 * (np.max(np.abs(values)) + 1.0):
        raise RuntimeError(f"the {what} is not quadratic in speed and flow; the fast simulation does not cover it")
    return tuple(float(c) for c in coef)


def _advance(plant: _FastPlant, x: list[float], demand: float, h: float, substeps: int) -> list[float]:
    """Classical fourth-order Runge-Kutta over one scan, input held (zero-order hold)."""
    f = plant.rates
    hs = h / substeps
    half, sixth = 0.5 * hs, hs / 6.0
    for _ in range(substeps):
        k1 = f(x, demand)
        k2 = f([a + half * b for a, b in zip(x, k1, strict=True)], demand)
        k3 = f([a + half * b for a, b in zip(x, k2, strict=True)], demand)
        k4 = f([a + hs * b for a, b in zip(x, k3, strict=True)], demand)
        x = [a + sixth * (b + 2.0 * (c + d) + e) for a, b, c, d, e in zip(x, k1, k2, k3, k4, strict=True)]
    return x


def _substeps(train: DriveTrain, x: list[float], u: float, h: float) -> int:
    """Substeps per scan so that step x fastest rate of the linearised model stays within the limit."""
    lin = train.linearize(OperatingPoint(train, np.asarray(x, dtype=float), u))
    fastest = float(np.max(np.abs(lin.poles))) if lin.order else 0.0
    return max(1, math.ceil(h * fastest / STEP_TIMES_FASTEST_RATE - 1e-9))


# -- the run ------------------------------------------------------------------------------

#: Scan time used when neither ``scan_time`` nor the controller's ``sample_time``
#: is given. [s] Common practice for flow and speed loops in a plant controller
#: (100 ms), no source.
DEFAULT_SCAN_TIME = 0.1


@dataclasses.dataclass(frozen=True, eq=False)
class SimulationResult:
    """A simulated run: the time series and its summary.

    Attributes
    ----------
    frame : pandas.DataFrame
        One row per scan; units in the column names.
    scenario : Scenario
        What was simulated.
    scan_time : float
        Controller scan time, also the output interval. [s]
    substeps : int
        Runge-Kutta steps per scan (largest over the run). [-]
    curve_error : float
        Largest error of the tabulated system curve (NaN without a pipe line). [m]
    iae : float
        Integral of the absolute control error r - y (y as the controller reads it).
        [SI unit of the measurement x s]
    max_error : float
        Largest absolute control error. [SI unit of the measurement]
    final_error : float
        Control error at the end. [SI unit of the measurement]
    peak_torque : float
        Largest absolute motor torque. [N*m]
    limited_time : float
        Time the controller output spent at a limit. [s]
    measurement_unit : str
        SI unit of the measurement.
    """

    frame: Any
    scenario: Scenario
    scan_time: float
    substeps: int
    curve_error: float
    iae: float
    max_error: float
    final_error: float
    peak_torque: float
    limited_time: float
    measurement_unit: str

    def to_frame(self) -> Any:
        """The time series (pandas DataFrame, units in the column names)."""
        return self.frame

    def table(self) -> list[tuple[str, float, str]]:
        """Summary rows (quantity, value, unit)."""
        show, k = _SHOW.get(self.measurement_unit, (self.measurement_unit, 1.0))
        return [
            ("scan time", self.scan_time, "s"),
            ("Runge-Kutta steps per scan", float(self.substeps), "-"),
            ("system curve table error", self.curve_error, "m"),
            ("integral of absolute error", self.iae * k, f"{show}*s"),
            ("largest error", self.max_error * k, show),
            ("final error", self.final_error * k, show),
            ("peak motor torque", self.peak_torque, "N*m"),
            ("time at an output limit", self.limited_time, "s"),
        ]


def _measurement_spec(train: DriveTrain) -> ParamSpec:
    unit = train.output_unit
    return ParamSpec(unit, OUTPUTS[train.output][2], kind="shaft_speed" if unit == "rad/s" else "plain")


def _start_point(train: DriveTrain, value: float) -> OperatingPoint:
    if train.output == "flow":
        return train.operating_point(flow=value)  # type: ignore[no-any-return]
    if train.output == "machine_speed":
        return train.operating_point(speed=value)  # type: ignore[no-any-return]
    if train.output == "motor_speed":
        ratio = float(train.transmission.ratio) if train.transmission is not None else 1.0
        return train.operating_point(speed=value / ratio)  # type: ignore[no-any-return]
    raise ParameterError("`start`: give the starting OperatingPoint for a pressure loop")


def _input_range(train: DriveTrain) -> tuple[float, float]:
    if train.drive is not None:
        lo, hi = train.drive.reference_range()
        return float(lo), float(hi)
    m = train.motor
    if isinstance(m, DCMotor) and m.max_voltage is not None:
        return -float(m.max_voltage), float(m.max_voltage)
    return -math.inf, math.inf


def _scan_of(t: float, h: float) -> int:
    return max(0, math.ceil(t / h - 1e-9))


def simulate(
    train: DriveTrain,
    controller: Any,
    scenario: Scenario,
    *,
    scan_time: Any = None,
    options: LoopOptions | None = None,
    start: OperatingPoint | None = None,
) -> SimulationResult:
    """Simulate the nonlinear drive train in closed loop (or open loop) through a scenario.

    Parameters
    ----------
    train : DriveTrain
        The plant.
    controller : PID, ControllerSettings or None
        The controller; None runs open loop on the scenario's ``output_steps``.
    scenario : Scenario
        Start, setpoint steps, disturbances, duration.
    scan_time : float, Quantity or str, optional
        Controller scan time. [s] Default the controller's ``sample_time``,
        else :data:`DEFAULT_SCAN_TIME`.
    options : LoopOptions, optional
        Anti-windup, rate limit, setpoint ramp, deadband, minimum output,
        torque limit.
    start : OperatingPoint, optional
        Steady state to start from; default the one at the scenario's setpoint.

    Returns
    -------
    SimulationResult

    Notes
    -----
    Each scan the controller samples the sensor reading delayed by the
    sensor's dead time (a buffer of past samples, interpolated linearly when
    the dead time is not a whole number of scans), computes its output, and
    the output is held for the scan (zero-order hold). Events take effect at
    the first scan at or after their time; a disturbance rebuilds the
    affected stage with :func:`dataclasses.replace` and a new
    :class:`DriveTrain`, and the state carries over.

    The plant is integrated with the classical fourth-order Runge-Kutta
    method (Hairer, Nørsett & Wanner, *Solving ODEs I*, 2nd ed., §II.1) at a
    fixed step: the scan divided into the fewest substeps that keep step x
    |fastest eigenvalue| of the linearised model within
    :data:`STEP_TIMES_FASTEST_RATE` (checked again after each disturbance).
    A fixed step that divides the scan keeps the controller's sampling exact
    and the cost predictable; the models' fast modes (slip, drive lag,
    sensor lag) are milliseconds, so an explicit method needs no more than a
    few substeps of a 10 ms scan. The error against a tight-tolerance
    variable-step solver is compared in ``benchmarks/bench_simulate.py``.

    The plant equations run on plain floats built from the stages' own
    methods and checked against :meth:`DriveTrain.derivatives` at the start
    of each segment (see ``_FastPlant``). The drive's torque limit (induction
    motor: ``torque_limit`` x rated torque) holds the output frequency where
    the motor gives the limit torque, as a drive's current limit does; a DC
    motor's ``max_current`` clamps the armature voltage to ``R i_max``
    beyond the back-emf (an ideal current loop).
    """
    options = options or LoopOptions()
    if not isinstance(scenario, Scenario):
        raise ParameterError(f"`scenario`: got {type(scenario).__name__}, expected a Scenario")
    settings = None if controller is None else ControllerSettings.from_controller(controller)
    if scan_time is None:
        scan_time = settings.sample_time if settings is not None and settings.sample_time else DEFAULT_SCAN_TIME
    h = float(to_si(scan_time, "scan_time", ParamSpec("s", "scan time", minimum=0.0, include_minimum=False)))
    spec = _measurement_spec(train)
    if start is None:
        if scenario.setpoint is None:
            raise ParameterError("`scenario.setpoint`: got None; give the starting value or a `start` point")
        start = _start_point(train, float(to_si(scenario.setpoint, "setpoint", spec)))
    x = [float(v) for v in start.x]
    u = float(start.u_si)
    plant = _FastPlant(train, options.torque_limit)
    plant.check(np.asarray(x), u)
    y0 = plant.reading(x)
    r_target = float(to_si(scenario.setpoint, "setpoint", spec)) if scenario.setpoint is not None else y0
    limits = settings.output_limits if settings is not None and settings.output_limits else _input_range(train)
    pid = DiscretePID(settings or ControllerSettings(kp=0.0), options, h, tuple(limits))  # type: ignore[arg-type]
    pid.start(r_target, y0, u)
    n_scans = round(scenario.duration / h)
    events: dict[int, list[tuple[str, Any]]] = {}
    for t, v in scenario.setpoint_steps:
        events.setdefault(_scan_of(t, h), []).append(("setpoint", float(to_si(v, "setpoint", spec))))
    for t, v in scenario.output_steps:
        events.setdefault(_scan_of(t, h), []).append(("output", float(v)))
    for d in scenario.disturbances:
        events.setdefault(_scan_of(d.time, h), []).append(("disturbance", d))
    delay = train.dead_time / h
    delay = round(delay) if abs(delay - round(delay)) < 1e-9 else delay
    lag, frac = int(delay), delay - int(delay)
    substeps = _substeps(train, x, u, h)
    most_substeps = substeps
    ramp_step = options.setpoint_ramp * h if options.setpoint_ramp is not None else math.inf
    readings: list[float] = []
    rows: list[tuple[list[float], float, float, float, int]] = []
    segments = [plant]
    r, manual, update = r_target, u, pid.update
    for k in range(n_scans + 1):
        if k in events:
            for kind, value in events[k]:
                if kind == "setpoint":
                    r_target = value
                elif kind == "output":
                    manual = value
                else:
                    plant = _FastPlant(value.apply(plant.train), options.torque_limit)
                    plant.check(np.asarray(x), u)
                    segments.append(plant)
                    substeps = _substeps(plant.train, x, u, h)
                    most_substeps = max(most_substeps, substeps)
        readings.append(plant.reading(x))
        j = k - lag if k > lag else 0
        y = readings[j] if frac == 0.0 else (1 - frac) * readings[j] + frac * readings[j - 1 if j else 0]
        if r != r_target:
            r += min(max(r_target - r, -ramp_step), ramp_step)
        u = update(r, y) if settings is not None else pid.hold(manual)
        rows.append((x, u, r, y, len(segments) - 1))
        if k < n_scans:
            x = _advance(plant, x, plant.demand(u), h, substeps)
    return _result(segments, scenario, h, most_substeps, rows, pid)


def _result(
    segments: list[_FastPlant],
    scenario: Scenario,
    h: float,
    substeps: int,
    rows: list[tuple[list[float], float, float, float, int]],
    pid: DiscretePID,
) -> SimulationResult:
    """Assemble the table (stage methods on the state history) and the summary."""
    import pandas as pd

    train = segments[0].train
    xs, us, rs, ys, segs = zip(*rows, strict=True)
    x = np.array(xs)
    u, r, y, seg = np.array(us), np.array(rs), np.array(ys), np.array(segs)
    supply, torque = np.empty(len(u)), np.empty(len(u))
    for s, plant in enumerate(segments):
        sel = seg == s
        demand = np.clip(u[sel] * plant.scale, plant.fmin, plant.fmax)
        supply[sel], torque[sel] = plant.applied(x[sel], demand)
    first = segments[0]
    w = x[:, first.i_w]
    wl = x[:, first.i_wl] if first.i_wl is not None else w / first.ratio
    show, k = _SHOW.get(train.output_unit, (train.output_unit, 1.0))
    quantity = OUTPUTS[train.output][2]
    cols: dict[str, Any] = {"time [s]": np.arange(len(u)) * h, f"setpoint [{show}]": r * k}
    if train.is_pump:
        cols["flow [m3/h]"] = x[:, first.i_q] * 3600.0
    cols[f"measured {quantity} [{show}]"] = y * k
    cols["motor speed [rpm]"] = w * _RPM
    cols["machine speed [rpm]"] = wl * _RPM
    cols["motor torque [N*m]"] = torque
    m = train.motor
    if isinstance(m, DCMotor):
        current = x[:, first.i_i] if first.i_i is not None else m.current(supply, w)
    else:
        current = np.asarray(m.current(torque), dtype=float) * np.ones_like(torque)
    if not np.all(np.isnan(current)):
        cols["motor current [A]"] = current
    cols["shaft power [kW]"] = (torque - m.b * w) * w * 1e-3
    cols[f"controller output [{train.input_unit}]"] = u
    cols["armature voltage [V]" if isinstance(m, DCMotor) else "drive frequency [Hz]"] = supply
    if train.is_pump:
        head = np.empty(len(u))
        for s, plant in enumerate(segments):
            sel = seg == s
            head[sel] = plant.train.pump_head(wl[sel], x[sel, first.i_q])
        cols["pump head [m]"] = head
    frame = pd.DataFrame(cols)
    error = r - y
    limited = (np.abs(u - pid.lo) < 1e-12 * (1 + abs(pid.lo))) | (np.abs(u - pid.hi) < 1e-12 * (1 + abs(pid.hi)))
    errors = [p.curve_error for p in segments if p.train.is_pump]
    return SimulationResult(
        frame=frame,
        scenario=scenario,
        scan_time=h,
        substeps=substeps,
        curve_error=max(errors) if errors else math.nan,
        iae=float(np.sum(np.abs(error[:-1])) * h),
        max_error=float(np.max(np.abs(error))),
        final_error=float(error[-1]),
        peak_torque=float(np.max(np.abs(torque))),
        limited_time=float(np.sum(limited[:-1]) * h),
        measurement_unit=train.output_unit,
    )
