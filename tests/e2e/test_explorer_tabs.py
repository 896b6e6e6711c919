"""End-to-end: every tab of the explorer in a real JupyterLab, driven in headless Chromium.

The test writes its own notebook into the server's temporary copy of ``notebooks/`` (never into the
checkout): the explorer on the bundled ILLUSTRATIVE demo table with the opt-in "surface states" tab
added, plus a probe cell that prints, as one JSON line, what only the kernel knows (the texts of the
diagram figure with their window extents, the PNG last sent to the page and a fresh full render of
the same figure). A user's clicks then go through every tab; each step is checked in the page
against the library called **in this test process** (numbers: equal within half a unit of the last
digit the page shows, whatever number format the page uses):

* diagram tab: live widgets and a non-empty image; the default surface selection is the
  best-ranked surfaces (``che.kernel.ranking_order`` on ``che.limiting_potentials``); the subtitle
  texts do not overlap, the conditions line exists once and names the potential in the number box;
  the PNG in the page equals a fresh full render in the kernel (so the fast redraw left no stale
  text behind); "snap to limiting potential" puts the engine's U_L into the number box to 0.1 mV
  (not the slider's 0.01 V step) and the focus surface then has no uphill electrochemical step;
  switching reaction resets U to that reaction's equilibrium potential.
* "show uncertainty" on the diagram tab: its figure (ranking and determining-step probabilities with
  Monte-Carlo error bars) appears, and a redraw for another sigma completes and states that sigma.
* volcano tab: the summary table equals ``ecatlab.volcano.volcano(...).summary()``; a new descriptor
  and a new pathway each change the image and the table stays equal to the library.
* network tab: the routes shown (best first) equal ``NetworkAnalysis.best_routes`` and the best one
  ``ecatlab.network.best_route``; the stuck point equals ``NetworkAnalysis.stuck_points``.
* kinetics tab: a polarisation/Tafel image and the onset table equal ``ecatlab.kinetics``
  (``build_model`` -> ``solve_steady_state`` -> ``kinetics_summary``).
* surface states tab: a map and the stable states equal ``ecatlab.pourbaix``.
* throughout: no error line, no JavaScript console error, no Traceback in any output.

Outside checks: the equilibrium potentials of ORR/OER (1.229 V vs RHE, E0 of O2/H2O at 298.15 K:
Bard, Parsons, Jordan, "Standard Potentials in Aqueous Solution", IUPAC/Dekker 1985) and of HER
(0 V vs RHE by definition of the RHE scale).

Screenshots of each tab go to the artifacts folder (``$ECATLAB_E2E_ARTIFACTS`` or
``<temp dir>/ecatlab-e2e``), prefixed ``tabs_``. Every wait has a timeout.
Run: ``python -m pytest -m browser -s tests/e2e``.
"""

from __future__ import annotations

import base64
import hashlib
import json
import math
import re
import time

import numpy as np
import pytest
from _page import (  # shared helpers of the browser tests (this folder is on sys.path)
    ACTION_MS,
    EXPLORER,
    MINUS,
    UPDATE_MS,
    _check_cell_outputs,
    _check_readout,
    _check_uphill_now,
    _engine_uphill_now,
    _pixel_hash,
    _save,
    _SNAPSHOT_JS,
    _settle,
    _wait_for_pathway,
    _wait_kernel_idle,
    browser_page,
    open_and_run_all,
)

pytestmark = pytest.mark.browser

NOTEBOOK = "e2e_explorer_tabs.ipynb"
PROBE_MARK = "ECATLAB-PROBE "
TEMPERATURE = 298.15  # K, the explorer's default
#: the page must not change for this long (s) after the kernel went idle before it is read
QUIET_S = 0.6
#: E0(O2/H2O) = 1.229 V at 298.15 K (Bard, Parsons, Jordan 1985); on the RHE scale it holds at every pH
E0_O2_H2O = 1.229
#: tolerance of that comparison: the table value is given to 1 mV
E0_TOLERANCE = 0.0015

_SETUP = """\
# ILLUSTRATIVE demo data (an invented scenario); every number here is a theoretical estimate.
%matplotlib inline
import hashlib, json
from ecatlab.demo import demo_energies
from ecatlab.explorer import explore

energies = demo_energies()
ex = explore(energies, pathway='orr-4e', potential=0.8)
surface_states = ex.add_surface_states_tab()
"""

# What only the kernel knows, as one JSON line. The texts above the diagram's Axes (title, subtitle,
# conditions line) with their window extents (display pixels, origin bottom left); the PNG last sent
# to the page (bytes and decoded pixels) and the decoded pixels of a fresh full render of the same figure.
_PROBE = """\
def _probe():
    from matplotlib.text import Text
    view = ex.view
    sent = view.last_png
    full = view.render_png()  # full redraw of the very same state (render_png also sets last_png)
    fig = view.figure
    renderer = fig.canvas.get_renderer()
    top = view.ax.get_window_extent(renderer).y1
    texts = []
    for t in fig.findobj(Text):
        if not t.get_visible() or not t.get_text().strip():
            continue
        bb = t.get_window_extent(renderer)
        if bb.y0 >= top - 1.0:
            texts.append({'text': t.get_text(), 'box': [bb.x0, bb.y0, bb.x1, bb.y1]})
    # pixels, not PNG bytes: the fast path writes the same picture with its own (banded) deflate stream
    import io
    from PIL import Image
    pixels = lambda png: hashlib.sha256(Image.open(io.BytesIO(png)).convert('RGBA').tobytes()).hexdigest() if png else ''
    return {'sent': hashlib.sha256(sent or b'').hexdigest(), 'sent_pixels': pixels(sent), 'full': pixels(full),
            'figure_px': [fig.bbox.width, fig.bbox.height], 'texts': texts, 'potential': ex.state.potential,
            'errors': [repr(e) for e in ex.errors]}

print('ECATLAB-PROBE ' + json.dumps(_probe()))
"""

