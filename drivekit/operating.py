"""Operating points: the steady state of a drive train, how it is found, and what it means."""

from __future__ import annotations

import dataclasses
import math
from typing import TYPE_CHECKING, Any

import numpy as np

from .constants import STANDARD_GRAVITY
from .motors import DCMotor, InductionMotor
from .pumps import CentrifugalPump
from .units import ParameterError, ParamSpec, pretty_unit, to_si, ureg

if TYPE_CHECKING:
    from .drivetrain import DriveTrain

__all__ = ["OperatingPoint", "OperatingPointError", "solve_operating_point"]

_RPM = 60.0 / (2.0 * math.pi)
#: The pump's preferred operating region, as fractions of best-efficiency
#: flow at the same speed. ANSI/HI 9.6.3 (Hydraulic Institute, allowable
#: operating region), from memory: 70-120 %.
PREFERRED_REGION = (0.70, 1.20)


class OperatingPointError(ValueError):
    """No steady state exists for what was asked; the message says which limit and by how much."""


@dataclasses.dataclass(frozen=True, eq=False)
class OperatingPoint:
    """A steady state of a drive train and the input that holds it.

    Attributes
    ----------
    train : DriveTrain
        The model it belongs to.
    x : numpy.ndarray
        States in SI, named by ``train.state_names``.
    u_si : float
        The input in ``train.input_unit`` as a float.
    cautions : tuple of str
        Plain-words warnings about this point (minimum flow, overload, ...).
    """

    train: DriveTrain
    x: np.ndarray
    u_si: float
    cautions: tuple[str, ...] = ()

    @property
    def u(self) -> Any:
        """The input that holds this point, as a pint Quantity (V, Hz or %)."""
        unit = self.train.input_unit
        return ureg.Quantity(self.u_si, "percent" if unit == "%" else unit)

    @property
    def states(self) -> dict[str, Any]:
        """Each state by name, as a pint Quantity in SI."""
        return {
            name: ureg.Quantity(float(v), unit)
            for name, unit, v in zip(self.train.state_names, self.train.state_units, self.x, strict=True)
        }

    # -- the physical quantities at this point ------------------------------------------
    @property
    def supply(self) -> float:
        """Motor supply: stator frequency [Hz] or armature voltage [V]."""
        return float(self.train.supply(self.u_si))

    @property
    def motor_speed(self) -> float:
        """[rad/s]"""
        return float(self.x[self.train._layout.motor_speed])

    @property
    def machine_speed(self) -> float:
        """[rad/s]"""
        return self.motor_speed / float(self.train._ratio)

    @property
    def flow(self) -> float:
        """Flow; 0 for a machine that is not a pump. [m**3/s]"""
        i = self.train._layout.flow
        return float(self.x[i]) if i is not None else 0.0

    @property
    def machine_torque(self) -> float:
        """Torque the machine takes. [N*m]"""
        return float(self.train.machine_torque(self.machine_speed, self.flow))

    @property
    def motor_torque(self) -> float:
        """Motor air-gap torque. [N*m]"""
        return float(self.train.motor_torque(self.supply, self.motor_speed))

    @property
    def motor_current(self) -> float:
        """Armature current (DC), or the stator current estimate (induction; NaN without nameplate data). [A]"""
        m = self.train.motor
        if isinstance(m, DCMotor):
            return float(m.current(self.supply, self.motor_speed))
        return float(m.current(self.motor_torque))

    @property
    def head(self) -> float:
        """Pump head; NaN without a pump. [m]"""
        if not self.train.is_pump:
            return math.nan
        return float(self.train.pump_head(self.machine_speed, self.flow))

    def values(self) -> dict[str, tuple[float, str]]:
        """The quantities an engineer checks at this point, in SI: name -> (value, SI unit)."""
        t = self.train
        out: dict[str, tuple[float, str]] = {
            "input": (self.u_si, t.input_unit),
            "motor speed": (self.motor_speed, "rad/s"),
            "machine speed": (self.machine_speed, "rad/s"),
            "motor torque": (self.motor_torque, "N*m"),
            "motor current": (self.motor_current, "A"),
            "motor shaft power": (self.motor_torque * self.motor_speed - t.motor.b * self.motor_speed**2, "W"),
            "machine torque": (self.machine_torque, "N*m"),
            "machine shaft power": (self.machine_torque * self.machine_speed, "W"),
        }
        if isinstance(t.motor, InductionMotor) or t.drive is not None:
            out["stator frequency"] = (self.supply, "Hz")
        if t.is_pump:
            pump: CentrifugalPump = t.machine  # type: ignore[assignment]
            q, w = self.flow, self.machine_speed
            out.update(
                {
                    "flow": (q, "m**3/s"),
                    "pump head": (self.head, "m"),
                    "pump pressure": (t.fluid.density * STANDARD_GRAVITY * self.head, "Pa"),
                    "pump efficiency": (float(pump.efficiency(w, q)), ""),
                    "hydraulic power": (t.fluid.density * STANDARD_GRAVITY * q * self.head, "W"),
                    "static head": (t.static_head, "m"),
                    "friction head": (float(t.system_head(q)) - t.static_head, "m"),
                    "pump minimum flow at this speed": (float(pump.min_flow(w)), "m**3/s"),
                }
            )
            for k, p in enumerate(t.pipes):
                label = p.name if p.name != "pipe" else f"pipe {k + 1}"
                out[f"{label} velocity"] = (float(p.velocity(q)), "m/s")
        return out

    def table(self) -> list[tuple[str, float, str]]:
        """Rows (quantity, value, unit) in the units the trade uses (rpm, m**3/h, kW, bar, %), units in pint syntax."""
        trade = {"rad/s": ("rpm", _RPM), "m**3/s": ("m**3/h", 3600.0), "W": ("kW", 1e-3), "Pa": ("bar", 1e-5)}
        rows = []
        for name, (value, unit) in self.values().items():
            if name == "pump efficiency":
                rows.append((name, value * 100.0, "%"))
                continue
            show, scale = trade.get(unit, (unit, 1.0))
            rows.append((name, value * scale, show))
        return rows

    def to_frame(self) -> Any:
        """:meth:`table` as a pandas DataFrame (pandas must be installed)."""
        import pandas as pd

        rows = [(name, value, pretty_unit(unit)) for name, value, unit in self.table()]
        return pd.DataFrame(rows, columns=["quantity", "value", "unit"]).set_index("quantity")

    def power_balance(self) -> dict[str, float]:
        """Where the input power goes at this point, each in [W].

        Returns
        -------
        dict
            ``input`` (electrical for a DC motor; air-gap power for an
            induction motor, which leaves out its stator and core losses),
            the losses of each stage, ``useful`` (hydraulic power for a pump,
            shaft power otherwise) and ``residual`` = input - losses - useful,
            which is zero to rounding when the model is consistent.
        """
        t = self.train
        m = t.motor
        wm, wl = self.motor_speed, self.machine_speed
        torque = self.motor_torque
        out: dict[str, float] = {}
        if isinstance(m, DCMotor):
            i = self.motor_current
            out["input"] = self.supply * i
            out["armature copper loss"] = m.R * i * i
        else:
            ws = float(m.synchronous_speed(self.supply))
            out["input"] = torque * ws
            out["rotor slip loss"] = torque * (ws - wm)
        out["motor friction loss"] = m.b * wm * wm
        shaft_in = torque * wm - m.b * wm * wm
        machine_power = self.machine_torque * wl
        out["transmission loss"] = shaft_in - machine_power
        if t.is_pump:
            pump: CentrifugalPump = t.machine  # type: ignore[assignment]
            hydraulic = t.fluid.density * STANDARD_GRAVITY * self.flow * self.head
            out["pump bearing loss"] = pump.b * wl * wl
            out["pump hydraulic loss"] = machine_power - pump.b * wl * wl - hydraulic
            friction = (
                t.fluid.density * STANDARD_GRAVITY * self.flow * (float(t.system_head(self.flow)) - t.static_head)
            )
            out["pipe friction loss"] = friction
            out["useful"] = hydraulic - friction
        else:
            out["useful"] = machine_power
        losses = sum(v for k, v in out.items() if k not in ("input", "useful"))
        out["residual"] = out["input"] - losses - out["useful"]
        return out


