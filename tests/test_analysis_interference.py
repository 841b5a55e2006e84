"""Interference quantities (OPD, shear, fringe-localisation plane) against closed forms.

Indices come from the package's material data (tested elsewhere); the closed forms below are
derived or quoted in each test and computed independently of the package's tracing code.
"""
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from prismdesign.analysis.interference import (fringe_localisation, main_beams,
                                               optical_path_difference, shear_mm,
                                               small_angle_estimates)
from prismdesign.analysis import MissingBeamWarning
from prismdesign.prisms import wollaston
from prismdesign.prisms.nomarski import nomarski
from prismdesign.prisms.savart import savart_plate


def _indices(prism, wavelength_um):
    n_o, n_e = prism.pieces[0].material.indices(wavelength_um)
    return float(n_o), float(n_e), float(prism.surround.indices(wavelength_um)[0])


def test_wollaston_localisation_tilt_tends_to_paraxial():
    r"""Exact localisation tilt → tan ε = tan θ·(n_o + n_e)/(2 n_o n_e) as θ → 0.

    Paraxial derivation (symmetric Wollaston, normal incidence, indices relative to the
    surrounding medium; the formula is attributed to Françon & Mallick, *Polarization
    Interferometers*, 1971 — from memory). An input ray at x crosses the first wedge along z
    and meets the interface z_i(x) = z_m − x tan θ. There beam a (index n₁ → n₂) turns by
    γ_a ≈ (n₁ − n₂) tan θ / n₂ (Snell, small deviation), i.e. γ_a ≈ D/n_o for a = "eo"
    (n_e → n_o) and γ_b ≈ −D/n_e for b = "oe", with D = (n_e − n_o) tan θ. After the second
    wedge (thickness t₂ = z_e − z_i) the rays leave the exit face z_e at x + γ t₂ with angles
    n₂γ = ±D. Continued straight back, x + γ_a t₂ + D (z − z_e) = x + γ_b t₂ − D (z − z_e) gives
    z − z_e = −t₂ (n_o + n_e)/(2 n_o n_e). Since dt₂/dx = tan θ, the crossing points lie on a
    line with dz/dx = −tan θ (n_o + n_e)/(2 n_o n_e). The neglected terms are O(θ²) relative,
    so the relative difference must fall fourfold each time θ is halved.
    """
    thetas = np.array([8.0, 4.0, 2.0, 1.0])
    lam = np.array([0.5, 0.6328, 1.06])
    rel_tilt, rel_depth = [], []
    for theta in thetas:
        prism = wollaston("calcite", theta)
        loc = fringe_localisation(prism, lam)
        n_o, n_e, n_s = (np.array(v) for v in zip(*[_indices(prism, wl) for wl in lam]))
        n_o, n_e = n_o / n_s, n_e / n_s
        paraxial = -np.tan(np.deg2rad(theta)) * (n_o + n_e) / (2 * n_o * n_e)
        exact = np.tan(np.deg2rad(loc.tilt_deg))
        rel_tilt.append(exact / paraxial - 1.0)
        # Depth below the exit face at x = 0: t₂(0)·(n_o + n_e)/(2 n_o n_e).
        z_exit = prism.exit_z_mm
        t2 = z_exit - prism.boundaries[1].point_mm[2]
        rel_depth.append((z_exit - loc.z_at_axis_mm) / (t2 * (n_o + n_e) / (2 * n_o * n_e)) - 1.0)
        np.testing.assert_allclose(loc.small_angle["tilt_deg"], np.rad2deg(np.arctan(paraxial)),
                                   rtol=1e-12)
        assert np.all(loc.gap_mm < 1e-9)                 # in-plane rays really cross
        assert np.all((loc.z_at_axis_mm > 0) & (loc.z_at_axis_mm < z_exit))   # inside the prism
    rel_tilt, rel_depth = np.abs(rel_tilt), np.abs(rel_depth)
    for rel in (rel_tilt, rel_depth):
        ratios = rel[:-1] / rel[1:]
        assert np.all((ratios > 3.5) & (ratios < 4.5)), ratios
    assert np.all(rel_tilt[-1] < 1e-6)


