"""Re-run a notebook and compare its recorded results with the new ones.

The notebook's folder is copied to a temporary folder (so the design files
it reads come along and nothing in the original is touched), executed there
headless with nbclient, and the results in the metadata of each record cell
output are compared in order with those stored in the original notebook.
"""

from __future__ import annotations

import dataclasses
import math
import os
import shutil
import tempfile
from pathlib import Path
from typing import Any

from .record import METADATA_KEY

__all__ = ["NotebookCheck", "check_notebook", "compare_records", "recorded_results"]

#: Default relative tolerance of a re-run result. [-]
DEFAULT_RTOL = 1e-6
#: Default absolute tolerance, for results that are zero. [unit of the result]
DEFAULT_ATOL = 1e-9
#: Largest folder copied for a re-run. [bytes] A project folder is small; this stops a mistaken run on a home folder.
MAX_COPY_BYTES = 200_000_000


@dataclasses.dataclass(frozen=True)
class NotebookCheck:
    """Outcome of re-running one notebook.

    Attributes
    ----------
    path : str
        The notebook.
    changes : tuple of str
        What changed, one line each (empty when everything agrees).
    error : str or None
        Why the notebook could not be checked (a cell failed, no record), if so.
    records : int
        Number of record outputs compared.
    """

    path: str
    changes: tuple[str, ...]
    error: str | None
    records: int

    @property
    def ok(self) -> bool:
        """True when the notebook ran and no recorded result changed."""
        return self.error is None and not self.changes

    @property
    def text(self) -> str:
        """A readable summary."""
        if self.error is not None:
            return f"{self.path}: NOT CHECKED: {self.error}"
        if not self.changes:
            return f"{self.path}: ok ({self.records} record{'s' if self.records != 1 else ''} unchanged)"
        return f"{self.path}: CHANGED\n" + "\n".join(f"  {line}" for line in self.changes)


def recorded_results(nb: Any) -> list[dict[str, Any]]:
    """The ``drivekit`` metadata of every record output of a notebook, in order."""
    found = []
    for cell in nb.cells:
        if cell.get("cell_type") != "code":
            continue
        for out in cell.get("outputs", []):
            entry = out.get("metadata", {}).get(METADATA_KEY)
            if isinstance(entry, dict) and "results" in entry:
                found.append(entry)
    return found


def _as_number(value: Any) -> float | None:
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        return float(value)
    if value in ("inf", "-inf", "nan"):
        return float(value)
    return None


def _differs(a: float, b: float, rtol: float, atol: float) -> bool:
    if math.isnan(a) or math.isnan(b):
        return not (math.isnan(a) and math.isnan(b))
    if math.isinf(a) or math.isinf(b):
        return a != b
    return abs(a - b) > max(rtol * max(abs(a), abs(b)), atol)


def compare_records(
    old: list[dict[str, Any]], new: list[dict[str, Any]], *, rtol: float = DEFAULT_RTOL, atol: float = DEFAULT_ATOL
) -> list[str]:
    """Lines describing each difference between recorded (``old``) and re-run (``new``) results."""
    lines: list[str] = []
    if len(old) != len(new):
        lines.append(f"the notebook recorded {len(old)} record(s) and the re-run made {len(new)}")
    for i, (a, b) in enumerate(zip(old, new, strict=False)):
        tag = f"record {i + 1}"
        if a.get("inputs_hash") != b.get("inputs_hash"):
            lines.append(f"{tag}: the inputs changed (the design differs from the recorded one)")
        ra, rb = a.get("results", {}), b.get("results", {})
        for key in [*ra, *(k for k in rb if k not in ra)]:
            if key not in rb:
                lines.append(f"{tag}: {key}: recorded but no longer computed")
                continue
            if key not in ra:
                lines.append(f"{tag}: {key}: new result {rb[key].get('value')} {rb[key].get('unit', '')}".rstrip())
                continue
            va, vb = ra[key].get("value"), rb[key].get("value")
            unit = rb[key].get("unit", "")
            xa, xb = _as_number(va), _as_number(vb)
            if xa is not None and xb is not None:
                if _differs(xa, xb, rtol, atol):
                    rel = abs(xb - xa) / max(abs(xa), abs(xb)) if math.isfinite(xa) and math.isfinite(xb) else math.inf
                    lines.append(
                        f"{tag}: {key} {xa:.8g} -> {xb:.8g} {unit} (relative change {rel:.2g}, allowed {rtol:g})"
                    )
            elif va != vb:
                lines.append(f"{tag}: {key}: {va} -> {vb}")
    return lines


def _copy_folder(folder: Path, into: Path) -> Path:
    total = 0
    for root, _dirs, files in os.walk(folder):
        for f in files:
            total += (Path(root) / f).stat().st_size
            if total > MAX_COPY_BYTES:
                raise ValueError(
                    f"the folder {folder} holds more than {MAX_COPY_BYTES} bytes; put the notebook in a project folder"
                )
    dest = into / folder.name
    shutil.copytree(folder, dest, ignore=shutil.ignore_patterns(".ipynb_checkpoints", "__pycache__", ".git"))
    return dest


def execute_notebook(path: Path, *, timeout: float = 600.0, kernel_name: str = "python3") -> Any:
    """Execute a copy of the notebook at ``path`` (its folder copied to a temporary folder); return the new notebook.

    Parameters
    ----------
    path : Path
        The notebook.
    timeout : float
        Longest time one cell may take. [s]
    kernel_name : str
        Jupyter kernel to run it with.
    """
    import nbclient
    import nbformat

    with tempfile.TemporaryDirectory(prefix="drivekit-check-") as tmp:
        folder = _copy_folder(path.resolve().parent, Path(tmp))
        copy = folder / path.name
        nb = nbformat.read(copy, as_version=4)
        client = nbclient.NotebookClient(
            nb, timeout=timeout, kernel_name=kernel_name, resources={"metadata": {"path": str(folder)}}
        )
        client.execute()
        return nb


def check_notebook(
    path: str | os.PathLike[str],
    *,
    rtol: float = DEFAULT_RTOL,
    atol: float = DEFAULT_ATOL,
    timeout: float = 600.0,
    kernel_name: str = "python3",
) -> NotebookCheck:
    """Re-run a notebook in a temporary copy and compare its recorded results.

    Parameters
    ----------
    path : str or path-like
        The notebook (``.ipynb``).
    rtol : float
        Relative tolerance of a numeric result. [-]
    atol : float
        Absolute tolerance, for results near zero. [unit of the result]
    timeout : float
        Longest time one cell may take. [s]
    kernel_name : str
        Jupyter kernel.

    Returns
    -------
    NotebookCheck
    """
    import nbclient
    import nbformat

    p = Path(path)
    old = recorded_results(nbformat.read(p, as_version=4))
    if not old:
        return NotebookCheck(
            str(p), (), "no recorded results: run the notebook and save it with its record() output", 0
        )
    try:
        nb = execute_notebook(p, timeout=timeout, kernel_name=kernel_name)
    except nbclient.exceptions.CellExecutionError as exc:
        first = str(exc).strip().splitlines()
        reason = next((line for line in reversed(first) if line.strip()), "a cell failed")
        return NotebookCheck(str(p), (), f"a cell failed on re-run: {reason}", len(old))
    except (nbclient.exceptions.CellTimeoutError, ValueError, OSError) as exc:
        return NotebookCheck(str(p), (), f"could not re-run: {exc}", len(old))
    new = recorded_results(nb)
    return NotebookCheck(str(p), tuple(compare_records(old, new, rtol=rtol, atol=atol)), None, len(old))
