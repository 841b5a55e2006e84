"""Wollaston prism: two wedges of one crystal with crossed optic axes, both beams deviated."""
import numpy as np

from .base import Boundary, Piece, Prism, check_angle, check_flag, check_positive
from .stack import check_layer, resolve_crystal, resolve_material

__all__ = ["wollaston", "AXIS_DIRECTIONS"]

#: Named optic-axis directions for pieces whose axis lies in the entrance face:
#: "x" in the principal section, "y" perpendicular to it.
AXIS_DIRECTIONS = {"x": (1.0, 0.0, 0.0), "y": (0.0, 1.0, 0.0), "z": (0.0, 0.0, 1.0)}


def wedge_pair(material, wedge_angle_deg, exit_wedge_angle_deg, width_mm, height_mm,
               edge_thickness_mm, first_axis, second_axis, design_wavelength_um, kind,
               interface_layer=None, coated=False, parameters=None):
    """Two wedges sharing one tilted interface: the common geometry of Wollaston-type prisms.

    The interface passes through the prism centre with normal (sin θ₁, 0, cos θ₁); the exit
    face is tilted by θ₁ − θ₂ so that the second wedge has angle θ₂. Each wedge is
    `edge_thickness_mm` thick at its thin edge.
    """
    material = resolve_crystal(material)
    design_wavelength_um = check_positive("design_wavelength_um", design_wavelength_um)
    check_layer(interface_layer)
    coated = check_flag("coated", coated)
    theta1 = np.deg2rad(check_angle("wedge_angle_deg", wedge_angle_deg, 0.0, 80.0))
    theta2 = theta1 if exit_wedge_angle_deg is None else np.deg2rad(
        check_angle("exit_wedge_angle_deg", exit_wedge_angle_deg, 0.0, 80.0))
    width = check_positive("width_mm", width_mm)
    height = check_positive("height_mm", height_mm)
    edge = check_positive("edge_thickness_mm", edge_thickness_mm)
    half = 0.5 * width
    z_mid = edge + half * np.tan(theta1)
    interface_normal = (np.sin(theta1), 0.0, np.cos(theta1))
    tilt = theta1 - theta2
    exit_normal = (np.sin(tilt), 0.0, np.cos(tilt))
    # Second wedge: thinnest at x = −w/2 (where the interface is furthest along z).
    z_interface_low_x = z_mid + half * np.tan(theta1)
    z_exit_centre = z_interface_low_x + edge - half * np.tan(tilt)
    pieces = [Piece(material, AXIS_DIRECTIONS[first_axis] if isinstance(first_axis, str) else first_axis,
                    label="first wedge"),
              Piece(material, AXIS_DIRECTIONS[second_axis] if isinstance(second_axis, str) else second_axis,
                    label="second wedge")]
    boundaries = [Boundary((0.0, 0.0, 0.0), (0.0, 0.0, 1.0), coated=coated, label="entrance face"),
                  Boundary((0.0, 0.0, z_mid), interface_normal, layer=interface_layer,
                           label="interface"),
                  Boundary((0.0, 0.0, z_exit_centre), exit_normal, coated=coated, label="exit face")]
    return Prism(kind=kind, pieces=pieces, boundaries=boundaries, width_mm=width,
                 height_mm=height, design_wavelength_um=float(design_wavelength_um),
                 parameters=dict(parameters or {}))


def wollaston(material="calcite", wedge_angle_deg=15.0, *, width_mm=10.0, height_mm=10.0,
              edge_thickness_mm=1.0, exit_wedge_angle_deg=None, first_axis="x",
              design_wavelength_um=0.6328, interface_layer=None, coated=False):
    """Build a Wollaston prism.

    Two wedges of the same uniaxial crystal, both optic axes in the faces and crossed: one in
    the principal section (x), the other perpendicular to it (y). The beams leave split
    roughly symmetrically, by about 2|n_o − n_e| tan θ.

    Parameters
    ----------
    material : str or material
        Crystal (library name or object).
    wedge_angle_deg : float
        Angle between the entrance face and the internal interface, degrees.
    width_mm, height_mm : float
        Clear aperture along x (the split direction) and y.
    edge_thickness_mm : float
        Thickness of each wedge at its thin edge.
    exit_wedge_angle_deg : float, optional
        Angle of the second wedge (interface to exit face); unequal angles bias the split.
        Default: equal to `wedge_angle_deg` (parallel outer faces).
    first_axis : {"x", "y"}
        Optic axis of the first wedge: in the principal section ("x") or across it ("y").
        The second wedge takes the other.
    design_wavelength_um : float
        Design wavelength (µm) of the coatings and default wavelength of the analyses.
    interface_layer : ThinLayer, optional
        Cement film (or thin air gap) at the interface; default optically contacted.
    coated : bool
        Ideal single-layer antireflection coatings on the outer faces.

    Returns
    -------
    Prism
    """
    if first_axis not in ("x", "y"):
        raise ValueError(f"first_axis must be 'x' or 'y', got {first_axis!r}")
    second = "y" if first_axis == "x" else "x"
    params = dict(material=getattr(resolve_material(material), "name", str(material)),
                  wedge_angle_deg=wedge_angle_deg, exit_wedge_angle_deg=exit_wedge_angle_deg,
                  width_mm=width_mm, height_mm=height_mm, edge_thickness_mm=edge_thickness_mm,
                  first_axis=first_axis)
    return wedge_pair(material, wedge_angle_deg, exit_wedge_angle_deg, width_mm, height_mm,
                      edge_thickness_mm, first_axis, second, design_wavelength_um, "wollaston",
                      interface_layer=interface_layer, coated=coated, parameters=params)
