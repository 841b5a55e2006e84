"""Interference quantities of two-beam devices: optical path difference, shear and the
fringe-localisation plane (Wollaston, Nomarski, Savart and any other two-beam prism).

Input is a collimated plane wave. Every ray of a beam leaving a prism with plane faces belongs
to one exit plane wave, so the phase of beam a at any point r outside the prism (or on the
straight continuation of its exit rays back into it) is

    L_a(r) = L_a(exit) + k_a · (r − r_exit),

with k_a the exit wave vector in units of the vacuum wavenumber and L_a(exit) the optical path
(mm) accumulated along the ray from the input wavefront through the origin. The optical path
difference of beams a and b at r is L_a(r) − L_b(r) (mm); divide by the wavelength (in mm) for
fringe orders.

Fringe-localisation plane (definition used throughout). For an entry point on the entrance
face, the two exit rays born from it are continued as straight lines in the exit medium (also
backward, into the prism); their point of closest approach is where the two waves from that
input ray meet, so fringes of an extended source are sharpest there (Françon & Mallick,
*Polarization Interferometers*, 1971, ch. 2 — attribution from memory). The locus of these
points for entry points across the aperture along x (y = 0) is a straight line in the x–z plane
(all the geometry is affine in the entry point); we report its z at x = 0 and its tilt angle
from the x axis (positive when z increases toward +x). When the two exit rays are parallel (a
Savart plate) the rays never meet: the plane is at infinity and is reported as such.
"""
import warnings
from dataclasses import dataclass, field

import numpy as np

from ..materials.activity import ActivePieceWarning
from ..optics.vectors import closest_approach, cross, dot, norm
from ..prisms.base import check_finite, check_prism
from ._common import (BELOW_POWER_FLOOR, check_ray_inputs, check_wavelengths, input_direction_deg, lost_codes,
                      missing_pair_reason, rank_beams, strip_pair, summarise_loss,
                      warn_missing)
from .beam_groups import output_beam_trace, trace_output_beams
from .memory import map_rays

__all__ = ["main_beams", "exit_wave_paths", "optical_path_difference", "shear_mm",
           "Localisation", "fringe_localisation", "small_angle_estimates", "PARALLEL_LIMIT"]

#: Below this sine of the angle between the two exit rays they are taken as parallel (the
#: localisation plane is at infinity).
PARALLEL_LIMIT = 1e-12

def main_beams(prism, wavelength_um=None):
    """The two beams carrying the most power for unpolarised input at normal incidence.

    Returns
    -------
    tuple of str
        Two labels in alphabetical order (e.g. ``("eo", "oe")``).

    Raises
    ------
    ValueError
        In one line, naming the missing beam and why, when fewer than two beams leave the
        prism there (a polariser, or a beam totally reflected).
    """
    check_prism(prism)
    lam = (prism.design_wavelength_um if wavelength_um is None
           else float(np.ravel(check_wavelengths(wavelength_um))[0]))
    result = trace_output_beams(prism, lam, 0.0, 0.0, power_threshold=0.0)
    power = {label: result.power(label) for label in result.beams}
    # Either member of the incoherent input pair carries the beam's faults.
    flags = {label: np.bitwise_or.reduce(beam.flags, axis=0)
             for label, beam in result.beams.items()}
    lost = {label: lost_codes(flags[label], power[label]) for label in result.beams}
    ranked = rank_beams(power, 2, lost=lost)
    if len(ranked) < 2:
        raise ValueError(missing_pair_reason(f"interference of the {prism.kind} prism at "
                                             f"{lam:g} µm", ranked, lost, power, flags)
                         .replace("the pair figures are NaN", "pass beams=(a, b) to choose"))
    return tuple(sorted(ranked))


def _pair(prism, beams, wavelength_um):
    beams = main_beams(prism, wavelength_um) if beams is None else tuple(beams)
    if len(beams) != 2 or beams[0] == beams[1]:
        raise ValueError(f"beams must name two different beam labels, got {beams!r}")
    return beams


