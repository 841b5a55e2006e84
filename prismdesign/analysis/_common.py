"""Helpers shared by the analysis modules: input checks, beam ranking, pair handling, and the
one rule that says where a beam is lost.

The checks turn bad input into one-line errors that name the parameter, show the value as plain
numbers and say what is allowed, before numpy can turn it into a raw exception or a silent NaN.
Scalar checks live with the builders (:mod:`prismdesign.prisms.base`); the checks here handle
the arrays the analyses broadcast over.

Lost beams (one rule for every analysis). A beam is *lost* at a point (one ray of the broadcast
inputs) when its trace flags contain any of :data:`LOST_FLAGS` (totally reflected, missed a
surface, met a surface outside its clear aperture, grazing incidence) or when its power for
that ray is below :data:`LOST_POWER_FLOOR` of the ray's input power. :func:`lost_codes` gives a
per-point reason code (0: the beam exists; otherwise those flag bits, plus
:data:`BELOW_POWER_FLOOR`); :func:`describe_lost` turns codes into words. Every figure derived
from a lost beam (its deviation, a split or separation involving it, OPD, shear, extinction) is
NaN at that point. A beam that tunnelled through a thin gap (``FRUSTRATED_TOTAL_REFLECTION``) is
not lost: its (small) power is real, unless it falls below the floor.
"""
import warnings

import numpy as np

from .._display import plain, shown

from ..optics import Beam, TraceFlag
from ..prisms.base import check_finite

__all__ = ["as_output", "check_polarisation", "strip_pair", "rank_beams", "check_main_labels",
           "MAIN_BEAM_SHARE", "input_direction_deg", "shown", "plain", "check_numbers",
           "check_wavelengths", "check_offsets", "check_shapes", "check_non_negative",
           "check_ray_inputs", "LOST_FLAGS", "LOST_POWER_FLOOR", "BELOW_POWER_FLOOR",
           "lost_codes", "describe_lost", "summarise_loss", "MissingBeamWarning",
           "missing_pair_reason", "warn_missing", "prism_sample_shape"]

#: Trace flags under which a beam does not exist at a point (see the module docstring).
LOST_FLAGS = (TraceFlag.TOTAL_INTERNAL_REFLECTION | TraceFlag.MISSED_SURFACE
              | TraceFlag.OUTSIDE_APERTURE | TraceFlag.SINGULAR)

#: A beam whose power is below this fraction of its ray's input power is lost there. Equal to
#: the tracer's default pruning threshold, so a beam kept on some rays is judged on the others
#: by the same measure.
LOST_POWER_FLOOR = 1e-12

#: Reason-code bit (above every :class:`~prismdesign.optics.TraceFlag` bit) for a beam whose
#: power is below :data:`LOST_POWER_FLOOR` (or which the trace dropped on that ray).
BELOW_POWER_FLOOR = 1 << 16

_REASONS = ((TraceFlag.TOTAL_INTERNAL_REFLECTION, "totally reflected"),
            (TraceFlag.MISSED_SURFACE, "missed a surface"),
            (TraceFlag.SINGULAR, "grazing incidence at a surface"),
            (TraceFlag.OUTSIDE_APERTURE, "outside the clear aperture"),
            (BELOW_POWER_FLOOR, f"power below {LOST_POWER_FLOOR:g} of the input"))


class MissingBeamWarning(UserWarning):
    """Fewer beams leave the prism than an analysis compares (its pair figures are NaN)."""


def lost_codes(flags, power_fraction, floor=LOST_POWER_FLOOR):
    """Per-point reason codes of a beam: 0 where it exists, else the reasons it is lost.

    Parameters
    ----------
    flags : array_like of int
        :class:`~prismdesign.optics.TraceFlag` bits of the beam, per ray.
    power_fraction : array_like
        Beam power as a fraction of each ray's input power (same shape, or broadcasting).
    floor : float
        Power fraction below which the beam counts as lost.

    Returns
    -------
    ndarray of int
        ``flags & LOST_FLAGS``, plus :data:`BELOW_POWER_FLOOR` where the power is below `floor`.
    """
    flags = np.asarray(flags, dtype=np.int64)
    below = np.asarray(power_fraction) < floor
    return (flags & LOST_FLAGS) | np.where(below, BELOW_POWER_FLOOR, 0)


def describe_lost(codes):
    """Reason codes (from :func:`lost_codes`) in words, per point.

    Parameters
    ----------
    codes : array_like of int

    Returns
    -------
    str or ndarray of str
        "" where the beam exists, else its reasons joined by "; ", e.g. "totally reflected;
        power below 1e-12 of the input". Scalar in, str out.
    """
    codes = np.asarray(codes, dtype=np.int64)
    out = np.full(codes.shape, "", dtype=object)
    for bit, text in _REASONS:
        has = (codes & bit) != 0
        out = np.where(has, np.where(out == "", text, out + "; " + text), out)
    return out[()] if out.ndim == 0 else out


