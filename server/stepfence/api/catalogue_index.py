"""The catalogue listing for menus, with orders derived once in a background process.

Deriving every listed scheme's order exactly takes the core tens of seconds in total (the
implicit Runge-Kutta and predictor-corrector entries dominate). A child process does it, so the
requests of the page do not wait behind it for the interpreter lock; the listing answers at once
with what is known, marks the rest ``order: null`` and says ``complete: false`` until done.
"""
from __future__ import annotations

import logging
import multiprocessing as mp
import threading

from ..schemes.catalogue import LISTED, get_scheme

log = logging.getLogger("stepfence.api")

FIRST = ("bdf4", "rk4", "ab2")   # the demo's schemes, and the reference check, derive first
PARAMETRISED = ["ab<p>", "am<p>", "bdf<k>", "ndf<k>", "nystrom<k>", "ms<k>", "theta:<value>",
                "rkc<s>[@damping]", "rkc2-<s>[@damping]", "<predictor>-<corrector>-pece|pec|pecece"]

_orders: dict[str, int | None] = {}
_entries: list[dict] | None = None
_failed: set[str] = set()
_lock = threading.Lock()
_thread: threading.Thread | None = None
_proc = None


def _entry(name: str) -> dict:
    s = get_scheme(name)
    return {"name": name, "label": s.label, "family": s.family, "kind": s.kind,
            "steps": s.steps, "stages": s.stages, "explicit": bool(s.explicit),
            "evaluations_per_step": s.evaluations_per_step}


def _derive(conn, names):
    """Child process: send the menu entries, then (name, order) for each name (None: failed)."""
    import os
    try:
        os.nice(19)  # the page's own requests come first
    except OSError:
        pass
    from ..analysis.accuracy import accuracy
    conn.send(("entries", [_entry(n) for n in LISTED]))
    for name in names:
        try:
            conn.send((name, int(accuracy(get_scheme(name)).order)))
        except Exception:  # noqa: BLE001 - one broken entry must not hide the others
            conn.send((name, None))
    conn.close()


def _names():
    return list(FIRST) + [n for n in LISTED if n not in FIRST]


def _relay(conn):
    global _entries
    while True:
        try:
            name, order = conn.recv()
        except (EOFError, OSError):
            return
        with _lock:
            if name == "entries":
                _entries = order
                continue
            if order is None:
                _failed.add(name)
            else:
                _orders[name] = order


def start_warmup() -> None:
    """Start deriving catalogue orders in a child process (once per process)."""
    global _thread, _proc
    with _lock:
        if _thread is not None and _thread.is_alive():
            return
        todo = [n for n in _names() if n not in _orders and n not in _failed]
        if not todo:
            return
        ctx = mp.get_context("spawn")
        parent, child = ctx.Pipe(duplex=False)
        _proc = ctx.Process(target=_derive, args=(child, todo), daemon=True,
                            name="stepfence-catalogue")
        _proc.start()
        child.close()
        _thread = threading.Thread(target=_relay, args=(parent,), name="stepfence-catalogue",
                                   daemon=True)
        _thread.start()


def stop_warmup() -> None:
    """Stop the deriving process (orders found so far are kept)."""
    proc = _proc
    if proc is not None and proc.is_alive():
        proc.terminate()
        proc.join(timeout=5)


def is_ready() -> bool:
    with _lock:
        return all(n in _orders or n in _failed for n in LISTED)


def listing() -> dict:
    """Return the families of the catalogue with what is known of each entry so far.

    While the background process has not yet sent the menu entries, they are built here when
    no such process runs, else the listing is empty and ``complete`` false.
    """
    global _entries
    with _lock:
        entries = _entries
        running = _thread is not None and _thread.is_alive()
    if entries is None and not running:
        entries = [_entry(n) for n in LISTED]
        with _lock:
            _entries = entries
    families: dict[str, list] = {}
    pending = 0 if entries is not None else len(LISTED)
    for e in entries or ():
        with _lock:
            order = _orders.get(e["name"])
            known = e["name"] in _orders or e["name"] in _failed
        pending += 0 if known else 1
        families.setdefault(e["family"], []).append({**e, "order": order})
    return {"families": [{"family": f, "schemes": v} for f, v in families.items()],
            "complete": pending == 0, "pending": pending, "parametrised": PARAMETRISED}
