"""Physical constants used across drivekit (SI)."""

#: Standard acceleration of gravity [m/s**2]. Source: 3rd CGPM (1901), as
#: adopted in ISO 80000-3:2019.
STANDARD_GRAVITY = 9.80665

#: Density of water at 4 degC used as the specific-gravity reference [kg/m**3].
#: Source: the conventional reference for specific gravity of liquids.
WATER_REFERENCE_DENSITY = 1000.0
