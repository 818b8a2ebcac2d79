import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from tracker.design import geometry, rules
from tracker.design.alloys import ALLOYS, get_alloy
from tracker.design.sizing import size_riser, size_risers

CAINE_ALLOYS = ["steel", "aluminum", "gray_iron", "cast_iron_brass", "aluminum_bronze"]


def _independent_caine_diameter(vc, ac, a, b, c, placement, hd, f):
    """Caine's curve solved afresh with scipy's brentq, from the full
    cylinder formulas (not the library's M/D shortcut)."""
    mc = vc / ac

    def g(d):
        x = f * geometry.cylinder_modulus(d, hd * d, placement) / mc
        y = geometry.cylinder_volume(d, hd * d) / vc
        return x - (a / (y - b) + c)

    d_b = (4 * b * vc / (np.pi * hd)) ** (1 / 3)
    return brentq(g, d_b * (1 + 1e-9), 100 * d_b + 100, xtol=1e-14)


@pytest.mark.parametrize("alloy", CAINE_ALLOYS)
@pytest.mark.parametrize("placement", ["top", "side"])
def test_caine_sizing_matches_independent_brentq(alloy, placement):
    # Caine's curve (Caine, 1949), constants from DOMAIN.md's table; the
    # reference root comes from scipy.optimize.brentq.
    cn = get_alloy(alloy).caine
    for vc, ac, hd, f in [(2000, 1100, 1.0, 1.0), (150, 160, 1.5, 1.3), (40000, 9000, 0.8, 1.0)]:
        ref = _independent_caine_diameter(vc, ac, cn.a, cn.b, cn.c, placement, hd, f)
        r = size_riser(vc, ac, alloy, placement, hd, f)
        assert r.caine_min_diameter_mm == pytest.approx(ref * 10, rel=1e-9)
        vec = size_risers(np.array([vc]), np.array([ac]), alloy, placement, hd, f)
        assert vec["caine_min_diameter_mm"][0] == pytest.approx(ref * 10, rel=1e-9)
        # The sized point lies on the curve within 0.1 %.
        d = ref
        x = f * geometry.cylinder_modulus(d, hd * d, placement) / (vc / ac)
        y = geometry.cylinder_volume(d, hd * d) / vc
        assert x == pytest.approx(cn.x_curve(y), rel=1e-3)


def test_diameter_is_largest_of_the_three_and_names_governing_rule():
    r = size_riser(2000, 1100, "steel", "side")
    mins = {"caine": r.caine_min_diameter_mm, "modulus": r.modulus_min_diameter_mm,
            "feed_volume": r.feed_min_diameter_mm}
    assert r.diameter_mm == max(mins.values())
    assert r.governing_rule == max(mins, key=mins.get)
    # The sized riser passes every rule.
    assert rules.modulus_ok(r.riser_modulus_cm, r.section_modulus_cm, 1.2)
    assert r.caine_margin >= -1e-9
    assert rules.feed_margin(r.riser_volume_cm3, 2000, r.shrinkage, r.efficiency) >= -1e-9


def test_large_thin_section_is_feed_governed():
    # A thin, large section: low modulus, much shrinkage metal; feed governs
    # once the sleeve lifts the modulus (and Caine) demand.
    r = size_riser(20000, 12000, "aluminum", "top", 1.0, 1.5)
    assert r.governing_rule == "feed_volume"


def test_ductile_iron_sized_without_caine():
    r = size_riser(2000, 1100, "ductile_iron", "side")
    assert r.caine_min_diameter_mm is None and not r.caine_applied
    assert r.governing_rule in ("modulus", "feed_volume")
    v = size_risers(np.array([2000.0]), np.array([1100.0]), "ductile_iron")
    assert np.isnan(v["caine_min_diameter_mm"][0])


lengths = st.floats(0.5, 50.0)


@settings(max_examples=60, deadline=None)
@given(a=lengths, b=lengths, c=lengths, k=st.floats(0.2, 8.0),
       alloy=st.sampled_from(sorted(ALLOYS)), placement=st.sampled_from(["top", "side"]),
       hd=st.floats(0.5, 3.0))
def test_scaling_every_length_scales_the_diameter(a, b, c, k, alloy, placement, hd):
    # Similarity (dimensional analysis): X and Y are dimensionless, so scaling
    # lengths by k scales every minimum diameter by k.
    v, area = a * b * c, 2 * (a * b + b * c + a * c)
    r1 = size_riser(v, area, alloy, placement, hd)
    r2 = size_riser(v * k**3, area * k**2, alloy, placement, hd)
    assert r2.diameter_mm == pytest.approx(k * r1.diameter_mm, rel=1e-7)


