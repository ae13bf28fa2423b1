"""Centrifugal pumps: the maker's curve at one speed, scaled to any speed by the affinity laws."""

from __future__ import annotations

import dataclasses
import functools
import math
from typing import Any

import numpy as np

from .constants import STANDARD_GRAVITY
from .units import ParameterError, ParamSpec, convert_fields, param, to_si, ureg

__all__ = ["CentrifugalPump", "PumpCurve"]

#: Largest deviation of the fitted head curve from the points, as a fraction
#: of the shut-off head, before the points are refused [-]. Common practice,
#: no source: catalogue curves are read to about 1-2 %.
HEAD_FIT_TOLERANCE = 0.03
#: The same for the shaft power curve, as a fraction of the largest power [-].
POWER_FIT_TOLERANCE = 0.05


def _as_points(value: Any, name: str, spec: ParamSpec) -> np.ndarray:
    """Read a list of points: a Quantity array, a list of floats, strings or Quantities."""
    if isinstance(value, (list, tuple)) and any(isinstance(v, (str, ureg.Quantity)) for v in value):
        return np.array([to_si(v, f"{name}[{i}]", spec) for i, v in enumerate(value)], dtype=float)
    out = to_si(value, name, spec)
    arr = np.atleast_1d(np.asarray(out, dtype=float))
    if arr.ndim != 1:
        raise ParameterError(f"`{name}`: got an array of shape {arr.shape}, expected a list of values")
    return arr


