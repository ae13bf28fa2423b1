"""drivekit: model, analyse and tune motor-driven machines and their control loops.

The core (this package) is plain computation with SI floats inside and units
at the boundary; :mod:`drivekit.widgets` draws it in Jupyter.
"""

from . import demo, units
from .design import Design, DesignInfo, Targets
from .drives import VariableSpeedDrive
from .drivetrain import DriveTrain
from .fluid import Fluid
from .linear import FactoredForm, LinearModel, Mode, ModelComparison
from .machines import Conveyor, Fan
from .motors import DCMotor, InductionMotor
from .operating import OperatingPoint, OperatingPointError
from .piping import Pipe
from .pumps import CentrifugalPump, PumpCurve
from .sensors import FlowMeter, PressureSensor, SpeedSensor
from .transmissions import Transmission
from .units import Q_, ParameterError, ureg

__version__ = "0.1.0"

__all__ = [
    "Q_",
    "CentrifugalPump",
    "Conveyor",
    "DCMotor",
    "Design",
    "DesignInfo",
    "DriveTrain",
    "FactoredForm",
    "Fan",
    "FlowMeter",
    "Fluid",
    "InductionMotor",
    "LinearModel",
    "Mode",
    "ModelComparison",
    "OperatingPoint",
    "OperatingPointError",
    "ParameterError",
    "Pipe",
    "PressureSensor",
    "PumpCurve",
    "SpeedSensor",
    "Targets",
    "Transmission",
    "VariableSpeedDrive",
    "demo",
    "units",
    "ureg",
]
