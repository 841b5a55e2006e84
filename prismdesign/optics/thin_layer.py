"""Coherent treatment of a thin isotropic layer (cement film, air gap) between two media.

The layer is thin compared with the beam, so ray positions ignore its thickness, while its
amplitude and phase effect are exact: multiple reflections inside the layer, thin-film
interference of a cement film, and frustrated total internal reflection through an air gap.

For tangential fields F = (E·û₁, E·û₂, H·û₁, H·û₂) in a local frame (û₁ along the tangential
wave vector, û₂ = N̂ × û₁), Maxwell's equations in an isotropic layer of index n read
dF/dz = i k0 A F with A² = q² I, q² = n² − κ² (κ = |k_t|). Hence the layer transfer matrix
F(d) = exp(i k0 A d) F(0) = cos(k0 q d) I + i sin(k0 q d)/q · A, an even function of q: no
root choice, and cos/sin become cosh/sinh for an evanescent gap (Berreman, J. Opt. Soc. Am. 62,
502 (1972); Born & Wolf, *Principles of Optics*, §1.6.2, characteristic matrix).
"""
from dataclasses import dataclass

import numpy as np

__all__ = ["ThinLayer", "layer_transfer_matrix"]


@dataclass(frozen=True)
class ThinLayer:
    """An isotropic layer of given thickness at a surface.

    Parameters
    ----------
    material : object
        Anything with ``indices(wavelength_um, temperature_c=None) -> (n_o, n_e)``; only
        isotropic materials (n_o = n_e) are accepted at trace time.
    thickness_mm : float
        Layer thickness in millimetres (e.g. 0.01 for a 10 µm cement film); zero is allowed.
    """

    material: object
    thickness_mm: float

    def __post_init__(self):
        t = float(self.thickness_mm)
        if not np.isfinite(t) or t < 0:
            raise ValueError(f"thin layer thickness_mm must be finite and >= 0, got {self.thickness_mm!r}")


def layer_transfer_matrix(n_layer, kappa, wavelength_um, thickness_mm):
    """Transfer matrix of an isotropic layer for tangential fields in the local frame.

    Parameters
    ----------
    n_layer : ndarray, shape (...)
        Layer index.
    kappa : ndarray, shape (...)
        Length of the tangential wave vector (units of k0).
    wavelength_um : ndarray, shape (...)
        Vacuum wavelength in µm.
    thickness_mm : float or ndarray
        Layer thickness in mm.

    Returns
    -------
    ndarray, complex, shape (..., 4, 4)
        M with F(far side) = M F(near side), F = (E₁, E₂, H₁, H₂).
    """
    n2 = np.asarray(n_layer, dtype=float) ** 2
    kappa2 = np.asarray(kappa, dtype=float) ** 2
    q2 = (n2 - kappa2).astype(complex)
    q = np.sqrt(q2)
    # Sub-atomic thicknesses (< 1e-30 mm) count as zero; np.sinc overflows on subnormal input.
    thickness = np.asarray(thickness_mm, dtype=float)
    thickness = np.where(thickness < 1e-30, 0.0, thickness)
    phase_per_q = 2.0 * np.pi * thickness * 1e3 / np.asarray(wavelength_um)
    # An evanescent layer with |Im φ| > 20 passes less than e^-40 (4e-18) of the power. Beyond
    # that the growing exponential swamps double precision in the boundary equations, so such a
    # layer is replaced by one just thick enough for |Im φ| = 20: transmitted power stays below
    # 4e-18 and the reflection is exact to that level.
    growth = np.abs(phase_per_q * q.imag)
    phase_per_q = phase_per_q * np.minimum(1.0, 20.0 / np.where(growth > 0, growth, 1.0))
    phi = phase_per_q * q
    cos_phi = np.cos(phi)
    # sin(phi)/q = phase_per_q · sinc(phi/π), well defined at q = 0.
    sin_over_q = phase_per_q * np.sinc(phi / np.pi)
    shape = np.broadcast(cos_phi, n2).shape
    m = np.zeros(shape + (4, 4), dtype=complex)
    for i in range(4):
        m[..., i, i] = cos_phi
    i_s = 1j * sin_over_q
    m[..., 0, 3] = i_s * (1.0 - kappa2 / n2)
    m[..., 1, 2] = -i_s
    m[..., 2, 1] = i_s * (kappa2 - n2)
    m[..., 3, 0] = i_s * n2
    return m
