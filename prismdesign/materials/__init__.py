"""Materials: published dispersion formulas, isotropic, uniaxial and biaxial media, the bundled library,
reading and writing dispersion-data files, and fitting a formula to measured indices."""
from .activity import OpticalActivity
from .fitting import FitResult, fit_dispersion
from .library import (MaterialLibrary, UnknownMaterialError, load_material, material,
                      material_datasets, materials, save_material)
from .material import (BiaxialMaterial, DispersionModel, DispersionRangeWarning, IsotropicMaterial, Reference,
                       UniaxialMaterial)

__all__ = [
    "BiaxialMaterial",
    "DispersionModel",
    "DispersionRangeWarning",
    "FitResult",
    "IsotropicMaterial",
    "MaterialLibrary",
    "OpticalActivity",
    "Reference",
    "UniaxialMaterial",
    "UnknownMaterialError",
    "fit_dispersion",
    "load_material",
    "material",
    "material_datasets",
    "materials",
    "save_material",
]