_SHOW = "ex"

# Everything shown in the explorer's current tab, in one round trip (the explorer root is the argument).
_TAB_JS = """
(root) => {
  const shown = (el) => el.getClientRects().length > 0;
  const rows = (sel) => Array.from(root.querySelectorAll(sel)).filter(shown).map(
      (tr) => Array.from(tr.children).map((c) => c.textContent.trim()));
  const current = root.querySelector('.lm-TabBar-tab.lm-mod-current .lm-TabBar-tabLabel');
  // the uncertainty section is the VBox holding the "show uncertainty" check box
  const box = Array.from(root.querySelectorAll('.widget-checkbox')).find((b) => b.textContent.includes('show uncertainty'));
  const section = box ? box.closest('.widget-hbox').parentElement : null;
  const images = Array.from(root.querySelectorAll('img')).filter(shown).map((img) => ({
      kind: img.closest('.widget-output') ? 'diagram' : (section && img.parentElement === section ? 'uncertainty' : 'image'),
      src: img.getAttribute('src') || '', natural: [img.naturalWidth, img.naturalHeight], complete: img.complete}));
  const visibleText = Array.from(root.querySelectorAll('.widget-html-content, .widget-label, .jp-RenderedText')).filter(shown)
      .map((e) => e.innerText).join('\\n');
  const info = (cls) => { const el = Array.from(root.querySelectorAll(cls)).find(shown); return el ? el.innerText.trim() : null; };
  const networkRows = Array.from(root.querySelectorAll('table')).filter(shown)
      .filter((t) => (t.querySelector('tr') || {textContent: ''}).textContent.startsWith('rank'))
      .flatMap((t) => Array.from(t.querySelectorAll('tr')).slice(1).map((tr) => Array.from(tr.children).map((c) => c.textContent.trim())));
  const networkNote = Array.from(root.querySelectorAll('p')).filter(shown).map((p) => p.innerText).find((t) => t.includes('gets stuck')) || null;
  const nbsp = (t) => t.replace(/\u00a0/g, ' ').trim();  // the drop-downs show spaces as no-break spaces
  const select = (label) => {
      const box = Array.from(root.querySelectorAll('.widget-dropdown, .widget-select-multiple')).filter(shown).find(
          (b) => ((b.querySelector('.widget-label') || {}).textContent || '').trim() === label);
      if (!box) return null;
      const sel = box.querySelector('select');
      return {options: Array.from(sel.options).map((o) => nbsp(o.textContent)),
              selected: Array.from(sel.options).filter((o) => o.selected).map((o) => nbsp(o.textContent))};
  };
  const entry = Array.from(root.querySelectorAll('.widget-hslider')).filter(shown).find(
      (s) => (s.querySelector('.widget-label') || {}).textContent.trim() === 'U (V)');
  return {
    tab: current ? current.textContent.trim() : null,
    tabs: Array.from(root.querySelectorAll('.lm-TabBar-tab .lm-TabBar-tabLabel')).map((e) => e.textContent.trim()),
    images: images,
    text: visibleText,
    volcano: rows('.ecatlab-volcano-summary tbody tr'),
    volcano_info: info('.ecatlab-volcano-info'),
    kinetics: rows('.ecatlab-kinetics-summary tbody tr'),
    kinetics_info: info('.ecatlab-kinetics-info'),
    pourbaix_info: info('.ecatlab-pourbaix-info'),
    uncertainty_info: info('.ecatlab-uncertainty-info'),
    network: networkRows,
    network_note: networkNote,
    surfaces: select('surfaces'),
    focus: select('focus'),
    descriptor: select('descriptor'),
    network_surface: select('surface'),
    network_product: select('product'),
    entry: entry ? entry.parentElement.querySelector('.widget-text input[type="number"]').value : null,
    caption: ((root.querySelector('.ecatlab-readout caption') || {}).textContent || '').trim(),
    readout: rows('.ecatlab-readout tbody tr'),
    diagram_outputs: Array.from(root.querySelectorAll('.widget-output')).filter(shown).map(
        (o) => o.querySelectorAll('img').length),
  };
}
"""

# the shown image of the uncertainty section (the VBox holding the "show uncertainty" check box), as ``img``
_UNCERTAINTY_IMG_JS = (
    "(root) => { const box = Array.from(root.querySelectorAll('.widget-checkbox')).find((b) => b.textContent.includes('show uncertainty'));"
    " if (!box) return false; const section = box.closest('.widget-hbox').parentElement;"
    " const img = Array.from(section.children).find((el) => el.tagName === 'IMG' && el.getClientRects().length > 0);"
)

# error texts the explorer writes into its error line / info lines (see ecatlab/explorer/*.py)
_ERROR_PATTERNS = re.compile(r"Not applied;|\((?:volcano|network|kinetics|surface states) tab\)|\b[A-Z]\w*(?:Error|Exception)\b|Traceback")


