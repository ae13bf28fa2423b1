"""Composite boards: the parameter panel on the left, views in a grid, metrics and cautions below."""

from __future__ import annotations

from typing import Any

import ipywidgets as w

from ..design import Design
from .loop_views import BodeView, NyquistView, PoleZeroView, RootLocusView, SensitivityView, StepView
from .metrics import MetricsTable
from .model import DesignModel
from .operating_view import OperatingPointView
from .panel import ParameterPanel

__all__ = ["LoopDesignBoard", "ModelExplorationBoard"]


def _model(design_or_model: Design | DesignModel, delay: float) -> DesignModel:
    if isinstance(design_or_model, DesignModel):
        return design_or_model
    return DesignModel(design_or_model, delay=delay)


def _layout(panel: w.Widget, views: tuple[w.Widget, ...], metrics: w.Widget) -> dict[str, Any]:
    """AppLayout arguments: the panel on the left, four views in a 2 x 2 grid, the metrics below."""
    grid = w.GridspecLayout(2, 2, width="100%", grid_gap="6px")
    for k, view in enumerate(views):
        grid[k // 2, k % 2] = view
    return {
        "left_sidebar": panel,
        "center": grid,
        "footer": metrics,
        "pane_widths": ["400px", 1, 0],
        "pane_heights": ["0px", "1fr", "260px"],
        "width": "100%",
    }


class LoopDesignBoard(w.AppLayout):
    """Loop design: panel, step response, Bode, root locus, sensitivity; metrics and cautions below.

    Parameters
    ----------
    design : Design or DesignModel
        The design (a model is made for it) or an existing design model.
    delay : float
        Coalescing delay of a new model. [s]
    on_record : callable, optional
        Record hook of the panel (see :class:`ParameterPanel`).

    Attributes
    ----------
    model : DesignModel
    panel : ParameterPanel
    step, bode, root_locus, sensitivity : views
    metrics : MetricsTable
    """

    def __init__(self, design: Design | DesignModel, *, delay: float = 0.01, on_record: Any = None) -> None:
        self.model = _model(design, delay)
        self.panel = ParameterPanel(self.model, on_record=on_record)
        self.step = StepView(self.model)
        self.bode = BodeView(self.model)
        self.root_locus = RootLocusView(self.model)
        self.sensitivity = SensitivityView(self.model)
        self.metrics = MetricsTable(self.model)
        super().__init__(**_layout(self.panel, (self.step, self.bode, self.root_locus, self.sensitivity), self.metrics))
        self.add_class("dk-board")
        self.add_class("dk-loop-board")


class ModelExplorationBoard(w.AppLayout):
    """Model exploration: panel, operating point, step response, pole-zero, Nyquist; metrics below.

    Parameters
    ----------
    design : Design or DesignModel
        The design or an existing design model.
    delay : float
        Coalescing delay of a new model. [s]
    """

    def __init__(self, design: Design | DesignModel, *, delay: float = 0.01) -> None:
        self.model = _model(design, delay)
        self.panel = ParameterPanel(self.model, open_group="operating point")
        self.operating = OperatingPointView(self.model)
        self.step = StepView(self.model)
        self.pole_zero = PoleZeroView(self.model)
        self.nyquist = NyquistView(self.model)
        self.metrics = MetricsTable(self.model)
        super().__init__(**_layout(self.panel, (self.operating, self.step, self.pole_zero, self.nyquist), self.metrics))
        self.add_class("dk-board")
        self.add_class("dk-model-board")
