"""Shared geometry of stacked pieces: plates and wedges between faces tilted about y.

Every piece sits between two plane faces. The entrance face is z = 0 with normal +z; the exit
face of piece i is tilted about the y axis by a signed angle α_i from the entrance plane (its
normal is (sin α_i, 0, cos α_i), so a positive angle tilts the normal toward +x). Each piece is
given its thinnest thickness along z over the clear aperture x ∈ [−w/2, w/2]; the face centres
follow from that. Plates (all α = 0), Wollaston-type wedge pairs and free stacks are all cases.

Optic axes are global unit vectors; they may be given as named directions ("x", "y", "z"), as a
(polar_deg, azimuth_deg) pair (polar angle from z, azimuth from x, see
:func:`~prismdesign.optics.optic_axis_from_angles`) or as a 3-vector.
"""
import numpy as np

from ..materials import material as library_material
from ..materials import materials as library_names
from .._display import shown
from ..optics import FixedIndices, ThinLayer, optic_axis_from_angles
from ..optics.thin_layer import LAYER_TREATMENTS
from ..optics.vectors import as_unit_vectors
from .base import Boundary, Prism, check_angle, check_flag, check_positive

__all__ = ["resolve_material", "resolve_crystal", "resolve_axis", "check_layer",
           "interface_layer", "make_layer", "stacked_prism"]

_NAMED_AXES = {"x": (1.0, 0.0, 0.0), "y": (0.0, 1.0, 0.0), "z": (0.0, 0.0, 1.0)}


def resolve_material(value, name="material"):
    """A library material from a name, or the object itself (must offer ``indices``)."""
    if isinstance(value, str):
        return library_material(value)
    if not hasattr(value, "indices"):
        raise ValueError(f"{name} must be a material name or a material object, got {value!r}")
    return value


def resolve_crystal(value, name="material"):
    """A uniaxial crystal from a library name or a material object; isotropic media refused.

    Prisms that work by birefringence (Wollaston, Glan, Savart, displacers, ...) are built of
    uniaxial crystals only: an isotropic glass would silently give a prism that does not split.
    """
    crystal = resolve_material(value, name)
    if getattr(crystal, "kind", None) != "uniaxial":
        uniaxial = [n for n in library_names() if library_material(n).kind == "uniaxial"]
        label, kind = getattr(crystal, "name", crystal), getattr(crystal, "kind", "?")
        raise ValueError(f"{name} must be a uniaxial crystal, got {label!r} ({kind}); "
                         f"uniaxial in the library: {', '.join(uniaxial)}")
    return crystal


def check_layer(value, name="interface_layer"):
    """None or a :class:`~prismdesign.optics.ThinLayer`; anything else fails in one line."""
    if value is not None and not isinstance(value, ThinLayer):
        raise ValueError(f"{name} must be None (optically contacted) or a ThinLayer made with "
                         f"prismdesign.prisms.interface_layer(material, thickness_mm), got "
                         f"{value!r}")
    return value


def resolve_axis(axis, name="optic_axis"):
    """Unit optic axis from "x"/"y"/"z", a (polar_deg, azimuth_deg) pair or a 3-vector.

    Returns
    -------
    ndarray, shape (3,), or None when `axis` is None (isotropic piece).
    """
    if axis is None:
        return None
    if isinstance(axis, str):
        if axis not in _NAMED_AXES:
            raise ValueError(f"{name} must be 'x', 'y', 'z', (polar_deg, azimuth_deg) or a "
                             f"3-vector, got {axis!r}")
        return np.array(_NAMED_AXES[axis])
    try:
        values = np.asarray(axis, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be 'x', 'y', 'z', (polar_deg, azimuth_deg) or a "
                         f"3-vector, got {axis!r}") from None
    if values.shape == (2,) and np.all(np.isfinite(values)):
        return optic_axis_from_angles(values[0], values[1])
    if values.shape == (3,):
        return as_unit_vectors(values, name)
    raise ValueError(f"{name} must be 'x', 'y', 'z', (polar_deg, azimuth_deg) or a 3-vector, "
                     f"got {axis!r}")


def interface_layer(material="optical_cement", thickness_mm=0.01, treatment="auto",
                    coherence_length_mm=None):
    """A thin layer for an internal interface: cement film or air gap.

    Parameters
    ----------
    material : str, float or material
        Library name (e.g. "optical_cement", "air", "index_matching_gel"), a fixed refractive
        index, or a material object. Must be isotropic.
    thickness_mm : float
        Layer thickness in mm (0.01 = 10 µm); zero is allowed (no effect).
    treatment : {"auto", "coherent", "incoherent"}
        How the reflections inside the layer add (see :class:`~prismdesign.optics.ThinLayer`):
        "auto" (default) sums them in power once the layer is a wavelength or more thick and
        the wave propagates in it, in amplitude otherwise (sub-wavelength films, tunnelling).
    coherence_length_mm : float, optional
        Coherence length of the light (mm) for "auto": layers whose round trip 2·n·d is
        shorter stay coherent. None: short or unknown.

    Returns
    -------
    ThinLayer
    """
    return make_layer(material, thickness_mm, treatment=treatment,
                      coherence_length_mm=coherence_length_mm)


