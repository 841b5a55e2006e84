"""Deviation of each beam, the split angle between the two main beams, and its asymmetry.

Angles follow the frame of the design notes: z is the normal of the entrance face, x lies in the
principal section. A beam's in-plane deviation is atan2(d_x, d_z) (positive toward +x), its
out-of-plane deviation asin(d_y), both measured from z (not from the input direction). The split
angle is the exact angle between two exit ray directions, atan2(|a × b|, a · b), which stays
accurate for tiny and for large angles alike.
"""
from dataclasses import dataclass

import numpy as np

from ..optics.vectors import cross, dot, norm
from ..prisms.base import check_prism
from ._common import (as_output, check_main_labels, check_numbers, check_ray_inputs,
                      check_shapes, rank_beams, shown, strip_pair)

__all__ = ["SplitResult", "split", "split_angle_deg", "wollaston_small_angle_split_deg"]


@dataclass(frozen=True, slots=True)
class SplitResult:
    """Deviations of every beam and the split between the two main beams.

    All arrays have the broadcast shape of (wavelength, in-plane angle, out-of-plane angle,
    offset) given to :func:`split`; scalar input gives numpy scalars.

    Attributes
    ----------
    labels : tuple of str
        Every transmitted beam, e.g. ``("oe", "eo")``.
    in_plane_deg, out_of_plane_deg : dict[str, ndarray]
        Deviation of each beam's exit ray from z (degrees).
    direction : dict[str, ndarray, shape (..., 3)]
        Unit exit ray direction of each beam.
    power : dict[str, ndarray]
        Power of each beam for unpolarised input, as a fraction of the input power.
    flags : dict[str, ndarray of int]
        :class:`~prismdesign.optics.TraceFlag` bits of each beam, per ray. Deviations and
        powers are computed for every ray, also for one that left the clear aperture
        (``OUTSIDE_APERTURE``, the prism is treated as extending beyond it), was totally
        reflected or missed a surface: check ``flags[label] == 0`` before trusting a value.
    main_labels : tuple of str
        The two strongest beams (largest unpolarised power summed over all rays, each with at
        least 1 % of the strongest's), ordered by in-plane deviation (most negative first).
        Fewer than two when fewer beams carry power (a polariser at normal incidence).
    split_deg : ndarray or None
        Exact angle between the two main beams (degrees); None with fewer than two main beams.
    bisector_in_plane_deg : ndarray or None
        In-plane angle from z of the bisector of the two main directions. For beams in the
        principal section it equals the mean of their in-plane deviations exactly.
    asymmetry_deg : ndarray or None
        `bisector_in_plane_deg` minus the input's in-plane angle: how far the split is off-centre
        about the input direction (≈ 0 for a symmetric Wollaston at normal incidence).
    """

    labels: tuple
    in_plane_deg: dict
    out_of_plane_deg: dict
    direction: dict
    power: dict
    flags: dict
    main_labels: tuple
    split_deg: object
    bisector_in_plane_deg: object
    asymmetry_deg: object


def split_angle_deg(direction_a, direction_b):
    """Exact angle between two directions, atan2(|a × b|, a · b), in degrees.

    Unlike arccos of the dot product, this keeps full relative precision for nearly parallel
    directions (Kahan's recommendation for angles between vectors; common practice, no source).

    Parameters
    ----------
    direction_a, direction_b : array_like, shape (..., 3)
        Directions (any non-zero length); broadcast against each other.

    Returns
    -------
    float or ndarray, shape (...)
        Angle in degrees, in [0, 180].
    """
    vectors = []
    for name, value in (("direction_a", direction_a), ("direction_b", direction_b)):
        v = check_numbers(name, value, "non-zero 3-vectors (finite numbers, 3 on the last axis)")
        if v.ndim == 0 or v.shape[-1] != 3:
            raise ValueError(f"{name} must be 3-vectors on the last axis, got shape {v.shape}")
        if np.any(norm(v) == 0):
            raise ValueError(f"{name} must be non-zero 3-vectors (a zero vector has no "
                             f"direction), got {shown(value)}")
        vectors.append(v)
    a, b = vectors
    check_shapes(("direction_a", a.shape, 1), ("direction_b", b.shape, 1))
    return as_output(angle_between_deg(a, b))


def angle_between_deg(a, b):
    """atan2(|a × b|, a · b) in degrees, unchecked: for directions computed by the analyses."""
    return np.rad2deg(np.arctan2(norm(cross(a, b)), dot(a, b)))


