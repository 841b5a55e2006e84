"""Glan-type polarisers: two wedges of one crystal separated by an air gap or a cement film.

Both wedges have the same optic axis in the entrance face, either in the principal section
("x", the plane of incidence on the gap) or across it ("y"). The gap plane is tilted by the
cut angle θ about y, so at normal entrance a beam meets it at incidence θ. The mode whose
tangential wave vector exceeds the gap index there is totally reflected (rejected) and leaves
through a side face; the other passes. In calcite (n_o > n_e) the ordinary beam is rejected.
The gap is a :class:`~prismdesign.optics.ThinLayer`. By default ("auto") its multiple
reflections add in power once it is a wavelength or more thick (real gaps are wedged and real
sources have bandwidth and divergence, so the etalon fringes of an ideal parallel gap average
out), and in amplitude for thinner gaps; the rejected beam, evanescent in the gap, is always
treated in amplitude, so its leakage through a thin gap (frustrated total internal reflection)
is part of every trace. ``layer_treatment="coherent"`` models the gap as an ideal etalon.

The arrangement with the axis in the plane of incidence (transmitted e-beam p-polarised at
the gap) is the one usually called Glan–Taylor, the cemented one Glan–Thompson (names of the
trade; which axis each maker uses varies; from memory).
"""
import warnings
from dataclasses import dataclass, replace

import numpy as np

from ..optics import SequentialSystem, Surface
from ..optics.eigenmodes import normal_components
from ..optics.system import RectangularAperture
from .base import (check_angle, check_angles, check_finite, check_positive, check_prism,
                   trace_from_front)
from .stack import make_layer, resolve_crystal, resolve_material
from .wollaston import wedge_pair

__all__ = ["glan_air_spaced", "glan_cemented", "glan_cut_angle_limits", "glan_transmitted_mode",
           "rejected_beam_system", "trace_rejected", "RejectedBeam"]


def _check_axis(axis):
    if axis not in ("x", "y"):
        raise ValueError(f"axis must be 'x' (in the principal section) or 'y' (across it), "
                         f"got {axis!r}")


def _glan(kind, material, cut_angle_deg, layer, axis, width_mm, height_mm, edge_thickness_mm,
          design_wavelength_um, coated, params):
    _check_axis(axis)
    cut_angle_deg = check_angle("cut_angle_deg", cut_angle_deg, 0.0, 80.0)
    prism = wedge_pair(material, cut_angle_deg, None, width_mm, height_mm, edge_thickness_mm,
                       axis, axis, design_wavelength_um, kind, interface_layer=layer,
                       coated=coated, parameters=params)
    gap_index = float(layer.material.indices(prism.design_wavelength_um)[0])
    mode = glan_transmitted_mode(prism)
    if mode in ("both", "none"):
        limits = glan_cut_angle_limits(prism.pieces[0].material, prism.design_wavelength_um,
                                       gap_index, axis)
        warnings.warn(f"{kind}: at {prism.design_wavelength_um:g} um a cut of {cut_angle_deg:g} deg "
                      f"{'passes both beams' if mode == 'both' else 'rejects both beams'}; the "
                      f"o and e beams are totally reflected above {limits[0]:.3f} and "
                      f"{limits[1]:.3f} deg", stacklevel=3)
    parameters = dict(prism.parameters, gap_index=gap_index, transmitted_mode=mode)
    return replace(prism, parameters=parameters)