_GEOMETRY = ("exit_mm", "wave_vector", "path_mm", "direction")


def _trace_pair(prism, beams, what, wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm):
    """Exit geometry of the two beams per ray, NaN where either is lost, with their codes.

    An unpolarised trace (geometry is that of either member of the pair; powers add) so that
    a beam counts as existing by the power it carries for unpolarised light, whatever the
    prism's turn about z. No pruning, so both labels exist.

    Returns
    -------
    geometry : tuple of two dicts
        "exit_mm", "wave_vector", "path_mm" (see :func:`exit_wave_paths`) and "direction".
    lost : dict[str, ndarray of int]
        Reason codes of each beam (see :func:`~prismdesign.analysis.lost_codes`).

    Raises
    ------
    ValueError
        When a label is not traced, or one of the beams is lost at every point.

    Warns
    -----
    MissingBeamWarning
        When one of the beams is lost at some points (the figures are NaN there).
    """
    def per_ray(result, traced_prism):
        # Output beams (branches of an optically active piece that leave together, added),
        # and the raw branches too, so that a single branch can still be named.
        grouped = output_beam_trace(result, traced_prism)
        available = {**result.beams, **grouped.beams}
        out = {}
        for label in beams:
            if label not in available:
                raise ValueError(f"beam {label!r} is not among the traced beams "
                                 f"{sorted(available)}")
            beam = strip_pair(available[label], result.incoherent_pair)
            for name, value in zip(_GEOMETRY, (*exit_wave_paths(beam), beam.exit_direction)):
                out[label, name] = value
            out[label, "lost"] = lost_codes(beam.flags, beam.power)
        return out

    if any("+" in label for label in beams):
        warnings.warn(f"{what}: {' and '.join(repr(b) for b in beams if '+' in b)} adds "
                      f"branches of an optically active piece; its phase is taken as its first "
                      f"branch's, so path differences between or within such beams ignore "
                      f"the arcsecond beat of its branches", ActivePieceWarning, stacklevel=3)
    table = map_rays(prism, wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm, per_ray,
                     what=what, power_threshold=0.0, output_beams=False,
                     fill=lambda key: BELOW_POWER_FLOOR if key[1] == "lost" else np.nan)
    lost = {label: table[label, "lost"] for label in beams}
    either = (lost[beams[0]] != 0) | (lost[beams[1]] != 0)
    for label in beams:
        if np.all(lost[label] != 0):
            raise ValueError(f"{what}: beams {beams[0]!r} and {beams[1]!r} never both leave "
                             f"the prism for these inputs: {summarise_loss(label, lost[label])}")
    if np.any(either):
        causes = "; ".join(summarise_loss(label, lost[label]) for label in beams
                           if np.any(lost[label]))
        warn_missing(f"{what}: NaN where a beam is lost ({causes})")
    geometry = []
    for label in beams:
        values = {}
        for name in _GEOMETRY:
            v = table[label, name]
            values[name] = np.where(either[..., None] if v.ndim > either.ndim else either,
                                    np.nan, v)
        geometry.append(values)
    return tuple(geometry), lost


def _checked_rays(prism, wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm, plane_z_mm):
    """Validate the common inputs; returns wavelength, angles, offsets and the plane's z."""
    check_prism(prism)
    lam, in_plane, out_of_plane, offset = check_ray_inputs(wavelength_um, in_plane_deg,
                                                           out_of_plane_deg, offset_mm,
                                                           prism=prism)
    z = prism.exit_z_mm if plane_z_mm is None else check_finite("plane_z_mm", plane_z_mm)
    return lam, in_plane, out_of_plane, offset, z


