"""Exact plane-wave solution at a plane interface between two (an)isotropic media.

Given an incident plane wave (wave vector and complex electric field) and the two media, returns
the two transmitted and two reflected eigenwaves: wave vectors (real or evanescent), ray (Poynting)
directions, unit fields E and H, complex amplitude coefficients and power fractions (normal
energy flux). Everything is batched over the leading axes.

Method: the tangential wave vector is conserved; each medium's normal components follow from
:func:`~prismdesign.optics.eigenmodes.normal_components`; continuity of tangential E and H gives
four linear equations for the four unknown amplitudes (Born & Wolf, *Principles of Optics*,
§1.5 and §15.3; Yariv & Yeh, *Optical Waves in Crystals*, §4.7). An optional coherent thin layer
at the interface enters through its transfer matrix (:mod:`.thin_layer`).
"""
import numpy as np

from .eigenmodes import mode_fields, normal_components
from .linear4 import solve4
from .thin_layer import layer_transfer_matrix
from .vectors import cross, dot, normalize

__all__ = ["InterfaceResult", "solve_interface", "MODE_ORDER"]

#: Order of the outgoing waves on the mode axis: transmitted o, transmitted e, reflected o,
#: reflected e. In an isotropic medium "o" is the s-wave and "e" the p-wave.
MODE_ORDER = ("to", "te", "ro", "re")


class InterfaceResult:
    """Outgoing waves of an interface solve; arrays carry a mode axis of length 4 (MODE_ORDER).

    Attributes
    ----------
    wave_vector : complex ndarray, shape (..., 4, 3)
        Wave vectors in units of k0 (complex where evanescent).
    ray_direction : ndarray, shape (..., 4, 3)
        Unit Poynting directions (for evanescent waves the tangential energy direction).
    e_field, h_field : complex ndarray, shape (..., 4, 3)
        Unit electric field (hermitian norm 1) and H = k × E of each wave.
    coefficient : complex ndarray, shape (..., 4)
        Amplitude of each wave's unit field produced by the incident field as given.
    power_fraction : ndarray, shape (..., 4)
        Normal energy flux of each wave over the incident normal flux.
    evanescent : bool ndarray, shape (..., 4)
        True where that mode cannot propagate (total internal reflection of the mode).
    singular : bool ndarray, shape (...)
        True where the boundary equations were singular (grazing incidence); outputs are zero.
    normal : ndarray, shape (..., 3)
        The surface normal actually used, oriented along the incident energy flow.
    """
    __slots__ = ("wave_vector", "ray_direction", "e_field", "h_field", "coefficient",
                 "power_fraction", "evanescent", "singular", "normal")

    def __init__(self, **values):
        for key, value in values.items():
            setattr(self, key, value)

    @property
    def total_internal_reflection(self):
        """True where neither transmitted mode propagates."""
        return self.evanescent[..., 0] & self.evanescent[..., 1]


def _tangential_basis(k_tangential, normal):
    """Unit û₁ along k_t (or any tangential direction at normal incidence) and û₂ = N̂ × û₁."""
    u1 = normalize(k_tangential)
    at_normal = dot(u1, u1) < 0.5
    if np.any(at_normal):
        ref = np.zeros(normal.shape)
        along_x = np.abs(normal[..., 0]) > 0.9
        ref[..., 0] = ~along_x
        ref[..., 1] = along_x
        alt = normalize(ref - dot(ref, normal)[..., None] * normal)
        u1 = np.where(at_normal[..., None], alt, u1)
    return u1, cross(normal, u1)


def _flux(e_field, h_field, normal):
    """Time-averaged normal energy flux Re(E × H*)·N̂ (common factor ½ dropped)."""
    return dot(np.real(cross(e_field, np.conj(h_field))), normal)


