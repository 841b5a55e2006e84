"""Biaxial crystals: principal indices with an orientation, solved as a general dielectric tensor.

Checks, each against something outside the biaxial code:
- the uniaxial limit (n_x = n_y) against the closed-form uniaxial solver of
  :mod:`prismdesign.optics.interface` (powers, wave vectors, ray directions ≤ 1e-12);
- energy conservation at random biaxial | biaxial interfaces (property test, ≤ 1e-10);
- reflectances and transmittances of an isotropic | biaxial interface against GeneralTmm
  (PyPI ``GeneralTmm``, A. Loot; a C++ 4 × 4 transfer-matrix code after I. J. Hodgkinson,
  S. Kassam & Q. H. Wu, J. Comput. Phys. 133, 75-83 (1997)), at random orientations and angles;
- the optic-axis angle tan V = (n_z/n_x)·√((n_y² − n_x²)/(n_z² − n_y²)) (M. Born & E. Wolf,
  *Principles of Optics*, 7th ed., §15.3.4, from memory): the two waves found by the solver
  become degenerate (index n_y) there and nowhere else in the x–z plane;
- a KTP walk-off plate traced end to end against the principal-plane walk-off
  tan ρ = (n²/2)·sin 2θ·(1/n_x² − 1/n_z²), 1/n² = cos²θ/n_x² + sin²θ/n_z² (A. Yariv & P. Yeh,
  *Optical Waves in Crystals*, 1984, §4.3, from memory), and a KTP wedge pair whose
  y-polarised beam obeys Snell's law with fixed principal indices.
"""
import warnings

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar

import GeneralTmm

from prismdesign import material
from prismdesign.optics import (FixedIndices, FixedPrincipalIndices, Medium, SequentialSystem,
                                Surface, biaxial_modes, crystal_axes_from_vectors, optic_axes,
                                optic_axis_angle_deg, solve_interface, trace)
from prismdesign.optics.biaxial import BiaxialIndices, biaxial_permittivity
from prismdesign.prisms import free_stack

Z = np.array([0.0, 0.0, 1.0])
WAVELENGTH_UM = 0.6328


def random_rotation(rng):
    q, _ = np.linalg.qr(rng.normal(size=(3, 3)))
    return q * np.sign(np.linalg.det(q))


def rotation_from_angles(a, b, c):
    """Proper rotation from three angles (radians): R_z(a) R_y(b) R_z(c), as crystal axes rows."""
    def rz(t):
        return np.array([[np.cos(t), -np.sin(t), 0], [np.sin(t), np.cos(t), 0], [0, 0, 1]])
    ry = np.array([[np.cos(b), 0, np.sin(b)], [0, 1, 0], [-np.sin(b), 0, np.cos(b)]])
    return (rz(a) @ ry @ rz(c)).T


# ----------------------------------------------------------------------------- uniaxial limit
def _uniaxial_pair(n_o, n_e, axes):
    """A uniaxial crystal written both ways: (n_o, n_e) with optic axis = crystal z, and the
    biaxial description n_x = n_y = n_o, n_z = n_e with the same axes."""
    return (n_o, n_e), axes[2], BiaxialIndices(n_o, n_o, n_e, axes)


def _compare_results(uni, bi, swap_t, swap_r):
    """Worst differences of powers, wave vectors and ray directions. The biaxial order is
    (fast, slow) on each side; the uniaxial (o, e): they swap where that side's crystal is
    negative (`swap_t` for the transmitted pair, `swap_r` for the reflected pair)."""
    order = ([1, 0] if swap_t else [0, 1]) + ([3, 2] if swap_r else [2, 3])
    power = np.abs(uni.power_fraction - bi.power_fraction[..., order]).max()
    live = ~uni.evanescent
    assert np.array_equal(live, ~bi.evanescent[order]) or not live.all()
    ray = np.abs(np.where(live[..., None], uni.ray_direction - bi.ray_direction[..., order, :],
                          0.0)).max()
    k = np.abs(np.where(live[..., None], uni.wave_vector - bi.wave_vector[..., order, :],
                        0.0)).max()
    # Two evanescent waves of one pair have no index order (neither propagates): compare them
    # as a set; they carry no power in either solver.
    for pair in ((0, 1), (2, 3)):
        if uni.evanescent[list(pair)].all():
            q_u = np.sort_complex(uni.normal_component[list(pair)])
            q_b = np.sort_complex(bi.normal_component[list(pair)])
            k = max(k, np.abs(q_u - q_b).max())
    return np.array([power, k, ray])


