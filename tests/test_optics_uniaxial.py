"""Closed forms for uniaxial crystals: walk-off, normal incidence, special axis orientations,
Brewster angles, and reciprocity of the power coefficients.

References
----------
- M. Born & E. Wolf, *Principles of Optics*, 7th ed. (1999), ch. 15 (§15.3: index ellipsoid,
  extraordinary index 1/n(θ)² = cos²θ/n_o² + sin²θ/n_e², ray direction).
- A. Yariv & P. Yeh, *Optical Waves in Crystals*, Wiley (1984), ch. 4 (walk-off angle
  tan ρ = (n_o² − n_e²) sinθ cosθ / (n_e² cos²θ + n_o² sin²θ), §4.3).
- J. Lekner, "Reflection and refraction by uniaxial crystals", J. Phys.: Condens. Matter 3,
  6121–6133 (1991), and J. Lekner, J. Phys.: Condens. Matter 4, 1387–1395 (1992): closed-form
  reflection amplitudes for the axis normal to the surface, in the surface (parallel or
  perpendicular to the plane of incidence) and at normal incidence. The formulas below are
  derived in the docstrings from the boundary conditions (our own derivation); that they are the
  special cases listed in those papers is from memory.
- R. J. Potton, "Reciprocity in optics", Rep. Prog. Phys. 67, 717–754 (2004): for lossless
  reciprocal media the power scattering coefficients are unchanged when every wave is reversed
  (from memory).

Frame of the closed forms: normal ẑ, plane of incidence x–z, incident wave vector
k = n1 (sinθ, 0, cosθ) from the isotropic medium n1, κ = n1 sinθ. Field conventions follow
Born & Wolf §1.5.2 (see test_optics_isotropic): s field along ŷ, p field (−cosθ, 0, sinθ)
incident and (cosθ, 0, sinθ) reflected; the p amplitude ratio equals the ratio of the
magnetic fields H_y, so a "TM admittance" Y = E_x/H_y gives r = (Y1 − Y2)/(Y1 + Y2).
"""
import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from prismdesign.optics import plane_wave_modes, solve_interface
from prismdesign.optics.eigenmodes import extraordinary_index_rad, mode_fields
from closed_forms import sphere

Z = np.array([0.0, 0.0, 1.0])
index = st.floats(1.0, 2.6)
angle = st.floats(0.0, np.deg2rad(89.0))
unit_angles = st.tuples(st.floats(0.0, np.pi), st.floats(0.0, 2.0 * np.pi))




def csqrt(x):
    """Principal complex square root: +i·sqrt(|x|) for x < 0, the root that decays into z > 0."""
    return np.sqrt(complex(x))


def incident(n1, theta, pol):
    """Wave vector and Born & Wolf field of an s or p wave from the isotropic medium."""
    k = n1 * np.array([np.sin(theta), 0.0, np.cos(theta)])
    e = np.array([0.0, 1.0, 0.0]) if pol == "s" else np.array([-np.cos(theta), 0.0, np.sin(theta)])
    return k, e.astype(complex)


def reflected_unit(theta, pol):
    return np.array([0.0, 1.0, 0.0]) if pol == "s" else np.array([np.cos(theta), 0.0, np.sin(theta)])


def reflected_field(res):
    return (res.coefficient[2:, None] * res.e_field[2:]).sum(axis=0)


def solve_special(n1, n_o, n_e, axis, theta, pol):
    k, e = incident(n1, theta, pol)
    return solve_interface(k, e, Z, (n1, n1), Z, (n_o, n_e), axis)


def r_s(n1, n2, theta):
    """s reflection amplitude into an index n2 (Born & Wolf §1.5.2)."""
    q1 = n1 * np.cos(theta)
    q2 = csqrt(n2 ** 2 - (n1 * np.sin(theta)) ** 2)
    return (q1 - q2) / (q1 + q2)


