"""Demo scenarios. All plants, equipment and values here are invented, for examples and tests only.

* :func:`raw_water_pump` -- Marrow Creek raw-water pumping station (invented):
  pump set P-201 on a variable-speed drive lifts river water 18 m through
  650 m of 250 mm steel main to the clarifier inlet; a magnetic flow meter
  FT-201 on the main closes the flow loop FIC-201.
* :func:`quarry_conveyor` -- Tallow Hill quarry (invented): overland conveyor
  CV-3 driven through a gearbox with a flexible coupling; speed loop SIC-3.
* :func:`slurry_pump` -- the P-201 train pumping a dense tailings slurry
  (invented values) for sweeps over density.
"""

from __future__ import annotations

from .drives import VariableSpeedDrive
from .drivetrain import DriveTrain
from .fluid import Fluid
from .machines import Conveyor
from .motors import InductionMotor
from .piping import Pipe
from .pumps import CentrifugalPump, PumpCurve
from .sensors import FlowMeter, SpeedSensor
from .transmissions import Transmission

__all__ = ["RAW_WATER_FLOW_TARGET", "quarry_conveyor", "raw_water_pump", "slurry_pump"]

#: Design flow of the invented Marrow Creek station. [m**3/s] (380 m**3/h)
RAW_WATER_FLOW_TARGET = 380.0 / 3600.0


def raw_water_pump_stages() -> dict[str, object]:
    """The stages of the Marrow Creek P-201 train, by role (invented data)."""
    curve = PumpCurve(
        flow=["0 m**3/h", "150 m**3/h", "300 m**3/h", "450 m**3/h", "550 m**3/h"],
        head=["48 m", "46.5 m", "42 m", "34 m", "27 m"],
        efficiency=[0.0, 0.62, 0.80, 0.83, 0.78],
        min_flow="110 m**3/h",
        name="P-201 maker's curve at 1485 rpm (invented)",
    )
    return {
        "drive": VariableSpeedDrive(
            max_frequency="50 Hz",
            min_frequency="15 Hz",
            time_constant="0.05 s",
            ramp_time="20 s",
            reference="%",
            name="VSD-201",
        ),
        "motor": InductionMotor(
            rated_power="75 kW",
            rated_speed="1485 rpm",
            rated_frequency="50 Hz",
            poles=4,
            J="0.9 kg*m**2",
            rated_current="132 A",
            rated_power_factor=0.86,
            rated_efficiency=0.95,
            name="M-201",
        ),
        "pump": CentrifugalPump(curve=curve, speed="1485 rpm", J="1.1 kg*m**2", b="0.02 N*m*s/rad", name="P-201"),
        "pipe": Pipe(
            length="650 m",
            diameter="254.5 mm",
            roughness="0.045 mm",
            static_head="18 m",
            minor_loss=12.0,
            name="DN250 rising main",
        ),
        "meter": FlowMeter(time_constant="1.0 s", dead_time="0.2 s", name="FT-201"),
    }


def raw_water_pump(fluid: Fluid | None = None) -> DriveTrain:
    """The invented Marrow Creek P-201 flow loop plant: VSD, motor, pump, rising main, flow meter.

    Parameters
    ----------
    fluid : Fluid, optional
        The liquid; river water at 20 degC by default.

    Returns
    -------
    DriveTrain
    """
    s = raw_water_pump_stages()
    return DriveTrain(
        s["drive"], s["motor"], s["pump"], s["pipe"], s["meter"], fluid=fluid or Fluid(), name="Marrow Creek P-201"
    )


def slurry_pump() -> DriveTrain:
    """The P-201 train on an invented tailings slurry (SG 1.35, 4 mPa*s)."""
    return raw_water_pump(Fluid(sg=1.35, viscosity="4 mPa*s", name="tailings slurry (invented)"))


def quarry_conveyor() -> DriveTrain:
    """The invented Tallow Hill CV-3 conveyor: VSD, motor, compliant gearbox, conveyor, speed sensor."""
    return DriveTrain(
        VariableSpeedDrive(
            max_frequency="50 Hz", min_frequency="5 Hz", time_constant="0.02 s", ramp_time="15 s", name="VSD-3"
        ),
        InductionMotor(
            rated_power="110 kW",
            rated_speed="1480 rpm",
            J="1.4 kg*m**2",
            rated_current="190 A",
            rated_power_factor=0.87,
            name="M-3",
        ),
        Transmission(
            ratio=20.0,
            efficiency=0.96,
            stiffness="2.0e6 N*m/rad",
            damping="800 N*m*s/rad",
            name="gearbox G-3 with flexible coupling",
        ),
        Conveyor(
            load_torque="11 kN*m", J="2600 kg*m**2", b="40 N*m*s/rad", pulley_diameter="1.0 m", name="CV-3 drive pulley"
        ),
        SpeedSensor(time_constant="0.01 s", location="machine", name="pulley encoder ST-3"),
        name="Tallow Hill CV-3",
    )
