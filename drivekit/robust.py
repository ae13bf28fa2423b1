"""A numerical PI tuning for a robustness target on the full linear model.

:func:`robust_pi` finds, on the exact frequency response (dead time
included), the PI with the largest integral gain kp/ti whose maximum
sensitivity Ms stays within a target, optionally with a least phase margin.
Reached as ``dk.tuning.robust_pi``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
import scipy.optimize

from .linear import LinearModel
from .models import FOPDT, SOPDT, IntegratingDeadTime
from .pid import PID
from .units import ParameterError

__all__ = ["robust_pi"]

Model = FOPDT | SOPDT | IntegratingDeadTime | LinearModel


def _ideal(kp: float, ti: float = math.inf, td: float = 0.0, b: float = 1.0) -> PID:
    return PID(kp=kp, ti=ti, td=td, form="ideal", setpoint_weights=(b, 0.0))


def _response_function(model: Any) -> Callable[[np.ndarray], np.ndarray]:
    if isinstance(model, (FOPDT, SOPDT, IntegratingDeadTime, LinearModel)):
        return model.frequency_response
    raise ParameterError(
        f"`model`: got {type(model).__name__}, expected FOPDT, SOPDT, IntegratingDeadTime or LinearModel"
    )


def _gain_sign(model: Any) -> float:
    if isinstance(model, LinearModel):
        g = model.frequency_response(np.array([1e-9 / max(1.0, _slowest_time(model))]))[0]
        return 1.0 if g.real > 0 or (abs(g.real) < abs(g.imag) and g.imag < 0) else -1.0
    return 1.0 if model.gain > 0 else -1.0


def _slowest_time(model: Any) -> float:
    if isinstance(model, LinearModel):
        p = np.abs(model.poles)
        p = p[p > 1e-9]
        return float(1.0 / p.min()) if p.size else 1.0
    if isinstance(model, IntegratingDeadTime):
        return max(model.dead_time, model.time_constant_2, 1e-3)
    return max(model.time_constant, model.dead_time, 1e-3)


def _frequency_grid(model: Any, n: int) -> np.ndarray:
    """Log grid from well below the slowest dynamics to well past the dead time and fastest pole."""
    slow = _slowest_time(model)
    fast_rate = 1.0 / slow
    if isinstance(model, LinearModel) and model.order:
        fast_rate = float(np.max(np.abs(model.poles)))
    elif isinstance(model, SOPDT) and model.time_constant_2 > 0:
        fast_rate = 1.0 / model.time_constant_2
    theta = getattr(model, "delay", None) if isinstance(model, LinearModel) else model.dead_time
    if theta and theta > 0:
        fast_rate = max(fast_rate, 1.0 / theta)
    return np.logspace(math.log10(1e-3 / slow), math.log10(100.0 * fast_rate), n)


def robust_pi(plant: Model, max_ms: float = 1.4, *, min_phase_margin: float | None = None) -> PID:
    """The PI with the largest integral gain kp/ti whose maximum sensitivity stays within ``max_ms``.

    Parameters
    ----------
    plant : LinearModel, FOPDT, SOPDT or IntegratingDeadTime
        The full process model; its exact frequency response (dead time
        included) is used, not a reduction.
    max_ms : float
        Upper limit on Ms = max |1/(1 + C G)|. 1.4 is a robust design, 2.0
        an aggressive one (Åström & Hägglund, 2006, §7). [-]
    min_phase_margin : float, optional
        Also require this phase margin at every gain crossover. [deg]

    Returns
    -------
    PID
        Ideal-form PI.

    Raises
    ------
    ParameterError
        For targets that cannot be met or a plant that allows unbounded gain
        (no dead time and fewer than two lags).

    Notes
    -----
    Maximising the integral gain ki = kp/ti minimises the integrated error
    after a load step (IE = 1/ki) and is the design criterion of the MIGO
    method. For each kp, the largest ki meeting the constraints is found by
    bisection (starting from the stable P controller with ki -> 0, so the
    loop is stable: the Nyquist curve cannot pass -1 without violating the
    Ms circle); then ki(kp) is maximised over kp. Ms is evaluated on a
    4000-point log grid covering three decades below the slowest lag and two
    above the fastest pole or 1/dead time (peaks are resolved to about 0.1 %).

    References
    ----------
    K. J. Åström, H. Panagopoulos, T. Hägglund, "Design of PI controllers
    based on non-convex optimization", Automatica 34 (1998) 585-601;
    K. J. Åström, T. Hägglund, *Advanced PID Control*, ISA 2006, §7 (MIGO
    design, Ms = 1.4) (from memory).
    """
    if not (isinstance(max_ms, (int, float)) and math.isfinite(max_ms) and max_ms > 1.0):
        raise ParameterError(f"`max_ms`: got {max_ms!r}, expected a maximum sensitivity > 1")
    if min_phase_margin is not None and not (isinstance(min_phase_margin, (int, float)) and 0 < min_phase_margin < 90):
        raise ParameterError(f"`min_phase_margin`: got {min_phase_margin!r} deg, expected between 0 and 90 deg")
    sign = _gain_sign(plant)
    w = _frequency_grid(plant, 4000)
    g = sign * _response_function(plant)(w)
    jw = 1j * w

    def feasible(kp: float, ki: float) -> bool:
        loop = g * (kp + ki / jw)
        if np.max(1.0 / np.abs(1.0 + loop)) > max_ms:
            return False
        if min_phase_margin is None:
            return True
        log_mag = np.log(np.abs(loop))
        i = np.nonzero(np.diff(np.sign(log_mag)))[0]
        phase = np.unwrap(np.angle(loop))
        frac = -log_mag[i] / (log_mag[i + 1] - log_mag[i])  # linear in log|L| between grid points
        pm = 180.0 + np.degrees(phase[i] + frac * (phase[i + 1] - phase[i]))
        return bool(np.all(pm >= min_phase_margin))

    def largest_ki(kp: float) -> float:
        hi = kp / _slowest_time(plant)
        if not feasible(kp, 1e-12 * hi):
            return 0.0
        lo = 0.0
        while feasible(kp, hi):
            lo, hi = hi, 2.0 * hi
            if hi > 1e12:
                raise ParameterError(
                    "`plant`: the integral gain is unbounded under the target; expected a plant with dead time or lags"
                )
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            lo, hi = (mid, hi) if feasible(kp, mid) else (lo, mid)
            if hi - lo <= 1e-10 * hi:
                break
        return lo

    # highest P gain meeting the target (the PI's kp lies below it)
    kp_hi = 1.0 / max(float(np.max(np.abs(g))), 1e-300)
    while feasible(kp_hi, 0.0):
        kp_hi *= 2.0
        if kp_hi > 1e12:
            raise ParameterError(
                "`plant`: the gain is unbounded under the target; expected a plant with dead time or lags"
            )
    kps = np.linspace(kp_hi / 60.0, kp_hi, 60)
    kis = np.array([largest_ki(k) for k in kps])
    if not np.any(kis > 0):
        raise ParameterError(f"`max_ms`: got {max_ms}, no PI meets it on this plant; expected a larger value")
    best = int(np.argmax(kis))
    lo_k, hi_k = kps[max(best - 1, 0)], kps[min(best + 1, len(kps) - 1)]
    res = scipy.optimize.minimize_scalar(
        lambda k: -largest_ki(k), bounds=(lo_k, hi_k), method="bounded", options={"xatol": 1e-6 * kp_hi}
    )
    kp_opt, ki_opt = (float(res.x), -float(res.fun)) if -res.fun >= kis[best] else (float(kps[best]), float(kis[best]))
    return _ideal(sign * kp_opt, kp_opt / ki_opt)
