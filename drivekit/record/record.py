"""The record cell: inputs, operating point, model, controller, results and cautions as static output.

``record(design)`` at the end of a notebook prints the calculation record as
one display output with an HTML and a plain-text form, so the committed
notebook reads correctly where no kernel runs (a repository viewer, the
HTML report). The results go into the output's metadata as machine-readable
JSON, with a hash of the inputs::

    {"drivekit": {"record_format": 1, "inputs_hash": "sha256:...", "results": {...}}}

``drivekit check`` re-runs the notebook and compares those results.
"""

from __future__ import annotations

import dataclasses
import hashlib
import html
import sys
from typing import Any

from ..design import Design
from ..units import ParamSpec, parameter_specs, pretty_unit
from .designfile import dumps_design, quantity_text
from .results import Evaluation, evaluate

__all__ = ["METADATA_KEY", "STANDARD_CAUTIONS", "CalculationRecord", "build_record", "inputs_hash", "record"]

#: Key of the record's entry in the output metadata.
METADATA_KEY = "drivekit"

#: Version of the metadata layout.
RECORD_FORMAT = 1

#: Cautions printed with every record (common practice, no source).
STANDARD_CAUTIONS = (
    "Rotating machinery: isolate and lock out the drive before work on the motor, gearbox or driven machine; "
    "guards stay on while it can turn.",
    "Electrical work: drives and motors hold dangerous voltages, including on the DC bus after the supply is "
    "off; only qualified people work on them.",
    "Pressure surges: fast speed or valve changes on a long pipe line raise surge pressures; check ramp times "
    "against a surge analysis before raising loop gains.",
    "Minimum flow: a pump run below its minimum continuous flow overheats and wears; keep the controller's low "
    "limit and any recirculation above it at every speed.",
    "This record supports engineering judgement; it does not replace it. Local codes, standards and licensed "
    "engineering practice take precedence.",
)

_STYLE = """
.dk-record {font-family: system-ui, sans-serif; font-size: 13px; max-width: 980px;}
.dk-record h2 {font-size: 17px; margin: 8px 0;} .dk-record h3 {font-size: 14px; margin: 14px 0 4px;}
.dk-record table {border-collapse: collapse; margin: 4px 0;}
.dk-record th, .dk-record td {border: 1px solid #bbb; padding: 2px 8px; text-align: left;}
.dk-record td.num {text-align: right; font-variant-numeric: tabular-nums;}
.dk-record .missed {color: #a00; font-weight: bold;} .dk-record .met {color: #060;}
.dk-record figure {margin: 8px 0;} .dk-record figcaption {font-size: 12px; color: #444;}
.dk-record code {font-size: 12px;}
"""


def inputs_hash(design: Design) -> str:
    """``"sha256:<hex>"`` of the design file text of ``design`` (every input, exactly as saved)."""
    return "sha256:" + hashlib.sha256(dumps_design(design).encode("utf-8")).hexdigest()


@dataclasses.dataclass(frozen=True, eq=False)
class CalculationRecord:
    """A calculation record ready to display.

    Attributes
    ----------
    evaluation : Evaluation
        The numbers.
    inputs_hash : str
        ``"sha256:..."`` of the design file text.
    html : str
        Static HTML (tables and inline SVG figures, no scripts).
    text : str
        Plain-text form.
    figures : dict
        SVG text of each figure by name (``"step"``, ``"bode"``, ``"operating"``).
    """

    evaluation: Evaluation
    inputs_hash: str
    html: str
    text: str
    figures: dict[str, str]

    @property
    def metadata(self) -> dict[str, Any]:
        """Output metadata: results as JSON and the inputs hash."""
        return {
            METADATA_KEY: {
                "record_format": RECORD_FORMAT,
                "inputs_hash": self.inputs_hash,
                "results": self.evaluation.to_json(),
                "problems": list(self.evaluation.problems),
            }
        }

    @property
    def bundle(self) -> dict[str, str]:
        """The display bundle: ``text/html`` and ``text/plain``."""
        return {"text/html": self.html, "text/plain": self.text}

    def _repr_mimebundle_(self, include: Any = None, exclude: Any = None) -> tuple[dict[str, str], dict[str, Any]]:
        return self.bundle, self.metadata


