"""The page in headless Chromium: offline, drawn, and agreeing with the command line.

Every number compared here comes from outside the page: the CLI in a subprocess (`stepfence
limit/describe --json`), or a published value named beside the check. Screenshots go to
artifacts/screenshots/ (gitignored).
"""
from __future__ import annotations

import json
import time
from pathlib import Path
from urllib.parse import urlparse

import pytest

import cli_runs

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
SHOTS = ROOT / "artifacts" / "screenshots"
TIMEOUT_MS = 30_000
PASTED = "-1\n-2+3i\n-0.1+5i\n-0.1-5i\n-40\n"


RK4_POLY = "1 + z + z^2/2 + z^3/6 + z^4/24"


@pytest.fixture(scope="module")
def cli(tmp_path_factory):
    """What the command line says, each call in its own process, all started at once."""
    path = tmp_path_factory.mktemp("eigs") / "pasted.txt"
    path.write_text(PASTED)
    calls = {
        "limit bdf4": ["limit", "bdf4", "--eigs", str(path)],
        "limit rk4": ["limit", "rk4", "--eigs", str(path)],
        "describe rk4": ["describe", "rk4"],
        "describe R": ["describe", "--stability", RK4_POLY],
    }
    return cli_runs.run(calls)


@pytest.fixture(scope="module")
def cli_pasted(cli):
    return {"bdf4": cli["limit bdf4"], "rk4": cli["limit rk4"]}


class Watch:
    """Records every request leaving loopback (and blocks it), console lines and page errors."""

    def __init__(self, context):
        self.outside: list[str] = []
        self.console: list[str] = []
        self.errors: list[str] = []
        context.route("**/*", self._route)

    def _route(self, route):
        url = route.request.url
        host = urlparse(url).hostname
        if url.startswith(("data:", "blob:")) or host == "127.0.0.1":
            route.continue_()
        else:
            self.outside.append(url)
            route.abort()

    def attach(self, page):
        page.on("console", lambda m: self.console.append(f"{m.type}: {m.text}"))
        page.on("pageerror", lambda e: self.errors.append(str(e)))
        page.on("request", lambda r: None if urlparse(r.url).hostname in ("127.0.0.1", None) or r.url.startswith(("data:", "blob:"))
                else self.outside.append(r.url))
        return page


@pytest.fixture
def ctx(browser):
    # bypass_csp: Playwright's wait_for_function evaluates strings, which the page's own CSP
    # (script-src 'self', no eval) refuses; the request watch below does the offline check
    context = browser.new_context(viewport={"width": 1440, "height": 1000}, accept_downloads=True,
                                  bypass_csp=True)
    watch = Watch(context)
    yield context, watch
    context.close()
    assert not watch.outside, f"requests left 127.0.0.1: {watch.outside}"
    assert not watch.errors, f"page errors: {watch.errors}"


def _open(context, watch, url):
    page = watch.attach(context.new_page())
    page.set_default_timeout(TIMEOUT_MS)
    page.goto(url)
    page.wait_for_selector(".region-plot__figure[data-drawn]")
    return page


def _wait_hmax(page, slot):
    sel = f".readout[data-slot={slot}] [data-role=h-max]"
    page.wait_for_selector(sel)
    return page.locator(sel)


def _settled(page):
    """Wait until the page has no request in flight and every shown scheme is described."""
    page.wait_for_function("""() => {
        const st = window.__stepfence.store.get();
        const done = (a) => a && a.describe && a.describeFor === a.specKey;
        return document.documentElement.dataset.requests === '0' && st.h && st.view
            && done(st.analysisA) && (!st.compare || done(st.analysisB)) && st.limitA && (!st.compare || st.limitB);
    }""")


def _wait_idle(page, ms=400):
    page.wait_for_timeout(ms)


def _shot(page, name):
    SHOTS.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(SHOTS / name), full_page=True)


def _figure(page):
    return page.evaluate("""() => {
        const gd = document.querySelector('.region-plot__figure');
        return { data: gd.data.map(t => ({ type: t.type, meta: t.meta || null, n: (t.x || []).length, name: t.name })),
                 layout: { x2: !!gd.layout.xaxis2, scaleanchor: gd.layout.yaxis.scaleanchor } };
    }""")


