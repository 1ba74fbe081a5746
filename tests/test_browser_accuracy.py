"""The page's "Accuracy beside stability" section in headless Chromium.

Numbers shown are compared with the command line (`stepfence accuracy ... --json`, each run in
its own process) on the eigenvalues the page analysed. Screenshot: artifacts/screenshots/accuracy.png.
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest

import cli_runs

# the page fixtures, the loopback request watch and the demo's pasted spectrum are
# test_browser's: one definition of "no request leaves 127.0.0.1" for every page test
from test_browser import PASTED, SHOTS, Watch, _open, ctx  # noqa: F401 (ctx is a fixture)

pytestmark = pytest.mark.browser

CELL = ".accuracy-panel tr[data-row={row}] td[data-slot={slot}]"


def _accuracy_settled(page, **want):
    """Wait until both reports are in, for the page's current h and for want's tol / per."""
    cond = " && ".join(f"st.accuracyFor.{k} === {json.dumps(v)}" for k, v in want.items()) or "true"
    page.wait_for_function(f"""() => {{
        const st = window.__stepfence.store.get();
        return st.h && st.accuracyA && st.accuracyB && !st.accuracyBusy && st.accuracyFor
            && st.accuracyFor.h === st.h && {cond}
            && document.querySelector('.accuracy-panel__figure')?.dataset.drawn;
    }}""")


def _h_accuracy(page, slot):
    return float(page.get_attribute(CELL.format(row="h-accuracy", slot=slot), "data-value"))


def _eigs_file(page, path: Path) -> Path:
    values = page.evaluate("() => window.__stepfence.store.get().spectrum.values")
    lines = (f"{float(re)!r}{'-' if im < 0 else '+'}{abs(float(im))!r}i" if im else repr(float(re))
             for re, im in values)
    path.write_text("\n".join(lines) + "\n")
    return path


def _start_cli(path: Path, runs: dict) -> dict:
    """Start `stepfence accuracy SCHEME --eigs path --tol T --per P --json` per entry, at once."""
    return cli_runs.start({k: ["accuracy", scheme, "--eigs", str(path), "--tol", repr(tol), "--per", per]
                           for k, (scheme, tol, per) in runs.items()})


def test_accuracy_on_the_demo_and_a_new_tolerance(ctx, live_server, tmp_path):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _accuracy_settled(page, tol=1e-6, per="step")
    path = _eigs_file(page, tmp_path / "demo.txt")
    runs = {(s, tol): (s, tol, "step") for s in ("bdf4", "rk4") for tol in (1e-6, 1e-3)}
    procs = _start_cli(path, runs)   # they run while the page works on the new tolerance
    for slot in ("a", "b"):
        assert "binds" in page.inner_text(CELL.format(row="verdict", slot=slot))
    assert "per unit time" in page.inner_text("[data-role=comparison]")
    cautions = page.inner_text("[data-role=accuracy-cautions]")
    assert "local error of one step" in cautions
    before = {s: _h_accuracy(page, s) for s in ("a", "b")}

    page.fill("[data-field=tol]", "1e-3")
    cli = cli_runs.collect(procs)
    _accuracy_settled(page, tol=1e-3, per="step")
    after = {s: _h_accuracy(page, s) for s in ("a", "b")}
    for slot, scheme in (("a", "bdf4"), ("b", "rk4")):
        assert before[slot] == pytest.approx(cli[(scheme, 1e-6)]["accuracy_limit"]["h_max"], rel=1e-12)
        assert after[slot] == pytest.approx(cli[(scheme, 1e-3)]["accuracy_limit"]["h_max"], rel=1e-12)
        assert after[slot] > before[slot]

    # dragging the h slider asks nothing; letting go asks once, for the new h
    calls = []
    page.on("request", lambda r: calls.append(r.url) if "/api/accuracy" in r.url else None)
    page.eval_on_selector("[data-field=h-slider]", "s => { s.value = Math.round(s.max / 3); s.dispatchEvent(new Event('input')); }")
    page.wait_for_timeout(700)
    assert not calls
    page.eval_on_selector("[data-field=h-slider]", "s => s.dispatchEvent(new Event('change'))")
    _accuracy_settled(page, tol=1e-3, per="step")
    assert calls and page.evaluate("() => window.__stepfence.store.get().accuracyA.h === window.__stepfence.store.get().h")

    # a tolerance that cannot be read: a message next to the field, the text kept, no request
    page.fill("[data-field=tol]", "abc")
    err = page.locator("[data-error-for=tol]")
    assert err.is_visible() and "tol" in err.inner_text()
    assert page.input_value("[data-field=tol]") == "abc"
    # one the server refuses (per step at most 0.5): its message, naming tol, in the same place
    page.fill("[data-field=tol]", "0.7")
    page.wait_for_function("document.querySelector('[data-error-for=tol]')?.textContent.includes('0.5')")
    assert page.inner_text("[data-error-for=tol]").startswith("tol:")
    assert page.input_value("[data-field=tol]") == "0.7"
    assert _h_accuracy(page, "a") == after["a"]   # the last report stays, marked as such
    assert page.is_visible(".accuracy-panel .stale-note")


def test_accuracy_state_survives_the_share_link(ctx, browser, live_server, tmp_path):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _accuracy_settled(page)
    page.click(".spectrum-panel .tabs__tab[data-mode=text]")
    page.fill(".spectrum-panel [data-field=text]", PASTED)
    page.fill("[data-field=tol]", "1e-4")
    page.click(".accuracy-panel [data-per=unit-time]")
    page.wait_for_function("document.querySelector('[data-role=spectrum-count]')?.textContent === '5'")
    _accuracy_settled(page, tol=1e-4, per="unit-time")
    h = page.evaluate("() => window.__stepfence.store.get().h")
    # the marker sits at h * max|Im lambda|; the pasted spectrum's largest |Im| is 5
    x0 = page.evaluate("() => document.querySelector('.accuracy-panel__figure').layout.shapes[0].x0")
    assert x0 == pytest.approx(5 * h, rel=1e-12)
    cli = cli_runs.collect(_start_cli(_eigs_file(page, tmp_path / "pasted.txt"), {"rk4": ("rk4", 1e-4, "unit-time")}))
    assert _h_accuracy(page, "b") == pytest.approx(cli["rk4"]["accuracy_limit"]["h_max"], rel=1e-12)
    want = {s: page.get_attribute(CELL.format(row="h-accuracy", slot=s), "data-value") for s in ("a", "b")}
    page.wait_for_timeout(600)   # the address bar follows after its debounce
    SHOTS.mkdir(parents=True, exist_ok=True)
    page.locator(".accuracy-panel").screenshot(path=str(SHOTS / "accuracy.png"))
    page.click("[data-role=share]")
    link = page.input_value("[data-role=share-link]")
    assert "#s=" in link

    fresh = browser.new_context(viewport={"width": 1440, "height": 1000}, bypass_csp=True)
    try:
        watch2 = Watch(fresh)
        p2 = _open(fresh, watch2, link)
        _accuracy_settled(p2, tol=1e-4, per="unit-time")
        assert p2.input_value("[data-field=tol]") == "1e-4"
        assert "is-active" in p2.get_attribute(".accuracy-panel [data-per=unit-time]", "class")
        for s in ("a", "b"):
            assert p2.get_attribute(CELL.format(row="h-accuracy", slot=s), "data-value") == want[s]
        # an old link without tol and per opens with the defaults and no complaint about them
        old = p2.evaluate("""async () => {
            const s = await import('/js/share-state.js');
            const d = await import('/js/demo.js');
            const defaults = d.demoState();
            // this page's own shared state as a link made before tol and per existed
            const shared = s.toShared(window.__stepfence.store.get());
            delete shared.tol;
            delete shared.per;
            const { patch, problems } = s.fromShared(JSON.parse(JSON.stringify(shared)), defaults);
            const bad = s.fromShared({ ...shared, tol: 2, per: 'year' }, defaults);
            return { tol: patch.tol, per: patch.per, problems, bad: bad.problems.length, dt: defaults.tol, dp: defaults.per };
        }""")
        assert old["tol"] is None and old["per"] is None and old["problems"] == []
        assert old["dt"] == 1e-6 and old["dp"] == "step" and old["bad"] == 2
    finally:
        fresh.close()
    assert not watch2.outside and not watch2.errors
