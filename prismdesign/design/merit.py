"""How well a candidate prism meets a requirement: its figures and a margin per requirement.

One unpolarised trace per candidate feeds every figure: the wavelengths of the requirement on
one axis, and, when a field of view is asked for, five input directions on the other (on axis,
± the half-angle in the principal section and across it). From it come the split, bisector,
separation on a plane, lateral offset, 1/e² clearance, transmittance of each main beam and the
leakage into unwanted beams, on axis and at the field's edges.

A **margin** is how much room is left before a requirement fails, in the requirement's own unit:
positive is met, negative missed by that much. Where a beam compared by a figure does not leave
the prism (totally reflected, outside the aperture, missed a surface, or below the power floor)
the figure is NaN there and every requirement that depends on it is missed, with the reason.

The merit says what a good prism is; :mod:`prismdesign.design.solve` decides how to find one.
"""
from dataclasses import dataclass, field

import numpy as np

from ..analysis._common import (LOST_FLAGS, LOST_POWER_FLOOR, describe_lost, lost_codes,
                                rank_beams, strip_pair)
from ..analysis.separation import _inside_reduced_distance_mm, _radius_mm
from ..optics.vectors import cross, dot, norm, normalize
from ..analysis.beam_groups import trace_output_beams

__all__ = ["Figures", "Margin", "Assessment", "figures", "assess", "LOST_FLAGS",
           "POWER_FLOOR"]

#: A main beam carrying less than this fraction of the input power counts as lost: the
#: analyses' floor, so a design figure and an analysis agree on which beams exist.
POWER_FLOOR = LOST_POWER_FLOOR

def field_directions_deg(half_angle_deg):
    """Input directions (in-plane, out-of-plane), degrees: on axis, then the field's edges."""
    if not half_angle_deg:
        return np.zeros(1), np.zeros(1)
    f = float(half_angle_deg)
    return np.array([0.0, f, -f, 0.0, 0.0]), np.array([0.0, 0.0, 0.0, f, -f])


@dataclass(frozen=True)
class Figures:
    """Figures of one candidate, each an array over (wavelength, input direction).

    Axis 0 runs over the requirement's wavelengths, axis 1 over the input directions of
    :func:`field_directions_deg` (index 0 is on axis). NaN wherever a beam the figure needs
    does not leave the prism; `lost` says why.

    Attributes
    ----------
    wavelength_um : ndarray, shape (n,)
    in_plane_deg, out_of_plane_deg : ndarray, shape (m,)
        Input directions (degrees).
    main_labels : tuple of str
        The main beams (two for a splitter, one for a polariser), ordered by in-plane
        deviation.
    split_deg, bisector_deg : ndarray, shape (n, m)
        Exact angle between the two main beams; in-plane angle of their bisector from the input
        direction (degrees).
    separation_mm : ndarray or None
        Distance between the two beam centres on the plane `distance_mm` beyond the exit face.
    offset_mm : ndarray
        Distance between the two exit rays measured across their mean direction (mm): the
        lateral offset of parallel beams (displacer, Savart plate).
    clearance_mm : ndarray or None
        Separation minus the two 1/e² radii on the plane (mm).
    transmittance : dict[str, ndarray]
        Each main beam's power over the power of the polarisation it carries (for unpolarised
        input: twice its share).
    leakage : ndarray
        Power in all other transmitted beams over the total transmitted power.
    undeviated_label : str or None
        The main beam closest to the input direction (Rochon-type prisms).
    undeviated_polarisation : str or None
        "in_plane" or "across": which input polarisation feeds the undeviated beam.
    lost : dict[str, ndarray of str]
        Per main beam and point, why it is lost ("" where it is present).
    length_mm : float
        Length of the prism along z.
    """

    wavelength_um: np.ndarray
    in_plane_deg: np.ndarray
    out_of_plane_deg: np.ndarray
    main_labels: tuple
    split_deg: np.ndarray | None
    bisector_deg: np.ndarray | None
    separation_mm: np.ndarray | None
    offset_mm: np.ndarray | None
    clearance_mm: np.ndarray | None
    transmittance: dict
    leakage: np.ndarray
    undeviated_label: str | None
    undeviated_polarisation: str | None
    lost: dict
    length_mm: float

    def target_figure(self, kind):
        """The on-axis figure (shape (n,)) a target of `kind` is compared with."""
        value = {"split": self.split_deg, "separation": self.separation_mm,
                 "offset": self.offset_mm, "shear": self.offset_mm}[kind]
        return None if value is None else value[:, 0]


