"""drivekit: model, analyse and tune motor-driven machines and their control loops.

The core (this package) is plain computation with SI floats inside and units
at the boundary; :mod:`drivekit.widgets` draws it in Jupyter.
"""

from . import demo, identify, simulate, slurry, surge, sweep, tuning, units
from .batch import BatchMargins, ModelBatch, batch_loop_margins
from .batch_steps import BatchStepMetrics, batch_step_metrics
from .design import Design, DesignInfo, Targets
from .drives import VariableSpeedDrive
from .drivetrain import DriveTrain
from .evaluation import DesignResult, TargetCheck
from .fluid import Fluid
from .linear import FactoredForm, LinearModel, Mode, ModelComparison
from .loop import Loop, as_linear
from .machines import Conveyor, Fan
from .margins import Crossing, LoadMetrics, Margins, StepMetrics, load_metrics, loop_margins, step_metrics
from .models import FOPDT, SOPDT, IntegratingDeadTime, half_rule
from .motors import DCMotor, InductionMotor
from .operating import OperatingPoint, OperatingPointError
from .pid import PID, PlantSettings
from .piping import Pipe
from .pumps import CentrifugalPump, PumpCurve
from .responses import (
    FrequencyResponse,
    StepResponse,
    frequency_response,
    impulse_response,
    load_response,
    step_response,
)
from .rootlocus import RootLocus, root_locus
from .sensors import FlowMeter, PressureSensor, SpeedSensor
from .transmissions import Transmission
from .units import Q_, ParameterError, ureg
from .variants import LinearBatch, VariantSet, make_variants

__version__ = "0.1.0"

__all__ = [
    "FOPDT",
    "PID",
    "Q_",
    "SOPDT",
    "BatchMargins",
    "BatchStepMetrics",
    "CentrifugalPump",
    "Conveyor",
    "Crossing",
    "DCMotor",
    "Design",
    "DesignInfo",
    "DesignResult",
    "DriveTrain",
    "FactoredForm",
    "Fan",
    "FlowMeter",
    "Fluid",
    "FrequencyResponse",
    "InductionMotor",
    "IntegratingDeadTime",
    "LinearBatch",
    "LinearModel",
    "LoadMetrics",
    "Loop",
    "Margins",
    "Mode",
    "ModelBatch",
    "ModelComparison",
    "OperatingPoint",
    "OperatingPointError",
    "ParameterError",
    "Pipe",
    "PlantSettings",
    "PressureSensor",
    "PumpCurve",
    "RootLocus",
    "SpeedSensor",
    "StepMetrics",
    "StepResponse",
    "TargetCheck",
    "Targets",
    "Transmission",
    "VariableSpeedDrive",
    "VariantSet",
    "as_linear",
    "batch_loop_margins",
    "batch_step_metrics",
    "demo",
    "frequency_response",
    "half_rule",
    "identify",
    "impulse_response",
    "load_metrics",
    "load_response",
    "loop_margins",
    "make_variants",
    "root_locus",
    "simulate",
    "slurry",
    "step_metrics",
    "step_response",
    "surge",
    "sweep",
    "tuning",
    "units",
    "ureg",
]