def exit_wave_paths(beam):
    """Exit point, exit wave vector and optical path from the input wavefront, of each ray.

    The input rays start on a plane that is not a wavefront when the input is tilted; adding
    k_in · r_start refers every path to the wavefront through the origin.

    Returns
    -------
    exit_mm : ndarray, shape (..., 3)
    wave_vector : ndarray, shape (..., 3)
        Exit wave vector in units of the vacuum wavenumber.
    path_mm : ndarray, shape (...)
    """
    k_in = beam.wave_normals[0] * beam.indices[0][..., None]
    k_out = beam.exit_wave_normal * beam.indices[-1][..., None]
    return beam.exit_position_mm, k_out, beam.optical_path_mm + dot(k_in, beam.positions_mm[0])


def _phase_at(beam, points_mm):
    """Phase (optical path, mm) of a beam's exit plane wave at points (geometry dict)."""
    return beam["path_mm"] + dot(beam["wave_vector"], points_mm - beam["exit_mm"])


def _on_plane(beam, plane_z_mm):
    """Where the exit rays cross the plane z = plane_z_mm (shape (..., 3))."""
    d = beam["direction"]
    r = beam["exit_mm"]
    t = (plane_z_mm - r[..., 2]) / d[..., 2]
    return r + t[..., None] * d


def optical_path_difference(prism, wavelength_um, offset_mm=(0.0, 0.0), *, beams=None,
                            in_plane_deg=0.0, out_of_plane_deg=0.0, plane_z_mm=None):
    """Optical path difference of the two waves at a point of a plane (what fringes show).

    The two rays born from an entry point reach the plane z = `plane_z_mm` at points separated
    by the shear (:func:`shear_mm`); the OPD is evaluated at their midpoint r as the difference
    of the two exit plane waves' phases there, OPD = L_a(r) − L_b(r) (module docstring), a and b
    being `beams` in order. Because both waves are referred to the same input ray, this is the
    phase difference an analyser after the prism turns into fringes: (n_e − n_o)·t for a plate
    at normal incidence, t(q_e − q_o) at oblique incidence (q the normal wave-vector
    components), and the Savart plate's oblique-incidence fringes. (Subtracting the two rays'
    own paths at their two different landing points would miss the k·shear term.)

    Parameters
    ----------
    prism : Prism
    wavelength_um : array_like
        Vacuum wavelengths (µm).
    offset_mm : array_like, shape (..., 2)
        Entry points (x, y) on the entrance face; broadcast against the wavelengths and angles.
    beams : pair of str, optional
        Beam labels; default :func:`main_beams`.
    in_plane_deg, out_of_plane_deg : array_like
        Incidence of the collimated input (degrees).
    plane_z_mm : float, optional
        Reference plane; default the largest z of the prism (just after the exit face).

    Returns
    -------
    ndarray
        OPD in mm, broadcast shape of the inputs; NaN where either beam is lost (the rule of
        :func:`~prismdesign.analysis.lost_codes`: totally reflected, missed a surface, outside
        the clear aperture, grazing incidence, or power below the floor for unpolarised light).

    Raises
    ------
    ValueError
        In one line, for bad inputs, a pair of beams that does not exist (naming the missing
        beam and why), or one of the beams lost at every point.

    Warns
    -----
    MissingBeamWarning
        When one of the beams is lost at some points, saying which, why and where.
    """
    lam, in_plane, out_of_plane, offset, z = _checked_rays(
        prism, wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm, plane_z_mm)
    beams = _pair(prism, beams, lam)
    (a, b), _ = _trace_pair(prism, beams, "optical_path_difference", lam, in_plane,
                            out_of_plane, offset)
    point = 0.5 * (_on_plane(a, z) + _on_plane(b, z))
    return _phase_at(a, point) - _phase_at(b, point)


