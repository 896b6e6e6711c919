"""Shared parts of the browser tests: Chromium launch settings, waits, error collection, the
explorer's read-out checks against the CHE engine, screenshots.

Every wait has a timeout (ms constants below). Imported by the ``test_*.py`` files of this folder
(pytest puts the folder on ``sys.path``: it has no ``__init__.py``).
"""

from __future__ import annotations

import contextlib
import hashlib
import math
import re
import time

CHROMIUM_ARGS = [
    "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
    "--no-first-run", "--disable-sync", "--disable-quic", "--disable-dev-shm-usage",
]
# 1400 px wide (a laptop screen with JupyterLab's file browser open); tall, so that the whole explorer
# fits into the notebook's scroll area and its screenshots are complete
VIEWPORT = {"width": 1400, "height": 1900}
# timeouts, ms
PAGE_LOAD_MS = 60_000
RUN_ALL_MS = 120_000
UPDATE_MS = 30_000
ACTION_MS = 10_000
# Console errors that JupyterLab itself emits and that do not concern ecatlab. Each entry is a
# regular expression and the reason it is allowed; anything not listed fails the test.
ALLOWED_CONSOLE_ERRORS: list[tuple[str, str]] = []

# the output area holding the explorer as live widgets (the static fallback is a plain text/html
# output without .jupyter-widgets)
EXPLORER = ".jp-OutputArea-output:has(.jupyter-widgets .ecatlab-readout)"
MINUS = "\N{MINUS SIGN}"

# Everything the test reads from the explorer in one round trip (the explorer root is the argument).
_SNAPSHOT_JS = """
(root) => {
  const text = (el) => (el ? el.textContent.trim() : null);
  const rows = Array.from(root.querySelectorAll('.ecatlab-readout tbody tr')).map(
      (tr) => Array.from(tr.children).map((c) => c.textContent.trim()));
  // controls of a hidden tab (display: none) have no boxes; take the shown ones
  const shown = (el) => el.getClientRects().length > 0;
  const img = Array.from(root.querySelectorAll('.widget-output img')).find(shown) || null;
  const slider = Array.from(root.querySelectorAll('.widget-hslider')).find(
      (s) => shown(s) && (s.querySelector('.widget-label') || {}).textContent.trim() === 'U (V)');
  const entry = slider ? slider.parentElement.querySelector('.widget-text input[type="number"]') : null;
  const handle = slider ? slider.querySelector('.noUi-handle') : null;
  return {
    caption: text(root.querySelector('.ecatlab-readout caption')),
    rows: rows,
    img_src: img ? img.getAttribute('src') : null,
    img_size: img ? [img.naturalWidth, img.naturalHeight] : null,
    entry: entry ? entry.value : null,
    aria_value: handle ? handle.getAttribute('aria-valuenow') : null,
    error_line: text(Array.from(root.querySelectorAll('.widget-html-content')).find(
        (el) => el.textContent.includes('Not applied;')) || null),
  };
}
"""


def _fmt(value: float, digits: int = 3) -> str:
    """The explorer's number format (signed, fixed digits, Unicode minus); 'n/a' when not finite."""
    if not math.isfinite(value):
        return "n/a"
    return f"{value:+.{digits}f}".replace("-", MINUS)


def _engine_readout(pathway: str):
    from ecatlab import che
    from ecatlab.demo import demo_energies

    return che.limiting_potentials(demo_energies(), pathway).set_index("surface")


def _engine_uphill_now(pathway: str, potential: float, surfaces: list[str]) -> dict[str, str]:
    """Electrochemical steps with dG > 0 at ``potential`` (V vs RHE, pH 0), 1-based, as the read-out lists them."""
    from ecatlab import che
    from ecatlab.demo import demo_energies
    from ecatlab.explorer.model import UPHILL_TOLERANCE
    from ecatlab.pathways import pathway as get_pathway

    steps = get_pathway(pathway).steps
    dG = che.step_free_energies(demo_energies(), pathway, potential=potential, surfaces=surfaces)
    out = {}
    for surface in surfaces:
        row = dG.loc[surface].to_numpy(dtype=float)
        up = [str(i + 1) for i, step in enumerate(steps) if step.is_electrochemical and row[i] > UPHILL_TOLERANCE]
        out[surface] = ", ".join(up) or "none"
    return out


