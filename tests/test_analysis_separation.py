"""Beam positions, separation, lateral offset and Gaussian beam radii.

Sources: straight-line propagation after the exit face (geometry); Gaussian beam radius
w(z) = w0 √(1 + (z/z_R)²), z_R = π w0²/(M² λ) (Siegman, *Lasers*, 1986, ch. 17); reduced
distance L/n of a slab in ABCD optics (Siegman, 1986, §15.2, from memory); walk-off angle of
the extraordinary ray, tan ρ = (n_o² − n_e²) sin θ cos θ / (n_e² cos²θ + n_o² sin²θ) for a wave
normal at θ from the optic axis (Born & Wolf, *Principles of Optics*, 7th ed., 1999, §15.3.3).
"""
import numpy as np
import pytest

import prismdesign
from prismdesign.analysis import MissingBeamWarning, gaussian_beam_radius_mm, separation, split
from prismdesign.optics import FixedIndices
from prismdesign.prisms import Boundary, Piece, Prism, wollaston


def _slab(material, axis=None, thickness_mm=10.0, surround=None):
    return Prism(kind="slab", pieces=[Piece(material, axis, label="slab")],
                 boundaries=[Boundary((0, 0, 0), (0, 0, 1)), Boundary((0, 0, thickness_mm), (0, 0, 1))],
                 width_mm=20.0, height_mm=20.0, design_wavelength_um=1.064, surround=surround)


def test_positions_follow_the_exit_ray_geometry():
    # Straight line from the exit point: x = x_exit + (z_plane − z_exit) tan(α), with α the
    # in-plane deviation; for rays in the principal section y stays at its entry value.
    prism = wollaston("calcite", 15.0)
    distance = np.array([0.0, 50.0, 250.0])[:, None]
    wl = np.array([0.5, 0.9, 1.4])
    sep = separation(prism, wl, distance, 1.0, offset_mm=(0.5, 0.8))
    dev = split(prism, wl, 1.0, offset_mm=(0.5, 0.8))
    for label in sep.labels:
        exit_point = sep.exit_position_mm[label]
        dz = prism.exit_z_mm + distance - exit_point[..., 2]
        expected_x = exit_point[..., 0] + dz * np.tan(np.deg2rad(dev.in_plane_deg[label]))
        np.testing.assert_allclose(sep.position_mm[label][..., 0], expected_x, rtol=0, atol=1e-12)
        np.testing.assert_allclose(sep.position_mm[label][..., 1], 0.8, atol=1e-12)
    a, b = sep.main_labels
    np.testing.assert_allclose(sep.separation_mm,
                               np.abs(sep.position_mm[b][..., 0] - sep.position_mm[a][..., 0]),
                               atol=1e-12)
    # Far away the separation grows as D tan(split) (split from the exact analysis).
    growth = (sep.separation_mm[2] - sep.separation_mm[1]) / 200.0
    np.testing.assert_allclose(growth, np.tan(np.deg2rad(dev.in_plane_deg[b]))
                               - np.tan(np.deg2rad(dev.in_plane_deg[a])), rtol=1e-12)


def test_free_space_radius_is_siegman_formula():
    # A "prism" of vacuum in vacuum: the beam simply propagates L + D from its waist.
    vacuum = FixedIndices(1.0, name="vacuum")
    prism = _slab(vacuum, thickness_mm=10.0, surround=vacuum)
    w0, wl, m2 = 0.25, np.array([0.633, 1.064]), np.array([[1.0], [1.7]])
    # One beam only: the pair figures are NaN and a warning says so.
    with pytest.warns(MissingBeamWarning, match="no second beam"):
        sep = separation(prism, wl, 400.0, waist_mm=w0, m_squared=m2)
    assert np.all(np.isnan(sep.separation_mm)) and not np.any(sep.resolved)
    z = 410.0
    z_r = np.pi * w0 ** 2 / (m2 * wl * 1e-3)
    np.testing.assert_allclose(sep.beam_radius_mm["-"], w0 * np.sqrt(1 + (z / z_r) ** 2), rtol=1e-12)
    np.testing.assert_allclose(sep.divergence_deg, np.rad2deg(m2 * wl * 1e-3 / (np.pi * w0)), rtol=1e-12)
    # Textbook checkpoints: √2 w0 at one Rayleigh range, far-field slope θ.
    assert gaussian_beam_radius_mm(w0, 0.8, np.pi * w0 ** 2 / 0.8e-3) == pytest.approx(np.sqrt(2) * w0)
    far = gaussian_beam_radius_mm(w0, 0.8, 1e7)
    assert far / 1e7 == pytest.approx(0.8e-3 / (np.pi * w0), rel=1e-9)


