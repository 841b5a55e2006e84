"""Deviation of each beam, the split angle between the two main beams, and its asymmetry.

Angles follow the frame of the design notes: z is the normal of the entrance face, x lies in the
principal section. A beam's in-plane deviation is atan2(d_x, d_z) (positive toward +x), its
out-of-plane deviation asin(d_y), both measured from z (not from the input direction). The split
angle is the exact angle between two exit ray directions, atan2(|a × b|, a · b), which stays
accurate for tiny and for large angles alike.
"""
from dataclasses import dataclass, field

import numpy as np

from ..optics.vectors import cross, dot, norm
from ..prisms.base import check_prism
from ._common import (as_output, check_main_labels, check_numbers, check_ray_inputs,
                      check_shapes, lost_codes, missing_pair_reason, rank_beams, shown,
                      strip_pair, warn_missing)
from .beam_groups import group_spread_rad, has_active_piece, output_beam_trace
from .memory import map_rays

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
        Deviation of each beam's exit ray from z (degrees); NaN where the beam is lost (see
        `lost`).
    direction : dict[str, ndarray, shape (..., 3)]
        Unit exit ray direction of each beam; NaN where the beam is lost.
    power : dict[str, ndarray]
        Power of each beam for unpolarised input, as a fraction of the input power, as traced
        (0 where totally reflected; for a ray outside the clear aperture the prism is treated
        as extending beyond it).
    flags : dict[str, ndarray of int]
        :class:`~prismdesign.optics.TraceFlag` bits of each beam, per ray, as traced.
    lost : dict[str, ndarray of int]
        Per ray, why each beam does not exist there: 0 where it does, else reason bits
        (:func:`~prismdesign.analysis.lost_codes`: totally reflected, missed a surface,
        outside the clear aperture, grazing incidence, power below
        :data:`~prismdesign.analysis.LOST_POWER_FLOOR`);
        :func:`~prismdesign.analysis.describe_lost` puts them in words.
    main_labels : tuple of str
        The two strongest beams (largest unpolarised power summed over the rays where they
        exist, each with at least 1 % of the strongest's), ordered by their mean in-plane
        deviation (most negative first). Fewer than two when fewer beams carry power (a
        polariser at normal incidence, a Wollaston whose second beam is totally reflected
        everywhere); `reason` then says which beam is missing and why.
    split_deg : ndarray
        Exact angle between the two main beams (degrees); NaN where either is lost, and
        everywhere with fewer than two main beams.
    bisector_in_plane_deg : ndarray
        In-plane angle from z of the bisector of the two main directions. For beams in the
        principal section it equals the mean of their in-plane deviations exactly. NaN like
        `split_deg`.
    asymmetry_deg : ndarray
        `bisector_in_plane_deg` minus the input's in-plane angle: how far the split is off-centre
        about the input direction (≈ 0 for a symmetric Wollaston at normal incidence). NaN like
        `split_deg`.
    reason : str
        "" when two main beams exist; else one line naming the missing beam and why (also
        issued as a :class:`~prismdesign.analysis.MissingBeamWarning`).
    spread_deg : dict[str, ndarray]
        Largest angle between the exit directions of the branches a beam adds (degrees): 0 for
        a single branch; for an output beam of an optically active piece (label "a+b", see
        :mod:`~prismdesign.analysis.beam_groups`) the arcsecond doubling of its halves, whose
        power-weighted mean direction is the beam's. NaN where the beam is lost.
    """

    labels: tuple
    in_plane_deg: dict
    out_of_plane_deg: dict
    direction: dict
    power: dict
    flags: dict
    lost: dict
    main_labels: tuple
    split_deg: object
    bisector_in_plane_deg: object
    asymmetry_deg: object
    reason: str = ""
    spread_deg: dict = field(default_factory=dict)


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


def _split_per_ray(result, traced_prism):
    """Per-ray figures of every output beam of a trace (pair axis removed), keyed
    (label, field); `result` holds the raw branches, grouped here to measure the spread."""
    out = {}
    grouped = output_beam_trace(result, traced_prism)
    for label, beam in grouped.beams.items():
        out[label, "spread_deg"] = (np.rad2deg(group_spread_rad(result, label)) if "+" in label
                                    else np.zeros(np.shape(beam.power)[result.incoherent_pair:]))
        beam = strip_pair(beam, grouped.incoherent_pair)
        in_dev, out_dev = beam.deviation_deg()
        out[label, "in_plane_deg"] = in_dev
        out[label, "out_of_plane_deg"] = out_dev
        out[label, "direction"] = beam.exit_direction
        out[label, "power"] = beam.power
        out[label, "flags"] = beam.flags
    return out


#: Values for rays on which the trace dropped a beam (its power below the pruning threshold).
_DROPPED = {"power": 0.0, "flags": 0}


def beam_table(prism, wavelength, in_plane, out_of_plane, offset, what, **trace_options):
    """Per-ray deviation, direction, power, flags and lost codes of every beam (unpolarised).

    `trace_options` go to the trace (``power_threshold=0.0`` keeps beams lost everywhere, to
    say why they are missing).

    Returns
    -------
    dict[str, dict[str, ndarray]]
        By output-beam label (:mod:`~prismdesign.analysis.beam_groups`), then by field
        ("in_plane_deg", "out_of_plane_deg", "direction", "power", "flags", "lost",
        "spread_deg"); figures of a lost beam are NaN where it is lost.
    """
    if has_active_piece(prism):
        # Keep both halves of every output beam on every ray (see analysis.beam_groups).
        trace_options.setdefault("power_threshold", 0.0)
    flat = map_rays(prism, wavelength, in_plane, out_of_plane, offset, _split_per_ray,
                    what=what, fill=lambda key: _DROPPED.get(key[1], np.nan),
                    output_beams=False, **trace_options)
    table = {}
    for (label, name), value in flat.items():
        table.setdefault(label, {})[name] = value
    for values in table.values():
        values["lost"] = lost_codes(values["flags"], values["power"])
        gone = values["lost"] != 0
        for name in ("in_plane_deg", "out_of_plane_deg", "spread_deg"):
            values[name] = np.where(gone, np.nan, values[name])
        values["direction"] = np.where(gone[..., None], np.nan, values["direction"])
    return table


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
        inputs (or the prism's optic-axis samples) that do not broadcast together, unknown
        `main_labels`, or results that would not fit in
        :data:`~prismdesign.analysis.memory.MEMORY_LIMIT_BYTES`.

    Warns
    -----
    MissingBeamWarning
        When fewer than two main beams leave the prism anywhere (a polariser, or a Wollaston
        whose second beam is totally reflected at every point); the same text is in
        :attr:`SplitResult.reason`.

    Notes
    -----
    The trace is unpolarised so that the main beams are chosen by the power they carry for
    unpolarised light. Geometry does not depend on the input polarisation. Where a beam is lost
    (:attr:`SplitResult.lost`) its deviations and direction are NaN, and so are the split,
    bisector and asymmetry where either main beam is lost. Work on more rays than fit in memory
    is traced in chunks (:mod:`prismdesign.analysis.memory`).
    """
    check_prism(prism)
    wavelength, in_plane, out_of_plane, offset = check_ray_inputs(
        wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm, prism=prism)
    table = beam_table(prism, wavelength, in_plane, out_of_plane, offset, "split")
    labels = tuple(table)
    power = {label: v["power"] for label, v in table.items()}
    lost = {label: v["lost"] for label, v in table.items()}
    in_dev = {label: v["in_plane_deg"] for label, v in table.items()}
    if main_labels is None:
        main = rank_beams(power, 2, lost=lost)
    else:
        main = check_main_labels(main_labels, table, 2)
    if len(main) > 2:
        raise ValueError(f"main_labels must name two beams, got {main_labels!r}")
    main = tuple(sorted(main, key=lambda label: (_mean_or_inf(in_dev[label]), label)))
    shape = np.shape(next(iter(power.values()))) if power else np.broadcast_shapes(
        wavelength.shape, in_plane.shape, out_of_plane.shape, offset.shape[:-1])
    reason = ""
    if len(main) == 2:
        a, b = (table[label]["direction"] for label in main)
        split_deg = angle_between_deg(a, b)
        mid = a + b
        bisector = np.rad2deg(np.arctan2(mid[..., 0], mid[..., 2]))
        asymmetry = bisector - in_plane
    else:
        split_deg = bisector = asymmetry = np.full(shape, np.nan)
        if main_labels is None:
            # Trace again without pruning to say which beam is missing and why.
            extra = beam_table(prism, wavelength, in_plane, out_of_plane, offset, "split",
                               power_threshold=0.0)
            reason = missing_pair_reason(
                "split", main, *({label: v[name] for label, v in extra.items()}
                                 for name in ("lost", "power", "flags")))
            warn_missing(reason)
    return SplitResult(
        labels=labels,
        in_plane_deg={label: as_output(v) for label, v in in_dev.items()},
        out_of_plane_deg={label: as_output(v["out_of_plane_deg"]) for label, v in table.items()},
        direction={label: v["direction"] for label, v in table.items()},
        power={label: as_output(v) for label, v in power.items()},
        flags={label: as_output(v["flags"]) for label, v in table.items()},
        lost={label: as_output(v) for label, v in lost.items()},
        main_labels=main, split_deg=as_output(split_deg),
        bisector_in_plane_deg=as_output(np.broadcast_to(bisector, shape).copy()),
        asymmetry_deg=as_output(np.broadcast_to(asymmetry, shape).copy()), reason=reason,
        spread_deg={label: as_output(v["spread_deg"]) for label, v in table.items()})


def _mean_or_inf(values):
    """Mean of the finite values (where the beam exists); inf when there are none."""
    finite = np.isfinite(values)
    return float(np.mean(values[finite])) if np.any(finite) else np.inf