def r_p_uniaxial(n1, eps_t, eps_n, theta):
    """p reflection amplitude for a medium with ε = diag(eps_t, ·, eps_n) in (x, ·, z).

    Derivation: a TM wave (H ∥ ŷ) has k × H = −εE, so E_x = q H/eps_t, E_z = −κ H/eps_n, and
    k·εE-consistency gives the dispersion κ²/eps_n + q²/eps_t = 1, i.e.
    q = sqrt(eps_t) sqrt(eps_n − κ²)/sqrt(eps_n). The tangential admittance Y = E_x/H_y = q/eps_t
    = sqrt(eps_n − κ²)/sqrt(eps_t eps_n); in the incident medium Y1 = cosθ/n1. Continuity of H_y
    and E_x gives r = (Y1 − Y2)/(Y1 + Y2), i.e. with n_t = sqrt(eps_t), n_n = sqrt(eps_n):

        r_pp = (n_t n_n cosθ − n1 sqrt(n_n² − n1² sin²θ))
               / (n_t n_n cosθ + n1 sqrt(n_n² − n1² sin²θ)).

    Axis ∥ ẑ: (n_t, n_n) = (n_o, n_e); axis ∥ x̂: (n_t, n_n) = (n_e, n_o); isotropic: Fresnel r∥.
    """
    n_t, n_n = np.sqrt(eps_t), np.sqrt(eps_n)
    root = csqrt(eps_n - (n1 * np.sin(theta)) ** 2)
    c = np.cos(theta)
    return (n_t * n_n * c - n1 * root) / (n_t * n_n * c + n1 * root)


def brewster_uniaxial(n1, n_t, n_n):
    """Zero of r_pp above: n_t² n_n² cos²θ = n1²(n_n² − n1² sin²θ) gives
    tan²θ_B = n_n² (n_t² − n1²) / (n1² (n_n² − n1²)) (our derivation; real when n_t, n_n > n1)."""
    return np.arctan(np.sqrt(n_n ** 2 * (n_t ** 2 - n1 ** 2) / (n1 ** 2 * (n_n ** 2 - n1 ** 2))))


# ---------------------------------------------------------------------------------------------
# Walk-off
# ---------------------------------------------------------------------------------------------

def walkoff_closed_form(theta, n_o, n_e):
    # Yariv & Yeh §4.3 / Born & Wolf §15.3: signed angle from the wave normal to the ray,
    # positive away from the optic axis.
    return np.arctan((n_o ** 2 - n_e ** 2) * np.sin(theta) * np.cos(theta)
                     / (n_e ** 2 * np.cos(theta) ** 2 + n_o ** 2 * np.sin(theta) ** 2))


def angle_between(a, b):
    return np.arctan2(np.linalg.norm(np.cross(a, b)), np.dot(a, b))


@settings(max_examples=200, deadline=None)
@given(theta=st.floats(0.0, np.pi / 2), n_o=index, n_e=index,
       frame=st.tuples(*[st.floats(0.0, 2 * np.pi)] * 3))
def test_walkoff_closed_form(theta, n_o, n_e, frame):
    # Yariv & Yeh §4.3: tan ρ = (n_o² − n_e²) sinθ cosθ / (n_e² cos²θ + n_o² sin²θ),
    # to 1e-12 rad, from the ray direction and from the walkoff_rad attribute.
    _check_walkoff(theta, n_o, n_e, frame)


def _check_walkoff(theta, n_o, n_e, frame):
    a, b, c = frame
    axis = sphere(b, a)
    helper = np.cross(axis, sphere(b + 1.0, a + c))
    helper /= np.linalg.norm(helper)
    u = np.cos(theta) * axis + np.sin(theta) * helper
    m = plane_wave_modes(u, n_o, n_e, axis)
    rho = walkoff_closed_form(theta, n_o, n_e)
    ray = m.ray_direction_e
    # Ray lies in the plane of wave normal and axis; its angle from the axis is θ + ρ.
    assert abs(np.dot(ray, np.cross(u, axis))) <= 1e-12
    assert abs(angle_between(ray, axis) - theta - rho) <= 1e-12
    assert abs(m.walkoff_rad - abs(rho)) <= 1e-12
    assert abs(m.index_e - n_o * n_e / np.hypot(n_e * np.cos(theta), n_o * np.sin(theta))) <= 1e-14 * n_o
    # The ordinary ray does not walk off.
    assert np.linalg.norm(m.ray_direction_o - u) <= 1e-12


@pytest.mark.parametrize("theta", [1e-8, 5e-8])
def test_walkoff_inside_degenerate_cone(theta):
    # Yariv & Yeh §4.3 closed form, wave normal 1e-8 rad from an axis not along a coordinate axis
    # (regression: inside the degenerate cone the walk-off was once dropped).
    _check_walkoff(theta, 1.0, 2.0, (0.0, 0.0, 0.0))