def make_layer(material, thickness_mm, material_name="layer material",
               thickness_name="layer thickness_mm", treatment="auto", coherence_length_mm=None,
               treatment_name="treatment"):
    """:func:`interface_layer`, with the caller's own parameter names in its error messages."""
    if isinstance(material, (int, float, np.floating, np.integer)) and not isinstance(material,
                                                                                     bool):
        medium = FixedIndices(check_positive(f"{material_name} (an index)", material),
                              name="layer")
    else:
        medium = resolve_material(material, material_name)
    if getattr(medium, "kind", "isotropic") != "isotropic":
        raise ValueError(f"{material_name} must be isotropic, got "
                         f"{getattr(medium, 'name', medium)!r} ({medium.kind})")
    try:
        if isinstance(thickness_mm, (str, bytes, bool, np.bool_)):
            raise TypeError
        t = float(thickness_mm)
    except (TypeError, ValueError):
        raise ValueError(f"{thickness_name} must be a number >= 0, got {thickness_mm!r}") from None
    if not (np.isfinite(t) and t >= 0):
        raise ValueError(f"{thickness_name} must be a number >= 0, got {thickness_mm!r}")
    if not isinstance(treatment, str) or treatment not in LAYER_TREATMENTS:
        raise ValueError(f"{treatment_name} must be one of {', '.join(LAYER_TREATMENTS)}, got "
                         f"{shown(treatment)}")
    if coherence_length_mm is not None:
        coherence_length_mm = check_positive("coherence_length_mm", coherence_length_mm)
    return ThinLayer(medium, t, treatment, coherence_length_mm)


def stacked_prism(kind, pieces, exit_face_deg, thickness_mm, *, width_mm, height_mm,
                  design_wavelength_um, layers=None, coated=False, parameters=None,
                  surround=None):
    """Build a :class:`Prism` from pieces between faces tilted about y.

    Parameters
    ----------
    kind : str
        Catalogue name stored on the prism.
    pieces : sequence of Piece
    exit_face_deg : sequence of float
        Signed tilt of each piece's exit face from the entrance plane (degrees, |α| < 80).
    thickness_mm : sequence of float
        Thinnest z-thickness of each piece across the clear aperture (mm, > 0).
    width_mm, height_mm : float
        Clear aperture along x and y (mm).
    design_wavelength_um : float
        Design wavelength (µm) of the coatings and default wavelength of the analyses.
    layers : sequence of (ThinLayer or None), optional
        One per internal interface (``len(pieces) − 1``).
    coated : bool
        Ideal antireflection coatings on the entrance and exit faces.
    parameters : dict, optional
        Builder inputs stored on the prism.
    surround : material, optional
        Medium around the prism (default air).

    Returns
    -------
    Prism
    """
    width = check_positive("width_mm", width_mm)
    height = check_positive("height_mm", height_mm)
    design = check_positive("design_wavelength_um", design_wavelength_um)
    coated = check_flag("coated", coated)
    count = len(pieces)
    if count == 0:
        raise ValueError("a stack needs at least one piece, got none")
    if len(exit_face_deg) != count or len(thickness_mm) != count:
        raise ValueError(f"a stack needs one exit-face angle and one thickness per piece, got "
                         f"{len(exit_face_deg)} angles and {len(thickness_mm)} thicknesses for "
                         f"{count} pieces")
    layers = [None] * (count - 1) if layers is None else list(layers)
    if len(layers) != count - 1:
        raise ValueError(f"a stack of {count} pieces has {count - 1} internal interfaces, got "
                         f"{len(layers)} interface layers")
    for i, layer in enumerate(layers):
        check_layer(layer, f"interface layer {i}")
    half = 0.5 * width
    boundaries = [Boundary((0.0, 0.0, 0.0), (0.0, 0.0, 1.0), coated=coated, label="entrance face")]
    previous_tan, z_centre = 0.0, 0.0
    for i, (angle, thick) in enumerate(zip(exit_face_deg, thickness_mm)):
        alpha = np.deg2rad(check_angle(f"exit face angle of piece {i}", angle, -80.0, 80.0))
        thick = check_positive(f"thickness_mm of piece {i}", thick)
        # A face through (0, 0, z_c) with normal (sin α, 0, cos α) sits at z = z_c − x tan α;
        # the piece is thinnest where its two faces converge, at one edge of the aperture.
        z_centre = z_centre + thick + half * abs(np.tan(alpha) - previous_tan)
        previous_tan = np.tan(alpha)
        last = i == count - 1
        boundaries.append(Boundary((0.0, 0.0, z_centre), (np.sin(alpha), 0.0, np.cos(alpha)),
                                   layer=None if last else layers[i], coated=coated and last,
                                   label="exit face" if last else f"interface {i + 1}"))
    return Prism(kind=kind, pieces=pieces, boundaries=boundaries, width_mm=width,
                 height_mm=height, design_wavelength_um=design, surround=surround,
                 parameters=dict(parameters or {}))