def summarise_loss(label, codes):
    """One phrase saying where and why a beam is lost, e.g. "'oe' is lost: totally reflected
    at 2 of 3 points" (for messages)."""
    codes = np.asarray(codes, dtype=np.int64)
    total = codes.size
    lost = int(np.count_nonzero(codes))
    if lost == 0:
        return f"{label!r} exists at every point"
    parts = []
    for bit, text in _REASONS:
        count = int(np.count_nonzero(codes & bit))
        # A beam stopped by the geometry also has (almost) no power: say only the first.
        if bit == BELOW_POWER_FLOOR:
            count = int(np.count_nonzero(((codes & BELOW_POWER_FLOOR) != 0)
                                         & ((codes & LOST_FLAGS) == 0)))
        if count:
            where = "at every point" if count == total else f"at {count} of {total} points"
            parts.append(f"{text} {where}")
    return f"{label!r} is lost: " + ", ".join(parts)


def missing_pair_reason(what, main, codes, power, flags=None):
    """Why fewer than two main beams exist, in one line (for a warning or an error).

    Parameters
    ----------
    what : str
        The analysis, e.g. "split".
    main : tuple of str
        The main beams found (fewer than two).
    codes : dict[str, ndarray of int]
        Reason codes of every beam traced (including beams lost everywhere).
    power : dict[str, ndarray]
        Their powers (fractions of the input).
    flags : dict[str, ndarray of int], optional
        Their trace flags, to say when a beam is totally reflected at a thin layer (a Glan
        gap) and only a tunnelled trace of it passes.

    Returns
    -------
    str
    """
    others = [label for label in codes if label not in main]
    kept = ", ".join(repr(label) for label in main) or "none"
    if not others:
        return (f"{what}: no second beam leaves the prism (beams carrying power: {kept}); the "
                f"pair figures are NaN")
    totals = {label: float(np.sum(np.where(codes[label] == 0, power[label], 0.0)))
              for label in others}
    # Name the beam the user most likely expected: one totally reflected at a thin gap (a
    # Glan prism's rejected beam), then one stopped by the geometry (a flag), rather than a
    # branch the crossed axes never feed;
    # then the fewest lost points and the most power.
    flags = flags or {}
    frustrated = {label: bool(np.any(flags.get(label, 0)
                                     & TraceFlag.FRUSTRATED_TOTAL_REFLECTION))
                  for label in others}
    best = min(others, key=lambda label: (not frustrated[label],
                                          not np.any(codes[label] & LOST_FLAGS),
                                          int(np.count_nonzero(codes[label])),
                                          -float(np.max(power[label])), label))
    if frustrated[best] and not np.any(codes[best] & LOST_FLAGS):
        tunnelled = float(np.max(power[best]))
        why = (f"{best!r} is totally reflected at a thin layer (at most {tunnelled:.3g} of the "
               f"input tunnels through)")
    elif np.all(codes[best] != 0):
        why = summarise_loss(best, codes[best])
    else:
        strongest = max((float(np.sum(power[label])) for label in main), default=0.0)
        share = totals[best] / strongest if strongest > 0 else 0.0
        why = (f"{best!r} carries only {share:.3g} of the strongest beam's power (a main beam "
               f"needs {MAIN_BEAM_SHARE:g})")
    return (f"{what}: no second beam leaves the prism: {why}; beams carrying power: {kept}; "
            f"the pair figures are NaN")


def warn_missing(message):
    """Warn that a pair of beams does not exist (stacklevel: the user's call)."""
    warnings.warn(message, MissingBeamWarning, stacklevel=3)


def prism_sample_shape(prism):
    """Broadcast shape of the sample axes a prism carries (() when none): optic axes,
    temperatures, boundary points and normals, and thin-layer thickness and index offsets."""
    shapes = [np.shape(p.optic_axis)[:-1] for p in prism.pieces if p.optic_axis is not None]
    shapes += [np.shape(t) for t in (prism.temperature_c,
                                     *(p.temperature_c for p in prism.pieces)) if t is not None]
    for b in prism.boundaries:
        shapes += [np.shape(b.point_mm)[:-1], np.shape(b.normal)[:-1]]
        if b.layer is not None:
            shapes += [np.shape(b.layer.thickness_mm), np.shape(b.layer.index_offset)]
    try:
        return np.broadcast_shapes(*shapes) if shapes else ()
    except ValueError:
        listing = ", ".join(str(s) for s in shapes)
        raise ValueError(f"prism optic axes must carry sample axes that broadcast together, got "
                         f"shapes {listing}") from None


def as_output(value):
    """Scalar in, scalar out: a 0-d array becomes a numpy scalar, other arrays stay arrays."""
    return np.asarray(value)[()]