# ------------------------------------------------------------------------------------------------
# the notebook and the kernel probe
# ------------------------------------------------------------------------------------------------
def _write_notebook(folder) -> None:
    """The test's notebook (nbformat 4.5 JSON, written directly: ``nbformat.write`` validates for ~30 s
    on this machine). The server serves a temporary copy of notebooks/, so nothing lands in the checkout."""

    def cell(i: int, kind: str, source: str) -> dict:
        c = {"cell_type": kind, "id": f"e2e-tabs-{i}", "metadata": {}, "source": source.splitlines(keepends=True)}
        if kind == "code":
            c.update(execution_count=None, outputs=[])
        return c

    nb = {
        "nbformat": 4, "nbformat_minor": 5,
        "metadata": {"kernelspec": {"display_name": "Python 3", "language": "python", "name": "python3"},
                     "language_info": {"name": "python"}},
        "cells": [
            cell(0, "markdown", "**ILLUSTRATIVE data** (invented scenario): browser test of every explorer tab. Theoretical estimates only."),
            cell(1, "code", _SETUP),
            cell(2, "code", _PROBE),
            cell(3, "code", _SHOW),
        ],
    }
    (folder / NOTEBOOK).write_text(json.dumps(nb, indent=1), encoding="utf-8")


def _probe(page) -> dict:
    """Run the probe cell again (Ctrl+Enter in its editor) and return its JSON."""
    cell = page.locator(".jp-Notebook .jp-CodeCell").nth(1)
    prompt = cell.locator(".jp-InputArea-prompt")
    before = prompt.text_content()
    cell.locator(".jp-InputArea-editor").click()
    page.keyboard.press("Control+Enter")
    page.wait_for_function(
        "([el, before]) => { const t = el.textContent; return /\\[\\d+\\]/.test(t) && t !== before; }",
        arg=[prompt.element_handle(), before], timeout=UPDATE_MS,
    )
    _wait_kernel_idle(page, UPDATE_MS)
    text = cell.locator(".jp-OutputArea-output").all_text_contents()
    line = next((ln for t in text for ln in t.splitlines() if ln.startswith(PROBE_MARK)), None)
    assert line, f"the probe cell printed no {PROBE_MARK!r} line: {text!r}"
    return json.loads(line[len(PROBE_MARK):])


def _intersects(a, b, slack: float = 0.5) -> bool:
    return a[0] < b[2] - slack and b[0] < a[2] - slack and a[1] < b[3] - slack and b[1] < a[3] - slack


def _check_subtitle(probe: dict, entry: str, label: str) -> None:
    """The texts above the diagram's Axes do not overlap, stay inside the figure, and the conditions
    line is there exactly once and names the potential of the number box (to its 3 digits)."""
    texts = probe["texts"]
    print(f"[e2e] {label}: texts above the diagram: " + "; ".join(repr(t["text"]) for t in texts))
    assert len(texts) >= 2, f"{label}: expected a title and a conditions line above the diagram, got {texts}"
    width, height = probe["figure_px"]
    for t in texts:
        x0, y0, x1, y1 = t["box"]
        assert x0 >= -0.5 and y0 >= -0.5 and x1 <= width + 0.5 and y1 <= height + 0.5, (
            f"{label}: {t['text']!r} reaches outside the figure ({width} x {height} px): {t['box']}")
    for i, a in enumerate(texts):
        for b in texts[i + 1:]:
            assert not _intersects(a["box"], b["box"]), f"{label}: {a['text']!r} {a['box']} overlaps {b['text']!r} {b['box']}"
    conditions = [t["text"] for t in texts if t["text"].startswith("U = ")]
    assert len(conditions) == 1, f"{label}: conditions line drawn {len(conditions)} times: {conditions}"
    shown = float(conditions[0].split()[2].replace(MINUS, "-"))
    assert abs(shown - float(entry)) <= 0.0005 + 1e-9, f"{label}: subtitle says {conditions[0]!r}, number box {entry}"
    assert not probe["errors"], f"{label}: the explorer caught errors: {probe['errors']}"


def _check_png_is_fresh(page, explorer, probe: dict, label: str) -> None:
    """The diagram PNG in the page is the one the kernel sent last, and that equals a fresh full
    render of the same figure: the fast redraw path left nothing stale behind (no text drawn twice)."""
    outputs = _tab(explorer)["diagram_outputs"]
    assert outputs == [1], f"{label}: the diagram area holds {outputs} images, expected one (no stacked pictures)"
    src = explorer.evaluate("(root) => { const i = Array.from(root.querySelectorAll('.widget-output img')).find("
                            "(el) => el.getClientRects().length > 0); return i ? i.getAttribute('src') : null; }")
    assert src and src.startswith("data:image/png;base64,"), f"{label}: diagram image source not understood: {str(src)[:60]!r}"
    png = base64.b64decode(src.split(",", 1)[1])
    digest = hashlib.sha256(png).hexdigest()
    assert digest == probe["sent"], f"{label}: the page shows another PNG than the kernel sent last"
    if probe["sent_pixels"] != probe["full"]:
        raise AssertionError(f"{label}: the diagram shown differs from a full render of the same figure (stale pixels)")


# ------------------------------------------------------------------------------------------------
# the library in this process
# ------------------------------------------------------------------------------------------------
def _energies():
    from ecatlab.demo import demo_energies

    return demo_energies()


def _best_ranked(pathway: str) -> list[str]:
    from ecatlab import che
    from ecatlab.che import kernel

    lp = che.limiting_potentials(_energies(), pathway, pH=0.0, scale="RHE", temperature=TEMPERATURE).set_index("surface")
    order = kernel.ranking_order(lp["G_max"].to_numpy(float), lp["blocked"].to_numpy(bool))
    return [str(s) for s in lp.index[order]]