def shear_mm(prism, wavelength_um, offset_mm=(0.0, 0.0), *, beams=None, in_plane_deg=0.0,
             out_of_plane_deg=0.0, plane_z_mm=None):
    """Lateral shear between two beams born from the same entry point, on the plane z = const.

    Parameters
    ----------
    prism, wavelength_um, offset_mm, beams, in_plane_deg, out_of_plane_deg
        As for :func:`optical_path_difference`.
    plane_z_mm : float, optional
        Observation plane; default the largest z of the prism.

    Returns
    -------
    ndarray, shape (..., 2)
        (x, y) position of beam a minus that of beam b on the plane (mm); the shear length is
        ``np.hypot(*s.T)``. NaN where either beam is lost.

    Raises, Warns
    -------------
    As for :func:`optical_path_difference`.
    """
    lam, in_plane, out_of_plane, offset, z = _checked_rays(
        prism, wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm, plane_z_mm)
    beams = _pair(prism, beams, lam)
    (a, b), _ = _trace_pair(prism, beams, "shear_mm", lam, in_plane, out_of_plane, offset)
    return (_on_plane(a, z) - _on_plane(b, z))[..., :2]


@dataclass(frozen=True)
class Localisation:
    """Fringe-localisation plane of a two-beam prism (see the module docstring).

    Attributes
    ----------
    wavelength_um : ndarray, shape W
    beams : tuple of str
    entry_x_mm : ndarray, shape (samples,)
        Entry points across the aperture (y = 0).
    points_mm : ndarray, shape W + (samples, 3)
        Midpoints of closest approach of the two rays from each entry point (global frame, mm);
        NaN where the rays are parallel or either beam is lost at that entry point.
    gap_mm : ndarray, shape W + (samples,)
        Closest distance between the two rays (0 when they cross); NaN where a beam is lost.
    opd_mm : ndarray, shape W + (samples,)
        OPD (a − b, mm) at those points; for parallel exit rays the uniform OPD between the
        two exit plane waves (fringes at infinity). NaN where a beam is lost.
    lost : dict[str, ndarray of int, shape W + (samples,)]
        Reason codes of both beams at each entry point (0: the beam exists); the locus line is
        fitted through the points where both exist (NaN with fewer than two).
    z_at_axis_mm : ndarray, shape W
        z of the fitted locus line at x = 0 (the entrance face is z = 0); inf at infinity.
    distance_from_exit_mm : ndarray, shape W
        Distance of that point beyond the exit face along z at x = 0 (negative: inside or
        before the exit face, i.e. a virtual plane for an observer behind the prism).
    tilt_deg : ndarray, shape W
        Tilt of the locus from the x axis, atan(dz/dx); nan at infinity.
    split_deg : ndarray, shape W
        Exact angle between the two exit rays.
    at_infinity : bool ndarray, shape W
    small_angle : dict[str, ndarray]
        Common small-angle estimates for this prism kind (:func:`small_angle_estimates`).
    """

    wavelength_um: np.ndarray
    beams: tuple
    entry_x_mm: np.ndarray
    points_mm: np.ndarray
    gap_mm: np.ndarray
    opd_mm: np.ndarray
    z_at_axis_mm: np.ndarray
    distance_from_exit_mm: np.ndarray
    tilt_deg: np.ndarray
    split_deg: np.ndarray
    at_infinity: np.ndarray
    small_angle: dict = field(default_factory=dict)
    lost: dict = field(default_factory=dict)


def _boundary_z(boundary, x_mm=0.0):
    """z of a boundary plane at (x, 0)."""
    p, n = boundary.point_mm, boundary.normal
    return p[2] - (n[0] * (x_mm - p[0]) + n[1] * (0.0 - p[1])) / n[2]