def check_numbers(name, value, allowed, valid=None):
    """`value` as a float array (any shape, not empty), or a one-line ValueError.

    Text (even numeric text), booleans, complex numbers, ragged nested lists and non-finite
    entries are refused; `valid`, a vectorised test on the float array, adds a range.

    Parameters
    ----------
    name : str
        Parameter name for the message.
    value : object
    allowed : str
        What is allowed, e.g. "positive wavelengths in µm".
    valid : callable, optional
        ``valid(array) -> bool array``; entries where it is False are refused.

    Returns
    -------
    ndarray of float
    """
    def fail(detail=""):
        raise ValueError(f"{name} must be {allowed}, got {detail}{shown(value)}")

    if isinstance(value, (str, bytes)):
        fail("the text ")
    try:
        array = np.asarray(value)
    except (TypeError, ValueError):
        # numpy refuses nested lists of unequal lengths ("inhomogeneous shape").
        fail("a ragged nested list ")
    kind = array.dtype.kind
    if kind == "O":
        try:
            array = array.astype(float)
        except (TypeError, ValueError):
            fail()
    elif kind in "US":
        fail("text ")
    elif kind == "b":
        fail("the boolean " if array.ndim == 0 else "booleans ")
    elif kind == "c":
        fail("complex ")
    elif kind not in "iuf":
        fail()
    array = array.astype(float)
    if array.size == 0:
        fail("an empty array ")
    if not np.all(np.isfinite(array)) or (valid is not None and not np.all(valid(array))):
        fail()
    return array


def check_wavelengths(value, name="wavelength_um"):
    """Vacuum wavelengths in µm as a float array: real, finite, positive, not empty."""
    return check_numbers(name, value, "positive, finite vacuum wavelengths in µm",
                         lambda a: a > 0)


def check_offsets(value, name="offset_mm"):
    """Entry points (x, y) in mm as a float array of shape (..., 2)."""
    array = check_numbers(name, value, "(x, y) entry points in mm, finite numbers")
    if array.ndim == 0 or array.shape[-1] != 2:
        raise ValueError(f"{name} must be (x, y) entry points in mm, with 2 numbers on the "
                         f"last axis, got shape {array.shape}")
    return array


def check_non_negative(name, value, what="a finite number >= 0"):
    """float(value) for a scalar that must be finite and >= 0, or a one-line ValueError."""
    v = check_finite(name, plain(value), what)
    if v < 0:
        raise ValueError(f"{name} must be {what}, got {shown(value)}")
    return v


def check_shapes(*named):
    """Broadcast shape of named inputs, or a one-line error naming each input and its shape.

    Parameters
    ----------
    *named : (str, tuple) or (str, tuple, int)
        Parameter name, its shape and, optionally, how many trailing axes are its own (a vector
        axis such as the (x, y) of `offset_mm`) and take no part in the broadcast.

    Returns
    -------
    tuple
        The broadcast shape (without the vectors' own axes).
    """
    items = [(item[0], tuple(item[1]), item[2] if len(item) > 2 else 0) for item in named]
    try:
        return np.broadcast_shapes(*(shape[:len(shape) - core] for _, shape, core in items))
    except ValueError:
        listing = ", ".join(f"{name} {shape}" + (" (last axis not broadcast)" if core else "")
                            for name, shape, core in items)
        raise ValueError(f"{', '.join(name for name, _, _ in items)} must broadcast together "
                         f"(numpy rules: from the last axis on, equal lengths or 1), got shapes "
                         f"{listing}") from None


def check_polarisation(polarisation):
    """Validate a polarisation argument; return ("unpolarised", 1.0) or (jones, input power).

    Parameters
    ----------
    polarisation : array_like, shape (..., 2), or "unpolarised"

    Returns
    -------
    polarisation : str or ndarray
        As passed to the tracer.
    input_power : float or ndarray, shape (...)
        |J|² of the input, by which output powers are divided to give fractions.
    """
    if isinstance(polarisation, str):
        if polarisation.lower() not in ("unpolarised", "unpolarized"):
            raise ValueError(f"polarisation must be a Jones vector (2 complex numbers) or "
                             f"'unpolarised', got {polarisation!r}")
        return "unpolarised", 1.0
    allowed = "a Jones vector (2 complex numbers on the last axis) or 'unpolarised'"
    try:
        raw = np.asarray(polarisation)
        if raw.dtype.kind not in "iufcO":
            raise TypeError
        jones = raw.astype(complex)
    except (TypeError, ValueError):
        raise ValueError(f"polarisation must be {allowed}, got {shown(polarisation)}") from None
    if jones.ndim == 0 or jones.shape[-1] != 2:
        raise ValueError(f"polarisation must be {allowed}, got shape {jones.shape}")
    power = (np.abs(jones) ** 2).sum(axis=-1)
    if np.any(power == 0) or not np.all(np.isfinite(power)):
        raise ValueError(f"polarisation must be {allowed}, non-zero and finite, got "
                         f"{shown(polarisation)}")
    return jones, power