# -- solving ----------------------------------------------------------------------------


def _rpm(w: float) -> str:
    return f"{w * _RPM:.5g} rpm"


def _m3h(q: float) -> str:
    return f"{q * 3600.0:.5g} m**3/h"


def _input_limits(train: DriveTrain) -> tuple[float, float]:
    if train.drive is not None:
        lo, hi = train.drive.reference_range()
        return float(lo), float(hi)
    m = train.motor
    if isinstance(m, DCMotor) and m.max_voltage is not None:
        return -math.inf, float(m.max_voltage)
    return -math.inf, math.inf


def _steady_residuals(train: DriveTrain, supply: Any, w_l: Any, q: Any) -> tuple[Any, Any]:
    """Torque balance at the motor shaft [N*m] and head balance of the line [m]."""
    ratio = train._ratio
    w_m = w_l * ratio
    load = train.torque_at_motor(train.machine_torque(w_l, q), w_l)
    r1 = train.motor_torque(supply, w_m) - train.motor.b * w_m - load
    if not train.is_pump:
        return r1, 0.0 * r1
    r2 = train.pump_head(w_l, q) - train.system_head(q)
    return r1, r2


def _no_load_machine_speed(train: DriveTrain, supply: float) -> float:
    m = train.motor
    w_m = m.no_load_speed(supply) if isinstance(m, DCMotor) else m.synchronous_speed(supply)
    return float(w_m) / float(train._ratio)


