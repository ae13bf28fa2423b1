"""The model-exploration board in JupyterLab in headless Chromium: moving the operating flow redraws the views."""

import re

from tests.browser import harness


def _flow(page):
    text = page.locator(harness.OPERATING_READOUT).inner_text()
    m = re.search(r"flow\s+([-+0-9.eE]+)\s*m³/h", text)
    assert m, text
    return float(m.group(1))


def test_flow_slider_moves_the_operating_point_and_redraws(explore_page):
    page = explore_page
    harness.ARTIFACTS.mkdir(exist_ok=True)
    # the Design of the notebook runs at 380 m3/h; the readout shows the core's operating point
    assert _flow(page) == 380.0
    page.locator(".dk-model-board").screenshot(path=str(harness.ARTIFACTS / "model_board_before.png"))
    paths_before = harness.step_paths(page)
    handle = page.locator(harness.FLOW_HANDLE)
    for _ in range(5):
        handle.press("PageUp")
    page.wait_for_function(
        "(s) => !document.querySelector(s).innerText.includes('380 m³/h')", arg=harness.OPERATING_READOUT
    )
    page.wait_for_function(f"(p) => ({harness._STEP_D})() !== p", arg=paths_before, polling="raf", timeout=10_000)
    shown = float(page.locator(harness.FLOW_HANDLE).get_attribute("aria-valuenow"))
    page.locator(".dk-model-board").screenshot(path=str(harness.ARTIFACTS / "model_board_after.png"))
    assert shown > 380.0
    # the readout (4 significant digits) shows the flow the slider set
    assert abs(_flow(page) - shown) <= 0.5
    # pole-zero readout and Nyquist of the same board are drawn
    assert "damping" in page.locator(".dk-polezero-readout").inner_text()
    assert page.locator(".dk-fig-nyquist svg g.curve path.line").count() >= 1
