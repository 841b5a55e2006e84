"""Analyses of a prism: deviation and split, separation on a plane, transmission, extinction,
Jones and Mueller matrices, field of view, interference (OPD, shear, fringe localisation),
split and deviations versus temperature.
Every function takes a prism and broadcasts over wavelength, incidence angle and entry point."""
from ._common import (BELOW_POWER_FLOOR, LOST_FLAGS, LOST_POWER_FLOOR, MissingBeamWarning,
                      describe_lost, lost_codes)
from . import beam_groups, memory
from .deviation import SplitResult, split, split_angle_deg, wollaston_small_angle_split_deg
from .extinction import ExtinctionResult, extinction, perturb_axes
from .field_of_view import (DIRECTIONS, FieldOfView, Requirement, beam_blocked, beam_passes,
                            default_requirements, extinction_at_least, field_of_view, find_edges,
                            power_at_least, power_at_most, requirement_margins)
from .interference import (Localisation, fringe_localisation, main_beams,
                           optical_path_difference, shear_mm, small_angle_estimates)
from .jones import JonesResult, jones_matrices, mueller_from_jones, stokes_from_jones
from .separation import SeparationResult, gaussian_beam_radius_mm, separation
from .temperature import TemperatureResult, temperature_dependence
from .transmission import TransmissionResult, transmission

__all__ = [
    "LOST_FLAGS", "LOST_POWER_FLOOR", "BELOW_POWER_FLOOR", "MissingBeamWarning", "lost_codes",
    "describe_lost", "memory", "beam_groups",
    "DIRECTIONS", "FieldOfView", "Requirement", "beam_blocked", "beam_passes",
    "default_requirements", "extinction_at_least", "field_of_view", "find_edges",
    "power_at_least", "power_at_most", "requirement_margins",
    "Localisation", "fringe_localisation", "main_beams", "optical_path_difference", "shear_mm",
    "small_angle_estimates",
    "ExtinctionResult",
    "JonesResult",
    "SeparationResult",
    "SplitResult",
    "TemperatureResult",
    "TransmissionResult",
    "extinction",
    "gaussian_beam_radius_mm",
    "jones_matrices",
    "mueller_from_jones",
    "perturb_axes",
    "separation",
    "split",
    "split_angle_deg",
    "stokes_from_jones",
    "temperature_dependence",
    "transmission",
    "wollaston_small_angle_split_deg",
]