@settings(max_examples=60, deadline=None)
@given(a=lengths, b=lengths, c=lengths, f1=st.floats(1.0, 2.0), f2=st.floats(1.0, 2.0),
       alloy=st.sampled_from(sorted(ALLOYS)), placement=st.sampled_from(["top", "side"]))
def test_larger_sleeve_factor_never_gives_larger_riser(a, b, c, f1, f2, alloy, placement):
    v, area = a * b * c, 2 * (a * b + b * c + a * c)
    lo, hi = sorted((f1, f2))
    assert (size_riser(v, area, alloy, placement, sleeve_factor=hi).diameter_mm
            <= size_riser(v, area, alloy, placement, sleeve_factor=lo).diameter_mm * (1 + 1e-12))


@settings(max_examples=60, deadline=None)
@given(d1=st.floats(1.0, 60.0), d2=st.floats(1.0, 60.0), alloy=st.sampled_from(CAINE_ALLOYS),
       placement=st.sampled_from(["top", "side"]))
def test_margins_grow_with_diameter(d1, d2, alloy, placement):
    lo, hi = sorted((d1, d2))
    al = get_alloy(alloy)
    vc, ac = 2000.0, 1100.0
    mc = vc / ac

    def margins(d):
        vr = geometry.cylinder_volume(d, d)
        mr = geometry.cylinder_modulus(d, d, placement)
        return (mr / mc, rules.caine_margin(mr / mc, vr / vc, al.caine),
                rules.feed_margin(vr, vc, al.shrinkage, al.bare_efficiency))

    for m_lo, m_hi in zip(margins(lo), margins(hi), strict=False):
        assert m_hi >= m_lo


def test_vectorised_equals_scalar_on_1000_random_cases():
    rng = np.random.default_rng(20261201)
    n = 1000
    vc = rng.uniform(10, 50000, n)
    mc = rng.uniform(0.2, 0.9, n) * np.cbrt(vc) / 4.84 * 0.9  # below a sphere's modulus
    ac = vc / mc
    hd = rng.uniform(0.5, 3.0, n)
    f = rng.uniform(1.0, 1.6, n)
    pl = rng.choice(["top", "side"], n)
    for alloy in ("steel", "aluminum", "ductile_iron"):
        vec = size_risers(vc, ac, alloy, pl, hd, f)
        scal = np.array([size_riser(vc[i], ac[i], alloy, pl[i], hd[i], f[i]).diameter_mm
                         for i in range(n)])
        np.testing.assert_allclose(vec["diameter_mm"], scal, rtol=1e-9)
        gov = [size_riser(vc[i], ac[i], alloy, pl[i], hd[i], f[i]).governing_rule for i in range(50)]
        assert list(vec["governing_rule"][:50]) == gov


@pytest.mark.parametrize("kwargs,message", [
    # the import's bounds on a section (tracker/limits.py; issue 27)
    (dict(volume_cm3=0, area_cm2=10), "volume_cm3: got 0.0; volume_cm3 must be a number of at least 0.001 and "
                                      "at most 100,000,000 cm³"),
    (dict(volume_cm3=1e-300, area_cm2=1e-300), "volume_cm3: got 1e-300; volume_cm3 must be a number of at least "
                                               "0.001"),
    (dict(volume_cm3=-5, area_cm2=10), "volume_cm3: got -5.0"),
    (dict(volume_cm3=100, area_cm2=150, h_over_d=0.4), "h_over_d: got 0.4; H/D must lie between 0.5 and 3.0"),
    (dict(volume_cm3=100, area_cm2=150, h_over_d=3.5), "h_over_d: got 3.5"),
    (dict(volume_cm3=100, area_cm2=150, efficiency=0.03), "efficiency: got 0.03; must be above the metal to feed"),
])
def test_bad_input_is_refused(kwargs, message):
    with pytest.raises(ValueError) as exc:
        size_riser(alloy="steel", **kwargs)
    assert message in str(exc.value)


def test_unknown_alloy():
    with pytest.raises(ValueError, match="alloy: got 'unobtainium'; known alloys are aluminum"):
        size_riser(100, 150, "unobtainium")