# ---------------------------------------------------------------------------------------------
# Normal incidence, axis at any angle
# ---------------------------------------------------------------------------------------------

@settings(max_examples=200, deadline=None)
@given(n1=index, n_o=index, n_e=index, alpha=st.floats(0.01, np.pi / 2), phi=st.floats(0.0, 2 * np.pi),
       amp=st.tuples(*[st.floats(-1.0, 1.0)] * 4).filter(lambda a: max(map(abs, a)) > 1e-2))
def test_normal_incidence_axis_at_any_angle(n1, n_o, n_e, alpha, phi, amp):
    """Normal incidence, axis at angle α to the normal, azimuth φ.

    Derivation: with k ∥ ẑ the o-wave has D, E ∥ v = (−sinφ, cosφ, 0) and index n_o; the e-wave has
    D ∥ u = (cosφ, sinφ, 0) and index n(α) (Born & Wolf §15.3.3). Its E = ε⁻¹D has a ẑ part, but
    its tangential part is ∥ u (v·ε⁻¹u = 0 since ĉ·v = 0) and H_t = n(α) ẑ × E_t. The boundary
    problem therefore splits into two isotropic ones: r = (n1 − n)/(n1 + n), t_t = 2 n1/(n1 + n),
    transmitted power fraction n|t_t|²/n1, with n = n_o for v and n = n(α) for u. With the axis in
    the face (α = 90°) this is Fresnel with n_o and n_e (Lekner 1991, normal-incidence case).
    """
    assume(n_o != n_e)  # n_o = n_e is isotropic: the u/v split is then arbitrary
    axis = sphere(alpha, phi)
    u = np.array([np.cos(phi), np.sin(phi), 0.0])
    v = np.array([-np.sin(phi), np.cos(phi), 0.0])
    a_u, a_v = amp[0] + 1j * amp[1], amp[2] + 1j * amp[3]
    res = solve_interface(n1 * Z, a_u * u + a_v * v, Z, (n1, n1), Z, (n_o, n_e), axis)
    n_alpha = extraordinary_index_rad(alpha, n_o, n_e)
    r_o, r_e = (n1 - n_o) / (n1 + n_o), (n1 - n_alpha) / (n1 + n_alpha)
    t_o, t_e = 2 * n1 / (n1 + n_o), 2 * n1 / (n1 + n_alpha)
    power_in = abs(a_u) ** 2 + abs(a_v) ** 2
    assert np.linalg.norm(reflected_field(res) - (r_e * a_u * u + r_o * a_v * v)) <= 1e-12
    e_o = res.coefficient[0] * res.e_field[0]
    e_e = res.coefficient[1] * res.e_field[1]
    assert np.linalg.norm(e_o - t_o * a_v * v) <= 1e-12
    assert np.linalg.norm(e_e[:2] - t_e * a_u * u[:2]) <= 1e-12
    assert abs(res.power_fraction[0] - n_o / n1 * t_o ** 2 * abs(a_v) ** 2 / power_in) <= 1e-12
    assert abs(res.power_fraction[1] - n_alpha / n1 * t_e ** 2 * abs(a_u) ** 2 / power_in) <= 1e-12


# ---------------------------------------------------------------------------------------------
# Special axis orientations (Lekner 1991, 1992)
# ---------------------------------------------------------------------------------------------

@settings(max_examples=200, deadline=None)
@given(n1=index, n_o=index, n_e=index, theta=angle, sign=st.sampled_from([1.0, -1.0]))
def test_axis_normal_to_surface(n1, n_o, n_e, theta, sign):
    """Axis ∥ ẑ. s: E ∥ ŷ ⟂ ĉ, D_o ∝ k × ẑ ∥ ŷ, so s is purely ordinary and r_ss = Fresnel s
    with n_o. p: purely extraordinary with ε = diag(n_o², n_o², n_e²): r_pp of :func:`r_p_uniaxial`
    with (n_t, n_n) = (n_o, n_e). No cross-polarised reflection. Includes TIR of either mode."""
    axis = sign * Z
    for pol, r in (("s", r_s(n1, n_o, theta)), ("p", r_p_uniaxial(n1, n_o ** 2, n_e ** 2, theta))):
        res = solve_special(n1, n_o, n_e, axis, theta, pol)
        assert np.linalg.norm(reflected_field(res) - r * reflected_unit(theta, pol)) <= 1e-12
        assert abs(res.power_fraction[2:].sum() - abs(r) ** 2) <= 1e-12


