"""Plane-wave eigenmodes of uniaxial (and isotropic) media.

Wave vectors are in units of the vacuum wavenumber k0 = 2π/λ, so a wave vector's length is the
phase index of the wave. With relative permittivity ε = n_o² I + (n_e² − n_o²) ĉĉᵀ (μ = 1) the
two eigenwaves satisfy

* ordinary: |k|² = n_o², D ∝ k × ĉ;
* extraordinary: kᵀ ε k = n_o² n_e², D ∝ k × (k × ĉ);

with E = ε⁻¹ D, H ∝ k × E and energy flowing along S = Re(E × H*) (Born & Wolf, *Principles of
Optics*, 7th ed., §15.3; Yariv & Yeh, *Optical Waves in Crystals*, 1984, §4.2–4.3).

An isotropic medium is the case n_o = n_e. There the axis ĉ is arbitrary, and the interface
solver passes the surface normal in its place, which turns the o/e pair into the s/p pair.
"""
import numpy as np

from .vectors import cross, dot, hermitian_norm, hermitian_normalize, norm, normalize

__all__ = ["DEGENERATE_AXIS_TOLERANCE", "normal_components", "normal_roots", "mode_fields",
           "extraordinary_index", "extraordinary_index_rad", "plane_wave_modes", "PlaneWaveModes"]

#: |k̂ × ĉ| below which the o/e split is taken as degenerate (wave normal along the optic axis)
#: and an explicit basis is used. At this angle the two indices differ by < 1e-14 · |n_e − n_o|.
DEGENERATE_AXIS_TOLERANCE = 1e-7


def normal_components(k_tangential, normal, n_o, n_e, optic_axis):
    """Normal components of the four wave vectors sharing a tangential wave vector.

    Solves |k|² = n_o² (ordinary) and kᵀεk = n_o² n_e² (extraordinary) for k = k_t + q N̂.
    The "forward" root carries energy along +N̂ (S·N̂ > 0) or, when evanescent, decays along +N̂
    (Im q > 0); the "backward" root does the opposite.

    Parameters
    ----------
    k_tangential : ndarray, shape (..., 3)
        Tangential wave vector (units of k0), perpendicular to `normal`.
    normal : ndarray, shape (..., 3)
        Unit surface normal N̂.
    n_o, n_e : ndarray, shape (...)
        Ordinary and extraordinary principal indices.
    optic_axis : ndarray, shape (..., 3)
        Unit optic axis ĉ.

    Returns
    -------
    q : ndarray, complex, shape (..., 4)
        Normal components in the order (o forward, e forward, o backward, e backward).
    evanescent : ndarray, bool, shape (..., 4)
        True where the root is complex (the mode cannot propagate: total internal reflection).

    Notes
    -----
    For the extraordinary wave, with Δ = n_e² − n_o², the quadratic is a q² + 2b q + c₀ = 0 with
    a = n_o² + Δ(ĉ·N̂)², b = Δ(ĉ·k_t)(ĉ·N̂), c₀ = n_o²|k_t|² + Δ(ĉ·k_t)² − n_o²n_e². Since the
    ray direction is ∝ εk, S·N̂ ∝ kᵀεN̂ = b + a q = ±√(b² − a c₀): the + root is the forward one,
    and the principal complex square root makes the same choice for evanescent roots.
    """
    kt2 = dot(k_tangential, k_tangential)
    c_n = dot(optic_axis, normal)
    c_t = dot(optic_axis, k_tangential)
    q_to, q_te, q_ro, q_re, evan_o, evan_e = normal_roots(kt2, c_t, c_n, n_o, n_e)
    q = np.stack(np.broadcast_arrays(q_to, q_te, q_ro, q_re), axis=-1).astype(complex)
    evanescent = np.stack(np.broadcast_arrays(evan_o, evan_e, evan_o, evan_e), axis=-1)
    return q, evanescent


def _signed_root(disc):
    """√disc: real where disc ≥ 0, +i√|disc| (principal branch) where it is negative."""
    root = np.sqrt(np.abs(disc))
    negative = disc < 0
    if negative.any():
        root = np.where(negative, 1j * root, root)
    return root


