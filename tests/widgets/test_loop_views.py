"""Headless tests of the loop views and boards: mark data against the core's results, computed here.

The expected arrays come from calling the core directly (``Design.evaluate``,
``root_locus``); python-control is used side by side as an outside reference
where a view shows a number it can check.
"""

import math

import control
import numpy as np
import pytest

from drivekit import demo
from drivekit.design import Design
from drivekit.pid import PID
from drivekit.rootlocus import root_locus
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
M3H = 3600.0  # (m**3/h) per (m**3/s); Source: definition of the hour, SI Brochure, 9th ed., Table 8


@pytest.fixture
def loop_design():
    return Design(
        train=demo.raw_water_pump(),
        operating=("flow", demo.RAW_WATER_FLOW_TARGET),
        controller=PID(KP, TI),
        output_span=(0.0, 100.0),
        measurement_span=("0 m**3/h", "600 m**3/h"),
    )


def _expected_steps(design):
    """What the step view must draw: the core's unit responses around the operating point."""
    ev = design.evaluate()
    op = ev.operating_point
    y0 = float(design.train.output_of(op.x, op.u_si))
    r, d = 0.05 * y0, 0.05 * 100.0
    return ev, y0, r, d


def _rows(x):
    """The time row of each line: one shared row, or one row per line."""
    x = np.asarray(x)
    return (x, x) if x.ndim == 1 else tuple(x)


def test_step_view_draws_the_core_responses_after_a_gain_change(loop_design):
    board = LoopDesignBoard(loop_design, delay=0.0)
    assert board.panel.rows["controller.kp"].submit(f"{KP * 1.5} percent/(m**3/s)")
    design = loop_design.with_value("controller.kp", KP * 1.5)
    ev, y0, r, d = _expected_steps(design)
    sp, ld = ev.setpoint_step, ev.load_step
    t_sp, t_ld = _rows(board.step.measurement.x)
    np.testing.assert_array_equal(t_sp, sp.t)
    np.testing.assert_array_equal(t_ld, ld.t)
    np.testing.assert_allclose(board.step.measurement.y[0], M3H * (y0 + r * sp.y), rtol=1e-12)
    np.testing.assert_allclose(board.step.measurement.y[1], M3H * (y0 + d * ld.y), rtol=1e-12)
    np.testing.assert_allclose(board.step.output.y[0], ev.operating_point.u_si + r * sp.u, rtol=1e-12)
    np.testing.assert_allclose(board.step.output.y[1], ev.operating_point.u_si + d * ld.u, rtol=1e-12)
    assert board.step.settling.x[0] == pytest.approx(ev.step.settling_time, rel=1e-12)
    # Source: final value theorem; a loop with integral action has no steady-state error to a setpoint step
    # (Astrom & Murray, Feedback Systems, 2nd ed., 2021, §11.2, from memory). 2 % band: the plot ends after settling.
    assert board.step.measurement.y[0][-1] == pytest.approx(M3H * (y0 + r), rel=0.02 * r / y0)
    # ... and rejects a constant load at the plant input: deviation back to zero (2 % of the open-loop deviation).
    assert board.step.measurement.y[1][-1] == pytest.approx(M3H * y0, abs=0.02 * d * ev.plant.dc_gain_si * M3H)
    # controller output limits drawn as flat rows 2 and 3
    assert set(board.step.output.y[2]) == {0.0}
    assert set(board.step.output.y[3]) == {100.0}


def test_step_view_against_python_control_with_a_fine_pade(loop_design):
    # Outside reference: python-control's closed-loop step with a 10th-order Pade for the 0.2 s dead time.
    view = StepView(LoopDesignBoard(loop_design, delay=0.0).model)
    ev, y0, r, _d = _expected_steps(loop_design)
    t = _rows(view.measurement.x)[0]
    closed = control.feedback(loop_design.controller.tf * ev.plant.pade(10), 1)
    ref = np.asarray(control.step_response(closed, t).outputs).reshape(-1)
    # Pade of order 10 at the loop's bandwidth (about 1 rad/s, theta = 0.2 s) is exact to far below 1e-3.
    np.testing.assert_allclose((np.asarray(view.measurement.y[0]) / M3H - y0) / r, ref, atol=1e-3)


