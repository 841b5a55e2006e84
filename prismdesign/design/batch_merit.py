"""Figures and margins of many perturbed prisms from one vectorised trace.

The per-sample counterpart of :mod:`prismdesign.design.merit`: the same figures (split,
bisector, each main beam's deviation, offset / shear, separation and clearance on the
observation plane, transmittance, leakage) and the same margins, but every array carries the
sample axes first, shape S + (n_wavelengths, n_directions). The main beams are those of the
nominal prism (a perturbed prism is judged on the beams it was designed to deliver) and the
observation plane stays where the nominal exit face puts it (the lab's screen does not move
with the prism). Lost beams give NaN and a missed (failing) margin, as in the merit.

The polarisation of the undeviated beam is judged per sample, from the powers each member of
the unpolarised pair puts into it (as :func:`~prismdesign.design.merit.figures` does for one
prism). The Nomarski localisation distance keeps its nominal value: it comes from a fit of the
crossing of a fan of rays (:func:`~prismdesign.prisms.nomarski.localisation_plane`), one
scalar solve per prism that does not batch over samples, so it is not re-fitted per sample:
a Monte Carlo yield does not see errors that move the localisation plane (check a built
prism with :func:`~prismdesign.analysis.fringe_localisation` instead).
"""
import warnings
from dataclasses import dataclass

import numpy as np

from ..analysis._common import strip_pair
from ..analysis.interference import exit_wave_paths
from ..optics.vectors import cross, dot, norm, normalize
from .merit import (LOST_FLAGS, POWER_FLOOR, beam_radius_mm, field_directions_deg, figures,
                    on_plane_mm)
from .perturbation import apply_errors
from ..analysis.beam_groups import trace_output_beams

__all__ = ["BatchFigures", "trace_figures", "sample_figures", "sample_margins",
           "face_extent_mm"]


@dataclass(frozen=True)
class BatchFigures:
    """Figures of a batch of prisms and inputs; arrays of the bundle shape (no pair axis).

    Attributes
    ----------
    main_labels : tuple of str
        The nominal main beams, ordered by in-plane deviation.
    deviation_deg, out_of_plane_deg : dict[str, ndarray]
        In-plane exit angle of each main beam from the nominal input direction, and its
        out-of-plane angle (degrees).
    split_deg, bisector_deg, offset_mm, opd_um : ndarray or None
        Two-beam figures (None for one main beam). `opd_um` is the optical path difference
        (first main beam minus second, µm) at the midpoint of the two beams on the plane
        through the nominal exit face, as :func:`~prismdesign.analysis.optical_path_difference`.
    separation_mm, clearance_mm : ndarray or None
        On the observation plane, when the requirement sets `distance_mm`
        (and `beam_diameter_mm` for the clearance).
    transmittance : dict[str, ndarray]
        Each main beam's power over the power of the polarisation it carries.
    leakage : ndarray
        Power outside the main beams over the transmitted power.
    present : dict[str, ndarray of bool]
        Where each main beam leaves the prism as a usable beam.
    undeviated_polarisation : ndarray of str or None
        Two main beams: per prism (shape S, over the wavelengths on axis), "in_plane" or
        "across", the input polarisation that feeds the less deviated beam; "" where that
        beam is lost. None for one main beam.
    """

    main_labels: tuple
    deviation_deg: dict
    out_of_plane_deg: dict
    split_deg: np.ndarray | None
    bisector_deg: np.ndarray | None
    offset_mm: np.ndarray | None
    opd_um: np.ndarray | None
    separation_mm: np.ndarray | None
    clearance_mm: np.ndarray | None
    transmittance: dict
    leakage: np.ndarray
    present: dict
    undeviated_polarisation: np.ndarray | None = None