#: Within this angle of a crystal's optic axis the two roots of each pair nearly coincide and the
#: numerical eigenvectors of the 4 × 4 problem lose digits (error ~ 1e-16/gap between the
#: roots); the agreement there is checked to NEAR_AXIS_TOLERANCE instead of 1e-12.
NEAR_AXIS_DEG = 10.0
NEAR_AXIS_TOLERANCE = 1e-10


def _axis_angle_deg(result, axis, modes):
    """Smallest angle (degrees) between the real wave normals of `modes` and `axis`."""
    k = result.wave_vector[list(modes)].real
    cos = np.abs(k @ axis) / np.linalg.norm(k, axis=-1)
    return float(np.rad2deg(np.arccos(np.clip(cos.max(), 0.0, 1.0))))


def _check_worst(far, near):
    for name, a, b in zip(("power", "wave vector", "ray direction"), far, near):
        assert a <= 1e-12, (name, a)
        assert b <= NEAR_AXIS_TOLERANCE, (name, b)


def test_uniaxial_limit_isotropic_to_crystal():
    # 300 random orientations, indices (positive and negative crystals) and angles.
    rng = np.random.default_rng(12)
    worst, near = np.zeros(3), np.zeros(3)
    for _ in range(300):
        n_o, n_e = rng.uniform(1.4, 2.3, 2)
        n1 = rng.uniform(1.0, 1.8)
        theta = rng.uniform(0.0, np.deg2rad(80.0))
        k = n1 * np.array([np.sin(theta), 0.0, np.cos(theta)])
        e = rng.normal(size=2) + 1j * rng.normal(size=2)
        field = e[0] * np.array([np.cos(theta), 0.0, -np.sin(theta)]) + e[1] * np.array([0, 1, 0])
        uni, axis, bi = _uniaxial_pair(n_o, n_e, random_rotation(rng))
        u = solve_interface(k, field, Z, (n1, n1), Z, uni, axis)
        b = solve_interface(k, field, Z, (n1, n1), Z, bi, Z)
        dev = _compare_results(u, b, n_e < n_o, False)
        if _axis_angle_deg(u, axis, (0, 1)) < NEAR_AXIS_DEG:
            near = np.maximum(near, dev)
        else:
            worst = np.maximum(worst, dev)
    _check_worst(worst, near)


def test_uniaxial_limit_crystal_to_crystal():
    # 300 random pairs of crystals, faces and incident waves (either wave of crystal 1), total
    # reflection of one or both transmitted waves included.
    rng = np.random.default_rng(5)
    worst, near = np.zeros(3), np.zeros(3)
    for _ in range(300):
        n_o1, n_e1, n_o2, n_e2 = rng.uniform(1.4, 2.3, 4)
        uni_1, axis_1, bi_1 = _uniaxial_pair(n_o1, n_e1, random_rotation(rng))
        uni_2, axis_2, bi_2 = _uniaxial_pair(n_o2, n_e2, random_rotation(rng))
        u_dir = rng.normal(size=3)
        u_dir /= np.linalg.norm(u_dir)
        modes = biaxial_modes(u_dir, n_o1, n_o1, n_e1, bi_1.crystal_axes)
        which = int(rng.integers(2))
        n = (modes.index_fast, modes.index_slow)[which]
        field = (modes.field_fast, modes.field_slow)[which]
        normal = rng.normal(size=3)
        normal /= np.linalg.norm(normal)
        u = solve_interface(n * u_dir, field, normal, uni_1, axis_1, uni_2, axis_2)
        b = solve_interface(n * u_dir, field, normal, bi_1, Z, bi_2, Z)
        flux = np.cross(field, np.cross(n * u_dir, field.conj())).real
        if u.singular or b.singular or abs(flux @ normal) < 0.1 * np.linalg.norm(flux):
            # Near-grazing incidence (beyond ~84°): power fractions divide by a small normal
            # flux and the closed-form solver's own energy closure degrades to ~1e-11.
            continue
        dev = _compare_results(u, b, n_e2 < n_o2, n_e1 < n_o1)
        incident_angle = np.rad2deg(np.arccos(min(1.0, abs(u_dir @ axis_1))))
        if min(_axis_angle_deg(u, axis_2, (0, 1)), _axis_angle_deg(u, axis_1, (2, 3)),
               incident_angle) < NEAR_AXIS_DEG:
            near = np.maximum(near, dev)
        else:
            worst = np.maximum(worst, dev)
    _check_worst(worst, near)


