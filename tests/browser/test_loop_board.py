"""The loop-design board in JupyterLab in headless Chromium: a key press on a slider redraws the views."""

import re

from tests.browser import harness


def _metric(page, name):
    text = page.locator(harness.METRICS).inner_text()
    m = re.search(rf"{re.escape(name)}\s+([-+0-9.eE]+)", text)
    assert m, text
    return float(m.group(1))


def test_slider_key_press_redraws_step_plot_and_metrics(browser_page):
    page = browser_page
    harness.ARTIFACTS.mkdir(exist_ok=True)
    page.locator(".dk-loop-board").screenshot(path=str(harness.ARTIFACTS / "loop_board_before.png"))
    kp_before = float(page.locator(harness.KP_HANDLE).get_attribute("aria-valuenow"))
    pm_before = _metric(page, "phase margin")
    paths_before = harness.step_paths(page)
    for _ in range(10):
        harness.press_and_wait(page, "ArrowRight")
    page.wait_for_function(
        "(p) => document.querySelector('.dk-metrics-table').innerText.indexOf(p) < 0",
        arg=f"{pm_before:.4g}",
        timeout=10_000,
    )
    kp_after = float(page.locator(harness.KP_HANDLE).get_attribute("aria-valuenow"))
    page.locator(".dk-loop-board").screenshot(path=str(harness.ARTIFACTS / "loop_board_after.png"))
    assert kp_after > kp_before
    assert harness.step_paths(page) != paths_before
    # A higher controller gain lowers the phase margin of this loop (lag plant with dead time).
    assert _metric(page, "phase margin") < pm_before
    assert page.locator(".dk-entry input").count() > 20