def trace_figures(prism, wavelength_um, in_plane_deg, out_of_plane_deg, main_labels, *,
                  reference_in_plane_deg=0.0, plane_z_mm, requirement=None):
    """Trace a (perturbed) prism once, unpolarised, and derive the figures of its main beams.

    Parameters
    ----------
    prism : Prism
        May carry per-sample arrays (see :func:`~prismdesign.design.perturbation.apply_errors`).
    wavelength_um, in_plane_deg, out_of_plane_deg : array_like
        Trace inputs (µm, degrees), broadcasting against the prism's sample axes.
    main_labels : sequence of str
        The beams to judge (from the nominal prism).
    reference_in_plane_deg : array_like
        Nominal input direction that deviations and bisector are measured from (degrees).
    plane_z_mm : float
        Plane of the OPD (and, plus the requirement's distance, of the separation).
    requirement : Requirement, optional
        Supplies `distance_mm`, `beam_diameter_mm` and `m_squared` for separation / clearance.

    Returns
    -------
    BatchFigures
    """
    result = trace_output_beams(prism, wavelength_um, in_plane_deg, out_of_plane_deg,
                                polarisation="unpolarised")
    pair_power = {label: b.power for label, b in result.beams.items()}
    beams = {label: strip_pair(b, result.incoherent_pair) for label, b in result.beams.items()}
    shape = next(iter(beams.values())).power.shape
    total = sum((b.power for b in beams.values()), np.zeros(shape))
    nan = np.full(shape, np.nan)
    main = tuple(main_labels)
    present = {}
    for label in main:
        if label in beams:
            b = beams[label]
            present[label] = ((b.flags & LOST_FLAGS) == 0) & (b.power >= POWER_FLOOR)
        else:
            present[label] = np.zeros(shape, dtype=bool)
    main_power = sum((beams[label].power for label in main if label in beams), np.zeros(shape))
    with np.errstate(invalid="ignore", divide="ignore"):
        leakage = np.where(total > 0, (total - main_power) / total, np.nan)
    transmittance = {label: np.where(present[label], 2.0 * beams[label].power, np.nan)
                     if label in beams else nan for label in main}
    deviation, across = {}, {}
    for label in main:
        if label not in beams:
            deviation[label] = across[label] = nan
            continue
        d = beams[label].exit_direction
        deviation[label] = np.where(present[label], np.rad2deg(np.arctan2(d[..., 0], d[..., 2]))
                                    - reference_in_plane_deg, np.nan)
        across[label] = np.where(present[label],
                                 np.rad2deg(np.arcsin(np.clip(d[..., 1], -1.0, 1.0))), np.nan)
    split = bisector = offset = opd = separation = clearance = None
    if len(main) == 2:
        a, b = main
        both = present[a] & present[b]
        if a in beams and b in beams:
            ba, bb = beams[a], beams[b]
            da, db = ba.exit_direction, bb.exit_direction
            split = np.where(both, np.rad2deg(np.arctan2(norm(cross(da, db)), dot(da, db))), nan)
            mid = da + db
            bisector = np.where(both, np.rad2deg(np.arctan2(mid[..., 0], mid[..., 2]))
                                - reference_in_plane_deg, nan)
            gap = bb.exit_position_mm - ba.exit_position_mm
            u = normalize(mid)
            offset = np.where(both, norm(gap - dot(gap, u)[..., None] * u), nan)
            spots = [on_plane_mm(beam, plane_z_mm) for beam in (ba, bb)]
            point = 0.5 * (spots[0] + spots[1])
            opd = np.where(both, 1e3 * (_phase_at(ba, point) - _phase_at(bb, point)), nan)
            if requirement is not None and requirement.distance_mm is not None:
                far = [on_plane_mm(beam, plane_z_mm + requirement.distance_mm)
                       for beam in (ba, bb)]
                separation = np.where(both, norm(far[1] - far[0]), nan)
                if requirement.beam_diameter_mm is not None:
                    radii = [beam_radius_mm(beam, spot, requirement)
                             for beam, spot in zip((ba, bb), far)]
                    clearance = np.where(both, separation - radii[0] - radii[1], nan)
        else:
            split = bisector = offset = opd = nan
        undeviated = _undeviated_polarisation(main, deviation, pair_power, present)
    else:
        undeviated = None
    return BatchFigures(main, deviation, across, split, bisector, offset, opd, separation,
                        clearance, transmittance, leakage, present, undeviated)


