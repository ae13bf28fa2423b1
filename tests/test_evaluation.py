"""Design.evaluate composes the core functions once, and checks the targets."""

import math

import pytest

import drivekit as dk
from drivekit import demo
from drivekit.loop import Loop
from drivekit.margins import loop_margins
from drivekit.pid import PID


@pytest.fixture
def design():
    return dk.Design(
        train=demo.raw_water_pump(),
        operating=("flow", "380 m**3/h"),
        controller=PID(kp=150.0, ti=3.5),
        measurement_span=("0 m**3/h", "600 m**3/h"),
        output_span=(0, 100),
        targets=dk.Targets(phase_margin="45 deg", max_ms=1.6, settling_time="60 s"),
    )


def test_evaluate_equals_the_core_functions_called_directly(design):
    result = design.evaluate()
    op = design.train.operating_point(flow=380 / 3600)
    lin = design.train.linearize(op)
    margins = loop_margins(Loop(lin, design.controller).open_loop)
    assert result.margins.phase_margin == pytest.approx(margins.phase_margin, rel=1e-12)
    assert result.margins.ms == pytest.approx(margins.ms, rel=1e-12)
    assert result.operating_point.u_si == pytest.approx(op.u_si, rel=1e-12)
    summary = result.summary()
    assert summary["phase margin [deg]"] == result.margins.phase_margin
    assert summary["flow [m3/s]"] == pytest.approx(380 / 3600)


def test_targets_are_checked(design):
    result = design.evaluate()
    checks = {c.name: c for c in result.checks}
    assert set(checks) == {"phase margin", "gain margin", "Ms", "overshoot", "settling time"}
    pm = checks["phase margin"]
    assert pm.met == (result.margins.phase_margin >= 45.0)
    assert checks["settling time"].met == (result.step.settling_time <= 60.0)
    strict = dk.Design(
        train=design.train,
        operating=design.operating,
        controller=design.controller,
        targets=dk.Targets(phase_margin=result.margins.phase_margin + 1.0),
    )
    assert not {c.name: c for c in strict.evaluate().checks}["phase margin"].met


def test_settings_in_plant_units(design):
    settings = design.evaluate().settings
    rows = {row[0]: row for row in settings.table()}
    # gain %/% = kp * measurement span / output span = 150 %/(m3/s) * (600/3600 m3/s) / 100 %
    assert float(rows["gain"][1]) == pytest.approx(150.0 * (600 / 3600) / 100.0, rel=1e-3)


def test_unstable_loop_misses_every_target(design):
    hot = dk.Design(train=design.train, operating=design.operating, controller=PID(kp=15000.0, ti=0.5))
    result = hot.evaluate()
    assert not result.margins.stable
    assert result.step is None
    assert result.setpoint_step is not None
    assert not any(c.met for c in result.checks)
    assert math.isnan({c.name: c for c in result.checks}["overshoot"].value)


def test_cautions_include_the_standard_ones(design):
    cautions = design.evaluate().cautions
    assert any("licensed engineer" in c for c in cautions)
    assert any("pressure surges" in c for c in cautions)
