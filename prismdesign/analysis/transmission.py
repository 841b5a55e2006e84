"""Transmitted power of each beam and where the rest goes (reflection at each face).

Everything comes from the exact trace: Fresnel losses at every face follow from the interface
solver (for crystals, the exact anisotropic boundary conditions), an antireflection coating or a
cement film enters as the prism was built (`coated=...` and interface layers of the builders),
and a Glan-type prism's leakage through its gap is simply the power the trace finds in the weak
branch. Powers are fractions of the input power.

Bookkeeping: at every surface each incident branch splits into transmitted and reflected waves
whose powers add up to the incident power (energy conservation for lossless media; Born & Wolf,
*Principles of Optics*, 7th ed., §1.5.3). With the first reflection of every branch at every
surface recorded, transmitted plus reflected power therefore equals the input, except for
branches dropped below the tracer's power threshold and rays that miss a surface.
"""
import re
from dataclasses import dataclass

import numpy as np

from ..prisms.base import check_prism
from ._common import as_output, check_polarisation, check_ray_inputs

__all__ = ["TransmissionResult", "transmission"]

_REFLECTION_LABEL = re.compile(r"\|R(\d+)")


@dataclass(frozen=True, slots=True)
class TransmissionResult:
    """Transmitted and reflected power of a prism for one input polarisation state.

    Attributes
    ----------
    labels : tuple of str
        Transmitted beams.
    power : dict[str, ndarray]
        Transmitted power of each beam (fraction of the input power).
    total : ndarray
        Sum of `power` over all beams: the throughput.
    face_labels : tuple of str
        Label of each surface of the prism, entrance face first.
    reflected_by_face : ndarray, shape (n_faces, ...)
        Power reflected at each surface (first reflections of every branch, including totally
        reflected rejected beams), fraction of the input power.
    reflected : dict[str, ndarray]
        Power of each reflected branch, by its tracer label (``"<modes>|R<i><mode>"``).
    unaccounted : ndarray
        1 − total − Σ reflected_by_face: branches pruned below the tracer's power threshold (and
        rays that missed a surface). Of order 1e-12 or less for a well-behaved trace.
    flags : dict[str, ndarray of int]
        :class:`~prismdesign.optics.TraceFlag` bits of each transmitted beam, per ray. Powers
        are computed for every ray, also for one that left the clear aperture
        (``OUTSIDE_APERTURE``: the prism is treated as extending beyond it) or missed a surface:
        check ``flags[label] == 0`` before trusting a value.
    """

    labels: tuple
    power: dict
    total: object
    face_labels: tuple
    reflected_by_face: object
    reflected: dict
    unaccounted: object
    flags: dict


def transmission(prism, wavelength_um, in_plane_deg=0.0, out_of_plane_deg=0.0, *,
                 offset_mm=(0.0, 0.0), polarisation="unpolarised"):
    """Power of each transmitted beam and the power reflected at each face.

    Parameters
    ----------
    prism : Prism
        As built (coatings and interface layers are part of the prism).
    wavelength_um : array_like
        Vacuum wavelengths (µm).
    in_plane_deg, out_of_plane_deg : array_like
        Input direction (degrees).
    offset_mm : array_like, shape (..., 2)
        Entry point (x, y) on the entrance face (mm).
    polarisation : array_like, shape (..., 2), or "unpolarised"
        Input Jones vector in the input's transverse basis (x̂, ŷ at normal incidence); its norm
        does not matter (powers are fractions of the input).

    Returns
    -------
    TransmissionResult
        Rays that leave the clear aperture are still traced; :attr:`TransmissionResult.flags`
        marks them.

    Raises
    ------
    ValueError
        In one line, for a `prism` that is not a :class:`~prismdesign.prisms.Prism`, text,
        booleans, complex or non-finite numbers, wavelengths <= 0, angles outside (−90, 90),
        a zero or malformed Jones vector, or inputs that do not broadcast together.
    """
    check_prism(prism)
    polarisation, input_power = check_polarisation(polarisation)
    wavelength, in_plane, out_of_plane, offset = check_ray_inputs(
        wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm,
        *(() if isinstance(polarisation, str) else (("polarisation", polarisation.shape, 1),)))
    result = prism.trace(wavelength, in_plane, out_of_plane, offset_mm=offset,
                         polarisation=polarisation, keep_reflections=True)
    pair = result.incoherent_pair

    def fraction(beam):
        p = beam.power.sum(axis=0) if pair else beam.power
        return p / input_power

    power = {label: fraction(beam) for label, beam in result.beams.items()}
    shape = np.shape(next(iter(power.values()))) if power else ()
    total = sum(power.values(), np.zeros(shape))
    face_labels = tuple(s.label for s in prism.system().surfaces)
    reflected = {label: fraction(beam) for label, beam in result.reflected.items()}
    by_face = np.zeros((len(face_labels),) + shape)
    for label, p in reflected.items():
        by_face[int(_REFLECTION_LABEL.search(label).group(1))] += p
    flags = {label: as_output(beam.flags[0] | beam.flags[1] if pair else beam.flags)
             for label, beam in result.beams.items()}
    return TransmissionResult(
        labels=tuple(power), power={label: as_output(p) for label, p in power.items()},
        total=as_output(total), face_labels=face_labels, reflected_by_face=by_face,
        reflected={label: as_output(p) for label, p in reflected.items()},
        unaccounted=as_output(1.0 - total - by_face.sum(axis=0)), flags=flags)