def solve_interface(wave_vector_in, field_in, normal, indices_1, axis_1, indices_2, axis_2,
                    layer=None):
    """Reflect and refract a plane wave at a plane interface.

    Parameters
    ----------
    wave_vector_in : ndarray, shape (..., 3)
        Real incident wave vector, units of k0 (length = phase index of the incident wave).
    field_in : ndarray, complex, shape (..., 3)
        Incident electric field (any norm); in a crystal it must be that eigenwave's field.
    normal : ndarray, shape (..., 3)
        Unit surface normal; its sign is irrelevant (oriented along the incident flow here).
    indices_1, indices_2 : tuple of ndarray
        (n_o, n_e) of the incident and the far medium, shape (...). Equal values mean isotropic.
    axis_1, axis_2 : ndarray, shape (..., 3)
        Unit optic axes (ignored for isotropic media).
    layer : tuple, optional
        (n_layer, wavelength_um, thickness_mm) of a coherent isotropic thin layer between the
        media; None for a bare interface.

    Returns
    -------
    InterfaceResult
    """
    k_in = np.asarray(wave_vector_in, dtype=float)
    e_in = np.asarray(field_in, dtype=complex)
    n_o1, n_e1 = (np.asarray(v, dtype=float) for v in indices_1)
    n_o2, n_e2 = (np.asarray(v, dtype=float) for v in indices_2)
    shape = np.broadcast_shapes(k_in.shape[:-1], e_in.shape[:-1], np.shape(normal)[:-1],
                                n_o1.shape, n_o2.shape, np.shape(axis_1)[:-1], np.shape(axis_2)[:-1])
    k_in = np.broadcast_to(k_in, shape + (3,))
    e_in = np.broadcast_to(e_in, shape + (3,))
    n_o1, n_e1, n_o2, n_e2 = (np.broadcast_to(v, shape) for v in (n_o1, n_e1, n_o2, n_e2))

    h_in = cross(k_in, e_in)
    normal = np.broadcast_to(np.asarray(normal, dtype=float), shape + (3,))
    # Orient N̂ along the incident energy flow, so "forward" means "into medium 2".
    flux_in_signed = _flux(e_in, h_in, normal)
    normal = np.where((flux_in_signed < 0)[..., None], -normal, normal)
    flux_in = np.abs(flux_in_signed)

    iso_1 = n_o1 == n_e1
    iso_2 = n_o2 == n_e2
    c1 = np.where(iso_1[..., None], normal, np.broadcast_to(axis_1, shape + (3,)))
    c2 = np.where(iso_2[..., None], normal, np.broadcast_to(axis_2, shape + (3,)))

    k_t = k_in - dot(k_in, normal)[..., None] * normal
    q2, evan2 = normal_components(k_t, normal, n_o2, n_e2, c2)
    q1, evan1 = normal_components(k_t, normal, n_o1, n_e1, c1)
    # Forward roots of medium 2 (transmitted), backward roots of medium 1 (reflected).
    q = np.stack([q2[..., 0], q2[..., 1], q1[..., 2], q1[..., 3]], axis=-1)
    evanescent = np.stack([evan2[..., 0], evan2[..., 1], evan1[..., 2], evan1[..., 3]], axis=-1)
    k_out = k_t[..., None, :] + q[..., None] * normal[..., None, :]

    e_out = np.empty(shape + (4, 3), dtype=complex)
    h_out = np.empty(shape + (4, 3), dtype=complex)
    for j, (mode, n_o, n_e, c) in enumerate((("o", n_o2, n_e2, c2), ("e", n_o2, n_e2, c2),
                                             ("o", n_o1, n_e1, c1), ("e", n_o1, n_e1, c1))):
        e_out[..., j, :], h_out[..., j, :] = mode_fields(k_out[..., j, :], n_o, n_e, c, normal, mode)

    u1, u2 = _tangential_basis(k_t, normal)
    u1m = u1[..., None, :]
    u2m = u2[..., None, :]
    # Columns: tangential field 4-vectors (E·û₁, E·û₂, H·û₁, H·û₂) of each outgoing wave.
    columns = np.stack([dot(e_out, u1m), dot(e_out, u2m), dot(h_out, u1m), dot(h_out, u2m)], axis=-2)
    incident = np.stack([dot(e_in, u1), dot(e_in, u2), dot(h_in, u1), dot(h_in, u2)], axis=-1)
    # Σ t F_t = M (F_in + Σ r F_r)  ->  [F_t | −M F_r] x = M F_in   (M = I without a layer)
    if layer is None:
        matrix = np.concatenate([columns[..., :2], -columns[..., 2:]], axis=-1)
        rhs = incident
    else:
        n_layer, wavelength_um, thickness_mm = layer
        kappa = np.sqrt(dot(k_t, k_t))
        m = layer_transfer_matrix(n_layer, kappa, wavelength_um, thickness_mm)
        matrix = np.concatenate([columns[..., :2], -(m @ columns[..., 2:])], axis=-1)
        rhs = (m @ incident[..., None])[..., 0]
    coefficient, singular = solve4(matrix, rhs)

    flux_out = _flux(e_out, h_out, normal[..., None, :])
    safe_flux_in = np.where(flux_in > 0, flux_in, 1.0)
    power_fraction = np.abs(coefficient) ** 2 * np.abs(flux_out) / safe_flux_in[..., None]
    power_fraction = np.where(evanescent, 0.0, power_fraction)

    ray = np.real(cross(e_out, np.conj(h_out)))
    ray = normalize(ray)
    return InterfaceResult(wave_vector=k_out, ray_direction=ray, e_field=e_out, h_field=h_out,
                           coefficient=coefficient, power_fraction=power_fraction,
                           evanescent=evanescent, singular=singular, normal=normal)
