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
from ._common import (as_output, check_polarisation, check_ray_inputs, lost_codes,
                      prism_sample_shape, summarise_loss, warn_missing)
from .memory import map_rays

__all__ = ["TransmissionResult", "transmission"]

_REFLECTION_LABEL = re.compile(r"\|R(\d+)")


@dataclass(frozen=True, slots=True)
class TransmissionResult:
    """Transmitted and reflected power of a prism for one input polarisation state.

    Attributes
    ----------
    labels : tuple of str
        Transmitted beams: output beams, branches that leave together from an optically
        active piece added coherently into one (label "a+b",
        :mod:`~prismdesign.analysis.beam_groups`).
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
        rays that missed a surface). Of order 1e-12 or less for a well-behaved trace. With an
        optically active piece and polarised input it also holds the interference of the
        reflected halves that stay inside a crystal (these are not added into output beams,
        :mod:`~prismdesign.analysis.beam_groups`): up to the polarisation-dependent Fresnel
        loss, ~3e-4 for a quartz Rochon with linear input.
    flags : dict[str, ndarray of int]
        :class:`~prismdesign.optics.TraceFlag` bits of each transmitted beam, per ray. Powers
        are computed for every ray, also for one that left the clear aperture
        (``OUTSIDE_APERTURE``: the prism is treated as extending beyond it) or missed a surface.
    lost : dict[str, ndarray of int]
        Per ray, why each beam does not exist there (0: it does; the codes of
        :attr:`~prismdesign.analysis.SplitResult.lost`); check ``lost[label] == 0`` before
        trusting a power.
    reason : str
        "" when some beam leaves the prism somewhere; else one line saying that none does and
        where the input went (also a :class:`~prismdesign.analysis.MissingBeamWarning`). Then
        `labels` and `power` are empty and `total` is 0.
    """

    labels: tuple
    power: dict
    total: object
    face_labels: tuple
    reflected_by_face: object
    reflected: dict
    unaccounted: object
    flags: dict
    lost: dict
    reason: str = ""


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
        Rays that leave the clear aperture are still traced; :attr:`TransmissionResult.lost`
        marks them.

    Warns
    -----
    MissingBeamWarning
        When no beam leaves the prism at any point (a prism that transmits nothing is a valid
        answer, throughput 0, so this is a warning, not an error); the text is also in
        :attr:`TransmissionResult.reason`.

    Raises
    ------
    ValueError
        In one line, for a `prism` that is not a :class:`~prismdesign.prisms.Prism`, text,
        booleans, complex or non-finite numbers, wavelengths <= 0, angles outside (−90, 90),
        a zero or malformed Jones vector, inputs (or the prism's optic-axis samples) that do not
        broadcast together, or results that would not fit in
        :data:`~prismdesign.analysis.memory.MEMORY_LIMIT_BYTES`.
    """
    check_prism(prism)
    polarisation, input_power = check_polarisation(polarisation)
    wavelength, in_plane, out_of_plane, offset = check_ray_inputs(
        wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm,
        *(() if isinstance(polarisation, str) else (("polarisation", polarisation.shape, 1),)),
        prism=prism)

    def per_ray(result, traced_prism):
        def fraction(beam):
            p = beam.power.sum(axis=0) if result.incoherent_pair else beam.power
            return p / input_power

        out = {}
        for label, beam in result.beams.items():
            out["beam", label] = fraction(beam)
            out["flags", label] = (beam.flags[0] | beam.flags[1] if result.incoherent_pair
                                   else beam.flags)
        for label, beam in result.reflected.items():
            out["reflected", label] = fraction(beam)
        return out

    flat = map_rays(prism, wavelength, in_plane, out_of_plane, offset, per_ray,
                    what="transmission", polarisation=polarisation,
                    fill=lambda key: 0, keep_reflections=True)
    power = {label: v for (kind, label), v in flat.items() if kind == "beam"}
    flags = {label: v for (kind, label), v in flat.items() if kind == "flags"}
    reflected = {label: v for (kind, label), v in flat.items() if kind == "reflected"}
    shape = np.broadcast_shapes(wavelength.shape, in_plane.shape, out_of_plane.shape,
                                offset.shape[:-1], prism_sample_shape(prism),
                                np.shape(input_power),
                                *(np.shape(v) for v in flat.values()))
    total = sum(power.values(), np.zeros(shape))
    face_labels = tuple(s.label for s in prism.system().surfaces)
    by_face = np.zeros((len(face_labels),) + shape)
    for label, p in reflected.items():
        by_face[int(_REFLECTION_LABEL.search(label).group(1))] += p
    lost = {label: lost_codes(flags[label], p) for label, p in power.items()}
    reason = ""
    if not any(np.any(code == 0) for code in lost.values()):
        reason = _nothing_transmitted(prism, face_labels, by_face, power, lost)
        warn_missing(reason)
    return TransmissionResult(
        labels=tuple(power), power={label: as_output(p) for label, p in power.items()},
        total=as_output(total), face_labels=face_labels, reflected_by_face=by_face,
        reflected={label: as_output(p) for label, p in reflected.items()},
        unaccounted=as_output(1.0 - total - by_face.sum(axis=0)),
        flags={label: as_output(f) for label, f in flags.items()},
        lost={label: as_output(c) for label, c in lost.items()}, reason=reason)


def _nothing_transmitted(prism, face_labels, by_face, power, lost):
    """One line saying that no beam leaves the prism, and where the light went."""
    mean = by_face.reshape(len(face_labels), -1).mean(axis=1)
    order = np.argsort(-mean)
    went = ", ".join(f"{100 * mean[i]:.3g} % at {face_labels[i]!r}" for i in order[:2]
                     if mean[i] > 0)
    beams = "; ".join(summarise_loss(label, code) for label, code in lost.items())
    return (f"transmission: no beam leaves the {prism.kind} prism at any point given"
            + (f" ({beams})" if beams else "")
            + (f"; the input is reflected (on average {went})" if went else ""))
