"""Where the beams land on a plane after the prism, how far apart they are, and whether a
Gaussian input beam leaves them resolved.

The observation plane is normal to z at `distance_mm` beyond the prism's exit (its largest z).
Beam radii use the 1/e² intensity radius of an embedded-Gaussian beam with quality factor M²
(Siegman, *Lasers*, 1986, ch. 17):

    w(z) = w0 √(1 + (z / z_R)²),  z_R = π w0² / (M² λ),  far-field half-angle θ = M² λ / (π w0),

with λ the vacuum wavelength and z a free-space-equivalent ("reduced") distance.

Approximation (common practice, no source): inside the prism the beam is propagated over the
reduced distance Σ Lᵢ / nᵢ, with Lᵢ the real geometric length of each segment along the ray and
nᵢ its phase index, as for a slab in ABCD optics (Siegman, 1986, §15.2, from memory). This
neglects the anamorphic change of the beam width at tilted faces and the astigmatism of the
extraordinary wave (whose diffraction depends on direction through walk-off); both are small for
the near-normal incidence of beam-splitting prisms, but they make the radii estimates, not exact.
"""
from dataclasses import dataclass

import numpy as np

from ..optics.vectors import cross, norm, normalize
from ..prisms.base import check_finite, check_prism
from ._common import (as_output, check_main_labels, check_numbers, check_ray_inputs,
                      check_shapes, check_wavelengths, lost_codes, missing_pair_reason, plain,
                      prism_sample_shape, rank_beams, strip_pair, warn_missing)
from .deviation import _mean_or_inf, beam_table
from .memory import map_rays

__all__ = ["SeparationResult", "separation", "gaussian_beam_radius_mm"]


def gaussian_beam_radius_mm(waist_mm, wavelength_um, distance_mm, m_squared=1.0):
    """1/e² radius of a Gaussian beam a free-space (reduced) distance from its waist.

    w(z) = w0 √(1 + (z/z_R)²) with z_R = π w0² / (M² λ) (Siegman, *Lasers*, 1986, ch. 17).

    Parameters
    ----------
    waist_mm : array_like
        Waist radius w0 (1/e² intensity, mm).
    wavelength_um : array_like
        Vacuum wavelength (µm).
    distance_mm : array_like
        Reduced distance from the waist (mm): geometric length over index in a medium.
    m_squared : array_like
        Beam quality factor M² ≥ 1.

    Returns
    -------
    float or ndarray
        Beam radius (mm), broadcast over the inputs.
    """
    w0, m2 = _check_beam(waist_mm, m_squared)
    lam = check_wavelengths(wavelength_um)
    z = check_numbers("distance_mm", distance_mm, "finite distances in mm")
    check_shapes(("waist_mm", w0.shape), ("wavelength_um", lam.shape), ("distance_mm", z.shape),
                 ("m_squared", m2.shape))
    return as_output(_radius_mm(w0, lam, z, m2))


def _check_beam(waist_mm, m_squared):
    """Waist radii (positive, mm) and beam quality factors (>= 1) as float arrays."""
    return (check_numbers("waist_mm", waist_mm, "positive, finite waist radii in mm",
                          lambda w: w > 0),
            check_numbers("m_squared", m_squared, "finite beam quality factors M² >= 1",
                          lambda m: m >= 1.0))


def _radius_mm(w0, wavelength_um, distance_mm, m2):
    """w0 √(1 + (z/z_R)²), unchecked: for reduced distances computed from a trace."""
    rayleigh_mm = np.pi * w0 ** 2 / (m2 * wavelength_um * 1e-3)
    return w0 * np.sqrt(1.0 + (distance_mm / rayleigh_mm) ** 2)


