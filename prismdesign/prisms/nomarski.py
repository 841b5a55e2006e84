"""Nomarski prism and the fringe-localisation plane of any two-beam shearing prism.

A Nomarski prism is a Wollaston-type wedge pair in which the first wedge's optic axis is tilted
out of the entrance face (within the principal section x–z). The tilt moves the plane where the
two exit rays from one input ray cross (the fringe-localisation plane) out of the prism, so it
can be put at a chosen distance beyond the exit face, e.g. into an objective's back focal plane
(G. Nomarski, J. Phys. Radium 16, 9S (1955); M. Pluta, *Advanced Light Microscopy*, vol. 3,
1993; both from memory).
"""
from dataclasses import dataclass, replace

import numpy as np
from scipy.optimize import brentq

from ..optics.vectors import closest_approach
from .base import check_angle, check_finite, check_positive, check_prism
from .stack import resolve_material
from .wollaston import wedge_pair

__all__ = ["nomarski", "localisation_plane", "LocalisationPlane"]


@dataclass(frozen=True)
class LocalisationPlane:
    """Where the two beams of a shearing prism cross (section y = 0 for in-plane input).

    Attributes
    ----------
    z_mm : float
        z of the plane on the axis x = 0 (mm, global frame; the entrance face is z = 0).
    distance_from_exit_mm : float
        `z_mm` minus the z of the exit face at x = 0: positive beyond the exit face.
    tilt_deg : float
        Angle of the plane from the entrance face (rotation about y, degrees); the plane is
        z = z_mm + x·tan(tilt).
    points_mm : ndarray, shape (n + 1, 3)
        Crossing points (closest approach of the two exit rays): the central ray first, then
        one per entry point.
    labels : tuple of str
        The two beams used.
    """

    z_mm: float
    distance_from_exit_mm: float
    tilt_deg: float
    points_mm: np.ndarray
    labels: tuple


def localisation_plane(prism, wavelength_um=None, in_plane_deg=0.0, out_of_plane_deg=0.0, *,
                       labels=None, points=7, extent=0.6):
    """Fringe-localisation plane of a two-beam prism by exact tracing.

    Rays enter at the centre and at `points` offsets along x (within ±`extent`·width/2,
    y = 0) with the given direction; for each, the two exit rays (continued straight, forward
    or backward) are intersected (closest approach). The plane's position is that of the
    central ray's crossing (carried to x = 0 along the plane), its tilt the slope of a
    straight line z = z₀ + x tan ε fitted through all crossing points (the locus is slightly
    curved for strongly tilted planes). Works for Wollaston, Nomarski, Rochon-type and any
    prism that splits one ray into two.

    Parameters
    ----------
    prism : Prism
    wavelength_um : float, optional
        Vacuum wavelength (µm); default the design wavelength.
    in_plane_deg, out_of_plane_deg : float
        Input direction (degrees).
    labels : tuple of two str, optional
        Beams to cross; default the two strongest for unpolarised input.
    points : int
        Number of entry points (≥ 2).
    extent : float
        Fraction of the half width covered by the entry points (0 < extent ≤ 1).

    Returns
    -------
    LocalisationPlane
        NaN position and tilt when the exit rays are parallel (plane at infinity).
    """
    check_prism(prism)
    lam = prism.design_wavelength_um if wavelength_um is None else check_positive(
        "wavelength_um", wavelength_um)
    try:
        whole = not isinstance(points, (bool, np.bool_, str, bytes)) and int(points) == points
    except (TypeError, ValueError, OverflowError):
        whole = False
    if not whole or points < 2:
        raise ValueError(f"points must be an integer >= 2, got {points!r}")
    extent = check_finite("extent", extent, "a fraction in (0, 1]")
    if not (0 < extent <= 1):
        raise ValueError(f"extent must lie in (0, 1], got {extent!r}")
    x = np.concatenate([[0.0], np.linspace(-1.0, 1.0, int(points)) * extent * 0.5 * prism.width_mm])
    offsets = np.stack([x, np.zeros_like(x)], axis=-1)
    # Unpolarised input excites every beam whatever the axes; both members of the incoherent
    # pair follow the same rays, so the geometry is read from the first.
    result = prism.trace(lam, in_plane_deg, out_of_plane_deg, offset_mm=offsets)
    if labels is None:
        ranked = sorted(result.beams, key=lambda key: -float(np.sum(result.power(key))))
        if len(ranked) < 2:
            raise ValueError(f"{prism.kind} gives only {len(ranked)} beam(s); a localisation plane "
                             f"needs two")
        labels = tuple(ranked[:2])
    for label in labels:
        if label not in result.beams:
            raise ValueError(f"beam {label!r} not among the traced beams {sorted(result.beams)}")
    first, second = (result.beams[label] for label in labels)
    crossing, _, _ = closest_approach(first.exit_position_mm[0], first.exit_direction[0],
                                      second.exit_position_mm[0], second.exit_direction[0],
                                      parallel_limit=1e-150)
    finite = np.all(np.isfinite(crossing), axis=-1)
    if finite[0] and np.count_nonzero(finite) >= 3:
        slope, _ = np.polyfit(crossing[finite, 0], crossing[finite, 2], 1)
        z0 = crossing[0, 2] - crossing[0, 0] * slope
    else:
        slope = z0 = np.nan
    exit_face = prism.boundaries[-1]
    z_exit = exit_face.point_mm[2] - exit_face.point_mm[0] * exit_face.normal[0] / exit_face.normal[2]
    return LocalisationPlane(z_mm=float(z0), distance_from_exit_mm=float(z0 - z_exit),
                             tilt_deg=float(np.rad2deg(np.arctan(slope))), points_mm=crossing,
                             labels=tuple(labels))


