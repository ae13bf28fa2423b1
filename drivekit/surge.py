"""Water hammer: pressure-wave speed in a pipe, the pipe period and the pressure rise of a flow change.

A flow change made faster than the pipe period 2L/a (the time a pressure wave
takes to run to the far end and back) meets the full Joukowsky rise
dp = rho a dv; slower changes give less, estimated here by Michaud's formula.
These are screening numbers for choosing drive ramps and valve strokes. They
do not replace a transient analysis.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

from .fluid import Fluid
from .piping import Pipe
from .units import ParameterError, ParamSpec, to_si

__all__ = [
    "PIPE_MATERIALS",
    "WATER_BULK_MODULUS",
    "PipeMaterial",
    "SurgeCheck",
    "joukowsky_rise",
    "michaud_rise",
    "pipe_period",
    "restraint_factor",
    "surge_check",
    "wave_speed",
]

#: Bulk modulus of water at 20 degC. [Pa] Source: White, *Fluid Mechanics*,
#: 7th ed., Table A.5 (2.19e9 N/m**2; from memory).
WATER_BULK_MODULUS = 2.19e9

#: Below this D/e the thin-walled formula is outside its range (Wylie &
#: Streeter, *Fluid Transients in Systems*, 1993, §2.6: thin walls D/e > 25).
THIN_WALL_LIMIT = 25.0


@dataclasses.dataclass(frozen=True)
class PipeMaterial:
    """Elastic properties of a pipe wall material.

    Attributes
    ----------
    name : str
        Material.
    youngs_modulus : float
        Young's modulus E. [Pa]
    poisson_ratio : float
        Poisson's ratio. [-]
    source : str
        Where the values come from.
    """

    name: str
    youngs_modulus: float
    poisson_ratio: float
    source: str


_WS = "Wylie & Streeter, Fluid Transients in Systems, 1993, Table 2.1 (from memory)"
_PLASTIC = (
    "typical short-term value (from memory); plastics vary with grade, temperature and load time: "
    "use the pipe maker's figure"
)

#: Typical wall materials. Young's moduli and Poisson's ratios as cited in each entry.
PIPE_MATERIALS: dict[str, PipeMaterial] = {
    "steel": PipeMaterial("steel", 207e9, 0.30, _WS),
    "ductile iron": PipeMaterial("ductile iron", 172e9, 0.28, _WS),
    "cast iron": PipeMaterial("cast iron", 100e9, 0.25, _WS + "; grey iron ranges 80-170 GPa"),
    "copper": PipeMaterial("copper", 117e9, 0.34, _WS),
    "concrete": PipeMaterial("concrete", 25e9, 0.15, _WS + "; 14-30 GPa"),
    "PVC": PipeMaterial("PVC", 3.0e9, 0.45, "unplasticised PVC, " + _PLASTIC),
    "HDPE": PipeMaterial("HDPE", 0.9e9, 0.46, "PE80/PE100, " + _PLASTIC),
}

_RESTRAINTS = ("anchored upstream", "anchored", "expansion joints")


def _material(material: str | PipeMaterial) -> PipeMaterial:
    if isinstance(material, PipeMaterial):
        return material
    if material not in PIPE_MATERIALS:
        raise ParameterError(
            f"`material`: got {material!r}, expected a PipeMaterial or one of {sorted(PIPE_MATERIALS)}"
        )
    return PIPE_MATERIALS[material]


def restraint_factor(restraint: str, poisson_ratio: float) -> float:
    """Pipe restraint factor c1 of a thin-walled pipe.

    Parameters
    ----------
    restraint : {"anchored upstream", "anchored", "expansion joints"}
        ``"anchored upstream"``: anchored at the upstream end only,
        c1 = 1 - mu/2; ``"anchored"``: anchored throughout against axial
        movement, c1 = 1 - mu**2; ``"expansion joints"``: expansion joints
        throughout, c1 = 1. [-]
    poisson_ratio : float
        Poisson's ratio mu of the wall. [-]

    Returns
    -------
    float
        c1. [-]

    References
    ----------
    E. B. Wylie and V. L. Streeter, *Fluid Transients in Systems*,
    Prentice Hall, 1993, §2.6 (from memory).

    Examples
    --------
    >>> round(restraint_factor("anchored", 0.30), 2)
    0.91
    """
    if restraint == "anchored upstream":
        return 1.0 - poisson_ratio / 2.0
    if restraint == "anchored":
        return 1.0 - poisson_ratio**2
    if restraint == "expansion joints":
        return 1.0
    raise ParameterError(f"`restraint`: got {restraint!r}, expected one of {', '.join(map(repr, _RESTRAINTS))}")


def wave_speed(
    diameter: Any,
    wall_thickness: Any,
    material: str | PipeMaterial = "steel",
    *,
    restraint: str = "anchored",
    bulk_modulus: Any = WATER_BULK_MODULUS,
    density: Any = 998.0,
) -> float:
    """Speed of a pressure wave in a liquid-filled elastic pipe (Korteweg's formula).

    .. math:: a = \\sqrt{\\frac{K/\\rho}{1 + c_1 K D / (E e)}}

    Parameters
    ----------
    diameter : float, Quantity or str
        Inside diameter D. [m]
    wall_thickness : float, Quantity or str
        Wall thickness e. [m]
    material : str or PipeMaterial
        Wall material, a key of :data:`PIPE_MATERIALS` or your own values.
    restraint : str
        How the pipe is held axially, see :func:`restraint_factor`. [-]
    bulk_modulus : float, Quantity or str
        Bulk modulus K of the liquid. [Pa] Default: water at 20 degC.
    density : float, Quantity or str
        Liquid density rho. [kg/m**3] Default: water at 20 degC.

    Returns
    -------
    float
        Wave speed a. [m/s]

    Notes
    -----
    Thin-walled elastic pipe (D/e > 25) full of liquid without free gas. A
    little entrained air lowers the wave speed a lot; so does a soft lining.

    References
    ----------
    E. B. Wylie and V. L. Streeter, *Fluid Transients in Systems*,
    Prentice Hall, 1993, §2.6, Eq. 2.6.x (Korteweg's formula; from memory).

    Examples
    --------
    DN250 steel, 6.35 mm wall, anchored throughout:

    >>> round(wave_speed(0.2545, 0.00635))
    1258
    """
    d = to_si(diameter, "diameter", ParamSpec("m", "inside diameter", minimum=0.0, include_minimum=False))
    e = to_si(wall_thickness, "wall_thickness", ParamSpec("m", "wall thickness", minimum=0.0, include_minimum=False))
    k = to_si(bulk_modulus, "bulk_modulus", ParamSpec("Pa", "bulk modulus", minimum=0.0, include_minimum=False))
    rho = to_si(density, "density", ParamSpec("kg/m**3", "density", minimum=0.0, include_minimum=False))
    m = _material(material)
    c1 = restraint_factor(restraint, m.poisson_ratio)
    return math.sqrt((k / rho) / (1.0 + c1 * k * d / (m.youngs_modulus * e)))


def pipe_period(length: Any, speed: Any) -> float:
    """Pipe period 2L/a: the round trip of a pressure wave. [s]

    Parameters
    ----------
    length : float, Quantity or str
        Pipe length L. [m]
    speed : float, Quantity or str
        Wave speed a. [m/s]

    References
    ----------
    Wylie & Streeter, *Fluid Transients in Systems*, 1993, §1.3 (from memory).
    """
    length = to_si(length, "length", ParamSpec("m", "pipe length", minimum=0.0, include_minimum=False))
    a = to_si(speed, "speed", ParamSpec("m/s", "wave speed", minimum=0.0, include_minimum=False))
    return 2.0 * length / a


def joukowsky_rise(density: Any, speed: Any, velocity_change: Any) -> float:
    """Joukowsky pressure rise dp = rho a |dv| of a sudden velocity change. [Pa]

    Parameters
    ----------
    density : float, Quantity or str
        Liquid density rho. [kg/m**3]
    speed : float, Quantity or str
        Wave speed a. [m/s]
    velocity_change : float, Quantity or str
        Change of the mean velocity dv. [m/s]

    References
    ----------
    N. Joukowsky, "Über den hydraulischen Stoss in Wasserleitungsröhren",
    Mém. Acad. Imp. Sci. St.-Pétersbourg 9 (1900) (from memory); Wylie &
    Streeter, *Fluid Transients in Systems*, 1993, §1.1.

    Examples
    --------
    >>> round(joukowsky_rise(1000.0, 1000.0, 1.0) / 1e5, 1)  # bar
    10.0
    """
    rho = to_si(density, "density", ParamSpec("kg/m**3", "density", minimum=0.0, include_minimum=False))
    a = to_si(speed, "speed", ParamSpec("m/s", "wave speed", minimum=0.0, include_minimum=False))
    dv = to_si(velocity_change, "velocity_change", ParamSpec("m/s", "velocity change"))
    return rho * a * abs(dv)


def michaud_rise(density: Any, length: Any, velocity_change: Any, change_time: Any) -> float:
    """Michaud's estimate dp = 2 rho L |dv| / t_c for a change slower than the pipe period. [Pa]

    Parameters
    ----------
    density : float, Quantity or str
        Liquid density rho. [kg/m**3]
    length : float, Quantity or str
        Pipe length L. [m]
    velocity_change : float, Quantity or str
        Change of the mean velocity dv. [m/s]
    change_time : float, Quantity or str
        Time the change takes (valve stroke, drive ramp) t_c. [s]

    Notes
    -----
    An estimate for a linear velocity change with t_c >= 2L/a; it equals
    the Joukowsky rise at t_c = 2L/a. Real valves close most of the flow in
    the last part of their stroke, so the rise may be larger.

    References
    ----------
    J. Michaud, "Coups de bélier dans les conduites. Étude des moyens employés
    pour en atténuer les effets", Bull. Soc. Vaudoise Ing. Arch. 4 (1878)
    (from memory); as given in M. H. Chaudhry, *Applied Hydraulic Transients*,
    3rd ed., Springer, 2014, §1 (from memory).
    """
    rho = to_si(density, "density", ParamSpec("kg/m**3", "density", minimum=0.0, include_minimum=False))
    length = to_si(length, "length", ParamSpec("m", "pipe length", minimum=0.0, include_minimum=False))
    dv = to_si(velocity_change, "velocity_change", ParamSpec("m/s", "velocity change"))
    tc = to_si(change_time, "change_time", ParamSpec("s", "change time", minimum=0.0, include_minimum=False))
    return 2.0 * rho * length * abs(dv) / tc


@dataclasses.dataclass(frozen=True)
class SurgeCheck:
    """Screening of a flow change for water hammer.

    Attributes
    ----------
    wave_speed : float
        Pressure-wave speed a. [m/s]
    pipe_period : float
        2L/a. [s]
    velocity_change : float
        Change of mean velocity. [m/s]
    change_time : float
        Time the change takes. [s]
    joukowsky_rise : float
        Full rise rho a dv (applies when the change is faster than 2L/a). [Pa]
    expected_rise : float
        Rise to expect: Joukowsky when fast, Michaud's estimate when slow. [Pa]
    fast : bool
        True when the change is faster than the pipe period.
    pressure_limit : float or None
        Allowed rise given by the user. [Pa]
    slowest_safe_time : float or None
        Change time at which Michaud's estimate equals the limit. [s]
    cautions : tuple of str
        Plain warnings.
    """

    wave_speed: float
    pipe_period: float
    velocity_change: float
    change_time: float
    joukowsky_rise: float
    expected_rise: float
    fast: bool
    pressure_limit: float | None
    slowest_safe_time: float | None
    cautions: tuple[str, ...]

    @property
    def ok(self) -> bool:
        """True when the change is slower than 2L/a and the expected rise is within the limit (if given)."""
        within = self.pressure_limit is None or self.expected_rise <= self.pressure_limit
        return (not self.fast) and within

    def table(self) -> list[tuple[str, float, str]]:
        """Rows (quantity, value, unit), pressures in bar."""
        rows = [
            ("wave speed", self.wave_speed, "m/s"),
            ("pipe period 2L/a", self.pipe_period, "s"),
            ("velocity change", self.velocity_change, "m/s"),
            ("change time", self.change_time, "s"),
            ("Joukowsky rise (sudden change)", self.joukowsky_rise / 1e5, "bar"),
            (
                "expected rise" + (" (Joukowsky)" if self.fast else " (Michaud estimate)"),
                self.expected_rise / 1e5,
                "bar",
            ),
        ]
        if self.pressure_limit is not None:
            rows.append(("allowed rise", self.pressure_limit / 1e5, "bar"))
        if self.slowest_safe_time is not None:
            rows.append(("shortest change time within the limit", self.slowest_safe_time, "s"))
        return rows


_DEFER = (
    "These are screening numbers. Local codes and licensed practice govern; near any limit, have a "
    "transient (water-hammer) analysis made by a qualified engineer."
)


def surge_check(
    pipe: Pipe,
    *,
    wall_thickness: Any,
    flow_change: Any,
    change_time: Any,
    material: str | PipeMaterial = "steel",
    restraint: str = "anchored",
    fluid: Fluid | None = None,
    bulk_modulus: Any = WATER_BULK_MODULUS,
    pressure_limit: Any = None,
) -> SurgeCheck:
    """Check a flow change in a pipe (a drive ramp, a valve stroke, a pump stop) for water hammer.

    Parameters
    ----------
    pipe : Pipe
        The pipe (length and inside diameter are used).
    wall_thickness : float, Quantity or str
        Wall thickness. [m]
    flow_change : float, Quantity or str
        Change of volume flow (sign ignored). [m**3/s]
    change_time : float, Quantity or str
        Time the change takes. [s]
    material : str or PipeMaterial
        Wall material, see :data:`PIPE_MATERIALS`.
    restraint : str
        Axial restraint, see :func:`restraint_factor`. [-]
    fluid : Fluid, optional
        The liquid (density used); water at 20 degC by default.
    bulk_modulus : float, Quantity or str
        Bulk modulus of the liquid. [Pa]
    pressure_limit : float, Quantity or str, optional
        Largest pressure rise allowed. [Pa]

    Returns
    -------
    SurgeCheck

    Notes
    -----
    A change faster than 2L/a gives the full Joukowsky rise; a slower one is
    estimated by Michaud's formula (an estimate: valve characteristics, pump
    run-down, column separation and reflections from branches are not
    modelled). The rise adds to the working pressure and a fall below it can
    drop to vapour pressure and part the column, which is often worse.

    References
    ----------
    E. B. Wylie and V. L. Streeter, *Fluid Transients in Systems*,
    Prentice Hall, 1993, Ch. 1-2 (from memory).
    """
    fluid = fluid or Fluid()
    dq = to_si(flow_change, "flow_change", ParamSpec("m**3/s", "flow change"))
    tc = to_si(change_time, "change_time", ParamSpec("s", "change time", minimum=0.0, include_minimum=False))
    e = to_si(wall_thickness, "wall_thickness", ParamSpec("m", "wall thickness", minimum=0.0, include_minimum=False))
    limit = to_si(
        pressure_limit, "pressure_limit", ParamSpec("Pa", "allowed pressure rise", minimum=0.0, optional=True)
    )
    a = wave_speed(pipe.diameter, e, material, restraint=restraint, bulk_modulus=bulk_modulus, density=fluid.density)
    period = pipe_period(pipe.length, a)
    dv = abs(dq) / pipe.area
    full = joukowsky_rise(fluid.density, a, dv)
    fast = tc < period
    rise = full if fast else michaud_rise(fluid.density, pipe.length, dv, tc)
    cautions = []
    if fast:
        cautions.append(
            f"the change ({tc:.3g} s) is faster than the pipe period 2L/a = {period:.3g} s: "
            f"the full Joukowsky rise of {full / 1e5:.3g} bar applies; lengthen the ramp or stroke"
        )
    else:
        cautions.append(
            f"the rise of {rise / 1e5:.3g} bar is Michaud's estimate for a steady change; it is an estimate"
        )
    safe = None
    if limit is not None:
        if full > limit:  # Michaud's estimate equals the limit at this time (> 2L/a)
            safe = 2.0 * fluid.density * pipe.length * dv / limit if limit > 0 else math.inf
        if rise > limit:
            cautions.append(f"the expected rise {rise / 1e5:.3g} bar exceeds the allowed {limit / 1e5:.3g} bar")
    if pipe.diameter / e < THIN_WALL_LIMIT:
        cautions.append(
            f"D/e = {pipe.diameter / e:.3g} is below {THIN_WALL_LIMIT:g}: a thick wall, where the thin-walled "
            "wave-speed formula is only approximate"
        )
    if fluid.sg > 1.05:
        cautions.append("a slurry: its bulk modulus and wave speed differ from water's; the default K is water's")
    cautions.append(_DEFER)
    return SurgeCheck(a, period, dv, tc, full, rise, fast, limit, safe, tuple(cautions))
