"""The committed template notebooks: recorded outputs, no widget state, and `drivekit check` agrees with them."""

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from drivekit.record.notebooks import WIDGET_MIME
from drivekit.record.record import METADATA_KEY

NOTEBOOKS = Path(__file__).resolve().parents[1] / "notebooks"
TEMPLATES = ["pump_flow_loop", "conveyor_speed_loop", "bump_test_tuning", "slurry_line_checks"]
DRIVEKIT = Path(sys.executable).parent / "drivekit"


@pytest.mark.parametrize("name", TEMPLATES)
def test_template_has_its_record_and_no_widget_state(name):
    nb = json.loads((NOTEBOOKS / f"{name}.ipynb").read_text())
    assert "widgets" not in nb["metadata"]
    outputs = [o for c in nb["cells"] if c["cell_type"] == "code" for o in c.get("outputs", [])]
    assert not any(WIDGET_MIME in o.get("data", {}) for o in outputs)
    records = [o for o in outputs if METADATA_KEY in o.get("metadata", {})]
    assert len(records) == 1
    assert records[0]["metadata"][METADATA_KEY]["results"]
    tags = [c["metadata"].get("tags", []) for c in nb["cells"]]
    assert ["parameters"] in tags
    assert (NOTEBOOKS / f"{name}.toml").exists()


@pytest.mark.parametrize("name", TEMPLATES)
def test_check_passes_on_the_committed_template(name):
    run = subprocess.run([str(DRIVEKIT), "check", str(NOTEBOOKS / f"{name}.ipynb")], capture_output=True, text=True)
    assert run.returncode == 0, run.stdout + run.stderr
    assert "ok (1 record unchanged)" in run.stdout


def test_check_fails_readably_when_the_design_file_changed(tmp_path):
    for suffix in (".ipynb", ".toml"):
        shutil.copy(NOTEBOOKS / f"pump_flow_loop{suffix}", tmp_path / f"pump_flow_loop{suffix}")
    design = tmp_path / "pump_flow_loop.toml"
    text = design.read_text()
    assert 'static_head = "18 m"' in text
    design.write_text(text.replace('static_head = "18 m"', 'static_head = "19 m"'))
    run = subprocess.run(
        [str(DRIVEKIT), "check", str(tmp_path / "pump_flow_loop.ipynb")], capture_output=True, text=True
    )
    assert run.returncode == 1
    assert "static head 18 -> 19 m" in run.stdout
