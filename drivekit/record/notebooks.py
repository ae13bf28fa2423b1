"""Preparing a notebook for committing as a calculation record: recorded outputs kept, widget state left out."""

from __future__ import annotations

from typing import Any

__all__ = ["WIDGET_MIME", "strip_widget_state"]

#: The output type of a live widget; it cannot render without a kernel.
WIDGET_MIME = "application/vnd.jupyter.widget-view+json"


def strip_widget_state(nb: Any) -> Any:
    """Remove widget state and live-widget outputs from a notebook, keep every other output.

    Parameters
    ----------
    nb : nbformat.NotebookNode
        The executed notebook.

    Returns
    -------
    nbformat.NotebookNode
        The same notebook, changed in place: ``metadata.widgets`` removed, a
        widget output reduced to a plain-text note, execution timing metadata
        dropped. Record outputs (tables, figures and their results metadata)
        stay, so the committed notebook reads correctly where no kernel runs.

    Examples
    --------
    >>> import nbformat
    >>> nb = nbformat.v4.new_notebook(metadata={"widgets": {"state": {}}})
    >>> cell = nbformat.v4.new_code_cell("board")
    >>> cell.outputs = [nbformat.v4.new_output("display_data", {WIDGET_MIME: {"model_id": "x"}, "text/plain": "B"})]
    >>> nb.cells.append(cell)
    >>> out = strip_widget_state(nb)
    >>> "widgets" in out.metadata, list(out.cells[0].outputs[0].data)
    (False, ['text/plain'])
    """
    nb.metadata.pop("widgets", None)
    for cell in nb.cells:
        cell.metadata.pop("execution", None)
        for output in cell.get("outputs", []):
            data = output.get("data")
            if data and WIDGET_MIME in data:
                output["data"] = {"text/plain": "(interactive widgets: run the notebook in JupyterLab to use them)"}
    return nb