# ----------------------------------------------------------------------------- energy
index = st.floats(1.3, 2.4)
angle = st.floats(-np.pi, np.pi)


@settings(max_examples=150, deadline=None)
@given(n1=st.tuples(index, index, index), n2=st.tuples(index, index, index),
       r1=st.tuples(angle, angle, angle), r2=st.tuples(angle, angle, angle),
       direction=st.tuples(angle, st.floats(0.0, 1.4)), tilt=st.tuples(angle, st.floats(0, 1.2)),
       which=st.integers(0, 1))
def test_energy_is_conserved_between_biaxial_crystals(n1, n2, r1, r2, direction, tilt, which):
    a1, a2 = rotation_from_angles(*r1), rotation_from_angles(*r2)
    phi, theta = direction
    normal = np.array([np.sin(tilt[1]) * np.cos(tilt[0]), np.sin(tilt[1]) * np.sin(tilt[0]),
                       np.cos(tilt[1])])
    u_dir = np.array([np.sin(theta) * np.cos(phi), np.sin(theta) * np.sin(phi), np.cos(theta)])
    modes = biaxial_modes(u_dir, *n1, a1)
    n = (modes.index_fast, modes.index_slow)[which]
    field = (modes.field_fast, modes.field_slow)[which]
    res = solve_interface(n * u_dir, field, normal, BiaxialIndices(*n1, a1), Z,
                          BiaxialIndices(*n2, a2), Z)
    # Grazing waves (ray almost in the surface) leave the boundary system ill-conditioned.
    s = np.cross(field, np.cross(n * u_dir, field.conj())).real
    assume(abs(s @ normal) > 1e-3 * np.linalg.norm(s))
    assume(not res.singular)
    assert abs(res.power_fraction.sum() - 1.0) <= 1e-10


def test_energy_with_total_reflection_is_exercised():
    # A dense biaxial crystal against air at 60°: both transmitted waves evanescent, R = 1.
    axes = rotation_from_angles(0.3, 0.7, -0.2)
    u_dir = np.array([np.sin(1.0), 0.0, np.cos(1.0)])
    modes = biaxial_modes(u_dir, 1.75, 1.76, 1.85, axes)
    res = solve_interface(modes.index_slow * u_dir, modes.field_slow, Z,
                          BiaxialIndices(1.75, 1.76, 1.85, axes), Z, (1.0, 1.0), Z)
    assert res.evanescent[:2].all()
    assert abs(res.power_fraction[2:].sum() - 1.0) <= 1e-12


# ----------------------------------------------------------------------------- GeneralTmm
def _rx(a):
    c, s = np.cos(a), np.sin(a)
    return np.array([[1, 0, 0], [0, c, -s], [0, s, c]])


def _rz(a):
    c, s = np.cos(a), np.sin(a)
    return np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]])


def _reference(n1, principal, psi, xi, theta):
    """GeneralTmm intensity matrix for n1 | biaxial half-space (conventions as in
    tests/test_optics_reference_tmm.py: x_GT is the normal, y_GT the plane of incidence)."""
    mat = GeneralTmm.Material.Static
    tmm = GeneralTmm.Tmm(wl=WAVELENGTH_UM * 1e-6)
    tmm.AddIsotropicLayer(float("inf"), mat(n1))
    tmm.AddLayer(float("inf"), *(mat(v) for v in principal), psi, xi)
    tmm.SetParams(beta=n1 * np.sin(theta))
    return tmm.GetIntensityMatrix()


def _ours(n1, principal, psi, xi, theta):
    rot = _rx(xi) @ _rz(psi)                    # column i: principal axis i in the GT frame
    axes = np.array([[rot[1, i], rot[2, i], rot[0, i]] for i in range(3)])
    k = n1 * np.array([np.sin(theta), 0.0, np.cos(theta)])
    p_in = np.array([np.cos(theta), 0.0, -np.sin(theta)], dtype=complex)
    s_in = np.array([0.0, 1.0, 0.0], dtype=complex)
    res = solve_interface(np.stack([k, k]), np.stack([p_in, s_in]), Z, (n1, n1), Z,
                          BiaxialIndices(*principal, axes), Z)
    pf = res.power_fraction
    return np.array([[pf[0, 3], pf[1, 3]], [pf[0, 2], pf[1, 2]], [pf[0, 0], pf[1, 0]],
                     [pf[0, 1], pf[1, 1]]])


