"""Headless tests of the loop views and boards: mark data against the core and python-control, computed here."""

import math

import control
import numpy as np
import pytest

from drivekit import demo
from drivekit.design import Design
from drivekit.pid import PID
from drivekit.widgets import (
    BodeView,
    LoopDesignBoard,
    MetricsTable,
    ModelExplorationBoard,
    NyquistView,
    PoleZeroView,
    RootLocusView,
    SensitivityView,
    StepView,
)

# PI for the invented P-201 flow loop: plant gain 7.9 (m3/h)/% at 380 m3/h, so kp = 0.3 %/(m3/h) gives loop gain 2.4.
KP = 0.3 * 3600.0  # %/(m**3/s)
TI = 3.0  # s


@pytest.fixture
def loop_design():
    return Design(
        train=demo.raw_water_pump(),
        operating=("flow", demo.RAW_WATER_FLOW_TARGET),
        controller=PID(KP, TI),
        output_span=(0.0, 100.0),
        measurement_span=("0 m**3/h", "600 m**3/h"),
    )


def _core(design):
    op = design.operating_point()
    return op, design.train.linearize(op)


def test_step_view_matches_python_control_after_a_gain_change(loop_design):
    board = LoopDesignBoard(loop_design, delay=0.0)
    board.panel.rows["controller.kp"].submit(str(KP * 1.5))
    design = loop_design.with_value("controller.kp", KP * 1.5)
    op, lin = _core(design)
    t = np.asarray(board.step.measurement.x)
    closed = control.feedback(design.controller.tf * lin.pade(4), 1)
    step = 0.05 * op.flow
    expected = 3600.0 * (op.flow + step * np.asarray(control.step_response(closed, t).outputs))
    np.testing.assert_allclose(board.step.measurement.y[0], expected, rtol=1e-9)
    # Source: final value theorem; a loop with integral action has no steady-state error to a setpoint step
    # (Astrom & Murray, Feedback Systems, 2nd ed., 2021, §11.2, from memory). 2 % band: the plot ends after settling.
    assert board.step.measurement.y[0][-1] == pytest.approx(3600.0 * (op.flow + step), rel=0.02 * step / op.flow)
    # ... and rejects a constant load at the plant input: deviation back to zero.
    assert board.step.measurement.y[1][-1] == pytest.approx(3600.0 * op.flow, abs=0.02 * 5.0 * lin.dc_gain_si * 3600)
    # controller output limits drawn as flat rows 2 and 3
    assert set(board.step.output.y[2]) == {0.0}
    assert set(board.step.output.y[3]) == {100.0}


def test_bode_view_matches_the_core_frequency_responses(loop_design):
    model = LoopDesignBoard(loop_design, delay=0.0).model
    view = BodeView(model)
    model.set_value("controller.ti", "6 s")
    design = loop_design.with_value("controller.ti", "6 s")
    _op, lin = _core(design)
    wgrid = np.asarray(view.magnitude.x)
    lw = design.controller.frequency_response(wgrid) * lin.frequency_response(wgrid)
    np.testing.assert_allclose(view.magnitude.y, 20 * np.log10(np.abs(lw)), rtol=1e-9, atol=1e-9)
    # Cross-path check: the margin read from the exact sampled response and from a Pade-approximated model agree.
    _gm, pm, _sm, _wpc, wgc, _ = control.stability_margins(design.controller.tf * lin.pade(6))
    loop = model.result.loop
    assert loop.phase_margin == pytest.approx(pm, abs=0.5)
    assert loop.gain_crossover == pytest.approx(wgc, rel=0.01)
    assert view.crossovers.x[0] == pytest.approx(wgc, rel=0.01)
    view.hertz.value = True
    np.testing.assert_allclose(view.magnitude.x, wgrid / (2 * math.pi), rtol=1e-12)