def normal_roots(kt2, c_t, c_n, n_o, n_e):
    """Array-level core of :func:`normal_components` (no vectors, no stacking).

    Parameters
    ----------
    kt2 : ndarray
        |k_t|².
    c_t, c_n : ndarray
        ĉ·k_t and ĉ·N̂.
    n_o, n_e : ndarray

    Returns
    -------
    q_o_forward, q_e_forward, q_o_backward, q_e_backward : ndarray
        Real unless a root is evanescent.
    evanescent_o, evanescent_e : ndarray of bool
    """
    no2 = n_o * n_o
    delta = n_e * n_e - no2
    a = no2 + delta * c_n * c_n
    b = delta * c_t * c_n
    c0 = no2 * kt2 + delta * c_t * c_t - no2 * n_e * n_e
    disc_e = b * b - a * c0
    disc_o = no2 - kt2
    root_o = _signed_root(disc_o)
    root_e = _signed_root(disc_e)
    return root_o, (root_e - b) / a, -root_o, (-b - root_e) / a, disc_o <= 0, disc_e <= 0


def _fallback_direction(wave_vector, normal):
    """A unit vector ⟂ k for degenerate cases: k × N̂, or k × x̂ (k × ŷ) at normal incidence."""
    alt = cross(wave_vector, normal.astype(wave_vector.dtype))
    small = hermitian_norm(alt) < DEGENERATE_AXIS_TOLERANCE * hermitian_norm(wave_vector)
    if np.any(small):
        ref = np.zeros(wave_vector.shape, dtype=float)
        along_x = np.abs(normalize(wave_vector.real)[..., 0]) > 0.9
        ref[..., 0] = ~along_x
        ref[..., 1] = along_x
        alt = np.where(small[..., None], cross(wave_vector, ref.astype(wave_vector.dtype)), alt)
    return alt


def mode_fields(wave_vector, n_o, n_e, optic_axis, normal, mode):
    """Unit electric field and the magnetic field of an eigenwave with a given wave vector.

    Parameters
    ----------
    wave_vector : ndarray, real or complex, shape (..., 3)
        Wave vector in units of k0 (complex for evanescent waves).
    n_o, n_e : ndarray, shape (...)
        Principal indices of the medium.
    optic_axis : ndarray, shape (..., 3)
        Unit optic axis (the surface normal for isotropic media: gives the s/p basis).
    normal : ndarray, shape (..., 3)
        Unit surface normal, used to build the basis when k is along the optic axis.
    mode : {"o", "e"}
        Which eigenwave.

    Returns
    -------
    e_field : ndarray, shape (..., 3)
        Electric field, unit hermitian norm. D_o ∝ k × ĉ; D_e ∝ k × D_o; E = ε⁻¹D.
    h_field : ndarray, shape (..., 3)
        H = k × E (vacuum impedance and k0 divided out).
    """
    k = wave_vector
    c = optic_axis.astype(k.dtype)
    if np.isrealobj(k):
        # k × ĉ = |k| k̂ × ĝ with ĝ the part of ĉ across k̂: the cross product of two orthogonal
        # unit vectors keeps full precision when k is close to the axis (k × ĉ directly loses
        # ~1e-16/sinθ), so D_o stays ⟂ k and ⟂ ĉ to rounding.
        k_hat = normalize(k)
        g = c - dot(c, k_hat)[..., None] * k_hat
        g = g - dot(g, k_hat)[..., None] * k_hat
        d_o = cross(k_hat, normalize(g)) * (norm(k) * norm(g))[..., None]
    else:
        d_o = cross(k, c)
    degenerate = hermitian_norm(d_o) < DEGENERATE_AXIS_TOLERANCE * hermitian_norm(k)
    if np.any(degenerate):
        d_o = np.where(degenerate[..., None], _fallback_direction(k, normal), d_o)
    # D ⟂ k holds analytically; rounding leaves a component along k of relative size
    # ~1e-16/|k × ĉ| near the optic axis, removed here (bilinear product: k may be complex).
    d_o = d_o - (dot(d_o, k) / dot(k, k))[..., None] * k
    d_o = hermitian_normalize(d_o)
    if mode == "o":
        e_field = d_o
    else:
        d_e = cross(k, d_o)
        no2 = n_o * n_o
        correction = (1.0 / (n_e * n_e) - 1.0 / no2) * dot(c, d_e)
        e_field = hermitian_normalize(d_e / no2[..., None] + correction[..., None] * c)
    return e_field, cross(k, e_field)


