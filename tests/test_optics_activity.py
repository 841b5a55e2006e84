"""Optical activity: quartz rotatory power, gyrotropic eigenwaves and the interface solver.

Sources beside each check. The rotations of Soret & Sarasin are read from the table
"Drehungswinkel des Quarzes" in A. Winkelmann (ed.), *Handbuch der Physik* vol. II (Optik),
Breslau 1894, p. 801 (scanned copy; the digits of the C, E and F lines are unreadable in the
scan and completed from memory); the other observers' columns of the same table are
read directly.
"""
import warnings

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from prismdesign.materials import material
from prismdesign.materials.activity import (ActiveIndices, ActivePieceWarning,
                                            chirality_from_rotation)
from prismdesign.optics import FixedIndices, Medium, SequentialSystem, Surface
from prismdesign.optics.gyrotropic import (activity_crossover_angle_deg, berreman_matrix,
                                           chirality_tensor, gyrotropic_modes,
                                           solve_gyrotropic_interface)
from prismdesign.optics.interface import set_kernel, solve_interface
from prismdesign.optics.tracer import trace
from prismdesign.prisms import rochon

QUARTZ = material("quartz")

# Soret & Sarasin, rotation of a 1 mm quartz plate cut perpendicular to the axis (degrees), at
# the Fraunhofer lines A, B, C, D, E, F, G, h, H (Winkelmann 1894, p. 801; C, E, F from memory).
SORET_SARASIN = {0.7594: 12.668, 0.6867: 15.746, 0.6563: 17.318, 0.5893: 21.724,
                 0.5270: 27.543, 0.4861: 32.773, 0.4308: 42.604, 0.4102: 47.481,
                 0.3968: 51.193}
# Other observers' columns of the same table (C, D₂, F): an independent check of the fit.
OTHER_OBSERVERS = {0.6563: 17.299, 0.5890: 21.727, 0.4861: 32.722}


def _plate(hand, thickness_mm=1.0, axis=(0.0, 0.0, 1.0)):
    crystal = QUARTZ.with_handedness(hand) if hand else QUARTZ
    media = [Medium(FixedIndices(1.0)), Medium(crystal, axis), Medium(FixedIndices(1.0))]
    surfaces = [Surface((0, 0, 0), (0, 0, 1)), Surface((0, 0, thickness_mm), (0, 0, 1))]
    return SequentialSystem(media, surfaces)


def _exit_stokes(result):
    """Coherent sum of all exit beams (they share the exit direction at normal incidence)."""
    j = sum(b.jones(include_path_phase=True) for b in result.beams.values())
    s0 = (np.abs(j) ** 2).sum(axis=-1)
    s1 = np.abs(j[..., 0]) ** 2 - np.abs(j[..., 1]) ** 2
    s2 = 2 * (j[..., 0] * j[..., 1].conj()).real
    s3 = 2 * (j[..., 0] * j[..., 1].conj()).imag
    return s0, s1, s2, s3


def _azimuth_deg(result):
    s0, s1, s2, s3 = _exit_stokes(result)
    return np.rad2deg(0.5 * np.arctan2(s2, s1)), s3 / s0


def test_plate_rotation_matches_tabulated_rotatory_power():
    # A 1 mm right-handed plate turns x-polarised light clockwise seen facing the light
    # (azimuth decreasing) by the tabulated angle: Soret & Sarasin via Winkelmann (1894).
    lam = np.array(list(SORET_SARASIN))
    table = np.array(list(SORET_SARASIN.values()))
    azimuth, ellipticity = _azimuth_deg(trace(_plate("right"), np.zeros(3), (0, 0, 1.0), lam))
    np.testing.assert_allclose(-azimuth, table, rtol=2.5e-3)   # fit residual ≤ 0.24 %
    assert np.max(np.abs(ellipticity)) < 1e-9                     # stays linear
    lam = np.array(list(OTHER_OBSERVERS))
    azimuth, _ = _azimuth_deg(trace(_plate("right"), np.zeros(3), (0, 0, 1.0), lam))
    np.testing.assert_allclose(-azimuth, list(OTHER_OBSERVERS.values()), rtol=3e-3)


def test_plate_rotation_scales_with_thickness_and_hand():
    # Rotation ∝ thickness, opposite for the two hands (Born & Wolf §15.5).
    lam = 0.5893
    rho = QUARTZ.with_handedness("right").rotatory_power_deg_per_mm(lam)
    for t in (0.3, 2.0):
        right, _ = _azimuth_deg(trace(_plate("right", t), np.zeros(3), (0, 0, 1.0), lam))
        left, _ = _azimuth_deg(trace(_plate("left", t), np.zeros(3), (0, 0, 1.0), lam))
        expected = (rho * t + 90.0) % 180.0 - 90.0
        assert abs(-right - expected) < 1e-9
        assert abs(left - expected) < 1e-9