def _set_spectrum_text(page, text):
    page.click(".spectrum-panel .tabs__tab[data-mode=text]")
    page.fill(".spectrum-panel [data-field=text]", text)


def _type_rho_sigma(page, rho, sigma):
    """Switch scheme A's editor to rho/sigma and type both polynomials."""
    page.click(".scheme-editor--a [data-mode=rhosigma]")
    page.fill(".scheme-editor--a [data-field=rho]", rho)
    page.fill(".scheme-editor--a [data-field=sigma]", sigma)


def _pick(page, slot, name):
    page.select_option(f".scheme-editor--{slot} select[data-field=name]", name)


# --- tests -------------------------------------------------------------------------------

def test_demo_loads_offline_and_draws(ctx, live_server):
    context, watch = ctx
    t0 = time.perf_counter()
    page = _open(context, watch, live_server + "/")
    _settled(page)
    print(f"\ndemo load to first limit: {time.perf_counter() - t0:.2f} s")
    page.wait_for_function("['wedge', 'points-inside'].every(r => document.querySelector('.region-plot__figure').data.some(t => t.meta?.role === r))")
    print(f"demo load to the full figure: {time.perf_counter() - t0:.2f} s")
    assert "invented" in page.inner_text("[data-role=demo-note]")
    fig = _figure(page)
    roles = [t["meta"]["role"] for t in fig["data"] if t["meta"]]
    assert roles.count("region") == 2 and "locus" in roles and "wedge" in roles
    assert "points-inside" in roles and "binding" in roles
    assert fig["layout"]["scaleanchor"] == "x"
    assert page.inner_text("[data-role=spectrum-count]") == "60"
    # BDF4 (A) is A(alpha)-stable with alpha ~ 73.35 deg (Hairer & Wanner II, 2nd ed., Table
    # V.2.3, from memory): every negative real eigenvalue is inside, so h_max is unbounded.
    assert page.get_attribute(".readout[data-slot=a] [data-role=h-max]", "data-value") == "unbounded"
    _wait_idle(page, 800)
    _shot(page, "demo.png")


def test_pick_scheme_reads_order_and_interval(ctx, live_server):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _pick(page, "a", "ab2")
    row = ".property-table tr[data-row=real-interval] td[data-slot=a]"
    page.wait_for_function(f"document.querySelector('{row}')?.textContent.startsWith('[-1,')")
    # Hairer & Wanner, Solving ODEs II, 2nd ed., section V.1: AB2's real interval is [-1, 0]
    assert page.inner_text(row) == "[-1, 0]"
    assert page.inner_text(".property-table tr[data-row=order] td[data-slot=a]") == "2"
    facts = page.inner_text(".scheme-editor--a [data-role=facts]")
    assert facts.startswith("explicit · 2-step · order 2")
    # the stencil marks f at the new level unused (explicit) and f_{n+1}, f_n used
    used = page.evaluate("""() => [...document.querySelectorAll('.scheme-editor--a [data-level^=f]')]
        .map(c => c.getAttribute('data-used'))""")
    assert used == ["true", "true", "false"]
    _shot(page, "pick-ab2.png")


def test_pasted_spectrum_gives_the_cli_h_max(ctx, live_server, cli_pasted):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    _set_spectrum_text(page, PASTED)
    page.wait_for_function("document.querySelector('[data-role=spectrum-count]')?.textContent === '5'")
    for slot, scheme in (("a", "bdf4"), ("b", "rk4")):
        want = cli_pasted[scheme]["h_max"]
        sel = f".readout[data-slot={slot}] [data-role=h-max]"
        page.wait_for_function(f"(() => {{ const v = Number(document.querySelector('{sel}')?.dataset.value); "
                               f"return Math.abs(v - {want!r}) <= 1e-12 * {want!r}; }})()")
        assert float(page.get_attribute(sel, "data-value")) == pytest.approx(want, rel=1e-14)
    # BDF4 is stable again for large steps here: the page lists both windows, like the CLI
    windows = page.inner_text(".readout[data-slot=a] [data-role=windows]")
    assert len(cli_pasted["bdf4"]["windows"]) == 2 and "∪" in windows and "∞" in windows
    _shot(page, "pasted-spectrum.png")