def strip_pair(beam, pair):
    """The beam's geometry without the leading incoherent-pair axis.

    Directions, positions and optical paths do not depend on the input polarisation, so the
    first member of the pair stands for both. Flags are OR-ed over the pair; the field is that
    of the first member (x input) and power is the pair sum.
    """
    if not pair:
        return beam
    return Beam(label=beam.label, positions_mm=beam.positions_mm[:, 0],
                wave_normals=beam.wave_normals[:, 0], ray_directions=beam.ray_directions[:, 0],
                indices=beam.indices[:, 0], field=beam.field[0], power=beam.power.sum(axis=0),
                optical_path_mm=beam.optical_path_mm[0], flags=beam.flags[0] | beam.flags[1],
                wavelength_um=beam.wavelength_um[0], reflected=None)


#: A beam counts as a main beam when its power, summed over all rays, is at least this share of
#: the strongest beam's: leaks and ghosts of a few 1e-3 stay out, the four equal beams of a
#: double Wollaston all count.
MAIN_BEAM_SHARE = 0.01


def rank_beams(powers, count=None, share=MAIN_BEAM_SHARE, lost=None):
    """Labels of the main beams: the strongest, by power summed over all rays.

    Parameters
    ----------
    powers : dict[str, ndarray]
        Power of each beam (same shape for all).
    lost : dict[str, ndarray of int], optional
        Reason codes (:func:`lost_codes`); power where a beam is lost does not count, so a beam
        lost on every ray is never chosen.
    count : int, optional
        Keep at most this many.
    share : float
        Minimum power relative to the strongest beam.

    Returns
    -------
    tuple of str
        Strongest first; ties broken by label so the choice is reproducible. Beams whose power
        is zero on every ray are never chosen.
    """
    if lost is not None:
        powers = {label: np.where(lost[label] != 0, 0.0, p) for label, p in powers.items()}
    totals = {label: float(np.sum(p)) for label, p in powers.items()}
    top = max(totals.values(), default=0.0)
    ordered = sorted((label for label in totals if totals[label] > 0 and totals[label] >= share * top),
                     key=lambda label: (-totals[label], label))
    return tuple(ordered[:count])


def check_main_labels(main_labels, available, minimum=1):
    """Validate user-chosen main beams against the traced labels; returns a tuple."""
    if isinstance(main_labels, str):
        labels = (main_labels,)
    else:
        try:
            labels = tuple(main_labels)
        except TypeError:
            labels = (main_labels,)
    unknown = [label for label in labels if label not in available]
    if unknown or len(labels) < minimum:
        raise ValueError(f"main_labels must name at least {minimum} of the traced beams "
                         f"{sorted(available)}, got {main_labels!r}")
    return labels


def input_direction_deg(in_plane_deg, out_of_plane_deg):
    """Input angles as float arrays (degrees): real, finite and strictly between −90 and 90."""
    def inside(a):
        return np.abs(a) < 90.0

    allowed = "finite angles in degrees between -90 and 90 (exclusive)"
    return (check_numbers("in_plane_deg", in_plane_deg, allowed, inside),
            check_numbers("out_of_plane_deg", out_of_plane_deg, allowed, inside))


def check_ray_inputs(wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm, *extra,
                     prism=None):
    """Check the inputs every trace-based analysis takes and that they broadcast together.

    Parameters
    ----------
    wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm
        As given by the user.
    *extra : (str, tuple)
        Further named shapes that must broadcast with the rays (e.g. a distance).
    prism : Prism, optional
        Its optic axes' sample axes (Monte Carlo copies, :func:`perturb_axes`) must broadcast
        against the rays as well.

    Returns
    -------
    wavelength, in_plane, out_of_plane, offset : ndarray of float
    """
    wavelength = check_wavelengths(wavelength_um)
    in_plane, out_of_plane = input_direction_deg(in_plane_deg, out_of_plane_deg)
    offset = check_offsets(offset_mm)
    named = [("wavelength_um", wavelength.shape), ("in_plane_deg", in_plane.shape),
             ("out_of_plane_deg", out_of_plane.shape), ("offset_mm", offset.shape, 1), *extra]
    rays = check_shapes(*named)
    if prism is not None:
        samples = prism_sample_shape(prism)
        try:
            np.broadcast_shapes(samples, rays)
        except ValueError:
            raise ValueError(
                f"the prism's optic-axis samples (shape {samples}, e.g. from perturb_axes) must "
                f"broadcast against the ray inputs (shape {rays}); give the samples an axis of "
                f"their own, e.g. perturb_axes(prism, errors[:, None])") from None
    return wavelength, in_plane, out_of_plane, offset
