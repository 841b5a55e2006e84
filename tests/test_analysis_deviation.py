"""Split angle and deviations of a Wollaston prism against closed forms.

Sources:
- Snell's law applied at each plane face (Born & Wolf, *Principles of Optics*, 7th ed., 1999,
  §1.5.1); `_exact_wollaston` explains why each beam sees a fixed index in each wedge.
- Small-angle split 2|n_o − n_e| tan θ (Hecht, *Optics*, 4th ed., 2002, §8.4.3, from memory),
  with its error derived below by series expansion.
"""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import prismdesign
from prismdesign.analysis import split, split_angle_deg, wollaston_small_angle_split_deg
from prismdesign.prisms import wollaston
from closed_forms import wollaston_exit_angle_rad

BAND_UM = np.linspace(0.4, 1.6, 7)   # inside the validity of both calcite and air data


def _indices(wavelength_um):
    n_o, n_e = prismdesign.material("calcite").indices(wavelength_um)
    n_air = prismdesign.material("air").indices(wavelength_um)[0]
    return n_o, n_e, n_air


def _exact_wollaston(wavelength_um, wedge_angle_deg):
    """In-plane exit angles (rad) of the "eo" and "oe" beams at normal incidence.

    First wedge axis x, second y. At normal incidence both beams cross the entrance face
    undeviated. "eo": in wedge 1 the wave normal z is perpendicular to the axis x, so the
    e index is n_e; in wedge 2 (axis y) it is ordinary, n_o. "oe": n_o in wedge 1; in wedge 2
    its wave normal stays in the x–z plane, perpendicular to the axis y, so its e index is
    exactly n_e (and there is no walk-off). Snell's law at the interface (normal at θ from z):
    n₁ sin θ = n₂ sin θ', the beam then travels at θ − θ' from z and meets the exit face
    (normal z): n₂ sin(θ − θ') = n_air sin α.
    """
    n_o, n_e, n_air = _indices(wavelength_um)
    theta = np.deg2rad(wedge_angle_deg)

    # Sign convention of this test: positive toward +x for the "eo" beam.
    return (-wollaston_exit_angle_rad(n_e, n_o, theta, n_air),
            -wollaston_exit_angle_rad(n_o, n_e, theta, n_air))


@pytest.mark.parametrize("wedge_angle_deg", [5.0, 15.0, 30.0])
def test_exact_split_matches_snell_twice(wedge_angle_deg):
    # Snell's law at two faces (Born & Wolf, 1999, §1.5.1); library indices (Ghosh 1999 calcite,
    # Ciddor 1996 air). Measured agreement ~1e-16 rad; required 1e-9 rad.
    prism = wollaston("calcite", wedge_angle_deg)
    result = split(prism, BAND_UM)
    alpha_eo, alpha_oe = _exact_wollaston(BAND_UM, wedge_angle_deg)
    assert result.main_labels == ("oe", "eo")
    np.testing.assert_allclose(np.deg2rad(result.in_plane_deg["eo"]), alpha_eo, rtol=0, atol=1e-9)
    np.testing.assert_allclose(np.deg2rad(result.in_plane_deg["oe"]), alpha_oe, rtol=0, atol=1e-9)
    np.testing.assert_allclose(np.deg2rad(result.split_deg), alpha_eo - alpha_oe, rtol=0, atol=1e-9)
    np.testing.assert_allclose(np.deg2rad(result.asymmetry_deg), 0.5 * (alpha_eo + alpha_oe),
                               rtol=0, atol=1e-9)
    np.testing.assert_allclose(result.out_of_plane_deg["eo"], 0.0, atol=1e-12)


@pytest.mark.parametrize("wedge_angle_deg", [5.0, 15.0, 30.0])
def test_small_angle_split_within_its_next_order_error(wedge_angle_deg):
    # Exact split S of the closed form above, expanded (with sympy, by the test author) in the
    # small quantities Δ = n_o − n_e and η = n_air − 1 at fixed n_o and t = tan θ:
    #   S = 2Δt − 2Δtη + 2Δtη² + Δ³t³ (2n_o² + 6t² + 3) / (6 n_o²) + O(4th order).
    # The first term is the small-angle formula, so the rest, E₃, is its expected error. The
    # neglected 4th-order terms are smaller than E₃ by a further factor of about Δ/n_o (≈ 0.1),
    # so E₃ must predict the measured error to within 1.5 Δ/n_o of itself. Measured over
    # 0.4–1.6 µm: the approximation is high by 6–7e-6 rad (5°), low by 1.8–4.0e-5 rad (15°) and
    # by 4.4–7.6e-4 rad (30°); E₃ predicts these within 1.3 %, 10 % and 7.5 %.
    prism = wollaston("calcite", wedge_angle_deg)
    n_o, n_e, n_air = _indices(BAND_UM)
    exact = np.deg2rad(split(prism, BAND_UM).split_deg)
    approx = np.deg2rad(wollaston_small_angle_split_deg(n_o, n_e, wedge_angle_deg))
    delta, eta, t = n_o - n_e, n_air - 1.0, np.tan(np.deg2rad(wedge_angle_deg))
    expected_error = (-2 * delta * t * eta + 2 * delta * t * eta ** 2
                      + delta ** 3 * t ** 3 * (2 * n_o ** 2 + 6 * t ** 2 + 3) / (6 * n_o ** 2))
    residual = np.abs((exact - approx) - expected_error)
    assert np.all(residual <= 1.5 * delta / n_o * np.abs(expected_error))