@settings(max_examples=200, deadline=None)
@given(n1=index, n_o=index, n_e=index, theta=angle, sign=st.sampled_from([1.0, -1.0]))
def test_axis_in_surface_perpendicular_to_plane_of_incidence(n1, n_o, n_e, theta, sign):
    """Axis ∥ ŷ. s: E ∥ ŷ ∥ ĉ is the e-wave; every k in the x–z plane is ⟂ ĉ, so its index is
    n_e and r_ss = Fresnel s with n_e. p: E in the x–z plane ⟂ ĉ, ordinary, r_pp = Fresnel p with n_o
    (ε restricted to x–z is n_o² I)."""
    axis = sign * np.array([0.0, 1.0, 0.0])
    for pol, r in (("s", r_s(n1, n_e, theta)), ("p", r_p_uniaxial(n1, n_o ** 2, n_o ** 2, theta))):
        res = solve_special(n1, n_o, n_e, axis, theta, pol)
        assert np.linalg.norm(reflected_field(res) - r * reflected_unit(theta, pol)) <= 1e-12
        assert abs(res.power_fraction[2:].sum() - abs(r) ** 2) <= 1e-12


@settings(max_examples=200, deadline=None)
@given(n1=index, n_o=index, n_e=index, theta=angle, sign=st.sampled_from([1.0, -1.0]))
def test_axis_in_surface_in_plane_of_incidence(n1, n_o, n_e, theta, sign):
    """Axis ∥ x̂. s: D_o ∝ k × x̂ ∥ ŷ, ordinary, r_ss = Fresnel s with n_o. p: extraordinary with
    ε = diag(n_e², n_o², n_o²): r_pp of :func:`r_p_uniaxial` with (n_t, n_n) = (n_e, n_o)."""
    axis = sign * np.array([1.0, 0.0, 0.0])
    for pol, r in (("s", r_s(n1, n_o, theta)), ("p", r_p_uniaxial(n1, n_e ** 2, n_o ** 2, theta))):
        res = solve_special(n1, n_o, n_e, axis, theta, pol)
        assert np.linalg.norm(reflected_field(res) - r * reflected_unit(theta, pol)) <= 1e-12
        assert abs(res.power_fraction[2:].sum() - abs(r) ** 2) <= 1e-12


@settings(max_examples=200, deadline=None)
@given(n1=st.floats(1.0, 1.6), dn=st.tuples(st.floats(0.02, 1.0), st.floats(0.02, 1.0)),
       orientation=st.sampled_from(["normal", "in-plane", "perpendicular"]))
def test_brewster_angles_of_special_orientations(n1, dn, orientation):
    # Zeros of r_pp derived above (Lekner 1991 discusses these Brewster angles; from memory):
    # axis ∥ ẑ: tan²θ_B = n_e²(n_o² − n1²)/(n1²(n_e² − n1²)); axis ∥ x̂: n_o ↔ n_e;
    # axis ∥ ŷ: tanθ_B = n_o/n1 (ordinary p-wave, Born & Wolf §1.5.3).
    n_o, n_e = n1 + dn[0], n1 + dn[1]
    axis, theta_b = {"normal": (Z, brewster_uniaxial(n1, n_o, n_e)),
                     "in-plane": (np.array([1.0, 0.0, 0.0]), brewster_uniaxial(n1, n_e, n_o)),
                     "perpendicular": (np.array([0.0, 1.0, 0.0]), np.arctan(n_o / n1))}[orientation]
    res = solve_special(n1, n_o, n_e, axis, theta_b, "p")
    assert res.power_fraction[2:].sum() <= 1e-24
    # Away from θ_B the p reflectance is not zero (guards against a vacuous pass).
    res_off = solve_special(n1, n_o, n_e, axis, theta_b * 0.5, "p")
    assert res_off.power_fraction[2:].sum() > 1e-10


# ---------------------------------------------------------------------------------------------
# Reciprocity in crystals
# ---------------------------------------------------------------------------------------------

def _frame(normal):
    helper = np.array([1.0, 0.0, 0.0]) if abs(normal[0]) < 0.9 else np.array([0.0, 1.0, 0.0])
    a = helper - helper.dot(normal) * normal
    a /= np.linalg.norm(a)
    return a, np.cross(normal, a)