def test_inactive_material_is_unchanged():
    # Without a hand the crystal is traced exactly as before activity was modelled.
    pair = QUARTZ.indices(0.6)
    assert type(pair) is tuple
    assert QUARTZ.with_handedness(None) == QUARTZ
    assert isinstance(QUARTZ.with_handedness("left").indices(0.6), ActiveIndices)
    with pytest.raises(ValueError, match="handedness"):
        QUARTZ.with_handedness("clockwise")
    with pytest.raises(ValueError, match="optical activity data"):
        material("calcite").with_handedness("right")


def _random_geometry(draw_axis, draw_tilt):
    axis = np.array(draw_axis, dtype=float)
    axis /= np.linalg.norm(axis)
    normal = np.array([np.sin(draw_tilt), 0.0, np.cos(draw_tilt)])
    return axis, normal


unit_components = st.floats(-1.0, 1.0).filter(lambda v: abs(v) > 0.05)
vectors = st.tuples(unit_components, unit_components, unit_components)


@settings(max_examples=60, deadline=None)
@given(axis=vectors, tilt=st.floats(0.0, 1.2), n_o=st.floats(1.3, 2.5), dn=st.floats(-0.3, 0.3),
       incidence=st.floats(-1.3, 1.3))
def test_no_activity_limit_equals_reference_solver(axis, tilt, n_o, dn, incidence):
    # With ξ = 0 the gyrotropic solver reproduces the reference (numpy) solver: power fractions,
    # normal components and the physical fields coefficient × E (closed forms of Born & Wolf
    # §15.3 inside the reference solver).
    axis, normal = _random_geometry(axis, tilt)
    n_e = n_o + dn
    k = np.array([np.sin(incidence), 0.0, np.cos(incidence)])
    field = np.array([0.3 - 0.2j, 1.0, 0.0])
    field = field - field.dot(k) * k
    previous = set_kernel("numpy")
    try:
        ref = solve_interface(k, field, normal, (1.0, 1.0), (0, 0, 1.0), (n_o, n_e), axis)
    finally:
        set_kernel(previous)
    act = solve_gyrotropic_interface(k, field, normal, (1.0, 1.0), (0, 0, 1.0),
                                     ActiveIndices(n_o, n_e, 0.0), axis)
    # Away from the optic axis (there the split into o and e is arbitrary without activity).
    k_t = ref.wave_vector[..., 0, :].real
    along = abs(np.dot(k_t / np.linalg.norm(k_t), axis))
    if ref.evanescent.any() or along > 1 - 1e-6 or abs(dn) < 1e-3:
        return
    np.testing.assert_allclose(act.power_fraction, ref.power_fraction, atol=1e-12)
    np.testing.assert_allclose(act.normal_component, ref.normal_component, atol=1e-12)
    np.testing.assert_allclose(act.coefficient[..., None] * act.e_field,
                               ref.coefficient[..., None] * ref.e_field, atol=1e-11)


@settings(max_examples=80, deadline=None)
@given(axis1=vectors, axis2=vectors, tilt=st.floats(0.0, 1.2), xi1=st.floats(-2e-3, 2e-3),
       xi2=st.floats(-2e-3, 2e-3), ratio=st.floats(-1.0, 1.0), incidence=st.floats(-0.6, 0.6),
       mode=st.integers(0, 1))
def test_energy_is_conserved(axis1, axis2, tilt, xi1, xi2, ratio, incidence, mode):
    # Lossless, reciprocal chiral media (Hermitian constitutive matrix): the normal power flux
    # Re(E × H*)·N̂ of the outgoing waves equals the incident one (energy conservation,
    # Born & Wolf §1.5.3 for the flux balance).
    a1, normal = _random_geometry(axis1, tilt)
    a2, _ = _random_geometry(axis2, 0.0)
    k_air = np.array([np.sin(incidence), 0.0, np.cos(incidence)])
    quartz_1 = ActiveIndices(1.544, 1.553, xi1, ratio)
    quartz_2 = ActiveIndices(1.544, 1.553, xi2, ratio)
    # Launch an eigenwave of the first crystal from air, then cross into the second crystal
    # and out into air (evanescent waves carry no normal flux and count zero).
    e_air = np.array([1.0, 0.5j, 0.0])
    e_air = e_air - e_air.dot(k_air) * k_air
    entry = solve_gyrotropic_interface(k_air, e_air, (0, 0, 1.0), (1.0, 1.0), (0, 0, 1.0),
                                       quartz_1, a1)
    assert abs(entry.power_fraction.sum() - 1.0) < 1e-10
    k_in = entry.wave_vector[mode].real
    e_in = entry.e_field[mode]
    for far, far_axis in ((quartz_2, a2), ((1.0, 1.0), (0, 0, 1.0)), ((1.7, 1.6), a2)):
        res = solve_gyrotropic_interface(k_in, e_in, normal, quartz_1, a1, far, far_axis)
        if not res.singular:
            assert abs(res.power_fraction.sum() - 1.0) < 1e-10