def glan_air_spaced(material="calcite", cut_angle_deg=38.5, gap_mm=0.01, axis="x", *,
                    gap_material="air", width_mm=10.0, height_mm=10.0, edge_thickness_mm=1.0,
                    design_wavelength_um=0.6328, coated=False, layer_treatment="auto",
                    coherence_length_mm=None):
    """Build an air-spaced Glan polariser (Glan–Taylor style).

    Parameters
    ----------
    material : str or material
        Uniaxial crystal of both wedges.
    cut_angle_deg : float
        Angle between the gap normal and z (= incidence on the gap at normal entrance), degrees.
        For calcite in air the ordinary beam is totally reflected above about 37.1° at 633 nm
        (:func:`glan_cut_angle_limits`).
    gap_mm : float
        Gap thickness in mm (≥ 0). The rejected beam tunnels through a gap of a few tenths of
        a µm (always computed in amplitude).
    axis : {"x", "y"}
        Optic axis of both wedges, in the entrance face: in the principal section (the plane of
        incidence on the gap) or across it.
    gap_material : str, float or material
        What fills the gap (default air); a number is a fixed index.
    width_mm, height_mm : float
        Clear aperture along x and y (mm).
    edge_thickness_mm : float
        Thickness of each wedge at its thin edge (mm).
    design_wavelength_um : float
        Design wavelength (µm): the polarising action is checked there (a warning if the cut
        does not polarise); also the coatings' and the analyses' default wavelength.
    coated : bool
        Ideal single-layer antireflection coatings on the entrance and exit faces.
    layer_treatment : {"auto", "coherent", "incoherent"}
        How the reflections inside the gap add (:class:`~prismdesign.optics.ThinLayer`):
        "auto" (default) in power for a gap a wavelength or more thick, which makes the
        transmission a smooth function of cut angle, gap and wavelength; "coherent" treats
        the gap as an ideal etalon (transmission oscillates: for calcite at 633 nm and a
        10 µm gap, by about ±3 % of the input over 0.1° of cut). Evanescent waves (the
        rejected beam) are always computed coherently.
    coherence_length_mm : float, optional
        Coherence length of the light (mm), used by "auto": a gap whose round trip 2·n·d is
        shorter stays coherent. None (default): short or unknown.

    Returns
    -------
    Prism
        ``kind = "glan air-spaced"``; ``parameters["transmitted_mode"]`` is "o" or "e" (or
        "both"/"none" with a warning when the cut does not polarise at the design wavelength);
        ``parameters["layer_treatment"]`` is the treatment asked for and
        ``parameters["layer_model"]`` says in words how the gap is modelled.
    """
    layer = make_layer(gap_material, gap_mm, "gap_material", "gap_mm: layer thickness_mm",
                       layer_treatment, coherence_length_mm, "layer_treatment")
    params = dict(material=getattr(resolve_material(material), "name", str(material)),
                  cut_angle_deg=cut_angle_deg, gap_mm=gap_mm, axis=axis,
                  gap_material=getattr(layer.material, "name", str(gap_material)),
                  width_mm=width_mm, height_mm=height_mm, edge_thickness_mm=edge_thickness_mm,
                  layer_treatment=layer.treatment,
                  coherence_length_mm=layer.coherence_length_mm, layer_model=layer.description)
    return _glan("glan air-spaced", material, cut_angle_deg, layer, axis, width_mm, height_mm,
                 edge_thickness_mm, design_wavelength_um, coated, params)


def glan_cemented(material="calcite", cut_angle_deg=72.0, cement="optical_cement",
                  cement_thickness_mm=0.01, axis="y", *, width_mm=10.0, height_mm=10.0,
                  edge_thickness_mm=1.0, design_wavelength_um=0.6328, coated=False,
                  layer_treatment="auto", coherence_length_mm=None):
    """Build a cemented Glan polariser (Glan–Thompson style).

    Parameters
    ----------
    material : str or material
        Uniaxial crystal of both wedges.
    cut_angle_deg : float
        Incidence on the cement film at normal entrance, degrees. With a cement of index
        ≈ 1.55 between n_e and n_o of calcite only the ordinary beam can be totally reflected,
        above about 70° (long prisms).
    cement : str, float or material
        Cement (library name, fixed index or material); must be isotropic.
    cement_thickness_mm : float
        Film thickness in mm (≥ 0).
    axis : {"x", "y"}
        Optic axis of both wedges in the entrance face (default across the principal section).
    width_mm, height_mm, edge_thickness_mm, design_wavelength_um, coated
        As for :func:`glan_air_spaced`.
    layer_treatment, coherence_length_mm
        How the reflections inside the cement film add, as for :func:`glan_air_spaced`
        (default "auto": in power for a film a wavelength or more thick).

    Returns
    -------
    Prism
        ``kind = "glan cemented"``; ``parameters["layer_treatment"]`` and
        ``parameters["layer_model"]`` say how the film is modelled.
    """
    layer = make_layer(cement, cement_thickness_mm, "cement",
                       "cement_thickness_mm: layer thickness_mm", layer_treatment,
                       coherence_length_mm, "layer_treatment")
    params = dict(material=getattr(resolve_material(material), "name", str(material)),
                  cut_angle_deg=cut_angle_deg, cement=getattr(layer.material, "name", str(cement)),
                  cement_thickness_mm=cement_thickness_mm, axis=axis, width_mm=width_mm,
                  height_mm=height_mm, edge_thickness_mm=edge_thickness_mm,
                  layer_treatment=layer.treatment,
                  coherence_length_mm=layer.coherence_length_mm, layer_model=layer.description)
    return _glan("glan cemented", material, cut_angle_deg, layer, axis, width_mm, height_mm,
                 edge_thickness_mm, design_wavelength_um, coated, params)


