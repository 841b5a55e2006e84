"""Biaxial crystals: principal indices with an orientation, their waves and optic axes.

A biaxial crystal has a real symmetric dielectric tensor with three different principal values,

    ε = Σᵢ nᵢ² âᵢ âᵢᵀ,    i = x, y, z,

where âₓ, â_y, â_z are the crystal's principal axes in the global frame (the rows of
``crystal_axes``, a proper rotation). The waves sharing a tangential wave vector at a surface
are the eigenvectors of Berreman's 4 × 4 matrix (D. W. Berreman, J. Opt. Soc. Am. 62, 502
(1972)); :mod:`.gyrotropic` solves that eigenproblem and the boundary equations for any ε (and
chirality ξ = 0 here), so a biaxial medium is solved there, with no second solver.

Mode names: in a biaxial crystal neither wave is "ordinary". The two forward waves are named
by their phase index: ``"f"`` (fast, the lower index) and ``"s"`` (slow, the higher index),
in the tracer's branch labels too (``"fs"``: fast in the first crystal, slow in the second).
Along an optic axis the two indices coincide and the letters only name the basis the solver
happened to pick (as for "o"/"e" along a uniaxial crystal's axis). In the uniaxial limit
(two equal principal indices) "f" is the o wave of a positive crystal (n_e > n_o) and the
e wave of a negative one.

Optic axes (of the wave normals): with n_x < n_y < n_z they lie in the x–z plane at ±V from
z, tan V = (n_z/n_x) √((n_y² − n_x²)/(n_z² − n_y²)) (Born & Wolf, *Principles of Optics*, 7th
ed., §15.3.4, from memory); along them both waves have the index n_y.
"""
import numpy as np

from .vectors import dot

__all__ = ["BiaxialIndices", "crystal_axes_from_vectors", "biaxial_permittivity",
           "biaxial_modes", "BiaxialModes", "optic_axis_angle_deg", "optic_axes",
           "BIAXIAL_MODE_LETTERS"]

#: Branch letters of the two waves in a biaxial crystal, in mode order: fast, slow.
BIAXIAL_MODE_LETTERS = "fs"

#: Largest departure of ``crystal_axes`` from a proper rotation accepted (rounding of user data).
ROTATION_TOLERANCE = 1e-9


class BiaxialIndices(tuple):
    """``(n_x, n_y, n_z)`` of a biaxial medium, carrying the orientation of its principal axes.

    The interface solver reads :attr:`crystal_axes` and solves the medium as a general
    dielectric tensor (:mod:`.gyrotropic`).

    Attributes
    ----------
    crystal_axes : ndarray, shape (..., 3, 3)
        Rows: the crystal's principal axes x, y, z as unit vectors in the global frame.
    """

    def __new__(cls, n_x, n_y, n_z, crystal_axes):
        self = super().__new__(cls, (n_x, n_y, n_z))
        self.crystal_axes = np.asarray(crystal_axes, dtype=float)
        return self

    def take_rows(self, rows):
        """The same indices with every per-ray array indexed by ``rows`` (shape (m, ...))."""
        size = np.broadcast_shapes(*(np.shape(v) for v in self), self.crystal_axes.shape[:-2])
        values = [np.broadcast_to(v, size)[rows] for v in self]
        axes = np.broadcast_to(self.crystal_axes, size + (3, 3))[rows]
        return BiaxialIndices(*values, axes)


