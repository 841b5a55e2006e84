"""Prism types as the design layer sees them: free parameters with bounds and a builder.

A :class:`Family` turns a crystal (or a pair of crystals), the values of its free parameters
and the requirement (aperture, design wavelength, localisation distance) into a
:class:`~prismdesign.prisms.Prism`. The solvers vary only the free parameters; everything
else comes from the requirement. Families are looked up by plain names in :data:`FAMILIES`.
"""
from dataclasses import dataclass, replace

import numpy as np

from .. import prisms

__all__ = ["FreeParameter", "Family", "FAMILIES", "family", "design_wavelength_um"]


@dataclass(frozen=True)
class FreeParameter:
    """A parameter the solver may vary, with its unit and bounds.

    Attributes
    ----------
    name : str
        The builder's keyword, e.g. ``"wedge_angle_deg"``.
    low, high : float
        Bounds (inclusive) in the parameter's unit.
    """

    name: str
    low: float
    high: float


@dataclass(frozen=True)
class Family:
    """One prism type for the design layer.

    Attributes
    ----------
    name : str
        Plain name used in requirements, tables and on the command line.
    targets : tuple of str
        Target kinds it can meet (see :data:`~prismdesign.design.requirement.TARGET_KINDS`).
    parameters : tuple of FreeParameter
    crystals : int
        How many crystals it combines (1, or 2 for two-crystal designs).
    description : str
    """

    name: str
    targets: tuple
    parameters: tuple
    crystals: int
    description: str
    _build: object = None
    _estimate: object = None

    def estimate(self, crystal, requirement):
        """First-order guess of the first free parameter (thin-prism or walk-off formula), or
        None: the solver brackets its root around it before falling back to a scan."""
        if self._estimate is None or requirement.target_value is None:
            return None
        try:
            guess = float(self._estimate(crystal, requirement))
        except (ValueError, ZeroDivisionError, FloatingPointError):
            return None
        low, high = self.parameters[0].low, self.parameters[0].high
        return guess if np.isfinite(guess) and low < guess < high else None

    def build(self, crystal, values, requirement):
        """The prism for `crystal` (a name, or a pair of names) and parameter `values`.

        Parameters
        ----------
        crystal : str or (str, str)
        values : sequence of float
            One value per free parameter, in order.
        requirement : Requirement

        Returns
        -------
        Prism
        """
        values = dict(zip((p.name for p in self.parameters), (float(v) for v in values)))
        return self._build(crystal, values, requirement)

    def bounds(self):
        """(lows, highs) of the free parameters as float arrays, in their units."""
        return (np.array([p.low for p in self.parameters]),
                np.array([p.high for p in self.parameters]))


def design_wavelength_um(requirement):
    """Wavelength for coatings and solved internal settings: the middle of the band/lines."""
    lam = requirement.wavelengths_um
    return float(0.5 * (lam.min() + lam.max()))


def _size(requirement):
    a = requirement.clear_aperture_mm
    return dict(width_mm=a, height_mm=a, design_wavelength_um=design_wavelength_um(requirement),
                coated=requirement.coated)


def _wollaston(crystal, v, req):
    return prisms.wollaston(crystal, v["wedge_angle_deg"], **_size(req))


def _wollaston_unequal(crystal, v, req):
    return prisms.wollaston(crystal, v["wedge_angle_deg"],
                            exit_wedge_angle_deg=v["exit_wedge_angle_deg"], **_size(req))


def _rochon(crystal, v, req):
    return prisms.rochon(crystal, v["wedge_angle_deg"], **_size(req))


def _senarmont(crystal, v, req):
    return prisms.senarmont(crystal, v["wedge_angle_deg"], **_size(req))


def _nomarski(crystal, v, req):
    if not req.wants_localisation:
        raise ValueError("a Nomarski design needs localisation_distance_mm, or objective_bfp_mm "
                         "with prism_gap_mm, got neither")
    # The geometry (and so the exit face) does not depend on the axis tilt.
    exit_z = prisms.nomarski(crystal, v["wedge_angle_deg"], axis_tilt_deg=0.0,
                             **_size(req)).boundaries[-1].point_mm[2]
    return prisms.nomarski(crystal, v["wedge_angle_deg"],
                           localisation_distance_mm=req.wanted_localisation_mm(exit_z),
                           **_size(req))


def _displacer(crystal, v, req):
    a = req.clear_aperture_mm
    return prisms.walkoff_displacer(crystal, v["length_mm"], width_mm=a, height_mm=a,
                                    design_wavelength_um=design_wavelength_um(req),
                                    coated=req.coated)


def _savart(crystal, v, req):
    return prisms.savart_plate(crystal, v["plate_thickness_mm"], **_size(req))


def _glan_air(crystal, v, req):
    return prisms.glan_air_spaced(crystal, v["cut_angle_deg"], **_size(req))


def _glan_cemented(crystal, v, req):
    return prisms.glan_cemented(crystal, v["cut_angle_deg"], **_size(req))


