"""Incoherent (intensity) treatment of a thick isotropic layer between two (an)isotropic media.

A layer many wavelengths thick (an air gap or cement film of some µm) is a Fabry–Perot etalon
only for ideal light: a perfectly flat, parallel layer lit by a collimated, monochromatic beam.
Real gaps are wedged and not flat to a fraction of a wavelength, and real beams have bandwidth
and divergence, so the phases of the successive reflections inside the layer are spread over
many 2π and their interference averages out. What remains is the sum of their powers
(incoherent multiple reflections): for isotropic media the geometric series
T = T₁T₂ Σ (R₁R₂)^k = T₁T₂/(1 − R₁R₂), R = R₁ + T₁²R₂/(1 − R₁R₂), as used for thick layers
in mixed coherent/incoherent multilayer methods (B. Harbecke, Appl. Phys. B 39, 165 (1986);
C. C. Katsidis and D. I. Siapkas, Appl. Opt. 41, 3978 (2002); both from memory).

Method. The layer is isotropic, so every wave inside it has the tangential wave vector of the
incident wave: all bounces share two directions (forward, backward) and the s and p waves
travel together with the same phase. Within one bounce the layer field is therefore a pure
polarisation state, while different bounces are mutually incoherent. The forward wave is
described by its 2 × 2 coherency matrix J over the layer's (s, p) unit fields, in
power-normalised amplitudes (trace J = forward power). Single-interface solves
(:func:`~prismdesign.optics.interface.solve_interface`, no layer) give the 2 × 2 amplitude
matrices of the faces: a (incident → forward), r_B, t_B (forward → backward, → far medium),
r_A', t_A' (backward → forward, → near medium). One round trip maps J → M J M† with
M = r_A' r_B, so the sum over bounces solves J = a a† + M J M† (a 4 × 4 linear system per ray).
Transmitted power into far mode m: (t_B J t_B†)_mm; reflected: |r_A|²_m (direct) +
(t_A' r_B J r_B† t_A'†)_mm (this coherency-matrix form of the series is our own; it reduces
to the scalar series above when nothing mixes s and p). Mode conversion s ↔ p at anisotropic
faces is included; only the interference between different bounces is dropped. Energy is
conserved exactly (each face is lossless and the layer is not absorbing). For isotropic media M
is diagonal and the result is T₁T₂/(1 − R₁R₂) per s and p.

Approximation in the fields: the tracer carries one pure field per beam. Each outgoing mode
gets the incoherently summed power with the phase (and, once recombined in an isotropic medium,
the s–p phase relation) of the single pass: the first transmitted wave t_B a, including the
layer's propagation phase k₀ q d, or the direct reflection. The true output is partially
polarised when the faces mix s and p; its powers per mode are exact, its phase is that of the
single pass, which is also the coherent film's phase to first order in the face reflectances.
"""
import warnings

import numpy as np

from .interface import InterfaceResult, solve_interface
from .linear4 import solve4_components
from .vectors import dot

__all__ = ["incoherent_rays", "solve_incoherent_layer", "solve_layered_interface"]

# Placeholder optic axis for isotropic media (ignored by the solver when n_o = n_e).
_ANY_AXIS = np.array([0.0, 0.0, 1.0])

# A layer wave with q² < 1e-12 n² (within ~1e-6 of grazing) runs along the layer: its round trip
# phase is negligible, so it is left to the coherent solve, which is exact there, rather than to
# the incoherent sum whose face solves become singular at grazing.
_GRAZING = 1e-12


def incoherent_rays(layer, n_layer, wavelength_um, kappa2):
    """Which rays a layer treats incoherently (see :class:`~prismdesign.optics.ThinLayer`).

    Parameters
    ----------
    layer : ThinLayer
    n_layer : ndarray, shape (m,)
        Layer index at each ray's wavelength.
    wavelength_um : ndarray, shape (m,)
        Vacuum wavelength (µm).
    kappa2 : ndarray, shape (m,)
        Squared length of the tangential wave vector (units of k0²).

    Returns
    -------
    ndarray of bool, shape (m,)
        True where the multiple reflections add in power. Always False where the layer wave is
        evanescent or grazing (tunnelling exists only in amplitude).
    """
    n2 = n_layer * n_layer
    propagating = (n2 - kappa2) > _GRAZING * n2
    if layer.treatment == "coherent":
        return np.zeros_like(propagating)
    if layer.treatment == "incoherent":
        return propagating
    optical_thickness_um = n_layer * np.asarray(layer.thickness_mm) * 1e3
    threshold_um = wavelength_um
    if layer.coherence_length_mm is not None:
        threshold_um = np.maximum(threshold_um, 0.5e3 * layer.coherence_length_mm)
    return propagating & (optical_thickness_um >= threshold_um)


def _power_amplitudes(result):
    """Power-normalised amplitudes e^{i arg c} √(power fraction) of the four outgoing waves.

    Linear in the incident field for a given incident wave vector (the power fraction is
    |c|² times a flux ratio that does not depend on the amplitude), so they compose as matrices.
    """
    return np.exp(1j * np.angle(result.coefficient)) * np.sqrt(result.power_fraction)


