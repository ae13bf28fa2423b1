"""Parameter panel: one row per editable number of a design, grouped by stage.

Each row has a label, a slider over a sensible range around the file value
(logarithmic for quantities that span decades), an entry box that takes
units (``"1.2 kg*m**2"``, ``"4 mH"``), a unit menu, a reset-to-file-value
button and a lock. Bad entries are refused with a visible message and leave
the design unchanged.
"""

from __future__ import annotations

import html
import math
from collections.abc import Callable
from typing import Any

import ipywidgets as w

from ..design import DesignParameter
from ..units import ParameterError
from .model import DesignModel, design_value
from .units_display import DisplayUnit, display_units, slider_range

__all__ = ["GROUP_ORDER", "ParameterPanel", "ParameterRow", "group_of"]

#: Order of the stage groups on the panel.
GROUP_ORDER = (
    "drive",
    "motor",
    "transmission",
    "pump",
    "machine",
    "pipe",
    "fluid",
    "sensor",
    "controller",
    "operating point",
)

_SLIDER_STEPS = 200


def group_of(p: DesignParameter, is_pump: bool) -> str:
    """The panel group of a parameter: its stage kind in plain words."""
    if p.role == "machine":
        return "pump" if is_pump else "machine"
    if p.role.startswith("pipe"):
        return "pipe"
    if p.role == "operating":
        return "operating point"
    return p.role


def _fmt(x: float) -> str:
    return f"{x:.5g}"


