"""Walk-off beam displacer: a plane-parallel crystal plate with an oblique optic axis.

At normal incidence both waves keep the wave normal z, but the extraordinary ray (energy) walks
off by the angle ρ with

    tan ρ = (n_o² − n_e²) sin θ cos θ / (n_e² cos² θ + n_o² sin² θ),

θ the angle between the optic axis and the wave normal (Born & Wolf, *Principles of Optics*,
7th ed., §15.3.3; Yariv & Yeh, *Optical Waves in Crystals*, 1984, §4.3). The two beams leave
parallel, offset by L·tan ρ. Setting dρ/dθ = 0 gives the largest walk-off at tan θ = n_e/n_o,
where tan ρ_max = (n_o² − n_e²) / (2 n_o n_e).
"""
import numpy as np

from .base import Piece, check_angle, check_angles, check_positive
from .stack import resolve_crystal, stacked_prism

__all__ = ["walkoff_displacer", "walkoff_angle_deg", "max_walkoff_cut_angle_deg"]


def walkoff_angle_deg(material, wavelength_um, cut_angle_deg):
    """Walk-off angle ρ of the extraordinary ray for a wave normal at θ from the optic axis.

    Parameters
    ----------
    material : str or material
        Uniaxial crystal.
    wavelength_um : array_like
        Vacuum wavelengths (µm).
    cut_angle_deg : array_like
        Angle θ between optic axis and wave normal (degrees); broadcasts with the wavelength.

    Returns
    -------
    ndarray or float
        ρ in degrees, positive when the ray turns away from the optic axis (negative crystals,
        n_e < n_o), negative when it turns toward it (positive crystals).
    """
    n_o, n_e = resolve_crystal(material).indices(wavelength_um)
    theta = np.deg2rad(check_angles("cut_angle_deg", cut_angle_deg))
    s, c = np.sin(theta), np.cos(theta)
    tan_rho = (n_o ** 2 - n_e ** 2) * s * c / (n_e ** 2 * c ** 2 + n_o ** 2 * s ** 2)
    return np.rad2deg(np.arctan(tan_rho))[()]


def max_walkoff_cut_angle_deg(material, wavelength_um):
    """Cut angle (optic axis from the plate normal) of largest walk-off: tan θ = n_e / n_o.

    Parameters
    ----------
    material : str or material
    wavelength_um : array_like
        Vacuum wavelengths (µm).

    Returns
    -------
    ndarray or float
        θ in degrees.
    """
    n_o, n_e = resolve_crystal(material).indices(wavelength_um)
    return np.rad2deg(np.arctan2(n_e, n_o))[()]


def walkoff_displacer(material="calcite", length_mm=10.0, cut_angle_deg=None, *, width_mm=10.0,
                      height_mm=10.0, design_wavelength_um=0.6328, coated=False):
    """Build a walk-off beam displacer.

    A plate of length `length_mm` along z; optic axis in the x–z plane at `cut_angle_deg` from
    z, i.e. (sin θ, 0, cos θ). At normal incidence the ordinary beam (y-polarised) goes
    straight; the extraordinary beam (x-polarised) leaves parallel to it, displaced along x by
    −L·tan ρ (away from the axis for negative crystals such as calcite).

    Parameters
    ----------
    material : str or material
        Uniaxial crystal.
    length_mm : float
        Plate length along z (mm).
    cut_angle_deg : float, optional
        Angle between optic axis and z (degrees, 0 < θ < 90). Default: the largest walk-off at
        the design wavelength, :func:`max_walkoff_cut_angle_deg`.
    width_mm, height_mm : float
        Clear aperture along x and y (mm).
    design_wavelength_um : float
        Design wavelength (µm): sets the default cut angle, the coatings and the default
        wavelength of the analyses.
    coated : bool
        Ideal antireflection coatings on both faces.

    Returns
    -------
    Prism
        ``kind = "walk-off displacer"``; ``parameters`` holds the cut angle used, the walk-off
        angle and the offset at the design wavelength.
    """
    crystal = resolve_crystal(material)
    length = check_positive("length_mm", length_mm)
    lam = check_positive("design_wavelength_um", design_wavelength_um)
    if cut_angle_deg is None:
        cut = float(max_walkoff_cut_angle_deg(crystal, lam))
    else:
        cut = check_angle("cut_angle_deg", cut_angle_deg, 0.0, 90.0)
    rho = float(walkoff_angle_deg(crystal, lam, cut))
    theta = np.deg2rad(cut)
    piece = Piece(crystal, (np.sin(theta), 0.0, np.cos(theta)), label="plate")
    params = dict(material=getattr(crystal, "name", str(material)), length_mm=length,
                  cut_angle_deg=cut, walkoff_angle_deg=rho,
                  offset_mm=length * float(np.tan(np.deg2rad(rho))), width_mm=width_mm,
                  height_mm=height_mm)
    return stacked_prism("walk-off displacer", [piece], [0.0], [length], width_mm=width_mm,
                         height_mm=height_mm, design_wavelength_um=lam, coated=coated,
                         parameters=params)