def glan_cut_angle_limits(material, wavelength_um, gap_index, axis="x", in_plane_deg=0.0,
                          surround="air"):
    """Cut angles above which the o and e beams are totally reflected at the gap.

    A beam entering at in-plane angle α refracts into the first wedge with wave vector
    k = K (sin β, 0, cos β) (units of k0; K = n_o, or the exact extraordinary index for its
    direction and the given axis). On a gap tilted by θ its tangential wave vector is
    K sin(θ − β), so it is totally reflected for θ ≥ θ_c = β + asin(n_gap / K)
    (Born & Wolf, *Principles of Optics*, §1.5.4 and §15.3). At normal entrance this is
    sin θ_c = n_gap / n_o for the o-beam and n_gap / n_e for the e-beam (axis in the face).

    Parameters
    ----------
    material : str or material
        Uniaxial crystal.
    wavelength_um : array_like
        Vacuum wavelengths (µm).
    gap_index : array_like, str or material
        Index of the gap (a number, or a material evaluated at `wavelength_um`).
    axis : {"x", "y"}
        Optic axis of the first wedge.
    in_plane_deg : array_like
        Input angle in the principal section (positive toward +x), degrees; broadcasts.
    surround : str or material
        Medium in front of the prism.

    Returns
    -------
    theta_o_deg, theta_e_deg : ndarray
        Critical cut angles (degrees); NaN where that beam cannot be totally reflected
        (gap index ≥ its index).
    """
    _check_axis(axis)
    crystal = resolve_crystal(material)
    # The crystal checks the wavelengths once (type, sign, range warning) for everything below.
    n_o, n_e = crystal.indices(wavelength_um)
    lam = np.asarray(wavelength_um, dtype=float)
    if isinstance(gap_index, str) or hasattr(gap_index, "indices"):
        n_gap = resolve_material(gap_index, "gap_index").indices(lam)[0]
    else:
        try:
            n_gap = np.asarray(gap_index, dtype=float)
        except (TypeError, ValueError):
            raise ValueError(f"gap_index must be a positive index, a material name or a "
                             f"material, got {gap_index!r}") from None
        if np.any(~np.isfinite(n_gap)) or np.any(n_gap <= 0):
            raise ValueError(f"gap_index must be positive, got {gap_index!r}")
    n_s = resolve_material(surround, "surround").indices(lam)[0]
    alpha = np.deg2rad(check_angles("in_plane_deg", in_plane_deg))
    if np.any(np.abs(alpha) >= 0.5 * np.pi):
        raise ValueError(f"in_plane_deg must lie between -90 and 90 degrees, got {in_plane_deg!r}")
    n_o, n_e, n_s, n_gap, alpha = np.broadcast_arrays(n_o, n_e, n_s, n_gap, alpha)
    kx = n_s * np.sin(alpha)
    k_t = np.stack([kx, np.zeros_like(kx), np.zeros_like(kx)], axis=-1)
    normal = np.broadcast_to([0.0, 0.0, 1.0], k_t.shape)
    c = np.broadcast_to({"x": [1.0, 0.0, 0.0], "y": [0.0, 1.0, 0.0]}[axis], k_t.shape)
    q, _ = normal_components(k_t, normal, n_o, n_e, c)
    result = []
    for j in (0, 1):
        kz = q[..., j].real
        big_k = np.hypot(kx, kz)
        beta = np.arctan2(kx, kz)
        ratio = n_gap / big_k
        with np.errstate(invalid="ignore"):
            theta = np.where(ratio < 1, beta + np.arcsin(np.minimum(ratio, 1.0)), np.nan)
        result.append(np.rad2deg(theta)[()])
    return tuple(result)


def glan_transmitted_mode(prism, wavelength_um=None, in_plane_deg=0.0):
    """Which beam a Glan prism transmits: "o", "e", "both" (no polarising) or "none".

    Parameters
    ----------
    prism : Prism
        Built by :func:`glan_air_spaced` or :func:`glan_cemented`.
    wavelength_um : float, optional
        Default: the design wavelength.
    in_plane_deg : float
        Input angle in the principal section (degrees).

    Returns
    -------
    str
        "o", "e", "both" or "none".
    """
    check_prism(prism)
    lam = prism.design_wavelength_um if wavelength_um is None else check_positive(
        "wavelength_um", wavelength_um)
    in_plane_deg = check_finite("in_plane_deg", in_plane_deg, "a finite angle in degrees")
    if len(prism.boundaries) != 3:
        raise ValueError(f"glan_transmitted_mode needs a two-wedge prism, got a {prism.kind!r} "
                         f"with {len(prism.pieces)} pieces")
    layer = prism.boundaries[1].layer
    if layer is None:
        raise ValueError(f"glan_transmitted_mode needs a prism with a gap or cement layer at its "
                         f"interface, got a {prism.kind!r} without one")
    n_gap = float(layer.material.indices(lam)[0])
    # Axis orientation in the prism's own frame (it may be turned about z).
    own_axis = np.asarray(prism.pieces[0].optic_axis) @ _turn(prism)
    axis = "x" if abs(own_axis[..., 0].mean()) > 0.5 else "y"
    theta_o, theta_e = glan_cut_angle_limits(prism.pieces[0].material, lam, n_gap, axis,
                                             in_plane_deg, prism.surround)
    cut = np.rad2deg(np.arccos(prism.boundaries[1].normal[2]))
    reflects = [bool(np.isfinite(t) and cut >= t) for t in (theta_o, theta_e)]
    return {(True, False): "e", (False, True): "o", (False, False): "both",
            (True, True): "none"}[tuple(reflects)]