class ParameterRow(w.VBox):
    """One editable parameter: label, entry with unit menu, slider, reset and lock.

    Parameters
    ----------
    model : DesignModel
        The design model it edits.
    parameter : DesignParameter
        The parameter (as listed by ``Design.parameters()``).
    """

    def __init__(self, model: DesignModel, parameter: DesignParameter) -> None:
        self.model = model
        self.parameter = parameter
        self.key = parameter.key
        self._syncing = False
        self.units: tuple[DisplayUnit, ...] = display_units(parameter)
        css = "dk-p-" + self.key.replace(".", "-").replace("_", "-")
        desc = parameter.spec.description
        self.label = w.HTML(
            f"<span title='{html.escape(parameter.stage)}: {html.escape(desc)}'>{html.escape(desc)}</span>",
            layout=w.Layout(width="150px", overflow="hidden"),
        )
        self.unit_menu = w.Dropdown(
            options=[(u.label, k) for k, u in enumerate(self.units)], value=0, layout=w.Layout(width="92px")
        )
        self.unit_menu.add_class("dk-unit")
        self.entry = w.Text(continuous_update=False, layout=w.Layout(width="96px"))
        self.entry.add_class("dk-entry")
        self.reset_button = w.Button(
            icon="undo", tooltip="back to the design file value", layout=w.Layout(width="40px")
        )
        self.reset_button.add_class("dk-reset")
        self.lock = w.ToggleButton(value=False, icon="lock", tooltip="lock this value", layout=w.Layout(width="40px"))
        self.lock.add_class("dk-lock")
        self.message = w.HTML("", layout=w.Layout(display="none"))
        self.message.add_class("dk-message")
        self.slider: w.FloatSlider | w.FloatLogSlider | None = None
        self._range = slider_range(parameter, parameter.value)
        top = w.HBox([self.label, self.entry, self.unit_menu])
        bottom: list[w.Widget] = []
        if self._range is not None:
            self.slider = self._make_slider()
            bottom.append(self.slider)
        bottom += [self.reset_button, self.lock]
        super().__init__([top, w.HBox(bottom), self.message], layout=w.Layout(margin="0 0 4px 0"))
        self.add_class("dk-param")
        self.add_class(css)
        self.entry.observe(self._on_entry, names="value")
        self.unit_menu.observe(self._on_unit, names="value")
        self.reset_button.on_click(lambda _b: self.reset())
        self.lock.observe(self._on_lock, names="value")
        self.show(model.value(self.key))

    # -- display ---------------------------------------------------------------------------
    @property
    def unit(self) -> DisplayUnit:
        """The unit values are shown in."""
        return self.units[self.unit_menu.value]

    def _to_display(self, si: float) -> float:
        return self.unit.to_display(si, self.model.design)

    def _make_slider(self) -> w.FloatSlider | w.FloatLogSlider:
        rng = self._range
        assert rng is not None
        lo, hi = sorted((self._to_display(rng.low), self._to_display(rng.high)))
        layout = w.Layout(width="230px")
        if rng.log:
            a, b = math.log10(lo), math.log10(hi)
            slider = w.FloatLogSlider(
                value=lo, base=10.0, min=a, max=b, step=(b - a) / _SLIDER_STEPS, readout=False, layout=layout
            )
        else:
            slider = w.FloatSlider(
                value=lo, min=lo, max=hi, step=(hi - lo) / _SLIDER_STEPS, readout=False, layout=layout
            )
        slider.add_class("dk-slider")
        slider.observe(self._on_slider, names="value")
        return slider

    def _rescale_slider(self) -> None:
        if self.slider is None or self._range is None:
            return
        rng = self._range
        lo, hi = sorted((self._to_display(rng.low), self._to_display(rng.high)))
        if rng.log:
            lo, hi = math.log10(lo), math.log10(hi)
        with self.slider.hold_sync():
            # widen first, then narrow, so min <= max holds at every step
            if lo > self.slider.max:
                self.slider.max = hi
                self.slider.min = lo
            else:
                self.slider.min = lo
                self.slider.max = hi
            self.slider.step = (hi - lo) / _SLIDER_STEPS

    def show(self, si: Any) -> None:
        """Show an SI value in the entry box and on the slider (no change to the design)."""
        self._syncing = True
        try:
            if si is None:
                self.entry.value = ""
                return
            shown = self._to_display(si)
            self.entry.value = _fmt(shown)
            if self.slider is not None and self._range is not None:
                inside = self._range.low <= si <= self._range.high
                if not inside:
                    self._range = type(self._range)(
                        min(self._range.low, si), max(self._range.high, si), self._range.log
                    )
                    if self._range.log and self._range.low <= 0.0:
                        self._range = type(self._range)(si / 10.0, self._range.high, True)
                    self._rescale_slider()
                if not math.isclose(self.slider.value, shown, rel_tol=1e-9, abs_tol=1e-300):
                    self.slider.value = shown
        finally:
            self._syncing = False

    def say(self, text: str) -> None:
        """Show a message under the row (``""`` hides it)."""
        self.message.value = (
            f"<span class='dk-refused' style='color:#b2182b'>{html.escape(text)}</span>" if text else ""
        )
        self.message.layout.display = "block" if text else "none"

    # -- editing ---------------------------------------------------------------------------
    def submit(self, text: str) -> bool:
        """Apply a typed value: a bare number is in the shown unit, otherwise units are read.

        Returns
        -------
        bool
            Whether the value was accepted.
        """
        text = text.strip()
        try:
            value: Any
            try:
                number = float(text)
            except ValueError:
                value = text
            else:
                value = self.unit.to_si(number, self.model.design)
            if self.unit.pint_unit is None and isinstance(value, str):
                value = self._pressure_as_head(value)
            self.model.set_value(self.key, value)
        except ParameterError as exc:
            self.say(f"refused: {exc}")
            self.show(self.model.value(self.key))
            return False
        self.say("")
        self.show(self.model.value(self.key))
        return True

    def _pressure_as_head(self, text: str) -> Any:
        from ..units import ureg

        try:
            q = ureg.Quantity(text)
        except Exception:  # pint raises several kinds for bad text; the core reports it below
            return text
        if q.check("[pressure]"):
            return self.units[1].to_si(q.to("bar").magnitude, self.model.design)
        return text

    def reset(self) -> None:
        """Put the parameter back to its value in the design file."""
        if self.lock.value:
            return
        self.model.reset(self.key)
        self.say("")
        self.show(self.model.value(self.key))

    def _on_entry(self, change: dict[str, Any]) -> None:
        if not self._syncing:
            self.submit(change["new"])

    def _on_slider(self, change: dict[str, Any]) -> None:
        if self._syncing:
            return
        si = self.unit.to_si(change["new"], self.model.design)
        try:
            self.model.set_value(self.key, si)
        except ParameterError as exc:
            self.say(f"refused: {exc}")
            return
        self._syncing = True
        try:
            self.entry.value = _fmt(change["new"])
        finally:
            self._syncing = False
        if self.message.value:
            self.say("")

    def _on_unit(self, _change: dict[str, Any]) -> None:
        self._rescale_slider()
        self.show(self.model.value(self.key))

    def _on_lock(self, change: dict[str, Any]) -> None:
        locked = bool(change["new"])
        for widget in (self.entry, self.reset_button, self.slider):
            if widget is not None:
                widget.disabled = locked


