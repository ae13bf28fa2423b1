"""The controller as a plant's PLC runs it: a PID executed once per scan with its output block.

:class:`ControllerSettings` holds the settings in ideal form, :class:`LoopOptions`
the output block (limits, rate limit, anti-windup, deadband, minimum output),
and :class:`DiscretePID` executes one scan. Used by :mod:`drivekit.simulate`.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

from .units import ParameterError

__all__ = ["ControllerSettings", "DiscretePID", "LoopOptions"]

# -- controller and loop settings ---------------------------------------------------------


@dataclasses.dataclass(frozen=True)
class ControllerSettings:
    """PID settings in ideal (ISA) form, as the simulation reads them from any controller.

    Parameters
    ----------
    kp : float
        Proportional gain. [output unit per SI unit of the measurement]
    ti : float
        Reset (integral) time; inf for no integral action. [s]
    td : float
        Derivative time. [s]
    derivative_filter : float
        N: the derivative is filtered with time constant td / N. [-]
    setpoint_weights : tuple of float
        (b, c): weights of the setpoint in the proportional and derivative
        actions. [-]
    output_limits : tuple of float, optional
        (low, high) of the controller output; the plant's input range when
        None. [output unit]
    sample_time : float, optional
        Scan time of the controller. [s]

    Notes
    -----
    ``u = kp (b r - y + (1/ti) int(r - y) dt + td d(c r - y)/dt)``
    (Åström & Hägglund, *Advanced PID Control*, ISA 2006, §3.2, from memory).
    Any object with these attribute names (such as :class:`drivekit.PID` in
    ideal form) is read the same way by :func:`simulate`.
    """

    kp: float
    ti: float = math.inf
    td: float = 0.0
    derivative_filter: float = 10.0
    setpoint_weights: tuple[float, float] = (1.0, 0.0)
    output_limits: tuple[float, float] | None = None
    sample_time: float | None = None

    def __post_init__(self) -> None:
        for name, lo in (("kp", None), ("td", 0.0), ("derivative_filter", 0.0)):
            value = getattr(self, name)
            if not isinstance(value, (int, float)) or math.isnan(value) or (lo is not None and value < lo):
                raise ParameterError(f"`{name}`: got {value!r}, expected a number{'' if lo is None else ' >= 0'}")
        if not isinstance(self.ti, (int, float)) or not self.ti > 0:
            raise ParameterError(f"`ti`: got {self.ti!r} s, expected a reset time > 0 s (inf for none)")
        if self.td > 0 and self.derivative_filter <= 0:
            raise ParameterError(f"`derivative_filter`: got {self.derivative_filter!r}, expected N > 0")
        if len(self.setpoint_weights) != 2:
            raise ParameterError(f"`setpoint_weights`: got {self.setpoint_weights!r}, expected (b, c)")
        if self.output_limits is not None and not self.output_limits[0] < self.output_limits[1]:
            raise ParameterError(f"`output_limits`: got {self.output_limits!r}, expected (low, high) with low < high")
        if self.sample_time is not None and not self.sample_time > 0:
            raise ParameterError(f"`sample_time`: got {self.sample_time!r} s, expected a scan time > 0 s")

    @classmethod
    def from_controller(cls, controller: Any) -> ControllerSettings:
        """Read the settings of a controller object (ideal form, or converted to it with ``to_form``).

        Parameters
        ----------
        controller : object
            Has ``kp``, ``ti``, ``td``, ``derivative_filter``, ``setpoint_weights``,
            ``output_limits`` and ``sample_time``.

        Returns
        -------
        ControllerSettings
        """
        if isinstance(controller, cls):
            return controller
        if getattr(controller, "form", "ideal") != "ideal":
            controller = controller.to_form("ideal")
        try:
            return cls(
                kp=float(controller.kp),
                ti=float(controller.ti),
                td=float(controller.td),
                derivative_filter=float(controller.derivative_filter),
                setpoint_weights=tuple(float(w) for w in controller.setpoint_weights),  # type: ignore[arg-type]
                output_limits=None if controller.output_limits is None else tuple(controller.output_limits),
                sample_time=None if controller.sample_time is None else float(controller.sample_time),
            )
        except AttributeError as exc:
            raise ParameterError(f"`controller`: {exc}; expected a PID or ControllerSettings") from None


@dataclasses.dataclass(frozen=True)
class LoopOptions:
    """How the controller output block behaves: anti-windup, rate limit, setpoint ramp, deadband.

    Parameters
    ----------
    anti_windup : str
        ``"back-calculation"`` (the integral tracks the limited output with
        time constant ``tracking_time``), ``"clamping"`` (conditional
        integration: the integral stops while the output is limited and the
        error would drive it further) or ``"none"``.
    tracking_time : float, optional
        Tracking time constant Tt of back-calculation. [s] Default
        sqrt(ti td) for PID, ti for PI (Åström & Hägglund, *PID Controllers*,
        2nd ed., ISA 1995, §3.5, from memory; ti for PI is common practice,
        no source).
    output_rate_limit : float, optional
        Largest change of the output per second. [output unit/s]
    setpoint_ramp : float, optional
        Largest rate at which the working setpoint follows a new target.
        [SI unit of the measurement per s]
    deadband : float
        Error band inside which the integral holds. [SI unit of the measurement]
    minimum_output : float, optional
        Lowest output while running (minimum speed clamp). [output unit]
    torque_limit : bool
        Apply the drive's current/torque limit: the induction motor's
        ``torque_limit`` x rated torque, or a DC motor's ``max_current``.
    """

    anti_windup: str = "back-calculation"
    tracking_time: float | None = None
    output_rate_limit: float | None = None
    setpoint_ramp: float | None = None
    deadband: float = 0.0
    minimum_output: float | None = None
    torque_limit: bool = True

    def __post_init__(self) -> None:
        kinds = ("back-calculation", "clamping", "none")
        if self.anti_windup not in kinds:
            raise ParameterError(f"`anti_windup`: got {self.anti_windup!r}, expected one of {kinds}")
        for name in ("tracking_time", "output_rate_limit", "setpoint_ramp"):
            value = getattr(self, name)
            if value is not None and not value > 0:
                raise ParameterError(f"`{name}`: got {value!r}, expected a value > 0 (None for none)")
        if not self.deadband >= 0:
            raise ParameterError(f"`deadband`: got {self.deadband!r}, expected a value >= 0")


class DiscretePID:
    """The PID algorithm a controller runs once per scan, with its output block.

    Parameters
    ----------
    settings : ControllerSettings
        Gains and limits.
    options : LoopOptions
        Anti-windup, rate limit, deadband, minimum output.
    scan_time : float
        Scan time h. [s]
    output_range : tuple of float
        (low, high) the output is limited to. [output unit]

    Notes
    -----
    Per scan, with error e = r - y (Åström & Wittenmark, *Computer-Controlled
    Systems*, 3rd ed., 1997, §8.5, Listing 8.1, from memory)::

        P = kp (b r - y)
        D = ad D - bd ((y - c r) - (y_old - c r_old)),  ad = Tf / (Tf + h), bd = kp td / (Tf + h)
        v = P + I + D;  u = limit(v)
        I = I + kp h / ti e + h / Tt (u - v)     (back-calculation)

    The integral is forward Euler, the filtered derivative (Tf = td / N)
    backward difference, which is stable for any N. ``limit`` clips to the
    output range (the higher of its low end and ``minimum_output``), then to
    ``output_rate_limit`` x h from the last output. h / Tt is capped at 1
    (the integral resets to the output in one scan at most).
    """

    def __init__(
        self, settings: ControllerSettings, options: LoopOptions, scan_time: float, output_range: tuple[float, float]
    ) -> None:
        s = settings
        self.kp, self.h = s.kp, scan_time
        self.b, self.c = s.setpoint_weights
        tf = s.td / s.derivative_filter if s.td > 0 else 0.0
        self.ad = tf / (tf + scan_time)
        self.bd = s.kp * s.td / (tf + scan_time)
        self.bi = s.kp * scan_time / s.ti if math.isfinite(s.ti) else 0.0
        tt = options.tracking_time or (math.sqrt(s.ti * s.td) if s.td > 0 else s.ti)
        self.ar = min(scan_time / tt, 1.0) if math.isfinite(tt) else 0.0
        self.mode = options.anti_windup if self.bi > 0 else "none"
        lo, hi = output_range
        if options.minimum_output is not None:
            lo = max(lo, options.minimum_output)
        self.lo, self.hi = lo, hi
        rate = options.output_rate_limit
        self.step = rate * scan_time if rate is not None else math.inf
        self.deadband = options.deadband
        self.integral = self.derivative = 0.0
        self.last_y = self.last_r = self.last_u = 0.0

    def start(self, setpoint: float, measurement: float, output: float) -> None:
        """Bumpless start: set the integral so that the first output equals ``output`` [output unit]."""
        self.last_r, self.last_y, self.last_u = setpoint, measurement, output
        self.derivative = 0.0
        self.integral = output - self.kp * (self.b * setpoint - measurement)

    def hold(self, output: float) -> float:
        """Manual mode: ``output`` [output unit] through the output limits and rate limit."""
        u = min(max(output, self.lo), self.hi)
        self.last_u = min(max(u, self.last_u - self.step), self.last_u + self.step)
        return self.last_u

    def update(self, setpoint: float, measurement: float) -> float:
        """One scan: the new output [output unit] for ``setpoint`` and ``measurement`` [SI]."""
        r, y = setpoint, measurement
        p = self.kp * (self.b * r - y)
        self.derivative = self.ad * self.derivative - self.bd * (
            (y - self.c * r) - (self.last_y - self.c * self.last_r)
        )
        v = p + self.integral + self.derivative
        u = min(max(v, self.lo), self.hi)
        u = min(max(u, self.last_u - self.step), self.last_u + self.step)
        e = r - y
        di = self.bi * e if abs(e) > self.deadband else 0.0
        if self.mode == "back-calculation":
            di += self.ar * (u - v)
        elif self.mode == "clamping" and ((u < v and di > 0) or (u > v and di < 0)):
            di = 0.0
        self.integral += di
        self.last_r, self.last_y, self.last_u = r, y, u
        return u
