import numpy as np
import pytest

from tracker.design import geometry


@pytest.mark.parametrize("d", [1.0, 5.0, 12.5])
def test_side_riser_h_equals_d_modulus_is_d_over_6(d):
    # Common practice: a cylinder with H = D cooling on all faces has M = D/6.
    assert geometry.cylinder_modulus(d, d, "side") == pytest.approx(d / 6)


@pytest.mark.parametrize("d", [1.0, 5.0, 12.5])
def test_top_riser_h_equals_d_modulus_is_d_over_5(d):
    # Common practice: the bottom face sits on the casting, so M = D/5.
    assert geometry.cylinder_modulus(d, d, "top") == pytest.approx(d / 5)


def test_sphere_modulus_is_d_over_6():
    # Geometry: V/A of a sphere = (pi D³/6) / (pi D²) = D/6.
    assert geometry.sphere_modulus(9.0) == pytest.approx(1.5)


@pytest.mark.parametrize("volume", [10.0, 500.0, 20000.0])
def test_top_riser_of_same_volume_has_larger_modulus(volume):
    # Common practice: one face less loses heat, so the top riser freezes later.
    d = geometry.diameter_for_volume(volume, 1.0)
    assert geometry.cylinder_modulus(d, d, "top") > geometry.cylinder_modulus(d, d, "side")


@pytest.mark.parametrize("hd", [0.5, 1.0, 1.5, 3.0])
def test_sphere_has_least_area_for_its_volume(hd):
    # Isoperimetric inequality: the sphere has the least area for a volume.
    volume = 1000.0
    ds = np.cbrt(6 * volume / np.pi)
    d = geometry.diameter_for_volume(volume, hd)
    assert geometry.cylinder_volume(d, hd * d) == pytest.approx(volume)
    assert geometry.sphere_area(ds) < geometry.cylinder_cooling_area(d, hd * d, "side")


def test_modulus_per_diameter_matches_full_formula():
    d = np.array([3.0, 7.0, 11.0])
    for hd in (0.5, 1.0, 2.0):
        for pl in ("top", "side"):
            np.testing.assert_allclose(geometry.modulus_per_diameter(hd, pl) * d,
                                       geometry.cylinder_modulus(d, hd * d, pl))


def test_bad_placement_is_refused():
    with pytest.raises(ValueError, match="placement: got 'bottom'; must be top or side"):
        geometry.cylinder_modulus(1, 1, "bottom")
