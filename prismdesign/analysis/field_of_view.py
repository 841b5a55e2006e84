"""Field of view: the incidence angles over which every beam of a prism stays within a spec.

A spec is a list of :class:`Requirement` objects (wanted beam not totally reflected, rejected
beam totally reflected, transmitted power above a floor, leakage below a ceiling, extinction
ratio above a floor). Each requirement has a continuous *margin*, positive where it holds, so
that the edges of the field can be found by bisection to any precision.

Angles follow :func:`~prismdesign.optics.direction_from_angles`: the input direction is
(cos β sin α, sin β, cos β cos α) with α the in-plane angle (tilt toward +x, the principal
section) and β the out-of-plane angle (toward +y). Maps are computed with one trace over the
whole grid (and all wavelengths); the edge search is a batched bisection with one trace per
step for all wavelengths, directions and requirements at once.

Total-reflection margins use the exact conditions: with κ the tangential wave vector (units of
the vacuum wavenumber) of the beam arriving at a surface, an isotropic medium or thin layer of
index n passes the wave when n² − κ² > 0; a uniaxial medium passes the beam's mode when the
discriminant of its normal-component equation is positive (ordinary: n_o² − κ²; extraordinary:
(b² − a c₀)/a, see :func:`prismdesign.optics.eigenmodes.normal_components`), which reduces to
n² − κ² in the isotropic limit. A thin coherent gap (Glan air space) keeps κ, so its margin
n_gap² − κ² is the geometric total-reflection condition even though a thin gap lets some power
tunnel through; use :func:`power_at_most` to bound that leak.
"""
from dataclasses import dataclass

import numpy as np

from ..optics import TraceFlag
from ..prisms.base import check_angle, check_flag, check_positive, check_prism
from .memory import check_fits, map_rays
from ._common import (LOST_FLAGS, check_numbers, check_offsets, check_polarisation,
                      check_ray_inputs, check_shapes, check_wavelengths, lost_codes, plain,
                      prism_sample_shape, shown, summarise_loss)
from .total_reflection import (Requirement, beam_blocked, beam_passes, check_requirements,
                               extinction_at_least, power_at_least, power_at_most)
from .beam_groups import trace_output_beams, with_members

__all__ = ["Requirement", "beam_passes", "beam_blocked", "power_at_least", "power_at_most",
           "extinction_at_least", "default_requirements", "requirement_margins",
           "FieldOfView", "field_of_view", "find_edges", "DIRECTIONS"]

#: Order of the four half-angle directions in :attr:`FieldOfView.half_angles_deg`, with the
#: azimuth of each in the (in-plane, out-of-plane) angle plane.
DIRECTIONS = (("+in-plane", 0.0), ("-in-plane", 180.0), ("+out-of-plane", 90.0),
              ("-out-of-plane", 270.0))

def default_requirements(prism, wavelength_um=None):
    """A sensible spec for a prism.

    Glan-type prisms (``prism.parameters["transmitted_mode"]`` is "o" or "e"): the transmitted
    beam (e.g. ``"ee"``) must pass and the rejected one (``"oo"``) must be totally reflected at
    the gap. Otherwise every beam carrying at least 1 % of unpolarised input at normal incidence
    (at `wavelength_um`, default the design wavelength) must pass.

    Raises
    ------
    ValueError
        In one line, when no beam leaves the prism at normal incidence (naming each beam and
        why it is lost there): there is no field to map.

    Parameters
    ----------
    prism : Prism
    wavelength_um : array_like, optional
        Vacuum wavelength(s) in µm; of an array, the first one picks the main beams.

    Returns
    -------
    tuple of Requirement
    """
    check_prism(prism)
    if wavelength_um is not None:
        wavelength_um = check_wavelengths(wavelength_um)
    params = prism.parameters or {}
    mode = params.get("transmitted_mode")
    if mode in ("o", "e"):
        crystals = sum(1 for piece in prism.pieces if piece.is_crystal)
        other = "e" if mode == "o" else "o"
        return (beam_passes(mode * crystals), beam_blocked(other * crystals))
    lam = prism.design_wavelength_um if wavelength_um is None else float(wavelength_um.flat[0])
    result = trace_output_beams(prism, lam, 0.0, 0.0, power_threshold=0.0)
    # The spec is about total reflection (the clear aperture is not part of it, see
    # field_of_view): a beam counts unless it is totally reflected, misses a surface or
    # carries under 1 % of the input.
    main = [label for label in sorted(result.beams) if float(result.power(label)) >= 0.01
            and not np.any(lost_codes(result.beams[label].flags, result.power(label))
                           & ~TraceFlag.OUTSIDE_APERTURE)]
    if not main:
        # No beam to keep inside a field: say why instead of handing on an empty spec.
        why = "; ".join(_why_not_main(label, beam, float(result.power(label)))
                        for label, beam in result.beams.items()) or "no beam is traced"
        raise ValueError(f"no default field-of-view spec for this {prism.kind} prism: no beam "
                         f"leaves it at normal incidence at {lam:g} µm ({why}); pass "
                         f"requirements explicitly or change the design")
    return tuple(beam_passes(b) for b in main)


