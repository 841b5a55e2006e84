"""Savart plate: two equal crystal plates with oblique optic axes and crossed principal sections.

Each plate (thickness t) has its optic axis at θ (usually 45°) from the normal. In the first
plate the extraordinary ray walks off by t·tan ρ along the azimuth of its axis; the second plate
is turned 90° about z, so the beam that was ordinary becomes extraordinary and walks off at
right angles. The two emerging beams ("eo" and "oe") are parallel to the input and sheared by
√2·t·|tan ρ|, which for θ = 45° is √2·t·|n_e² − n_o²|/(n_e² + n_o²) (M. Françon and
S. Mallick, *Polarization Interferometers*, Wiley, 1971; from memory, re-derived from the
walk-off formula in the tests).
"""
import numpy as np

from .base import Piece, check_angle, check_finite, check_positive
from .stack import resolve_crystal, stacked_prism

__all__ = ["savart_plate"]


def savart_plate(material="quartz", plate_thickness_mm=5.0, axis_angle_deg=45.0, *,
                 azimuth_deg=45.0, width_mm=10.0, height_mm=10.0, design_wavelength_um=0.6328,
                 interface_layer=None, coated=False):
    """Build a Savart plate.

    Parameters
    ----------
    material : str or material
        Uniaxial crystal of both plates.
    plate_thickness_mm : float
        Thickness of each plate (mm).
    axis_angle_deg : float
        Angle between each plate's optic axis and z (degrees, 0 < θ < 90).
    azimuth_deg : float
        Azimuth of the first plate's axis from x (degrees); the second plate's is 90° more.
        The default 45° puts the shear along x (the principal section).
    width_mm, height_mm : float
        Clear aperture along x and y (mm).
    design_wavelength_um : float
        Design wavelength (µm) of the coatings and default wavelength of the analyses.
    interface_layer : ThinLayer, optional
        Cement film between the plates (see :func:`interface_layer`); default contacted.
    coated : bool
        Ideal antireflection coatings on the outer faces.

    Returns
    -------
    Prism
        ``kind = "savart plate"``.
    """
    crystal = resolve_crystal(material)
    thickness = check_positive("plate_thickness_mm", plate_thickness_mm)
    theta = np.deg2rad(check_angle("axis_angle_deg", axis_angle_deg, 0.0, 90.0))
    phi = np.deg2rad(check_finite("azimuth_deg", azimuth_deg, "a finite angle in degrees"))
    axes = [(np.sin(theta) * np.cos(a), np.sin(theta) * np.sin(a), np.cos(theta))
            for a in (phi, phi + 0.5 * np.pi)]
    pieces = [Piece(crystal, axes[0], label="first plate"),
              Piece(crystal, axes[1], label="second plate")]
    params = dict(material=getattr(crystal, "name", str(material)),
                  plate_thickness_mm=thickness, axis_angle_deg=axis_angle_deg,
                  azimuth_deg=azimuth_deg, width_mm=width_mm, height_mm=height_mm)
    return stacked_prism("savart plate", pieces, [0.0, 0.0], [thickness, thickness],
                         width_mm=width_mm, height_mm=height_mm,
                         design_wavelength_um=design_wavelength_um, layers=[interface_layer],
                         coated=coated, parameters=params)
