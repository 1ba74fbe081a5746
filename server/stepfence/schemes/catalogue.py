"""The catalogue: stable names mapped to schemes (see DESIGN.md, "Naming schemes").

Parametrised names: ``ab<p>``, ``am<p>``, ``bdf<k>``, ``ndf<k>``, ``nystrom<k>``, ``ms<k>``,
``theta:<value>``, ``rkc<s>`` / ``rkc<s>@<damping>`` (first order), ``rkc2-<s>`` /
``rkc2-<s>@<damping>`` (second order), and predictor-corrector pairs
``<predictor>-<corrector>-pece`` / ``-pecece`` / ``-pec`` / ``-pecec`` ... (``abm4-pece`` is
AB4 predicting, AM4 correcting).
"""
from __future__ import annotations

import re
from functools import lru_cache

from .. import limits
from ..errors import InputError
from . import multistep as ms
from . import one_step
from .base import Scheme
from .predictor_corrector import predictor_corrector

ALIASES = {
    "euler": "rk:euler", "forward-euler": "rk:euler", "explicit-euler": "rk:euler",
    "backward-euler": "am1", "implicit-euler": "am1", "bdf1": "bdf1",
    "trapezoid": "am2", "crank-nicolson": "am2", "trapezoidal": "am2",
    "leapfrog": "nystrom2", "explicit-midpoint-2step": "nystrom2",
    "implicit-midpoint": "rk:gauss2", "gauss-legendre2": "rk:gauss2",
    "simpson": "milne-simpson",
    "abm4-pece": "ab4-am4-pece", "abm3-pece": "ab3-am3-pece", "abm2-pece": "ab2-am2-pece",
    "abm5-pece": "ab5-am5-pece",
    "radau-iia3": "rk:radau3", "radau-iia5": "rk:radau5",
}

# names listed on the page and in the generated docs table, grouped by family
LISTED = (
    [f"ab{p}" for p in range(1, 9)] + [f"am{p}" for p in range(1, 9)] +
    [f"bdf{k}" for k in range(1, 8)] + [f"ndf{k}" for k in range(1, 6)] +
    ["leapfrog", "nystrom3", "nystrom4", "milne-simpson", "ms4"] +
    ["theta:0.6"] +
    ["euler", "heun", "midpoint", "ralston", "kutta3", "ssprk3", "rk4", "rk38", "bs3", "dopri5",
     "gauss2", "gauss4", "gauss6", "radau3", "radau5", "lobatto3c2", "lobatto3c4", "sdirk2", "sdirk3"] +
    ["rkc5", "rkc10", "rkc2-5", "rkc2-10"] +
    ["abm4-pece", "ab4-am4-pecece", "ab4-am4-pec", "ab3-am3-pece", "ab2-am2-pece"]
)

_PC_RE = re.compile(r"^(?P<pred>[a-z]+\d+)-(?P<corr>[a-z]+\d+)-(?P<mode>p(?:ec)+e?)$")


def _rk(name: str) -> Scheme:
    from . import rk_tableaux
    from .butcher import catalogue_tableau
    spec = rk_tableaux.TABLEAUX.get(name)
    if spec is None:
        raise KeyError(name)
    tab = catalogue_tableau(name)
    return one_step.from_tableau(tab, name=name, label=spec.get("label", name),
                                 family=spec.get("family"), source=spec.get("source", ""))


def _int(text, field="scheme"):
    return int(text)


@lru_cache(maxsize=256)
def get_scheme(name: str) -> Scheme:
    """Return the catalogue scheme called name (case-insensitive, aliases accepted)."""
    if not isinstance(name, str) or not name.strip():
        raise InputError("scheme", "no scheme name given")
    key = name.strip().lower()
    key = ALIASES.get(key, key)
    try:
        return _lookup(key, name)
    except KeyError:
        raise InputError("scheme", f"unknown scheme {name!r}",
                         expected="a catalogue name such as bdf4, rk4, ab3, abm4-pece (see `stepfence list`)") from None


def _lookup(key: str, original: str) -> Scheme:
    if key.startswith("rk:"):
        return _rk(key[3:])
    m = re.fullmatch(r"(ab|am|bdf|ndf|nystrom|ms)(\d+)", key)
    if m:
        fam, n = m.group(1), int(m.group(2))
        fn = {"ab": ms.adams_bashforth, "am": ms.adams_moulton, "bdf": ms.bdf, "ndf": ms.ndf,
              "nystrom": ms.nystrom, "ms": ms.milne_simpson}[fam]
        return fn(n)
    if key == "milne-simpson":
        return ms.milne_simpson(2)
    m = re.fullmatch(r"theta:(.+)", key)
    if m:
        from ..polytext import parse_number
        return ms.theta_method(parse_number(m.group(1), "theta"))
    m = re.fullmatch(r"rkc(1-)?(\d+)(?:@(.+))?", key)
    if m:
        s = int(m.group(2))
        if m.group(3):
            from ..polytext import parse_number
            return one_step.rkc1(s, parse_number(m.group(3), "damping"))
        return one_step.rkc1(s)
    m = re.fullmatch(r"rkc2-(\d+)(?:@(.+))?", key)
    if m:
        s = int(m.group(1))
        if m.group(2):
            from ..polytext import parse_number
            return one_step.rkc2(s, parse_number(m.group(2), "damping"))
        return one_step.rkc2(s)
    m = _PC_RE.fullmatch(key)
    if m:
        pred = get_scheme(m.group("pred"))
        corr = get_scheme(m.group("corr"))
        mode = m.group("mode")
        final = mode.endswith("e")
        corrections = mode.count("ec")
        if corrections > limits.MAX_CORRECTIONS:
            raise InputError("scheme", f"{corrections} corrections; at most {limits.MAX_CORRECTIONS}")
        return predictor_corrector(pred, corr, corrections, "PECE" if final else "PEC",
                                   name=original.strip().lower())
    return _rk(key)


def listed_schemes() -> list[Scheme]:
    """Return the schemes shown in menus and tables, in catalogue order."""
    return [get_scheme(n) for n in LISTED]