def _why_not_main(label, beam, power):
    """Why a beam of a single-ray unpolarised trace is no main beam, as a short phrase."""
    flags = int(np.bitwise_or.reduce(np.ravel(beam.flags)))
    if flags & LOST_FLAGS:
        return summarise_loss(label, lost_codes(flags, power))
    if flags & TraceFlag.FRUSTRATED_TOTAL_REFLECTION:
        return f"{label!r} is totally reflected at a thin layer ({power:.3g} of the input tunnels)"
    return f"{label!r} carries {power:.3g} of the input"


def requirement_margins(prism, wavelength_um, in_plane_deg, out_of_plane_deg, requirements, *,
                        offset_mm=(0.0, 0.0), polarisation="unpolarised"):
    """Margins of each requirement at given incidence angles, with one trace.

    Parameters
    ----------
    prism : Prism
    wavelength_um, in_plane_deg, out_of_plane_deg : array_like
        Broadcast together (wavelength µm, angles degrees).
    requirements : sequence of Requirement
    offset_mm : array_like, shape (..., 2)
        Entry points (x, y) on the entrance face; broadcast with the other inputs.
    polarisation : array_like or "unpolarised"

    Returns
    -------
    ndarray, shape (n_requirements, ...)
        Margins (positive where the requirement holds), broadcast shape of the inputs.

    Raises
    ------
    ValueError
        In one line, for a `prism` that is not a :class:`~prismdesign.prisms.Prism`,
        `requirements` that are not Requirement objects, text, booleans, complex or non-finite
        numbers, wavelengths <= 0, angles outside (−90, 90), or inputs that do not broadcast
        together.
    """
    check_prism(prism)
    requirements = check_requirements(requirements)
    polarisation = check_polarisation(polarisation)[0]
    lam, in_plane, out_of_plane, offset = check_ray_inputs(
        wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm,
        *(() if isinstance(polarisation, str) else (("polarisation", polarisation.shape, 1),)),
        prism=prism)
    if all(r.kind in ("passes", "blocked") for r in requirements):
        # Geometry does not depend on the input polarisation: one diagonal input instead of
        # the incoherent pair halves the work.
        polarisation = (np.sqrt(0.5), np.sqrt(0.5))
    shape = np.broadcast_shapes(lam.shape, in_plane.shape, out_of_plane.shape, offset.shape[:-1],
                                prism_sample_shape(prism),
                                *(() if isinstance(polarisation, str)
                                  else (np.shape(polarisation)[:-1],)))

    def per_ray(result, traced_prism):
        # Output beams and their member branches (a margin is per branch: see
        # total_reflection_margin).
        result = with_members(result, traced_prism)
        system = traced_prism.system()
        ray_shape = np.shape(result.power(next(iter(result.beams))))
        return {i: np.broadcast_to(r.margin(result, system), ray_shape)
                for i, r in enumerate(requirements)}

    # power_threshold=0 keeps branches that are dead on every ray (a fully reflected rejected
    # beam), so their geometry is available for the margins.
    margins = map_rays(prism, lam, in_plane, out_of_plane, offset, per_ray,
                       what="requirement_margins", polarisation=polarisation,
                       power_threshold=0.0, output_beams=False)
    return np.stack([np.broadcast_to(margins[i], shape) for i in range(len(requirements))])


