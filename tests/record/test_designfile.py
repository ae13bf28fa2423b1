"""Design files: lossless round trip, atomic save, refusal of malformed and hostile files."""

from __future__ import annotations

import dataclasses
import os
import re
import tomllib
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from record_designs import ALL_DESIGNS, assert_same, conveyor_design, pump_design

import drivekit as dk
from drivekit.design import Design
from drivekit.record import DesignFileError, dumps_design, load_design, loads_design, save_design
from drivekit.record.designfile import COMPONENT_TYPES, FORMAT_VERSION


# -- round trip ---------------------------------------------------------------------------
def test_round_trip_is_lossless_for_every_design(any_design: Design) -> None:
    text = dumps_design(any_design)
    back = loads_design(text)
    assert_same(any_design, back)
    assert dumps_design(back) == text  # deterministic writer: the same design gives the same text


def test_every_component_type_is_covered_by_the_round_trip_designs() -> None:
    seen = {type(s).__name__ for f in ALL_DESIGNS.values() for s in f().train.stages}
    assert seen == set(COMPONENT_TYPES)


def test_every_declared_parameter_is_in_the_file(any_design: Design) -> None:
    data = tomllib.loads(dumps_design(any_design))
    for p in any_design.parameters():
        if p.value is None:
            continue
        if p.role == "operating":
            assert p.name in data["operating"]
        elif p.role == "fluid":
            assert p.name in data["fluid"]
        else:
            assert p.name in data["stages"][p.role], p.key


def test_values_are_written_in_the_units_the_trade_uses() -> None:
    text = dumps_design(pump_design())
    # Source: drivekit.demo.raw_water_pump_stages, the values as typed there (invented plant)
    for expected in ('"75 kW"', '"1485 rpm"', '"650 m"', '"254.5 mm"', '"0.045 mm"', '"380 m**3/h"', '"50 Hz"'):
        assert expected in text
    assert "rated_power_factor = 0.86" in text  # ratios are plain numbers


def test_conveyor_with_compliant_gearbox_round_trips() -> None:
    d = conveyor_design()
    back = loads_design(dumps_design(d))
    assert_same(d, back)
    assert back.train.transmission.compliant
    # Source: drivekit.demo.quarry_conveyor (invented): 2.0e6 N*m/rad, 800 N*m*s/rad
    assert back.train.transmission.stiffness == 2.0e6
    assert back.train.transmission.damping == 800.0


finite = st.floats(min_value=1e-6, max_value=1e6, allow_nan=False, allow_infinity=False)


@settings(max_examples=40, deadline=None)
@given(length=finite, diameter=st.floats(0.01, 2.0), speed=st.floats(100.0, 300.0), sg=st.floats(0.5, 3.0))
def test_arbitrary_values_round_trip_bit_for_bit(length: float, diameter: float, speed: float, sg: float) -> None:
    d = pump_design()
    d = d.with_value("pipe1.length", length).with_value("pipe1.diameter", diameter)
    d = d.with_value("machine.speed", speed).with_value("fluid.sg", sg)
    assert_same(d, loads_design(dumps_design(d)))


def test_controller_round_trips() -> None:
    from drivekit.pid import PID

    pid = PID(
        0.031,
        "12 s",
        "0.5 s",
        form="series",
        derivative_filter=8.0,
        setpoint_weights=(0.7, 0.0),
        output_limits=(0.0, 100.0),
        sample_time="0.1 s",
    )
    d = dataclasses.replace(pump_design(), controller=pid)
    text = dumps_design(d)
    assert 'ti = "12 s"' in text
    back = loads_design(text)
    for name in ("kp", "ti", "td", "form", "derivative_filter", "setpoint_weights", "output_limits", "sample_time"):
        assert getattr(back.controller, name) == getattr(pid, name), name


def test_controller_without_integral_leaves_reset_out() -> None:
    from drivekit.pid import PID

    d = dataclasses.replace(pump_design(), controller=PID(0.02))
    text = dumps_design(d)
    assert "\nti =" not in text
    assert loads_design(text).controller.ti == float("inf")


def test_save_and_load_file(tmp_path: Path) -> None:
    path = save_design(pump_design(), tmp_path / "loop.toml")
    assert_same(pump_design(), load_design(path))
    assert sorted(os.listdir(tmp_path)) == ["loop.toml"]