@dataclasses.dataclass(frozen=True, kw_only=True, eq=False)
class PumpCurve:
    """A centrifugal pump's head and efficiency curves at one speed, from the maker's points.

    Parameters
    ----------
    flow : list or Quantity
        Flow at each point, rising. [m**3/s] (strings such as ``"200 m**3/h"``
        and Quantity arrays are converted)
    head : list or Quantity
        Total head at each point. [m]
    efficiency : list or Quantity
        Pump (hydraulic) efficiency at each point, a fraction or ``"78 %"``;
        0 is accepted only at zero flow. [-]
    min_flow : float, Quantity or str, optional
        Minimum continuous stable flow from the maker, at this curve's speed. [m**3/s]
    name : str
        Label.

    Notes
    -----
    The head is fitted by least squares with ``H0(Q) = a0 + a1 Q + a2 Q**2``
    and the shaft power per unit density with
    ``P0(Q)/rho = c0 + c1 Q + c2 Q**2``, where ``P0 = rho g Q H / eta`` at each
    point with efficiency above 0 (a straight line when only two such points
    are given). Quadratics are the usual form of a pump curve (Karassik et al.,
    *Pump Handbook*, 4th ed., §2.3, from memory) and keep the affinity-scaled
    curves polynomial in speed and flow, so they stay smooth down to zero
    speed. Points are refused when head rises with flow above ``min_flow``,
    or when a quadratic cannot follow them within
    :data:`HEAD_FIT_TOLERANCE` of the shut-off head.

    Examples
    --------
    >>> c = PumpCurve(flow=["0 m**3/h", "200 m**3/h", "400 m**3/h"], head=[50, 45, 30],
    ...               efficiency=[0, 0.75, 0.70])
    >>> round(float(c.head_at(200 / 3600)), 6)
    45.0
    """

    flow: Any
    head: Any
    efficiency: Any
    min_flow: Any = param("m**3/s", "minimum continuous flow", default=None, minimum=0.0)
    name: str = "pump curve"

    def __post_init__(self) -> None:
        q = _as_points(self.flow, "flow", ParamSpec("m**3/s", "flow", minimum=0.0))
        h = _as_points(self.head, "head", ParamSpec("m", "head", minimum=0.0, include_minimum=False))
        eta = _as_points(
            self.efficiency, "efficiency", ParamSpec("", "efficiency (fraction)", minimum=0.0, maximum=1.0)
        )
        if not (len(q) == len(h) == len(eta)):
            raise ParameterError(
                f"`flow`, `head`, `efficiency`: got {len(q)}, {len(h)} and {len(eta)} values; expected as many of each"
            )
        if len(q) < 3:
            raise ParameterError(f"`flow`: got {len(q)} points, expected at least 3 to define a curve")
        if np.any(np.diff(q) <= 0):
            raise ParameterError(
                f"`flow`: got {np.round(q * 3600, 3).tolist()} m**3/h, expected strictly rising values"
            )
        if np.any((eta <= 0) & (q > 0)):
            i = int(np.argmax((eta <= 0) & (q > 0)))
            raise ParameterError(
                f"`efficiency`: got 0 at {q[i] * 3600:g} m**3/h, expected a value above 0 wherever flow is above 0"
            )
        object.__setattr__(self, "flow", q)
        object.__setattr__(self, "head", h)
        object.__setattr__(self, "efficiency", eta)
        convert_fields(self)
        self._check_falling()
        object.__setattr__(self, "_head_coef", self._fit_head())
        object.__setattr__(self, "_power_coef", self._fit_power())

    # -- validation and fitting -------------------------------------------------
    def _check_falling(self) -> None:
        q, h = self.flow, self.head
        lo = self.min_flow if self.min_flow is not None else q[0]
        for i in range(len(q) - 1):
            if q[i] >= lo - 1e-12 and h[i + 1] >= h[i]:
                raise ParameterError(
                    f"`head`: must fall as flow rises over the used range; it goes from {h[i]:g} m at "
                    f"{q[i] * 3600:g} m**3/h to {h[i + 1]:g} m at {q[i + 1] * 3600:g} m**3/h. "
                    "If that rising part lies below the pump's minimum flow, give `min_flow` above it."
                )

    def _fit_head(self) -> np.ndarray:
        coef = np.polynomial.polynomial.polyfit(self.flow, self.head, 2)
        dev = np.max(np.abs(np.polynomial.polynomial.polyval(self.flow, coef) - self.head))
        if dev > HEAD_FIT_TOLERANCE * coef[0]:
            raise ParameterError(
                f"`head`: a quadratic curve misses the points by up to {dev:.3g} m, more than "
                f"{HEAD_FIT_TOLERANCE:.0%} of the shut-off head; check the points"
            )
        lo = self.min_flow if self.min_flow is not None else self.flow[0]
        if coef[1] + 2 * coef[2] * lo >= 0:
            raise ParameterError(
                f"`head`: the fitted curve still rises at {lo * 3600:g} m**3/h; give `min_flow` above "
                f"{-coef[1] / (2 * coef[2]) * 3600:.4g} m**3/h or check the points"
            )
        if coef[0] <= 0:
            raise ParameterError(f"`head`: the fitted shut-off head is {coef[0]:.3g} m, expected above 0")
        return coef

    def _fit_power(self) -> np.ndarray:
        ok = self.efficiency > 0
        q, h, eta = self.flow[ok], self.head[ok], self.efficiency[ok]
        if len(q) < 2:
            raise ParameterError(
                f"`efficiency`: got {len(q)} points with efficiency above 0, expected at least 2 "
                "to define the power curve"
            )
        p = STANDARD_GRAVITY * q * h / eta  # shaft power per unit density [W/(kg/m**3)]
        coef = np.zeros(3)
        coef[: min(3, len(q))] = np.polynomial.polynomial.polyfit(q, p, min(2, len(q) - 1))
        dev = np.max(np.abs(np.polynomial.polynomial.polyval(q, coef) - p))
        if dev > POWER_FIT_TOLERANCE * np.max(p):
            raise ParameterError(
                f"`efficiency`: the shaft power derived from head and efficiency is not a smooth curve "
                f"(a quadratic misses it by {dev / np.max(p):.0%}); check the points"
            )
        return coef

    # -- curves at this curve's own speed ---------------------------------------
    @property
    def head_coefficients(self) -> np.ndarray:
        """(a0, a1, a2) of H0(Q) = a0 + a1 Q + a2 Q**2. [m], [m/(m**3/s)], [m/(m**3/s)**2]"""
        return self._head_coef  # type: ignore[attr-defined,no-any-return]

    @property
    def power_coefficients(self) -> np.ndarray:
        """(c0, c1, c2) of P0(Q)/rho = c0 + c1 Q + c2 Q**2. [W/(kg/m**3)] per power of Q."""
        return self._power_coef  # type: ignore[attr-defined,no-any-return]

    @property
    def max_flow(self) -> float:
        """Last flow point: the curve is not extrapolated beyond it. [m**3/s]"""
        return float(self.flow[-1])

    @property
    def shutoff_head(self) -> float:
        """Fitted head at zero flow. [m]"""
        return float(self.head_coefficients[0])

    def head_at(self, flow: Any) -> Any:
        """Fitted head at ``flow`` [m**3/s] at the curve's speed. [m]"""
        a0, a1, a2 = self.head_coefficients
        return a0 + a1 * flow + a2 * flow * flow

    def efficiency_at(self, flow: Any) -> Any:
        """Efficiency from the fitted head and power curves at ``flow`` [m**3/s]. [-]"""
        c0, c1, c2 = self.power_coefficients
        return STANDARD_GRAVITY * flow * self.head_at(flow) / (c0 + c1 * flow + c2 * flow * flow)

    @functools.cached_property
    def best_efficiency_flow(self) -> float:
        """Flow of best efficiency on the fitted curves (found once: the curve does not change). [m**3/s]"""
        q = np.linspace(self.flow[0], self.flow[-1], 2001)
        return float(q[np.argmax(self.efficiency_at(q))])


