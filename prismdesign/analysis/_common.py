"""Helpers shared by the analysis modules: input checks, beam ranking, pair handling.

The checks turn bad input into one-line errors that name the parameter, show the value as plain
numbers and say what is allowed, before numpy can turn it into a raw exception or a silent NaN.
Scalar checks live with the builders (:mod:`prismdesign.prisms.base`); the checks here handle
the arrays the analyses broadcast over.
"""
import numpy as np

from .._display import plain, shown

from ..optics import Beam
from ..prisms.base import check_finite

__all__ = ["as_output", "check_polarisation", "strip_pair", "rank_beams", "check_main_labels",
           "MAIN_BEAM_SHARE", "input_direction_deg", "shown", "plain", "check_numbers",
           "check_wavelengths", "check_offsets", "check_shapes", "check_non_negative",
           "check_ray_inputs"]

#: Arrays up to this size are shown in full in error messages; larger ones by shape.


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


def rank_beams(powers, count=None, share=MAIN_BEAM_SHARE):
    """Labels of the main beams: the strongest, by power summed over all rays.

    Parameters
    ----------
    powers : dict[str, ndarray]
        Power of each beam (same shape for all).
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


def check_ray_inputs(wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm, *extra):
    """Check the inputs every trace-based analysis takes and that they broadcast together.

    Parameters
    ----------
    wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm
        As given by the user.
    *extra : (str, tuple)
        Further named shapes that must broadcast with the rays (e.g. a distance).

    Returns
    -------
    wavelength, in_plane, out_of_plane, offset : ndarray of float
    """
    wavelength = check_wavelengths(wavelength_um)
    in_plane, out_of_plane = input_direction_deg(in_plane_deg, out_of_plane_deg)
    offset = check_offsets(offset_mm)
    check_shapes(("wavelength_um", wavelength.shape), ("in_plane_deg", in_plane.shape),
                 ("out_of_plane_deg", out_of_plane.shape),
                 ("offset_mm", offset.shape, 1), *extra)
    return wavelength, in_plane, out_of_plane, offset