def test_h_past_h_max_flags_the_binding_point(ctx, live_server, cli):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    hmax = float(_wait_hmax(page, "b").get_attribute("data-value"))
    # RK4's real interval from the CLI (an independent process): the demo's eigenvalues are
    # real and negative, so lambda is outside at h exactly when h |lambda| > |interval end|
    lo = cli["describe rk4"]["real_interval"][0]
    eigs = page.evaluate("() => window.__stepfence.store.get().spectrum.values.map(v => v[0])")
    h = 1.15 * hmax
    page.fill("[data-field=h]", repr(h))
    page.wait_for_function("document.querySelector('.readout[data-slot=b] [data-role=verdict]')?.dataset.outside > 0")
    expected = sum(1 for lam in eigs if h * abs(lam) > abs(lo))
    assert expected > 0
    assert int(page.get_attribute(".readout[data-slot=b] [data-role=verdict]", "data-outside")) == expected
    fig = _figure(page)
    binding = [t for t in fig["data"] if t["meta"] and t["meta"]["role"] == "binding" and t["meta"]["slot"] == "b"]
    assert binding and binding[0]["meta"]["outside"] is True
    outside = [t for t in fig["data"] if t["meta"] and t["meta"]["role"] == "points-outside"]
    assert sum(t["n"] for t in outside) == expected
    _shot(page, "past-h-max.png")
    # back below the limit with the button: nothing outside
    page.click("[data-role=use-hmax-b]")
    page.wait_for_function("document.querySelector('.readout[data-slot=b] [data-role=verdict]')?.dataset.outside === '0'")
    assert float(page.input_value("[data-field=h]")) == pytest.approx(0.9 * hmax, rel=1e-7)
    # the slider moves the points without a server call
    calls = []
    page.on("request", lambda r: calls.append(r.url) if "/api/" in r.url and "/api/catalogue" not in r.url else None)
    page.eval_on_selector("[data-field=h-slider]", "s => { s.value = s.max; s.dispatchEvent(new Event('input')); }")
    page.wait_for_function("document.querySelector('.readout[data-slot=b] [data-role=verdict]')?.dataset.outside > 0")
    _wait_idle(page, 300)
    assert not calls


def test_compare_two_schemes(ctx, live_server):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    assert page.locator(".property-table thead th").count() == 3
    # classical RK4 evaluates f four times per step (Butcher, Numerical Methods for ODEs,
    # 2nd ed., 2008, section 23, from memory); BDF4 once
    assert page.inner_text(".property-table tr[data-row=evaluations] td[data-slot=b]") == "4"
    assert page.inner_text(".property-table tr[data-row=evaluations] td[data-slot=a]") == "1"
    page.click(".region-plot [data-layout=side]")
    page.wait_for_function("!!document.querySelector('.region-plot__figure').layout.xaxis2")
    _wait_idle(page, 500)
    _shot(page, "compare-side-by-side.png")
    page.click(".scheme-editor--b .switch")
    page.wait_for_function("document.querySelectorAll('.property-table thead th').length === 2")
    assert page.is_hidden(".scheme-editor--b .scheme-editor__body")
    page.click(".scheme-editor--b .switch")
    page.wait_for_function("document.querySelectorAll('.property-table thead th').length === 3")
    _pick(page, "b", "dopri5")
    page.wait_for_function("document.querySelector('.property-table thead th.col--b')?.textContent.includes('DOPRI5')")