def test_split_angle_is_exact_for_tiny_and_large_angles():
    # Angle between unit vectors at a known angle: exact by construction (trigonometry).
    angles = np.array([1e-12, 1e-6, 0.3, 1.0, 3.0])
    a = np.array([0.0, 0.0, 1.0])
    b = np.stack([np.sin(angles), np.zeros_like(angles), np.cos(angles)], axis=-1)
    np.testing.assert_allclose(split_angle_deg(a, b), np.rad2deg(angles), rtol=1e-12)
    assert isinstance(split_angle_deg(a, b[0]), float)


def test_symmetric_wollaston_is_centred_and_biased_one_is_not():
    # Mirror symmetry of the symmetric prism: asymmetry is only the second-order term
    # −(Δ²/4)(1/n_o + 1/n_e) tan³θ of the series above (same derivation), ≈ −1.8e-4 rad at 15°.
    n_o, n_e, _ = _indices(0.6328)
    t = np.tan(np.deg2rad(15.0))
    expected = -(n_o - n_e) ** 2 / 4 * (1 / n_o + 1 / n_e) * t ** 3
    result = split(wollaston("calcite", 15.0), 0.6328)
    assert abs(np.deg2rad(result.asymmetry_deg) - expected) < 0.2 * abs(expected)
    biased = split(wollaston("calcite", 15.0, exit_wedge_angle_deg=20.0), 0.6328)
    assert abs(biased.asymmetry_deg) > 10 * abs(result.asymmetry_deg)


def test_asymmetry_is_relative_to_the_input_direction():
    # At small oblique incidence both beams turn with the input; the bisector follows it, so
    # the asymmetry stays small while the bisector's angle from z does not.
    result = split(wollaston("calcite", 15.0), 0.6328, np.array([-3.0, 0.0, 3.0]))
    assert np.all(np.abs(result.bisector_in_plane_deg[[0, 2]]) > 2.0)
    assert np.all(np.abs(result.asymmetry_deg) < 0.1)


@settings(max_examples=10, deadline=None)
@given(st.lists(st.floats(0.45, 1.5), min_size=2, max_size=3),
       st.lists(st.floats(-4.0, 4.0), min_size=2, max_size=3),
       st.floats(-2.0, 2.0))
def test_batched_equals_loop_of_scalar_calls(wavelengths, angles, tilt):
    # Broadcasting contract (STYLE.md): one batched call equals a loop of scalar calls.
    prism = wollaston("calcite", 20.0)
    wl = np.array(wavelengths)[:, None]
    a = np.array(angles)[None, :]
    batched = split(prism, wl, a, tilt)
    for i, lam in enumerate(wavelengths):
        for j, ang in enumerate(angles):
            single = split(prism, lam, ang, tilt)
            assert np.ndim(single.split_deg) == 0
            assert single.split_deg == pytest.approx(batched.split_deg[i, j], abs=1e-12)
            assert single.asymmetry_deg == pytest.approx(batched.asymmetry_deg[i, j], abs=1e-12)
            for label in single.labels:
                # A weak branch below the lost-power floor is NaN in both (equal_nan).
                np.testing.assert_allclose(single.out_of_plane_deg[label],
                                           batched.out_of_plane_deg[label][i, j], rtol=0,
                                           atol=1e-12)
                assert single.lost[label] == batched.lost[label][i, j]


def test_bad_input_is_named():
    with pytest.raises(ValueError, match="in_plane_deg"):
        split(wollaston(), 0.6, 95.0)
    with pytest.raises(ValueError, match="wedge_angle_deg"):
        wollaston_small_angle_split_deg(1.6, 1.5, 90.0)
