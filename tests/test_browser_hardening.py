"""The page under faults: server errors never clear what was typed; bad links open with a message.

Faults are injected with Playwright's page.route (answers of 500 with our JSON error, 500 with
an HTML body, 503 and dropped connections), so the server itself stays honest. The request
watch of test_browser.py (every request must stay on 127.0.0.1) holds for every test here.
"""
from __future__ import annotations

import base64
import json

import pytest

from test_browser import _open, _set_spectrum_text, _settled, _shot, _type_rho_sigma, ctx  # noqa: F401 (fixture)

pytestmark = pytest.mark.browser

JSON_500 = {"status": 500, "content_type": "application/json",
            "body": json.dumps({"error": {"field": "server", "message": "internal error; the input "
                                          "was kept, please report this with the share link"}})}
HTML_500 = {"status": 500, "content_type": "text/html", "body": "<html><body>Internal Server Error</body></html>"}
GATEWAY = {"status": 503, "content_type": "text/plain", "body": "busy"}


def _values(page) -> dict:
    return page.evaluate("""() => Object.fromEntries([...document.querySelectorAll(
        'input[data-field], textarea[data-field], select[data-field]')]
        .filter(e => e.type !== 'file' && e.type !== 'range')
        .map(e => [(e.closest('[class*=scheme-editor--]')?.className.match(/scheme-editor--(\\w)/)?.[1] || '')
                   + ':' + e.dataset.field, e.value]))""")


@pytest.mark.parametrize("fault", [JSON_500, HTML_500, GATEWAY, "abort"], ids=["500 json", "500 html", "503", "dropped"])
def test_a_server_error_never_clears_the_editors(ctx, live_server, fault):  # noqa: F811
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    # type into every kind of editor the page has: rho/sigma, spectrum text, step
    _type_rho_sigma(page, "z^2 - z", "3/2 z - 1/2")
    _set_spectrum_text(page, "-1\n-2+3i\n-40")
    page.fill("[data-field=h]", "0.02")
    _settled(page)
    drawn = page.evaluate("document.querySelector('.region-plot__figure').data.length")
    typed = _values(page)

    def fail(route):
        if fault == "abort":
            route.abort()
        else:
            route.fulfill(**fault)
    page.route("**/api/**", fail)
    page.fill(".scheme-editor--a [data-field=sigma]", "3/2 z - 1/2 + 0")
    page.fill(".spectrum-panel [data-field=text]", "-1\n-2+3i\n-40\n-7")
    page.fill("[data-field=h]", "0.03")
    page.wait_for_selector("[data-notice=server]")
    note = page.inner_text("[data-notice=server]")
    assert "kept" in note, note
    after = _values(page)
    expect = dict(typed)
    expect["a:sigma"] = "3/2 z - 1/2 + 0"
    expect[":text"] = "-1\n-2+3i\n-40\n-7"
    expect[":h"] = "0.03"
    assert after == expect
    # the last good drawing stays on screen (local redraws, such as the new spectrum's points,
    # may add traces; none is removed)
    assert page.evaluate("document.querySelector('.region-plot__figure').data.length") >= drawn
    _shot(page, f"server-fault-{fault if isinstance(fault, str) else fault['status']}.png")
    # the server comes back: the kept input is used at the next change, and the notice goes
    page.unroute("**/api/**")
    page.fill("[data-field=h]", "0.025")
    page.wait_for_selector("[data-notice=server]", state="detached")
    _settled(page)
    assert page.input_value(".scheme-editor--a [data-field=sigma]") == "3/2 z - 1/2 + 0"
    assert page.input_value(".spectrum-panel [data-field=text]") == "-1\n-2+3i\n-40\n-7"


@pytest.mark.parametrize("fragment", ["#s=%%%%", "#s=" + "A" * 5000, "#s=@@not-base64@@",
                                      "#s=" + base64.urlsafe_b64encode(b"not deflated").decode()],
                         ids=["bad escapes", "long garbage", "not base64", "not deflated"])
def test_malformed_link_states_open_with_a_message_and_a_working_page(ctx, live_server, fragment):  # noqa: F811
    context, watch = ctx
    page = _open(context, watch, live_server + "/" + fragment)
    page.wait_for_selector("[data-notice=restore]")
    assert "could not be read" in page.inner_text("[data-notice=restore]")
    # the page still works: the demo is drawn, the step can be typed
    _settled(page)
    assert page.evaluate("document.querySelector('.region-plot__figure').data.length") > 0


def test_a_link_from_a_newer_version_restores_what_it_can(ctx, live_server):  # noqa: F811
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    code = page.evaluate("""async () => {
        const m = await import('/js/share-state.js');
        return m.encodeShared({ v: 99, a: { mode: 'catalogue', name: 'rk4' }, b: 7, compare: 'yes',
                                spectrum: { mode: 'text', text: '-3\\n-1+2i' }, h: 0.1, safety: 5,
                                future_field: { anything: [1, 2] } });
    }""")
    p2 = _open(context, watch, live_server + "/#s=" + code)
    p2.wait_for_selector("[data-notice=restore]")
    note = p2.inner_text("[data-notice=restore]")
    assert "version 99" in note and "safety factor could not be read" in note, note
    assert p2.input_value(".scheme-editor--a select[data-field=name]") == "rk4"
    assert p2.input_value("[data-field=text]") == "-3\n-1+2i"
    assert p2.input_value("[data-field=h]") == "0.1"
    _settled(p2)
    _shot(p2, "link-newer-version.png")


def test_two_hundred_thousand_pasted_eigenvalues(ctx, live_server):  # noqa: F811
    # regression: Math.max(...values) over 2e5 values overflowed the call stack, no limit was
    # asked for and the previous readout stayed. The text is set in one input event, as a paste
    # is (Playwright's fill types it as key events, which takes minutes). Invented data.
    import numpy as np
    from stepfence import get_scheme, step_limit
    n = 200_000
    rng = np.random.default_rng(1)
    lam = -rng.lognormal(0, 2, n) + 1j * rng.normal(0, 3, n)
    text = "\n".join(f"{z.real:.6g}{z.imag:+.6g}i" for z in lam)
    want = step_limit(get_scheme("bdf4"), np.array([complex(t.replace("i", "j")) for t in text.split("\n")])).h_max
    context, watch = ctx
    page = _open(context, watch, live_server + "/")
    _settled(page)
    page.click(".spectrum-panel .tabs__tab[data-mode=text]")
    page.evaluate("t => { const e = document.querySelector('.spectrum-panel [data-field=text]'); "
                  "e.value = t; e.dispatchEvent(new Event('input', { bubbles: true })); }", text)
    page.wait_for_function(f"window.__stepfence.store.get().spectrum?.values?.length === {n} && "
                           "window.__stepfence.store.get().limitA?.h_max > 0", timeout=120_000)
    got = page.evaluate("window.__stepfence.store.get().limitA.h_max")
    assert got == pytest.approx(want, rel=1e-12)
    page.wait_for_function(f"document.querySelector('.readout[data-slot=a] [data-role=h-max]')"
                           f"?.dataset.value === '{got!r}'", timeout=60_000)
    assert not watch.errors