def test_share_link_restores_the_state_in_a_fresh_browser(ctx, browser, live_server, cli_pasted):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    _pick(page, "a", "ab3")
    _set_spectrum_text(page, PASTED)
    page.wait_for_function("document.querySelector('[data-role=spectrum-count]')?.textContent === '5'")
    page.fill("[data-field=h]", "0.05")
    page.fill("[data-field=safety]", "0.8")
    _wait_idle(page, 900)
    page.click("[data-role=share]")
    link = page.input_value("[data-role=share-link]")
    assert "#s=" in link and link.startswith(live_server)
    hmax_a = page.get_attribute(".readout[data-slot=a] [data-role=h-max]", "data-value")
    view = page.evaluate("() => window.__stepfence.store.get().view")
    _shot(page, "before-share.png")

    fresh = browser.new_context(viewport={"width": 1440, "height": 1000}, bypass_csp=True)
    watch2 = Watch(fresh)
    try:
        p2 = _open(fresh, watch2, link)
        p2.wait_for_function(f"document.querySelector('.readout[data-slot=a] [data-role=h-max]')?.dataset.value === '{hmax_a}'")
        assert p2.input_value(".scheme-editor--a select[data-field=name]") == "ab3"
        assert p2.input_value(".scheme-editor--b select[data-field=name]") == "rk4"
        assert p2.input_value("[data-field=text]") == PASTED
        assert p2.input_value("[data-field=h]") == "0.05"
        assert p2.input_value("[data-field=safety]") == "0.8"
        assert p2.evaluate("() => window.__stepfence.store.get().view") == view
        assert float(p2.get_attribute(".readout[data-slot=b] [data-role=h-max]", "data-value")) == pytest.approx(cli_pasted["rk4"]["h_max"], rel=1e-14)
        assert p2.is_hidden("[data-role=demo-note]")
        _wait_idle(p2, 500)
        _shot(p2, "restored-from-link.png")
    finally:
        fresh.close()
    assert not watch2.outside and not watch2.errors


def test_saved_configuration_loads(ctx, live_server, tmp_path):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    _type_rho_sigma(page, "z^2 - z", "3/2 z - 1/2")
    page.fill("[data-field=h]", "0.0125")
    _wait_idle(page, 900)
    with page.expect_download() as dl:
        page.click("[data-role=save-config]")
    saved = tmp_path / "config.json"
    dl.value.save_as(saved)
    cfg = json.loads(saved.read_text())
    assert cfg["a"] == {"mode": "rhosigma", "rho": "z^2 - z", "sigma": "3/2 z - 1/2"}

    p2 = _open(context, watch, live_server + "/")
    _settled(p2)
    p2.set_input_files("[data-role=load-config-input]", str(saved))
    p2.wait_for_function("document.querySelector('.scheme-editor--a [data-field=rho]').value === 'z^2 - z'")
    assert p2.input_value(".scheme-editor--a [data-field=sigma]") == "3/2 z - 1/2"
    assert p2.input_value("[data-field=h]") == "0.0125"
    # the typed AB2 has AB2's real interval [-1, 0] (Hairer & Wanner II, 2nd ed., section V.1)
    row = ".property-table tr[data-row=real-interval] td[data-slot=a]"
    p2.wait_for_function(f"document.querySelector('{row}')?.textContent === '[-1, 0]'")

    # a damaged file: a message, the readable parts restored
    cfg["h"] = -3
    cfg["v"] = 7
    bad = tmp_path / "damaged.json"
    bad.write_text(json.dumps(cfg))
    p2.set_input_files("[data-role=load-config-input]", str(bad))
    p2.wait_for_selector("[data-notice=restore]")
    text = p2.inner_text("[data-notice=restore]")
    assert "version 7" in text and "step h" in text
    assert p2.input_value(".scheme-editor--a [data-field=rho]") == "z^2 - z"
    (tmp_path / "junk.json").write_text("{not json")
    p2.set_input_files("[data-role=load-config-input]", str(tmp_path / "junk.json"))
    p2.wait_for_selector("[data-notice=load]")
    assert "not a readable configuration" in p2.inner_text("[data-notice=load]")


def test_malformed_link_opens_with_a_message(ctx, live_server):
    context, watch = ctx
    page = _open(context, watch, live_server + "/#s=thisisnotvalid")
    page.wait_for_selector("[data-notice=restore]")
    assert "could not be read" in page.inner_text("[data-notice=restore]")
    assert not page.is_hidden("[data-role=demo-note]")
    # an outdated link with one bad part: the rest is restored
    code = page.evaluate("""async () => {
        const m = await import('/js/share-state.js');
        return m.encodeShared({ v: 0, a: { mode: 'catalogue', name: 'bdf2' }, b: null, compare: false,
                                spectrum: { mode: 'text', text: '-1\\n-3' }, h: 'fast', safety: 0.9 });
    }""")
    p2 = _open(context, watch, live_server + "/#s=" + code)
    p2.wait_for_selector("[data-notice=restore]")
    note = p2.inner_text("[data-notice=restore]")
    assert "version 0" in note and "step h could not be read" in note
    assert p2.input_value(".scheme-editor--a select[data-field=name]") == "bdf2"
    assert p2.input_value("[data-field=text]") == "-1\n-3"
    assert p2.is_hidden(".scheme-editor--b .scheme-editor__body")