def _check_readout(snapshot: dict, pathway: str) -> None:
    """No error in the explorer's error line, and every read-out row equals the engine: U_L (V vs RHE),
    G_max (eV; 'blocked' when a chemical step blocks the pathway), the potential-determining step and
    the uphill chemical steps; rows are best-ranked first (the kernel's ranking rule)."""
    engine = _engine_readout(pathway)
    assert not snapshot["error_line"], f"the explorer shows an error: {snapshot['error_line']}"
    assert snapshot["rows"], "the explorer shows no read-out rows"
    from ecatlab.che import kernel

    shown = [row[0] for row in snapshot["rows"]]
    sub = engine.loc[shown]
    best_first = list(sub.index[kernel.ranking_order(sub["G_max"].to_numpy(float), sub["blocked"].to_numpy(bool))])
    assert shown == best_first, f"{pathway}: read-out order {shown}, ranking rule {best_first}"
    for row in snapshot["rows"]:
        surface, u_l, _eta = row[0], row[1], row[2]
        g_max, _, flag = row[3].partition(" ")
        determining, _, chemical = (part.strip() for part in row[4].partition("chemical uphill:"))
        expected = engine.loc[surface]
        assert g_max == _fmt(float(expected["G_max"])).lstrip("+"), (
            f"{pathway} {surface}: page shows G_max {g_max}, engine {expected['G_max']:.6f} eV")
        assert (flag.strip() == "blocked") == bool(expected["blocked"]), f"{pathway} {surface}: blocked flag {flag!r}"
        assert chemical == (expected["uphill_chemical_steps"] or ""), (
            f"{pathway} {surface}: page shows uphill chemical steps {chemical!r}, engine {expected['uphill_chemical_steps']!r}")
        assert u_l == _fmt(float(expected["limiting_potential"])), (
            f"{pathway} {surface}: page shows U_L {u_l}, engine {expected['limiting_potential']:+.6f} V vs RHE")
        want = f"{int(expected['determining_step_index'])}: {expected['determining_step']}"
        assert determining == want, f"{pathway} {surface}: page shows determining step {determining!r}, engine {want!r}"


def _check_uphill_now(snapshot: dict, pathway: str) -> float:
    potential = float(snapshot["entry"])
    surfaces = [row[0] for row in snapshot["rows"]]
    expected = _engine_uphill_now(pathway, potential, surfaces)
    for row in snapshot["rows"]:
        assert row[5] == expected[row[0]], (
            f"{pathway} {row[0]} at U = {potential} V: page says uphill now {row[5]!r}, engine {expected[row[0]]!r}")
    return potential


def _pathway_in(snapshot: dict) -> str:
    """Pathway key from the read-out caption, e.g. 'orr-4e (reduction); U_eq = ...'."""
    match = re.match(r"\s*([a-z0-9-]+) \(", snapshot["caption"] or "")
    assert match, f"read-out caption not understood: {snapshot['caption']!r}"
    return match.group(1)


# Boxes of the explorer's controls and outputs (CSS px, relative to the explorer), for the layout check.
_LAYOUT_JS = """
(root) => {
  const r0 = root.getBoundingClientRect();
  const box = (el) => { const r = el.getBoundingClientRect();
    return {x: Math.round(r.left - r0.left), y: Math.round(r.top - r0.top), w: Math.round(r.width), h: Math.round(r.height)}; };
  const items = [];
  root.querySelectorAll('.widget-inline-hbox, .widget-output, button.jupyter-button, .widget-label, input, select').forEach((el) => {
    if (el.closest('.widget-html-content') || el.getBoundingClientRect().width === 0) return;
    const label = el.querySelector(':scope > .widget-label');
    items.push({kind: el.tagName.toLowerCase() + '.' + Array.from(el.classList).filter((c) => c.startsWith('widget-')).join('.'),
                text: ((label && label.textContent) || el.textContent || el.value || '').trim().slice(0, 40),
                box: box(el), overflowing: el.scrollWidth > el.clientWidth + 1});
  });
  return {explorer: {w: Math.round(r0.width), h: Math.round(r0.height), scrollWidth: root.scrollWidth}, items: items};
}
"""


def _layout_report(explorer, folder, name: str) -> list[str]:
    """Write the explorer's control boxes to ``name`` and return readable layout problems:
    controls reaching past the explorer's right edge, leaf controls overlapping each other,
    and labels/buttons whose text does not fit."""
    import json

    layout = explorer.evaluate(_LAYOUT_JS)
    (folder / name).write_text(json.dumps(layout, indent=1), encoding="utf-8")
    width = layout["explorer"]["w"]
    problems = []
    leaves = [it for it in layout["items"] if it["kind"].split(".")[0] in ("button", "input", "select", "label")]
    for it in layout["items"]:
        b = it["box"]
        if b["x"] + b["w"] > width + 1:
            problems.append(f"{it['kind']} {it['text']!r} reaches {b['x'] + b['w']} px, past the explorer's {width} px")
    for it in leaves:
        if it["overflowing"] and it["kind"].startswith(("button", "label")):
            problems.append(f"{it['kind']} {it['text']!r} is too narrow for its text ({it['box']['w']} px)")
    for i, a in enumerate(leaves):
        for b_ in leaves[i + 1:]:
            A, B = a["box"], b_["box"]
            if A["x"] < B["x"] + B["w"] - 1 and B["x"] < A["x"] + A["w"] - 1 and A["y"] < B["y"] + B["h"] - 1 and B["y"] < A["y"] + A["h"] - 1:
                problems.append(f"{a['kind']} {a['text']!r} overlaps {b_['kind']} {b_['text']!r}")
    for p in problems:
        print(f"[e2e] layout: {p}")
    return problems


