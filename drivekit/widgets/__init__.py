"""Jupyter widgets for drivekit: a design model, parameter panels, live views and boards.

The widgets only call the core and draw. One :class:`DesignModel` holds the
design and its one computed result; panels edit it and views observe it.
"""

import warnings

with warnings.catch_warnings():
    # bqscales 0.3 declares a trait the way traitlets 4.1 deprecated; harmless, and not ours to fix.
    warnings.filterwarnings("ignore", message="metadata .* was set from the constructor", category=DeprecationWarning)
    import bqplot  # noqa: F401

from .boards import LoopDesignBoard, ModelExplorationBoard
from .compute import BoardResult, OperatingCurves, compute_result, operating_curves
from .identify_view import FIT_METHODS, BumpTestView
from .loop_views import BodeView, NyquistView, PoleZeroView, RootLocusView, SensitivityView, StepView
from .metrics import MetricRow, MetricsTable, metric_rows
from .model import Coalescer, DesignModel
from .operating_view import OperatingPointView
from .panel import ParameterPanel, ParameterRow
from .simulation_view import SimulationView
from .sweep_views import GainScheduleView, SweepView, TornadoView

__all__ = [
    "FIT_METHODS",
    "BoardResult",
    "BodeView",
    "BumpTestView",
    "Coalescer",
    "DesignModel",
    "GainScheduleView",
    "LoopDesignBoard",
    "MetricRow",
    "MetricsTable",
    "ModelExplorationBoard",
    "NyquistView",
    "OperatingCurves",
    "OperatingPointView",
    "ParameterPanel",
    "ParameterRow",
    "PoleZeroView",
    "RootLocusView",
    "SensitivityView",
    "SimulationView",
    "StepView",
    "SweepView",
    "TornadoView",
    "compute_result",
    "metric_rows",
    "operating_curves",
]