def test_exports_download(ctx, live_server, tmp_path):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    got = {}
    for kind in ("png", "svg", "boundary", "limits", "json"):
        with page.expect_download() as dl:
            page.click(f"[data-export={kind}]")
        path = tmp_path / dl.value.suggested_filename
        dl.value.save_as(path)
        got[kind] = path.read_bytes()
    assert got["png"][:8] == b"\x89PNG\r\n\x1a\n" and len(got["png"]) > 10_000
    assert b"<svg" in got["svg"][:500]
    assert got["boundary"].startswith(b"scheme,branch,re_z,im_z\n") and got["boundary"].count(b"\n") > 100
    lines = got["limits"].decode().splitlines()
    assert lines[0] == "index,re_lambda,im_lambda,h_max_A,outside_A_at_h,h_max_B,outside_B_at_h" and len(lines) == 61
    full = json.loads(got["json"])
    assert full["schemes"]["B"]["limit"]["h_max"] > 0 and full["cautions"]


def test_malformed_polynomial_keeps_the_text(ctx, live_server):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    _type_rho_sigma(page, "z^2 - z", "3/2 z - 1/2 +")
    box = page.locator(".scheme-editor--a [data-error-for=sigma]")
    box.wait_for(state="visible")
    # the rho edit alone (old sigma, higher degree) may be answered first under load: wait
    # for the message about the text as finally typed
    page.wait_for_function("document.querySelector('.scheme-editor--a [data-error-for=sigma]')"
                           "?.innerText.includes('^')")
    assert "sigma" in box.inner_text() and "^" in box.inner_text()
    assert page.input_value(".scheme-editor--a [data-field=sigma]") == "3/2 z - 1/2 +"
    assert "is-invalid" in page.get_attribute(".scheme-editor--a [data-field=sigma]", "class")
    page.wait_for_selector("[data-role=stale]:not([hidden])")
    _shot(page, "malformed-polynomial.png")
    # the server goes away: a message, and still nothing typed is lost
    page.route("**/api/analyse", lambda route: route.abort())
    page.type(".scheme-editor--a [data-field=sigma]", " 1")
    page.wait_for_selector("[data-notice=server]")
    assert page.input_value(".scheme-editor--a [data-field=sigma]") == "3/2 z - 1/2 + 1"
    assert page.input_value(".scheme-editor--a [data-field=rho]") == "z^2 - z"


def test_keystroke_to_redraw_timing(ctx, live_server, cli):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    page.click(".scheme-editor--a [data-mode=stability]")
    field = ".scheme-editor--a [data-field=stability]"
    page.fill(field, "1 + z + z^2/2")
    page.wait_for_function("window.__stepfenceTimings.length >= 1")
    for text in ("1 + z + z^2/2 + z^3/6", "(1 + z/2)/(1 - z/2)", "(1 + z/2 + z^2/12)/(1 - z/2 + z^2/12)",
                 RK4_POLY[:-1]):
        n = page.evaluate("window.__stepfenceTimings.length")
        page.fill(field, text)
        page.wait_for_function(f"window.__stepfenceTimings.length > {n}")
    n = page.evaluate("window.__stepfenceTimings.length")
    page.type(field, "4")   # a real key press completes RK4's polynomial
    page.wait_for_function(f"window.__stepfenceTimings.length > {n}")
    timings = page.evaluate("window.__stepfenceTimings")
    print("\nkeystroke-to-redraw (ms): " + ", ".join(f"{t['total_ms']:.0f} (server {t['server_ms']:.0f}, draw {t['draw_ms']:.0f})" for t in timings))
    assert any("keystroke-to-redraw" in c for c in watch.console)
    # typed as R(z), RK4's polynomial shows the real interval the CLI gives for rk4
    assert page.input_value(field) == RK4_POLY
    row = ".property-table tr[data-row=real-interval] td[data-slot=a]"
    want = cli["describe rk4"]["real_interval"][0]
    assert cli["describe R"]["real_interval"][0] == pytest.approx(want, rel=1e-12)
    page.wait_for_function(f"document.querySelector('{row}')?.dataset.pending === 'false' && "
                           f"document.querySelector('{row}').textContent.startsWith('[-2.78529')")
    assert page.inner_text(row) == f"[{float(f'{want:.7g}')!r}, 0]"