def _eigen_incident(k_dir, n_o, n_e, axis, normal, mode):
    """Real wave vector and eigenfield of `mode` along `k_dir` (axis = normal for isotropic)."""
    if n_o == n_e:
        axis = normal
    n = n_o if mode == "o" else float(extraordinary_index_rad(np.arccos(np.clip(k_dir @ axis, -1, 1)), n_o, n_e))
    k = n * k_dir
    e, _ = mode_fields(k.astype(complex), np.asarray(n_o), np.asarray(n_e), axis, normal, mode)
    return k, e


def _flux_dir(e, k):
    s = np.real(np.cross(e, np.conj(np.cross(k, e))))
    return s / np.linalg.norm(s)


@settings(max_examples=200, deadline=None)
@given(normal_angles=unit_angles, tilt=st.floats(0.02, 1.3), azim=st.floats(0.0, 2 * np.pi),
       axes=st.tuples(unit_angles, unit_angles), n=st.tuples(*[index] * 4),
       iso_far=st.booleans(), mode_in=st.sampled_from("oe"), j_out=st.sampled_from([0, 1, 2, 3]))
def test_reciprocity_of_power_coefficients(normal_angles, tilt, azim, axes, n, iso_far, mode_in, j_out):
    """Potton (2004): reversing every wave leaves the power coefficients unchanged.

    Incident mode a (wave vector k_a) → outgoing wave b (k_b, power fraction P). Reversed: send
    mode b with wave vector −k_b at the interface; the outgoing wave of mode a with wave vector
    −k_a must carry the same fraction P. Holds for transmission (b in the far medium) and
    reflection (b in the incident medium), crystal–crystal and crystal–isotropic.
    """
    normal = sphere(*normal_angles)
    a1, b1 = _frame(normal)
    k_dir = np.cos(tilt) * normal + np.sin(tilt) * (np.cos(azim) * a1 + np.sin(azim) * b1)
    n_o1, n_e1, n_o2, n_e2 = n
    if iso_far:
        n_e2 = n_o2
    ax1, ax2 = sphere(*axes[0]), sphere(*axes[1])
    k_a, e_a = _eigen_incident(k_dir, n_o1, n_e1, ax1, normal, mode_in)
    assume(abs(_flux_dir(e_a, k_a) @ normal) > 0.1)
    fwd = solve_interface(k_a, e_a, normal, (n_o1, n_e1), ax1, (n_o2, n_e2), ax2)
    assume(not fwd.evanescent[j_out])
    k_b = fwd.wave_vector[j_out].real
    assume(abs(fwd.ray_direction[j_out] @ normal) > 0.1)
    transmitted = j_out < 2
    mode_b = "oe"[j_out % 2]
    medium_b = ((n_o2, n_e2), ax2) if transmitted else ((n_o1, n_e1), ax1)
    (nb_o, nb_e), ax_b = medium_b
    k_rev, e_rev = _eigen_incident(-k_b / np.linalg.norm(k_b), nb_o, nb_e, ax_b, normal, mode_b)
    assert np.allclose(k_rev, -k_b, atol=1e-12)
    if transmitted:
        rev = solve_interface(k_rev, e_rev, normal, (n_o2, n_e2), ax2, (n_o1, n_e1), ax1)
        j_back = "oe".index(mode_in)          # transmitted back into medium 1
    else:
        rev = solve_interface(k_rev, e_rev, normal, (n_o1, n_e1), ax1, (n_o2, n_e2), ax2)
        j_back = 2 + "oe".index(mode_in)      # reflected within medium 1
    assert np.allclose(rev.wave_vector[j_back].real, -k_a, atol=1e-12)
    assert not rev.evanescent[j_back]
    assert abs(rev.power_fraction[j_back] - fwd.power_fraction[j_out]) <= 1e-12


def test_public_extraordinary_index_takes_degrees():
    # Born & Wolf §15.3.3: 1/n(θ)² = cos²θ/n_o² + sin²θ/n_e²; n(0°) = n_o, n(90°) = n_e, and at
    # 45° n = √2 n_o n_e / √(n_o² + n_e²).
    from prismdesign import extraordinary_index

    n_o, n_e = 1.6557, 1.4849
    values = extraordinary_index(np.array([0.0, 45.0, 90.0]), n_o, n_e)
    expected = [n_o, np.sqrt(2.0) * n_o * n_e / np.sqrt(n_o ** 2 + n_e ** 2), n_e]
    np.testing.assert_allclose(values, expected, rtol=1e-15)