def test_sensitivity_nyquist_and_metrics_agree(loop_design):
    board = LoopDesignBoard(loop_design, delay=0.0)
    nyq = NyquistView(board.model)
    loop = board.model.result.loop
    _op, lin = _core(loop_design)
    wgrid = np.asarray(board.sensitivity.curves.x)
    lw = loop_design.controller.frequency_response(wgrid) * lin.frequency_response(wgrid)
    # Source: S = 1/(1 + L), T = L/(1 + L) (Astrom & Murray, Feedback Systems, 2nd ed., §12.1, from memory).
    np.testing.assert_allclose(board.sensitivity.curves.y[0], -20 * np.log10(np.abs(1 + lw)), rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(nyq.curve.x, lw.real, rtol=1e-9)
    ms = float(np.max(np.abs(1 / (1 + lw))))
    rows = {r.name: r for r in board.metrics.rows}
    assert rows["peak sensitivity Ms"].value == pytest.approx(ms, rel=1e-12)
    assert rows["peak sensitivity Ms"].met is (ms <= 1.6)
    assert rows["phase margin"].met is (loop.phase_margin >= 45.0)
    assert f"{loop.phase_margin:.4g}" in board.metrics.table.value


def test_targets_missed_are_shown(loop_design):
    design = loop_design.with_value("controller.kp", KP * 6)
    table = MetricsTable(LoopDesignBoard(design, delay=0.0).model)
    rows = {r.name: r for r in table.rows}
    assert rows["peak sensitivity Ms"].value > 1.6
    assert rows["peak sensitivity Ms"].met is False
    assert "missed" in table.table.value


def test_root_locus_and_pole_zero_views(loop_design):
    model = LoopDesignBoard(loop_design, delay=0.0).model
    locus = RootLocusView(model)
    pz = PoleZeroView(model)
    _op, lin = _core(loop_design)
    closed = control.feedback(loop_design.controller.tf * lin.pade(4), 1)
    expected = np.sort_complex(np.asarray(control.poles(closed)))
    got = np.sort_complex(np.asarray(pz.poles.x) + 1j * np.asarray(pz.poles.y))
    np.testing.assert_allclose(got, expected, rtol=1e-9)
    # at gain multiplier 1 the locus passes through the present closed-loop poles
    k = int(np.argmin(np.abs(np.log(model.result.loop.locus_gains))))
    branch = np.sort_complex(np.asarray(locus.branches.x)[:, k] + 1j * np.asarray(locus.branches.y)[:, k])
    np.testing.assert_allclose(branch, expected, rtol=1e-6)
    gains = model.result.loop.locus_gains
    locus.set_gain_at(k + 40)
    assert model.design.controller.kp == pytest.approx(KP * gains[k + 40], rel=1e-9)
    assert "damping" in pz.readout.value


def test_burst_of_200_gain_changes_ends_with_the_last_value(loop_design):
    board = LoopDesignBoard(loop_design, delay=0.0)
    slider = board.panel.rows["controller.kp"].slider
    values = np.geomspace(KP / 3, KP * 2, 200)
    for v in values:
        slider.value = float(v)
    last = float(slider.value)
    design = loop_design.with_value("controller.kp", last)
    op, lin = _core(design)
    closed = control.feedback(design.controller.tf * lin.pade(4), 1)
    t = np.asarray(board.step.measurement.x)
    expected = 3600.0 * (op.flow + 0.05 * op.flow * np.asarray(control.step_response(closed, t).outputs))
    np.testing.assert_allclose(board.step.measurement.y[0], expected, rtol=1e-9)
    assert board.model.design.controller.kp == pytest.approx(last, rel=1e-12)


def test_no_controller_and_exploration_board(loop_design):
    bare = Design(train=demo.raw_water_pump(), operating=("flow", demo.RAW_WATER_FLOW_TARGET))
    step = StepView(LoopDesignBoard(bare, delay=0.0).model)
    assert "no controller" in step.note.value
    board = ModelExplorationBoard(loop_design, delay=0.0)
    assert board.operating.point.x[0] == pytest.approx(380.0)
    assert SensitivityView(board.model).model is board.model