def _expected_volcano(pathway: str, descriptor: str) -> list[list]:
    """Rows of ``volcano(...).summary()``: quantity, value (float or text), unit, note."""
    from ecatlab.volcano import volcano

    fit_against = "OH*" if descriptor == "O* - OH*" else None  # documented in docs/scaling_and_volcanoes.md
    curve = volcano(_energies(), pathway, descriptor, pH=0.0, scale="RHE", temperature=TEMPERATURE, fit_against=fit_against)

    return [[str(r.quantity), float(r.value) if isinstance(r.value, float) else str(r.value), str(r.unit), str(r.note)]
            for r in curve.summary().itertuples(index=False)]


def _expected_network(surface: str, product: str, potential: float):
    from ecatlab.network import NetworkAnalysis, best_route, build_network

    table = _energies()
    an = NetworkAnalysis(build_network(table, "CO2"), table, pH=0.0, scale="RHE", temperature=TEMPERATURE)
    routes = an.best_routes(product, top=3)
    routes = routes[routes["surface"] == surface]
    rows = [[float(r["rank"]), float(r["limiting_potential"]), bool(r["blocked"]), str(r["determining_step"]), bool(r["estimated"]),
             str(r["route"]).split(" via ")[-1]] for _, r in routes.iterrows()]  # the page names a route by its intermediates
    best = best_route(table, surface, "CO2", product, pH=0.0, scale="RHE", temperature=TEMPERATURE)
    stuck = an.stuck_points(product, potential=potential).set_index("surface").loc[surface]
    return rows, routes.iloc[0], best, stuck


def _expected_kinetics(pathway: str, surfaces: list[str], onset_current: float = 10.0) -> list[list]:
    """Onset table of the kinetics tab from the public kinetics API: estimated barriers (intrinsic
    0.3 eV, symmetry factor 0.5: the tab's defaults), 111 potentials from U_eq - 1 V to U_eq + 0.1 V
    (reduction) or U_eq - 0.1 V to U_eq + 1 V (oxidation), onset at 10 mA/cm^2."""
    from ecatlab.che.conditions import Conditions
    from ecatlab.kinetics import BarrierSettings, build_model, kinetics_summary, solve_steady_state

    model = build_model(_energies(), pathway, Conditions("RHE", 0.0, TEMPERATURE),
                        settings=BarrierSettings(intrinsic_barrier=0.3, symmetry_factor=0.5), surfaces=surfaces, on_missing="drop")
    info = model.pathways[0]
    u_eq = info.equilibrium_potential_at_activities
    lo, hi = (u_eq - 1.0, u_eq + 0.1) if info.direction == "reduction" else (u_eq - 0.1, u_eq + 1.0)
    summary = kinetics_summary(solve_steady_state(model, np.linspace(lo, hi, 111), warn=False), onset_current)
    return [[str(r.surface), float(r.onset_potential) if r.reached else "not reached", float(r.onset_overpotential) if r.reached else "n/a",
             float(r.max_abs_current_density), str(r.barriers), bool(r.all_converged)] for r in summary.itertuples(index=False)]


_NUMBER = re.compile(r"[+-]?\d+(?:\.(\d+))?(?:e([+-]?\d+))?")


def _same_cell(shown: str, value) -> bool:
    """Does the page's cell text show the library ``value``? A float matches a number within half a unit of
    its last shown digit (any sign/minus style, fixed or e-notation; 'n/a' for a non-finite value), a bool
    'yes'/'no' (a trailing note allowed), anything else the same text."""
    text = shown.replace(MINUS, "-").replace("\u00a0", " ").strip()
    if isinstance(value, bool):
        return text.lower().split(" ")[0] == ("yes" if value else "no")
    if isinstance(value, float):
        if not math.isfinite(value):
            return text == "n/a"
        m = _NUMBER.fullmatch(text)
        if not m:
            return False
        tol = 0.5 * 10.0 ** (int(m.group(2) or 0) - len(m.group(1) or "")) * (1 + 1e-9) + 1e-12
        return abs(float(text) - value) <= tol
    return text == str(value)


def _same_rows(page_rows: list[list[str]], library_rows: list[list], label: str) -> None:
    bad = [(i, j, p, v) for i, (pr, lr) in enumerate(zip(page_rows, library_rows)) for j, (p, v) in enumerate(zip(pr, lr))
           if not _same_cell(p, v)]
    assert len(page_rows) == len(library_rows) and all(len(p) == len(v) for p, v in zip(page_rows, library_rows)) and not bad, (
        f"{label}: the page differs from the library (row, column, page, library): {bad[:8]}\npage    {page_rows}\nlibrary {library_rows}")


def _expected_pourbaix(surface: str, pathway: str, potential: float):
    from ecatlab.che import limiting_potentials
    from ecatlab.pourbaix import flag_surface_states, pourbaix_map, surface_states_from_energies

    table = _energies()
    states = surface_states_from_energies(table)
    lo, hi = min(-1.0, potential - 0.2), max(2.0, potential + 0.2)
    pmap = pourbaix_map(states, surface, np.linspace(lo, hi, 301), np.linspace(0.0, 14.0, 71), "RHE", TEMPERATURE)
    lp = limiting_potentials(table, pathway, pH=0.0, scale="RHE", temperature=TEMPERATURE, surfaces=[surface])
    row = flag_surface_states(lp, states).iloc[0]
    return pmap.state_at(potential, 0.0), row


