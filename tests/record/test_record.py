"""The record cell and the plain-words diff."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
import subprocess
import sys

import control
import pytest
from record_designs import conveyor_design, pump_design

from drivekit.pid import PID
from drivekit.record.designfile import dumps_design
from drivekit.record.diff import diff_designs
from drivekit.record.record import METADATA_KEY, STANDARD_CAUTIONS, build_record
from drivekit.record.results import evaluate


def tuned_pump_design():
    return dataclasses.replace(pump_design(), controller=PID(230.0, "12 s"))


def test_record_holds_tables_figures_and_metadata() -> None:
    design = tuned_pump_design()
    rec = build_record(design)
    for cls in ("dk-inputs", "dk-curve", "dk-operating", "dk-model", "dk-series", "dk-controller", "dk-results"):
        assert f'class="{cls}"' in rec.html, cls
    for name in ("step", "bode", "operating"):
        assert f"dk-figure-{name}" in rec.html
        assert rec.figures[name].startswith("<svg")
    assert "<script" not in rec.html
    for caution in STANDARD_CAUTIONS:
        assert caution in rec.text
    assert "motor datasheet (invented)" in rec.html  # the source of motor.J
    assert "not stated" in rec.html
    bundle, metadata = rec._repr_mimebundle_()
    assert set(bundle) == {"text/html", "text/plain"}
    entry = json.loads(json.dumps(metadata))[METADATA_KEY]
    # Source: the hash by hashlib of the design file text, computed here on its own
    assert entry["inputs_hash"] == "sha256:" + hashlib.sha256(dumps_design(design).encode()).hexdigest()
    assert entry["results"]["operating point: flow"] == {"value": pytest.approx(380.0, rel=1e-9), "unit": "m**3/h"}


def test_operating_point_in_the_record_is_the_core_operating_point() -> None:
    design = tuned_pump_design()
    results = build_record(design, figures=False).metadata[METADATA_KEY]["results"]
    for name, value, unit in design.operating_point().table():
        entry = results[f"operating point: {name}"]
        assert entry["unit"] == unit
        if math.isfinite(value):
            assert entry["value"] == value


def test_phase_margin_agrees_with_python_control() -> None:
    design = tuned_pump_design()
    ev = evaluate(design)
    # Source: python-control 0.10 stability_margins on the loop with the 0.2 s dead time by a
    # 10th-order Pade approximation (phase error far below 0.1 deg at the 0.05 rad/s crossover)
    _, pm, *_ = control.stability_margins(design.controller.tf * ev.model.pade(10))
    assert ev.get("loop: phase margin").value == pytest.approx(pm, abs=0.1)


def test_record_without_controller_says_what_is_left_out() -> None:
    rec = build_record(conveyor_design())
    assert "no controller in the design" in rec.text
    assert "Torque against speed" in rec.figures["operating"]
    assert "loop: phase margin" not in rec.metadata[METADATA_KEY]["results"]


def test_record_prints_text_outside_a_notebook() -> None:
    code = (
        "import sys; sys.path.insert(0, 'tests/record')\n"
        "from record_designs import conveyor_design\n"
        "from drivekit.record.record import record\n"
        "record(conveyor_design(), figures=False)\n"
        "print('IPython' in sys.modules)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.startswith("Calculation record: Tallow Hill CV-3")
    assert out.strip().endswith("False")  # the record never imported IPython outside a notebook


def test_diff_names_changed_inputs_and_results_in_plain_words() -> None:
    a = tuned_pump_design()
    b = dataclasses.replace(a.with_value("motor.J", "1.1 kg*m**2"), controller=PID(230.0, "8 s"))
    d = diff_designs(a, b)
    assert d.inputs == ("Ti changed 12 s -> 8 s", "motor.J (rotor inertia) changed 0.9 kg*m**2 -> 1.1 kg*m**2")
    pm_a = evaluate(a).get("loop: phase margin").value
    pm_b = evaluate(b).get("loop: phase margin").value
    assert f"loop: phase margin {pm_a:.4g} -> {pm_b:.4g} deg" in d.results
    assert "controller: reset time 12 -> 8 s" in d.results
    assert not d.same


def test_diff_of_a_design_with_itself_is_empty() -> None:
    d = diff_designs(pump_design(), pump_design())
    assert d.same
    assert d.text == "The designs are the same: no input or result changed."
