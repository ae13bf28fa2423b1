"""The calculation record: design files, plain-words diffs, the record cell, the re-run check and the command line.

Nothing here imports IPython at import time; the record cell's display
function uses it only inside a running notebook kernel.
"""

from .designfile import DesignFileError, design_writer, dumps_design, load_design, loads_design, save_design
from .diff import DesignDiff, diff_designs
from .record import CalculationRecord, build_record, record
from .results import Evaluation, Result, evaluate

__all__ = [
    "CalculationRecord",
    "DesignDiff",
    "DesignFileError",
    "Evaluation",
    "Result",
    "build_record",
    "design_writer",
    "diff_designs",
    "dumps_design",
    "evaluate",
    "load_design",
    "loads_design",
    "record",
    "save_design",
]
