"""Exact crystal optics: plane-wave eigenmodes, interface solver, thin layers (coherent or
incoherent), sequential tracer, optically active (gyrotropic) pieces, biaxial crystals."""
from .biaxial import (BiaxialIndices, biaxial_modes, crystal_axes_from_vectors, optic_axes,
                      optic_axis_angle_deg)
from .eigenmodes import extraordinary_index, plane_wave_modes
from .gyrotropic import activity_crossover_angle_deg, gyrotropic_modes
from .interface import MODE_ORDER, InterfaceResult, solve_interface
from .system import (CircularAperture, FixedIndices, FixedPrincipalIndices, Medium, RectangularAperture,
                     SequentialSystem, Surface, optic_axis_from_angles)
from .thin_layer import ThinLayer
from .tracer import Beam, TraceFlag, TraceResult, trace
from .vectors import direction_from_angles

__all__ = ["extraordinary_index", "plane_wave_modes", "MODE_ORDER", "InterfaceResult",
           "solve_interface", "CircularAperture", "FixedIndices", "Medium", "RectangularAperture",
           "SequentialSystem", "Surface", "optic_axis_from_angles", "ThinLayer", "Beam",
           "TraceFlag", "TraceResult", "trace", "direction_from_angles", "gyrotropic_modes",
           "activity_crossover_angle_deg", "FixedPrincipalIndices", "BiaxialIndices",
           "biaxial_modes", "crystal_axes_from_vectors", "optic_axes", "optic_axis_angle_deg"]