def test_biaxial_half_space_matches_generaltmm():
    # 200 random orientations, principal indices (KTP-like to strongly biaxial) and angles of
    # incidence up to 85°, with n1 up to 2.0 (total reflection of one or both waves included).
    rng = np.random.default_rng(2026)
    worst_r = worst_t = worst_closure = 0.0
    cross = 0.0
    for _ in range(200):
        n1 = rng.uniform(1.0, 2.0)
        principal = tuple(rng.uniform(1.3, 2.4, 3))
        psi, xi = rng.uniform(-np.pi, np.pi, 2)
        theta = rng.uniform(0.0, np.deg2rad(85.0))
        ref = _reference(n1, principal, psi, xi, theta)
        mine = _ours(n1, principal, psi, xi, theta)
        worst_r = max(worst_r, np.abs(ref[:2, :2] - mine[:2]).max())
        t_ref = np.nan_to_num(ref[2:, :2])
        worst_t = max(worst_t, min(np.abs(t_ref - mine[2:]).max(),
                                   np.abs(t_ref[::-1] - mine[2:]).max()))
        worst_closure = max(worst_closure, np.abs(ref[:2, :2].sum(axis=0)
                                                  + t_ref.sum(axis=0) - 1).max())
        cross = max(cross, ref[0, 1], ref[1, 0])
        assert np.abs(mine.sum(axis=0) - 1).max() <= 1e-12
    assert cross > 1e-3                          # p ↔ s conversion is exercised
    assert worst_r <= 1e-11, worst_r          # observed 1.0e-12
    assert worst_t <= 1e-9 + worst_closure, (worst_t, worst_closure)


@pytest.mark.parametrize("psi_deg, xi_deg", [(0, 0), (30, 0), (0, 40), (25, 65), (90, 90)])
@pytest.mark.parametrize("theta_deg", [0.0, 30.0, 60.0])
def test_ktp_interface_matches_generaltmm(psi_deg, xi_deg, theta_deg):
    # Library KTP at 0.6328 µm at named orientations and angles.
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        principal = material("ktp").indices(WAVELENGTH_UM)
    case = (1.0, principal, np.deg2rad(psi_deg), np.deg2rad(xi_deg), np.deg2rad(theta_deg))
    ref, mine = _reference(*case), _ours(*case)
    assert np.abs(ref[:2, :2] - mine[:2]).max() <= 1e-9
    t_ref = np.nan_to_num(ref[2:, :2])
    assert min(np.abs(t_ref - mine[2:]).max(), np.abs(t_ref[::-1] - mine[2:]).max()) <= 1e-9


# ----------------------------------------------------------------------------- optic axes
@pytest.mark.parametrize("name, wavelength_um", [("ktp", 0.5321), ("ktp", 1.064),
                                                  ("lbo", 0.5321), ("lbo", 1.064)])
def test_optic_axis_angle_is_where_the_waves_meet(name, wavelength_um):
    n_x, n_y, n_z = material(name).indices(wavelength_um)
    axes = rotation_from_angles(0.4, 1.1, -0.7)
    v_deg = optic_axis_angle_deg(n_x, n_y, n_z)
    # Along both computed axes the two waves have one index, n_y.
    modes = biaxial_modes(optic_axes(n_x, n_y, n_z, axes), n_x, n_y, n_z, axes)
    assert np.abs(modes.index_slow - modes.index_fast).max() <= 1e-9
    assert np.abs(modes.index_fast - n_y).max() <= 1e-9

    # Independently: the direction in the crystal's x–z plane where the solver's two indices
    # are closest, found by a 1-D search, is at the same angle.
    def split(v_rad):
        u = np.sin(v_rad) * axes[0] + np.cos(v_rad) * axes[2]
        m = biaxial_modes(u, n_x, n_y, n_z, axes)
        return float(m.index_slow - m.index_fast)

    found = minimize_scalar(split, bounds=(0.0, np.pi / 2), method="bounded",
                            options={"xatol": 1e-10})
    assert abs(np.rad2deg(found.x) - v_deg) <= 1e-5
    # 1° off the axis the waves are split (the search is not flat).
    assert split(np.deg2rad(v_deg + 1.0)) > 1e-5


