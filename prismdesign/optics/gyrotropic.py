"""Plane waves and plane interfaces in optically active (gyrotropic) uniaxial crystals.

Constitutive relations (reciprocal, lossless chiral medium; ε₀ = μ₀ = 1, fields as in
:mod:`.interface`, H = k × E in an inactive medium):

    D = εE + iξH,    B = H − iξE,

with ε = n_o² I + (n_e² − n_o²) ĉĉᵀ and the real symmetric chirality tensor
ξ = ξ₁ I + (ξ₃ − ξ₁) ĉĉᵀ (Lindell, Sihvola, Tretyakov & Viitanen, *Electromagnetic Waves in
Chiral and Bi-isotropic Media*, 1994, ch. 1; the Condon form, from memory). To first order in ξ
this is the gyration relation D = εE + iG × E of Born & Wolf (*Principles of Optics*, 7th ed.,
§15.5) and Yariv & Yeh (*Optical Waves in Crystals*, 1984, §4.8) with, for a wave normal ŝ,
G·ŝ = n (tr ξ − ŝᵀξŝ): along the axis G = 2nξ₁, across it G = n(ξ₁ + ξ₃). Unlike the gyration
form, whose G depends on k (spatial dispersion) and makes the energy flux differ from
Re(E × H*), the relation above keeps the Poynting vector as the energy flux and continuity of
tangential E and H as the boundary conditions, so energy is conserved exactly at interfaces.

Along the axis the eigenwaves are circular with indices n_o ± ξ₁, so a plate of thickness t turns
linear polarisation by k₀ξ₁t: ρ = 2πξ₁/λ (:mod:`prismdesign.materials.activity`). ξ₁ > 0 is a
right-handed (dextrorotatory) piece with the phase convention exp(i(k·r − ωt)).

Method: Berreman's first-order form of Maxwell's equations for a stratified medium (D. W.
Berreman, J. Opt. Soc. Am. 62, 502 (1972), from memory). In the local frame (û₁ along the
tangential wave vector, û₂ = N̂ × û₁, N̂) with k = (κ, 0, q), the normal components E₃, H₃ follow
from the tangential ones ψ = (E₁, E₂, H₁, H₂), and q ψ = Δ ψ: the four eigenvalues of the 4 × 4
matrix Δ are the normal wave-vector components of the four waves sharing κ, its eigenvectors
their tangential fields. Waves are sorted forward/backward by the normal energy flux (decay
along +N̂ for evanescent waves) and labelled "o"/"e" as the sheet of the index surface that
continues the linear o/e wave far from the axis: "e" is the higher-index forward wave in a
positive crystal (the lower one in a negative crystal). The four boundary equations are those
of :mod:`.interface`.
"""
import numpy as np

from .biaxial import biaxial_permittivity, power_orthogonal
from .eigenmodes import mode_fields, normal_roots
from .linear4 import solve4
from .thin_layer import layer_transfer_matrix
from .vectors import cross, dot

__all__ = ["chirality_tensor", "berreman_matrix", "active_normal_modes", "gyrotropic_modes",
           "solve_gyrotropic_interface", "activity_crossover_angle_deg", "GyrotropicModes"]

#: |Im q| (relative to max(1, |q|)) below which a root is taken as real (propagating).
EVANESCENT_TOLERANCE = 1e-9


def chirality_tensor(chirality, transverse_ratio, optic_axis):
    """ξ = ξ₁ I + (ξ₃ − ξ₁) ĉĉᵀ of a uniaxial active crystal.

    ξ₃ follows from the ratio r of the rotatory powers across and along the axis:
    ρ⊥/ρ∥ = (ξ₁ + ξ₃)/(2ξ₁), so ξ₃ = (2r − 1) ξ₁ (r = 0: no activity across the axis).

    Parameters
    ----------
    chirality : array_like, shape (...)
        ξ₁ (dimensionless, signed: positive for right-handed).
    transverse_ratio : float
        r = ρ⊥/ρ∥.
    optic_axis : array_like, shape (..., 3)
        Unit optic axis.

    Returns
    -------
    ndarray, shape (..., 3, 3)
    """
    xi1 = np.asarray(chirality, dtype=float)[..., None, None]
    c = np.asarray(optic_axis, dtype=float)
    outer = c[..., :, None] * c[..., None, :]
    return xi1 * (np.eye(3) + (2.0 * transverse_ratio - 2.0) * outer)