# -- rows -----------------------------------------------------------------------------------
def _value_text(value: Any, spec: ParamSpec, name: str) -> str:
    if value is None:
        return "none"
    text = quantity_text(value, spec, name)
    return text if isinstance(text, str) else f"{text:g}"


def input_rows(design: Design) -> list[tuple[str, str, str, str, str]]:
    """Rows (key, stage, description, value with unit, source) of every input."""
    rows = []
    sources = design.sources
    for p in design.parameters():
        rows.append(
            (p.key, p.stage, p.spec.description, _value_text(p.value, p.spec, p.name), sources.get(p.key, "not stated"))
        )
    for name, spec in parameter_specs(design.targets):
        value = getattr(design.targets, name)
        key = f"targets.{name}"
        rows.append((key, "targets", spec.description, _value_text(value, spec, name), sources.get(key, "not stated")))
    return rows


def _curve_rows(design: Design) -> list[tuple[str, str, str]]:
    train = design.train
    if not train.is_pump:
        return []
    c = train.machine.curve  # type: ignore[union-attr]
    return [
        (f"{q * 3600:.6g}", f"{h:.6g}", f"{e * 100:.4g}") for q, h, e in zip(c.flow, c.head, c.efficiency, strict=True)
    ]


def _cautions(ev: Evaluation) -> list[str]:
    own = list(ev.operating_point.cautions) if ev.operating_point is not None else []
    return own + list(STANDARD_CAUTIONS)


# -- HTML ------------------------------------------------------------------------------------
def _esc(x: Any) -> str:
    return html.escape(str(x), quote=True)