def _tilted_axis(tilt_deg):
    """Optic axis in the x–z plane tilted by `tilt_deg` out of the entrance face toward +z."""
    t = np.deg2rad(tilt_deg)
    return np.array([np.cos(t), 0.0, np.sin(t)])


def nomarski(material="quartz", wedge_angle_deg=5.0, *, localisation_distance_mm=None,
             axis_tilt_deg=None, width_mm=10.0, height_mm=10.0, edge_thickness_mm=1.0,
             design_wavelength_um=0.6328, interface_layer=None, coated=False):
    """Build a Nomarski prism: a Wollaston pair whose first wedge has a tilted optic axis.

    First wedge: optic axis in the principal section, tilted out of the entrance face by
    `axis_tilt_deg` toward +z (axis (cos τ, 0, sin τ)). Second wedge: optic axis along y.
    Give either the tilt or the wanted localisation distance; the latter is solved for the
    tilt with :func:`scipy.optimize.brentq` on the exact :func:`localisation_plane`.

    Parameters
    ----------
    material : str or material
        Crystal of both wedges (quartz is usual for microscopy).
    wedge_angle_deg : float
        Angle between entrance face and interface (degrees); both wedges equal.
    localisation_distance_mm : float, optional
        Wanted distance of the localisation plane beyond the exit face at x = 0 (mm; negative:
        in front of it), at the design wavelength for normal incidence.
    axis_tilt_deg : float, optional
        Tilt τ of the first wedge's optic axis out of the entrance face (degrees, |τ| < 90).
        Zero gives a Wollaston prism.
    width_mm, height_mm, edge_thickness_mm, design_wavelength_um, interface_layer, coated
        As for :func:`~prismdesign.prisms.wollaston`.

    Returns
    -------
    Prism
        ``kind = "nomarski"``; ``parameters`` holds the tilt used and the resulting distance.
    """
    if (localisation_distance_mm is None) == (axis_tilt_deg is None):
        raise ValueError("give exactly one of localisation_distance_mm and axis_tilt_deg, got "
                         f"{localisation_distance_mm!r} and {axis_tilt_deg!r}")
    name = getattr(resolve_material(material), "name", str(material))
    params = dict(material=name, wedge_angle_deg=wedge_angle_deg, width_mm=width_mm,
                  height_mm=height_mm, edge_thickness_mm=edge_thickness_mm)

    def build(tilt_deg):
        return wedge_pair(material, wedge_angle_deg, None, width_mm, height_mm, edge_thickness_mm,
                          _tilted_axis(tilt_deg), "y", design_wavelength_um, "nomarski",
                          interface_layer=interface_layer, coated=coated, parameters=params)

    if axis_tilt_deg is not None:
        tilt = check_angle("axis_tilt_deg", axis_tilt_deg, -90.0, 90.0)
    else:
        target = check_finite("localisation_distance_mm", localisation_distance_mm,
                              "a finite distance in mm")
        tilt = _solve_tilt(build, target)
    prism = build(tilt)
    plane = localisation_plane(prism)
    return replace(prism, parameters=dict(params, axis_tilt_deg=tilt,
                                          localisation_distance_mm=plane.distance_from_exit_mm,
                                          localisation_tilt_deg=plane.tilt_deg))


def _solve_tilt(build, target):
    """Axis tilt (degrees) putting the localisation plane `target` mm beyond the exit face."""
    def miss(tilt_deg):
        return localisation_plane(build(tilt_deg)).distance_from_exit_mm - target

    # Scan for a sign change, nearest to zero tilt first: the distance grows with the tilt
    # but may jump through infinity where the two exit rays become parallel.
    grid = np.arange(0.0, 88.0, 2.0)
    values = {}

    def cached(tilt_deg):
        if tilt_deg not in values:
            values[tilt_deg] = miss(tilt_deg)
        return values[tilt_deg]

    for a, b in zip(grid[:-1], grid[1:]):
        for lo, hi in ((a, b), (-b, -a)):
            f_lo, f_hi = cached(lo), cached(hi)
            if np.isfinite(f_lo) and np.isfinite(f_hi) and f_lo * f_hi <= 0:
                root = brentq(miss, lo, hi, xtol=1e-12, rtol=1e-14)
                # A bracket across a pole (exit rays parallel) is not a root.
                if abs(miss(root)) < 1e-6 * (1.0 + abs(target)):
                    return float(root)
    raise ValueError(f"localisation_distance_mm={target!r} cannot be reached by tilting the "
                     f"first wedge's axis (tried tilts between -86 and 86 degrees)")