def _lost_reasons(beam, power, floor):
    """Per-point reason text ("" where present): the analyses' lost-beam rule."""
    return describe_lost(lost_codes(beam.flags, power, floor))


def figures(prism, requirement, *, main_count=None):
    """Trace `prism` once over the requirement's wavelengths and field, and derive its figures.

    Parameters
    ----------
    prism : Prism
    requirement : Requirement
    main_count : int, optional
        Number of main beams: 1 for a polariser, else 2 (default from the requirement).

    Returns
    -------
    Figures
    """
    lam = requirement.wavelengths_um
    in_plane, out_of_plane = field_directions_deg(requirement.field_half_angle_deg)
    result = trace_output_beams(prism, lam[:, None], in_plane[None, :], out_of_plane[None, :],
                                polarisation="unpolarised")
    pair_power = {label: beam.power for label, beam in result.beams.items()}
    beams = {label: strip_pair(beam, result.incoherent_pair) for label, beam in result.beams.items()}
    power = {label: beam.power for label, beam in beams.items()}
    count = main_count or (1 if requirement.target_kind == "polariser" else 2)
    # Main beams chosen on axis, where the design is meant to work.
    main = rank_beams({label: p[:, 0] for label, p in power.items()}, count)
    in_dev = {label: np.rad2deg(np.arctan2(beams[label].exit_direction[..., 0],
                                           beams[label].exit_direction[..., 2]))
              for label in main}
    main = tuple(sorted(main, key=lambda label: (float(np.nanmean(in_dev[label][:, 0])), label)))
    lost = {label: _lost_reasons(beams[label], power[label], POWER_FLOOR) for label in main}
    present = {label: lost[label] == "" for label in main}
    shape = (lam.size, in_plane.size)
    nan = np.full(shape, np.nan)

    total = sum(power.values()) if power else np.zeros(shape)
    main_power = sum((power[label] for label in main), np.zeros(shape))
    with np.errstate(invalid="ignore", divide="ignore"):
        leakage = np.where(total > 0, (total - main_power) / total, np.nan)
    transmittance = {label: np.where(present[label], 2.0 * power[label], np.nan) for label in main}

    split = bisector = separation = offset = clearance = None
    undeviated = undeviated_pol = None
    length = prism.length_mm
    if len(main) == 2:
        a, b = main
        both = present[a] & present[b]
        da, db = beams[a].exit_direction, beams[b].exit_direction
        split = np.where(both, np.rad2deg(np.arctan2(norm(cross(da, db)), dot(da, db))), nan)
        mid = da + db
        bisector = np.where(both, np.rad2deg(np.arctan2(mid[..., 0], mid[..., 2])) - in_plane,
                            nan)
        pa, pb = beams[a].exit_position_mm, beams[b].exit_position_mm
        u = normalize(mid)
        gap = pb - pa
        across = gap - dot(gap, u)[..., None] * u
        offset = np.where(both, norm(across), nan)
        if requirement.distance_mm is not None:
            plane_z = prism.exit_z_mm + requirement.distance_mm
            spots = [on_plane_mm(beams[label], plane_z) for label in main]
            separation = np.where(both, norm(spots[1] - spots[0]), nan)
            if requirement.beam_diameter_mm is not None:
                radii = [beam_radius_mm(beams[label], spot, requirement)
                         for label, spot in zip(main, spots)]
                clearance = np.where(both, separation - radii[0] - radii[1], nan)
        dev = {label: np.abs(in_dev[label][:, 0] - in_plane[0]) for label in main}
        undeviated = min(main, key=lambda label: float(np.nanmean(dev[label])))
        px, py = (pair_power[undeviated][i][:, 0].sum() for i in range(2))
        undeviated_pol = "in_plane" if px >= py else "across"
    return Figures(wavelength_um=lam, in_plane_deg=in_plane, out_of_plane_deg=out_of_plane,
                   main_labels=main, split_deg=split, bisector_deg=bisector,
                   separation_mm=separation, offset_mm=offset, clearance_mm=clearance,
                   transmittance=transmittance, leakage=leakage, undeviated_label=undeviated,
                   undeviated_polarisation=undeviated_pol, lost=lost, length_mm=length)