def _permittivity(n_o, n_e, optic_axis):
    n_o = np.asarray(n_o, dtype=float)[..., None, None]
    n_e = np.asarray(n_e, dtype=float)[..., None, None]
    c = np.asarray(optic_axis, dtype=float)
    return n_o * n_o * np.eye(3) + (n_e * n_e - n_o * n_o) * (c[..., :, None] * c[..., None, :])


def berreman_matrix(kappa, permittivity, chirality):
    """Berreman's 4 × 4 matrix Δ (q ψ = Δ ψ) and the map T from ψ to the full fields.

    Parameters
    ----------
    kappa : ndarray, shape (m,)
        Tangential wave number (units of k0), along the local û₁.
    permittivity, chirality : ndarray, shape (m, 3, 3)
        ε and ξ in the local frame (û₁, û₂, N̂).

    Returns
    -------
    delta : complex ndarray, shape (m, 4, 4)
    to_fields : complex ndarray, shape (m, 6, 4)
        (E₁, E₂, E₃, H₁, H₂, H₃) = T ψ with ψ = (E₁, E₂, H₁, H₂).
    """
    eps = np.asarray(permittivity, dtype=complex)
    xi = 1j * np.asarray(chirality, dtype=float)            # iξ
    m = eps.shape[0]
    zero = np.zeros(m, complex)
    k = np.asarray(kappa, dtype=float).astype(complex)
    # Normal rows of k × E = H − iξE and k × H = −εE − iξH solved for (E₃, H₃).
    a = np.array([[-xi[:, 2, 2], np.ones(m)], [eps[:, 2, 2], xi[:, 2, 2]]]).transpose(2, 0, 1)
    r = np.array([[xi[:, 2, 0], k + xi[:, 2, 1], zero, zero],
                  [-eps[:, 2, 0], -eps[:, 2, 1], -xi[:, 2, 0], -k - xi[:, 2, 1]]]).transpose(2, 0, 1)
    normal_part = np.linalg.solve(a, r)                      # (m, 2, 4)
    eye = np.eye(4, dtype=complex)
    to_fields = np.empty((m, 6, 4), complex)
    to_fields[:, 0], to_fields[:, 1] = eye[0], eye[1]
    to_fields[:, 2] = normal_part[:, 0]
    to_fields[:, 3], to_fields[:, 4] = eye[2], eye[3]
    to_fields[:, 5] = normal_part[:, 1]
    # Tangential rows as functionals of (E₁, E₂, E₃, H₁, H₂, H₃):
    # q E₁ = H₂ − (iξE)₂ + κE₃;   q E₂ = −H₁ + (iξE)₁;
    # q H₁ = −(εE)₂ − (iξH)₂ + κH₃;   q H₂ = (εE)₁ + (iξH)₁.
    rows = np.zeros((m, 4, 6), complex)
    rows[:, 0, 0:3] = -xi[:, 1, :]
    rows[:, 0, 2] += k
    rows[:, 0, 4] = 1.0
    rows[:, 1, 0:3] = xi[:, 0, :]
    rows[:, 1, 3] = -1.0
    rows[:, 2, 0:3] = -eps[:, 1, :]
    rows[:, 2, 3:6] = -xi[:, 1, :]
    rows[:, 2, 5] += k
    rows[:, 3, 0:3] = eps[:, 0, :]
    rows[:, 3, 3:6] = xi[:, 0, :]
    return rows @ to_fields, to_fields