def _equilibrium(pathway: str) -> float:
    """U_eq of the pathway's overall reaction (V vs RHE, pH 0) with the demo table's own references."""
    from ecatlab import che

    return float(che.equilibrium_potential(pathway, scale="RHE", pH=0.0, temperature=TEMPERATURE, references=_energies().scheme))


# ------------------------------------------------------------------------------------------------
# page helpers
# ------------------------------------------------------------------------------------------------
def _tab(explorer) -> dict:
    return explorer.evaluate(_TAB_JS)


def _wait_images(page, explorer, label: str, count: int = 1) -> dict:
    """Wait (bounded) until the current tab shows at least ``count`` loaded images of natural size > 0,
    the kernel is idle and the tab stopped changing; return the tab."""
    deadline = time.monotonic() + UPDATE_MS / 1000
    last, since = None, time.monotonic()
    while True:
        _wait_kernel_idle(page, max(1000, int((deadline - time.monotonic()) * 1000)))
        snap = _tab(explorer)
        ok = [i for i in snap["images"] if i["complete"] and i["natural"][0] > 0 and i["natural"][1] > 0]
        key = (len(ok), tuple(i["src"][-64:] for i in snap["images"]), snap["text"])
        if len(ok) >= count and key == last and time.monotonic() - since >= QUIET_S:
            return snap
        if key != last:
            last, since = key, time.monotonic()
        if time.monotonic() > deadline:
            raise AssertionError(f"{label}: no stable, loaded image in {UPDATE_MS} ms (images {[(i['kind'], i['natural']) for i in snap['images']]})")
        page.wait_for_timeout(200)


def _no_errors(snap: dict, label: str) -> None:
    bad = _ERROR_PATTERNS.findall(snap["text"])
    assert not bad, f"{label}: error text in the explorer: {bad}\n{snap['text'][:3000]}"


def _open_tab(page, explorer, title: str, count: int = 1) -> dict:
    explorer.locator(".lm-TabBar-tab", has_text=re.compile(rf"^{re.escape(title)}$")).click()
    page.wait_for_function(
        "([root, t]) => ((root.querySelector('.lm-TabBar-tab.lm-mod-current') || {}).textContent || '').trim() === t",
        arg=[explorer.element_handle(), title], timeout=UPDATE_MS,
    )
    snap = _wait_images(page, explorer, f"{title} tab", count)
    assert snap["tab"] == title, snap["tab"]
    _no_errors(snap, f"{title} tab")
    return snap


def _image(snap: dict, kind: str = "image") -> dict:
    found = [i for i in snap["images"] if i["kind"] == kind]
    assert len(found) == 1, f"expected one {kind} image in the {snap['tab']} tab, found {[(i['kind'], i['natural']) for i in snap['images']]}"
    assert found[0]["natural"][0] > 100 and found[0]["natural"][1] > 100, f"{snap['tab']} tab: image too small: {found[0]['natural']}"
    return found[0]


def _visible_image(explorer, kind_selector: str):
    return explorer.locator(kind_selector).filter(visible=True).first


def _wait_readout_at(page, explorer, pathway: str, potential: float, label: str) -> dict:
    """Wait (bounded) until the read-out is that of ``pathway`` and its "uphill now" column equals the
    engine's at ``potential`` (V vs RHE, full precision), then until the page is quiet; return the state.
    A condition, not a pause: the read-out may arrive after the number box (it is sent later)."""
    deadline = time.monotonic() + UPDATE_MS / 1000
    snap = None
    while time.monotonic() < deadline:
        snap = explorer.evaluate(_SNAPSHOT_JS)
        surfaces = [r[0] for r in snap["rows"]]
        if (snap["caption"] or "").startswith(pathway + " (") and surfaces:
            want = _engine_uphill_now(pathway, potential, surfaces)
            if all(r[5] == want[r[0]] for r in snap["rows"]):
                return _settle(page, explorer, quiet_s=QUIET_S)
        page.wait_for_timeout(150)
    raise AssertionError(f"{label}: the read-out did not reach {pathway} at U = {potential!r} V within {UPDATE_MS} ms; "
                         f"last caption {snap and snap['caption']!r}, rows {snap and snap['rows']}")


# ------------------------------------------------------------------------------------------------
# the test
# ------------------------------------------------------------------------------------------------
def test_every_explorer_tab_in_jupyterlab(jupyterlab, chromium_executable, sync_playwright_factory, artifacts_dir):
    _write_notebook(jupyterlab.root_dir)
    with browser_page(chromium_executable, sync_playwright_factory, artifacts_dir, prefix="tabs_failure") as (page, errors):
        open_and_run_all(page, jupyterlab, NOTEBOOK)
        _check_cell_outputs(page)
        explorer = page.locator(EXPLORER)
        explorer.wait_for(state="visible", timeout=UPDATE_MS)
        assert explorer.count() == 1, "expected exactly one explorer widget"
        assert page.locator(".ecatlab-explorer-static").count() == 0, "the static fallback is shown instead of the live explorer"
        timings, seen = {}, {}  # seen: what one part leaves for a later one
        t = time.monotonic()
        for name, step in (("diagram", _diagram_tab), ("uncertainty", _uncertainty_option), ("volcano", _volcano_tab),
                           ("network", _network_tab), ("kinetics", _kinetics_tab), ("surface states", _surface_states_tab),
                           ("reaction switch", _reaction_switch)):
            step(page, explorer, artifacts_dir, seen)
            timings[name], t = time.monotonic() - t, time.monotonic()
        print("[e2e] seconds per part: " + ", ".join(f"{k} {v:.1f}" for k, v in timings.items()))
        _check_cell_outputs(page)
        errors.check()