def extraordinary_index(angle_to_axis_deg, n_o, n_e):
    """Phase index of the extraordinary wave whose wave normal makes the given angle with the
    optic axis.

    1/n(θ)² = cos²θ/n_o² + sin²θ/n_e² (Born & Wolf, *Principles of Optics*, §15.3.3).

    Parameters
    ----------
    angle_to_axis_deg : array_like
        Angle θ between wave normal and optic axis, degrees.
    n_o, n_e : array_like
        Principal indices. Everything broadcasts.

    Returns
    -------
    ndarray
    """
    return extraordinary_index_rad(np.deg2rad(angle_to_axis_deg), n_o, n_e)


def extraordinary_index_rad(theta_rad, n_o, n_e):
    """:func:`extraordinary_index` with the angle in radians (internal use)."""
    c = np.cos(theta_rad)
    s = np.sin(theta_rad)
    return n_o * n_e / np.sqrt(n_e * n_e * c * c + n_o * n_o * s * s)


class PlaneWaveModes:
    """Both eigenwaves for given wave normals in an unbounded uniaxial medium.

    Attributes (arrays broadcast over the inputs)
    ----------
    index_o, index_e : phase indices of the ordinary and extraordinary wave
    field_o, field_e : unit electric fields, shape (..., 3)
    ray_direction_o, ray_direction_e : unit Poynting directions, shape (..., 3)
    walkoff_rad : angle between wave normal and ray direction of the e-wave (radians)
    """
    __slots__ = ("index_o", "index_e", "field_o", "field_e", "ray_direction_o",
                 "ray_direction_e", "walkoff_rad")

    def __init__(self, **values):
        for key, value in values.items():
            setattr(self, key, value)


def plane_wave_modes(wave_normal, n_o, n_e, optic_axis):
    """Indices, fields, ray directions and walk-off of the two eigenwaves for given wave normals.

    Parameters
    ----------
    wave_normal : array_like, shape (..., 3)
        Unit wave-normal directions.
    n_o, n_e : array_like, shape (...)
        Principal indices.
    optic_axis : array_like, shape (..., 3)
        Unit optic axis.

    Returns
    -------
    PlaneWaveModes
    """
    u = normalize(np.asarray(wave_normal, dtype=float))
    c = normalize(np.asarray(optic_axis, dtype=float))
    n_o = np.asarray(n_o, dtype=float)
    n_e = np.asarray(n_e, dtype=float)
    u, c = np.broadcast_arrays(u, c)
    n_o, n_e = np.broadcast_arrays(n_o, n_e)
    cos_t = np.clip(dot(u, c), -1.0, 1.0)
    index_e = extraordinary_index_rad(np.arccos(cos_t), n_o, n_e)
    results = {}
    for mode, index in (("o", n_o), ("e", index_e)):
        k = u * index[..., None]
        # Field directions do not depend on |k|: both modes are built from the same unit u, so
        # they share one (near the axis, ill-conditioned) o-direction and stay orthogonal.
        e_field, _ = mode_fields(u, n_o, n_e, c, u, mode)
        # Exact ray directions: S ∥ k for the o-wave and S ∥ εk for the e-wave (Born & Wolf
        # §15.2), rather than E × H* computed from fields that are imprecise near the axis.
        ray = u if mode == "o" else normalize(
            k * (n_o * n_o)[..., None] + ((n_e * n_e - n_o * n_o) * dot(c, k))[..., None] * c)
        results[mode] = (e_field, ray)
    ray_e = results["e"][1]
    # arctan2 keeps full relative precision for small walk-off angles (arccos would not).
    walkoff = np.arctan2(norm(cross(u, ray_e)), dot(u, ray_e))
    return PlaneWaveModes(index_o=n_o, index_e=index_e, field_o=results["o"][0],
                          field_e=results["e"][0], ray_direction_o=results["o"][1],
                          ray_direction_e=results["e"][1], walkoff_rad=walkoff)