def test_bode_view_draws_the_core_frequency_response(loop_design):
    model = LoopDesignBoard(loop_design, delay=0.0).model
    view = BodeView(model)
    model.set_value("controller.ti", "6 s")
    design = loop_design.with_value("controller.ti", "6 s")
    ev = design.evaluate()
    np.testing.assert_array_equal(view.magnitude.x, ev.frequency.omega)
    np.testing.assert_allclose(view.magnitude.y, ev.frequency.mag_db, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(view.phase.y, ev.frequency.phase_deg, rtol=1e-12, atol=1e-12)
    # Cross-path check: the core's margins (dead time exact) against python-control with a 6th-order Pade.
    _gm, pm, _sm, _wpc, wgc, _ = control.stability_margins(design.controller.tf * ev.plant.pade(6))
    assert ev.margins.phase_margin == pytest.approx(pm, abs=0.5)
    assert view.crossovers.x[0] == pytest.approx(wgc, rel=0.01)
    assert view.crossovers.x[0] == ev.margins.gain_crossover
    view.hertz.value = True
    # Source: f = w / (2 pi) (definition of the hertz).
    np.testing.assert_allclose(view.magnitude.x, ev.frequency.omega / (2 * math.pi), rtol=1e-12)


def test_sensitivity_nyquist_and_metrics_agree(loop_design):
    board = LoopDesignBoard(loop_design, delay=0.0)
    nyq = NyquistView(board.model)
    ev = loop_design.evaluate()
    fr = ev.frequency
    np.testing.assert_allclose(board.sensitivity.curves.y[0], 20 * np.log10(fr.sensitivity_mag), rtol=1e-12)
    np.testing.assert_allclose(board.sensitivity.curves.y[1], 20 * np.log10(fr.complementary_mag), rtol=1e-12)
    np.testing.assert_array_equal(nyq.curve.x, fr.response.real)
    # Source: S = 1/(1 + L) (Astrom & Murray, Feedback Systems, 2nd ed., §12.1, from memory), L from the same core.
    np.testing.assert_allclose(
        board.sensitivity.curves.y[0], -20 * np.log10(np.abs(1 + fr.response)), rtol=1e-9, atol=1e-12
    )
    rows = {r.name: r for r in board.metrics.rows}
    assert rows["peak sensitivity Ms"].value == ev.margins.ms
    assert rows["phase margin"].value == ev.margins.phase_margin
    assert rows["overshoot"].value == ev.step.overshoot
    checks = {c.name: c for c in ev.checks}
    assert rows["peak sensitivity Ms"].met is checks["Ms"].met
    assert rows["phase margin"].met is checks["phase margin"].met
    assert rows["gain crossover"].met is None
    assert f"{ev.margins.phase_margin:.4g}" in board.metrics.table.value
    assert ev.margins.verdict in board.metrics.note.value
    # The plant settings (%/%, min/repeat) from the core's PlantSettings, spans given.
    assert "min/repeat" in board.metrics.table.value


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
    ev = loop_design.evaluate()
    rl = root_locus(ev.loop.open_loop)
    np.testing.assert_array_equal(locus.branches.x, rl.branches.real.T)
    np.testing.assert_array_equal(locus.branches.y, rl.branches.imag.T)
    assert "Pade" in locus.note.value
    # Outside reference: closed-loop poles from python-control with the same 3rd-order Pade of the dead time.
    closed = control.feedback(loop_design.controller.tf * ev.plant.pade(3), 1)
    expected = np.sort_complex(np.asarray(control.poles(closed)))
    got = np.sort_complex(np.asarray(pz.poles.x) + 1j * np.asarray(pz.poles.y))
    np.testing.assert_allclose(got, expected, rtol=1e-8)
    got = np.sort_complex(np.asarray(locus.current.x) + 1j * np.asarray(locus.current.y))
    np.testing.assert_allclose(got, expected, rtol=1e-8)
    assert "damping" in pz.readout.value


@pytest.mark.parametrize("form", ["ideal", "parallel"])
def test_clicking_the_locus_scales_the_whole_controller(loop_design, form):
    design = Design(
        train=loop_design.train,
        operating=loop_design.operating,
        controller=PID(KP, TI, 0.1, form=form),
        output_span=(0.0, 100.0),
    )
    model = LoopDesignBoard(design, delay=0.0).model
    locus = RootLocusView(model)
    gains = model.result.locus.gains
    k = int(np.argmin(np.abs(gains - 1.0))) + 10
    locus.set_gain_at(k)
    w = np.logspace(-2, 2, 30)
    # Source: the root locus is the closed loop of K L(s) (Ogata, Modern Control Engineering, 5th ed., §6-2),
    # so the new controller must equal K times the old one at every frequency.
    np.testing.assert_allclose(
        model.design.controller.frequency_response(w), gains[k] * design.controller.frequency_response(w), rtol=1e-9
    )


def test_burst_of_200_gain_changes_ends_with_the_last_value(loop_design):
    board = LoopDesignBoard(loop_design, delay=0.0)
    row = board.panel.rows["controller.kp"]
    assert row.unit.label == "%/(m³/h)"
    for v in np.geomspace(0.1, 0.6, 200):
        row.slider.value = float(v)
    last = float(row.slider.value) * M3H
    design = loop_design.with_value("controller.kp", last)
    ev, y0, r, _d = _expected_steps(design)
    np.testing.assert_allclose(board.step.measurement.y[0], M3H * (y0 + r * ev.setpoint_step.y), rtol=1e-12)
    assert board.model.design.controller.kp == pytest.approx(last, rel=1e-12)


def test_no_controller_and_exploration_board(loop_design):
    bare = Design(train=demo.raw_water_pump(), operating=("flow", demo.RAW_WATER_FLOW_TARGET))
    model = LoopDesignBoard(bare, delay=0.0).model
    assert "no controller" in StepView(model).note.value
    assert "no controller" in RootLocusView(model).note.value
    bode = BodeView(model)
    ev = bare.evaluate()
    np.testing.assert_allclose(bode.magnitude.y, ev.frequency.mag_db, rtol=1e-12)
    pz = PoleZeroView(model)
    np.testing.assert_allclose(np.sort(pz.poles.x), np.sort(ev.plant.poles.real), rtol=1e-12)
    board = ModelExplorationBoard(loop_design, delay=0.0)
    assert board.operating.point.x[0] == pytest.approx(380.0)
    assert board.panel.accordion.selected_index == board.panel.accordion.titles.index("operating point")
    assert SensitivityView(board.model).model is board.model


def test_one_evaluation_per_change_shared_by_all_views(loop_design, monkeypatch):
    calls = []
    evaluate = Design.evaluate

    def counted(self):
        calls.append(self)
        return evaluate(self)

    monkeypatch.setattr(Design, "evaluate", counted)
    board = LoopDesignBoard(loop_design, delay=0.0)
    assert len(calls) == 1
    board.panel.rows["controller.ti"].submit("5 s")
    assert len(calls) == 2
    assert board.model.result.evaluation.design.controller.ti == 5.0