def _quadratic_power(t, j):
    """Diagonal of t J t† (powers of the outgoing modes), shapes (m, 2, 2) each."""
    return np.einsum("moj,mjl,mol->mo", t, j, t.conj()).real


def solve_incoherent_layer(wave_vector_in, field_in, normal, indices_1, axis_1, indices_2,
                           axis_2, n_layer, wavelength_um, thickness_mm):
    """Reflect and refract a plane wave at an isotropic layer, adding its bounces in power.

    Parameters
    ----------
    wave_vector_in : ndarray, shape (m, 3)
        Real incident wave vector (units of k0).
    field_in : ndarray, complex, shape (m, 3)
        Incident electric field (any norm; in a crystal, that eigenwave's field).
    normal : ndarray, shape (m, 3)
        Unit surface normal (either sign).
    indices_1, indices_2 : tuple of ndarray, shape (m,)
        (n_o, n_e) of the incident and the far medium.
    axis_1, axis_2 : ndarray, shape (m, 3)
        Unit optic axes (ignored for isotropic media).
    n_layer : ndarray, shape (m,)
        Layer index; the layer wave must propagate on every ray (see :func:`incoherent_rays`).
    wavelength_um : ndarray, shape (m,)
        Vacuum wavelength (µm); with `thickness_mm` it sets the single-pass phase only.
    thickness_mm : float or ndarray, shape (m,)
        Layer thickness (mm).

    Returns
    -------
    InterfaceResult
        Outgoing waves of the two outer media (MODE_ORDER to, te, ro, re). ``power_fraction``
        holds the incoherent sums; ``coefficient`` is e^{iφ}·√(power fraction) with φ the phase
        of the single pass (first transmitted wave, direct reflection); the wave geometry
        (wave vectors, fields, ray directions, evanescence) is exact.
    """
    m = len(n_layer)
    iso = (n_layer, n_layer)
    face_a = solve_interface(wave_vector_in, field_in, normal, indices_1, axis_1, iso, _ANY_AXIS)
    amp_a = _power_amplitudes(face_a)
    forward_k = face_a.wave_vector[:, 0].real
    forward_e = face_a.e_field[:, :2]                     # layer s and p unit fields, (m, 2, 3)

    # Far face, lit from inside by the unit s and p waves (second axis: which one).
    col = np.s_[:, None]
    face_b = solve_interface(forward_k[col], forward_e, normal[col], (n_layer[col], n_layer[col]),
                             _ANY_AXIS, _rows(indices_2, col), axis_2[col])
    amp_b = np.swapaxes(_power_amplitudes(face_b), 1, 2)  # (m, out, in)
    t_b, r_b = amp_b[:, :2], amp_b[:, 2:]
    back_k = face_b.wave_vector[:, 0, 2].real
    back_e = face_b.e_field[:, 0, 2:]

    # Near face, lit from inside by the backward s and p waves.
    face_c = solve_interface(back_k[col], back_e, normal[col], (n_layer[col], n_layer[col]),
                             _ANY_AXIS, _rows(indices_1, col), axis_1[col])
    amp_c = np.swapaxes(_power_amplitudes(face_c), 1, 2)
    t_c, r_c = amp_c[:, :2], amp_c[:, 2:]
    # Express the re-reflected forward waves in the forward basis of the first face: the same
    # wave vector, unit fields that may differ by a sign or phase convention.
    basis = np.einsum("mix,mjx->mij", forward_e.conj(), face_c.e_field[:, 0, 2:])
    round_trip = basis @ r_c @ r_b

    # Σ_k M^k J0 M^k† solves J = J0 + M J M†; row-major vec(M J M†) = (M ⊗ M̄) vec(J).
    a = amp_a[:, :2]
    j0 = a[:, :, None] * a.conj()[:, None, :]
    kron = (round_trip[:, :, None, :, None] * round_trip.conj()[:, None, :, None, :]).reshape(m, 4, 4)
    system = np.eye(4) - kron
    vec_j, stuck = solve4_components(np.moveaxis(system, 0, -1), j0.reshape(m, 4).T)
    coherency = vec_j.T.reshape(m, 2, 2)

    transmitted = _quadratic_power(t_b, coherency)
    back = r_b @ coherency @ np.swapaxes(r_b.conj(), 1, 2)
    reflected = np.abs(amp_a[:, 2:]) ** 2 + _quadratic_power(t_c, back)
    power = np.concatenate([transmitted, reflected], axis=1)
    # The first transmitted wave crosses the layer once: propagation phase k0 q d.
    crossing = np.exp(2j * np.pi * np.asarray(thickness_mm) * 1e3 / wavelength_um
                      * face_a.normal_component[:, 0].real)
    single_pass = np.concatenate([np.einsum("moj,mj->mo", t_b, a) * crossing[:, None],
                                  amp_a[:, 2:]], axis=1)
    singular = (face_a.singular | face_b.singular.any(axis=1) | face_c.singular.any(axis=1)
                | stuck)
    power = np.where(singular[:, None], 0.0, np.maximum(power, 0.0))
    coefficient = np.exp(1j * np.angle(single_pass)) * np.sqrt(power)

    def outer(name):
        """Transmitted modes from the far face, reflected modes from the near face."""
        far, near = getattr(face_b, name)[:, 0, :2], getattr(face_a, name)[:, 2:]
        return np.concatenate([far, near], axis=1)

    return InterfaceResult(coefficient=coefficient, power_fraction=power,
                           evanescent=outer("evanescent"), singular=singular,
                           normal=face_a.normal, normal_component=outer("normal_component"),
                           e_field=outer("e_field"), ray_direction=outer("ray_direction"),
                           _tangential=face_a._tangential)