def _turn(prism):
    """Rotation matrix of the prism's turn about z (identity for an unturned prism)."""
    a = np.deg2rad(prism.rotation_deg)
    return np.array([[np.cos(a), -np.sin(a), 0.0], [np.sin(a), np.cos(a), 0.0], [0.0, 0.0, 1.0]])


def _first_wedge_faces(prism):
    """Outward faces of the first wedge other than the gap, in the prism's own frame (before
    any turn about z): (label, outward normal, point)."""
    half_w, half_h = 0.5 * prism.width_mm, 0.5 * prism.height_mm
    return [("entrance face", np.array([0.0, 0.0, -1.0]), np.zeros(3)),
            ("side face -x", np.array([-1.0, 0.0, 0.0]), np.array([-half_w, 0.0, 0.0])),
            ("side face +x", np.array([1.0, 0.0, 0.0]), np.array([half_w, 0.0, 0.0])),
            ("side face -y", np.array([0.0, -1.0, 0.0]), np.array([0.0, -half_h, 0.0])),
            ("side face +y", np.array([0.0, 1.0, 0.0]), np.array([0.0, half_h, 0.0]))]


def _face_surface(prism, label, outward, point):
    """The face a rejected beam leaves through, with its clear aperture, in the global frame.

    `outward` and `point` are in the prism's own frame; the surface is turned with the prism.
    """
    turn = _turn(prism)
    gap_point = turn.T @ prism.boundaries[1].point_mm
    gap_normal = turn.T @ prism.boundaries[1].normal
    if label == "entrance face":
        aperture = RectangularAperture(0.5 * prism.width_mm, 0.5 * prism.height_mm,
                                       width_direction=tuple(turn @ [1.0, 0.0, 0.0]))
    elif label.startswith("side face") and label.endswith("x"):
        x = point[0]
        # The side face runs from the entrance face to where the gap plane cuts it.
        z_top = gap_point[2] - (x - gap_point[0]) * gap_normal[0] / gap_normal[2]
        point = np.array([x, 0.0, 0.5 * z_top])
        aperture = RectangularAperture(0.5 * z_top, 0.5 * prism.height_mm,
                                       width_direction=(0.0, 0.0, 1.0))
    else:
        aperture = None
    return Surface(turn @ point, turn @ outward, aperture=aperture, label=label)