def power_orthogonal(e, h, evanescent):
    """Make the two waves of each pair carry independent power through the surface.

    Two propagating eigenwaves sharing a tangential wave vector in a lossless medium carry no
    cross power through the surface (normal flux of a sum = sum of the fluxes). Where their
    roots coincide (along an optic axis, or an isotropic medium written as biaxial) any mix of
    them is also an eigenwave and the numerical eigenvectors need not have that property;
    near such a point it holds only to ~1e-16/gap. One Gram–Schmidt step in the flux form
    f(u, v) = ½(u_E₁ v_H₂* + v_E₁* u_H₂ − u_E₂ v_H₁* − v_E₂* u_H₁) (local frame, N̂ = 3rd axis)
    restores it: the second wave of each propagating pair loses its part along the first.

    Parameters
    ----------
    e, h : complex ndarray, shape (m, 4, 3)
        Local fields in the order of :func:`~prismdesign.optics.gyrotropic.active_normal_modes`
        (forward pair, backward pair).
    evanescent : bool ndarray, shape (m, 4)

    Returns
    -------
    e, h : complex ndarray, shape (m, 4, 3)
        E of unit hermitian norm as on input.
    """
    e, h = e.copy(), h.copy()

    def form(u_e, u_h, v_e, v_h):
        return 0.5 * (u_e[:, 0] * v_h[:, 1].conj() + v_e[:, 0].conj() * u_h[:, 1]
                      - u_e[:, 1] * v_h[:, 0].conj() - v_e[:, 1].conj() * u_h[:, 0])

    for a, b in ((0, 1), (2, 3)):
        both = ~evanescent[:, a] & ~evanescent[:, b]
        if not both.any():
            continue
        ea, ha, eb, hb = e[:, a], h[:, a], e[:, b], h[:, b]
        faa = form(ea, ha, ea, ha).real
        ratio = np.where(both & (faa != 0), form(eb, hb, ea, ha) / np.where(faa != 0, faa, 1.0),
                         0.0)
        eb = eb - ratio[:, None] * ea
        hb = hb - ratio[:, None] * ha
        size = np.sqrt((np.abs(eb) ** 2).sum(axis=-1))[:, None]
        e[:, b], h[:, b] = eb / size, hb / size
    return e, h


def crystal_axes_from_vectors(x_axis, z_axis):
    """Orientation of a biaxial piece from its principal x and z axes (global unit vectors).

    Parameters
    ----------
    x_axis, z_axis : array_like, shape (..., 3)
        Directions of the crystal's x and z principal axes in the global frame; normalised
        here, and they must be perpendicular (to 1e-9).

    Returns
    -------
    ndarray, shape (..., 3, 3)
        Rows x, y = z × x, z: a proper rotation.
    """
    x = np.asarray(x_axis, dtype=float)
    z = np.asarray(z_axis, dtype=float)
    for name, v in (("x_axis", x), ("z_axis", z)):
        if v.ndim == 0 or v.shape[-1] != 3 or not np.all(np.isfinite(v)):
            raise ValueError(f"{name} must be 3-vectors of finite numbers, got {v.tolist()!r}")
        if np.any(np.sqrt(dot(v, v)) == 0):
            raise ValueError(f"{name} must be non-zero 3-vectors, got {v.tolist()!r}")
    x = x / np.sqrt(dot(x, x))[..., None]
    z = z / np.sqrt(dot(z, z))[..., None]
    if np.any(np.abs(dot(x, z)) > ROTATION_TOLERANCE):
        raise ValueError(f"x_axis and z_axis must be perpendicular (|cos| ≤ 1e-9), got cos = "
                         f"{float(np.max(np.abs(dot(x, z)))):.3g}")
    x, z = np.broadcast_arrays(x, z)
    return np.stack([x, np.cross(z, x), z], axis=-2)