def _undeviated_polarisation(main, deviation, pair_power, present):
    """Per prism, which input polarisation feeds the less deviated main beam (on axis, over
    the wavelengths), as :func:`~prismdesign.design.merit.figures`; "" where it is lost.

    Pair member 0 of the unpolarised trace is the in-plane (x) input, member 1 the one across.
    """
    a, b = main
    with np.errstate(invalid="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN slices: a lost beam
        dev_a = np.nanmean(np.abs(deviation[a][..., 0]), axis=-1)
        dev_b = np.nanmean(np.abs(deviation[b][..., 0]), axis=-1)
    pick_b = dev_b < dev_a
    lead = dev_a.shape
    pair = [np.zeros((2,) + lead) if label not in pair_power
            else np.broadcast_to(pair_power[label], (2,) + lead + pair_power[label].shape[-2:])
            [..., 0].sum(axis=-1) for label in (a, b)]
    px = np.where(pick_b, pair[1][0], pair[0][0])
    py = np.where(pick_b, pair[1][1], pair[0][1])
    alive = np.where(pick_b, present[b][..., 0].any(axis=-1), present[a][..., 0].any(axis=-1))
    alive &= np.isfinite(np.where(pick_b, dev_b, dev_a))
    return np.where(alive, np.where(px >= py, "in_plane", "across"), "")


def _phase_at(beam, points_mm):
    exit_mm, k, path = exit_wave_paths(beam)
    return path + dot(k, points_mm - exit_mm)


def face_extent_mm(prism):
    """z-extent (mm) of the prism between its first and last face over the clear width, in the
    section y = 0; works on per-sample faces (shape S) as on nominal ones.

    For stacked prisms this is the length :attr:`Prism.length_mm` reports.
    """
    own_x = np.array([np.cos(np.deg2rad(prism.rotation_deg)),
                      np.sin(np.deg2rad(prism.rotation_deg)), 0.0])
    half = 0.5 * prism.width_mm

    def z_at(boundary, x):
        n, p = boundary.normal, boundary.point_mm
        return (np.sum(p * n, axis=-1) - x * (n @ own_x)) / n[..., 2]

    first, last = prism.boundaries[0], prism.boundaries[-1]
    low = np.minimum(z_at(first, -half), z_at(first, half))
    high = np.maximum(z_at(last, -half), z_at(last, half))
    return high - low


def sample_figures(prism, requirement, errors, *, main_labels=None):
    """Figures of N perturbed copies of `prism` over the requirement's wavelengths and field.

    Parameters
    ----------
    prism : Prism
        Nominal prism.
    requirement : Requirement
    errors : dict[str, array_like]
        Per-sample errors (see :mod:`prismdesign.design.perturbation`), sample shape S.
    main_labels : tuple of str, optional
        The nominal main beams (default from :func:`~prismdesign.design.merit.figures`).

    Returns
    -------
    figures : BatchFigures
        Arrays of shape S + (n_wavelengths, n_directions).
    batch : Prism
        The perturbed prism (per-sample arrays).
    """
    if main_labels is None:
        main_labels = figures(prism, requirement).main_labels
    batch, inputs = apply_errors(prism, errors, ray_ndim=2)
    lam = requirement.wavelengths_um[:, None] + inputs.wavelength_um
    in_plane, out_of_plane = field_directions_deg(requirement.field_half_angle_deg)
    figs = trace_figures(batch, lam, in_plane[None, :] + inputs.in_plane_deg,
                         out_of_plane[None, :] + inputs.out_of_plane_deg, main_labels,
                         reference_in_plane_deg=in_plane[None, :], plane_z_mm=prism.exit_z_mm,
                         requirement=requirement)
    return figs, batch


def _worst(values, axes, worst="max"):
    """Worst value over `axes`; NaN where any value there is NaN (a lost beam)."""
    values = np.asarray(values, dtype=float)
    nan = np.isnan(values).any(axis=axes)
    reduced = np.nanmax(values, axis=axes) if worst == "max" else np.nanmin(values, axis=axes)
    return np.where(nan, np.nan, reduced)


def sample_margins(prism, requirement, figs, batch, nominal=None):
    """Margin of every requirement for every sample, as :func:`~prismdesign.design.merit.assess`.

    Parameters
    ----------
    prism : Prism
        Nominal prism.
    requirement : Requirement
    figs : BatchFigures
        From :func:`sample_figures` (arrays S + (n, m)).
    batch : Prism
        The perturbed prism (for its length).
    nominal : Assessment, optional
        The nominal assessment (for the requirements a small error cannot change).

    Returns
    -------
    margins : dict[str, ndarray]
        Margin per requirement (its own unit), shape S; NaN counts as missed.
    scales : dict[str, float]
        The natural size of each margin (as :class:`~prismdesign.design.merit.Margin.scale`).
    """
    from .merit import assess
    nominal = assess(prism, requirement) if nominal is None else nominal
    main = figs.main_labels
    lead = figs.leakage.shape[:-2]
    both, first = (-2, -1), -1
    margins, scales = {}, {}
    kind = requirement.target_kind
    if kind != "polariser":
        value = {"split": figs.split_deg, "separation": figs.separation_mm,
                 "offset": figs.offset_mm, "shear": figs.offset_mm}[kind]
        tol = requirement.target_tolerance
        if value is None:
            value = np.full(lead + (1, 1), np.nan)
        miss = _worst(np.abs(value[..., 0] - requirement.target_value), first)
        margins[kind], scales[kind] = tol - miss, tol
    else:
        lost = ~figs.present[main[0]].all(axis=both)
        margins["transmitted beam"] = np.where(lost, np.nan, np.inf)
        scales["transmitted beam"] = 1.0
    if requirement.bisector_deg is not None and figs.bisector_deg is not None:
        tol = requirement.target_tolerance or 0.01
        miss = _worst(np.abs(figs.bisector_deg[..., 0] - requirement.bisector_deg), first)
        margins["bisector"], scales["bisector"] = tol - miss, tol
    for m in nominal.margins:
        if m.name == "undeviated polarisation" and figs.undeviated_polarisation is not None:
            pol = figs.undeviated_polarisation
            margins[m.name] = np.where(pol == "", np.nan, np.where(
                pol == requirement.undeviated_polarisation, 0.0, -1.0))
            scales[m.name] = m.scale
        elif m.name in ("undeviated polarisation", "localisation distance", "beams"):
            # Kept nominal: see the module docstring.
            margins[m.name] = np.full(lead, m.margin)
            scales[m.name] = m.scale
    if requirement.max_length_mm is not None:
        length = prism.length_mm + (face_extent_mm(batch) - face_extent_mm(prism))
        length = np.broadcast_to(length.reshape(length.shape[:len(lead)] or ()), lead)
        margins["length"] = requirement.max_length_mm - length
        scales["length"] = requirement.max_length_mm
    if requirement.min_transmission is not None:
        stacked = np.stack([figs.transmittance[label] for label in main], axis=-1)
        worst = _worst(stacked, (-3, -2, -1), "min")
        margins["transmission"] = worst - requirement.min_transmission
        scales["transmission"] = requirement.min_transmission
    if requirement.max_leakage is not None:
        margins["leakage"] = requirement.max_leakage - _worst(figs.leakage, both)
        scales["leakage"] = requirement.max_leakage
    if requirement.field_half_angle_deg and requirement.max_leakage is None:
        lost = ~np.all([figs.present[label].all(axis=both) for label in main], axis=0)
        margins["field of view"] = np.where(lost, np.nan, 0.0)
        scales["field of view"] = requirement.field_half_angle_deg
    if requirement.min_clearance_mm is not None and figs.clearance_mm is not None:
        worst = _worst(figs.clearance_mm[..., 0], first, "min")
        margins["clearance"] = worst - requirement.min_clearance_mm
        scales["clearance"] = max(abs(requirement.min_clearance_mm), 0.1)
    return margins, scales