def on_plane_mm(beam, plane_z_mm):
    """Where a beam's exit rays cross the plane z = `plane_z_mm` (mm, shape (..., 3))."""
    d, r = beam.exit_direction, beam.exit_position_mm
    return r + ((plane_z_mm - r[..., 2]) / d[..., 2])[..., None] * d


def beam_radius_mm(beam, spot_mm, requirement):
    """1/e² radius (mm) at `spot_mm` of a beam with its waist at the entrance.

    Every segment counts as its reduced length L/n, the one after the prism too (in the exit
    medium, air: n ≈ 1.0003); slab ABCD propagation, the same rule and code as
    :func:`prismdesign.analysis.separation`.
    """
    reduced = (_inside_reduced_distance_mm(beam)
               + norm(spot_mm - beam.exit_position_mm) / beam.indices[-1])
    return _radius_mm(0.5 * requirement.beam_diameter_mm, beam.wavelength_um, reduced,
                      requirement.m_squared)


@dataclass(frozen=True)
class Margin:
    """One requirement against what a candidate achieves.

    Attributes
    ----------
    name : str
        The requirement, in words ("split", "length", "leakage over the field", ...).
    achieved : float
        The candidate's worst value over the band (and field), in `unit`; NaN if undefined.
    limit : float
        The requirement's limit or target, in `unit`.
    margin : float
        Room left before it fails (positive: met; negative: missed by that much), in `unit`.
    unit : str
    scale : float
        Natural size of the margin (the tolerance, or the limit) used to compare margins of
        different requirements.
    reason : str
        Why it is missed when no number says it (e.g. a lost beam), else "".
    """

    name: str
    achieved: float
    limit: float
    margin: float
    unit: str
    scale: float
    reason: str = ""

    @property
    def met(self):
        return bool(np.isfinite(self.margin) and self.margin >= 0)

    @property
    def relative(self):
        """Margin over its scale (−inf when undefined): comparable across requirements."""
        return self.margin / self.scale if np.isfinite(self.margin) else -np.inf

    def text(self):
        """e.g. "split: 20.013 deg (target 20, met by 0.087)"."""
        if not np.isfinite(self.margin):
            return f"{self.name}: missed ({self.reason})"
        verdict = "met by" if self.met else "missed by"
        return (f"{self.name}: {self.achieved:.6g} {self.unit} (limit {self.limit:.6g}, "
                f"{verdict} {abs(self.margin):.3g})")


@dataclass(frozen=True)
class Assessment:
    """A candidate's figures and its margin on every requirement that applies to it."""

    figures: Figures
    margins: tuple = field(default_factory=tuple)

    @property
    def meets(self):
        """True when every requirement is met."""
        return all(m.met for m in self.margins)

    @property
    def active(self):
        """The requirement with the least relative room (the one that limits the design)."""
        return min(self.margins, key=lambda m: m.relative) if self.margins else None

    @property
    def failed(self):
        return tuple(m for m in self.margins if not m.met)


def _lost_text(figs, labels):
    """First reason a main beam is lost, with its wavelength, or ""."""
    for label in labels:
        where = np.nonzero(figs.lost[label] != "")
        if where[0].size:
            i, j = where[0][0], where[1][0]
            direction = "" if j == 0 else (f" at input ({figs.in_plane_deg[j]:+g}°, "
                                           f"{figs.out_of_plane_deg[j]:+g}°)")
            return (f"beam {label!r} {figs.lost[label][i, j]} at "
                    f"{figs.wavelength_um[i]:.4g} µm{direction}")
    return ""


def _worst(values, worst="max"):
    """Worst finite value, NaN if any value is NaN (a lost beam makes the figure undefined)."""
    values = np.asarray(values, dtype=float)
    if values.size == 0 or np.any(np.isnan(values)):
        return np.nan
    return float(values.max() if worst == "max" else values.min())