def test_wave_indices_and_fields_obey_fresnels_equation_of_wave_normals():
    # Fresnel's equation of wave normals, Σₖ uₖ²/(1/n² − 1/nₖ²) = 0 in the crystal frame
    # (M. Born & E. Wolf, *Principles of Optics*, 7th ed., §15.2.3, from memory), cleared of
    # fractions: a quadratic in a = 1/n² whose two roots are the two phase indices; the
    # displacement of each wave is Dₖ ∝ uₖ/(a − 1/nₖ²) (same section) and E = ε⁻¹D.
    rng = np.random.default_rng(7)
    m = 200
    n = np.sort(rng.uniform(1.4, 2.2, size=(m, 3)), axis=1)
    n_x, n_y, n_z = n.T
    axes = np.stack([random_rotation(rng) for _ in range(m)])
    u = rng.normal(size=(m, 3))
    u /= np.linalg.norm(u, axis=1)[:, None]
    modes = biaxial_modes(u, n_x, n_y, n_z, axes)

    uc = np.einsum("mij,mj->mi", axes, u)                   # crystal-frame components
    b = 1.0 / n ** 2
    s2 = uc ** 2
    lin = (s2[:, 0] * (b[:, 1] + b[:, 2]) + s2[:, 1] * (b[:, 0] + b[:, 2])
           + s2[:, 2] * (b[:, 0] + b[:, 1]))
    const = (s2[:, 0] * b[:, 1] * b[:, 2] + s2[:, 1] * b[:, 0] * b[:, 2]
             + s2[:, 2] * b[:, 0] * b[:, 1])
    root = np.sqrt(lin * lin - 4.0 * const)
    a_fast, a_slow = 0.5 * (lin + root), 0.5 * (lin - root)   # larger 1/n² is the faster wave
    assert np.abs(modes.index_fast - 1.0 / np.sqrt(a_fast)).max() <= 1e-10
    assert np.abs(modes.index_slow - 1.0 / np.sqrt(a_slow)).max() <= 1e-10

    for a, field in ((a_fast, modes.field_fast), (a_slow, modes.field_slow)):
        e_expected = b * uc / (a[:, None] - b)
        e_expected = np.einsum("mji,mj->mi", axes, e_expected)  # back to the global frame
        e_expected /= np.linalg.norm(e_expected, axis=1)[:, None]
        overlap = np.abs(np.einsum("mi,mi->m", field.conj(), e_expected))
        assert np.abs(overlap - 1.0).max() <= 1e-9


def test_optic_axis_angle_refuses_unordered_indices():
    with pytest.raises(ValueError, match="n_x < n_y < n_z"):
        optic_axis_angle_deg(1.6, 1.5, 1.8)


# ----------------------------------------------------------------------------- prisms
def _walk_off_deg(n_x, n_z, theta):
    inv = np.cos(theta) ** 2 / n_x ** 2 + np.sin(theta) ** 2 / n_z ** 2
    n2 = 1.0 / inv
    return np.rad2deg(np.arctan(0.5 * n2 * np.sin(2 * theta) * (1 / n_x ** 2 - 1 / n_z ** 2)))


@pytest.mark.parametrize("theta_deg", [20.0, 45.0, 70.0])
def test_ktp_walk_off_plate(theta_deg):
    # A 5 mm KTP plate, crystal z at θ from the beam in the x–z plane, crystal y along y.
    theta = np.deg2rad(theta_deg)
    axes = crystal_axes_from_vectors([np.cos(theta), 0, -np.sin(theta)],
                                     [np.sin(theta), 0, np.cos(theta)])
    ktp = material("ktp")
    prism = free_stack([dict(material=ktp, crystal_axes=axes, thickness_mm=5.0)])
    result = prism.trace(wavelength_um=1.064)
    assert set(result.labels()) == {"f", "s"}
    n_x, n_y, n_z = ktp.indices(1.064)
    # The y-polarised wave has index n_y along any direction in the x–z plane and no walk-off
    # (it is the fast wave: n_y < n(θ) for these angles).
    fast, slow = result["f"], result["s"]
    assert abs(fast.indices[1] - n_y).max() <= 1e-12
    assert abs(fast.exit_position_mm[..., 0]).max() <= 1e-12
    # The other wave walks off in the x–z plane by ρ.
    rho = _walk_off_deg(n_x, n_z, theta)
    shift = slow.exit_position_mm[..., 0]
    assert np.abs(shift - 5.0 * np.tan(np.deg2rad(rho))).max() <= 1e-12
    assert np.abs(slow.exit_position_mm[..., 1]).max() <= 1e-12
    # Both leave parallel to the input, and the plate loses only its Fresnel reflections.
    for beam in (fast, slow):
        assert np.abs(beam.exit_direction - Z).max() <= 1e-12
    total = result.power("f") + result.power("s")
    assert 0.8 < float(total) < 1.0