def active_normal_modes(kappa, permittivity, chirality, positive):
    """The four waves of an active medium sharing a tangential wave number.

    Parameters
    ----------
    kappa : ndarray, shape (m,)
    permittivity, chirality : ndarray, shape (m, 3, 3)
        Local frame.
    positive : ndarray of bool, shape (m,)
        True where n_e ≥ n_o ("e" is then the higher-index sheet).

    Returns
    -------
    q : complex ndarray, shape (m, 4)
        Order (o forward, e forward, o backward, e backward).
    e_field, h_field : complex ndarray, shape (m, 4, 3)
        Local components; E has unit hermitian norm.
    evanescent : bool ndarray, shape (m, 4)
    bad : bool ndarray, shape (m,)
        True where the roots did not split into two forward and two backward waves.
    """
    delta, to_fields = berreman_matrix(kappa, permittivity, chirality)
    q, psi = np.linalg.eig(delta)                             # psi[:, :, j] ↔ q[:, j]
    fields = to_fields @ psi                                  # (m, 6, 4)
    e = np.moveaxis(fields[:, 0:3], 1, 2)                     # (m, 4, 3)
    h = np.moveaxis(fields[:, 3:6], 1, 2)
    size = np.sqrt((np.abs(e) ** 2).sum(axis=-1))
    e, h = e / size[..., None], h / size[..., None]
    flux = (e[..., 0] * h[..., 1].conj() - e[..., 1] * h[..., 0].conj()).real
    evanescent = np.abs(q.imag) > EVANESCENT_TOLERANCE * np.maximum(1.0, np.abs(q))
    forward = np.where(evanescent, q.imag > 0, flux > 0)
    # Larger index ↔ larger Re q (forward) or smaller decay: one score orders both cases.
    score = np.where(forward, 1.0, -1.0) * (q.real - q.imag)
    sheet = np.where(positive[:, None], score, -score)       # "o" first within each pair
    key = np.where(forward, 0.0, 1e6) + sheet
    order = np.argsort(key, axis=1)
    q = np.take_along_axis(q, order, axis=1)
    e = np.take_along_axis(e, order[..., None], axis=1)
    h = np.take_along_axis(h, order[..., None], axis=1)
    evanescent = np.take_along_axis(evanescent, order, axis=1)
    bad = forward.sum(axis=1) != 2
    real = ~evanescent
    q = np.where(real, q.real, q)
    return q, e, h, evanescent, bad


def _local_frame(k_in, normal):
    """û₁, û₂ for incident wave vectors and (oriented) normals, shape (m, 3) each."""
    w = cross(normal, k_in)
    kappa = np.sqrt(dot(w, w))
    at_normal = kappa < 1e-15
    if at_normal.any():
        along_x = np.abs(normal[:, 0]) > 0.9
        ref = np.zeros_like(normal)
        ref[:, 0] = ~along_x
        ref[:, 1] = along_x
        w = np.where(at_normal[:, None], cross(normal, ref), w)
        kappa = np.where(at_normal, 0.0, kappa)
    w = w - dot(w, normal)[:, None] * normal
    u2 = w / np.sqrt(dot(w, w))[:, None]
    u1 = cross(u2, normal)
    return u1, u2, kappa


