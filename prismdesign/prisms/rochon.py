"""Rochon and Sénarmont prisms: one beam leaves undeviated, the other is deviated.

Two wedges of one crystal sharing a tilted interface, with parallel outer faces. In the first
wedge the optic axis is along z, so at normal incidence both polarisations travel with the
ordinary index. In the second wedge the axis lies in the face: across the principal section
(y) for the Rochon prism, in it (x) for the Sénarmont prism. The wave that is ordinary in the
second wedge meets index n_o on both sides of the interface and leaves undeviated at every
wavelength; the extraordinary one is deviated by roughly (n_o − n_e) tan θ (Bennett, "Polarizers",
in *Handbook of Optics* vol. II, 2nd ed., 1995, ch. 3; from memory).
"""
from .stack import resolve_material
from .wollaston import wedge_pair

__all__ = ["rochon", "senarmont"]


def _build(kind, second_axis, material, wedge_angle_deg, width_mm, height_mm, edge_thickness_mm,
           design_wavelength_um, interface_layer, coated):
    params = dict(material=getattr(resolve_material(material), "name", str(material)),
                  wedge_angle_deg=wedge_angle_deg, width_mm=width_mm, height_mm=height_mm,
                  edge_thickness_mm=edge_thickness_mm)
    return wedge_pair(material, wedge_angle_deg, None, width_mm, height_mm, edge_thickness_mm,
                      "z", second_axis, design_wavelength_um, kind,
                      interface_layer=interface_layer, coated=coated, parameters=params)


def rochon(material="calcite", wedge_angle_deg=20.0, *, width_mm=10.0, height_mm=10.0,
           edge_thickness_mm=1.0, design_wavelength_um=0.6328, interface_layer=None,
           coated=False):
    """Build a Rochon prism.

    First wedge: optic axis along z (the propagation direction). Second wedge: optic axis in
    the face, across the principal section (y). At normal incidence the x-polarised beam
    (ordinary in the second wedge) leaves undeviated; the y-polarised beam is deviated in the
    x–z plane.

    Parameters
    ----------
    material : str or material
        Uniaxial crystal of both wedges.
    wedge_angle_deg : float
        Angle between the entrance face and the interface (degrees, 0 < θ < 80).
    width_mm, height_mm : float
        Clear aperture along x and y (mm).
    edge_thickness_mm : float
        Thickness of each wedge at its thin edge (mm).
    design_wavelength_um : float
        Design wavelength (µm) of the coatings and default wavelength of the analyses.
    interface_layer : ThinLayer, optional
        Cement film or air gap at the interface (see :func:`interface_layer`).
    coated : bool
        Ideal antireflection coatings on the outer faces.

    Returns
    -------
    Prism
        ``kind = "rochon"``; the undeviated beam's label ends in "o".
    """
    return _build("rochon", "y", material, wedge_angle_deg, width_mm, height_mm,
                  edge_thickness_mm, design_wavelength_um, interface_layer, coated)


def senarmont(material="calcite", wedge_angle_deg=20.0, *, width_mm=10.0, height_mm=10.0,
              edge_thickness_mm=1.0, design_wavelength_um=0.6328, interface_layer=None,
              coated=False):
    """Build a Sénarmont prism.

    As :func:`rochon`, but the second wedge's optic axis lies in the principal section (x): the
    y-polarised beam leaves undeviated and the x-polarised one is deviated.

    Parameters
    ----------
    material, wedge_angle_deg, width_mm, height_mm, edge_thickness_mm, design_wavelength_um,
    interface_layer, coated
        As for :func:`rochon`.

    Returns
    -------
    Prism
        ``kind = "senarmont"``.
    """
    return _build("senarmont", "x", material, wedge_angle_deg, width_mm, height_mm,
                  edge_thickness_mm, design_wavelength_um, interface_layer, coated)