def check_crystal_axes(crystal_axes, name="crystal_axes"):
    """``crystal_axes`` as a float array (..., 3, 3) if it is a proper rotation, else ValueError."""
    try:
        r = np.asarray(crystal_axes, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a 3 × 3 rotation (rows: crystal x, y, z axes in the "
                         f"global frame), got {crystal_axes!r}") from None
    if r.ndim < 2 or r.shape[-2:] != (3, 3) or not np.all(np.isfinite(r)):
        raise ValueError(f"{name} must be a 3 × 3 rotation (rows: crystal x, y, z axes in the "
                         f"global frame), got shape {r.shape}")
    error = np.abs(r @ np.swapaxes(r, -1, -2) - np.eye(3)).max()
    det = np.linalg.det(r)
    if error > ROTATION_TOLERANCE or np.any(det < 0):
        raise ValueError(f"{name} must be a proper rotation (orthonormal rows, determinant +1); "
                         f"got |R Rᵀ − I| = {error:.3g}, det = {float(np.min(det)):.6g}")
    return r


def biaxial_permittivity(n_x, n_y, n_z, crystal_axes):
    """ε = Σᵢ nᵢ² âᵢ âᵢᵀ in the global frame.

    Parameters
    ----------
    n_x, n_y, n_z : array_like, shape (...)
        Principal indices.
    crystal_axes : array_like, shape (..., 3, 3)
        Rows: principal axes in the global frame.

    Returns
    -------
    ndarray, shape (..., 3, 3)
    """
    r = np.asarray(crystal_axes, dtype=float)
    n2 = np.stack(np.broadcast_arrays(*(np.asarray(v, dtype=float) ** 2
                                        for v in (n_x, n_y, n_z))), axis=-1)
    return np.einsum("...ki,...k,...kj->...ij", r, n2, r)


class BiaxialModes:
    """The two forward waves along given wave normals in a biaxial crystal.

    Attributes
    ----------
    index_fast, index_slow : ndarray, shape (...)
        Phase indices (index_fast ≤ index_slow).
    field_fast, field_slow : complex ndarray, shape (..., 3)
        Unit electric fields.
    """

    __slots__ = ("index_fast", "index_slow", "field_fast", "field_slow")

    def __init__(self, **values):
        for key, value in values.items():
            setattr(self, key, value)


def biaxial_modes(wave_normal, n_x, n_y, n_z, crystal_axes):
    """Phase indices and fields of the two waves along given wave normals.

    Solves the Berreman eigenproblem of :mod:`.gyrotropic` with the surface normal along the
    wave normal (κ = 0), where the two forward roots are the phase indices.

    Parameters
    ----------
    wave_normal : array_like, shape (..., 3)
    n_x, n_y, n_z : array_like, shape (...)
    crystal_axes : array_like, shape (..., 3, 3)

    Returns
    -------
    BiaxialModes
    """
    from .gyrotropic import _local_frame, active_normal_modes
    u = np.asarray(wave_normal, dtype=float)
    u = u / np.sqrt(dot(u, u))[..., None]
    eps = biaxial_permittivity(n_x, n_y, n_z, crystal_axes)
    shape = np.broadcast_shapes(u.shape[:-1], eps.shape[:-2])
    size = int(np.prod(shape))
    u = np.broadcast_to(u, shape + (3,)).reshape(size, 3)
    eps = np.broadcast_to(eps, shape + (3, 3)).reshape(size, 3, 3)
    u1, u2, _ = _local_frame(u, u)
    frame = np.stack([u1, u2, u], axis=1)                     # rows: local axes
    eps_local = frame @ eps @ np.swapaxes(frame, 1, 2)
    q, e, h, ev, _ = active_normal_modes(np.zeros(size), eps_local, np.zeros((size, 3, 3)),
                                         np.ones(size, bool))
    e, _ = power_orthogonal(e, h, ev)
    e_glob = np.einsum("mwi,mij->mwj", e, frame)
    return BiaxialModes(index_fast=q[:, 0].real.reshape(shape),
                        index_slow=q[:, 1].real.reshape(shape),
                        field_fast=e_glob[:, 0].reshape(shape + (3,)),
                        field_slow=e_glob[:, 1].reshape(shape + (3,)))


def optic_axis_angle_deg(n_x, n_y, n_z):
    """Angle V (degrees) of the optic axes (of wave normals) from the crystal's z axis.

    tan V = (n_z/n_x) √((n_y² − n_x²)/(n_z² − n_y²)) (Born & Wolf §15.3.4), for
    n_x < n_y < n_z; the axes lie in the crystal's x–z plane.

    Parameters
    ----------
    n_x, n_y, n_z : array_like

    Returns
    -------
    ndarray or float
    """
    n_x, n_y, n_z = (np.asarray(v, dtype=float) for v in (n_x, n_y, n_z))
    if not (np.all(n_x < n_y) and np.all(n_y < n_z)):
        raise ValueError(f"optic_axis_angle_deg needs n_x < n_y < n_z, got n_x = {n_x!r}, "
                         f"n_y = {n_y!r}, n_z = {n_z!r}")
    return np.rad2deg(np.arctan((n_z / n_x) * np.sqrt((n_y ** 2 - n_x ** 2)
                                                      / (n_z ** 2 - n_y ** 2))))


def optic_axes(n_x, n_y, n_z, crystal_axes):
    """The two optic axes (wave normals) as global unit vectors, shape (..., 2, 3).

    ±V from the crystal z axis toward ±x (:func:`optic_axis_angle_deg`).
    """
    v = np.deg2rad(optic_axis_angle_deg(n_x, n_y, n_z))[..., None]
    r = np.asarray(crystal_axes, dtype=float)
    x, z = r[..., 0, :], r[..., 2, :]
    return np.stack([np.sin(v) * x + np.cos(v) * z, -np.sin(v) * x + np.cos(v) * z], axis=-2)