def _inactive_modes(kappa, frame, n_o, n_e, axis, side):
    """Waves of an inactive medium from the closed forms of :mod:`.eigenmodes` (local frame).

    side: "forward" (transmitted) or "backward" (reflected). Returns q (m, 2), E, H (m, 2, 3),
    evanescent (m, 2) and the unnormalised ray directions (m, 2, 3) from the closed forms S ∥ k
    (o) and S ∥ εk (e), exact near the optic axis; the caller replaces them by Re(E × H*) for
    evanescent waves.
    """
    u1, u2, normal = frame
    iso = n_o == n_e
    axis = np.where(iso[:, None], normal, axis)
    c = np.stack([dot(axis, u1), dot(axis, u2), dot(axis, normal)], axis=-1)
    tf_o, tf_e, tb_o, tb_e, ev_o, ev_e = normal_roots(kappa * kappa, kappa * c[:, 0], c[:, 2],
                                                      n_o, n_e)
    pair = (tf_o, tf_e) if side == "forward" else (tb_o, tb_e)
    q = np.stack([np.asarray(v, complex) for v in pair], axis=-1)
    evanescent = np.stack([ev_o, ev_e], axis=-1)
    n_loc = np.broadcast_to([0.0, 0.0, 1.0], c.shape)
    e_list, h_list, s_list = [], [], []
    for j, mode in enumerate("oe"):
        k = np.stack([kappa.astype(complex), np.zeros_like(q[:, j]), q[:, j]], axis=-1)
        if not evanescent[:, j].any():
            k = k.real
        e_field, h_field = mode_fields(k, n_o, n_e, c, n_loc, mode)
        e_list.append(np.asarray(e_field, complex))
        h_list.append(np.asarray(h_field, complex))
        kr = k.real
        if mode == "o":
            s = kr
        else:
            s = (n_o * n_o)[:, None] * kr + ((n_e * n_e - n_o * n_o) * dot(c, kr))[:, None] * c
        s_list.append(s)
    return (q, np.stack(e_list, axis=1), np.stack(h_list, axis=1), evanescent,
            np.stack(s_list, axis=1))


def _medium_waves(kappa, frame, indices, axis, side):
    """q, E, H, evanescent, ray (local) and bad for one side of the interface."""
    m = kappa.shape[0]
    if getattr(indices, "crystal_axes", None) is not None:
        # A biaxial medium (:mod:`.biaxial`): its full ε in the local frame, no chirality;
        # "o" first within each pair as for a positive crystal, i.e. fast (lower index) first.
        eps = biaxial_permittivity(*indices, indices.crystal_axes)
        local = np.stack(frame, axis=1)                      # rows û₁, û₂, N̂
        eps = local @ eps @ np.swapaxes(local, 1, 2)
        q, e, h, ev, bad = active_normal_modes(kappa, eps, np.zeros((m, 3, 3)),
                                               np.ones(m, bool))
        e, h = power_orthogonal(e, h, ev)
        pick = slice(0, 2) if side == "forward" else slice(2, 4)
        q, e, h, ev = q[:, pick], e[:, pick], h[:, pick], ev[:, pick]
        return q, e, h, ev, np.cross(e, h.conj()).real, bad
    n_o, n_e = (np.asarray(v, dtype=float) for v in indices)
    xi1 = getattr(indices, "chirality", None)
    if xi1 is None:
        q, e, h, ev, s = _inactive_modes(kappa, frame, n_o, n_e, axis, side)
        return q, e, h, ev, s, np.zeros(m, bool)
    u1, u2, normal = frame
    c = np.stack([dot(axis, u1), dot(axis, u2), dot(axis, normal)], axis=-1)
    eps = _permittivity(n_o, n_e, c)
    xi = chirality_tensor(np.broadcast_to(xi1, (m,)), indices.transverse_ratio, c)
    q, e, h, ev, bad = active_normal_modes(kappa, eps, xi, n_e >= n_o)
    pick = slice(0, 2) if side == "forward" else slice(2, 4)
    q, e, h, ev = q[:, pick], e[:, pick], h[:, pick], ev[:, pick]
    s = np.cross(e, h.conj()).real
    return q, e, h, ev, s, bad