def assess(prism, requirement, *, figs=None, localisation_distance_mm=None):
    """Figures and margins of `prism` against `requirement`.

    Parameters
    ----------
    prism : Prism
    requirement : Requirement
    figs : Figures, optional
        Already computed figures of this prism (else traced here).
    localisation_distance_mm : float, optional
        The prism's fringe-localisation distance (Nomarski), compared with the requirement's.

    Returns
    -------
    Assessment
    """
    figs = figures(prism, requirement) if figs is None else figs
    margins = []
    kind = requirement.target_kind
    main = figs.main_labels
    needed = 1 if kind == "polariser" else 2
    if len(main) < needed:
        margins.append(Margin("beams", float(len(main)), float(needed), np.nan, "beams", 1.0,
                              f"only {len(main)} beam(s) leave the prism on axis"))
        return Assessment(figs, tuple(margins))
    if kind != "polariser":
        target = requirement.target_value
        tol = requirement.target_tolerance
        value = figs.target_figure(kind)
        miss = _worst(np.abs(value - target))
        reason = _lost_text(figs, main) if np.isnan(miss) else ""
        achieved = float(value[np.nanargmax(np.abs(value - target))]) if np.isfinite(miss) else np.nan
        margins.append(Margin(kind, achieved, target, tol - miss, requirement.target_unit, tol,
                              reason))
        if requirement.temperature_range_c is not None:
            from .temperature import temperature_margin   # imports this module: import late
            held = temperature_margin(prism, requirement, main)
            if held is not None:
                margins.append(held)
    elif np.any(figs.lost[main[0]] != ""):
        margins.append(Margin("transmitted beam", np.nan, 1.0, np.nan, "", 1.0,
                              _lost_text(figs, main)))
    if requirement.bisector_deg is not None and figs.bisector_deg is not None:
        tol = requirement.target_tolerance or 0.01
        miss = _worst(np.abs(figs.bisector_deg[:, 0] - requirement.bisector_deg))
        margins.append(Margin("bisector", requirement.bisector_deg + miss
                              if np.isfinite(miss) else np.nan, requirement.bisector_deg,
                              tol - miss, "deg", tol, _lost_text(figs, main)))
    if requirement.undeviated_polarisation is not None and figs.undeviated_polarisation:
        ok = figs.undeviated_polarisation == requirement.undeviated_polarisation
        margins.append(Margin("undeviated polarisation", float(ok), 1.0, 0.0 if ok else -1.0,
                              "", 1.0, "" if ok else
                              f"the undeviated beam is polarised {figs.undeviated_polarisation}"))
    if requirement.max_length_mm is not None:
        margins.append(Margin("length", figs.length_mm, requirement.max_length_mm,
                              requirement.max_length_mm - figs.length_mm, "mm",
                              requirement.max_length_mm))
    if requirement.min_transmission is not None:
        worst = _worst([figs.transmittance[label] for label in main], "min")
        margins.append(Margin("transmission", worst, requirement.min_transmission,
                              worst - requirement.min_transmission, "", requirement.min_transmission,
                              _lost_text(figs, main) if np.isnan(worst) else ""))
    if requirement.max_leakage is not None:
        worst = _worst(figs.leakage)
        margins.append(Margin("leakage", worst, requirement.max_leakage,
                              requirement.max_leakage - worst, "", requirement.max_leakage,
                              _lost_text(figs, main) if np.isnan(worst) else ""))
    if requirement.field_half_angle_deg and requirement.max_leakage is None:
        # A field without a leakage floor still needs the main beams at its edges.
        text = _lost_text(figs, main)
        margins.append(Margin("field of view", requirement.field_half_angle_deg,
                              requirement.field_half_angle_deg, np.nan if text else 0.0, "deg",
                              requirement.field_half_angle_deg, text))
    if requirement.min_clearance_mm is not None and figs.clearance_mm is not None:
        worst = _worst(figs.clearance_mm[:, 0], "min")
        margins.append(Margin("clearance", worst, requirement.min_clearance_mm,
                              worst - requirement.min_clearance_mm, "mm",
                              max(abs(requirement.min_clearance_mm), 0.1),
                              _lost_text(figs, main) if np.isnan(worst) else ""))
    if requirement.wants_localisation and localisation_distance_mm is not None:
        want = requirement.wanted_localisation_mm(prism.boundaries[-1].point_mm[2])
        tol = max(0.01 * abs(want), 0.1)
        margins.append(Margin("localisation distance", localisation_distance_mm, want,
                              tol - abs(localisation_distance_mm - want), "mm", tol))
    return Assessment(figs, tuple(margins))
