"""Headless tests (no kernel) of the design model, the coalescer and the parameter panel."""

import asyncio
import html
import math

import numpy as np
import pytest

from drivekit.units import ParameterError
from drivekit.widgets import Coalescer, DesignModel, OperatingPointView, ParameterPanel


def test_panel_lists_every_parameter_of_the_design(pump_design):
    panel = ParameterPanel(DesignModel(pump_design))
    assert set(panel.rows) == {p.key for p in pump_design.parameters()}
    titles = panel.accordion.titles
    assert titles.index("motor") < titles.index("pump") < titles.index("pipe") < titles.index("operating point")


def test_slider_change_changes_the_design(pump_design):
    model = DesignModel(pump_design)
    row = ParameterPanel(model).rows["operating.flow"]
    assert row.unit.label == "m³/h"
    row.slider.value = 420.0
    # Source: 1 m**3/h = 1/3600 m**3/s by definition of the hour (SI Brochure, 9th ed., Table 8).
    assert model.design.operating == ("flow", pytest.approx(420.0 / 3600.0, rel=1e-12))
    assert row.entry.value == "420"


def test_entry_with_units_is_converted(pump_design):
    model = DesignModel(pump_design)
    panel = ParameterPanel(model)
    assert panel.rows["motor.J"].submit("1.2 kg*m**2")
    assert model.design.value("motor.J") == pytest.approx(1.2)
    assert panel.rows["operating.flow"].submit("100 L/s")
    # Source: 1 L = 1e-3 m**3 (SI Brochure, 9th ed., Table 8).
    assert model.design.operating[1] == pytest.approx(0.1, rel=1e-12)
    assert panel.rows["operating.flow"].entry.value == "360"  # shown in m³/h


def test_bare_number_is_read_in_the_shown_unit(pump_design):
    model = DesignModel(pump_design)
    row = ParameterPanel(model).rows["pipe1.static_head"]
    row.unit_menu.value = 1  # bar
    assert row.unit.label == "bar"
    assert row.submit("2")
    rho = pump_design.train.fluid.density
    # Source: hydrostatic pressure p = rho g h (e.g. White, Fluid Mechanics, 7th ed., §2.3, from memory);
    # g = 9.80665 m/s**2 (3rd CGPM, 1901).
    assert model.design.value("pipe1.static_head") == pytest.approx(2e5 / (rho * 9.80665), rel=1e-12)


@pytest.mark.parametrize(
    ("text", "why"),
    [("abc", "could not read"), ("3 m", "expected rotor inertia"), ("-1 kg*m**2", "> 0"), ("nan", "not a finite")],
)
def test_bad_entries_are_refused_with_a_message(pump_design, text, why):
    model = DesignModel(pump_design)
    row = ParameterPanel(model).rows["motor.J"]
    revision = model.revision
    assert not row.submit(text)
    assert why in html.unescape(row.message.value)
    assert "refused" in row.message.value
    assert row.message.layout.display == "block"
    assert model.design.value("motor.J") == pytest.approx(0.9)
    assert model.revision == revision
    assert row.entry.value == "0.9"  # the entry shows the unchanged value again
    assert row.submit("1.0")
    assert row.message.value == ""


def test_reset_and_lock(pump_design):
    model = DesignModel(pump_design)
    row = ParameterPanel(model).rows["motor.J"]
    row.slider.value = 3.0
    assert model.design.value("motor.J") == pytest.approx(3.0)
    row.reset()
    assert model.design.value("motor.J") == pytest.approx(0.9)
    assert row.slider.value == pytest.approx(0.9)
    row.lock.value = True
    assert row.slider.disabled
    assert row.entry.disabled
    assert row.reset_button.disabled


def test_log_slider_for_inertia_and_linear_for_flow(pump_design):
    panel = ParameterPanel(DesignModel(pump_design))
    j = panel.rows["motor.J"].slider
    assert type(j).__name__ == "FloatLogSlider"
    assert 10**j.min == pytest.approx(0.09)
    assert 10**j.max == pytest.approx(9.0)
    q = panel.rows["operating.flow"].slider
    assert type(q).__name__ == "FloatSlider"
    assert (q.min, q.max) == (pytest.approx(190.0), pytest.approx(570.0))


def test_unit_switch_rpm_and_rad_per_s(pump_design):
    row = ParameterPanel(DesignModel(pump_design)).rows["motor.rated_speed"]
    assert row.entry.value == "1485"
    row.unit_menu.value = 1
    # Source: 1 rpm = 2 pi / 60 rad/s (definition of the revolution and the minute).
    assert float(row.entry.value) == pytest.approx(1485 * 2 * math.pi / 60, rel=1e-4)
    assert row.slider.value == pytest.approx(1485 * 2 * math.pi / 60, rel=1e-9)


def test_error_keeps_last_good_result_marked_stale(pump_design):
    model = DesignModel(pump_design)
    panel = ParameterPanel(model)
    good = model.result
    # 50 m of static head is above what the P-201 gives at 50 Hz for 380 m3/h (its curve: 34 m at 450 m3/h).
    assert panel.rows["pipe1.static_head"].submit("50 m")
    assert model.result is good
    assert model.stale
    assert "OperatingPointError" in model.error
    assert "stale" in panel.status.value
    assert model.design.value("pipe1.static_head") == pytest.approx(50.0)
    assert panel.rows["pipe1.static_head"].submit("18 m")
    assert not model.stale
    assert model.error == ""
    assert model.result is not good