def _flow_at_speed(train: DriveTrain, w_l: float) -> float:
    """Flow where pump and system heads balance at a machine speed (head balance is monotone in flow)."""
    if float(train.pump_head(w_l, 0.0)) <= train.static_head:
        return 0.0
    hi = float(train.machine.curve_end_flow(w_l)) * 2.0 + 1e-9  # type: ignore[union-attr]
    while float(train.pump_head(w_l, hi) - train.system_head(hi)) > 0:
        hi *= 2.0
    lo = 0.0
    q = 0.5 * hi
    for _ in range(100):  # safeguarded Newton (falls back to bisection)
        r = float(train.pump_head(w_l, q) - train.system_head(q))
        if r > 0:
            lo = q
        else:
            hi = q
        h = 1e-7 * (q + 1e-4)
        dr = float(train.pump_head(w_l, q + h) - train.system_head(q + h)) - r
        step = -r * h / dr if dr != 0 else math.nan
        qn = q + step
        if not (lo < qn < hi) or not math.isfinite(qn):
            qn = 0.5 * (lo + hi)
        if abs(qn - q) <= 1e-13 * max(q, 1e-6):
            return qn
        q = qn
    return q


def _solve_for_input(train: DriveTrain, u: float) -> tuple[float, float]:
    """Machine speed and flow for a given input (Newton on the 2 balances, bracketed fallback)."""
    supply = float(train.supply(u))
    w_hi = _no_load_machine_speed(train, supply)
    if w_hi <= 0:
        return 0.0, 0.0
    if not train.is_pump:
        stall = float(_steady_residuals(train, supply, 0.0, 0.0)[0])
        if stall <= 0:
            need = float(train.torque_at_motor(train.machine_torque(0.0, 0.0), 1.0))
            raise OperatingPointError(
                f"`u`: at {u:g} {train.input_unit} the motor gives {need + stall:.4g} N*m at standstill, "
                f"{-stall:.4g} N*m short of the {need:.4g} N*m the machine needs to turn: it stalls"
            )
        lo, hi = 0.0, w_hi
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            if float(_steady_residuals(train, supply, mid, 0.0)[0]) > 0:
                lo = mid
            else:
                hi = mid
            if hi - lo < 1e-13 * w_hi:
                break
        return 0.5 * (lo + hi), 0.0
    w = 0.97 * w_hi
    q = _flow_at_speed(train, w)
    tscale = max(abs(float(train.machine_torque(w, q))), 1e-6)
    hscale = max(float(train.pump_head(w, 0.0)), 1e-6)
    for _ in range(30):
        hw, hq = 1e-7 * (w + 1.0), 1e-7 * (q + 1e-3)
        ws = np.array([w, w + hw, w])
        qs = np.array([q, q, q + hq])
        r1, r2 = _steady_residuals(train, supply, ws, qs)
        jac = np.array([[(r1[1] - r1[0]) / hw, (r1[2] - r1[0]) / hq], [(r2[1] - r2[0]) / hw, (r2[2] - r2[0]) / hq]])
        if abs(r1[0]) < 1e-11 * tscale and abs(r2[0]) < 1e-11 * hscale:
            return w, q
        try:
            dw, dq = np.linalg.solve(jac, [-r1[0], -r2[0]])
        except np.linalg.LinAlgError:
            break
        w, q = w + dw, max(q + dq, 0.0)
        if not (0 < w < 1.5 * w_hi):
            break
    # bracketed fallback: torque balance is monotone in speed along the head balance
    lo, hi = 0.0, w_hi
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if float(_steady_residuals(train, supply, mid, _flow_at_speed(train, mid))[0]) > 0:
            lo = mid
        else:
            hi = mid
        if hi - lo < 1e-12 * w_hi:
            break
    w = 0.5 * (lo + hi)
    return w, _flow_at_speed(train, w)


