"""A thin isotropic layer (cement film, air gap, coating) between two media, and its coherent
transfer matrix.

The layer is thin compared with the beam, so ray positions ignore its thickness. How its
multiple reflections add is the layer's `treatment`: "coherent" sums them in amplitude (thin-film
interference, frustrated total internal reflection through an air gap; this module), "incoherent"
sums them in power (:mod:`.incoherent_layer`), and "auto" (the default) chooses per ray and
wavelength, see :class:`ThinLayer`.

For tangential fields F = (E·û₁, E·û₂, H·û₁, H·û₂) in a local frame (û₁ along the tangential
wave vector, û₂ = N̂ × û₁), Maxwell's equations in an isotropic layer of index n read
dF/dz = i k0 A F with A² = q² I, q² = n² − κ² (κ = |k_t|). Hence the layer transfer matrix
F(d) = exp(i k0 A d) F(0) = cos(k0 q d) I + i sin(k0 q d)/q · A, an even function of q: no
root choice, and cos/sin become cosh/sinh for an evanescent gap (Berreman, J. Opt. Soc. Am. 62,
502 (1972); Born & Wolf, *Principles of Optics*, §1.6.2, characteristic matrix).
"""
from dataclasses import dataclass, replace

import numpy as np

__all__ = ["ThinLayer", "LAYER_TREATMENTS", "layer_transfer_matrix"]

#: How the multiple reflections inside a layer add: see :class:`ThinLayer`.
LAYER_TREATMENTS = ("auto", "coherent", "incoherent")


@dataclass(frozen=True)
class ThinLayer:
    """An isotropic layer of given thickness at a surface.

    Parameters
    ----------
    material : object
        Anything with ``indices(wavelength_um, temperature_c=None) -> (n_o, n_e)``; only
        isotropic materials (n_o = n_e) are accepted at trace time.
    thickness_mm : float or ndarray
        Layer thickness in millimetres (e.g. 0.01 for a 10 µm cement film); zero is allowed.
        An array (per-sample thicknesses of perturbed prisms, shape S + (1,)*ray_ndim) broadcasts
        against the rays, as per-sample optic axes and surface normals do.
    treatment : {"auto", "coherent", "incoherent"}
        How the multiple reflections inside the layer add up.

        - "coherent": in amplitude (Airy; Born & Wolf, *Principles of Optics*, §1.6.4 and
          §7.6.1): an ideal plane-parallel film lit by perfectly coherent, collimated light.
          Transmission then oscillates with thickness, angle and wavelength (fringe period
          λ/(2n cos θ) in thickness).
        - "incoherent": in power, T₁T₂/(1 − R₁R₂) for isotropic media (see
          :mod:`~prismdesign.optics.incoherent_layer`): real gaps are wedged and not flat to a
          fraction of a wavelength, and real sources have bandwidth and divergence, so the
          fringes of a layer many wavelengths thick average out. Rays whose wave is evanescent
          in the layer (frustrated total internal reflection) are always treated coherently:
          tunnelling exists only in amplitude. A forced "incoherent" layer thinner than a
          wavelength warns at trace time (such films keep their fringes in practice).
        - "auto" (default): incoherent where the wave propagates in the layer and the layer's
          optical thickness n·d is at least max(λ, L_c/2), L_c the coherence length below;
          coherent otherwise, i.e. for sub-wavelength films (antireflection coatings,
          tunnelling gaps), evanescent waves, and layers whose round trip 2·n·d is shorter
          than the coherence length. The choice uses n·d, not the angle-dependent path
          2·n·d·cos θ, so a scan over angle never switches treatment except where the wave
          turns evanescent (where a thick layer passes nothing either way).
    coherence_length_mm : float, optional
        Coherence length of the light, L_c ≈ λ²/Δλ for a source of bandwidth Δλ (mm); only
        used by "auto". None (default) means short or unknown: every propagating layer at
        least a wavelength thick is incoherent.
    index_offset : float or ndarray
        Added to the material's index at every wavelength (a cement batch or gas whose index
        differs from the data; default 0). An array broadcasts against the rays like
        `thickness_mm`.
    """

    material: object
    thickness_mm: float
    treatment: str = "auto"
    coherence_length_mm: float | None = None
    index_offset: object = 0.0

    def __post_init__(self):
        for name, low in (("thickness_mm", 0.0), ("index_offset", -np.inf)):
            value = getattr(self, name)
            try:
                if isinstance(value, (str, bytes, bool, np.bool_)):
                    raise TypeError
                arr = np.asarray(value, dtype=float)
            except (TypeError, ValueError):
                raise ValueError(f"thin layer {name} must be a number or an array of numbers, "
                                 f"got {value!r}") from None
            if arr.size == 0 or not np.all(np.isfinite(arr) & (arr >= low)):
                allowed = "finite and >= 0" if low == 0.0 else "finite"
                raise ValueError(f"thin layer {name} must be {allowed}, got {value!r}")
            object.__setattr__(self, name, float(arr) if arr.ndim == 0 else arr)
        if not isinstance(self.treatment, str) or self.treatment not in LAYER_TREATMENTS:
            raise ValueError(f"thin layer treatment must be one of {', '.join(LAYER_TREATMENTS)}, "
                             f"got {self.treatment!r}")
        length = self.coherence_length_mm
        if length is not None:
            ok = isinstance(length, (int, float, np.integer, np.floating)) and not isinstance(
                length, (bool, np.bool_))
            if not ok or not (np.isfinite(length) and length > 0):
                raise ValueError(f"thin layer coherence_length_mm must be None or a positive "
                                 f"length in mm, got {length!r}")

    @property
    def per_sample(self):
        """True when thickness or index offset carries sample axes (a perturbed layer)."""
        return np.ndim(self.thickness_mm) > 0 or np.ndim(self.index_offset) > 0

    def flat_over(self, shape):
        """This layer with thickness and index offset broadcast to a bundle `shape` and
        flattened (one value per ray, the tracer's flat order); unchanged when both are scalars.
        """
        if not self.per_sample:
            return self
        flat = lambda v: np.broadcast_to(v, shape).reshape(-1)  # noqa: E731
        return replace(self, thickness_mm=flat(self.thickness_mm),
                       index_offset=flat(self.index_offset))

    @property
    def description(self):
        """One line saying how the layer's multiple reflections are added (for reports)."""
        if self.treatment == "coherent":
            return "coherent film (amplitudes add: Airy)"
        if self.treatment == "incoherent":
            return ("incoherent (powers add: T1 T2 / (1 - R1 R2)); coherent where the wave is "
                    "evanescent")
        length = ("unknown coherence length" if self.coherence_length_mm is None
                  else f"coherence length {self.coherence_length_mm:g} mm")
        return (f"auto ({length}): incoherent where n*d >= max(wavelength, L_c/2) and the wave "
                f"propagates, else coherent")


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