def test_ktp_wedge_pair_y_polarised_beam_obeys_snell():
    # Two KTP wedges: first with crystal z along y (the y-polarised wave has n_z, slow), second
    # with crystal x along y (n_x, fast). For D along a principal axis and k in the plane normal
    # to it, the index is that principal index whatever the direction, so the "sf" beam
    # refracts by Snell's law with fixed indices at both faces.
    alpha = np.deg2rad(15.0)
    first = crystal_axes_from_vectors([1, 0, 0], [0, 1, 0])      # rows x, y, z
    second = crystal_axes_from_vectors([0, 1, 0], [0, 0, 1])
    prism = free_stack([dict(material="ktp", crystal_axes=first, exit_face_deg=15.0,
                             thickness_mm=3.0),
                        dict(material="ktp", crystal_axes=second, exit_face_deg=0.0,
                             thickness_mm=3.0)])
    lam = 1.064
    result = prism.trace(wavelength_um=lam)
    # The principal axes along y in both wedges keep x and y polarisation apart: two beams.
    assert set(result.labels()) == {"fs", "sf"}
    n_x, n_y, n_z = material("ktp").indices(lam)
    n_air = material("air").n(lam)
    normal = np.array([np.sin(alpha), 0.0, np.cos(alpha)])
    k1 = n_z * Z
    k_t = k1 - (k1 @ normal) * normal
    k2 = k_t + np.sqrt(n_x ** 2 - k_t @ k_t) * normal
    k_out = np.array([k2[0], 0.0, np.sqrt(n_air ** 2 - k2[0] ** 2)])
    expected_deg = np.rad2deg(np.arctan2(k_out[0], k_out[2]))
    beam = result["sf"]
    in_plane, out_of_plane = beam.deviation_deg()
    assert np.abs(in_plane - expected_deg).max() <= 1e-10
    assert np.abs(out_of_plane).max() <= 1e-12
    # Only the y-polarised input feeds it (the unpolarised pair: x first, y second).
    assert beam.power[0] <= 1e-20 < beam.power[1]
    # Energy: the two beams carry the input less the Fresnel reflections.
    total = sum(float(result.power(label)) for label in result.labels())
    assert 0.8 < total <= 1.0 + 1e-12


def test_traced_biaxial_equals_uniaxial_in_the_limit():
    # A plate of fixed indices n_x = n_y = 1.6, n_z = 1.7 traced as biaxial and as uniaxial
    # with the optic axis along crystal z: same beams, positions and powers.
    axes = rotation_from_angles(0.2, 0.9, 0.5)
    lam = np.array([0.5, 0.6])
    surfaces = [Surface([0, 0, 0], [0, 0.1, 1]), Surface([0, 0, 4.0], [0.2, 0, 1])]
    outside = Medium(FixedIndices(1.0))
    bi = SequentialSystem([outside, Medium(FixedPrincipalIndices(1.6, 1.6, 1.7),
                                           crystal_axes=axes), outside], surfaces)
    uni = SequentialSystem([outside, Medium(FixedIndices(1.6, 1.7), optic_axis=axes[2]),
                            outside], surfaces)
    r_bi = trace(bi, [0, 0, -1.0], [0.05, 0.0, 1.0], lam, "unpolarised")
    r_uni = trace(uni, [0, 0, -1.0], [0.05, 0.0, 1.0], lam, "unpolarised")
    for b_label, u_label in (("f", "o"), ("s", "e")):      # positive crystal: fast = o
        b, u = r_bi[b_label], r_uni[u_label]
        assert np.abs(b.positions_mm - u.positions_mm).max() <= 1e-12
        assert np.abs(b.ray_directions - u.ray_directions).max() <= 1e-12
        assert np.abs(r_bi.power(b_label) - r_uni.power(u_label)).max() <= 1e-12
        assert np.abs(b.optical_path_mm - u.optical_path_mm).max() <= 1e-12


