"""Package-level contracts: public names, no widget imports in the core, units in docstrings."""

import dataclasses
import inspect
import re
import subprocess
import sys
from pathlib import Path

import pytest

import drivekit as dk
from drivekit.units import parameter_specs, ureg

ROOT = Path(__file__).resolve().parents[1]


def test_core_does_not_import_widget_libraries():
    code = (
        "import sys, drivekit, drivekit.design, drivekit.demo\n"
        "bad = [m for m in ('ipywidgets', 'bqplot', 'IPython') if m in sys.modules]\n"
        "assert not bad, bad\n"
    )
    subprocess.run([sys.executable, "-c", code], check=True)


def test_all_lists_importable_names():
    for name in dk.__all__:
        assert hasattr(dk, name), name


COMPONENTS = [
    dk.DCMotor,
    dk.InductionMotor,
    dk.VariableSpeedDrive,
    dk.Transmission,
    dk.PumpCurve,
    dk.CentrifugalPump,
    dk.Fan,
    dk.Conveyor,
    dk.Pipe,
    dk.Fluid,
    dk.FlowMeter,
    dk.SpeedSensor,
    dk.PressureSensor,
]


def _documented_units(cls):
    """name -> unit text in brackets from the numpydoc Parameters section."""
    doc = inspect.getdoc(cls) or ""
    section = doc.split("Parameters\n----------\n", 1)[1]
    section = re.split(r"\n\n[A-Z][a-z]+\n-+\n", section, maxsplit=1)[0]
    units = {}
    for block in re.split(r"\n(?=\S)", section):
        head, _, body = block.partition("\n")
        names = [n.strip() for n in head.split(":")[0].split(",")]
        found = re.findall(r"\[([^\]]+)\]", body)
        for n in names:
            units[n] = found[0] if found else None
    return units


@pytest.mark.parametrize("cls", COMPONENTS, ids=lambda c: c.__name__)
def test_every_physical_parameter_documents_its_unit(cls):
    documented = _documented_units(cls)
    fields = {f.name: f.metadata["spec"] for f in dataclasses.fields(cls) if "spec" in f.metadata}
    for name, spec in fields.items():
        assert name in documented, f"{cls.__name__}.{name} is not documented"
        text = documented[name]
        assert text is not None, f"{cls.__name__}.{name} has no [unit] in its docstring"
        doc_unit = "dimensionless" if text == "-" else text.replace("%", "percent")
        declared = spec.unit or "dimensionless"
        assert ureg.Quantity(1.0, doc_unit).to(declared).magnitude == pytest.approx(1.0), (cls.__name__, name)


def test_parameter_specs_cover_the_examples():
    motor = dk.DCMotor(R=1, L=0.01, k=0.5, J=0.1)
    names = [n for n, _ in parameter_specs(motor)]
    assert names[:5] == ["R", "L", "k", "J", "b"]


# The stable public names of the design contract (DESIGN.md, "Contract").
CONTRACT = [
    "DCMotor",
    "InductionMotor",
    "Transmission",
    "PumpCurve",
    "CentrifugalPump",
    "Pipe",
    "Fluid",
    "FlowMeter",
    "DriveTrain",
    "PID",
    "loop_margins",
    "step_metrics",
    "FOPDT",
    "tuning.simc",
    "tuning.lambda_tuning",
    "tuning.ziegler_nichols",
    "identify.fopdt",
]


@pytest.mark.parametrize("name", CONTRACT)
def test_contract_names_are_public(name):
    head = name.split(".")[0]
    assert head in dk.__all__
    obj = dk
    for part in name.split("."):
        obj = getattr(obj, part)
    assert callable(obj)


def test_contract_methods_exist():
    train = dk.demo.raw_water_pump()
    op = train.operating_point(flow="380 m**3/h")
    lin = train.linearize(op)
    for attr in ("tf", "ss", "poles", "dc_gain"):
        assert getattr(lin, attr) is not None
    assert lin.factored().text
    assert train.series_approximation(op).order == lin.order