def solve_gyrotropic_interface(wave_vector_in, field_in, normal, indices_1, axis_1, indices_2,
                               axis_2, layer=None):
    """Reflect and refract a plane wave where one or both media are optically active.

    Same inputs and outputs as :func:`~prismdesign.optics.interface.solve_interface`, including
    an optional coherent isotropic thin layer ``(n_layer, wavelength_um, thickness_mm)`` (its
    transfer matrix, :func:`~prismdesign.optics.thin_layer.layer_transfer_matrix`, carries the
    tangential fields of medium 1 across); an active medium is one whose indices are an
    :class:`~prismdesign.materials.activity.ActiveIndices` (a piece given a handedness). In an
    active medium the incident field must be that medium's eigenwave; its H = k × E + iξE.

    Returns
    -------
    InterfaceResult
        Mode order (to, te, ro, re); in an active medium "o"/"e" name the elliptical waves that
        continue the linear o/e waves far from the axis (see the module notes). ``h_field`` is
        set from the constitutive relation (not k × E).
    """
    from .interface import InterfaceResult
    k_in = np.asarray(wave_vector_in, dtype=float)
    e_in = np.asarray(field_in, dtype=complex)
    normal = np.asarray(normal, dtype=float)
    axis_1 = np.asarray(axis_1, dtype=float)
    axis_2 = np.asarray(axis_2, dtype=float)
    arrays_1 = [np.asarray(v, dtype=float) for v in indices_1]
    arrays_2 = [np.asarray(v, dtype=float) for v in indices_2]
    xi_1 = getattr(indices_1, "chirality", None)
    xi_2 = getattr(indices_2, "chirality", None)
    extra = [np.shape(x) for x in (xi_1, xi_2) if x is not None]
    extra += [np.shape(i.crystal_axes)[:-2] for i in (indices_1, indices_2)
              if getattr(i, "crystal_axes", None) is not None]
    layer_arrays = () if layer is None else tuple(np.asarray(v, dtype=float) for v in layer)
    extra += [v.shape for v in layer_arrays]
    shape = np.broadcast_shapes(k_in.shape[:-1], e_in.shape[:-1], normal.shape[:-1],
                                axis_1.shape[:-1], axis_2.shape[:-1],
                                *(v.shape for v in arrays_1 + arrays_2), *extra)
    size = int(np.prod(shape))

    def vec(a, dtype=float):
        return np.broadcast_to(a, shape + (3,)).reshape(size, 3).astype(dtype)

    def sca(a):
        return np.broadcast_to(a, shape).reshape(size).astype(float)

    def flat_indices(original, arrays, xi):
        pair = tuple(sca(v) for v in arrays)
        if getattr(original, "crystal_axes", None) is not None:
            axes = np.broadcast_to(original.crystal_axes, shape + (3, 3)).reshape(size, 3, 3)
            return type(original)(*pair, axes)
        if xi is None:
            return pair
        flat = type(original)(*pair, sca(xi), original.transverse_ratio)
        return flat

    k_in, e_in, normal = vec(k_in), vec(e_in, complex), vec(normal)
    axis_1, axis_2 = vec(axis_1), vec(axis_2)
    ind_1 = flat_indices(indices_1, arrays_1, xi_1)
    ind_2 = flat_indices(indices_2, arrays_2, xi_2)
    # Incident H from medium 1's constitutive relation.
    h_in = cross(k_in.astype(complex), e_in)
    if xi_1 is not None:
        xi_t = chirality_tensor(ind_1.chirality, ind_1.transverse_ratio, axis_1)
        h_in = h_in + 1j * np.einsum("mij,mj->mi", xi_t, e_in)
    flux_vec = np.cross(e_in, h_in.conj()).real
    flux_sign = dot(flux_vec, normal)
    normal = normal * np.where(flux_sign < 0, -1.0, 1.0)[:, None]
    flux_in = np.abs(flux_sign)
    u1, u2, kappa = _local_frame(k_in, normal)
    frame = (u1, u2, normal)

    def local(v):
        return np.stack([dot(v, u1), dot(v, u2), dot(v, normal)], axis=-1)

    q2, e2, h2, ev2, s2, bad2 = _medium_waves(kappa, frame, ind_2, axis_2, "forward")
    q1, e1, h1, ev1, s1, bad1 = _medium_waves(kappa, frame, ind_1, axis_1, "backward")
    q = np.concatenate([q2, q1], axis=1)
    e = np.concatenate([e2, e1], axis=1)
    h = np.concatenate([h2, h1], axis=1)
    evanescent = np.concatenate([ev2, ev1], axis=1)
    ray = np.concatenate([s2, s1], axis=1)
    e_loc, h_loc = local(e_in), local(h_in)
    rhs = np.stack([e_loc[:, 0], e_loc[:, 1], h_loc[:, 0], h_loc[:, 1]], axis=-1)
    columns = np.stack([e[..., 0], e[..., 1], h[..., 0], h[..., 1]], axis=1)   # (m, 4 rows, 4)
    columns[:, :, 2:] *= -1.0
    if layer is not None:
        matrix = layer_transfer_matrix(sca(layer_arrays[0]), kappa, sca(layer_arrays[1]),
                                       sca(layer_arrays[2]))
        columns[:, :, 2:] = matrix @ columns[:, :, 2:]
        rhs = np.einsum("mij,mj->mi", matrix, rhs)
    coefficient, singular = solve4(columns, rhs)
    singular = singular | bad1 | bad2
    coefficient = np.where(singular[:, None], 0.0, coefficient)
    flux = (e[..., 0] * h[..., 1].conj() - e[..., 1] * h[..., 0].conj()).real
    power = np.abs(coefficient) ** 2 * np.abs(flux)
    power_fraction = np.where(evanescent, 0.0, power / np.where(flux_in > 0, flux_in, 1.0)[:, None])
    # Evanescent waves carry their (tangential) flow Re(E × H*).
    s_eva = np.cross(e, h.conj()).real
    ray = np.where(evanescent[..., None], s_eva, ray)
    ray = ray / np.sqrt((ray * ray).sum(axis=-1))[..., None]

    def to_global(v):
        return (v[..., 0:1] * u1[:, None] + v[..., 1:2] * u2[:, None]
                + v[..., 2:3] * normal[:, None])

    result = InterfaceResult(
        coefficient=coefficient.reshape(shape + (4,)),
        power_fraction=power_fraction.reshape(shape + (4,)),
        evanescent=evanescent.reshape(shape + (4,)), singular=singular.reshape(shape),
        normal=normal.reshape(shape + (3,)), normal_component=q.reshape(shape + (4,)),
        e_field=to_global(e).reshape(shape + (4, 3)),
        ray_direction=to_global(ray).reshape(shape + (4, 3)),
        _tangential=(kappa[:, None] * u1).reshape(shape + (3,)))
    result._h_field = to_global(h).reshape(shape + (4, 3))
    return result