def test_eigenwaves_circular_on_axis_linear_far_from_it():
    # Along the axis the waves are circular with n = n_o ± ξ (exact for the chiral relation;
    # Lindell et al. 1994 §1.3 for the bi-isotropic case), far from it they tend to the linear
    # o and e waves with the uniaxial indices (Born & Wolf §15.3).
    lam = 0.5893
    n_o, n_e = QUARTZ.indices(lam)
    xi = QUARTZ.with_handedness("right").indices(lam).chirality
    on = gyrotropic_modes((0, 0, 1.0), n_o, n_e, (0, 0, 1.0), xi)
    assert on.index_o == pytest.approx(n_o - xi, abs=1e-13)
    assert on.index_e == pytest.approx(n_o + xi, abs=1e-13)
    assert abs(on.ellipticity_o) == pytest.approx(1.0, abs=1e-9)
    assert on.ellipticity_o == pytest.approx(-on.ellipticity_e, abs=1e-9)
    theta = np.deg2rad(60.0)
    far = gyrotropic_modes((np.sin(theta), 0, np.cos(theta)), n_o, n_e, (0, 0, 1.0), xi)
    n_theta = n_o * n_e / np.sqrt(n_e ** 2 * np.cos(theta) ** 2 + n_o ** 2 * np.sin(theta) ** 2)
    assert far.index_o == pytest.approx(n_o, abs=1e-7)
    assert far.index_e == pytest.approx(n_theta, abs=1e-7)
    assert max(abs(far.ellipticity_o), abs(far.ellipticity_e)) < 2e-3
    # The hand flips the sense of the circular waves, not the indices.
    left = gyrotropic_modes((0, 0, 1.0), n_o, n_e, (0, 0, 1.0), -xi)
    assert left.ellipticity_e == pytest.approx(-on.ellipticity_e, abs=1e-9)


def test_crossover_angle_closed_form():
    # Where circular and linear birefringence are equal the waves' ellipticity angle is 22.5°
    # (tan 2χ = 2G/(n_e(θ)² − n_o²) = 1; Yariv & Yeh §4.8, first order in ξ); the small-angle
    # form is θ ≈ √(Δn_circular/Δn_linear).
    lam = 0.5893
    n_o, n_e = QUARTZ.indices(lam)
    xi = QUARTZ.with_handedness("right").indices(lam).chirality
    theta_deg = activity_crossover_angle_deg(n_o, n_e, xi)
    assert theta_deg == pytest.approx(np.rad2deg(np.sqrt(2 * xi / (n_e - n_o))), rel=0.01)
    theta = np.deg2rad(theta_deg)
    modes = gyrotropic_modes((np.sin(theta), 0, np.cos(theta)), n_o, n_e, (0, 0, 1.0), xi)
    assert abs(modes.ellipticity_e) == pytest.approx(np.tan(np.deg2rad(22.5)), rel=2e-3)
    # First-order dispersion relation (n² − n_o²)(n² − n_e(θ)²) = G² with G = 2n_oξcos²θ.
    n_theta2 = (n_o * n_e) ** 2 / (n_e ** 2 * np.cos(theta) ** 2 + n_o ** 2 * np.sin(theta) ** 2)
    g = 2 * n_o * xi * np.cos(theta) ** 2
    for n in (modes.index_o, modes.index_e):
        assert (n * n - n_o ** 2) * (n * n - n_theta2) == pytest.approx(g * g, rel=1e-3)


