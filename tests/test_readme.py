"""The README's worked example runs and prints what its comments say."""

import contextlib
import io
import re
from pathlib import Path

README = Path(__file__).resolve().parents[1] / "README.md"


def test_readme_example_runs_and_matches_its_comments():
    code = re.findall(r"```python\n(.*?)```", README.read_text(), re.S)[0]
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        exec(compile(code, "README.md", "exec"), {})
    lines = out.getvalue().splitlines()
    assert round(float(lines[0].split()[0]), 2) == 89.83
    assert lines[1].startswith("7.896 / ((1 + 3.282 s) (1 + 1 s) (1 + 0.05 s) (1 + 0.006449 s)) * exp(-0.2 s)")
    assert "DC gain" in lines[2]


def test_readme_names_exactly_two_setup_commands():
    text = README.read_text()
    block = re.findall(r"```bash\n(.*?)```", text, re.S)[0]
    commands = [line.split("#")[0].strip() for line in block.splitlines() if line.strip()]
    assert commands == ["scripts/lab", "scripts/test"]
    assert (README.parent / "scripts" / "lab").exists()
    assert (README.parent / "scripts" / "test").exists()
