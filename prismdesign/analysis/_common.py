"""Helpers shared by the analysis modules: input checks, beam ranking, pair handling."""
import numpy as np

from ..optics import Beam

__all__ = ["as_output", "check_polarisation", "strip_pair", "rank_beams", "check_main_labels",
           "MAIN_BEAM_SHARE", "input_direction_deg"]


def as_output(value):
    """Scalar in, scalar out: a 0-d array becomes a numpy scalar, other arrays stay arrays."""
    return np.asarray(value)[()]


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
    jones = np.asarray(polarisation, dtype=complex)
    if jones.ndim == 0 or jones.shape[-1] != 2:
        raise ValueError(f"polarisation must be Jones vectors (last axis 2) or 'unpolarised', "
                         f"got shape {jones.shape}")
    power = (np.abs(jones) ** 2).sum(axis=-1)
    if np.any(power == 0) or not np.all(np.isfinite(power)):
        raise ValueError("polarisation Jones vectors must be non-zero and finite")
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
    labels = (main_labels,) if isinstance(main_labels, str) else tuple(main_labels)
    unknown = [label for label in labels if label not in available]
    if unknown or len(labels) < minimum:
        raise ValueError(f"main_labels must name at least {minimum} of the traced beams "
                         f"{sorted(available)}, got {main_labels!r}")
    return labels


def input_direction_deg(in_plane_deg, out_of_plane_deg):
    """Input angles as float arrays (degrees), checked for finiteness and range."""
    a = np.asarray(in_plane_deg, dtype=float)
    b = np.asarray(out_of_plane_deg, dtype=float)
    if not (np.all(np.isfinite(a)) and np.all(np.abs(a) < 90.0)):
        raise ValueError(f"in_plane_deg must be finite and between -90 and 90 degrees, "
                         f"got {a.tolist() if a.size < 6 else 'out-of-range entries'}")
    if not (np.all(np.isfinite(b)) and np.all(np.abs(b) < 90.0)):
        raise ValueError(f"out_of_plane_deg must be finite and between -90 and 90 degrees, "
                         f"got {b.tolist() if b.size < 6 else 'out-of-range entries'}")
    return a, b