def _diagram_tab(page, explorer, artifacts, seen: dict) -> None:
    explorer.scroll_into_view_if_needed(timeout=ACTION_MS)
    snap = _wait_images(page, explorer, "diagram tab")
    assert snap["tabs"] == ["diagram", "volcano", "network", "kinetics", "surface states"], snap["tabs"]
    assert snap["tab"] == "diagram"
    _no_errors(snap, "diagram tab")
    image = _image(snap, "diagram")
    assert image["natural"][0] > 300, image
    assert snap["diagram_outputs"] == [1], f"the diagram area holds {snap['diagram_outputs']} images, expected one"
    state = _settle(page, explorer, quiet_s=QUIET_S)
    _check_readout(state, "orr-4e")
    _check_uphill_now(state, "orr-4e")

    # default selection: the best-ranked surfaces (kernel ranking rule), the best one in focus
    from ecatlab.explorer.model import DEFAULT_SURFACE_COUNT

    best = _best_ranked("orr-4e")
    selected = snap["surfaces"]["selected"]
    print(f"[e2e] default selection {selected}; best-ranked {best[:DEFAULT_SURFACE_COUNT]}")
    assert len(snap["surfaces"]["options"]) == len(best), snap["surfaces"]
    assert sorted(selected) == sorted(best[:DEFAULT_SURFACE_COUNT]), (
        f"default selection {selected} is not the {DEFAULT_SURFACE_COUNT} best-ranked surfaces {best[:DEFAULT_SURFACE_COUNT]}")
    assert [r[0] for r in state["rows"]] == best[:DEFAULT_SURFACE_COUNT], "read-out rows are not best-ranked first"
    assert snap["focus"]["selected"] == [best[0]], f"focus {snap['focus']['selected']}, best-ranked {best[0]}"

    # subtitle and pixels at the start (the explorer was opened at 0.8 V)
    assert abs(float(state["entry"]) - 0.8) < 1e-9, state["entry"]
    probe = _probe(page)
    _check_subtitle(probe, state["entry"], "start")
    _check_png_is_fresh(page, explorer, probe, "start")
    _save(explorer, artifacts, "tabs_01_diagram.png")

    # snap to the focus surface's limiting potential: exact, not on the slider's 0.01 V grid
    from ecatlab import che

    lp = che.limiting_potentials(_energies(), "orr-4e", pH=0.0, scale="RHE", temperature=TEMPERATURE).set_index("surface")
    u_l = float(lp.loc[best[0], "limiting_potential"])
    explorer.get_by_role("button", name=re.compile("snap to limiting potential")).click()
    page.wait_for_function(
        "([root, want]) => { const i = Array.from(root.querySelectorAll('.widget-text input[type=\"number\"]')).find("
        "(el) => el.getClientRects().length > 0); return i && Math.abs(parseFloat(i.value) - want) < 5e-5; }",
        arg=[explorer.element_handle(), u_l], timeout=UPDATE_MS,
    )
    snapped = _wait_readout_at(page, explorer, "orr-4e", u_l, "after snap")
    print(f"[e2e] snap: engine U_L({best[0]}) = {u_l!r} V vs RHE; number box {snapped['entry']}; slider {snapped['aria_value']}")
    assert float(snapped["entry"]) == round(u_l, 4), f"number box {snapped['entry']}, engine U_L {u_l:.6f} V (to 0.1 mV {round(u_l, 4)})"
    if round(u_l, 2) != round(u_l, 4):  # the demo's U_L is not on the 0.01 V grid: the box must not show the grid value
        assert float(snapped["entry"]) != round(u_l, 2), f"number box shows the slider's rounded value {snapped['entry']}"
    focus_row = next(r for r in snapped["rows"] if r[0] == best[0])
    assert focus_row[5] == "none", f"at its own U_L the focus surface {best[0]} still shows uphill steps {focus_row[5]!r}"
    _check_readout(snapped, "orr-4e")
    probe = _probe(page)
    assert probe["potential"] == u_l, f"kernel potential {probe['potential']!r} is not the engine's U_L {u_l!r}"
    _check_subtitle(probe, snapped["entry"], "after snap")
    _check_png_is_fresh(page, explorer, probe, "after snap")
    _save(explorer, artifacts, "tabs_02_diagram_snapped.png")


def _uncertainty_option(page, explorer, artifacts, seen: dict) -> None:
    box = explorer.locator(".widget-checkbox", has_text="show uncertainty").filter(visible=True)
    box.locator("input[type=checkbox]").check(timeout=ACTION_MS)
    page.wait_for_function(
        _UNCERTAINTY_IMG_JS + " return img && img.complete && img.naturalWidth > 0; }",
        arg=explorer.element_handle(), timeout=UPDATE_MS,
    )
    snap = _wait_images(page, explorer, "uncertainty", count=2)
    _no_errors(snap, "uncertainty")
    unc = [i for i in snap["images"] if i["kind"] == "uncertainty"]
    assert len(unc) == 1 and unc[0]["natural"][0] > 100 and unc[0]["natural"][1] > 100, f"uncertainty figure: {unc}"
    info = snap["uncertainty_info"]
    from ecatlab.explorer.uncertainty_tab import DEFAULT_SAMPLES

    assert info.startswith(f"{DEFAULT_SAMPLES} samples (seed 0)"), info
    assert f"{0.5 / DEFAULT_SAMPLES ** 0.5:.3f}" in info, info  # Monte-Carlo standard error of a probability, 0.5/sqrt(n)
    # a second redraw: another sigma (the slider's keyboard step, 0.01 eV) gives another figure
    before = unc[0]["src"]
    handle = explorer.locator(".widget-hslider", has=page.locator("label", has_text="sigma / eV")).filter(visible=True).locator(".noUi-handle")
    handle.focus()
    page.keyboard.press("ArrowRight")
    page.wait_for_function(
        "([root, before]) => {" + _UNCERTAINTY_IMG_JS[len("(root) => {"):] + " return img && img.complete && img.naturalWidth > 0 && img.getAttribute('src') !== before; }",
        arg=[explorer.element_handle(), before], timeout=UPDATE_MS,
    )
    snap = _wait_images(page, explorer, "uncertainty redraw", count=2)
    _no_errors(snap, "uncertainty redraw")
    assert "sigma 0.11 eV" in snap["uncertainty_info"], f"the redraw does not state the new sigma: {snap['uncertainty_info']!r}"
    state = _settle(page, explorer, quiet_s=QUIET_S)
    _check_readout(state, "orr-4e")  # the read-out is untouched by the uncertainty option
    _save(explorer.locator(".widget-vbox:has(> .widget-html .ecatlab-uncertainty-info)"), artifacts, "tabs_03_diagram_uncertainty.png")