def _wollaston_opd_exact(prism, wavelength_um, x):
    """OPD eo − oe of the two exit waves at the midpoint of their landing points on the exit
    face, from Snell's law (Born & Wolf 1999, §1.5.2). In-plane rays at normal incidence: the
    first wedge (axis x ⟂ z) has indices n_e (eo) and n_o (oe); in the second wedge (axis y ⟂
    every in-plane wave normal) they swap, with no walk-off. At the interface (normal
    (sin θ, 0, cos θ)) the tangential wave vector is kept, so in the second wedge
    k_x = sin θ (√(n₂² − n₁² sin²θ) − n₁ cos θ), k_z = √(n₂² − k_x²), and k_x is kept again at
    the exit face. Each ray's optical path is L = n₁ t₁ + n₂² t₂ / k_z (t₁ = z_i(x),
    t₂ = z_e − z_i), it lands at x + t₂ k_x/k_z, and each exit plane wave carried to the
    midpoint adds k_x times half the separation: OPD = L_a − L_b + (k_xa + k_xb)(x_b − x_a)/2.
    """
    n_o, n_e, _ = _indices(prism, wavelength_um)
    normal = prism.boundaries[1].normal
    theta = np.arccos(normal[2])
    z_i = prism.boundaries[1].point_mm[2] - x * normal[0] / normal[2]
    t2 = prism.exit_z_mm - z_i

    def second_wedge(n1, n2):
        kx = np.sin(theta) * (np.sqrt(n2 ** 2 - (n1 * np.sin(theta)) ** 2) - n1 * np.cos(theta))
        return kx, np.sqrt(n2 ** 2 - kx ** 2)

    kxa, kza = second_wedge(n_e, n_o)
    kxb, kzb = second_wedge(n_o, n_e)
    path_a = n_e * z_i + n_o ** 2 * t2 / kza
    path_b = n_o * z_i + n_e ** 2 * t2 / kzb
    xa, xb = x + t2 * kxa / kza, x + t2 * kxb / kzb
    return path_a - path_b + 0.5 * (kxa + kxb) * (xb - xa)


@pytest.mark.parametrize("theta", [5.0, 20.0])
def test_wollaston_opd_across_aperture(theta):
    # Exact: Snell's law closed form above, to 1e-12 mm. Small-angle (common practice, no
    # source): OPD(x) ≈ 2 (n_o − n_e) tan θ · x, linear and zero where the wedges are equally
    # thick (x = 0 for a symmetric prism); its error is second order in the ray tilts.
    prism = wollaston("calcite", theta)
    lam = 0.6328
    x = np.linspace(-4.0, 4.0, 9)
    offsets = np.stack([x, np.zeros_like(x)], axis=-1)
    opd = optical_path_difference(prism, lam, offsets, beams=("eo", "oe"))
    np.testing.assert_allclose(opd, _wollaston_opd_exact(prism, lam, x), rtol=0, atol=1e-12)
    n_o, n_e, _ = _indices(prism, lam)
    slope = np.diff(opd) / np.diff(x)
    np.testing.assert_allclose(slope, slope[0], rtol=1e-9)          # exactly linear
    small_angle = 2 * (n_o - n_e) * np.tan(np.deg2rad(theta))
    assert slope[0] == pytest.approx(small_angle, rel=np.tan(np.deg2rad(theta)) ** 2)
    x_zero = -opd[4] / slope[0]
    assert abs(x_zero) < 0.01 * prism.width_mm
    assert main_beams(prism) == ("eo", "oe")


def test_wollaston_coherent_opd_at_crossing_is_linear():
    # Plane faces make every quantity affine in the entry point (exact invariant), so the OPD
    # at the crossing points is linear in x and vanishes on the symmetry axis to second order.
    prism = wollaston("calcite", 10.0)
    loc = fringe_localisation(prism, 0.6328, samples=7)
    second = np.diff(loc.opd_mm, 2)
    assert np.all(np.abs(second) < 1e-12)
    assert abs(loc.opd_mm[3]) < 1e-3 * np.ptp(loc.opd_mm)


