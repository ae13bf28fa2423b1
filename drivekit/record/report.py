"""A notebook as a static, self-contained HTML calculation record that reads offline.

The page is built from the notebook's stored outputs: the record cells' own
static HTML tables and inline SVG figures carry the content. It loads
nothing: no scripts at all, and a Content-Security-Policy that forbids any
network request. Interactive widget outputs cannot work without a kernel and
are replaced by a note.
"""

from __future__ import annotations

import html
import os
import re
from pathlib import Path
from typing import Any

__all__ = ["notebook_html", "write_report"]

WIDGET_NOTE = (
    "Interactive widget: it needs a running kernel and is not part of the static record. "
    "The record output of this notebook carries the results."
)

_CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; font-src data:"
_ANSI = re.compile(r"\x1b\[[0-9;]*[A-Za-z]")
_SCRIPT = re.compile(r"<script\b.*?</script\s*>|<script\b[^>]*/?>", re.IGNORECASE | re.DOTALL)
_PAGE_STYLE = """
body {font-family: system-ui, sans-serif; margin: 24px auto; max-width: 1000px; color: #111;}
pre {background: #f6f6f6; padding: 6px 8px; overflow-x: auto; font-size: 12px;}
.dk-cell {margin: 10px 0;} .dk-widget-note {border: 1px dashed #999; padding: 6px; color: #444;}
.dk-error {color: #a00;}
"""


def _esc(text: str) -> str:
    return html.escape(text, quote=True)


def _markdown(text: str) -> str:
    try:
        import mistune
    except ImportError:
        return f"<pre>{_esc(text)}</pre>"
    render = mistune.create_markdown(escape=True, plugins=["table", "strikethrough"])
    return str(render(text))


def _join(value: Any) -> str:
    return "".join(value) if isinstance(value, list) else str(value)


def _output_html(out: dict[str, Any]) -> str:
    kind = out.get("output_type")
    if kind == "stream":
        return f"<pre>{_esc(_join(out.get('text', '')))}</pre>"
    if kind == "error":
        trace = _ANSI.sub("", "\n".join(out.get("traceback", [])))
        return f'<pre class="dk-error">{_esc(trace or out.get("ename", "error"))}</pre>'
    data = out.get("data", {})
    if "application/vnd.jupyter.widget-view+json" in data:
        return f'<p class="dk-widget-note">{_esc(WIDGET_NOTE)}</p>'
    if "text/html" in data:
        return _SCRIPT.sub("", _join(data["text/html"]))
    if "image/svg+xml" in data:
        return _SCRIPT.sub("", _join(data["image/svg+xml"]))
    if "image/png" in data:
        return f'<img alt="figure" src="data:image/png;base64,{_join(data["image/png"]).strip()}">'
    if "text/plain" in data:
        return f"<pre>{_esc(_join(data['text/plain']))}</pre>"
    return ""


def notebook_html(nb: Any, *, title: str = "Calculation record", show_code: bool = True) -> str:
    """The notebook as one self-contained HTML page.

    Parameters
    ----------
    nb : nbformat.NotebookNode
        The notebook, with its outputs.
    title : str
        Page title.
    show_code : bool
        Include the code of each cell.

    Returns
    -------
    str
    """
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f'<meta http-equiv="Content-Security-Policy" content="{_CSP}">',
        f"<title>{_esc(title)}</title><style>{_PAGE_STYLE}</style></head><body>",
    ]
    for cell in nb.cells:
        source = _join(cell.get("source", ""))
        if cell.get("cell_type") == "markdown":
            parts.append(f'<div class="dk-cell dk-markdown">{_SCRIPT.sub("", _markdown(source))}</div>')
        elif cell.get("cell_type") == "code":
            parts.append('<div class="dk-cell dk-code">')
            if show_code and source.strip():
                parts.append(f"<pre>{_esc(source)}</pre>")
            parts += [_output_html(out) for out in cell.get("outputs", [])]
            parts.append("</div>")
    parts.append("</body></html>")
    return "\n".join(parts)


def write_report(
    notebook: str | os.PathLike[str],
    output: str | os.PathLike[str],
    *,
    execute: bool = False,
    timeout: float = 600.0,
) -> Path:
    """Write the static HTML calculation record of a notebook.

    Parameters
    ----------
    notebook : str or path-like
        The ``.ipynb`` file.
    output : str or path-like
        The ``.html`` file to write.
    execute : bool
        Re-run the notebook (in a temporary copy) first instead of using its stored outputs.
    timeout : float
        Longest time one cell may take when executing. [s]

    Returns
    -------
    pathlib.Path
        The file written.
    """
    import nbformat

    src = Path(notebook)
    if execute:
        from .check import execute_notebook

        nb = execute_notebook(src, timeout=timeout)
    else:
        nb = nbformat.read(src, as_version=4)
    out = Path(output)
    out.write_text(notebook_html(nb, title=f"Calculation record: {src.stem}"), encoding="utf-8")
    return out