@dataclass(frozen=True)
class FieldOfView:
    """Field-of-view maps and half-angles of a prism against a spec.

    Attributes
    ----------
    wavelength_um : ndarray, shape W
    in_plane_deg, out_of_plane_deg : ndarray, shape (steps,)
        Grid axes; maps are indexed [..., out_of_plane, in_plane].
    requirements : tuple of Requirement
    margins : dict[str, ndarray of shape W + (steps, steps)]
        Margin of each requirement (keyed by :attr:`Requirement.name`).
    maps : dict[str, bool ndarray of shape W + (steps, steps)]
        Where each requirement holds; key "combined" for all of them.
    half_angles_deg : dict[str, ndarray of shape W + (4,)]
        Largest contiguous range from normal incidence along each of :data:`DIRECTIONS`
        (+in-plane, −in-plane, +out-of-plane, −out-of-plane), as positive angles; per
        requirement name and "combined". Refined by bisection when asked, else grid values.
    open_ended : dict[str, bool ndarray of shape W + (4,)]
        True where the requirement still held at the grid edge: the half-angle is then only a
        lower bound equal to the half range.
    refined : bool
        Whether half-angles were refined by bisection.
    """

    wavelength_um: np.ndarray
    in_plane_deg: np.ndarray
    out_of_plane_deg: np.ndarray
    requirements: tuple
    margins: dict
    maps: dict
    half_angles_deg: dict
    open_ended: dict
    refined: bool

    @property
    def combined(self):
        """Where every requirement holds, shape W + (steps, steps)."""
        return self.maps["combined"]

    @property
    def total_in_plane_deg(self):
        """Full in-plane field: sum of the + and − in-plane half-angles (combined), shape W."""
        h = self.half_angles_deg["combined"]
        return h[..., 0] + h[..., 1]

    @property
    def total_out_of_plane_deg(self):
        """Full out-of-plane field (combined), shape W."""
        h = self.half_angles_deg["combined"]
        return h[..., 2] + h[..., 3]

    @property
    def ok_at_normal_incidence(self):
        """Whether the spec holds at normal incidence, shape W."""
        c = self.in_plane_deg.size // 2
        return self.maps["combined"][..., c, c][()]


def _grid_runs(ok, angles):
    """Contiguous run from the centre along the four directions of a square map.

    Returns the last good grid angle (magnitude), the index of the first bad point (or −1 when
    the run reaches the edge) and whether the centre holds; shapes W + (4,).
    """
    c = angles.size // 2
    rays = [ok[..., c, c:], ok[..., c, c::-1], ok[..., c:, c], ok[..., c::-1, c]]
    rays = np.stack(rays, axis=-2)                            # W + (4, c + 1)
    broken = ~rays
    first_bad = np.where(broken.any(axis=-1), broken.argmax(axis=-1), -1)
    steps = angles[c:] - angles[c]
    last_good = np.where(first_bad == -1, c, first_bad - 1)
    good_angle = np.where(last_good >= 0, steps[np.maximum(last_good, 0)], 0.0)
    return good_angle, first_bad, rays[..., 0]