def test_double_pass_after_mirror_cancels_rotation():
    # Optical activity is reciprocal: the sense of rotation follows the propagation direction, so
    # after a plate, a normal-incidence mirror and the same plate again the azimuth is back
    # where it started (unlike Faraday rotation; Born & Wolf §15.5). Berreman propagation
    # ψ(z) = V exp(i k0 Q z) V⁻¹ ψ(0) with a perfect mirror (tangential E = 0) at z = t.
    lam, t_um = 0.5893, 700.0
    n_o, n_e = QUARTZ.indices(lam)
    xi = QUARTZ.with_handedness("right").indices(lam).chirality
    c = np.array([[0.0, 0.0, 1.0]])
    eps = np.diag([n_o ** 2, n_o ** 2, n_e ** 2])[None]
    delta, _ = berreman_matrix(np.zeros(1), eps, chirality_tensor(np.array([xi]), 0.0, c))
    q, v = np.linalg.eig(delta[0])
    k0 = 2 * np.pi / lam
    forward = q.real > 0
    # Forward wave with E along x at z = 0: combine the two forward eigenvectors.
    vf, vb = v[:, forward], v[:, ~forward]
    a = np.linalg.solve(vf[:2], np.array([1.0, 0.0]))
    psi_t = vf @ (a * np.exp(1j * k0 * q[forward] * t_um))
    single_pass = psi_t[:2]
    b = np.linalg.solve(vb[:2], -psi_t[:2])
    psi_back = vb @ (b * np.exp(-1j * k0 * q[~forward] * t_um))
    e_back = psi_back[:2]
    rho = QUARTZ.with_handedness("right").rotatory_power_deg_per_mm(lam)
    sx, sy = single_pass
    azimuth_single = np.rad2deg(0.5 * np.arctan2(2 * (sx * sy.conjugate()).real,
                                                 abs(sx) ** 2 - abs(sy) ** 2))
    assert azimuth_single == pytest.approx(-rho * t_um * 1e-3, abs=1e-6)
    assert abs(e_back[1]) / abs(e_back[0]) < 1e-9                 # back along x: cancelled
    assert abs(e_back[0]) == pytest.approx(1.0, abs=1e-12)


def test_quartz_rochon_undeviated_beam_follows_first_wedge_rotation():
    # In a right-handed quartz Rochon the first wedge (light along the axis) turns x-polarised
    # input by ρ t₁(x); the second wedge passes the x component undeviated, so the undeviated
    # power is cos²(ρ t₁) of the input (closed form from Malus's law). The two circular waves
    # of the first wedge leave as two o beams ("oo", "eo") 2·ξ·tanθ apart in angle; their
    # coherent sum (phases compared at one point) gives that power.
    lam = 0.5893
    prism = rochon(QUARTZ.with_handedness("right"), 20.0, width_mm=10.0, height_mm=10.0,
                   edge_thickness_mm=1.0, design_wavelength_um=lam)
    x = np.linspace(-4.0, 4.0, 5)
    start = np.stack([x, np.zeros_like(x), np.full_like(x, -1.0)], axis=-1)
    with warnings.catch_warnings():
        # The analyses now group the branches (analysis.beam_groups): no stopgap warning.
        warnings.simplefilter("error", ActivePieceWarning)
        system = prism.system()
    res = trace(system, start, (0, 0, 1.0), lam, (1.0, 0.0))
    assert sorted(res.labels()) == ["ee", "eo", "oe", "oo"]
    beams = [res.beams["oo"], res.beams["eo"]]
    reference_point = beams[0].exit_position_mm
    jones = 0
    for beam in beams:
        k = beam.indices[-1][..., None] * beam.exit_wave_normal
        path = beam.optical_path_mm + np.sum(k * (reference_point - beam.exit_position_mm), -1)
        jones = jones + beam.jones() * np.exp(2j * np.pi * path * 1e3 / lam)[..., None]
    total = sum(b.power for b in res.beams.values())
    t1 = np.linalg.norm(beams[0].positions_mm[2] - beams[0].positions_mm[1], axis=-1)
    rho = QUARTZ.with_handedness("right").rotatory_power_deg_per_mm(lam)
    expected = np.cos(np.deg2rad(rho * t1)) ** 2
    np.testing.assert_allclose((np.abs(jones) ** 2).sum(-1) / total, expected, atol=2e-3)
    split = beams[0].deviation_deg()[0] - beams[1].deviation_deg()[0]
    xi = QUARTZ.with_handedness("right").indices(lam).chirality
    # Small-angle refraction at the tilted interface: Δ ≈ (n₊ − n₋) tanθ = 2ξ tanθ.
    assert np.all(np.abs(np.deg2rad(split)) == pytest.approx(2 * xi * np.tan(np.deg2rad(20.0)),
                                                              rel=0.02))