def _supply_for(train: DriveTrain, w_l: float, q: float) -> float:
    """Steady motor supply (Hz or V) that holds machine speed w_l and flow q."""
    w_m = w_l * float(train._ratio)
    torque = float(train.motor.b * w_m + train.torque_at_motor(train.machine_torque(w_l, q), w_l))
    m = train.motor
    if isinstance(m, DCMotor):
        return float(m.voltage_for(torque, w_m))
    return float(m.frequency_for(torque, w_m))


def _state_vector(train: DriveTrain, supply: float, w_l: float, q: float) -> np.ndarray:
    lay = train._layout
    x = np.zeros(len(lay.names))
    w_m = w_l * float(train._ratio)
    if lay.drive is not None:
        x[lay.drive] = supply
    if lay.current is not None:
        x[lay.current] = float(train.motor.current(supply, w_m))  # type: ignore[union-attr,call-arg]
    x[lay.motor_speed] = w_m
    if lay.machine_speed is not None:
        x[lay.machine_speed] = w_l
    if lay.twist is not None:
        x[lay.twist] = float(train.machine_torque(w_l, q)) / float(train.transmission.stiffness)  # type: ignore[union-attr]
    if lay.flow is not None:
        x[lay.flow] = q
    if lay.sensor is not None:
        x[lay.sensor] = float(train.measured(x))
    return x