def test_glass_slab_counts_its_reduced_length():
    # Slab of index n and length L: reduced distance L/n (Siegman, 1986, §15.2, from memory).
    vacuum = FixedIndices(1.0, name="vacuum")
    prism = _slab(FixedIndices(1.5, name="glass"), thickness_mm=30.0, surround=vacuum)
    with pytest.warns(MissingBeamWarning):
        sep = separation(prism, 1.064, 100.0, waist_mm=0.1)
    assert sep.reduced_distance_mm["-"] == pytest.approx(30.0 / 1.5 + 100.0, rel=1e-12)


def test_displacer_lateral_offset_is_length_times_walk_off():
    # Calcite plate with the optic axis at 45° to z in the x–z plane: at normal incidence the
    # e ray walks off by ρ (Born & Wolf, 1999, §15.3.3) and leaves parallel to the o ray,
    # displaced by L tan ρ.
    calcite = prismdesign.material("calcite")
    length = 12.0
    axis = (np.sin(np.deg2rad(45.0)), 0.0, np.cos(np.deg2rad(45.0)))
    prism = _slab(calcite, axis, thickness_mm=length)
    wl = np.array([0.5, 1.0, 1.5])
    sep = separation(prism, wl, np.array([0.0, 300.0])[:, None])
    n_o, n_e = calcite.indices(wl)
    th = np.deg2rad(45.0)
    tan_rho = (n_o ** 2 - n_e ** 2) * np.sin(th) * np.cos(th) / (n_e ** 2 * np.cos(th) ** 2
                                                                  + n_o ** 2 * np.sin(th) ** 2)
    # Exit quantities do not depend on the plane: shape of the rays only.
    np.testing.assert_allclose(sep.lateral_offset_mm, length * tan_rho, rtol=1e-12)
    # Parallel beams: the separation on any plane equals the lateral offset.
    np.testing.assert_allclose(sep.separation_mm, np.broadcast_to(sep.lateral_offset_mm, (2, 3)),
                               rtol=1e-12)


def test_clearance_and_resolution():
    # Clearance = (s − (w_a + w_b)) / max(w_a, w_b) by definition; a fat beam close to a
    # Wollaston is unresolved, a thin one far away is resolved.
    prism = wollaston("calcite", 15.0)
    near = separation(prism, 0.6328, 1.0, waist_mm=2.0)
    far = separation(prism, 0.6328, 200.0, waist_mm=0.3)
    for sep in (near, far):
        w_a, w_b = (sep.beam_radius_mm[label] for label in sep.main_labels)
        assert sep.clearance == pytest.approx((sep.separation_mm - w_a - w_b) / max(w_a, w_b))
    assert not near.resolved and far.resolved
    assert not separation(prism, 0.6328, 200.0, waist_mm=0.3, min_clearance=1e3).resolved


def test_batched_equals_loop():
    prism = wollaston("calcite", 15.0)
    wl = np.array([0.55, 1.2])[:, None]
    angles = np.array([-2.0, 0.5, 3.0])
    batched = separation(prism, wl, 80.0, angles, waist_mm=0.4)
    for i in range(2):
        for k in range(3):
            single = separation(prism, float(wl[i, 0]), 80.0, angles[k], waist_mm=0.4)
            assert np.ndim(single.separation_mm) == 0
            assert single.separation_mm == pytest.approx(batched.separation_mm[i, k], abs=1e-12)
            assert single.clearance == pytest.approx(batched.clearance[i, k], abs=1e-12)


def test_bad_input_is_named():
    with pytest.raises(ValueError, match="distance_mm"):
        separation(wollaston(), 0.6, -1.0)
    with pytest.raises(ValueError, match="m_squared"):
        separation(wollaston(), 0.6, 10.0, waist_mm=0.5, m_squared=0.5)
    with pytest.raises(ValueError, match="waist_mm"):
        gaussian_beam_radius_mm(0.0, 0.6, 10.0)