def rejected_beam_system(prism, wavelength_um=None, in_plane_deg=0.0, out_of_plane_deg=0.0):
    """A sequential system following the rejected beam of a Glan prism out of the prism.

    Entrance face -> gap as a reflecting surface (the gap layer with the second wedge behind
    it, so the reflection is exact including frustrated total reflection) -> the face of the
    first wedge that the reflected chief ray (through the aperture centre) reaches first.

    Parameters
    ----------
    prism : Prism
        A two-wedge prism with a layer at its interface (any Glan prism).
    wavelength_um : float, optional
        Wavelength used to choose the exit face (default: the design wavelength).
    in_plane_deg, out_of_plane_deg : float
        Input direction used to choose the exit face (degrees).

    Returns
    -------
    SequentialSystem
        ``notes`` holds ``exit_face`` (e.g. "side face -x") and ``rejected_beam`` (the label
        of the rejected beam in a trace of this system, e.g. "oo").
    """
    check_prism(prism)
    if len(prism.pieces) != 2:
        raise ValueError(f"rejected_beam_system needs a two-wedge prism, got {len(prism.pieces)} pieces")
    lam = prism.design_wavelength_um if wavelength_um is None else check_positive(
        "wavelength_um", wavelength_um)
    full = prism.system()
    media = full.media
    mirror = replace(full.surfaces[1], reflect_from=media[2], label="gap (reflecting)")
    head = SequentialSystem([media[0], media[1], media[1]], [full.surfaces[0], mirror])
    result = trace_from_front(head, lam, in_plane_deg, out_of_plane_deg, (0.0, 0.0),
                              "unpolarised", power_threshold=0.0)
    # The totally reflected mode is the rejected one; otherwise take the stronger reflection.
    mode = glan_transmitted_mode(prism, lam, in_plane_deg) if prism.kind.startswith("glan") else ""
    label = {"e": "oo", "o": "ee"}.get(mode)
    if label not in result.beams:
        label = max(result.beams, key=lambda key: float(result.power(key)))
    beam = result.beams[label]
    # Choose the exit face in the prism's own frame (it may be turned about z).
    start = _turn(prism).T @ beam.exit_position_mm[0]
    direction = _turn(prism).T @ beam.exit_direction[0]
    best = None
    for name, outward, point in _first_wedge_faces(prism):
        along = float(direction @ outward)
        if along <= 1e-12:
            continue
        distance = float((point - start) @ outward) / along
        if best is None or distance < best[0]:
            best = (distance, name, outward, point)
    _, name, outward, point = best
    face = _face_surface(prism, name, outward, point)
    return SequentialSystem([media[0], media[1], media[1], media[-1]],
                            [full.surfaces[0], mirror, face], label=f"{prism.kind} rejected beam",
                            notes={"exit_face": name, "rejected_beam": label})


@dataclass(frozen=True)
class RejectedBeam:
    """Where the rejected beam of a Glan prism goes.

    Attributes
    ----------
    label : str
        Beam label in `result` (mode in the first wedge before and after the reflection).
    exit_face : str
        Face of the first wedge it leaves through ("side face -x", ...).
    exit_position_mm : ndarray, shape (..., 3)
        Point on that face (unpolarised input: leading axis of 2, identical rays).
    exit_direction : ndarray, shape (..., 3)
        Ray direction outside the prism.
    power : ndarray
        Power relative to the input (incoherent sum for unpolarised input).
    flags : ndarray of int
        :class:`~prismdesign.optics.TraceFlag` bits; TOTAL_INTERNAL_REFLECTION means the beam
        is totally reflected again at that face and stays inside (usually that face is
        blackened or carries an absorbing coating).
    result : TraceResult
        The whole trace of :func:`rejected_beam_system` (all branches).
    """

    label: str
    exit_face: str
    exit_position_mm: np.ndarray
    exit_direction: np.ndarray
    power: np.ndarray
    flags: np.ndarray
    result: object


def trace_rejected(prism, wavelength_um=None, in_plane_deg=0.0, out_of_plane_deg=0.0, *,
                   offset_mm=(0.0, 0.0), polarisation="unpolarised"):
    """Trace the rejected beam of a Glan prism to the face it leaves through.

    Parameters
    ----------
    prism : Prism
    wavelength_um : array_like, optional
        Vacuum wavelengths (µm); default the design wavelength. The exit face is chosen at the
        first (or only) wavelength and the given input angles for the central ray.
    in_plane_deg, out_of_plane_deg : float
        Input direction (degrees).
    offset_mm : array_like, shape (..., 2)
        Entry points (x, y) on the entrance face.
    polarisation : array_like or "unpolarised"
        As for :meth:`Prism.trace`.

    Returns
    -------
    RejectedBeam
    """
    check_prism(prism)
    lam = prism.design_wavelength_um if wavelength_um is None else wavelength_um
    if np.size(lam) == 0 or np.size(in_plane_deg) == 0 or np.size(out_of_plane_deg) == 0:
        raise ValueError(f"trace_rejected needs at least one wavelength and input angle, got "
                         f"wavelength_um = {lam!r}, in_plane_deg = {in_plane_deg!r}, "
                         f"out_of_plane_deg = {out_of_plane_deg!r}")
    system = rejected_beam_system(prism, float(np.ravel(lam)[0]), float(np.ravel(in_plane_deg)[0]),
                                  float(np.ravel(out_of_plane_deg)[0]))
    # Keep zero-power branches: a rejected beam that is totally reflected again at the face
    # it meets must still be reported (with its flag), not pruned.
    result = trace_from_front(system, lam, in_plane_deg, out_of_plane_deg, offset_mm,
                              polarisation, power_threshold=0.0)
    label = system.notes["rejected_beam"]
    beam = result.beams[label]
    return RejectedBeam(label=label, exit_face=system.notes["exit_face"],
                        exit_position_mm=beam.exit_position_mm, exit_direction=beam.exit_direction,
                        power=result.power(label), flags=beam.flags, result=result)