def test_matrix_upload_job_and_stepping(ctx, live_server, tmp_path, cli):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    # a non-normal 2x2 Jacobian written here: eigenvalues -1 and -2 (triangular)
    mtx = tmp_path / "jac.mtx"
    mtx.write_text("%%MatrixMarket matrix coordinate real general\n2 2 3\n1 1 -1\n1 2 30\n2 2 -2\n")
    page.click(".spectrum-panel .tabs__tab[data-mode=file]")
    page.check("input[name=upload-kind][value=matrix]")
    page.set_input_files("[data-field=file]", str(mtx))
    page.wait_for_function("document.querySelector('[data-role=job-state]')?.textContent === 'done'")
    page.wait_for_function("document.querySelector('[data-role=spectrum-count]')?.textContent === '2'")
    hmax = float(_wait_hmax(page, "b").get_attribute("data-value"))
    # RK4 on real lambda = -2: h_max = 2.785.../2 (CLI real interval, independent process)
    lo = cli["describe rk4"]["real_interval"][0]
    page.wait_for_function(f"Math.abs(Number(document.querySelector('.readout[data-slot=b] [data-role=h-max]')?.dataset.value) - {abs(lo) / 2!r}) < 1e-9")
    page.click("[data-role=use-hmax-b]")
    page.click("[data-role=run-verify]")
    page.wait_for_selector("[data-role=verify-verdict]")
    assert page.inner_text("[data-role=verify-what]") == "steps the uploaded matrix"
    assert page.locator("[data-role=verify-verdict]").count() == 2
    _wait_idle(page, 400)
    _shot(page, "matrix-and-stepping.png")
    assert hmax > 0


def test_matrix_job_can_be_cancelled(ctx, live_server, tmp_path):
    import numpy as np
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    big = tmp_path / "big.npy"
    np.save(big, np.random.default_rng(5).standard_normal((1800, 1800)))
    page.click(".spectrum-panel .tabs__tab[data-mode=file]")
    page.check("input[name=upload-kind][value=matrix]")
    page.set_input_files("[data-field=file]", str(big))
    page.click("[data-role=job-cancel]")
    page.wait_for_function("document.querySelector('[data-role=job-state]')?.textContent === 'cancelled'")
    assert "cancelled" in page.inner_text(".spectrum-panel [data-error-for=file]")
    # the demo spectrum is still the one analysed
    assert page.inner_text("[data-role=spectrum-count]") == "60"


def test_pure_page_functions(ctx, live_server):
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    res = page.evaluate("""async () => {
        const t = await import('/js/traces.js');
        const s = await import('/js/share-state.js');
        const st = await import('/js/stencil-view.js');
        const sc = await import('/js/step-control.js');
        const obj = { v: 1, a: { mode: 'rhosigma', rho: 'z^2 - z', sigma: 'ζ' }, h: 0.25, note: 'äπ' };
        const back = await s.decodeShared(await s.encodeShared(obj));
        const fitted = t.fitAspect({ xlim: [-2, 0], ylim: [-1, 1] }, 0.5);
        return {
            mask: t.outsideMask([1, null, 0.5], 0.75),
            scaled: t.scaled([[-2, 1]], 0.5),
            fitted,
            roundTrip: JSON.stringify(back) === JSON.stringify(obj),
            formula: st.multistepFormula(['0', '-1', '1'], ['-1/2', '3/2', '0']),
            slider: sc.stepToSlider(sc.sliderToStep(437, 1e-4, 10), 1e-4, 10),
        };
    }""")
    assert res["mask"] == [False, False, True]
    assert res["scaled"] == {"x": [-1], "y": [0.5]}
    # a 2 x 2 box on a plot twice as wide as tall widens to 4 x 2 about its centre
    assert res["fitted"] == {"xlim": [-3, 1], "ylim": [-1, 1]}
    assert res["roundTrip"] is True
    assert res["formula"] == "−uₙ₊₁ + uₙ₊₂ = h·(−1/2 fₙ + 3/2 fₙ₊₁)"
    assert res["slider"] == 437