def find_edges(prism, wavelength_um, requirements, inside_deg, outside_deg, azimuth_deg=0.0, *,
               which=None, offset_mm=(0.0, 0.0), polarisation="unpolarised",
               tolerance_deg=1e-9):
    """Edge of the field along a direction in the angle plane, by batched bisection.

    Incidence at distance a from normal incidence along azimuth φ is in-plane a·cos φ,
    out-of-plane a·sin φ (degrees). Between `inside_deg` (spec holds) and `outside_deg`
    (spec fails) the bisection keeps a bracket with a sign change of the margin and stops when
    it is narrower than `tolerance_deg`. One trace per step covers every element.

    Parameters
    ----------
    prism : Prism
    wavelength_um, inside_deg, outside_deg, azimuth_deg : array_like
        Broadcast together; wavelengths in µm, angles in degrees.
    requirements : sequence of Requirement
    which : array_like of int, optional
        Per element, the index of the requirement to bound; −1 (default) bounds all of them
        together (the smallest margin).
    offset_mm, polarisation
        As for :func:`requirement_margins`.
    tolerance_deg : float
        Positive width (degrees) at which the bisection stops.

    Returns
    -------
    ndarray
        Edge angle a (degrees) in the broadcast shape; the last angle at which the spec
        holds within `tolerance_deg`.
    """
    check_prism(prism)
    requirements = check_requirements(requirements)
    tolerance_deg = check_positive("tolerance_deg", plain(tolerance_deg))
    count = len(requirements)
    which = -1 if which is None else which
    angle = "finite angles in degrees between -90 and 90 (exclusive)"
    inputs = [("wavelength_um", check_wavelengths(wavelength_um))]
    for name, value in (("inside_deg", inside_deg), ("outside_deg", outside_deg)):
        inputs.append((name, check_numbers(name, value, angle, lambda a: np.abs(a) < 90.0)))
    inputs.append(("azimuth_deg", check_numbers("azimuth_deg", azimuth_deg,
                                                "finite angles in degrees")))
    inputs.append(("which", check_numbers(
        "which", which, f"integer indices from 0 to {count - 1} into the requirements, or -1",
        lambda i: (i == np.round(i)) & (i >= -1) & (i < count))))
    check_shapes(*((name, v.shape) for name, v in inputs))
    lam, lo, hi, az, sel = np.broadcast_arrays(*(v for _, v in inputs))
    sel = sel.astype(int)
    lo, hi = lo.copy(), hi.copy()
    cos_a, sin_a = np.cos(np.deg2rad(az)), np.sin(np.deg2rad(az))
    width = np.max(np.abs(hi - lo), initial=0.0)
    steps = int(np.ceil(np.log2(max(width, tolerance_deg) / tolerance_deg))) + 1
    for _ in range(steps):
        mid = 0.5 * (lo + hi)
        m = requirement_margins(prism, lam, mid * cos_a, mid * sin_a, requirements,
                                offset_mm=offset_mm, polarisation=polarisation)
        chosen = np.where(sel == -1, m.min(axis=0),
                          np.take_along_axis(m, np.maximum(sel, 0)[None], axis=0)[0])
        good = chosen > 0
        lo = np.where(good, mid, lo)
        hi = np.where(good, hi, mid)
    return lo[()] if lo.ndim == 0 else lo


