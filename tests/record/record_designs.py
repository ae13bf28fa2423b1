"""Designs shared by the record tests (invented plants from drivekit.demo plus one of every component type)."""

from __future__ import annotations

import dataclasses
import math

import numpy as np

import drivekit as dk
from drivekit import demo
from drivekit.design import Design, DesignInfo, Targets


def pump_design() -> Design:
    """The invented Marrow Creek flow loop, with spans, header and sources."""
    return Design(
        train=demo.raw_water_pump(),
        operating=("flow", "380 m**3/h"),
        measurement_span=("0 m**3/h", "600 m**3/h"),
        output_span=(0.0, 100.0),
        targets=Targets(settling_time="60 s"),
        info=DesignInfo(project="Marrow Creek raw water (invented)", loop_tag="FIC-201", title="Flow loop"),
        sources={"motor.J": "motor datasheet (invented)", "pipe1.static_head": "site survey 2026 (invented)"},
    )


def conveyor_design() -> Design:
    """The invented Tallow Hill conveyor with its compliant gearbox."""
    return Design(train=demo.quarry_conveyor(), operating=("speed", "70 rpm"))


def dc_fan_design() -> Design:
    """A DC motor on a rigid gear driving a fan, speed measured at the motor (invented values)."""
    train = dk.DriveTrain(
        dk.DCMotor(
            R="0.35 ohm", L="6 mH", k="1.9 N*m/A", J="0.21 kg*m**2", b=0.004, max_voltage="440 V", max_current=90
        ),
        dk.Transmission(ratio=2.5, efficiency=0.97, name="belt B-7"),
        dk.Fan(rated_speed="600 rpm", rated_power="11 kW", J="4.2 kg*m**2", b=0.01, rated_flow="5.5 m**3/s"),
        dk.SpeedSensor(time_constant="20 ms", dead_time="5 ms", location="motor"),
        name="fan F-7 (invented)",
    )
    return Design(train=train, operating=("u", "300 V"), output_span=("0 V", "440 V"))


def two_pipe_pressure_design() -> Design:
    """A pump into two pipe runs with a pressure transmitter and a slurry (invented values)."""
    curve = dk.PumpCurve(
        flow=["0 m**3/h", "100 m**3/h", "200 m**3/h", "260 m**3/h"],
        head=["63 m", "60 m", "51 m", "43 m"],
        efficiency=[0.0, 0.55, 0.71, 0.69],
        name="slurry pump SP-4 curve (invented)",
    )
    train = dk.DriveTrain(
        dk.VariableSpeedDrive(max_frequency="60 Hz", min_frequency="20 Hz", reference="Hz"),
        dk.InductionMotor(rated_power="90 kW", rated_speed="1780 rpm", rated_frequency="60 Hz", J=1.2, poles=4),
        dk.CentrifugalPump(curve=curve, speed="1780 rpm", J="2.3 kg*m**2", max_speed="1900 rpm"),
        dk.Pipe(length="120 m", diameter="150 mm", static_head="8.5 m", minor_loss=4.5, name="suction and riser"),
        dk.Pipe(length="1.35 km", diameter="200 mm", roughness="0.1 mm", static_head="-3 m", minor_loss=9.0),
        dk.PressureSensor(time_constant="0.3 s"),
        fluid=dk.Fluid.slurry(2.65, 0.3, viscosity="4 mPa*s", name="tailings slurry (invented)"),
        name="SP-4 (invented)",
    )
    return Design(train=train, operating=("u", "52.5 Hz"), measurement_span=("0 bar", "10 bar"))


ALL_DESIGNS = {
    "pump": pump_design,
    "conveyor": conveyor_design,
    "dc_fan": dc_fan_design,
    "two_pipes": two_pipe_pressure_design,
}


def assert_same(a: object, b: object, where: str = "design") -> None:
    """Exact equality, field by field, of designs and their parts (floats bit for bit)."""
    if isinstance(a, dk.DriveTrain):
        assert isinstance(b, dk.DriveTrain), where
        assert (a.name, a._output_arg) == (b.name, b._output_arg), where
        assert len(a.stages) == len(b.stages), where
        for i, (sa, sb) in enumerate(zip(a.stages, b.stages, strict=True)):
            assert_same(sa, sb, f"{where}.stage{i}")
        if a.is_pump:
            assert_same(a.fluid, b.fluid, f"{where}.fluid")
        return
    if dataclasses.is_dataclass(a) and not isinstance(a, type):
        assert type(a) is type(b), f"{where}: {type(a).__name__} vs {type(b).__name__}"
        for f in dataclasses.fields(a):
            assert_same(getattr(a, f.name), getattr(b, f.name), f"{where}.{f.name}")
        return
    if isinstance(a, np.ndarray):
        assert isinstance(b, np.ndarray), where
        assert a.dtype == b.dtype, where
        assert np.array_equal(a, b), where
        return
    if isinstance(a, float) and math.isnan(a):
        assert isinstance(b, float), where
        assert math.isnan(b), where
        return
    if isinstance(a, tuple | list):
        assert type(a) is type(b), where
        assert len(a) == len(b), where
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            assert_same(x, y, f"{where}[{i}]")
        return
    assert type(a) is type(b), f"{where}: {a!r} vs {b!r}"
    assert a == b, f"{where}: {a!r} != {b!r}"
