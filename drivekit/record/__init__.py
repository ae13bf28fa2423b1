"""The calculation record: design files, plain-words diffs, the record cell, the re-run check and the command line.

Nothing here imports IPython at import time; the record cell's display
function imports it only when called inside a notebook.
"""

from .designfile import DesignFileError, dumps_design, load_design, loads_design, save_design

__all__ = ["DesignFileError", "dumps_design", "load_design", "loads_design", "save_design"]
