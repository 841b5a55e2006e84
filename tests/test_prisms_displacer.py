"""Walk-off beam displacer: offset = L·tan ρ and the maximum-walk-off cut."""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from prismdesign import material
from prismdesign.prisms import max_walkoff_cut_angle_deg, walkoff_angle_deg, walkoff_displacer


def _tan_rho(n_o, n_e, theta):
    """Walk-off of the extraordinary ray, Born & Wolf, Principles of Optics, 7th ed., §15.3.3:
    tan ρ = (n_o² − n_e²) sin θ cos θ / (n_e² cos²θ + n_o² sin²θ)."""
    s, c = np.sin(theta), np.cos(theta)
    return (n_o ** 2 - n_e ** 2) * s * c / (n_e ** 2 * c ** 2 + n_o ** 2 * s ** 2)


@settings(max_examples=30, deadline=None)
@given(crystal=st.sampled_from(["calcite", "quartz", "yvo4", "alpha_bbo"]),
       cut=st.floats(3.0, 87.0), lam=st.floats(0.5, 1.3), length=st.floats(0.5, 40.0))
def test_offset_equals_length_times_tan_rho(crystal, cut, lam, length):
    n_o, n_e = material(crystal).indices(lam)
    prism = walkoff_displacer(crystal, length, cut, design_wavelength_um=lam)
    result = prism.trace(lam)
    # The e-ray (energy) walks away from the axis (at +x) in negative crystals: x = −L tan ρ.
    expected = -length * _tan_rho(n_o, n_e, np.deg2rad(cut))
    np.testing.assert_allclose(result["e"].exit_position_mm[..., 0], expected, atol=1e-9)
    np.testing.assert_allclose(result["o"].exit_position_mm[..., :2], 0.0, atol=1e-12)
    for beam in ("o", "e"):
        np.testing.assert_allclose(result[beam].exit_direction, [[0, 0, 1]] * 2, atol=1e-14)
    assert prism.parameters["offset_mm"] == pytest.approx(-expected, abs=1e-12)


def test_default_cut_is_maximum_walkoff():
    # dρ/dθ = 0 at tan θ = n_e/n_o (from the Born & Wolf formula above), where
    # tan ρ_max = (n_o² − n_e²)/(2 n_o n_e).
    lam = 0.8
    n_o, n_e = material("calcite").indices(lam)
    prism = walkoff_displacer("calcite", 10.0, design_wavelength_um=lam)
    cut = prism.parameters["cut_angle_deg"]
    assert cut == pytest.approx(np.rad2deg(np.arctan(n_e / n_o)), abs=1e-12)
    assert float(max_walkoff_cut_angle_deg("calcite", lam)) == pytest.approx(cut, abs=1e-12)
    assert np.tan(np.deg2rad(prism.parameters["walkoff_angle_deg"])) == pytest.approx(
        (n_o ** 2 - n_e ** 2) / (2 * n_o * n_e), rel=1e-12)
    grid = np.linspace(1.0, 89.0, 8801)
    assert abs(grid[np.argmax(walkoff_angle_deg("calcite", lam, grid))] - cut) < 0.01
    offset = prism.trace(lam)["e"].exit_position_mm[0, 0]
    for other in (cut - 1.0, cut + 1.0):
        assert abs(walkoff_displacer("calcite", 10.0, other, design_wavelength_um=lam)
                   .trace(lam)["e"].exit_position_mm[0, 0]) < abs(offset)


def test_walkoff_angle_vectorised_and_signed():
    lam = np.array([0.5, 1.0])
    calcite = walkoff_angle_deg("calcite", lam, 45.0)
    quartz = walkoff_angle_deg("quartz", lam, 45.0)
    assert calcite.shape == (2,) and np.all(calcite > 0) and np.all(quartz < 0)
    assert isinstance(walkoff_angle_deg("calcite", 0.6, 30.0), float)


@pytest.mark.parametrize("kwargs, match", [
    (dict(length_mm=-1), "length_mm"),
    (dict(cut_angle_deg=0), "cut_angle_deg"),
    (dict(cut_angle_deg="steep"), "cut_angle_deg"),
    (dict(design_wavelength_um=0), "design_wavelength_um"),
])
def test_bad_input_one_line_errors(kwargs, match):
    with pytest.raises(ValueError, match=match) as info:
        walkoff_displacer(**kwargs)
    assert "\n" not in str(info.value)
