"""The one computation per design change, shared by every view.

:func:`compute_result` only calls the core (operating point, linearisation,
loop analysis); the views read its :class:`BoardResult` and draw. Nothing
here is physics of its own.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import control
import numpy as np

from ..design import Design
from ..linear import LinearModel

__all__ = ["BoardResult", "LoopData", "OperatingCurves", "compute_result", "loop_data", "operating_curves"]

#: Pade order standing in for the dead time in time responses, poles and root locus. [-]
PADE_ORDER = 4
#: Setpoint step size as a fraction of the operating value of the measurement. [-]
SETPOINT_STEP = 0.05
#: Load step at the plant input as a fraction of the output span (or of 100 % without one). [-]
LOAD_STEP = 0.05
#: Points of the time and frequency grids. [-]
TIME_POINTS = 400
FREQUENCY_POINTS = 400
#: Controller-gain multipliers along the root locus. [-]
LOCUS_GAINS = np.logspace(-2, 2, 81)
#: Pade order for the stability margins (close to the exact dead time near crossover). [-]
MARGIN_PADE_ORDER = 6

#: Pump speeds drawn, as fractions of the speed of the maker's curve. [-]
CURVE_SPEED_FRACTIONS = (1.0, 0.9, 0.8, 0.7, 0.6)
#: Points along the flow axis of the pump and system curves. [-]
CURVE_POINTS = 121


@dataclasses.dataclass(frozen=True, eq=False)
class OperatingCurves:
    """Pump curves at several speeds, the system curve and where they meet.

    Attributes
    ----------
    flow : numpy.ndarray
        Flow axis. [m**3/s]
    speeds : numpy.ndarray
        Pump speed of each curve. [rad/s]
    pump_head : numpy.ndarray
        Pump head, one row per speed, NaN beyond the maker's curve. [m]
    system_head : numpy.ndarray
        Head the pipe line needs at each flow. [m]
    point_flow, point_head, point_speed : float
        The operating point. [m**3/s], [m], [rad/s]
    point_curve : numpy.ndarray
        Pump head at the operating speed over ``flow``. [m]
    min_flow : float
        Pump minimum continuous flow at the operating speed (NaN if not given). [m**3/s]
    min_speed : float
        Least pump speed whose shut-off head reaches the static head. [rad/s]
    """

    flow: np.ndarray
    speeds: np.ndarray
    pump_head: np.ndarray
    system_head: np.ndarray
    point_flow: float
    point_head: float
    point_speed: float
    point_curve: np.ndarray
    min_flow: float
    min_speed: float


@dataclasses.dataclass(frozen=True, eq=False)
class LoopData:
    """The closed loop of a design, as the loop views draw it.

    Time responses are deviations from the operating point, in SI: the
    measurement in the plant's output SI unit, the controller output in the
    plant's input unit.

    Attributes
    ----------
    time : numpy.ndarray
        Time axis of both step responses. [s]
    setpoint_step, load_step : float
        Size of the setpoint step [measurement SI unit] and of the load step at
        the plant input [controller output unit].
    setpoint_y, setpoint_u : numpy.ndarray
        Measurement and controller output after the setpoint step.
    load_y, load_u : numpy.ndarray
        Measurement and controller output after the load step.
    omega : numpy.ndarray
        Frequency axis. [rad/s]
    open_loop, sensitivity, complementary : numpy.ndarray
        L(jw), S(jw), T(jw) with the dead time exact. [-]
    gain_margin : float
        Gain margin as a ratio (inf if the phase never reaches -180 deg). [-]
    phase_margin : float
        Phase margin. [deg]
    gain_crossover, phase_crossover : float
        Frequencies where |L| = 1 and where the phase is -180 deg (NaN if none). [rad/s]
    ms, mt : float
        Peaks of |S| and |T|. [-]
    rise_time, settling_time : float
        10-90 % rise time and 2 % settling time of the setpoint response. [s]
    overshoot : float
        Overshoot of the setpoint response. [%]
    poles, zeros : numpy.ndarray
        Closed-loop poles and zeros (dead time as a Pade approximation). [1/s]
    locus_gains : numpy.ndarray
        Multipliers of the controller gain along the root locus. [-]
    locus : numpy.ndarray
        Closed-loop poles at each multiplier, shape (gains, poles). [1/s]
    stable : bool
        Whether every closed-loop pole lies in the left half plane.
    """

    time: np.ndarray
    setpoint_step: float
    load_step: float
    setpoint_y: np.ndarray
    setpoint_u: np.ndarray
    load_y: np.ndarray
    load_u: np.ndarray
    omega: np.ndarray
    open_loop: np.ndarray
    sensitivity: np.ndarray
    complementary: np.ndarray
    gain_margin: float
    phase_margin: float
    gain_crossover: float
    phase_crossover: float
    ms: float
    mt: float
    rise_time: float
    settling_time: float
    overshoot: float
    poles: np.ndarray
    zeros: np.ndarray
    locus_gains: np.ndarray
    locus: np.ndarray
    stable: bool


@dataclasses.dataclass(frozen=True, eq=False)
class BoardResult:
    """Everything the views show for one design.

    Attributes
    ----------
    design : Design
        The design this result belongs to.
    operating_point : OperatingPoint
        Where the plant runs.
    plant : LinearModel
        The plant linearised there (input: controller output, output: measured value).
    curves : OperatingCurves or None
        Pump and system curves; ``None`` for a machine that is not a pump.
    loop : LoopData or None
        The closed loop; ``None`` when the design has no controller.
    cautions : tuple of str
        Plain-words cautions from the operating point and the loop.
    """

    design: Design
    operating_point: Any
    plant: LinearModel
    curves: OperatingCurves | None
    loop: LoopData | None = None
    cautions: tuple[str, ...] = ()


def operating_curves(design: Design, op: Any) -> OperatingCurves | None:
    """Pump curves, system curve and operating point of a pump train, from the core.

    Parameters
    ----------
    design : Design
        The design.
    op : OperatingPoint
        Its operating point.

    Returns
    -------
    OperatingCurves or None
        ``None`` when the machine is not a pump.
    """
    train = design.train
    if not train.is_pump:
        return None
    pump = train.machine
    rated = float(pump.speed)
    speeds = np.array([rated * f for f in CURVE_SPEED_FRACTIONS])
    top = max(float(pump.curve_end_flow(rated)), op.flow * 1.1)
    flow = np.linspace(0.0, top, CURVE_POINTS)
    w = op.machine_speed
    min_ratio = float(pump.speed_ratio_for(0.0, max(train.static_head, 0.0)))
    return OperatingCurves(
        flow=flow,
        speeds=speeds,
        pump_head=np.asarray(train.pump_curves(speeds, flow), dtype=float),
        system_head=np.asarray(train.system_curve(flow), dtype=float),
        point_flow=op.flow,
        point_head=op.head,
        point_speed=w,
        point_curve=np.asarray(train.pump_curves([w], flow), dtype=float)[0],
        min_flow=float(pump.min_flow(w)),
        min_speed=min_ratio * rated if math.isfinite(min_ratio) else math.nan,
    )


def compute_result(design: Design) -> BoardResult:
    """Compute everything the views show, once, for one design.

    Parameters
    ----------
    design : Design
        The design.

    Returns
    -------
    BoardResult

    Raises
    ------
    OperatingPointError
        No steady state exists for the design's operating target.
    """
    op = design.operating_point()
    plant = design.train.linearize(op)
    loop = loop_data(design, op, plant) if design.controller is not None else None
    cautions = list(op.cautions)
    if loop is not None and not loop.stable:
        cautions.append("the closed loop is unstable: lower the controller gain or slow the integral action")
    return BoardResult(
        design=design,
        operating_point=op,
        plant=plant,
        curves=operating_curves(design, op),
        loop=loop,
        cautions=tuple(cautions),
    )


def _frequency_grid(plant: LinearModel, controller_tf: Any) -> np.ndarray:
    corners = [abs(p) for p in np.concatenate([plant.poles, np.asarray(control.poles(controller_tf))]) if abs(p) > 1e-9]
    if plant.delay > 0:
        corners.append(1.0 / plant.delay)
    lo = min(corners, default=1.0) / 100.0
    hi = max(corners, default=1.0) * 10.0
    return np.logspace(np.log10(lo), np.log10(hi), FREQUENCY_POINTS)


def _response(sys: Any, t: np.ndarray) -> np.ndarray:
    return np.asarray(control.step_response(sys, t).outputs, dtype=float).reshape(-1)


def loop_data(design: Design, op: Any, plant: LinearModel) -> LoopData:
    """Close the loop of ``design`` around ``plant`` and compute what the loop views show.

    Parameters
    ----------
    design : Design
        The design (its controller must have a python-control ``.tf`` in SI).
    op : OperatingPoint
        The operating point (sets the setpoint step size).
    plant : LinearModel
        The plant linearised at ``op``.

    Returns
    -------
    LoopData

    Notes
    -----
    Frequency responses keep the dead time exact (``LinearModel.frequency_response``).
    Margins come from python-control's ``stability_margins`` with the dead
    time as a Pade approximation of order :data:`MARGIN_PADE_ORDER`; time
    responses, poles and the root locus use order :data:`PADE_ORDER`.
    """
    c = design.controller.tf
    g = plant.pade(PADE_ORDER)
    omega = _frequency_grid(plant, c)
    lw = np.asarray(c(1j * omega)).reshape(-1) * plant.frequency_response(omega)
    s_w = 1.0 / (1.0 + lw)
    t_w = lw / (1.0 + lw)
    open_loop = c * g
    gm, pm, _sm, wpc, wgc, _wms = control.stability_margins(c * plant.pade(MARGIN_PADE_ORDER))
    closed = control.feedback(open_loop, 1)
    poles = np.asarray(control.poles(closed))
    zeros = np.asarray(control.zeros(closed))
    slow = float(np.min(np.abs(poles.real))) if poles.size else 1.0
    t_end = min(max(6.0 / max(slow, 1e-6), 10.0 * plant.delay, 1.0), 1e5)
    t = np.linspace(0.0, t_end, TIME_POINTS)
    r_step = SETPOINT_STEP * (op.flow if design.train.is_pump else op.machine_speed)
    span = design.output_span or (0.0, 100.0)
    d_step = LOAD_STEP * (span[1] - span[0])
    sp_y = _response(closed, t)
    sp_u = _response(control.feedback(c, g), t)
    ld_y = _response(control.feedback(g, c), t)
    ld_u = -sp_y
    stable = bool(np.all(poles.real < 0))
    info = control.step_info(sp_y, t, SettlingTimeThreshold=0.02) if stable else {}
    locus = np.asarray(control.root_locus_map(open_loop, LOCUS_GAINS).loci)
    return LoopData(
        time=t,
        setpoint_step=r_step,
        load_step=d_step,
        setpoint_y=r_step * sp_y,
        setpoint_u=r_step * sp_u,
        load_y=d_step * ld_y,
        load_u=d_step * ld_u,
        omega=omega,
        open_loop=lw,
        sensitivity=s_w,
        complementary=t_w,
        gain_margin=float(gm),
        phase_margin=float(pm),
        gain_crossover=float(wgc),
        phase_crossover=float(wpc),
        ms=float(np.max(np.abs(s_w))),
        mt=float(np.max(np.abs(t_w))),
        rise_time=float(info.get("RiseTime", math.nan)),
        settling_time=float(info.get("SettlingTime", math.nan)),
        overshoot=float(info.get("Overshoot", math.nan)),
        poles=poles,
        zeros=zeros,
        locus_gains=LOCUS_GAINS,
        locus=locus,
        stable=stable,
    )
