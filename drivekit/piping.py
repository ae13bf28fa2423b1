"""Pipes: friction (Darcy-Weisbach with Colebrook), minor losses, static head, inertance."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from typing import Any

import numba
import numpy as np

from .constants import STANDARD_GRAVITY
from .fluid import Fluid
from .units import convert_fields, param

__all__ = ["LAMINAR_LIMIT", "TURBULENT_LIMIT", "Pipe", "colebrook", "friction_factor"]

#: Reynolds number below which flow is taken as laminar [-]. Common practice
#: (White, *Fluid Mechanics*, 7th ed., §6.2 gives Re_crit about 2300; 2000 is
#: the conservative value many handbooks use), no single source.
LAMINAR_LIMIT = 2000.0
#: Reynolds number above which Colebrook is used unblended [-]. Common
#: practice, no source (the Moody chart's "critical zone" ends near 4000).
TURBULENT_LIMIT = 4000.0

_LN10 = math.log(10.0)


def colebrook(reynolds: Any, relative_roughness: Any) -> Any:
    """Darcy friction factor of turbulent pipe flow by the Colebrook equation.

    .. math:: \\frac{1}{\\sqrt f} = -2 \\log_{10}\\left(\\frac{\\varepsilon/D}{3.7}
              + \\frac{2.51}{Re \\sqrt f}\\right)

    Parameters
    ----------
    reynolds : float or array
        Reynolds number, > 0. [-]
    relative_roughness : float or array
        Roughness over diameter, epsilon/D, >= 0. [-]

    Returns
    -------
    float or array
        Darcy friction factor f. [-]

    Notes
    -----
    Solved to machine precision by Newton's method on x = 1/sqrt(f), started
    from Haaland's explicit formula (White, *Fluid Mechanics*, 7th ed.,
    §6.7, from memory); four iterations are ample from that start. Valid for turbulent
    flow (Re > 4000).

    References
    ----------
    C. F. Colebrook, "Turbulent flow in pipes, with particular reference to
    the transition region between the smooth and rough pipe laws",
    J. Inst. Civil Eng. 11 (1939) 133-156.

    Examples
    --------
    Re = 1e5 and epsilon/D = 1e-4 (read about 0.0185 off the Moody chart,
    White, *Fluid Mechanics*, 7th ed., Fig. 6.13, from memory):

    >>> round(float(colebrook(1e5, 1e-4)), 4)
    0.0185
    """
    f = _colebrook(np.asarray(reynolds, dtype=float), np.asarray(relative_roughness, dtype=float))
    return f if np.ndim(f) else float(f)


@numba.njit(cache=True, nogil=True)
def _colebrook_one(re: float, rel: float) -> float:
    a = rel / 3.7
    b = 2.51 / re
    # Haaland's explicit start
    x = -1.8 * math.log10(a**1.11 + 6.9 / re)
    for _ in range(4):
        arg = a + b * x
        fx = x + 2.0 * math.log10(arg)
        dfx = 1.0 + 2.0 * b / (arg * _LN10)
        x = x - fx / dfx
    return 1.0 / (x * x)


@numba.vectorize(["float64(float64, float64)"], cache=True)
def _colebrook(re: float, rel: float) -> float:
    return _colebrook_one(re, rel)


@numba.vectorize(["float64(float64, float64)"], cache=True)
def _friction_factor(re: float, rel: float) -> float:
    re = max(re, 1e-12)
    if re >= TURBULENT_LIMIT:
        return _colebrook_one(re, rel)
    if re < LAMINAR_LIMIT:
        return 64.0 / re
    edge = 64.0 / LAMINAR_LIMIT
    return edge + (re - LAMINAR_LIMIT) / (TURBULENT_LIMIT - LAMINAR_LIMIT) * (
        _colebrook_one(TURBULENT_LIMIT, rel) - edge
    )


def friction_factor(reynolds: Any, relative_roughness: Any) -> Any:
    """Darcy friction factor over all flow regimes.

    Laminar ``f = 64/Re`` below :data:`LAMINAR_LIMIT`, Colebrook above
    :data:`TURBULENT_LIMIT`, and a linear blend in Re between them so the
    friction curve is continuous (the transition zone is uncertain in any
    case; the blend is common practice, no source).

    Parameters
    ----------
    reynolds : float or array
        Reynolds number, > 0. [-]
    relative_roughness : float or array
        Roughness over diameter, epsilon/D. [-]

    Returns
    -------
    float or array
        Darcy friction factor. [-]

    References
    ----------
    White, *Fluid Mechanics*, 7th ed., §6.4 (laminar, f = 64/Re) and §6.7
    (Colebrook, Moody chart).

    Examples
    --------
    >>> friction_factor(1000.0, 0.0)
    0.064
    """
    f = _friction_factor(np.asarray(reynolds, dtype=float), np.asarray(relative_roughness, dtype=float))
    return f if np.ndim(f) else float(f)


@dataclasses.dataclass(frozen=True, kw_only=True)
class Pipe:
    """A straight run of round pipe with its fittings and the lift it makes.

    Parameters
    ----------
    length : float, Quantity or str
        Pipe length. [m]
    diameter : float, Quantity or str
        Inside diameter. [m]
    roughness : float, Quantity or str
        Absolute wall roughness epsilon. [m] Default 0.045 mm, commercial
        steel (Moody, Trans. ASME 66 (1944); White, *Fluid Mechanics*, 7th ed.,
        Table 6.1, from memory).
    static_head : float, Quantity or str
        Rise in liquid level (or pressure head) from the inlet to the outlet of
        this run that the pump must lift, may be negative. [m]
    minor_loss : float
        Sum of the loss coefficients K of the fittings, valves, entry and exit
        in this run, based on this pipe's velocity. [-]
    name : str
        Label for reports.

    Notes
    -----
    Head loss by Darcy-Weisbach, ``h = (f L / D + sum K) v**2 / (2 g)``
    (White, *Fluid Mechanics*, 7th ed., §6.4 and §6.9, from memory), with f from
    :func:`friction_factor`. The liquid column is taken as incompressible and
    the pipe as rigid for the flow dynamics, which then have the inertance
    ``rho L / A`` (see :attr:`inertance`); pressure waves are treated in
    :mod:`drivekit.surge`.
    """

    length: Any = param("m", "pipe length", minimum=0.0, include_minimum=False)
    diameter: Any = param("m", "inside diameter", minimum=0.0, include_minimum=False)
    roughness: Any = param("m", "wall roughness", default=0.045e-3, minimum=0.0)
    static_head: Any = param("m", "static head", default=0.0)
    minor_loss: Any = param("", "sum of minor loss coefficients K", default=0.0, minimum=0.0)
    name: str = "pipe"

    def __post_init__(self) -> None:
        convert_fields(self)

    @property
    def area(self) -> Any:
        """Flow area A = pi D**2 / 4. [m**2]"""
        return math.pi * self.diameter**2 / 4.0

    def inertance(self, fluid: Fluid) -> Any:
        """Fluid inertance of the run, I = rho L / A. [kg/m**4]

        Parameters
        ----------
        fluid : Fluid
            The liquid in the pipe.

        Returns
        -------
        float
            Pressure per rate of change of volume flow, so that
            ``dp = I dQ/dt``. [kg/m**4] = [Pa/(m**3/s**2)]

        References
        ----------
        Wylie & Streeter, *Fluid Transients in Systems*, 1993, §1 (rigid
        column); the electrical analogy of pipe inertance.
        """
        return fluid.density * self.length / self.area

    def velocity(self, flow: Any) -> Any:
        """Mean velocity v = Q / A. [m/s] for ``flow`` [m**3/s]."""
        return flow / self.area

    def reynolds(self, flow: Any, fluid: Fluid) -> Any:
        """Reynolds number rho |v| D / mu. [-] for ``flow`` [m**3/s]."""
        return fluid.density * np.abs(self.velocity(flow)) * self.diameter / fluid.viscosity

    def friction_head(self, flow: Any, fluid: Fluid) -> Any:
        """Head lost to wall friction and fittings, signed with the flow. [m]

        Parameters
        ----------
        flow : float or array
            Volume flow. [m**3/s]
        fluid : Fluid
            The liquid.

        Returns
        -------
        float or array
            ``(f L/D + sum K) v |v| / (2 g)``. [m]
        """
        v = self.velocity(flow)
        f = friction_factor(self.reynolds(flow, fluid), self.roughness / self.diameter)
        return (f * self.length / self.diameter + self.minor_loss) * v * np.abs(v) / (2.0 * STANDARD_GRAVITY)


def line_friction_head(pipes: Sequence[Pipe], flow: Any, fluid: Fluid) -> Any:
    """Friction head of pipes in series at a flow. [m] for ``flow`` [m**3/s]."""
    total = 0.0
    for p in pipes:
        total = total + p.friction_head(flow, fluid)
    return total


def line_static_head(pipes: Sequence[Pipe]) -> float:
    """Static head of pipes in series. [m]"""
    return sum(p.static_head for p in pipes)


def line_inertance_head(pipes: Sequence[Pipe]) -> float:
    """Sum of L / (g A) over pipes in series, head per rate of change of flow. [s**2/m**2]

    Multiplying by rho g gives the inertance rho L / A in [kg/m**4].
    """
    return sum(p.length / (STANDARD_GRAVITY * p.area) for p in pipes)