def test_activity_table_errors_and_round_trip(tmp_path):
    from prismdesign.materials import load_material, save_material
    path = tmp_path / "q.toml"
    save_material(QUARTZ, path)
    again = load_material(path)
    assert again.optical_activity == QUARTZ.optical_activity
    text = path.read_text()
    bad = text.replace('model = "drude"', 'model = "drood"')
    path.write_text(bad)
    with pytest.raises(ValueError, match="optical_activity.*model"):
        load_material(path)
    path.write_text(text.replace("pole_um2 = [", "pole_um = ["))
    with pytest.raises(ValueError, match="unknown key 'pole_um'"):
        load_material(path)


def test_rotatory_power_range():
    right = QUARTZ.with_handedness("right")
    with pytest.raises(ValueError, match="pole"):
        right.rotatory_power_deg_per_mm(0.1)
    with pytest.warns(UserWarning, match="extrapolated"):
        right.rotatory_power_deg_per_mm(1.0)
    assert chirality_from_rotation(180.0, 1.0) == pytest.approx(0.5e-3 / 1.0 * 1.0)


@pytest.mark.parametrize("treatment", ["coherent", "incoherent"])
def test_layers_on_active_faces_keep_energy_and_rotation(treatment):
    # A cement film between two right-handed quartz plates (axes along z) and ideal
    # antireflection coatings outside: the rotation is that of the total quartz thickness
    # (Born & Wolf §15.5: rotation ∝ path in the active medium, the isotropic film adds none),
    # and the transmitted power with the quarter-wave coatings (ideal: no reflection at the
    # design wavelength; Macleod, *Thin-Film Optical Filters*, §3.2) is that of the inner
    # interfaces only, which are index-matched to ~1e-3 here.
    from prismdesign.optics import ThinLayer
    from prismdesign.prisms.base import ideal_antireflection_layer
    lam = 0.5893
    right = QUARTZ.with_handedness("right")
    n_o = QUARTZ.n_o(lam)
    coat = ideal_antireflection_layer(1.0, n_o, lam)
    film = ThinLayer(FixedIndices(1.545), thickness_mm=0.01, treatment=treatment)
    media = [Medium(FixedIndices(1.0)), Medium(right, (0, 0, 1.0)), Medium(right, (0, 0, 1.0)),
             Medium(FixedIndices(1.0))]
    surfaces = [Surface((0, 0, 0), (0, 0, 1), layer=coat),
                Surface((0, 0, 0.5), (0, 0, 1), layer=film),
                Surface((0, 0, 1.5), (0, 0, 1), layer=coat)]
    res = trace(SequentialSystem(media, surfaces), np.zeros(3), (0, 0, 1.0), lam)
    if treatment == "coherent":
        azimuth, ellipticity = _azimuth_deg(res)
        rho = right.rotatory_power_deg_per_mm(lam)
        assert -azimuth == pytest.approx(rho * 1.5, abs=1e-6)
        assert abs(ellipticity) < 1e-9
    total = sum(b.power for b in res.beams.values())
    assert total == pytest.approx(1.0, abs=1e-5)


def _cross_matrix(v):
    return np.array([[0, -v[2], v[1]], [v[2], 0, -v[0]], [-v[1], v[0], 0]])


@settings(max_examples=40, deadline=None)
@given(axis=vectors, tilt=st.floats(0.0, 1.0), xi=st.floats(-0.02, 0.02),
       ratio=st.floats(-1.0, 1.0), incidence=st.floats(-1.2, 1.2))
def test_waves_satisfy_the_plane_wave_equations(axis, tilt, xi, ratio, incidence):
    # Independent of Berreman's reduction: each outgoing wave's (k, E, H) satisfies the plane-wave
    # Maxwell equations k × E = H − iξE and k × H = −εE − iξH with the chiral constitutive
    # relations (Lindell et al. 1994, eq. for bi-anisotropic media; from memory).
    a, normal = _random_geometry(axis, tilt)
    k_air = np.array([np.sin(incidence), 0.0, np.cos(incidence)])
    e_air = np.array([0.0, 1.0, 0.0])
    medium = ActiveIndices(1.544, 1.553, xi, ratio)
    res = solve_gyrotropic_interface(k_air, e_air, normal, (1.0, 1.0), (0, 0, 1.0), medium, a)
    eps = 1.544 ** 2 * np.eye(3) + (1.553 ** 2 - 1.544 ** 2) * np.outer(a, a)
    xi_t = chirality_tensor(xi, ratio, a)
    for j in range(2):
        k, e, h = res.wave_vector[j], res.e_field[j], res.h_field[j]
        assert np.allclose(_cross_matrix(k) @ e, h - 1j * xi_t @ e, atol=1e-11)
        assert np.allclose(_cross_matrix(k) @ h, -eps @ e - 1j * xi_t @ h, atol=1e-11)
