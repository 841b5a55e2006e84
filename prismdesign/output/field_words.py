"""Plain-words statements of where a spec holds on a square map of incidence angles.

A field-of-view map (e.g. from :func:`prismdesign.analysis.field_of_view`) is a boolean grid
over in-plane and out-of-plane incidence angles. A single scan along one axis can call a field
"±15°" while the spec fails a degree away from that axis, or fails at normal incidence itself.
:func:`summarise_region` reads the whole 2-D map instead, and :func:`region_words` turns the
summary into a sentence whose every number comes from the map, so the words and the figure of
the same map cannot disagree.

All angles are read on the grid: they are good to the grid step, not refined by bisection.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["RegionSummary", "summarise_region", "region_words"]

#: The four directions from normal incidence read by :attr:`RegionSummary.axis_extent_deg`.
AXIS_NAMES = ("+in-plane", "-in-plane", "+out-of-plane", "-out-of-plane")


@dataclass(frozen=True)
class RegionSummary:
    """Where a spec holds on a square grid of incidence angles.

    Attributes
    ----------
    holds_at_normal_incidence : bool
        Whether the spec holds at the grid centre (0°, 0°).
    fraction : float
        Share of the grid points at which it holds (0 to 1).
    cone_half_angle_deg : float
        Angle r (degrees) such that the spec holds in every direction within r of normal
        incidence (distance hypot(in-plane, out-of-plane)): the distance of the nearest
        failing grid point less one grid step, a lower bound; 0 when it fails at normal
        incidence.
    cone_open : bool
        True when no failing point lies inside the circle inscribed in the grid: the cone is
        then only known to reach at least the grid's half range.
    axis_extent_deg : ndarray, shape (4,)
        Contiguous run from normal incidence along +in-plane, −in-plane, +out-of-plane,
        −out-of-plane (:data:`AXIS_NAMES`), as positive angles; 0 where it fails at normal
        incidence.
    axis_open : bool ndarray, shape (4,)
        True where that run reaches the grid edge (the extent is a lower bound).
    nearest_deg : float
        Distance (degrees) from normal incidence of the nearest grid point where the spec
        holds; NaN where it holds nowhere.
    nearest_point_deg : tuple of float
        (in-plane, out-of-plane) angles of that point in degrees; NaNs where it holds nowhere.
    half_range_deg, step_deg : float
        Half range and spacing of the grid (degrees).
    """

    holds_at_normal_incidence: bool
    fraction: float
    cone_half_angle_deg: float
    cone_open: bool
    axis_extent_deg: np.ndarray
    axis_open: np.ndarray
    nearest_deg: float
    nearest_point_deg: tuple
    half_range_deg: float
    step_deg: float


def _check_grid(ok, in_plane_deg, out_of_plane_deg):
    ok = np.asarray(ok)
    a = np.asarray(in_plane_deg, dtype=float)
    b = np.asarray(out_of_plane_deg, dtype=float)
    if ok.dtype != bool or ok.ndim != 2:
        raise ValueError(f"ok must be a 2-D boolean map, got dtype {ok.dtype} and shape "
                         f"{ok.shape}")
    if a.ndim != 1 or a.size < 3 or a.size % 2 == 0 or not np.allclose(a, b) \
            or ok.shape != (b.size, a.size) or not np.allclose(a, -a[::-1]) \
            or not np.all(np.diff(a) > 0):
        raise ValueError(
            f"the map must be square and centred on normal incidence: equal, increasing, odd-sized "
            f"axes symmetric about 0 and ok of shape (out_of_plane, in_plane); got axes of sizes "
            f"{a.size}, {b.size} and ok of shape {ok.shape}")
    return ok, a


def summarise_region(ok, in_plane_deg, out_of_plane_deg):
    """Summarise where a boolean spec map holds.

    Parameters
    ----------
    ok : bool ndarray, shape (n, n)
        True where the spec holds, indexed [out_of_plane, in_plane] as the maps of
        :class:`prismdesign.analysis.FieldOfView`.
    in_plane_deg, out_of_plane_deg : ndarray, shape (n,)
        The grid axes (degrees), equal, increasing, symmetric about 0, n odd.

    Returns
    -------
    RegionSummary

    Raises
    ------
    ValueError
        In one line, for a map that is not 2-D boolean or axes that are not a square grid
        centred on normal incidence.
    """
    ok, angles = _check_grid(ok, in_plane_deg, out_of_plane_deg)
    c = angles.size // 2
    half = float(angles[-1])
    step = float(angles[1] - angles[0])
    radius = np.hypot(angles[None, :], angles[:, None])
    centre = bool(ok[c, c])

    # Runs from the centre along the four axes, in the order of AXIS_NAMES.
    rays = np.stack([ok[c, c:], ok[c, c::-1], ok[c:, c], ok[c::-1, c]])
    broken = ~rays
    first_bad = np.where(broken.any(axis=1), broken.argmax(axis=1), rays.shape[1])
    extent = np.where(first_bad > 0, angles[c + np.maximum(first_bad - 1, 0)], 0.0)
    axis_open = first_bad == rays.shape[1]

    failing = ~ok & (radius <= half + 1e-9 * step)
    if not centre:
        cone, cone_open = 0.0, False
    elif not failing.any():
        cone, cone_open = half, True
    else:
        # Every grid point nearer than the nearest failing one holds; the true edge may lie
        # anywhere in the last grid step before it, so a step is taken off (a lower bound).
        cone, cone_open = max(float(radius[failing].min()) - step, 0.0), False

    if ok.any():
        distances = np.where(ok, radius, np.inf)
        i, j = np.unravel_index(np.argmin(distances), ok.shape)
        nearest, point = float(radius[i, j]), (float(angles[j]), float(angles[i]))
    else:
        nearest, point = float("nan"), (float("nan"), float("nan"))
    return RegionSummary(holds_at_normal_incidence=centre, fraction=float(ok.mean()),
                         cone_half_angle_deg=cone, cone_open=cone_open,
                         axis_extent_deg=extent.astype(float), axis_open=axis_open,
                         nearest_deg=nearest, nearest_point_deg=point, half_range_deg=half,
                         step_deg=step)


def _angle(value, is_open):
    return f"{value:.2f}° (grid edge)" if is_open else f"{value:.2f}°"


def _pair(extent, is_open, i):
    """'±a°' when both directions agree, else '+a° / −b°'."""
    if np.isclose(extent[i], extent[i + 1]) and is_open[i] == is_open[i + 1]:
        return "±" + _angle(extent[i], is_open[i])
    return f"+{_angle(extent[i], is_open[i])} / -{_angle(extent[i + 1], is_open[i + 1])}"


def region_words(summary):
    """One sentence saying where the spec holds, every number read from the map.

    Parameters
    ----------
    summary : RegionSummary

    Returns
    -------
    str
        For example "met at normal incidence and within 0.75° of it in every direction; along
        the axes in-plane ±15.00° (grid edge), out-of-plane ±6.50°; on 31.2 % of the map", or
        "NOT met at normal incidence; met on 8.4 % of the map, nearest to normal incidence
        3.91° away (in-plane +1.25°, out-of-plane +3.75°)", or "NOT met anywhere on the map".
    """
    if not isinstance(summary, RegionSummary):
        raise ValueError(f"summary must be a RegionSummary (from summarise_region), got "
                         f"{type(summary).__name__}")
    share = f"{100.0 * summary.fraction:.1f} % of the map"
    if summary.fraction == 0.0:
        return "NOT met anywhere on the map"
    if not summary.holds_at_normal_incidence:
        a, b = summary.nearest_point_deg
        return (f"NOT met at normal incidence; met on {share}, nearest to normal incidence "
                f"{summary.nearest_deg:.2f}° away (in-plane {a:+.2f}°, out-of-plane {b:+.2f}°)")
    if summary.fraction == 1.0:
        return f"met everywhere on the map (±{summary.half_range_deg:.2f}° both ways, grid edge)"
    extent, is_open = summary.axis_extent_deg, summary.axis_open
    cone = _angle(summary.cone_half_angle_deg, summary.cone_open)
    return (f"met at normal incidence and within {cone} of it in every direction; along the "
            f"axes in-plane {_pair(extent, is_open, 0)}, out-of-plane {_pair(extent, is_open, 2)};"
            f" on {share}")