@dataclass(frozen=True, slots=True)
class SeparationResult:
    """Beam positions on an observation plane, their separation and (optionally) clearance.

    Attributes
    ----------
    plane_z_mm : float or ndarray
        z of the observation plane (prism exit + distance).
    labels : tuple of str
    main_labels : tuple of str
        The two strongest beams (unpolarised power where they exist, as in :func:`split`),
        ordered by their mean x on the plane; fewer when fewer beams carry power (then the pair
        quantities are NaN and `reason` says why).
    exit_position_mm, position_mm : dict[str, ndarray, shape (..., 3)]
        Where each beam leaves the prism and where it meets the plane; NaN where it is lost.
    power : dict[str, ndarray]
        Unpolarised power of each beam (fraction of the input), as traced.
    flags : dict[str, ndarray of int]
        :class:`~prismdesign.optics.TraceFlag` bits of each beam, per ray, as traced.
    lost : dict[str, ndarray of int]
        Per ray, why each beam does not exist there (0: it does); the codes of
        :attr:`SplitResult.lost`, in words with :func:`~prismdesign.analysis.describe_lost`.
    separation_mm : ndarray
        Distance between the two main beams on the plane; NaN where either is lost.
    exit_offset_mm : ndarray, shape (..., 3)
        Exit position of the second main beam minus that of the first (NaN where either is
        lost).
    lateral_offset_mm : ndarray
        Length of `exit_offset_mm` across the bisector of the two exit directions: the lateral
        offset (shear) of a displacer or Savart plate, whose beams leave parallel. Exit
        quantities do not depend on the plane, so they lack the axes of `distance_mm`.
    reduced_distance_mm : dict[str, ndarray] or None
        Free-space-equivalent distance Σ L/n from the entrance face to the plane (with a
        waist); NaN where the beam is lost.
    beam_radius_mm : dict[str, ndarray] or None
        1/e² radius of each beam at the plane (with a waist); NaN where the beam is lost.
    divergence_deg : ndarray or None
        Far-field half-angle M² λ / (π w0) of the input beam (degrees).
    clearance : ndarray or None
        (separation − (w_a + w_b)) / max(w_a, w_b): the gap between the two main beams' 1/e²
        circles in units of the larger radius; NaN where either beam is lost.
    resolved : ndarray of bool or None
        clearance > `min_clearance`; False where either beam is lost (beams that do not exist
        are not resolved).
    reason : str
        "" when two main beams exist; else why not (also a
        :class:`~prismdesign.analysis.MissingBeamWarning`).
    """

    plane_z_mm: object
    labels: tuple
    main_labels: tuple
    exit_position_mm: dict
    position_mm: dict
    power: dict
    flags: dict
    lost: dict
    separation_mm: object = None
    exit_offset_mm: object = None
    lateral_offset_mm: object = None
    reduced_distance_mm: object = None
    beam_radius_mm: object = None
    divergence_deg: object = None
    clearance: object = None
    resolved: object = None
    reason: str = ""


def _inside_reduced_distance_mm(beam):
    """Σ L/n from the entrance point to the exit point along the beam's polyline.

    positions_mm[0] is the start point in front of the prism, [1] the entrance point; segment i
    (from point i to point i + 1) lies in the medium of phase index indices[i].
    """
    points = beam.positions_mm
    total = np.zeros(points.shape[1:-1])
    for i in range(1, points.shape[0] - 1):
        total = total + norm(points[i + 1] - points[i]) / beam.indices[i]
    return total


def _separation_per_ray(result, traced_prism):
    """Per-ray exit geometry, power and flags of every beam, keyed (label, field)."""
    out = {}
    for label, beam in result.beams.items():
        beam = strip_pair(beam, result.incoherent_pair)
        out[label, "exit_position_mm"] = beam.exit_position_mm
        out[label, "direction"] = beam.exit_direction
        out[label, "exit_index"] = beam.indices[-1]
        out[label, "inside_mm"] = _inside_reduced_distance_mm(beam)
        out[label, "power"] = beam.power
        out[label, "flags"] = beam.flags
    return out


_DROPPED = {"power": 0.0, "flags": 0}


