"""Settling slurries: Durand's deposition (limit) velocity and a check of the pipe velocity over the flow range.

Below the deposition velocity, solids settle and form a bed on the pipe
invert; friction rises, the bed can grow and the line can block. A flow loop
on a slurry line must therefore keep the velocity above this limit with a
margin at every flow it can reach, not only at the design flow.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from .constants import STANDARD_GRAVITY
from .piping import Pipe
from .units import ParameterError, ParamSpec, to_si

__all__ = [
    "DURAND_CONCENTRATIONS",
    "DURAND_FL",
    "DURAND_PARTICLE_SIZES",
    "DepositionCheck",
    "deposition_check",
    "deposition_velocity",
    "durand_coefficient",
    "volume_fraction",
]

#: Particle sizes of the :data:`DURAND_FL` table. [m]
DURAND_PARTICLE_SIZES = np.array([0.1e-3, 0.2e-3, 0.4e-3, 0.6e-3, 1.0e-3, 2.0e-3])
#: Solids concentrations by volume of the :data:`DURAND_FL` table. [-]
DURAND_CONCENTRATIONS = np.array([0.02, 0.05, 0.10, 0.15])
#: Durand's coefficient F_L (rows: particle size, columns: concentration),
#: approximate values read from Durand's chart for closely graded sand
#: (R. Durand and E. Condolios, 1952, as reproduced in B. E. A. Abulnaga,
#: *Slurry Systems Handbook*, McGraw-Hill, 2002, Ch. 4; from memory, to
#: about +-0.1). F_L rises with size and flattens above about 1 mm.
DURAND_FL = np.array(
    [
        [0.48, 0.56, 0.64, 0.70],
        [0.75, 0.85, 0.93, 0.98],
        [0.98, 1.08, 1.16, 1.22],
        [1.07, 1.18, 1.26, 1.31],
        [1.12, 1.23, 1.30, 1.34],
        [1.14, 1.25, 1.31, 1.35],
    ]
)

#: Default velocity margin above the deposition velocity. [-] Common practice, no source.
DEFAULT_MARGIN = 0.2


def volume_fraction(solids_sg: Any, solids_by_weight: Any, *, liquid_sg: Any = 1.0) -> float:
    """Solids concentration by volume from the concentration by weight.

    .. math:: C_v = \\frac{C_w / S_s}{C_w / S_s + (1 - C_w) / S_l}

    Parameters
    ----------
    solids_sg : float
        Specific gravity of the solids S_s. [-]
    solids_by_weight : float
        Concentration by weight C_w, a fraction. [-]
    liquid_sg : float
        Specific gravity of the carrier liquid S_l. [-]

    Returns
    -------
    float
        C_v. [-]

    Notes
    -----
    A mass balance (volumes add), consistent with
    :func:`drivekit.fluid.slurry_specific_gravity`.

    Examples
    --------
    >>> round(volume_fraction(2.65, 0.40), 3)
    0.201
    """
    ss = to_si(solids_sg, "solids_sg", ParamSpec("", "specific gravity of solids", minimum=0.0, include_minimum=False))
    cw = to_si(
        solids_by_weight, "solids_by_weight", ParamSpec("", "solids fraction by weight", minimum=0.0, maximum=0.999)
    )
    sl = to_si(liquid_sg, "liquid_sg", ParamSpec("", "specific gravity of liquid", minimum=0.0, include_minimum=False))
    return (cw / ss) / (cw / ss + (1.0 - cw) / sl)


def durand_coefficient(particle_size: Any, concentration: Any) -> float:
    """Durand's coefficient F_L from the chart, interpolated (approximate).

    Parameters
    ----------
    particle_size : float, Quantity or str
        Particle size, the d50 of a closely graded solid. [m]
    concentration : float
        Solids concentration by volume C_v, a fraction. [-]

    Returns
    -------
    float
        F_L. [-]

    Notes
    -----
    Linear interpolation in log(size) and in concentration in
    :data:`DURAND_FL`; outside the table the nearest edge value is used
    (F_L is flat above about 1 mm; below 0.1 mm the slurry tends to be
    non-settling and Durand's correlation does not apply). Approximate: the
    chart is read to about +-0.1.

    References
    ----------
    R. Durand and E. Condolios, "Étude expérimentale du refoulement des
    matériaux en conduite", 2e Journées de l'Hydraulique, SHF, Grenoble,
    1952 (from memory); chart as reproduced in B. E. A. Abulnaga, *Slurry
    Systems Handbook*, McGraw-Hill, 2002, Ch. 4 (from memory).

    Examples
    --------
    >>> durand_coefficient(1.0e-3, 0.10)
    1.3
    """
    d = to_si(particle_size, "particle_size", ParamSpec("m", "particle size", minimum=0.0, include_minimum=False))
    cv = to_si(concentration, "concentration", ParamSpec("", "solids fraction by volume", minimum=0.0, maximum=0.6))
    x = np.log(np.clip(d, DURAND_PARTICLE_SIZES[0], DURAND_PARTICLE_SIZES[-1]))
    by_size = [np.interp(x, np.log(DURAND_PARTICLE_SIZES), DURAND_FL[:, j]) for j in range(len(DURAND_CONCENTRATIONS))]
    return float(np.interp(cv, DURAND_CONCENTRATIONS, by_size))


def deposition_velocity(
    diameter: Any,
    particle_size: Any,
    solids_sg: Any,
    concentration: Any,
    *,
    liquid_sg: Any = 1.0,
    coefficient: Any = None,
) -> float:
    """Durand's deposition (limit) velocity V_D = F_L sqrt(2 g D (S_s/S_l - 1)).

    Parameters
    ----------
    diameter : float, Quantity or str
        Inside diameter of the pipe D. [m]
    particle_size : float, Quantity or str
        Particle size d50. [m]
    solids_sg : float
        Specific gravity of the solids S_s. [-]
    concentration : float
        Solids concentration by volume C_v. [-]
    liquid_sg : float
        Specific gravity of the carrier liquid S_l. [-]
    coefficient : float, optional
        F_L to use instead of the chart value (e.g. from a test loop). [-]

    Returns
    -------
    float
        V_D. [m/s]

    Notes
    -----
    For settling slurries of fairly uniform particles in horizontal pipes; an
    approximate value (the chart is read to about +-0.1 in F_L, and later
    correlations give other values for wide size distributions and large
    pipes). Test-loop data for the actual solids are better.

    References
    ----------
    R. Durand, "Basic relationships of the transportation of solids in pipes
    - experimental research", Proc. Minnesota Int. Hydraulics Conf., 1953,
    89-103 (from memory); see also :func:`durand_coefficient`.

    Examples
    --------
    Sand (S_s = 2.65) in water in a 254.5 mm pipe with F_L = 1.3:

    >>> round(deposition_velocity(0.2545, 0.5e-3, 2.65, 0.10, coefficient=1.3), 2)
    3.73
    """
    d = to_si(diameter, "diameter", ParamSpec("m", "inside diameter", minimum=0.0, include_minimum=False))
    ss = to_si(solids_sg, "solids_sg", ParamSpec("", "specific gravity of solids", minimum=0.0, include_minimum=False))
    sl = to_si(liquid_sg, "liquid_sg", ParamSpec("", "specific gravity of liquid", minimum=0.0, include_minimum=False))
    if ss <= sl:
        raise ParameterError(f"`solids_sg`: got {ss:g}, expected solids heavier than the liquid (SG > {sl:g})")
    if coefficient is None:
        fl = durand_coefficient(particle_size, concentration)
    else:
        fl = to_si(
            coefficient, "coefficient", ParamSpec("", "Durand coefficient F_L", minimum=0.0, include_minimum=False)
        )
    return fl * math.sqrt(2.0 * STANDARD_GRAVITY * d * (ss / sl - 1.0))


@dataclasses.dataclass(frozen=True, eq=False)
class DepositionCheck:
    """Pipe velocity against the deposition velocity over a range of flows.

    Attributes
    ----------
    flows : numpy.ndarray
        Flows checked. [m**3/s]
    velocities : numpy.ndarray
        Mean pipe velocity at each flow. [m/s]
    deposition_velocity : float
        Durand's V_D. [m/s]
    coefficient : float
        F_L used. [-]
    margin : float
        Required margin: velocity >= (1 + margin) V_D. [-]
    ok : numpy.ndarray of bool
        Whether each flow keeps the margin.
    minimum_flow : float
        Lowest flow that keeps the margin. [m**3/s]
    cautions : tuple of str
        Plain warnings.
    """

    flows: np.ndarray
    velocities: np.ndarray
    deposition_velocity: float
    coefficient: float
    margin: float
    ok: np.ndarray
    minimum_flow: float
    cautions: tuple[str, ...]

    @property
    def all_ok(self) -> bool:
        """True when every flow checked keeps the margin."""
        return bool(np.all(self.ok))

    def table(self) -> list[tuple[float, float, float, str]]:
        """Rows (flow [m**3/h], velocity [m/s], velocity / V_D [-], verdict)."""
        return [
            (q * 3600.0, v, v / self.deposition_velocity, "ok" if good else "too slow: solids may settle")
            for q, v, good in zip(self.flows, self.velocities, self.ok, strict=True)
        ]

    def to_frame(self) -> Any:
        """:meth:`table` as a pandas DataFrame."""
        import pandas as pd

        cols = ["flow [m3/h]", "velocity [m/s]", "velocity / V_D [-]", "verdict"]
        return pd.DataFrame(self.table(), columns=cols)


def deposition_check(
    pipe: Pipe,
    flows: Any,
    *,
    particle_size: Any,
    solids_sg: Any,
    concentration: Any,
    liquid_sg: Any = 1.0,
    margin: float = DEFAULT_MARGIN,
    coefficient: Any = None,
) -> DepositionCheck:
    """Check the pipe velocity at each flow the loop can reach against Durand's deposition velocity.

    Parameters
    ----------
    pipe : Pipe
        The pipe (inside diameter used).
    flows : array, Quantity or list of str
        Flows to check, e.g. from the lowest to the highest the loop can
        reach. [m**3/s]
    particle_size : float, Quantity or str
        Particle size d50. [m]
    solids_sg : float
        Specific gravity of the solids. [-]
    concentration : float
        Solids concentration by volume (see :func:`volume_fraction`). [-]
    liquid_sg : float
        Specific gravity of the carrier liquid. [-]
    margin : float
        Required velocity margin above V_D, as a fraction. [-] Default 0.2
        (common practice, no source).
    coefficient : float, optional
        F_L to use instead of the chart. [-]

    Returns
    -------
    DepositionCheck

    References
    ----------
    See :func:`deposition_velocity`.
    """
    if isinstance(flows, (list, tuple)) and flows and isinstance(flows[0], str):
        flows = [to_si(q, "flows", ParamSpec("m**3/s", "flow")) for q in flows]
    q = np.atleast_1d(to_si(flows, "flows", ParamSpec("m**3/s", "flow", minimum=0.0))).astype(float)
    if not 0.0 <= margin < 5.0:
        raise ParameterError(f"`margin`: got {margin!r}, expected a fraction between 0 and 5")
    fl = durand_coefficient(particle_size, concentration) if coefficient is None else float(coefficient)
    vd = deposition_velocity(
        pipe.diameter, particle_size, solids_sg, concentration, liquid_sg=liquid_sg, coefficient=fl
    )
    v = q / pipe.area
    ok = v >= (1.0 + margin) * vd
    q_min = (1.0 + margin) * vd * pipe.area
    cautions = [
        "Durand's deposition velocity is approximate; test-loop data for the actual solids are better",
    ]
    if not np.all(ok):
        cautions.append(
            f"below {q_min * 3600:.4g} m3/h the velocity is within {margin:.0%} of the deposition velocity "
            f"{vd:.3g} m/s or under it: solids settle, friction rises and the line can block; set the flow "
            "controller's low limit (and the drive's minimum speed) above it, and flush the line before stopping"
        )
    return DepositionCheck(q, v, vd, fl, margin, ok, q_min, tuple(cautions))