def _wait_for_pathway(explorer, key: str) -> None:
    """Wait (bounded) until the read-out caption names pathway ``key``."""
    explorer.page.wait_for_function(
        "([root, key]) => ((root.querySelector('.ecatlab-readout caption') || {}).textContent || '').trim().startsWith(key + ' (')",
        arg=[explorer.element_handle(), key], timeout=UPDATE_MS,
    )


def _pixel_hash(locator) -> str:
    return hashlib.sha256(locator.screenshot(timeout=ACTION_MS)).hexdigest()[:16]


class PageErrors:
    """Console errors and uncaught page errors, collected while the test runs."""

    def __init__(self, page):
        self.console: list[str] = []
        self.page_errors: list[str] = []
        self.allowed: list[str] = []
        page.on("console", self._on_console)
        page.on("pageerror", lambda exc: self.page_errors.append(str(exc)))

    def _on_console(self, msg) -> None:
        if msg.type != "error":
            return
        text = f"{msg.text} (at {msg.location.get('url', '?')}:{msg.location.get('lineNumber', '?')})"
        for pattern, reason in ALLOWED_CONSOLE_ERRORS:
            if re.search(pattern, msg.text):
                self.allowed.append(f"{text} -- allowed: {reason}")
                return
        self.console.append(text)

    def check(self) -> None:
        for line in self.allowed:
            print(f"[e2e] console error allowed: {line}")
        assert not self.page_errors, "uncaught errors in the page:\n" + "\n".join(self.page_errors)
        assert not self.console, "JavaScript console errors:\n" + "\n".join(self.console)


def _check_cell_outputs(page) -> None:
    """No cell shows an error or a Traceback (JupyterLab renders both error and stderr outputs as stderr)."""
    texts = page.locator(
        '.jp-OutputArea-output[data-mime-type="application/vnd.jupyter.stderr"], '
        '.jp-OutputArea-output[data-mime-type="application/vnd.jupyter.error"]'
    ).all_text_contents()
    for text in texts:
        print(f"[e2e] stderr output in the notebook: {text[:500]!r}")
    bad = [t for t in texts if re.search(r"Traceback|Error|Exception", t)]
    assert not bad, "kernel error output in the notebook:\n" + "\n---\n".join(t[:3000] for t in bad)
    tracebacks = [t for t in page.locator(".jp-RenderedText").all_text_contents() if "Traceback" in t]
    assert not tracebacks, "Traceback in the notebook:\n" + "\n---\n".join(t[:3000] for t in tracebacks)


def _wait_kernel_idle(page, timeout_ms: int) -> None:
    page.wait_for_selector('.jp-Notebook-ExecutionIndicator[data-status="idle"]', state="attached", timeout=timeout_ms)


_KERNEL_STATE_JS = """
() => {
  const dialog = document.querySelector('.jp-Dialog');
  const header = dialog ? (dialog.querySelector('.jp-Dialog-header') || {innerText: ''}).innerText.trim() : null;
  const status = Array.from(document.querySelectorAll('.jp-StatusBar-TextItem')).map((e) => e.innerText.trim())
      .find((t) => t.includes(' | ')) || '';
  return {dialog: header, status: status};
}
"""


def _wait_for_kernel_answering_dialogs(page, timeout_ms: int) -> None:
    """Wait until the notebook's kernel is idle. JupyterLab may ask which kernel to start (even when the
    notebook names one): answer it the way a user would, with the proposed "Python 3" kernel."""
    deadline = time.monotonic() + timeout_ms / 1000
    idle_since = None
    while time.monotonic() < deadline:
        state = page.evaluate(_KERNEL_STATE_JS)
        if state["dialog"] == "Select Kernel":
            print("[e2e] JupyterLab asks for a kernel; choosing the proposed one")
            dialog = page.locator(".jp-Dialog")
            assert "Python 3" in dialog.locator("select").input_value() + dialog.inner_text(), dialog.inner_text()
            dialog.get_by_role("button", name="Select", exact=True).click()
            idle_since = None
        elif state["dialog"]:
            raise AssertionError(f"unexpected JupyterLab dialog: {state['dialog']!r}")
        elif state["status"].endswith("| Idle") and not state["status"].startswith("No Kernel"):
            idle_since = idle_since or time.monotonic()
            if time.monotonic() - idle_since >= 1.0:  # no late dialog
                return
        else:
            idle_since = None
        page.wait_for_timeout(200)
    raise AssertionError(f"the kernel did not become idle within {timeout_ms} ms (last state {state})")


