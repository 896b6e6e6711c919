"""End-to-end: the quickstart notebook's explorer in a real JupyterLab, driven in headless Chromium.

What a user does, done by a browser: open ``01_quickstart.ipynb`` in JupyterLab, run all cells,
drag the potential slider, click another reaction. Checked in the page (not in the kernel):

* the explorer renders as a live widget (not the static fallback that appears when the front-end
  widget extension is missing) with its diagram image, controls and read-out;
* the read-out's limiting potentials and potential-determining steps equal the CHE engine's
  ``ecatlab.che.limiting_potentials(ecatlab.demo.demo_energies(), <pathway>)`` computed in this test
  process, before and after every move; the "uphill now" column equals the electrochemical steps
  with dG > 0 in ``ecatlab.che.step_free_energies`` at the potential the page shows;
* the diagram image changes (its PNG ``src`` and a pixel hash of the screenshot) when the potential
  and when the reaction change;
* no JavaScript console error, no uncaught page error, no error/Traceback output in any cell, no
  message in the explorer's error line.

Screenshots of the explorer (before, after the potential move, after the reaction change) and the
JupyterLab log go to ``$ECATLAB_E2E_ARTIFACTS`` or ``<temp dir>/ecatlab-e2e`` (printed).
Run: ``python -m pytest -m browser -s tests/e2e``. Every wait below has a timeout.
"""

from __future__ import annotations

import os

import pytest
from _page import (  # shared helpers of the browser tests (this folder is on sys.path)
    ACTION_MS,
    EXPLORER,
    UPDATE_MS,
    PageErrors,
    _check_cell_outputs,
    _check_readout,
    _check_uphill_now,
    _layout_report,
    _pathway_in,
    _pixel_hash,
    _save,
    _settle,
    _wait_for_pathway,
    browser_page,
    open_and_run_all,
)

pytestmark = pytest.mark.browser

NOTEBOOK = "01_quickstart.ipynb"


def test_quickstart_explorer_in_jupyterlab(jupyterlab, chromium_executable, sync_playwright_factory, artifacts_dir):
    with browser_page(chromium_executable, sync_playwright_factory, artifacts_dir) as (page, errors):
        _drive(page, errors, jupyterlab, artifacts_dir)


