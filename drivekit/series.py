"""The series shortcut: one transfer function per stage, multiplied as if no stage loaded the next."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import scipy.signal

from .constants import STANDARD_GRAVITY
from .drivetrain import OUTPUTS
from .linear import LinearModel
from .motors import DCMotor

if TYPE_CHECKING:
    from .drivetrain import DriveTrain

__all__ = ["series_model"]


def _lag(tau: float) -> tuple[np.ndarray, np.ndarray]:
    return np.array([1.0]), np.array([tau, 1.0]) if tau > 0 else np.array([1.0])


def series_model(train: DriveTrain, op: Any) -> LinearModel:
    """Product of the stages' own transfer functions at ``op`` (see :meth:`DriveTrain.series_approximation`)."""
    blocks: list[tuple[np.ndarray, np.ndarray]] = []
    if train.drive is not None:
        num, den = _lag(float(train.drive.time_constant))
        blocks.append((num * float(train.drive.reference_scale), den))
    m = train.motor
    ratio = float(train._ratio)
    eta = float(train._eta)
    inertia = float(m.J + train.machine.J / (ratio**2 * eta))
    friction = float(m.b + train.machine.b / (ratio**2 * eta))
    if isinstance(m, DCMotor):
        # Nise, Control Systems Engineering, 6th ed., §2.8: w/V = k / ((L s + R)(J s + b) + k**2)
        den = np.polymul([float(m.L), float(m.R)], [inertia, friction])
        den[-1] += float(m.k) ** 2
        blocks.append((np.array([float(m.k)]), den))
    else:
        kt = float(m.torque_slope)
        blocks.append((np.array([kt * 4.0 * np.pi / m.poles]), np.array([inertia, friction + kt])))
    if train.output != "motor_speed":
        blocks.append((np.array([1.0 / ratio]), np.array([1.0])))
    if train.output in ("flow", "pump_pressure"):
        w, q = op.machine_speed, op.flow
        hw, hq = 1e-7 * (w + 1.0), 1e-7 * (q + 1e-3)
        h0 = float(train.pump_head(w, q))
        dh_dw = (float(train.pump_head(w + hw, q)) - h0) / hw
        dh_dq = (float(train.pump_head(w, q + hq)) - h0) / hq
        dsys_dq = (float(train.system_head(q + hq)) - float(train.system_head(q))) / hq
        col = float(train._column)
        flow_num, flow_den = np.array([dh_dw]), np.array([col, dsys_dq - dh_dq])
        if train.output == "flow":
            blocks.append((flow_num, flow_den))
        else:  # dp = rho g (dH/dw dw + dH/dQ dQ)
            rg = float(train.fluid.density) * STANDARD_GRAVITY
            num = rg * (dh_dw * flow_den + np.array([0.0, dh_dq * dh_dw]))
            blocks.append((num, flow_den))
    if train.sensor is not None:
        blocks.append(_lag(float(train.sensor.time_constant)))
    num, den = np.array([1.0]), np.array([1.0])
    for bn, bd in blocks:
        num, den = np.polymul(num, bn), np.polymul(den, bd)
    a, b, c, d = scipy.signal.tf2ss(num, den)
    n = a.shape[0]
    return LinearModel(
        np.atleast_2d(a),
        np.atleast_2d(b).reshape(n, 1),
        np.atleast_2d(c).reshape(1, n),
        np.atleast_2d(d),
        delay=train.dead_time,
        state_names=tuple(f"series state {i + 1}" for i in range(n)),
        state_units=("",) * n,
        state_stages=("series approximation",) * n,
        input_name=train.input_name,
        input_unit=train.input_unit,
        output_name=OUTPUTS[train.output][2],
        output_unit=train.output_unit,
        output_display_unit=train.output_display_unit,
    )