class ParameterPanel(w.VBox):
    """Every editable number of a design, grouped by stage, with a record button.

    Parameters
    ----------
    model : DesignModel
        The design model the panel edits.
    groups : sequence of str, optional
        Groups to show (see :data:`GROUP_ORDER`); all by default.
    open_group : str, optional
        Group open at the start; the controller (else the operating point) by default.
    on_record : callable, optional
        ``on_record(design) -> str``: writes the current values to the design
        file and returns a message to show. Left to the record layer; the
        button says so while it is unset.

    Attributes
    ----------
    rows : dict of str to ParameterRow
        Rows by parameter key.
    on_record : callable or None
        The record hook (may be set after construction).
    """

    def __init__(
        self,
        model: DesignModel,
        *,
        groups: tuple[str, ...] | None = None,
        on_record: Callable[[Any], Any] | None = None,
        open_group: str | None = None,
    ) -> None:
        self.model = model
        self.on_record = on_record
        is_pump = model.design.train.is_pump
        grouped: dict[str, list[ParameterRow]] = {}
        self.rows: dict[str, ParameterRow] = {}
        for p in model.design.parameters():
            group = group_of(p, is_pump)
            if groups is not None and group not in groups:
                continue
            row = ParameterRow(model, p)
            self.rows[p.key] = row
            grouped.setdefault(group, []).append(row)
        names = [g for g in GROUP_ORDER if g in grouped] + [g for g in grouped if g not in GROUP_ORDER]
        self.accordion = w.Accordion(children=[w.VBox(grouped[g]) for g in names], titles=tuple(names))
        self.accordion.add_class("dk-groups")
        if open_group in names:
            self.accordion.selected_index = names.index(open_group)
        elif "controller" in names:
            self.accordion.selected_index = names.index("controller")
        elif "operating point" in names:
            self.accordion.selected_index = names.index("operating point")
        self.record_button = w.Button(description="Record to design file", icon="save", layout=w.Layout(width="auto"))
        self.record_button.add_class("dk-record")
        self.status = w.HTML("")
        self.status.add_class("dk-status")
        self.record_button.on_click(lambda _b: self.record())
        super().__init__([self.accordion, w.HBox([self.record_button]), self.status], layout=w.Layout(width="100%"))
        self.add_class("dk-panel")
        model.observe(self._on_design, names="design")
        model.observe(self._on_error, names=["error", "stale"])
        self._on_error(None)

    def record(self) -> Any:
        """Call the record hook with the current design; show what it returns."""
        if self.on_record is None:
            self.status.value = (
                "<span class='dk-refused'>No record writer is connected (set <code>on_record</code>).</span>"
            )
            return None
        self.model.flush()
        out = self.on_record(self.model.design)
        self.status.value = html.escape(str(out)) if out is not None else "recorded"
        return out

    def _on_design(self, _change: dict[str, Any]) -> None:
        for key, row in self.rows.items():
            value = design_value(self.model.design, key)
            if row.entry.value != ("" if value is None else _fmt(row._to_display(value))):
                row.show(value)

    def _on_error(self, _change: Any) -> None:
        err = self.model.error
        if err:
            tag = " The results shown are from the last good design (stale)." if self.model.stale else ""
            self.status.value = f"<span class='dk-error' style='color:#b2182b'>{html.escape(err)}{tag}</span>"
        else:
            self.status.value = ""
