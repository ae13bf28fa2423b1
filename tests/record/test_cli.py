"""The drivekit command: check re-runs a notebook, report writes an offline page, diff and new."""

from __future__ import annotations

import dataclasses
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import nbformat
import pytest
from record_designs import pump_design

from drivekit.pid import PID
from drivekit.record.check import execute_notebook, recorded_results
from drivekit.record.cli import EXIT_CHANGED, EXIT_NOT_CHECKED, EXIT_OK, EXIT_USAGE, main
from drivekit.record.designfile import save_design
from drivekit.record.report import WIDGET_NOTE

DRIVEKIT = Path(sys.executable).with_name("drivekit")


def _design():
    return dataclasses.replace(pump_design(), controller=PID(230.0, "12 s"))


def _project(folder: Path, *, widget: bool = False) -> Path:
    """A small project: a design file and a notebook that loads it and records it, run once and saved."""
    save_design(_design(), folder / "loop.toml")
    cells = [
        nbformat.v4.new_markdown_cell("# FIC-201 flow loop\n\nGiven the design file, find the record."),
        nbformat.v4.new_code_cell(
            "from drivekit.record import load_design\nfrom drivekit.record.record import record\n"
            "design = load_design('loop.toml')"
        ),
        nbformat.v4.new_code_cell("record(design)"),
    ]
    if widget:
        cells.append(nbformat.v4.new_code_cell("import ipywidgets\nipywidgets.FloatSlider(value=1.0)"))
    nb = nbformat.v4.new_notebook(cells=cells)
    path = folder / "loop.ipynb"
    nbformat.write(nb, path)
    ran = execute_notebook(path, timeout=300)
    nbformat.write(ran, path)
    return path


@pytest.fixture(scope="module")
def project() -> Path:
    folder = Path(tempfile.mkdtemp(prefix="dk-project-"))
    path = _project(folder, widget=True)
    yield path
    shutil.rmtree(folder)


def test_the_executed_notebook_holds_its_record(project: Path) -> None:
    records = recorded_results(nbformat.read(project, as_version=4))
    assert len(records) == 1
    assert records[0]["results"]["operating point: flow"]["unit"] == "m**3/h"


def test_check_passes_on_an_unchanged_notebook(project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["check", str(project)]) == EXIT_OK
    assert "ok (1 record unchanged)" in capsys.readouterr().out


def test_check_fails_readably_when_the_design_file_changed(
    project: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    copy = tmp_path / "copy"
    shutil.copytree(project.parent, copy)
    save_design(_design().with_value("pipe1.static_head", "20 m"), copy / "loop.toml")
    assert main(["check", str(copy / project.name)]) == EXIT_CHANGED
    out = capsys.readouterr().out
    assert "CHANGED" in out
    assert "record 1: the inputs changed" in out
    assert "record 1: operating point: static head 18 -> 20 m" in out
    assert "allowed 1e-06" in out


def test_check_reports_a_notebook_without_record(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "empty.ipynb"
    nbformat.write(nbformat.v4.new_notebook(cells=[nbformat.v4.new_code_cell("1 + 1")]), path)
    assert main(["check", str(path)]) == EXIT_NOT_CHECKED
    assert "no recorded results" in capsys.readouterr().out


def test_check_reports_a_missing_notebook(tmp_path: Path) -> None:
    assert main(["check", str(tmp_path / "nothing.ipynb")]) == EXIT_USAGE


def test_report_is_static_and_replaces_widgets(project: Path, tmp_path: Path) -> None:
    out = tmp_path / "record.html"
    assert main(["report", str(project), "-o", str(out)]) == EXIT_OK
    page = out.read_text()
    assert "<script" not in page
    assert re.search(r"(src|href)\s*=\s*[\"']?(https?:)?//", page) is None  # nothing fetched from anywhere
    assert WIDGET_NOTE in page
    assert 'class="dk-operating"' in page
    assert page.count("<svg") >= 3


def test_diff_command_prints_plain_words(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    a, b = tmp_path / "a.toml", tmp_path / "b.toml"
    save_design(_design(), a)
    save_design(dataclasses.replace(_design(), controller=PID(230.0, "8 s")), b)
    assert main(["diff", str(a), str(b)]) == EXIT_CHANGED
    out = capsys.readouterr().out
    assert "Ti changed 12 s -> 8 s" in out
    assert "loop: phase margin" in out
    assert main(["diff", str(a), str(a)]) == EXIT_OK


def test_diff_command_refuses_a_bad_file(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    a, b = tmp_path / "a.toml", tmp_path / "b.toml"
    save_design(_design(), a)
    b.write_text(a.read_text().replace('J = "0.9 kg*m**2"', 'J = "0.9 m"'))
    assert main(["diff", str(a), str(b)]) == EXIT_USAGE
    assert "`stages.motor.J`" in capsys.readouterr().err


def test_new_copies_a_template(tmp_path: Path) -> None:
    from drivekit.record.cli import templates

    found = templates()
    assert "pump_flow_loop" in found
    dest = tmp_path / "FIC-301"
    assert main(["new", "pump_flow_loop", str(dest)]) == EXIT_OK
    assert (dest / "pump_flow_loop.ipynb").read_bytes() == found["pump_flow_loop"].read_bytes()
    assert main(["new", "pump_flow_loop", str(dest)]) == EXIT_USAGE  # never overwrites
    assert main(["new", "no_such_template", str(dest)]) == EXIT_USAGE


def test_help_documents_the_exit_codes() -> None:
    out = subprocess.run([str(DRIVEKIT), "--help"], capture_output=True, text=True, check=True).stdout
    for code in ("0  done", "1  check: a recorded result changed", "2  usage error", "3  a notebook could not"):
        assert code in out


@pytest.mark.browser
def test_report_reads_offline_in_chromium(project: Path, tmp_path: Path) -> None:
    chromium = Path("/usr/bin/chromium")
    if not chromium.exists():
        if os.environ.get("CI") == "true":
            pytest.fail("chromium is missing: apt-get install chromium")
        pytest.skip("chromium is missing: apt-get install chromium")
    from playwright.sync_api import sync_playwright

    out = tmp_path / "record.html"
    main(["report", str(project), "-o", str(out)])
    args = [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
    ]
    requests: list[str] = []
    with sync_playwright() as p:
        ctx = p.chromium.launch_persistent_context(
            tempfile.mkdtemp(prefix="chr-"), executable_path=str(chromium), headless=True, args=args
        )
        try:

            def block(route: object) -> None:
                requests.append(route.request.url)  # type: ignore[attr-defined]
                route.abort()  # type: ignore[attr-defined]

            ctx.route(lambda url: not url.startswith("file:"), block)
            page = ctx.pages[0] if ctx.pages else ctx.new_page()
            page.goto(out.as_uri())
            rows = page.locator("table.dk-operating tbody tr")
            assert rows.count() == len(_design().operating_point().table())
            assert "flow" in page.locator("table.dk-operating").inner_text()
            assert page.locator("table.dk-results").inner_text().count("met") >= 3
            figures = page.locator("figure.dk-figure svg")
            assert figures.count() == 3
            box = figures.first.bounding_box()
            assert box is not None
            assert box["width"] > 200
            assert box["height"] > 100
            assert page.locator(".dk-widget-note").count() == 1
        finally:
            ctx.close()
    assert requests == []