@pytest.mark.parametrize("material", ["quartz", "calcite"])
def test_savart_shear_francon_mallick(material):
    # Françon & Mallick, Polarization Interferometers (1971) — from memory: a Savart plate of
    # two plates of thickness t, axes at 45°, shears the beams by √2 t |n_e² − n_o²|/(n_e² + n_o²)
    # at normal incidence (exact there: walk-off t·tan ρ in each plate, crossed). The shear is
    # along x for the default azimuth of 45°.
    t = 3.0
    prism = savart_plate(material, t)
    lam = np.array([0.45, 0.6328, 1.0])
    s = shear_mm(prism, lam, beams=("eo", "oe"))
    n = np.array([_indices(prism, wl) for wl in lam])
    n_o, n_e = n[:, 0] / n[:, 2], n[:, 1] / n[:, 2]
    formula = np.sqrt(2.0) * t * np.abs(n_e ** 2 - n_o ** 2) / (n_e ** 2 + n_o ** 2)
    np.testing.assert_allclose(np.hypot(s[..., 0], s[..., 1]), formula, rtol=1e-12)
    assert np.all(np.abs(s[..., 1]) < 1e-12 * formula)
    np.testing.assert_allclose(small_angle_estimates(prism, lam)["shear_mm"], formula, rtol=1e-14)
    loc = fringe_localisation(prism, lam)
    assert np.all(loc.at_infinity) and np.all(np.isinf(loc.z_at_axis_mm))
    np.testing.assert_allclose(loc.split_deg, 0.0, atol=1e-6)


def _slab_q(kx, n_o, n_e, axis, mode):
    """Normal component of k (units of k0) in a crystal slab for tangential k = (kx, 0, 0):
    |k|² = n_o² (o) or kᵀεk = n_o² n_e² with ε = n_o² I + (n_e² − n_o²) ĉĉᵀ (e), forward root
    (Born & Wolf 1999, §15.3; Yariv & Yeh, Optical Waves in Crystals, 1984, §4.2)."""
    if mode == "o":
        return np.sqrt(n_o ** 2 - kx ** 2)
    d = n_e ** 2 - n_o ** 2
    coeffs = [n_o ** 2 + d * axis[2] ** 2, 2 * d * axis[0] * axis[2] * kx,
              n_o ** 2 * kx ** 2 + d * (axis[0] * kx) ** 2 - n_o ** 2 * n_e ** 2]
    return max(np.roots(coeffs).real)


def test_savart_opd_at_oblique_incidence():
    # Exact: a plane wave crossing parallel slabs gains phase Σ q_j t_j (Yariv & Yeh 1984, §4),
    # so at a common point OPD = t (q_e1 + q_o2 − q_o1 − q_e2) for "eo" − "oe". First order
    # (Françon & Mallick 1971, from memory): |OPD| ≈ shear · n_s sin i for incidence in the
    # plane of the shear.
    t, lam = 5.0, 0.6328
    prism = savart_plate("quartz", t)
    n_o, n_e, n_s = _indices(prism, lam)
    c1, c2 = prism.pieces[0].optic_axis, prism.pieces[1].optic_axis
    angles = np.array([0.5, 2.0, 8.0])
    loc_opd = np.array([fringe_localisation(prism, lam, in_plane_deg=a, beams=("eo", "oe")).opd_mm
                        for a in angles])
    shear0 = np.sqrt(2.0) * t * abs(n_e ** 2 - n_o ** 2) / (n_e ** 2 + n_o ** 2)
    for a, opd in zip(angles, loc_opd):
        kx = n_s * np.sin(np.deg2rad(a))
        exact = t * (_slab_q(kx, n_o, n_e, c1, "e") - _slab_q(kx, n_o, n_e, c2, "e"))
        np.testing.assert_allclose(opd, exact, rtol=1e-10, atol=1e-13)
        assert abs(abs(exact) / (n_s * np.sin(np.deg2rad(a)) * shear0) - 1) < 1e-3