def solve_operating_point(train: DriveTrain, *, u: Any = None, flow: Any = None, speed: Any = None) -> OperatingPoint:
    """Find the steady state for an input, a flow or a machine speed (see :meth:`DriveTrain.operating_point`)."""
    given = [k for k, v in (("u", u), ("flow", flow), ("speed", speed)) if v is not None]
    if len(given) != 1:
        raise ParameterError(f"operating_point: got {given or 'nothing'}; expected exactly one of u, flow or speed")
    lo, hi = _input_limits(train)
    if u is not None:
        unit = train.input_unit
        spec = ParamSpec(
            "percent" if unit == "%" else unit, train.input_name, kind="frequency" if unit == "Hz" else "plain"
        )
        u_val = float(to_si(u, "u", spec))
        if not lo - 1e-9 <= u_val <= hi + 1e-9:
            raise OperatingPointError(
                f"`u`: got {u_val:g} {unit}, outside the range the {train.input_name} takes, {lo:g} to {hi:g} {unit}"
            )
        w_l, q = _solve_for_input(train, u_val)
        if train.is_pump:
            _check_forward_flow(train, u_val, w_l, q)
    elif flow is not None:
        if not train.is_pump:
            raise ParameterError("`flow`: a flow target needs a CentrifugalPump in the train; give `speed` or `u`")
        q = float(to_si(flow, "flow", ParamSpec("m**3/s", "flow", minimum=0.0, include_minimum=False)))
        need = float(train.system_head(q))
        r = float(train.machine.speed_ratio_for(q, need))  # type: ignore[union-attr]
        if not math.isfinite(r) or r <= 0:
            raise OperatingPointError(f"`flow`: no pump speed gives {_m3h(q)} against the system's {need:.4g} m")
        w_l = r * float(train.machine.speed)  # type: ignore[union-attr]
        u_val = _input_for(train, w_l, q)
    else:
        w_l = float(
            to_si(
                speed,
                "speed",
                ParamSpec("rad/s", "machine speed", minimum=0.0, include_minimum=False, kind="shaft_speed"),
            )
        )
        q = _flow_at_speed(train, w_l) if train.is_pump else 0.0
        if train.is_pump and q <= 0:
            raise OperatingPointError(
                f"`speed`: at {_rpm(w_l)} the pump's shut-off head {float(train.pump_head(w_l, 0.0)):.4g} m does not "
                f"reach the static head {train.static_head:.4g} m, so there is no forward flow; "
                f"it needs at least {_rpm(_min_speed_for_static(train))}"
            )
        u_val = _input_for(train, w_l, q)
    supply = float(train.supply(u_val))
    _check_machine_limits(train, supply, w_l, q)
    x = _state_vector(train, supply, w_l, q)
    return OperatingPoint(train, x, u_val, tuple(_cautions(train, supply, w_l, q)))


def _min_speed_for_static(train: DriveTrain) -> float:
    a0 = float(train.machine.curve.head_coefficients[0])  # type: ignore[union-attr]
    return math.sqrt(max(train.static_head, 0.0) / a0) * float(train.machine.speed)  # type: ignore[union-attr]


def _check_forward_flow(train: DriveTrain, u: float, w_l: float, q: float) -> None:
    if q > 0:
        return
    shutoff = float(train.pump_head(w_l, 0.0))
    raise OperatingPointError(
        f"`u`: at {u:g} {train.input_unit} the pump turns at {_rpm(w_l)} and its shut-off head "
        f"{shutoff:.4g} m is {train.static_head - shutoff:.4g} m short of the static head "
        f"{train.static_head:.4g} m: no forward flow (the pump would run dead-headed); it needs at "
        f"least {_rpm(_min_speed_for_static(train))}"
    )


def _input_for(train: DriveTrain, w_l: float, q: float) -> float:
    supply = _supply_for(train, w_l, q)
    if train.drive is None:
        _lo, hi = _input_limits(train)
        if supply > hi * (1 + 1e-9):
            raise OperatingPointError(
                f"the motor needs {supply:.5g} {train.input_unit} for {_rpm(w_l)} at the machine, "
                f"{supply - hi:.4g} {train.input_unit} above its max_voltage {hi:g} {train.input_unit}"
            )
        return supply
    d = train.drive
    if supply > float(d.max_frequency) * (1 + 1e-9):
        raise OperatingPointError(
            f"the drive must give {supply:.4g} Hz for {_rpm(w_l)} at the machine, "
            f"{supply - float(d.max_frequency):.3g} Hz above its max_frequency {float(d.max_frequency):g} Hz"
        )
    if supply < float(d.min_frequency) * (1 - 1e-9):
        raise OperatingPointError(
            f"the drive must give {supply:.4g} Hz, below its min_frequency {float(d.min_frequency):g} Hz; "
            "it cannot hold this point"
        )
    return float(d.reference_for(supply))