@dataclasses.dataclass(frozen=True, kw_only=True, eq=False)
class CentrifugalPump:
    """Centrifugal pump running at variable speed.

    Parameters
    ----------
    curve : PumpCurve
        Head and efficiency at the curve's speed.
    speed : float, Quantity or str
        The speed the curve was measured at. [rad/s]
    J : float, Quantity or str
        Inertia of impeller, shaft and the liquid in the impeller. [kg*m**2]
    b : float, Quantity or str
        Viscous friction of bearings and seals. [N*m*s/rad]
    max_speed : float, Quantity or str, optional
        Highest speed the maker allows. [rad/s]
    name : str
        Label.

    Notes
    -----
    Affinity laws, with r = w / w0 the speed ratio:

    .. math::

        Q = r Q_0, \\qquad H = r^2 H_0, \\qquad P = r^3 P_0

    so at any speed ``H(w, Q) = r**2 H0(Q / r)`` and
    ``P(w, Q) = r**3 P0(Q / r)``. With the quadratic fits these are
    ``H = a0 r**2 + a1 r Q + a2 Q**2`` and
    ``P/rho = c0 r**3 + c1 r**2 Q + c2 r Q**2``. Shaft torque is
    ``P / w + b w``; at the points, ``P = rho g Q H / eta``.
    The affinity laws hold for the same impeller at moderate speed changes;
    efficiency drops somewhat at low speed (common practice, no source).

    References
    ----------
    U.S. Department of Energy, *DOE Fundamentals Handbook: Thermodynamics,
    Heat Transfer, and Fluid Flow*, DOE-HDBK-1012/3-92, Fluid Flow (centrifugal
    pump laws and their worked example);
    Karassik et al., *Pump Handbook*, 4th ed., §2.3 (from memory).

    Examples
    --------
    Halving the speed quarters the shut-off head:

    >>> c = PumpCurve(flow=[0, 0.05, 0.1], head=[40, 36, 25], efficiency=[0, 0.7, 0.72])
    >>> p = CentrifugalPump(curve=c, speed="1480 rpm", J=0.3)
    >>> round(float(p.head(p.speed / 2, 0.0)), 6)
    10.0
    """

    curve: PumpCurve
    speed: Any = param("rad/s", "speed of the curve", minimum=0.0, include_minimum=False, kind="shaft_speed")
    J: Any = param("kg*m**2", "impeller inertia", minimum=0.0, include_minimum=False)
    b: Any = param("N*m*s/rad", "viscous friction", default=0.0, minimum=0.0)
    max_speed: Any = param(
        "rad/s", "highest allowed speed", default=None, minimum=0.0, include_minimum=False, kind="shaft_speed"
    )
    name: str = "centrifugal pump"

    def __post_init__(self) -> None:
        if not isinstance(self.curve, PumpCurve):
            raise ParameterError(f"`curve`: got {type(self.curve).__name__}, expected a PumpCurve")
        convert_fields(self)

    def head(self, speed: Any, flow: Any) -> Any:
        """Head at ``speed`` [rad/s] and ``flow`` [m**3/s]. [m]"""
        r = speed / self.speed
        a0, a1, a2 = self.curve.head_coefficients
        return a0 * r * r + a1 * r * flow + a2 * flow * flow

    def shaft_power_per_density(self, speed: Any, flow: Any) -> Any:
        """Hydraulic shaft power over density at ``speed`` [rad/s], ``flow`` [m**3/s]. [W/(kg/m**3)]"""
        r = speed / self.speed
        c0, c1, c2 = self.curve.power_coefficients
        return r * (c0 * r * r + c1 * r * flow + c2 * flow * flow)

    def torque(self, speed: Any, flow: Any, density: Any) -> Any:
        """Shaft torque (hydraulic plus bearing friction). [N*m]

        Parameters
        ----------
        speed : float or array
            Pump speed. [rad/s]
        flow : float or array
            Flow. [m**3/s]
        density : float
            Liquid density. [kg/m**3]
        """
        r = speed / self.speed
        c0, c1, c2 = self.curve.power_coefficients
        return density * (c0 * r * r + c1 * r * flow + c2 * flow * flow) / self.speed + self.b * speed

    def efficiency(self, speed: Any, flow: Any) -> Any:
        """Hydraulic efficiency rho g Q H / P at ``speed`` [rad/s], ``flow`` [m**3/s]. [-]"""
        return STANDARD_GRAVITY * flow * self.head(speed, flow) / self.shaft_power_per_density(speed, flow)

    def speed_ratio_for(self, flow: Any, head: Any) -> Any:
        """Speed ratio r = w / w0 at which the pump gives ``head`` [m] at ``flow`` [m**3/s]. [-]

        The positive root of ``a0 r**2 + a1 Q r + a2 Q**2 - H = 0``; NaN where
        the pump cannot give that head at any speed.
        """
        a0, a1, a2 = self.curve.head_coefficients
        disc = (a1 * flow) ** 2 - 4.0 * a0 * (a2 * flow * flow - head)
        with np.errstate(invalid="ignore"):
            return (-a1 * flow + np.sqrt(disc)) / (2.0 * a0)

    def curve_end_flow(self, speed: Any) -> Any:
        """Last flow of the maker's curve scaled to ``speed`` [rad/s]. [m**3/s]"""
        return self.curve.max_flow * speed / self.speed

    def min_flow(self, speed: Any) -> Any:
        """Minimum continuous flow scaled to ``speed`` [rad/s] by affinity; NaN if not given. [m**3/s]"""
        if self.curve.min_flow is None:
            return math.nan
        return self.curve.min_flow * speed / self.speed