def test_nomarski_localisation_outside_at_design_distance():
    # The builder solves for the axis tilt that puts the plane at the requested distance
    # (with its own tracing); this module's independent crossing-point fit must agree
    # (internal consistency, no external source). A zero tilt is a Wollaston: plane inside.
    prism = nomarski("quartz", 5.0, localisation_distance_mm=4.0)
    loc = fringe_localisation(prism)
    assert loc.distance_from_exit_mm == pytest.approx(4.0, abs=1e-8)
    assert not loc.at_infinity
    flat = fringe_localisation(nomarski("quartz", 5.0, axis_tilt_deg=0.0))
    assert flat.distance_from_exit_mm < 0


def test_batch_equals_loop():
    # Vectorisation: wavelengths and entry points in one call equal single calls.
    prism = wollaston("calcite", 12.0)
    lam = np.array([0.5, 0.7, 1.2])
    offsets = np.array([[-3.0, 0.5], [0.0, 0.0], [2.0, -1.0]])
    batch = optical_path_difference(prism, lam[:, None], offsets, in_plane_deg=1.5,
                                    out_of_plane_deg=-0.5)
    shear = shear_mm(prism, lam[:, None], offsets, plane_z_mm=30.0, in_plane_deg=1.5)
    loc = fringe_localisation(prism, lam, in_plane_deg=2.0)
    for i, wl in enumerate(lam):
        single_loc = fringe_localisation(prism, wl, in_plane_deg=2.0)
        assert loc.tilt_deg[i] == pytest.approx(float(single_loc.tilt_deg), rel=1e-12)
        assert loc.z_at_axis_mm[i] == pytest.approx(float(single_loc.z_at_axis_mm), rel=1e-12)
        for j, off in enumerate(offsets):
            assert batch[i, j] == pytest.approx(float(optical_path_difference(
                prism, wl, off, in_plane_deg=1.5, out_of_plane_deg=-0.5)), rel=1e-12, abs=1e-15)
            np.testing.assert_allclose(shear[i, j], shear_mm(prism, wl, off, plane_z_mm=30.0,
                                                             in_plane_deg=1.5), rtol=1e-12, atol=1e-15)


@settings(max_examples=15, deadline=None)
@given(theta=st.floats(2.0, 40.0), wavelength=st.floats(0.4, 1.5), tilt=st.floats(-5.0, 5.0),
       out=st.floats(-3.0, 3.0))
def test_locus_is_a_line(theta, wavelength, tilt, out):
    # Invariant: with plane faces the crossing point is affine in the entry point, so the
    # locus is a straight line; the midpoints' residual from the fitted line is round-off.
    # Entry points whose beams leave the clear aperture are lost (NaN, with a reason code) and
    # the line is fitted through the others.
    prism = wollaston("calcite", theta)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", MissingBeamWarning)
        loc = fringe_localisation(prism, wavelength, in_plane_deg=tilt, out_of_plane_deg=out,
                                  samples=6)
    p = loc.points_mm
    exists = (loc.lost["eo"] == 0) & (loc.lost["oe"] == 0)
    np.testing.assert_array_equal(np.isfinite(p[:, 2]), exists)
    fit = loc.z_at_axis_mm + np.tan(np.deg2rad(loc.tilt_deg)) * p[exists, 0]
    assert np.all(np.abs(p[exists, 2] - fit) < 1e-9)


def test_bad_input_messages():
    prism = wollaston("calcite", 10.0)
    with pytest.raises(ValueError, match="beams must name two different beam labels"):
        shear_mm(prism, 0.6328, beams=("eo", "eo"))
    with pytest.raises(ValueError, match="beam 'xy' is not among the traced beams"):
        optical_path_difference(prism, 0.6328, beams=("eo", "xy"))
    with pytest.raises(ValueError, match="samples must be an integer >= 2"):
        fringe_localisation(prism, samples=1)
    with pytest.raises(ValueError, match="offset_mm must be"):
        optical_path_difference(prism, 0.6328, offset_mm=1.0)