class GyrotropicModes:
    """The two forward waves along given wave normals in an active uniaxial crystal.

    Attributes
    ----------
    index_o, index_e : ndarray, shape (...)
        Phase indices of the waves continuing the o and e sheets.
    field_o, field_e : complex ndarray, shape (..., 3)
        Unit electric fields.
    ellipticity_o, ellipticity_e : ndarray, shape (...)
        Signed ratio of minor to major axis of the transverse field (±1 circular, 0 linear);
        positive where the field turns counter-clockwise seen facing the light (E ∝ x̂' + i ŷ').
    """

    __slots__ = ("index_o", "index_e", "field_o", "field_e", "ellipticity_o", "ellipticity_e")

    def __init__(self, **values):
        for key, value in values.items():
            setattr(self, key, value)


def _ellipticity(field, wave_normal):
    """Signed minor/major axis ratio of the field across the wave normal (Stokes S3/S0)."""
    from .vectors import transverse_basis
    x_p, y_p = transverse_basis(wave_normal)
    jx, jy = dot(field, x_p), dot(field, y_p)
    s0 = np.abs(jx) ** 2 + np.abs(jy) ** 2
    s3 = 2.0 * (jx * jy.conj()).imag
    chi = 0.5 * np.arcsin(np.clip(-s3 / s0, -1.0, 1.0))
    return np.tan(chi)