def _paired_wollaston(crystals, v, req):
    """Two Wollaston prisms of different crystals in series, the second turned 180° about z
    when its wedge angle is negative (its split then subtracts)."""
    first, second = crystals
    size = dict(_size(req), coated=False)
    a = prisms.wollaston(first, v["first_wedge_deg"], **size)
    b_angle = v["second_wedge_deg"]
    b = prisms.wollaston(second, abs(b_angle), **size)
    pair = prisms.in_series(a, b, spacing_mm=0.5, rotation_deg=180.0 if b_angle < 0 else 0.0,
                            kind="two-crystal Wollaston")
    if not req.coated:
        return pair
    # The model's ideal coating goes on the two outer faces only; the faces across the
    # 0.5 mm air space between the prisms stay bare.
    faces = list(pair.boundaries)
    faces[0], faces[-1] = (replace(faces[0], coated=True), replace(faces[-1], coated=True))
    return replace(pair, boundaries=faces)


def _birefringence(crystal, requirement):
    """|n_e − n_o| and the indices at the middle of the band."""
    from ..materials import material as library_material
    n_o, n_e = library_material(crystal).indices(design_wavelength_um(requirement))
    return abs(float(n_e - n_o)), float(n_o), float(n_e)


def _split_rad(requirement):
    """Target split (rad); for a separation target, the split that gives it on the plane."""
    if requirement.target_kind == "separation":
        return 2.0 * np.arctan(0.5 * requirement.separation_mm / requirement.distance_mm)
    return np.deg2rad(requirement.split_deg)


def _thin_wedge(factor):
    """Wedge from the thin-prism split factor·|Δn|·tan θ (Hecht, *Optics*, 4th ed., §8.4.3,
    from memory): 2 for a Wollaston, 1 for a Rochon."""
    def estimate(crystal, requirement):
        dn, _, _ = _birefringence(crystal, requirement)
        return np.rad2deg(np.arctan(_split_rad(requirement) / (factor * dn)))
    return estimate


def _displacer_length(crystal, requirement):
    """L = offset / tan ρ with the walk-off ρ at the maximum-walk-off cut (Born & Wolf §15.3)."""
    rho = abs(prisms.walkoff_angle_deg(crystal, design_wavelength_um(requirement),
                                       prisms.max_walkoff_cut_angle_deg(
                                           crystal, design_wavelength_um(requirement))))
    return requirement.offset_mm / np.tan(np.deg2rad(rho))


def _savart_thickness(crystal, requirement):
    """Shear ≈ √2 t (n_e² − n_o²)/(n_e² + n_o²) for axes at 45° (Françon & Mallick 1971)."""
    _, n_o, n_e = _birefringence(crystal, requirement)
    target = requirement.shear_mm if requirement.shear_mm is not None else requirement.offset_mm
    return target / (np.sqrt(2.0) * abs(n_e ** 2 - n_o ** 2) / (n_e ** 2 + n_o ** 2))


_WEDGE = FreeParameter("wedge_angle_deg", 0.05, 79.0)

#: Every prism type the design layer can solve, by plain name.
FAMILIES = {f.name: f for f in (
    Family("wollaston", ("split", "separation"), (_WEDGE,), 1,
           "Wollaston, equal wedges", _wollaston, _thin_wedge(2.0)),
    Family("wollaston_unequal", ("split", "separation"),
           (_WEDGE, FreeParameter("exit_wedge_angle_deg", 0.05, 79.0)), 1,
           "Wollaston with unequal wedges (centred or biased split)", _wollaston_unequal,
           _thin_wedge(2.0)),
    Family("rochon", ("split", "separation"), (_WEDGE,), 1,
           "Rochon: one beam undeviated", _rochon, _thin_wedge(1.0)),
    Family("senarmont", ("split", "separation"), (_WEDGE,), 1,
           "Sénarmont: one beam undeviated, the other polarisation deviated", _senarmont,
           _thin_wedge(1.0)),
    Family("nomarski", ("split",), (FreeParameter("wedge_angle_deg", 0.01, 30.0),), 1,
           "Nomarski: split with its fringe plane outside the prism", _nomarski,
           _thin_wedge(2.0)),
    Family("walkoff_displacer", ("offset",), (FreeParameter("length_mm", 0.01, 200.0),), 1,
           "walk-off displacer, maximum walk-off cut", _displacer,
           _displacer_length),
    Family("savart_plate", ("shear", "offset"), (FreeParameter("plate_thickness_mm", 0.01, 100.0),),
           1, "Savart plate, axes at 45°", _savart, _savart_thickness),
    Family("glan_air_spaced", ("polariser",), (FreeParameter("cut_angle_deg", 20.0, 80.0),), 1,
           "Glan polariser, air gap", _glan_air),
    Family("glan_cemented", ("polariser",), (FreeParameter("cut_angle_deg", 20.0, 85.0),), 1,
           "Glan polariser, cemented", _glan_cemented),
    Family("two_crystal_wollaston", ("split", "separation"),
           (FreeParameter("first_wedge_deg", 0.05, 60.0),
            FreeParameter("second_wedge_deg", -60.0, 60.0)), 2,
           "two Wollastons of different crystals in series: split held flat over the band",
           _paired_wollaston),
)}


def family(name):
    """The :class:`Family` called `name`, or a one-line error listing the known names."""
    try:
        return FAMILIES[name]
    except (KeyError, TypeError):
        raise ValueError(f"prism type must be one of {', '.join(FAMILIES)}, got {name!r}") \
            from None