def _html_table(cls: str, head: tuple[str, ...], rows: list[tuple[Any, ...]], numeric: tuple[int, ...] = ()) -> str:
    out = [f'<table class="{cls}"><thead><tr>' + "".join(f"<th>{_esc(h)}</th>" for h in head) + "</tr></thead><tbody>"]
    for row in rows:
        cells = []
        for i, cell in enumerate(row):
            css = ' class="num"' if i in numeric else ""
            if cell in ("met", "missed"):
                css = f' class="{cell}"'
            cells.append(f"<td{css}>{_esc(cell)}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def _sections(ev: Evaluation) -> list[tuple[str, str, list[tuple[Any, ...]], tuple[str, ...], tuple[int, ...]]]:
    """(title, css class, rows, header, numeric columns) of each table of the record."""
    d = ev.design
    info = d.info
    out: list[tuple[str, str, list[tuple[Any, ...]], tuple[str, ...], tuple[int, ...]]] = []
    header = [
        (f.name.replace("_", " "), getattr(info, f.name)) for f in dataclasses.fields(info) if getattr(info, f.name)
    ]
    out.append(("Calculation", "dk-info", header, ("item", "entry"), ()))
    out.append(("Inputs", "dk-inputs", input_rows(d), ("key", "stage", "what", "value", "source"), ()))
    curve = _curve_rows(d)
    if curve:
        out.append(("Pump curve points", "dk-curve", curve, ("flow [m**3/h]", "head [m]", "efficiency [%]"), (0, 1, 2)))
    if ev.operating_point is not None:
        rows = [(name, f"{value:.4g}", pretty_unit(unit)) for name, value, unit in ev.operating_point.table()]
        out.append(("Operating point", "dk-operating", rows, ("quantity", "value", "unit"), (1,)))
    if ev.model is not None:
        m = ev.model
        rows = [("transfer function", m.factored().text, "")]
        for i, mode in enumerate(m.modes()):
            rows.append((f"mode {i + 1} ({mode.stage})", f"{mode.time_constant:.4g}", "s"))
        out.append(("Model", "dk-model", rows, ("item", "value", "unit"), (1,)))
        if ev.series_model is not None:
            cmp = m.compare(ev.series_model)
            out.append(
                (
                    "Series approximation against the coupled model",
                    "dk-series",
                    list(cmp.table()),
                    ("quantity", "coupled", "series", "difference"),
                    (1, 2),
                )
            )
    if ev.settings is not None:
        out.append(
            (
                "Controller settings (plant units)",
                "dk-controller",
                list(ev.settings.table()),
                ("setting", "value", "unit"),
                (1,),
            )
        )
    loop = [(r.name, r.text()) for r in ev.results if r.section in ("loop", "targets")]
    if loop:
        out.append(("Results against targets", "dk-results", loop, ("result", "value"), ()))
    return out


def _html(ev: Evaluation, figures: dict[str, str], digest: str) -> str:
    d = ev.design
    title = d.info.title or d.train.name
    parts = [f"<style>{_STYLE}</style>", '<div class="dk-record">', f"<h2>Calculation record: {_esc(title)}</h2>"]
    for name, cls, rows, head, numeric in _sections(ev):
        parts.append(f"<h3>{_esc(name)}</h3>")
        parts.append(_html_table(cls, head, rows, numeric))
    if ev.problems:
        parts.append('<h3>Not evaluated</h3><ul class="dk-problems">')
        parts += [f"<li>{_esc(p)}</li>" for p in ev.problems]
        parts.append("</ul>")
    parts.append('<h3>Cautions</h3><ul class="dk-cautions">')
    parts += [f"<li>{_esc(c)}</li>" for c in _cautions(ev)]
    parts.append("</ul>")
    captions = {"step": "Step response", "bode": "Bode plot", "operating": "Operating point"}
    for name, svg in figures.items():
        parts.append(
            f'<figure class="dk-figure dk-figure-{name}">{svg}<figcaption>{captions[name]}</figcaption></figure>'
        )
    parts.append(f"<p>Inputs hash: <code>{_esc(digest)}</code></p></div>")
    return "\n".join(parts)


def _text(ev: Evaluation, digest: str) -> str:
    d = ev.design
    lines = [f"Calculation record: {d.info.title or d.train.name}"]
    for name, _cls, rows, head, _numeric in _sections(ev):
        lines.append("")
        lines.append(name)
        widths = [max(len(str(x)) for x in col) for col in zip(head, *rows, strict=True)]
        for row in (head, *rows):
            lines.append("  " + "  ".join(str(x).ljust(w) for x, w in zip(row, widths, strict=True)).rstrip())
    if ev.problems:
        lines += ["", "Not evaluated"] + [f"  - {p}" for p in ev.problems]
    lines += ["", "Cautions"] + [f"  - {c}" for c in _cautions(ev)]
    lines += ["", f"Inputs hash: {digest}"]
    return "\n".join(lines)


def build_record(design: Design, *, figures: bool = True) -> CalculationRecord:
    """Evaluate ``design`` and lay out its calculation record (nothing is displayed).

    Parameters
    ----------
    design : Design
        The design to record.
    figures : bool
        Draw the step, Bode and operating-point figures (about a second).

    Returns
    -------
    CalculationRecord
    """
    from .figures import bode_figure, operating_figure, step_figure

    ev = evaluate(design)
    digest = inputs_hash(design)
    figs: dict[str, str] = {}
    if figures and ev.model is not None:
        figs = {"step": step_figure(ev), "bode": bode_figure(ev), "operating": operating_figure(ev)}
    return CalculationRecord(ev, digest, _html(ev, figs, digest), _text(ev, digest), figs)


def record(design: Design, *, figures: bool = True) -> None:
    """Print the calculation record of ``design`` as the static output of a notebook cell.

    In a notebook the output is one display with an HTML and a plain-text
    form and the results as JSON in its metadata (see the module notes).
    Outside a notebook the plain text is printed.

    Parameters
    ----------
    design : Design
        The design to record.
    figures : bool
        Include the figures.
    """
    rec = build_record(design, figures=figures)
    if "IPython" not in sys.modules:  # a kernel has loaded IPython already; a plain script has not
        print(rec.text)
        return
    from IPython import get_ipython
    from IPython.display import display

    if get_ipython() is None:
        print(rec.text)
        return
    display(rec.bundle, raw=True, metadata=rec.metadata)