def separation(prism, wavelength_um, distance_mm, in_plane_deg=0.0, out_of_plane_deg=0.0, *,
               offset_mm=(0.0, 0.0), waist_mm=None, m_squared=1.0, min_clearance=0.0,
               main_labels=None):
    """Positions of the beams on a plane after the prism, their separation and clearance.

    Parameters
    ----------
    prism : Prism
    wavelength_um : array_like
        Vacuum wavelengths (µm).
    distance_mm : array_like
        Distance of the observation plane (normal to z) beyond the prism's exit, mm ≥ 0.
    in_plane_deg, out_of_plane_deg : array_like
        Input direction (degrees).
    offset_mm : array_like, shape (..., 2)
        Entry point (x, y) on the entrance face (mm).
    waist_mm : float or array_like, optional
        1/e² waist radius of a Gaussian input beam, located at the entrance face (mm). Without
        it no radii or clearance are computed.
    m_squared : float or array_like
        Beam quality factor M² of the input beam (≥ 1).
    min_clearance : float
        Clearance (in beam radii) above which the beams count as resolved; 0 means the 1/e²
        circles just do not touch, a negative value accepts some overlap. Any finite number.
    main_labels : pair of str, optional
        The two beams to compare; default the two strongest (see :func:`split`).

    Returns
    -------
    SeparationResult
        Arrays broadcast over wavelength, distance, angles and offsets.

    Raises
    ------
    ValueError
        In one line, for a `prism` that is not a :class:`~prismdesign.prisms.Prism`, text,
        booleans, complex or non-finite numbers, wavelengths <= 0, distances < 0, angles outside
        (−90, 90), waists <= 0, M² < 1, inputs (or the prism's optic-axis samples) that do not
        broadcast together, unknown `main_labels`, or results that would not fit in
        :data:`~prismdesign.analysis.memory.MEMORY_LIMIT_BYTES`.

    Warns
    -----
    MissingBeamWarning
        When fewer than two main beams leave the prism anywhere; the same text is in
        :attr:`SeparationResult.reason`.

    Notes
    -----
    Separation is measured on the plane; radii are measured across each beam. For the few
    degrees of deviation of beam-splitting prisms the difference (a factor 1/cos of the
    deviation on the footprint) is below 0.2 %. Where a beam is lost
    (:attr:`SeparationResult.lost`, the rule of :func:`split`) its positions and radius are
    NaN, and so is every pair figure where either main beam is lost.
    """
    check_prism(prism)
    distance = check_numbers("distance_mm", distance_mm, "finite distances in mm, >= 0",
                             lambda d: d >= 0)
    min_clearance = check_finite("min_clearance", plain(min_clearance),
                                 "a finite number (clearance in beam radii)")
    extra = [("distance_mm", distance.shape)]
    if waist_mm is not None:
        waist, m2 = _check_beam(waist_mm, m_squared)
        extra += [("waist_mm", waist.shape), ("m_squared", m2.shape)]
    wavelength, in_plane, out_of_plane, offset = check_ray_inputs(
        wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm, *extra, prism=prism)
    flat = map_rays(prism, wavelength, in_plane, out_of_plane, offset, _separation_per_ray,
                    what="separation", fill=lambda key: _DROPPED.get(key[1], np.nan))
    table = {}
    for (label, name), value in flat.items():
        table.setdefault(label, {})[name] = value
    plane_z = prism.exit_z_mm + distance
    position, exits, lost, reduced = {}, {}, {}, {}
    for label, v in table.items():
        lost[label] = lost_codes(v["flags"], v["power"])
        gone = (lost[label] != 0)[..., None]
        r = np.where(gone, np.nan, v["exit_position_mm"])
        d = np.where(gone, np.nan, v["direction"])
        with np.errstate(divide="ignore", invalid="ignore"):
            t = (plane_z - r[..., 2]) / np.where(d[..., 2] != 0, d[..., 2], np.nan)
        position[label] = r + t[..., None] * d
        exits[label] = (r, d)
        reduced[label] = (np.where(gone[..., 0], np.nan, v["inside_mm"])
                          + norm(position[label] - r) / v["exit_index"])
    power = {label: v["power"] for label, v in table.items()}
    if main_labels is None:
        main = rank_beams(power, 2, lost=lost)
    else:
        main = check_main_labels(main_labels, table, 2)
        if len(main) > 2:
            raise ValueError(f"main_labels must name two beams, got {main_labels!r}")
    main = tuple(sorted(main, key=lambda label: (_mean_or_inf(position[label][..., 0]), label)))
    shape = np.broadcast_shapes(np.shape(plane_z), wavelength.shape, in_plane.shape,
                                out_of_plane.shape, offset.shape[:-1], prism_sample_shape(prism),
                                *(np.shape(v) for v in power.values()))
    values = dict(plane_z_mm=as_output(plane_z), labels=tuple(table), main_labels=main,
                  exit_position_mm={label: e[0] for label, e in exits.items()},
                  position_mm=position, power={label: as_output(p) for label, p in power.items()},
                  flags={label: as_output(v["flags"]) for label, v in table.items()},
                  lost={label: as_output(v) for label, v in lost.items()})
    nan = np.full(shape, np.nan)
    if len(main) == 2:
        a, b = main
        values["separation_mm"] = as_output(norm(position[b] - position[a]))
        offset = exits[b][0] - exits[a][0]
        axis = normalize(exits[a][1] + exits[b][1])
        values["exit_offset_mm"] = offset
        values["lateral_offset_mm"] = as_output(norm(cross(axis, offset)))
    else:
        values["separation_mm"] = as_output(nan)
        values["exit_offset_mm"] = np.full(shape + (3,), np.nan)
        values["lateral_offset_mm"] = as_output(nan.copy())
        if main_labels is None:
            # Trace again without pruning to say which beam is missing and why.
            extra = beam_table(prism, wavelength, in_plane, out_of_plane, offset,
                               "separation", power_threshold=0.0)
            values["reason"] = missing_pair_reason(
                "separation", main, *({label: v[name] for label, v in extra.items()}
                                      for name in ("lost", "power", "flags")))
            warn_missing(values["reason"])
    if waist_mm is not None:
        radius = {label: as_output(_radius_mm(waist, wavelength, z, m2))
                  for label, z in reduced.items()}
        values["reduced_distance_mm"] = {label: as_output(z) for label, z in reduced.items()}
        values["beam_radius_mm"] = radius
        values["divergence_deg"] = as_output(
            np.rad2deg(m2 * wavelength * 1e-3 / (np.pi * waist)))
        if len(main) == 2:
            w_a, w_b = radius[main[0]], radius[main[1]]
            clearance = (values["separation_mm"] - (w_a + w_b)) / np.maximum(w_a, w_b)
            values["clearance"] = as_output(clearance)
            # A comparison with NaN is False: where a beam is lost the beams are not resolved.
            values["resolved"] = as_output(clearance > min_clearance)
        else:
            values["clearance"] = as_output(nan.copy())
            values["resolved"] = as_output(np.zeros(shape, dtype=bool))
    return SeparationResult(**values)