def test_record_hook_gets_the_current_design(pump_design):
    model = DesignModel(pump_design)
    panel = ParameterPanel(model)
    panel.record()
    assert "No record writer" in panel.status.value
    seen = []
    panel.on_record = lambda d: seen.append(d) or "written"
    panel.rows["motor.J"].submit("2 kg*m**2")
    assert panel.record() == "written"
    assert seen[0].value("motor.J") == pytest.approx(2.0)
    assert panel.status.value == "written"


def test_burst_of_200_changes_ends_on_the_last_value(pump_design):
    model = DesignModel(pump_design)
    panel = ParameterPanel(model)
    view = OperatingPointView(model)
    row = panel.rows["operating.flow"]
    values = np.linspace(250.0, 450.0, 200)
    for v in values:
        row.slider.value = float(v)
    assert model.design.operating[1] == pytest.approx(450.0 / 3600.0)
    expected = pump_design.with_value("operating.flow", "450 m**3/h").operating_point()
    assert view.point.x[0] == pytest.approx(450.0)
    assert view.point.y[0] == pytest.approx(expected.head, rel=1e-12)


def test_coalesced_burst_computes_once_with_the_last_value(pump_design):
    calls = []

    def compute(design):
        calls.append(design.operating[1])
        return design.operating[1]

    async def burst():
        model = DesignModel(pump_design, delay=0.02, compute=compute)
        for q in np.linspace(300.0, 400.0, 200):
            model.set_value("operating.flow", f"{q} m**3/h")
        assert model.coalescer.pending
        await asyncio.sleep(0.1)
        return model

    model = asyncio.run(burst())
    assert len(calls) == 2  # construction + one for the whole burst
    assert calls[-1] == pytest.approx(400.0 / 3600.0)
    assert model.result == pytest.approx(400.0 / 3600.0)
    assert model.coalescer.requests == 200
    assert model.coalescer.runs == 1


def test_no_stale_publish_when_a_newer_change_arrives_during_compute(pump_design):
    published = []
    holder = {}

    def compute(design):
        q = design.operating[1]
        if len(published) == 1 and "nested" not in holder:
            holder["nested"] = True
            holder["model"].set_value("operating.flow", "333 m**3/h")  # arrives while this one computes
        return q

    model = DesignModel(pump_design, compute=compute)
    holder["model"] = model
    model.observe(lambda c: published.append(c["new"]), names="result")
    published.append(model.result)
    model.set_value("operating.flow", "300 m**3/h")
    assert published[-1] == pytest.approx(333.0 / 3600.0)
    assert pytest.approx(300.0 / 3600.0) not in published[1:]


def test_coalescer_rejects_negative_delay():
    with pytest.raises(ParameterError, match="`delay`"):
        Coalescer(lambda: None, -1.0)


def test_operating_view_matches_the_core(pump_design):
    model = DesignModel(pump_design)
    view = OperatingPointView(model)
    model.set_value("pipe1.static_head", "22 m")
    design = pump_design.with_value("pipe1.static_head", "22 m")
    op = design.operating_point()
    flow = np.asarray(view.pump_lines.x) / 3600.0
    np.testing.assert_allclose(view.system_line.y, design.train.system_curve(flow), rtol=1e-12)
    pump = design.train.machine
    speeds = [pump.speed * f for f in (1.0, 0.9, 0.8, 0.7, 0.6)]
    np.testing.assert_allclose(view.pump_lines.y, design.train.pump_curves(speeds, flow), rtol=1e-12)
    assert view.point.y[0] == pytest.approx(op.head, rel=1e-12)
    assert view.min_flow_line.x[0] == pytest.approx(pump.min_flow(op.machine_speed) * 3600.0, rel=1e-12)
    # The operating point lies on the system curve: pump head = system head at the operating flow.
    assert op.head == pytest.approx(float(design.train.system_curve(op.flow)), rel=1e-6)


def test_controller_rows_come_from_the_design_with_their_units(pump_design):
    from drivekit.pid import PID

    design = pump_design.__class__(
        train=pump_design.train, operating=pump_design.operating, controller=PID(1080.0, 3.0)
    )
    panel = ParameterPanel(DesignModel(design))
    specs = {p.key: p.spec for p in design.parameters()}
    for key in ("controller.kp", "controller.ti", "controller.td"):
        assert panel.rows[key].parameter.spec == specs[key]
    row = panel.rows["controller.kp"]
    # Source: 1 h = 3600 s (SI Brochure, 9th ed., Table 8): 0.3 %/(m3/h) = 1080 %/(m3/s).
    assert row.entry.value == "0.3"
    assert row.submit("0.45")
    assert panel.model.design.controller.kp == pytest.approx(0.45 * 3600.0, rel=1e-12)
    assert row.submit("2000 percent/(m**3/s)")
    assert panel.model.design.controller.kp == pytest.approx(2000.0, rel=1e-12)
    assert not row.submit("3 s")
    assert "refused" in row.message.value