# -- atomic save -----------------------------------------------------------------------------
def test_crash_while_flushing_leaves_previous_file_intact(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "loop.toml"
    save_design(pump_design(), path)
    before = path.read_bytes()

    def disk_failure(fd: int) -> None:  # the disk fails after the new text was written out
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", disk_failure)
    with pytest.raises(OSError, match="No space left"):
        save_design(conveyor_design(), path)
    monkeypatch.undo()
    assert path.read_bytes() == before
    assert sorted(os.listdir(tmp_path)) == ["loop.toml"]  # no temporary file left behind


def test_crash_midway_through_writing_leaves_previous_file_intact(tmp_path: Path) -> None:
    path = tmp_path / "loop.toml"
    save_design(pump_design(), path)
    before = path.read_bytes()
    broken = conveyor_design()
    # a value corrupted in memory: the writer fails at the machine stage, after the header is written
    object.__setattr__(broken.train.machine, "J", float("nan"))
    with pytest.raises(dk.ParameterError, match="`J`"):
        save_design(broken, path)
    assert path.read_bytes() == before
    assert sorted(os.listdir(tmp_path)) == ["loop.toml"]


# -- refusals -----------------------------------------------------------------------------------
def _line(text: str, fragment: str) -> int:
    return next(i + 1 for i, line in enumerate(text.splitlines()) if fragment in line)


def test_malformed_toml_is_refused_with_its_line() -> None:
    text = dumps_design(pump_design()).replace('J = "0.9 kg*m**2"', 'J = "0.9 kg*m**2')
    with pytest.raises(DesignFileError, match=rf"not valid TOML.*line {_line(text, 'J = ')}"):
        loads_design(text)


def test_unknown_key_is_refused_with_line_and_key() -> None:
    text = dumps_design(pump_design()).replace('J = "0.9 kg*m**2"', 'J = "0.9 kg*m**2"\nslip = 0.01')
    with pytest.raises(DesignFileError, match=rf"line {_line(text, 'slip')}, `stages.motor.slip`: unknown key"):
        loads_design(text)


def test_unknown_top_level_table_is_refused() -> None:
    text = dumps_design(pump_design()) + "\n[extras]\nx = 1\n"
    with pytest.raises(DesignFileError, match=rf"line {_line(text, '[extras]')}, `extras`: unknown key"):
        loads_design(text)


def test_wrong_unit_is_refused_with_line_key_and_expectation() -> None:
    text = dumps_design(pump_design()).replace('J = "0.9 kg*m**2"', 'J = "0.9 m"')
    with pytest.raises(DesignFileError) as err:
        loads_design(text)
    message = str(err.value)
    line = _line(text, 'J = "0.9 m"')
    assert f"line {line}" in message
    assert "`stages.motor.J`: got '0.9 m'" in message
    assert "kg" in message


def test_plain_number_for_a_physical_value_is_refused() -> None:
    text = dumps_design(pump_design()).replace('length = "650 m"', "length = 650")
    with pytest.raises(DesignFileError, match=r"`stages.pipe1.length`: got the plain number 650"):
        loads_design(text)


def test_value_out_of_range_is_refused() -> None:
    text = dumps_design(pump_design()).replace('diameter = "254.5 mm"', 'diameter = "-254.5 mm"')
    with pytest.raises(DesignFileError, match=r"`stages.pipe1.diameter`.*> 0"):
        loads_design(text)


def test_newer_format_version_is_refused() -> None:
    text = dumps_design(pump_design()).replace(
        f"format_version = {FORMAT_VERSION}", f"format_version = {FORMAT_VERSION + 1}"
    )
    with pytest.raises(DesignFileError, match=r"line 3, `format_version`: .*newer drivekit"):
        loads_design(text)


def test_type_name_that_is_not_a_component_is_refused() -> None:
    text = dumps_design(pump_design()).replace('type = "FlowMeter"', 'type = "os.system"')
    with pytest.raises(DesignFileError, match=r"`stages.sensor.type`: got 'os.system', expected one of FlowMeter"):
        loads_design(text)


def test_component_of_the_wrong_role_is_refused() -> None:
    text = dumps_design(pump_design()).replace('type = "FlowMeter"', 'type = "InductionMotor"')
    with pytest.raises(DesignFileError, match=r"`stages.sensor.type`: got 'InductionMotor'"):
        loads_design(text)


@pytest.mark.parametrize(
    ("old", "new", "key"),
    [
        ('rated_power = "75 kW"', 'rated_power = "1e400 kW"', "stages.motor.rated_power"),
        ("minor_loss = 12.0", "minor_loss = nan", "stages.pipe1.minor_loss"),
        ("minor_loss = 12.0", "minor_loss = inf", "stages.pipe1.minor_loss"),
        ("minor_loss = 12.0", "minor_loss = " + "9" * 400, "stages.pipe1.minor_loss"),
        ("poles = 4", "poles = " + "9" * 30, "stages.motor.poles"),
        ('length = "650 m"', 'length = "2**99999999 m"', "stages.pipe1.length"),
        ('length = "650 m"', 'length = "650 m**999999"', "stages.pipe1.length"),
        ('length = "650 m"', f'length = "{"6" * 200} m"', "stages.pipe1.length"),
        ('length = "650 m"', "length = \"__import__('os') m\"", "stages.pipe1.length"),
        ('length = "650 m"', "length = [[[[1]]]]", "stages.pipe1.length"),
        ('length = "650 m"', "length = {a = {b = 1}}", "stages.pipe1.length"),
        ('name = "M-201"', f'name = "{"x" * 5000}"', "stages.motor.name"),
        ("poles = 4", "poles = true", "stages.motor.poles"),
    ],
)
def test_hostile_values_are_refused_cleanly(old: str, new: str, key: str) -> None:
    text = dumps_design(pump_design())
    assert old in text
    with pytest.raises(DesignFileError, match=re.escape(f"`{key}`")):
        loads_design(text.replace(old, new, 1))


def test_deeply_nested_arrays_are_refused() -> None:
    text = dumps_design(pump_design())
    text = text.replace("minor_loss = 12.0", "minor_loss = " + "[" * 100_000 + "]" * 100_000)
    with pytest.raises(DesignFileError, match="nested too deeply"):
        loads_design(text)


def test_deeply_nested_tables_are_refused() -> None:
    text = dumps_design(pump_design()) + "\n[" + ".".join(["a"] * 5000) + "]\nx = 1\n"
    with pytest.raises(DesignFileError, match="`a`: unknown key"):
        loads_design(text)


def test_huge_file_is_refused_before_parsing(tmp_path: Path) -> None:
    path = tmp_path / "big.toml"
    path.write_text(dumps_design(pump_design()) + "#" * 2_000_000)
    with pytest.raises(DesignFileError, match="larger than"):
        load_design(path)


def test_missing_pump_curve_is_refused() -> None:
    text = dumps_design(pump_design())
    start = text.index("[stages.machine.curve]")
    end = text.index("[stages.pipe1]")
    with pytest.raises(DesignFileError, match=r"`stages.machine`: a CentrifugalPump needs its curve"):
        loads_design(text[:start] + text[end:])


def test_pump_curve_that_rises_is_refused_with_its_key() -> None:
    text = dumps_design(pump_design()).replace('"42 m", "34 m"', '"42 m", "44 m"')
    with pytest.raises(DesignFileError, match=r"`stages.machine.curve.head`: .*must fall"):
        loads_design(text)


def test_unknown_source_key_is_refused() -> None:
    text = dumps_design(pump_design()).replace('"motor.J" =', '"gearbox.J" =')
    with pytest.raises(DesignFileError, match=r"`sources.gearbox.J`: unknown key 'gearbox.J'"):
        loads_design(text)


def test_two_operating_targets_are_refused() -> None:
    text = dumps_design(pump_design()).replace('flow = "380 m**3/h"', 'flow = "380 m**3/h"\nspeed = "1400 rpm"')
    with pytest.raises(DesignFileError, match=r"`operating`: got 2 targets"):
        loads_design(text)


def test_not_utf8_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "bad.toml"
    path.write_bytes(b"format_version = 1\n\xff\xfe")
    with pytest.raises(DesignFileError, match="not UTF-8"):
        load_design(path)