def gyrotropic_modes(wave_normal, n_o, n_e, optic_axis, chirality, transverse_ratio=0.0):
    """Indices, fields and ellipticities of the two waves along given wave normals.

    Solves the interface eigenproblem with the surface normal along the wave normal (κ = 0),
    where the forward roots are the two phase indices.

    Parameters
    ----------
    wave_normal : array_like, shape (..., 3)
    n_o, n_e : array_like, shape (...)
    optic_axis : array_like, shape (..., 3)
    chirality : array_like, shape (...)
        ξ₁ (signed).
    transverse_ratio : float

    Returns
    -------
    GyrotropicModes
    """
    u = np.asarray(wave_normal, dtype=float)
    u = u / np.sqrt(dot(u, u))[..., None]
    shape = np.broadcast_shapes(u.shape[:-1], np.shape(optic_axis)[:-1], np.shape(n_o),
                                np.shape(n_e), np.shape(chirality))
    size = int(np.prod(shape))
    u = np.broadcast_to(u, shape + (3,)).reshape(size, 3)
    c = np.broadcast_to(np.asarray(optic_axis, float), shape + (3,)).reshape(size, 3)
    n_o = np.broadcast_to(np.asarray(n_o, float), shape).reshape(size)
    n_e = np.broadcast_to(np.asarray(n_e, float), shape).reshape(size)
    xi1 = np.broadcast_to(np.asarray(chirality, float), shape).reshape(size)
    u1, u2, _ = _local_frame(u, u)
    c_loc = np.stack([dot(c, u1), dot(c, u2), dot(c, u)], axis=-1)
    q, e, _, _, _ = active_normal_modes(np.zeros(size), _permittivity(n_o, n_e, c_loc),
                                        chirality_tensor(xi1, transverse_ratio, c_loc),
                                        n_e >= n_o)
    e_glob = e[..., 0:1] * u1[:, None] + e[..., 1:2] * u2[:, None] + e[..., 2:3] * u[:, None]
    ell = _ellipticity(e_glob, u[:, None, :])
    return GyrotropicModes(index_o=q[:, 0].real.reshape(shape), index_e=q[:, 1].real.reshape(shape),
                           field_o=e_glob[:, 0].reshape(shape + (3,)),
                           field_e=e_glob[:, 1].reshape(shape + (3,)),
                           ellipticity_o=ell[:, 0].reshape(shape),
                           ellipticity_e=ell[:, 1].reshape(shape))


def activity_crossover_angle_deg(n_o, n_e, chirality):
    """Angle from the optic axis where circular and linear birefringence are equal.

    With the transverse activity neglected, the waves along a normal at θ from the axis obey,
    to first order, (n² − n_o²)(n² − n_e(θ)²) = G(θ)² with G(θ) = 2n_oξ₁cos²θ (Born & Wolf §15.5;
    Yariv & Yeh §4.8) and n_e(θ)² − n_o² = n_o²(n_e² − n_o²)sin²θ/(n_e²cos²θ + n_o²sin²θ). The
    wave ellipticity angle χ obeys tan 2χ = 2G/|n_e(θ)² − n_o²|; "comparable" means
    tan 2χ = 1 (χ = 22.5°). With t = tan²θ, Δ = |n_e² − n_o²|, g = 2n_o|ξ₁| this is the quadratic
    n_o²Δ t² + n_o²(Δ − 2g) t − 2g n_e² = 0, and for small angles
    θ ≈ √(2|ξ₁|/|n_e − n_o|) = √(Δn_circular/Δn_linear).

    Parameters
    ----------
    n_o, n_e : array_like
    chirality : array_like
        ξ₁.

    Returns
    -------
    ndarray
        θ in degrees.
    """
    n_o = np.asarray(n_o, dtype=float)
    n_e = np.asarray(n_e, dtype=float)
    g = 2.0 * n_o * np.abs(np.asarray(chirality, dtype=float))
    delta = np.abs(n_e * n_e - n_o * n_o)
    a = n_o * n_o * delta
    b = n_o * n_o * (delta - 2.0 * g)
    c = -2.0 * g * n_e * n_e
    t = (-b + np.sqrt(b * b - 4.0 * a * c)) / (2.0 * a)
    return np.rad2deg(np.arctan(np.sqrt(t)))