def fringe_localisation(prism, wavelength_um=None, *, beams=None, in_plane_deg=0.0,
                        out_of_plane_deg=0.0, samples=5, aperture_fraction=0.8):
    """Position and tilt of the fringe-localisation plane, versus wavelength.

    Parameters
    ----------
    prism : Prism
    wavelength_um : array_like, shape W, optional
        Default: the design wavelength.
    beams : pair of str, optional
        Default :func:`main_beams`.
    in_plane_deg, out_of_plane_deg : float
        Incidence of the collimated input (degrees).
    samples : int
        Entry points across the aperture (≥ 2; the locus is exactly a line).
    aperture_fraction : float
        The entry points span this fraction of the width along x, centred.

    Returns
    -------
    Localisation
    """
    check_prism(prism)
    lam = (np.asarray(prism.design_wavelength_um) if wavelength_um is None
           else check_wavelengths(wavelength_um))
    if not (isinstance(samples, (int, np.integer)) and samples >= 2):
        raise ValueError(f"samples must be an integer >= 2, got {samples!r}")
    aperture_fraction = check_finite("aperture_fraction", aperture_fraction)
    if not 0.0 < aperture_fraction <= 1.0:
        raise ValueError(f"aperture_fraction must lie in (0, 1], got {aperture_fraction:g}")
    for name, value in (("in_plane_deg", in_plane_deg), ("out_of_plane_deg", out_of_plane_deg)):
        if np.ndim(value) != 0:
            raise ValueError(f"{name} must be a single angle in degrees, got shape {np.shape(value)}")
    in_plane_deg, out_of_plane_deg = (float(v) for v in
                                      input_direction_deg(in_plane_deg, out_of_plane_deg))
    beams = _pair(prism, beams, lam)
    half = 0.5 * float(aperture_fraction) * prism.width_mm
    x = np.linspace(-half, half, samples)
    # Entry points along the prism's own x axis (it may be turned about z).
    turn = np.deg2rad(prism.rotation_deg)
    offsets = np.stack([x * np.cos(turn), x * np.sin(turn)], axis=-1)
    (a, b), lost = _trace_pair(prism, beams, "fringe_localisation", lam[..., None],
                               in_plane_deg, out_of_plane_deg, offsets)
    mid, gap, parallel = closest_approach(a["exit_mm"], a["direction"], b["exit_mm"],
                                          b["direction"], PARALLEL_LIMIT)
    valid = (lost[beams[0]] == 0) & (lost[beams[1]] == 0)
    gap = np.where(valid, gap, np.nan)
    at_inf = (parallel & valid).any(axis=-1)
    # Parallel exit waves differ in phase by the same amount everywhere (the OPD of fringes at
    # infinity, e.g. in a lens's focal plane): evaluate it at beam a's exit point.
    finite_mid = np.where(parallel[..., None], a["exit_mm"], mid)
    opd = _phase_at(a, finite_mid) - _phase_at(b, finite_mid)
    # Least-squares line z = z0 + slope·x through the locus points where both beams exist,
    # batched over wavelength (NaN with fewer than two such points).
    px = finite_mid[..., 0] * np.cos(turn) + finite_mid[..., 1] * np.sin(turn)
    pz = finite_mid[..., 2]
    count = valid.sum(axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        mx = np.where(valid, px, 0.0).sum(axis=-1) / count
        mz = np.where(valid, pz, 0.0).sum(axis=-1) / count
        dx = np.where(valid, px - mx[..., None], 0.0)
        dz = np.where(valid, pz - mz[..., None], 0.0)
        slope = np.where(count >= 2, (dx * dz).sum(axis=-1) / (dx * dx).sum(axis=-1), np.nan)
        # arctan2(|a × b|, a·b): exact zero for parallel waves, full precision for small
        # splits; averaged over the entry points where both beams exist.
        angles = np.rad2deg(np.arctan2(norm(cross(a["direction"], b["direction"])),
                                       dot(a["direction"], b["direction"])))
        split = np.where(valid, angles, 0.0).sum(axis=-1) / count
    # [()] turns 0-d results into scalars (scalar wavelength in, scalars out).
    z0 = np.where(at_inf, np.inf, mz - slope * mx)[()]
    tilt = np.where(at_inf, np.nan, np.rad2deg(np.arctan(slope)))[()]
    return Localisation(wavelength_um=lam, beams=beams, entry_x_mm=x, points_mm=mid, gap_mm=gap,
                        opd_mm=opd, z_at_axis_mm=z0,
                        distance_from_exit_mm=z0 - _boundary_z(prism.boundaries[-1]),
                        tilt_deg=tilt, split_deg=split, at_infinity=at_inf, lost=lost,
                        small_angle=small_angle_estimates(prism, lam))


def small_angle_estimates(prism, wavelength_um):
    """The trade's small-angle formulas for this prism kind, to set beside the exact values.

    Wollaston with parallel outer faces (wedge angle θ, second-wedge thickness t₂ on the axis;
    derivation in ``tests/test_analysis_interference.py``):

    * ``split_deg``: 2 |n_o − n_e| tan θ (common practice, no source);
    * ``tilt_deg``: tan ε = tan θ (n_o + n_e)/(2 n_o n_e), signed like the interface (Françon &
      Mallick, *Polarization Interferometers*, 1971 — from memory);
    * ``z_at_axis_mm``: exit-face z − t₂ (n_o + n_e)/(2 n_o n_e).

    Savart plate (two plates of thickness t, axes at θ from the normal, crossed):

    * ``shear_mm``: √2 t |tan ρ| with the walk-off tan ρ = (n_o² − n_e²) tan θ/(n_e² + n_o² tan² θ)
      (Born & Wolf, *Principles of Optics*, §15.3.3); at θ = 45° this is
      √2 t |n_e² − n_o²|/(n_e² + n_o²) (Françon & Mallick, 1971 — from memory). Exact at
      normal incidence; it ignores the change of shear with the incidence angle.

    Indices are taken relative to the surrounding medium (the formulas assume vacuum around
    the prism; air shifts them by about 3e-4). Other kinds return an empty dict.

    Returns
    -------
    dict[str, ndarray]
        Arrays of the wavelength shape.
    """
    check_prism(prism)
    lam = check_wavelengths(wavelength_um)
    n_s = prism.surround.indices(lam)[0]
    if prism.kind == "wollaston" and np.allclose(prism.boundaries[0].normal,
                                                 prism.boundaries[-1].normal):
        n_o, n_e = (n / n_s for n in prism.pieces[0].material.indices(lam))
        normal = prism.boundaries[1].normal
        # Wedge angle in the prism's own principal section (the prism may be turned about z).
        turn = np.deg2rad(prism.rotation_deg)
        tan_theta = (np.cos(turn) * normal[0] + np.sin(turn) * normal[1]) / normal[2]
        factor = (n_o + n_e) / (2.0 * n_o * n_e)
        z_iface = _boundary_z(prism.boundaries[1])
        z_exit = _boundary_z(prism.boundaries[-1])
        return {"split_deg": np.rad2deg(2.0 * np.abs(n_o - n_e) * abs(tan_theta)),
                "tilt_deg": np.rad2deg(np.arctan(-tan_theta * factor)),
                "z_at_axis_mm": z_exit - (z_exit - z_iface) * factor}
    if prism.kind == "savart plate":
        n_o, n_e = (n / n_s for n in prism.pieces[0].material.indices(lam))
        t = float(prism.parameters["plate_thickness_mm"])
        tan_axis = np.tan(np.deg2rad(float(prism.parameters["axis_angle_deg"])))
        # Walk-off of each plate, tan ρ = (n_o² − n_e²) tan θ / (n_e² + n_o² tan² θ) (Born & Wolf,
        # §15.3.3); at θ = 45° this is the Françon–Mallick (n_o² − n_e²)/(n_e² + n_o²).
        tan_rho = (n_o ** 2 - n_e ** 2) * tan_axis / (n_e ** 2 + n_o ** 2 * tan_axis ** 2)
        return {"shear_mm": np.sqrt(2.0) * t * np.abs(tan_rho)}
    return {}
