"""Order stars: the star of 2(p+1) sectors at the origin, and rasters against independent routes.

References named beside the checks:
- Wanner, Hairer & Norsett, Order stars and stability theorems, BIT 18 (1978) 475-489, and
  Hairer & Wanner, Solving ODEs II, 2nd ed., Springer 1996, section IV.4: with
  e^z - R(z) = C z^{p+1} + O(z^{p+2}), C != 0, the order star A = {|R(z)/e^z| > 1} has near 0
  p+1 sectors, alternating with p+1 sectors of its complement, each of angle pi/(p+1)
  (statement from memory; its lemma number is not checked). The same holds for the principal
  sheet of a multistep method (Hairer & Wanner II, section V.4), checked here on the same
  footing.
- An A-stable scheme's order star does not meet the imaginary axis (Hairer & Wanner II,
  section IV.4, from memory): checked for BDF2 against its closed-form principal root.
"""
from __future__ import annotations

import numpy as np
import pytest

from stepfence.analysis.dispersion import principal_error_constant
from stepfence.analysis.orderstar import order_star_raster, sectors_at_origin
from stepfence.errors import InputError
from stepfence.schemes.catalogue import get_scheme
from stepfence.specs import scheme_from_spec

ONE_STEP = {
    "euler": "1 + z",
    "heun": "1 + z + z^2/2",
    "rk4": "1 + z + z^2/2 + z^3/6 + z^4/24",
    "gauss2": "(1 + z/2)/(1 - z/2)",
    "radau3": "(1 + z/3)/(1 - 2 z/3 + z^2/6)",
}


def scheme(name):
    if name in ONE_STEP:
        return scheme_from_spec({"stability": ONE_STEP[name]})
    return get_scheme(name)


@pytest.mark.parametrize("name", list(ONE_STEP) + ["ab2", "ab3", "am3", "bdf2", "bdf3",
                                                   "leapfrog", "abm4-pece", "milne-simpson"])
def test_sector_count_is_twice_order_plus_one(name):
    s = scheme(name)
    p, c = principal_error_constant(s)
    # radius where the leading term is ~1e-7: far above rounding, far below the next term
    r = min(0.3, (1e-7 / abs(float(c))) ** (1.0 / (p + 1)))
    res = sectors_at_origin(s, r)
    assert res.reliable
    assert res.count == 2 * (p + 1), (name, res.count, p)


@pytest.mark.parametrize("name", ["rk4", "bdf2", "ab3", "abm4-pece"])
def test_sector_boundaries_follow_the_error_constant(name):
    # log|zeta e^{-z}| ~ Re(C' z^{p+1}) vanishes where (p+1) theta + arg C' = pi/2 mod pi
    s = scheme(name)
    p, c = principal_error_constant(s)
    C = complex(float(c))
    r = min(0.3, (1e-9 / abs(C)) ** (1.0 / (p + 1)))
    res = sectors_at_origin(s, r, n=4096)
    expected = (np.pi / 2 - np.angle(C) + np.pi * np.arange(2 * (p + 1))) / (p + 1)
    expected = np.sort(expected % (2 * np.pi))
    gap = np.abs(np.angle(np.exp(1j * (np.sort(res.crossings) - expected))))
    # the sampling (2 pi / 4096) and the O(r) next term move them a little
    assert np.max(gap) < 0.05, (name, gap)


def test_too_small_a_circle_is_not_reliable():
    # RK4 at radius 1e-4: |C'| r^5 ~ 1e-22, far under rounding
    res = sectors_at_origin(scheme("rk4"), 1e-4)
    assert not res.reliable


def test_bdf2_principal_raster_against_closed_form():
    # closed form of the principal root (quadratic formula, see test_dispersion); the cut
    # z < -1/2 carries a conjugate pair, whose modulus is the same on both sides
    s = get_scheme("bdf2")
    star = order_star_raster(s, (-4, 4), (-3, 3), 81, 61)
    Z = star.x[None, :] + 1j * star.y[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        zeta = (2 + np.sqrt(1 + 2 * Z + 0j)) / (3 - 2 * Z)
        ref = np.log(np.abs(zeta)) - Z.real
    clear = (np.abs(ref) > 1e-9) & ~star.undefined   # leave out the boundary itself
    # the one pixel on the branch point z = -1/2 (a double root) is reported undetermined
    assert np.array_equal(Z[star.undefined], [-0.5 + 0j])
    assert np.array_equal(star.inside[clear], (ref > 0)[clear])


def test_a_stable_star_avoids_the_imaginary_axis():
    s = get_scheme("bdf2")
    star = order_star_raster(s, (-2, 2), (-5, 5), 41, 101)
    col = np.argmin(np.abs(star.x))
    assert star.x[col] == 0.0
    assert not star.inside[:, col].any()
    # AB2 is not A-stable: |zeta(iy)| > 1 near 0, so its star reaches the axis
    ab2 = order_star_raster(get_scheme("ab2"), (-2, 2), (-1, 1), 41, 21)
    assert ab2.inside[:, np.argmin(np.abs(ab2.x))].any()


@pytest.mark.parametrize("name", ["ab3", "bdf3", "milne-simpson"])
def test_all_roots_variant_contains_the_principal_one(name):
    # max_j |zeta_j| >= |zeta_principal| wherever the principal root is determined
    s = get_scheme(name)
    a = order_star_raster(s, (-3, 3), (-3, 3), 41, 41)
    b = order_star_raster(s, (-3, 3), (-3, 3), 41, 41, variant="all-roots")
    ok = ~a.undefined
    assert np.all(b.inside[ok] | ~a.inside[ok])
    assert np.all(b.log_ratio[ok] >= a.log_ratio[ok] - 1e-12)


def test_one_step_variants_agree():
    s = scheme("radau3")
    a = order_star_raster(s, (-5, 5), (-5, 5), 51, 51)
    b = order_star_raster(s, (-5, 5), (-5, 5), 51, 51, variant="all-roots")
    assert np.allclose(a.log_ratio, b.log_ratio, atol=1e-12)


def test_refusals_name_the_field():
    s = get_scheme("ab2")
    for kwargs, field in [({"xlim": (1, 1)}, "xlim"), ({"nx": 10_000}, "nx"),
                          ({"variant": "every"}, "variant")]:
        args = {"xlim": (-1, 1), "ylim": (-1, 1), "nx": 11, "ny": 11, **kwargs}
        with pytest.raises(InputError) as e:
            order_star_raster(s, **args)
        assert e.value.field == field
    with pytest.raises(InputError) as e:
        sectors_at_origin(s, -0.1)
    assert e.value.field == "radius"