def _volcano_tab(page, explorer, artifacts, seen: dict) -> None:
    snap = _open_tab(page, explorer, "volcano")
    image = _image(snap)
    assert snap["descriptor"]["selected"] == ["OH*"], snap["descriptor"]
    want = _expected_volcano("orr-4e", "OH*")
    _same_rows(snap["volcano"], want, "volcano summary, orr-4e vs OH*")
    assert "orr-4e vs OH*" in snap["volcano_info"], snap["volcano_info"]
    _save(explorer, artifacts, "tabs_04_volcano.png")
    hash_before = _pixel_hash(_visible_image(explorer, "img.widget-image"))

    explorer.locator(".widget-dropdown", has=page.locator("label", has_text="descriptor")).filter(visible=True).locator("select").select_option(label="O*")
    page.wait_for_function(
        "([root, before]) => Array.from(root.querySelectorAll('img')).some((i) => i.getClientRects().length > 0 && i.getAttribute('src') !== before)",
        arg=[explorer.element_handle(), image["src"]], timeout=UPDATE_MS,
    )
    snap = _wait_images(page, explorer, "volcano tab, descriptor O*")
    _no_errors(snap, "volcano tab, descriptor O*")
    assert snap["descriptor"]["selected"] == ["O*"], snap["descriptor"]
    want = _expected_volcano("orr-4e", "O*")
    _same_rows(snap["volcano"], want, "volcano summary, orr-4e vs O*")
    assert _pixel_hash(_visible_image(explorer, "img.widget-image")) != hash_before, "the volcano image did not change with the descriptor"
    seen["volcano ORR O*"] = _pixel_hash(_visible_image(explorer, "img.widget-image"))
    _save(explorer, artifacts, "tabs_05_volcano_descriptor.png")


def _network_tab(page, explorer, artifacts, seen: dict) -> None:
    snap = _open_tab(page, explorer, "network")
    image = _image(snap)
    product = snap["network_product"]["selected"][0]
    surface = snap["network_surface"]["selected"][0]
    _check_network(explorer, snap, surface, product, artifacts)
    # another surface (the best-ranked ORR surface; the tab starts on the table's first one)
    other = next(s for s in [_best_ranked("orr-4e")[0]] + snap["network_surface"]["options"] if s != surface)
    explorer.locator(".widget-dropdown", has=page.locator("label", has_text=re.compile(r"^surface$"))).filter(visible=True) \
        .locator("select").select_option(label=other)
    page.wait_for_function(
        "([root, before]) => Array.from(root.querySelectorAll('img')).some((i) => i.getClientRects().length > 0 && i.getAttribute('src') !== before)",
        arg=[explorer.element_handle(), image["src"]], timeout=UPDATE_MS,
    )
    snap = _wait_images(page, explorer, "network tab, another surface")
    _no_errors(snap, "network tab, another surface")
    assert snap["network_surface"]["selected"] == [other], snap["network_surface"]
    _check_network(explorer, snap, other, product, artifacts)


def _check_network(explorer, snap: dict, surface: str, product: str, artifacts) -> None:
    """Routes table (best first), best route and stuck point of the page against the network analysis here."""
    _image(snap)
    rows, best_row, best_path, stuck = _expected_network(surface, product, 0.0)
    print(f"[e2e] network {surface} -> {product}: page best route {snap['network'][:1]}; library {rows[:1]}")
    _same_rows(snap["network"], rows, f"network routes on {surface}")
    assert snap["network"][0][0] == "1", snap["network"]  # best first
    steps = "; ".join(s.equation for s in best_path.steps)
    assert steps == str(best_row["route_steps"]), f"best_route() {steps!r} and best_routes() rank 1 {best_row['route_steps']!r} differ"
    note = snap["network_note"] or ""
    want = (f"At U = +0.00 V the surface gets stuck at {stuck['stuck_at']} (next step {stuck['bottleneck_step']}, "
            f"dG = {stuck['bottleneck_dG']:+.2f} eV).")
    assert note.startswith(want), f"network stuck point: page {note!r}, library {want!r}"
    _save(explorer, artifacts, f"tabs_06_network_{surface}.png")


