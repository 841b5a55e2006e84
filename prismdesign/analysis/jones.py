"""Per-beam Jones matrices of a prism and the Mueller matrices derived from them.

Bases: the input Jones vector lives in the transverse basis of the input wave normal and the
output in that of each beam's exit wave normal, both x' = normalize(ŷ × d), y' = d × x' (x̂, ŷ
at normal incidence; see :meth:`~prismdesign.optics.Beam.jones`). Matrices are "power
normalised": for an input J_in of unit norm, |M J_in|² is the beam's power fraction.

The Mueller matrix of a (deterministic) Jones matrix J is M = A (J ⊗ J*) A⁻¹ with

    A = [[1, 0, 0, 1], [1, 0, 0, −1], [0, 1, 1, 0], [0, i, −i, 0]],

(Azzam & Bashara, *Ellipsometry and Polarized Light*, 1977, §2.11, from memory), which fixes
the Stokes vector of a field (E_x, E_y) as S = (|E_x|² + |E_y|², |E_x|² − |E_y|²,
2 Re(E_x E_y*), 2 Im(E_x* E_y)).
"""
from dataclasses import dataclass

import numpy as np

from ..prisms.base import check_flag, check_prism
from ._common import check_ray_inputs, prism_sample_shape, shown
from .beam_groups import combine_groups, group_labels
from .memory import check_fits, trace_bytes_per_ray

__all__ = ["JonesResult", "jones_matrices", "mueller_from_jones", "stokes_from_jones"]

# Rows give (S0, S1, S2, S3) from the coherency vector (ExEx*, ExEy*, EyEx*, EyEy*). Fields are
# complex amplitudes of exp(i(k·r − ωt)) throughout prismdesign, so Born & Wolf's
# s3 = 2 a₁a₂ sin δ (Principles of Optics, 7th ed., §1.4.2, eq. 44) is 2 Im(Ex Ey*).
_A = np.array([[1, 0, 0, 1], [1, 0, 0, -1], [0, 1, 1, 0], [0, -1j, 1j, 0]], dtype=complex)
_A_INV = np.linalg.inv(_A)


@dataclass(frozen=True, slots=True)
class JonesResult:
    """Jones and Mueller matrices of each beam.

    Attributes
    ----------
    labels : tuple of str
    jones : dict[str, ndarray, complex, shape (..., 2, 2)]
        Column j is the exit Jones vector for unit input along basis vector j.
    mueller : dict[str, ndarray, shape (..., 4, 4)]
        Real Mueller matrix of each beam (see :func:`mueller_from_jones`).
    include_path_phase : bool
        Whether the propagation phase exp(i 2π L/λ) along each beam is included (needed to
        combine beams coherently; irrelevant for a single beam's Mueller matrix).
    """

    labels: tuple
    jones: dict
    mueller: dict
    include_path_phase: bool


def _complex_array(name, value):
    """Finite complex numbers as an array, or a one-line error naming `name`."""
    if isinstance(value, (str, bytes)):
        raise ValueError(f"{name} must be complex numbers, got text {value!r}")
    try:
        array = np.asarray(value, dtype=complex)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be complex numbers, got {shown(value)}") from None
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{name} must be finite, got {shown(value)}")
    return array


def stokes_from_jones(jones):
    """Stokes vector of a fully polarised field.

    Parameters
    ----------
    jones : array_like, complex, shape (..., 2)

    Returns
    -------
    ndarray, shape (..., 4)
        (|E_x|² + |E_y|², |E_x|² − |E_y|², 2 Re(E_x E_y*), 2 Im(E_x E_y*)): Born & Wolf's
        Stokes parameters (§1.4.2) for amplitudes of exp(i(k·r − ωt)), the convention of
        :func:`mueller_from_jones`; S3 = 2 a_x a_y sin δ with δ = δ_y − δ_x the phases of
        their real fields a cos(ωt − k·r + δ).
    """
    j = _complex_array("jones", jones)
    if j.ndim == 0 or j.shape[-1] != 2:
        raise ValueError(f"jones must be complex 2-vectors on the last axis, got shape {j.shape}")
    ex, ey = j[..., 0], j[..., 1]
    return np.stack([abs(ex) ** 2 + abs(ey) ** 2, abs(ex) ** 2 - abs(ey) ** 2,
                     2 * (ex * ey.conj()).real, 2 * (ex * ey.conj()).imag], axis=-1)


