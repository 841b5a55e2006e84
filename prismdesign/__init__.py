"""prismdesign: exact design of birefringent crystal prisms."""
__version__ = "0.1.0"

from .materials import (DispersionRangeWarning, IsotropicMaterial, UniaxialMaterial,
                        UnknownMaterialError, fit_dispersion, load_material, material, materials,
                        save_material)
from .optics import (Beam, CircularAperture, FixedIndices, Medium, RectangularAperture,
                     SequentialSystem, Surface, ThinLayer, TraceFlag, TraceResult,
                     extraordinary_index, optic_axis_from_angles, plane_wave_modes,
                     solve_interface, trace)
from . import analysis, prisms
