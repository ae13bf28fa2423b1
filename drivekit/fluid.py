"""The pumped liquid: density from specific gravity, and viscosity."""

from __future__ import annotations

import dataclasses
from typing import Any

from .constants import WATER_REFERENCE_DENSITY
from .units import ParamSpec, convert_fields, param, to_si

__all__ = ["Fluid", "slurry_specific_gravity"]


@dataclasses.dataclass(frozen=True, kw_only=True)
class Fluid:
    """A Newtonian liquid (water, or a slurry treated as an equivalent liquid).

    Parameters
    ----------
    sg : float, Quantity or str
        Specific gravity, density relative to water at 4 degC. [-]
        Default 0.998: water at 20 degC (White, *Fluid Mechanics*, 7th ed.,
        Table A.1: 998 kg/m**3; from memory).
    viscosity : float, Quantity or str
        Dynamic viscosity. [Pa*s] Default 1.002e-3: water at 20 degC
        (White, *Fluid Mechanics*, 7th ed., Table A.1; from memory).
    name : str
        Label for reports.

    Notes
    -----
    A settling slurry is not a Newtonian liquid; treating it as one with the
    mixture density is the usual first estimate for head and power (common
    practice, no source). Its friction in the pipe is then only approximate;
    deposition at low velocity is checked separately.

    Examples
    --------
    >>> Fluid().density
    998.0
    >>> round(Fluid(sg=1.4).density, 1)
    1400.0
    """

    sg: Any = param("", "specific gravity", default=0.998, minimum=0.0, include_minimum=False, maximum=25.0)
    viscosity: Any = param("Pa*s", "dynamic viscosity", default=1.002e-3, minimum=0.0, include_minimum=False)
    name: str = "water at 20 degC"

    def __post_init__(self) -> None:
        convert_fields(self)

    @property
    def density(self) -> Any:
        """Density [kg/m**3]."""
        return self.sg * WATER_REFERENCE_DENSITY

    @classmethod
    def slurry(
        cls,
        solids_sg: Any,
        solids_by_weight: Any,
        *,
        liquid_sg: Any = 1.0,
        viscosity: Any = 1.002e-3,
        name: str = "slurry",
    ) -> Fluid:
        """A slurry as an equivalent liquid of the mixture's specific gravity.

        Parameters
        ----------
        solids_sg : float
            Specific gravity of the dry solids. [-]
        solids_by_weight : float
            Solids concentration by weight, as a fraction (0.3 = 30 %). [-]
        liquid_sg : float
            Specific gravity of the carrier liquid. [-]
        viscosity : float, Quantity or str
            Apparent dynamic viscosity of the slurry. [Pa*s]
        name : str
            Label for reports.

        Returns
        -------
        Fluid
        """
        sg = slurry_specific_gravity(solids_sg, solids_by_weight, liquid_sg=liquid_sg)
        return cls(sg=sg, viscosity=viscosity, name=name)


def slurry_specific_gravity(solids_sg: Any, solids_by_weight: Any, *, liquid_sg: Any = 1.0) -> float:
    """Specific gravity of a slurry from its solids concentration by weight.

    .. math:: S_m = \\frac{1}{C_w / S_s + (1 - C_w) / S_l}

    Parameters
    ----------
    solids_sg : float
        Specific gravity of the solids S_s. [-]
    solids_by_weight : float
        Concentration of solids by weight C_w, a fraction in [0, 1). [-]
    liquid_sg : float
        Specific gravity of the carrier liquid S_l. [-]

    Returns
    -------
    float
        Mixture specific gravity S_m. [-]

    Notes
    -----
    A mass balance of solids and liquid (volumes add). The formula is the one
    printed in slurry pump application guides (from memory; it follows from
    the definition of C_w in any case).

    Examples
    --------
    Silica sand (S_s = 2.65) at 40 % by weight in water:

    >>> round(slurry_specific_gravity(2.65, 0.40), 3)
    1.332
    """
    ss = to_si(solids_sg, "solids_sg", ParamSpec("", "specific gravity of solids", minimum=0.0, include_minimum=False))
    cw = to_si(
        solids_by_weight,
        "solids_by_weight",
        ParamSpec("", "solids fraction by weight", minimum=0.0, maximum=0.999),
    )
    sl = to_si(liquid_sg, "liquid_sg", ParamSpec("", "specific gravity of liquid", minimum=0.0, include_minimum=False))
    return 1.0 / (cw / ss + (1.0 - cw) / sl)