def wollaston_small_angle_split_deg(n_o, n_e, wedge_angle_deg):
    """Common small-angle estimate of a symmetric Wollaston prism's split: 2|n_o − n_e| tan θ.

    This is the textbook thin-prism formula (e.g. Hecht, *Optics*, 4th ed., 2002, §8.4.3, from
    memory). It ignores the surrounding index, the sines in Snell's law and the second-order
    terms in the birefringence; :func:`split` gives the exact value.

    Parameters
    ----------
    n_o, n_e : array_like
        Ordinary and extraordinary indices at the wavelength of interest (positive).
    wedge_angle_deg : array_like
        Wedge angle θ (degrees).

    Returns
    -------
    float or ndarray
        Split angle in degrees.
    """
    n_o = check_numbers("n_o", n_o, "positive, finite refractive indices", lambda n: n > 0)
    n_e = check_numbers("n_e", n_e, "positive, finite refractive indices", lambda n: n > 0)
    wedge = check_numbers("wedge_angle_deg", wedge_angle_deg,
                          "an angle in degrees between 0 and 90 (exclusive)",
                          lambda t: (t > 0) & (t < 90))
    check_shapes(("n_o", n_o.shape), ("n_e", n_e.shape), ("wedge_angle_deg", wedge.shape))
    return as_output(np.rad2deg(2.0 * np.abs(n_o - n_e) * np.tan(np.deg2rad(wedge))))


def split(prism, wavelength_um, in_plane_deg=0.0, out_of_plane_deg=0.0, *, offset_mm=(0.0, 0.0),
          main_labels=None):
    """Deviation of each beam and the exact split between the two main beams.

    Parameters
    ----------
    prism : Prism
        Any prism of the catalogue (or a free stack).
    wavelength_um : array_like
        Vacuum wavelengths (µm).
    in_plane_deg, out_of_plane_deg : array_like
        Input direction (degrees, see :func:`~prismdesign.optics.direction_from_angles`).
    offset_mm : array_like, shape (..., 2)
        Entry point (x, y) on the entrance face (mm).
    main_labels : pair of str, optional
        The two beams whose split is wanted (e.g. ``("eooe", "oeeo")`` of a double Wollaston);
        default the two strongest.

    Returns
    -------
    SplitResult
        Arrays broadcast over wavelength, angles and offsets, e.g. ``wavelength_um[:, None]``
        with ``in_plane_deg[None, :]`` gives (n_wavelengths, n_angles).

    Raises
    ------
    ValueError
        In one line, for a `prism` that is not a :class:`~prismdesign.prisms.Prism`, text,
        booleans, complex or non-finite numbers, wavelengths <= 0, angles outside (−90, 90),
        inputs that do not broadcast together, or unknown `main_labels`.

    Notes
    -----
    The trace is unpolarised so that the main beams are chosen by the power they carry for
    unpolarised light. Geometry does not depend on the input polarisation. Rays that leave the
    clear aperture are still traced and reported; :attr:`SplitResult.flags` marks them.
    """
    check_prism(prism)
    wavelength, in_plane, out_of_plane, offset = check_ray_inputs(
        wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm)
    result = prism.trace(wavelength, in_plane, out_of_plane, offset_mm=offset,
                         polarisation="unpolarised")
    beams = {label: strip_pair(beam, result.incoherent_pair) for label, beam in result.beams.items()}
    labels = tuple(beams)
    deviation = {label: beam.deviation_deg() for label, beam in beams.items()}
    in_dev = {label: d[0] for label, d in deviation.items()}
    power = {label: beam.power for label, beam in beams.items()}
    main = rank_beams(power, 2) if main_labels is None else check_main_labels(main_labels, beams, 2)
    if len(main) > 2:
        raise ValueError(f"main_labels must name two beams, got {main_labels!r}")
    main = tuple(sorted(main, key=lambda label: (float(np.mean(in_dev[label])), label)))
    split_deg = bisector = asymmetry = None
    if len(main) == 2:
        a, b = (beams[label].exit_direction for label in main)
        split_deg = as_output(angle_between_deg(a, b))
        mid = a + b
        bisector = np.rad2deg(np.arctan2(mid[..., 0], mid[..., 2]))
        asymmetry = as_output(bisector - in_plane)
        bisector = as_output(bisector)
    return SplitResult(
        labels=labels,
        in_plane_deg={label: as_output(v) for label, v in in_dev.items()},
        out_of_plane_deg={label: as_output(d[1]) for label, d in deviation.items()},
        direction={label: beam.exit_direction for label, beam in beams.items()},
        power={label: as_output(v) for label, v in power.items()},
        flags={label: as_output(beam.flags) for label, beam in beams.items()},
        main_labels=main, split_deg=split_deg, bisector_in_plane_deg=bisector,
        asymmetry_deg=asymmetry)
