"""prismdesign: exact design of birefringent crystal prisms.

Public API: the material library (``material``, ``materials``, loading, saving and fitting
dispersion data), the exact crystal-optics core (media, surfaces, the interface solver and the
sequential tracer), the prism catalogue (``prismdesign.prisms``), the analyses
(``prismdesign.analysis``) and the design layer (``prismdesign.design``: requirements, solvers,
ranked search).
"""
__version__ = "0.1.0"

from .materials import (DispersionRangeWarning, IsotropicMaterial, UniaxialMaterial,
                        UnknownMaterialError, fit_dispersion, load_material, material,
                        material_datasets, materials, save_material)
from .optics import (Beam, CircularAperture, FixedIndices, Medium, RectangularAperture,
                     SequentialSystem, Surface, ThinLayer, TraceFlag, TraceResult,
                     direction_from_angles, extraordinary_index, optic_axis_from_angles,
                     plane_wave_modes, solve_interface, trace)
from . import analysis, design, prisms

__all__ = [
    "DispersionRangeWarning", "IsotropicMaterial", "UniaxialMaterial", "UnknownMaterialError",
    "fit_dispersion", "load_material", "material", "material_datasets", "materials",
    "save_material",
    "Beam", "CircularAperture", "FixedIndices", "Medium", "RectangularAperture",
    "SequentialSystem", "Surface", "ThinLayer", "TraceFlag", "TraceResult",
    "direction_from_angles", "extraordinary_index", "optic_axis_from_angles", "plane_wave_modes",
    "solve_interface", "trace", "analysis", "design", "prisms",
]