def _check_machine_limits(train: DriveTrain, supply: float, w_l: float, q: float) -> None:
    m = train.motor
    w_m = w_l * float(train._ratio)
    torque = float(train.motor_torque(supply, w_m))
    if isinstance(m, InductionMotor):
        limit = float(m.torque_limit * m.rated_torque)
        if torque > limit * (1 + 1e-9):
            raise OperatingPointError(
                f"the motor must give {torque:.4g} N*m, {torque / float(m.rated_torque):.0%} of its rated torque "
                f"and {torque - limit:.4g} N*m above its torque_limit ({float(m.torque_limit):.0%} of rated)"
            )
    elif m.max_current is not None:
        current = float(m.current(supply, w_m))
        if current > float(m.max_current) * (1 + 1e-9):
            raise OperatingPointError(
                f"the motor must draw {current:.4g} A, {current - float(m.max_current):.4g} A above its "
                f"max_current {float(m.max_current):g} A"
            )
    if train.is_pump:
        pump: CentrifugalPump = train.machine  # type: ignore[assignment]
        end = float(pump.curve_end_flow(w_l))
        if q > end * (1 + 1e-6):
            raise OperatingPointError(
                f"the flow {_m3h(q)} is beyond the pump curve: at {_rpm(w_l)} the maker's curve ends at "
                f"{_m3h(end)} ({(q / end - 1):.1%} beyond); drivekit does not extrapolate a pump curve"
            )
        if pump.max_speed is not None and w_l > float(pump.max_speed) * (1 + 1e-9):
            raise OperatingPointError(
                f"the pump must turn at {_rpm(w_l)}, above its max_speed {_rpm(float(pump.max_speed))}"
            )


def _cautions(train: DriveTrain, supply: float, w_l: float, q: float) -> list[str]:
    notes: list[str] = []
    m = train.motor
    w_m = w_l * float(train._ratio)
    torque = float(train.motor_torque(supply, w_m))
    if isinstance(m, InductionMotor):
        if torque > float(m.rated_torque) * 1.0001:
            notes.append(
                f"The motor runs above its rated torque ({torque / float(m.rated_torque):.0%}); check its "
                "thermal rating and the drive's overload rating for continuous duty."
            )
        if supply > float(m.rated_frequency) * 1.0001:
            notes.append(
                f"The motor runs at {supply:.4g} Hz, above its rated {float(m.rated_frequency):g} Hz: in field "
                "weakening its torque falls, which this model does not include."
            )
    if train.is_pump:
        pump: CentrifugalPump = train.machine  # type: ignore[assignment]
        qmin = float(pump.min_flow(w_l))
        if math.isfinite(qmin) and q < qmin:
            notes.append(
                f"The flow {_m3h(q)} is below the pump's minimum continuous flow {_m3h(qmin)} at this speed: "
                "running there overheats the pump and shortens its life. Provide a minimum-flow "
                "bypass or a low-flow trip as the maker and local practice require."
            )
        elif not math.isfinite(qmin):
            notes.append("The pump's minimum continuous flow is not given; take it from the maker's data.")
        bep = pump.curve.best_efficiency_flow * w_l / float(pump.speed)
        lo, hi = PREFERRED_REGION
        if bep > 0 and not lo * bep <= q <= hi * bep:
            notes.append(
                f"The pump runs at {q / bep:.0%} of its best-efficiency flow at this speed, outside the "
                f"preferred {lo:.0%}-{hi:.0%}: expect more vibration and wear."
            )
    return notes