def _kinetics_tab(page, explorer, artifacts, seen: dict) -> None:
    snap = _open_tab(page, explorer, "kinetics")
    _image(snap)
    controls = explorer.evaluate(
        "(root) => Array.from(root.querySelectorAll('.widget-text')).filter((el) => el.getClientRects().length > 0)"
        ".map((el) => [(el.querySelector('.widget-label') || {textContent: ''}).textContent.trim(), el.querySelector('input').value])")
    assert controls == [["intrinsic barrier (eV)", "0.3"], ["symmetry factor", "0.5"], ["onset j (mA/cm²)", "10"]], (
        f"kinetics tab controls: {controls}")
    surfaces = [r[0] for r in snap["kinetics"]]
    assert sorted(surfaces) == sorted(_best_ranked("orr-4e")[:len(surfaces)]) and surfaces, f"kinetics surfaces {surfaces}"
    from ecatlab.explorer.model import DEFAULT_SURFACE_COUNT

    assert len(surfaces) == DEFAULT_SURFACE_COUNT, surfaces
    want = _expected_kinetics("orr-4e", surfaces)
    _same_rows(snap["kinetics"], want, "kinetics onset table")
    # a net reduction current needs U below U_eq (Bard & Faulkner, Electrochemical Methods, 2nd ed. 2001, ch. 3; from memory)
    for row in want:
        if row[1] != "not reached":
            assert row[1] <= E0_O2_H2O + E0_TOLERANCE, row
    assert "ESTIMATED barriers" in snap["kinetics_info"], snap["kinetics_info"]
    _save(explorer, artifacts, "tabs_07_kinetics.png")


def _surface_states_tab(page, explorer, artifacts, seen: dict) -> None:
    snap = _open_tab(page, explorer, "surface states")
    _image(snap)
    state = _tab(explorer)
    info = state["pourbaix_info"]
    focus = _best_ranked("orr-4e")[0]
    from ecatlab import che

    u = float(che.limiting_potentials(_energies(), "orr-4e", pH=0.0, scale="RHE", temperature=TEMPERATURE)
              .set_index("surface").loc[focus, "limiting_potential"])  # the snapped potential
    here, row = _expected_pourbaix(focus, "orr-4e", u)
    print(f"[e2e] surface states: {info}")
    assert info.startswith(f"Surface Pourbaix diagram of {focus} (focus surface)"), info
    assert f"At U = {u:.3f} V, pH 0 the stable state is {here}." in info, f"library: stable state {here!r} at {u:.3f} V; page: {info!r}"
    assert row["surface_state_at_U_L"], dict(row)
    flag = f"({row['surface_state_flag']})" if row["surface_state_flag"] else "(as the pathway assumes)"
    want = f"U_L = {row['limiting_potential']:.3f} V the stable state is {row['surface_state_at_U_L']} {flag}."
    assert want.replace("U_L", "UL") in info, f"library: {want!r}; page: {info!r}"  # U<sub>L</sub> reads "UL" as text
    _save(explorer, artifacts, "tabs_08_surface_states.png")


def _reaction_switch(page, explorer, artifacts, seen: dict) -> None:
    """Back on the diagram tab: another reaction resets U to its equilibrium potential; its volcano differs."""
    explorer.locator(".lm-TabBar-tab", has_text=re.compile("^diagram$")).click()
    _wait_images(page, explorer, "diagram tab again", count=2)
    for key, family, textbook in (("oer-4e", "OER", E0_O2_H2O), ("her-volmer-heyrovsky", "HER", 0.0)):
        explorer.get_by_role("button", name=family, exact=True).click()
        _wait_for_pathway(explorer, key)
        u_eq = _equilibrium(key)
        assert abs(u_eq - textbook) <= E0_TOLERANCE, f"{key}: library U_eq {u_eq:.4f} V vs RHE, textbook {textbook} V"
        page.wait_for_function(
            "([root, want]) => { const i = Array.from(root.querySelectorAll('.widget-text input[type=\"number\"]')).find("
            "(el) => el.getClientRects().length > 0); return i && Math.abs(parseFloat(i.value) - want) < 5e-5; }",
            arg=[explorer.element_handle(), u_eq], timeout=UPDATE_MS,
        )
        state = _wait_readout_at(page, explorer, key, u_eq, family)
        print(f"[e2e] {family}: number box {state['entry']} V vs RHE; library U_eq {u_eq!r}")
        assert float(state["entry"]) == round(u_eq, 4), f"{family}: U {state['entry']} is not U_eq {u_eq:.6f} V"
        _check_readout(state, key)
        snap = _tab(explorer)
        _no_errors(snap, f"diagram tab, {family}")
        if family == "OER":  # the subtitle and pixels once more for a new pathway (ORR was checked twice)
            probe = _probe(page)
            _check_subtitle(probe, state["entry"], family)
            _check_png_is_fresh(page, explorer, probe, family)
        _save(explorer, artifacts, f"tabs_09_diagram_{family}.png")
        if family == "OER":  # a new pathway on the volcano tab: another image, the library's numbers
            snap = _open_tab(page, explorer, "volcano")
            assert snap["descriptor"]["selected"] == ["O* - OH*"], snap["descriptor"]
            assert _pixel_hash(_visible_image(explorer, "img.widget-image")) != seen["volcano ORR O*"], "the volcano image did not change with the pathway"
            want = _expected_volcano("oer-4e", "O* - OH*")
            _same_rows(snap["volcano"], want, "volcano summary, oer-4e vs O* - OH*")
            _save(explorer, artifacts, "tabs_10_volcano_OER.png")
            explorer.locator(".lm-TabBar-tab", has_text=re.compile("^diagram$")).click()
            _wait_images(page, explorer, "diagram tab again", count=2)
