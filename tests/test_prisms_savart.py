"""Savart plate: lateral shear of the two beams at normal incidence."""
import numpy as np
import pytest

from prismdesign import material
from prismdesign.prisms import savart_plate


@pytest.mark.parametrize("crystal", ["quartz", "calcite"])
@pytest.mark.parametrize("lam", [0.45, 0.6328, 1.064])
def test_shear_matches_published_formula(crystal, lam):
    """Shear Δ = √2 · t · |n_e² − n_o²| / (n_e² + n_o²) for 45° axes (M. Françon and S. Mallick,
    Polarization Interferometers, Wiley, 1971; from memory).

    Re-derived here: at normal incidence the wave normal stays z in both plates, so the
    extraordinary ray of each plate walks off by t·tan ρ with (Born & Wolf, Principles of
    Optics, §15.3.3) tan ρ = (n_o² − n_e²) sin θ cos θ / (n_e² cos²θ + n_o² sin²θ), which at
    θ = 45° is (n_o² − n_e²)/(n_o² + n_e²). The first plate displaces beam "eo" along its axis
    azimuth, the second displaces "oe" along the perpendicular azimuth: the two displacements
    are perpendicular and equal, so the shear is √2 · t · |tan ρ|.
    """
    t = 4.0
    n_o, n_e = material(crystal).indices(lam)
    prism = savart_plate(crystal, plate_thickness_mm=t, design_wavelength_um=lam)
    result = prism.trace(lam)
    assert sorted(result.beams) == ["eo", "oe"]
    first, second = result.beams["eo"], result.beams["oe"]
    shear = first.exit_position_mm[0] - second.exit_position_mm[0]
    expected = np.sqrt(2) * t * abs(n_e ** 2 - n_o ** 2) / (n_e ** 2 + n_o ** 2)
    assert np.hypot(shear[0], shear[1]) == pytest.approx(expected, abs=1e-12)
    # Default azimuth 45°: the shear lies along x, the principal section.
    assert abs(shear[1]) < 1e-13
    for beam in (first, second):
        np.testing.assert_allclose(beam.exit_direction, [[0.0, 0.0, 1.0]] * 2, atol=1e-14)


def test_shear_scales_with_thickness_and_vanishes_on_axis():
    # The shear is linear in t (both displacements are t·tan ρ).
    shears = []
    for t in (1.0, 2.0, 3.0):
        r = savart_plate("quartz", plate_thickness_mm=t).trace(0.6328)
        shears.append(np.linalg.norm(r["eo"].exit_position_mm[0] - r["oe"].exit_position_mm[0]))
    assert shears[1] == pytest.approx(2 * shears[0], rel=1e-12)
    assert shears[2] == pytest.approx(3 * shears[0], rel=1e-12)


@pytest.mark.parametrize("kwargs, match", [
    (dict(plate_thickness_mm=0), "plate_thickness_mm"),
    (dict(axis_angle_deg=90), "axis_angle_deg"),
    (dict(azimuth_deg="diagonal"), "azimuth_deg"),
    (dict(material=3.0), "material"),
])
def test_bad_input_one_line_errors(kwargs, match):
    with pytest.raises(ValueError, match=match) as info:
        savart_plate(**kwargs)
    assert "\n" not in str(info.value)