def field_of_view(prism, wavelength_um=None, *, requirements=None, half_range_deg=10.0,
                  steps=81, offset_mm=(0.0, 0.0), polarisation="unpolarised", refine=True,
                  tolerance_deg=1e-9):
    """Map where a prism meets its spec over a square grid of incidence angles.

    Parameters
    ----------
    prism : Prism
    wavelength_um : array_like, shape W, optional
        Vacuum wavelengths (µm); default the prism's design wavelength.
    requirements : sequence of Requirement, optional
        Default :func:`default_requirements`.
    half_range_deg : float
        The grid spans ±`half_range_deg` in both tilt directions.
    steps : int
        Odd number of grid points per axis (normal incidence is the centre).
    offset_mm : array_like, shape (2,)
        One entry point (x, y) on the entrance face; rays leaving the clear aperture at large
        angles are not part of the spec.
    polarisation : array_like or "unpolarised"
        Input polarisation; powers of an unpolarised input add over the incoherent pair.
    refine : bool
        Refine the half-angles by bisection (:func:`find_edges`) to `tolerance_deg`.
    tolerance_deg : float
        Positive precision (degrees) of the refined half-angles.

    Returns
    -------
    FieldOfView

    Raises
    ------
    ValueError
        In one line, for a `prism` that is not a :class:`~prismdesign.prisms.Prism`, bad
        wavelengths, `requirements` that are not distinct Requirement objects, an even or
        too small `steps`, `half_range_deg` outside (0, 90), more than one entry point, a
        `refine` that is not True or False, a `tolerance_deg` that is not positive, a prism
        from which no beam leaves (without explicit `requirements`, see
        :func:`default_requirements`), or maps that would not fit in
        :data:`~prismdesign.analysis.memory.MEMORY_LIMIT_BYTES` (refused before allocating,
        with the estimate; the traces behind the maps run in chunks).
    """
    check_prism(prism)
    lam = check_wavelengths(prism.design_wavelength_um if wavelength_um is None
                            else wavelength_um)
    if not (isinstance(steps, (int, np.integer)) and not isinstance(steps, (bool, np.bool_))
            and steps >= 3 and steps % 2 == 1):
        raise ValueError(f"steps must be an odd integer >= 3 (normal incidence at the centre), "
                         f"got {shown(steps)}")
    half = check_angle("half_range_deg", plain(half_range_deg), 0.0, 90.0)
    if check_offsets(offset_mm).shape != (2,):
        raise ValueError(f"offset_mm must be one entry point (x, y) in mm, got shape "
                         f"{np.shape(offset_mm)}")
    refine = check_flag("refine", plain(refine))
    tolerance_deg = check_positive("tolerance_deg", plain(tolerance_deg))
    requirements = check_requirements(default_requirements(prism, lam) if requirements is None
                                      else requirements, distinct=True)
    # The maps alone (margins in float, pass/fail in bool, per requirement and combined) must
    # fit; the traces behind them are done in chunks.
    points = lam.size * steps * steps
    check_fits("field_of_view", points * (9 * len(requirements) + 1),
               f"{lam.size} wavelength(s) × {steps} × {steps} incidence angles × "
               f"{len(requirements)} requirement(s), 9 bytes each", "use fewer steps")
    names = [r.name for r in requirements]
    angles = np.linspace(-half, half, steps)
    margins = requirement_margins(prism, lam[..., None, None], angles, angles[:, None],
                                  requirements, offset_mm=offset_mm, polarisation=polarisation)
    ok = margins > 0
    maps = dict(zip(names, ok))
    maps["combined"] = ok.all(axis=0)
    keys = names + ["combined"]
    runs = [_grid_runs(maps[k], angles) for k in keys]
    half_angles = {k: r[0] for k, r in zip(keys, runs)}
    open_ended = {k: (r[1] == -1) & r[2] for k, r in zip(keys, runs)}
    if refine:
        step = angles[1] - angles[0]
        first_bad = np.stack([r[1] for r in runs])             # (K,) + W + (4,)
        inside = np.stack([half_angles[k] for k in keys])
        needs = first_bad > 0                                   # centre holds, edge inside grid
        if needs.any():
            which = np.arange(len(keys)).reshape((-1,) + (1,) * (first_bad.ndim - 1))
            which = np.where(which == len(requirements), -1, which)
            azimuth = np.array([a for _, a in DIRECTIONS])
            lam_full = np.broadcast_to(lam[..., None], first_bad.shape)
            idx = np.nonzero(needs)
            edges = find_edges(prism, lam_full[idx], requirements, inside[idx],
                               inside[idx] + step,
                               np.broadcast_to(azimuth, first_bad.shape)[idx],
                               which=np.broadcast_to(which, first_bad.shape)[idx],
                               offset_mm=offset_mm, polarisation=polarisation,
                               tolerance_deg=tolerance_deg)
            inside[idx] = edges
        half_angles = {k: inside[i] for i, k in enumerate(keys)}
    return FieldOfView(wavelength_um=lam, in_plane_deg=angles, out_of_plane_deg=angles.copy(),
                       requirements=requirements,
                       margins=dict(zip(names, margins)), maps=maps,
                       half_angles_deg=half_angles, open_ended=open_ended, refined=refine)