def _settle(page, explorer, timeout_ms: int = UPDATE_MS, quiet_s: float = 1.2) -> dict:
    """Wait until the kernel is idle and the explorer's state stopped changing for ``quiet_s``; return it."""
    deadline = time.monotonic() + timeout_ms / 1000
    last, since = None, time.monotonic()
    while True:
        _wait_kernel_idle(page, max(1000, int((deadline - time.monotonic()) * 1000)))
        snap = explorer.evaluate(_SNAPSHOT_JS)
        key = (snap["caption"], str(snap["rows"]), snap["img_src"], snap["entry"])
        if key != last:
            last, since = key, time.monotonic()
        elif time.monotonic() - since >= quiet_s:
            return snap
        if time.monotonic() > deadline:
            raise AssertionError(f"the explorer kept changing for {timeout_ms} ms")
        page.wait_for_timeout(200)


def _save(locator, folder, name: str) -> None:
    path = folder / name
    locator.scroll_into_view_if_needed(timeout=ACTION_MS)
    locator.screenshot(path=str(path), timeout=ACTION_MS)
    print(f"[e2e] screenshot: {path}")


@contextlib.contextmanager
def browser_page(chromium_executable, sync_playwright_factory, artifacts_dir, prefix: str = "failure"):
    """A fresh Chromium page with :class:`PageErrors` attached: yields ``(page, errors)``. On an
    exception the whole page (screenshot and HTML) is saved as ``<prefix>_page.png/.html``."""
    t0 = time.monotonic()
    with sync_playwright_factory() as pw:
        browser = pw.chromium.launch(executable_path=chromium_executable, headless=True, args=CHROMIUM_ARGS,
                                     timeout=PAGE_LOAD_MS)
        try:
            context = browser.new_context(viewport=VIEWPORT, device_scale_factor=1)
            context.set_default_timeout(ACTION_MS)
            page = context.new_page()
            errors = PageErrors(page)
            try:
                yield page, errors
            except BaseException:
                page.screenshot(path=str(artifacts_dir / f"{prefix}_page.png"), full_page=True, timeout=ACTION_MS)
                (artifacts_dir / f"{prefix}_page.html").write_text(page.content(), encoding="utf-8")
                print(f"[e2e] failure screenshot and page HTML in {artifacts_dir} ({prefix}_page.*)")
                print(f"[e2e] console errors so far: {errors.console + errors.page_errors}")
                raise
            finally:
                context.close()
        finally:
            browser.close()
    print(f"[e2e] browser part took {time.monotonic() - t0:.1f} s")


def open_and_run_all(page, lab, notebook: str) -> None:
    """Open ``notebook`` (a path under the server's root) in JupyterLab, wait for an idle kernel,
    run all cells from the Run menu as a user would, and wait until every code cell has run."""
    t0 = time.monotonic()
    page.goto(lab.url(f"lab/tree/{notebook}", reset=""), timeout=PAGE_LOAD_MS)
    page.wait_for_selector(".jp-NotebookPanel .jp-Notebook .jp-Cell", timeout=PAGE_LOAD_MS)
    _wait_for_kernel_answering_dialogs(page, PAGE_LOAD_MS)
    page.locator(".lm-MenuBar-itemLabel", has_text=re.compile(r"^Run$")).click()
    page.locator(".lm-Menu-itemLabel", has_text=re.compile(r"^Run All Cells$")).click()
    n_code = page.locator(".jp-Notebook .jp-CodeCell").count()
    page.wait_for_function(
        """(n) => {
             const prompts = Array.from(document.querySelectorAll('.jp-Notebook .jp-CodeCell .jp-InputArea-prompt'));
             return prompts.length === n && prompts.every((p) => /\\[\\d+\\]/.test(p.textContent));
           }""",
        arg=n_code, timeout=RUN_ALL_MS,
    )
    _wait_kernel_idle(page, RUN_ALL_MS)
    print(f"[e2e] {notebook}: opened and ran {n_code} code cells in {time.monotonic() - t0:.1f} s")