def _drive(page, errors: PageErrors, lab, artifacts) -> None:
    # 1.-2. open the notebook, wait for an idle kernel, run all cells from the menu
    open_and_run_all(page, lab, NOTEBOOK)

    # 3. the explorer: a live widget (not the static fallback) with image, controls and read-out
    explorer = page.locator(EXPLORER)
    explorer.wait_for(state="visible", timeout=UPDATE_MS)
    assert explorer.count() == 1, "expected exactly one explorer widget in the quickstart"
    assert page.locator(".ecatlab-explorer-static").count() == 0, (
        "the static fallback is shown: the JupyterLab widget front end did not render the explorer")
    explorer.scroll_into_view_if_needed(timeout=ACTION_MS)
    image = explorer.locator(".widget-output img").filter(visible=True).first
    image.wait_for(state="visible", timeout=UPDATE_MS)
    before = _settle(page, explorer)
    assert before["img_size"] and before["img_size"][0] > 300, f"diagram image missing or tiny: {before['img_size']}"
    pathway = _pathway_in(before)
    assert pathway == "orr-4e", before["caption"]
    _check_readout(before, pathway)
    u_before = _check_uphill_now(before, pathway)
    hash_before = _pixel_hash(image)
    _save(explorer, artifacts, "01_explorer_before.png")
    _layout_report(explorer, artifacts, "01_explorer_layout.json")
    _check_cell_outputs(page)

    # 4a. drag the potential slider to the right (~ +1 V), then one arrow key step
    slider = explorer.locator(".widget-hslider", has=page.locator("label", has_text="U (V)")).filter(visible=True)
    handle = slider.locator(".noUi-handle")
    handle.scroll_into_view_if_needed()
    box = handle.bounding_box()
    assert box, "potential slider handle not visible"
    track = slider.locator(".noUi-target").bounding_box()
    x, y = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
    dx = track["width"] / 6.0  # the slider spans 6 V
    page.mouse.move(x, y)
    page.mouse.down()
    page.mouse.move(x + dx, y, steps=12)
    page.mouse.up()
    u_drag = float(_settle(page, explorer)["entry"])
    handle.focus()
    page.keyboard.press("ArrowRight")  # one slider step (0.01 V) up
    after_u = _settle(page, explorer)
    u_after = float(after_u["entry"])
    assert abs(u_after - (u_drag + 0.01)) < 1e-6, f"ArrowRight moved U from {u_drag} to {u_after}, expected one 0.01 V step"
    print(f"[e2e] potential moved from {u_before:+.3f} to {u_after:+.3f} V vs RHE")
    assert u_after > u_before + 0.5, f"the drag did not move the potential enough: {u_before} -> {u_after}"
    assert after_u["img_src"] != before["img_src"], "the diagram image did not change after the potential moved"
    assert _pixel_hash(image) != hash_before, "the diagram's pixels did not change after the potential moved"
    _check_readout(after_u, pathway)  # U_L and determining step do not depend on U ...
    _check_uphill_now(after_u, pathway)  # ... the steps uphill now do
    assert [r[5] for r in after_u["rows"]] != [r[5] for r in before["rows"]], "'uphill now' did not change with U"
    _save(explorer, artifacts, "02_explorer_after_potential.png")

    # 4b. pick another reaction with its toggle button
    hash_u = _pixel_hash(image)
    explorer.get_by_role("button", name="OER", exact=True).click()
    _wait_for_pathway(explorer, "oer-4e")
    after_r = _settle(page, explorer)
    new_pathway = _pathway_in(after_r)
    assert new_pathway == "oer-4e", after_r["caption"]
    _check_readout(after_r, new_pathway)
    _check_uphill_now(after_r, new_pathway)
    assert [r[1] for r in after_r["rows"]] != [r[1] for r in after_u["rows"]], "U_L column unchanged after the reaction change"
    assert after_r["img_src"] != after_u["img_src"], "the diagram image did not change after the reaction changed"
    assert _pixel_hash(image) != hash_u, "the diagram's pixels did not change after the reaction changed"
    _save(explorer, artifacts, "03_explorer_after_reaction.png")

    # 4c. another reaction, then another product in the pathway drop-down (a pathway with a chemical step)
    explorer.get_by_role("button", name="HER", exact=True).click()
    _wait_for_pathway(explorer, "her-volmer-heyrovsky")
    _settle(page, explorer)
    hash_r = _pixel_hash(image)
    dropdown = explorer.locator(".widget-dropdown", has=page.locator("label", has_text="product / pathway")).filter(visible=True).locator("select")
    dropdown.select_option(label="Volmer-Tafel")
    _wait_for_pathway(explorer, "her-volmer-tafel")
    after_p = _settle(page, explorer)
    _check_readout(after_p, "her-volmer-tafel")
    _check_uphill_now(after_p, "her-volmer-tafel")
    assert any("chemical uphill:" in r[4] for r in after_p["rows"]), "no uphill chemical (Tafel) step shown"
    assert _pixel_hash(image) != hash_r, "the diagram's pixels did not change after the pathway changed"
    _save(explorer, artifacts, "04_explorer_after_pathway.png")
    layout_problems = _layout_report(explorer, artifacts, "04_explorer_layout.json")
    overlaps = [p for p in layout_problems if " overlaps " in p]
    assert not overlaps, "explorer controls overlap:\n" + "\n".join(overlaps)
    if layout_problems and os.environ.get("ECATLAB_E2E_STRICT_LAYOUT", "1") != "0":
        raise AssertionError("explorer layout problems:\n" + "\n".join(layout_problems))

    # 5. no errors anywhere
    _check_cell_outputs(page)
    errors.check()
    page.screenshot(path=str(artifacts / "00_jupyterlab_page.png"), timeout=ACTION_MS)