def mueller_from_jones(jones):
    """Mueller matrix M = A (J ⊗ J*) A⁻¹ of a Jones matrix.

    Parameters
    ----------
    jones : array_like, complex, shape (..., 2, 2)

    Returns
    -------
    ndarray, shape (..., 4, 4)
        Real Mueller matrix (Azzam & Bashara, 1977, §2.11, from memory), with the Stokes
        convention of :func:`stokes_from_jones` (Born & Wolf §1.4.2). For any Jones matrix
        the result is a pure Mueller matrix: tr(MᵀM) = 4 M₀₀² (Gil & Bernabeu, *Optica Acta*
        32, 259, 1985).
    """
    j = _complex_array("jones", jones)
    if j.ndim < 2 or j.shape[-2:] != (2, 2):
        raise ValueError(f"jones must be 2x2 matrices on the last two axes, got shape {j.shape}")
    # Kronecker product J ⊗ J*, batched: element [2a + c, 2b + d] = J[a, b] J*[c, d].
    kron = (j[..., :, None, :, None] * j.conj()[..., None, :, None, :]).reshape(j.shape[:-2] + (4, 4))
    return (_A @ kron @ _A_INV).real


def jones_columns(prism, wavelength_um, in_plane, out_of_plane, offset_mm,
                  include_path_phase=False):
    """Jones matrix of every output beam from one trace per input basis state, unchecked.

    For analyses that have checked their inputs already and need the matrices only (not the
    Mueller matrices :func:`jones_matrices` adds).

    Returns
    -------
    labels : tuple of str
    jones : dict[str, complex ndarray, shape (..., 2, 2)]
    """
    # No pruning: a branch must exist in both traces to fill both columns.
    traces = [prism.trace(wavelength_um, in_plane, out_of_plane, offset_mm=offset_mm,
                          polarisation=pol, power_threshold=0.0)
              for pol in ((1.0, 0.0), (0.0, 1.0))]
    # Branches that leave together (optically active pieces) become one output beam; the
    # grouping depends on the geometry only, so the x trace decides it for both columns.
    groups = [g for g in group_labels(traces[0], prism) if all(m in traces[1].beams for m in g)]
    traces = [combine_groups(t, groups) for t in traces]
    labels = tuple(label for label in traces[0].beams if label in traces[1].beams)
    jones = {}
    for label in labels:
        columns = [t.beams[label].jones(include_path_phase=include_path_phase) for t in traces]
        jones[label] = np.stack(columns, axis=-1)
    return labels, jones


def jones_matrices(prism, wavelength_um, in_plane_deg=0.0, out_of_plane_deg=0.0, *,
                   offset_mm=(0.0, 0.0), include_path_phase=False):
    """Jones matrix (and Mueller matrix) of each beam leaving the prism.

    Two coherent traces, with x and with y input polarisation, give the two columns.

    Parameters
    ----------
    prism : Prism
    wavelength_um : array_like
        Vacuum wavelengths (µm).
    in_plane_deg, out_of_plane_deg : array_like
        Input direction (degrees).
    offset_mm : array_like, shape (..., 2)
        Entry point (x, y) on the entrance face (mm).
    include_path_phase : bool
        Include the propagation phase to the exit face (see :meth:`Beam.jones`).

    Returns
    -------
    JonesResult
        Matrices carry the broadcast shape of the inputs before their last two axes, one per
        output beam (branches that leave together, from an optically active piece, are added
        coherently into one beam: :mod:`~prismdesign.analysis.beam_groups`). A branch
        totally reflected has a zero matrix; rays outside the clear aperture are traced as if
        the prism extended beyond it (see :func:`~prismdesign.analysis.split` for `lost`).

    Raises
    ------
    ValueError
        In one line, for bad inputs, inputs that do not broadcast with the prism's optic-axis
        samples, or traces that would not fit in
        :data:`~prismdesign.analysis.memory.MEMORY_LIMIT_BYTES` (refused with the estimate).
    """
    check_prism(prism)
    wavelength_um, in_plane, out_of_plane, offset_mm = check_ray_inputs(
        wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm, prism=prism)
    include_path_phase = check_flag("include_path_phase", include_path_phase)
    rays = int(np.prod(np.broadcast_shapes(wavelength_um.shape, in_plane.shape,
                                           out_of_plane.shape, offset_mm.shape[:-1],
                                           prism_sample_shape(prism))))
    per = trace_bytes_per_ray(prism)
    check_fits("jones_matrices", 2 * rays * per, f"{rays} rays × 2 input polarisations × "
               f"{per} bytes", "ask for fewer points")
    labels, jones = jones_columns(prism, wavelength_um, in_plane, out_of_plane, offset_mm,
                                  include_path_phase)
    mueller = {label: mueller_from_jones(j) for label, j in jones.items()}
    return JonesResult(labels=labels, jones=jones, mueller=mueller,
                       include_path_phase=bool(include_path_phase))