_RESULT_ARRAYS = ("coefficient", "power_fraction", "evanescent", "singular", "normal",
                  "normal_component", "e_field", "ray_direction", "_tangential")


def _rows(indices, rows):
    """``indices`` indexed by ``rows``; the pair of an optically active piece keeps its
    chirality (same type, see :mod:`.gyrotropic`)."""
    if hasattr(indices, "take_rows"):
        return indices.take_rows(rows)            # biaxial: three indices and the axes
    pair = (indices[0][rows], indices[1][rows])
    chirality = getattr(indices, "chirality", None)
    if chirality is None:
        return pair
    chirality = np.broadcast_to(chirality, np.shape(indices[0]))[rows]
    return type(indices)(*pair, chirality, indices.transverse_ratio)


def solve_layered_interface(wave_vector_in, field_in, normal, indices_1, axis_1, indices_2,
                            axis_2, layer, n_layer, wavelength_um):
    """Solve an interface carrying a :class:`~prismdesign.optics.ThinLayer`, each ray with the
    layer's treatment (coherent film or incoherent sum).

    Parameters
    ----------
    wave_vector_in, field_in : ndarray, shape (m, 3)
    normal : ndarray, shape (3,) or (m, 3)
    indices_1, indices_2 : tuple of ndarray, shape (m,)
    axis_1, axis_2 : ndarray, shape (m, 3)
        As for :func:`~prismdesign.optics.interface.solve_interface`, flat over rays.
    layer : ThinLayer
        Its thickness a scalar or one value per ray, shape (m,) (see
        :meth:`~prismdesign.optics.ThinLayer.flat_over`).
    n_layer, wavelength_um : ndarray, shape (m,)
        Layer index (including the layer's index offset) and vacuum wavelength (µm) of each ray.

    Returns
    -------
    result : InterfaceResult
        Where every ray is coherent this is exactly ``solve_interface(..., layer=...)``.
    incoherent : ndarray of bool, shape (m,)
        Rays whose layer reflections were added in power.
    """
    k = np.asarray(wave_vector_in, dtype=float)
    m = k.shape[0]
    normal = np.broadcast_to(np.asarray(normal, dtype=float), (m, 3))
    n_layer = np.broadcast_to(np.asarray(n_layer, dtype=float), (m,))
    wavelength_um = np.broadcast_to(np.asarray(wavelength_um, dtype=float), (m,))
    k_n = dot(k, normal)
    incoherent = incoherent_rays(layer, n_layer, wavelength_um, dot(k, k) - k_n * k_n)
    # Per-sample layers (perturbed prisms) carry one thickness per ray.
    thickness = np.broadcast_to(np.asarray(layer.thickness_mm, dtype=float), (m,))
    if layer.treatment == "incoherent":
        thin = incoherent & (n_layer * thickness * 1e3 < wavelength_um)
        if np.any(thin):
            first_um = float(thickness[thin][0]) * 1e3
            warnings.warn(f"thin layer of {first_um:g} um treated as incoherent "
                          f"although its optical thickness is below the wavelength "
                          f"({float(wavelength_um[thin][0]):g} um): films this thin keep their "
                          f"interference; 'auto' or 'coherent' is the usual choice",
                          stacklevel=3)
    coherent = ~incoherent
    if not incoherent.any():
        return solve_interface(k, field_in, normal, indices_1, axis_1, indices_2, axis_2,
                               layer=(n_layer, wavelength_um, thickness)), incoherent
    args = (k, np.asarray(field_in), normal, indices_1, axis_1, indices_2, axis_2)

    def rows(mask):
        ind1, ind2 = _rows(indices_1, mask), _rows(indices_2, mask)
        return (k[mask], args[1][mask], normal[mask], ind1, axis_1[mask], ind2, axis_2[mask])

    incoherent_part = solve_incoherent_layer(*rows(incoherent), n_layer[incoherent],
                                             wavelength_um[incoherent], thickness[incoherent])
    if not coherent.any():
        return incoherent_part, incoherent
    coherent_part = solve_interface(*rows(coherent), layer=(n_layer[coherent],
                                                            wavelength_um[coherent],
                                                            thickness[coherent]))
    merged = {}
    for name in _RESULT_ARRAYS:
        a, b = getattr(coherent_part, name), getattr(incoherent_part, name)
        out = np.empty((m,) + a.shape[1:], dtype=np.result_type(a, b))
        out[coherent], out[incoherent] = a, b
        merged[name] = out
    return InterfaceResult(**merged), incoherent