# ----------------------------------------------------------------------------- inputs
def test_permittivity_has_the_principal_values():
    axes = rotation_from_angles(0.3, -1.0, 2.0)
    eps = biaxial_permittivity(1.5, 1.6, 1.8, axes)
    assert np.allclose(np.linalg.eigvalsh(eps), [1.5 ** 2, 1.6 ** 2, 1.8 ** 2], atol=1e-14)
    assert np.allclose(eps @ axes[1], 1.6 ** 2 * axes[1], atol=1e-14)


def test_medium_and_piece_inputs_are_checked():
    ktp = material("ktp")
    with pytest.raises(ValueError, match="needs crystal_axes"):
        Medium(ktp)
    with pytest.raises(ValueError, match="needs crystal_axes"):
        Medium(ktp, optic_axis=[0, 0, 1], crystal_axes=np.eye(3))
    with pytest.raises(ValueError, match="proper rotation"):
        Medium(ktp, crystal_axes=np.diag([1.0, 1.0, -1.0]))
    with pytest.raises(ValueError, match="proper rotation"):
        Medium(ktp, crystal_axes=[[1, 0, 0], [0, 1, 0], [0, 0.1, 1]])
    with pytest.raises(ValueError, match="one 3 × 3 rotation"):
        Medium(ktp, crystal_axes=np.stack([np.eye(3)] * 2))
    with pytest.raises(ValueError, match="crystal_axes belong to biaxial"):
        Medium(material("calcite"), optic_axis=[0, 0, 1], crystal_axes=np.eye(3))
    with pytest.raises(ValueError, match="perpendicular"):
        crystal_axes_from_vectors([1, 0, 0], [1, 0, 1])
    with pytest.raises(ValueError, match="needs crystal_axes"):
        free_stack([dict(material="ktp", optic_axis="z")])
    axes = crystal_axes_from_vectors([0, 0, 1], [1, 0, 0])
    # y = z × x completes a right-handed crystal frame.
    assert np.array_equal(axes, [[0, 0, 1], [0, -1, 0], [1, 0, 0]])


def test_prism_rotation_turns_the_crystal_axes():
    axes = crystal_axes_from_vectors([1, 0, 0], [0, 0, 1])
    prism = free_stack([dict(material="ktp", crystal_axes=axes, thickness_mm=2.0)])
    turned = prism.rotated(90.0)
    assert np.allclose(turned.pieces[0].crystal_axes, [[0, 1, 0], [-1, 0, 0], [0, 0, 1]],
                       atol=1e-15)


@pytest.mark.parametrize("layered", [False, True])
def test_ktp_wedge_pair_power_of_y_polarised_beam(layered):
    # The y-polarised "sf" beam is an s wave (D normal to the x–z plane of incidence) with the
    # fixed indices n_z, then n_x: its power is a product of Fresnel transmittances (Born & Wolf
    # §1.5.2) at the entrance (normal incidence), the tilted interface — bare, or with a 5 µm
    # air gap whose bounces add in power (tests/closed_forms.py) — and the exit face.
    from closed_forms import fresnel_transmittance, incoherent_slab_transmittance
    alpha = np.deg2rad(15.0)
    first = crystal_axes_from_vectors([1, 0, 0], [0, 1, 0])
    second = crystal_axes_from_vectors([0, 1, 0], [0, 0, 1])
    interfaces = [dict(material="air", thickness_mm=0.005, treatment="incoherent")] if layered \
        else None
    prism = free_stack([dict(material="ktp", crystal_axes=first, exit_face_deg=15.0,
                             thickness_mm=3.0),
                        dict(material="ktp", crystal_axes=second, thickness_mm=3.0)],
                       interfaces=interfaces)
    lam = 1.064
    beam = prism.trace(wavelength_um=lam, polarisation=(0.0, 1.0))["sf"]
    n_x, n_y, n_z = material("ktp").indices(lam)
    n_air = material("air").n(lam)
    inside = np.arcsin(n_z * np.sin(alpha) / n_x) - alpha        # angle from z in wedge 2
    expected = fresnel_transmittance(n_air, n_z, 0.0, "s")
    if layered:
        expected *= incoherent_slab_transmittance(n_z, n_air, n_x, alpha, "s")
    else:
        expected *= fresnel_transmittance(n_z, n_x, alpha, "s")
    expected *= fresnel_transmittance(n_x, n_air, abs(inside), "s")
    assert abs(float(beam.power) - expected) <= 1e-12
