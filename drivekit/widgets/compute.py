"""The one computation per design change, shared by every view.

:func:`compute_result` calls :meth:`drivekit.design.Design.evaluate` once and
wraps its :class:`~drivekit.evaluation.DesignResult`; the root locus
(:func:`drivekit.rootlocus.root_locus`) and the pump and system curves
(:meth:`DriveTrain.pump_curves`, :meth:`DriveTrain.system_curve`) are computed
from the same result the first time a view asks for them. Nothing here is
physics or analysis of its own: the views read these core results and draw.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from typing import Any

import numpy as np

from ..design import Design
from ..evaluation import DesignResult
from ..rootlocus import RootLocus, root_locus

__all__ = ["BoardResult", "OperatingCurves", "compute_result", "operating_curves"]

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


@dataclasses.dataclass(frozen=True, eq=False)
class BoardResult:
    """Everything the views show for one design: the core's evaluation, and what is drawn from it on demand.

    Attributes
    ----------
    evaluation : DesignResult
        The one :meth:`Design.evaluate` result (operating point, coupled
        plant, loop, setpoint and load steps with the dead time exact,
        frequency response with |S| and |T|, margins, metrics, checks,
        cautions).
    """

    evaluation: DesignResult

    @property
    def design(self) -> Design:
        """The design this result belongs to."""
        return self.evaluation.design

    @property
    def operating_point(self) -> Any:
        """Where the plant runs (:class:`~drivekit.operating.OperatingPoint`)."""
        return self.evaluation.operating_point

    @property
    def plant(self) -> Any:
        """The coupled plant linearised at the operating point (:class:`~drivekit.linear.LinearModel`)."""
        return self.evaluation.plant

    @property
    def loop(self) -> Any:
        """The closed loop (:class:`~drivekit.loop.Loop`), ``None`` without a controller."""
        return self.evaluation.loop

    @property
    def cautions(self) -> tuple[str, ...]:
        """The evaluation's cautions, in plain words."""
        return self.evaluation.cautions

    @functools.cached_property
    def locus(self) -> RootLocus | None:
        """Root locus of the open loop (dead time as a Pade approximation); ``None`` without a loop."""
        if self.loop is None:
            return None
        return root_locus(self.loop.open_loop)

    @functools.cached_property
    def curves(self) -> OperatingCurves | None:
        """Pump and system curves; ``None`` for a machine that is not a pump."""
        return operating_curves(self.design, self.operating_point)


def compute_result(design: Design) -> BoardResult:
    """Evaluate a design once for every view.

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
    return BoardResult(design.evaluate())
