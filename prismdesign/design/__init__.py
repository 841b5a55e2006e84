"""Design layer: from what a lab needs (a requirement) to prism designs that meet it.

``requirement`` says what is needed, ``merit`` how well a candidate meets it (one trace per
candidate), ``families`` which prism types can be solved and their free parameters, ``solve``
how one type in one crystal is solved, ``search`` every allowed type and crystal ranked.
Tolerancing: ``perturbation`` (error parameters, perturbed prisms as one batch),
``batch_merit`` (figures and margins per sample), ``tolerance`` (distributions and costs),
``sensitivity``, ``monte_carlo``, ``allocation``, ``temperature``, and ``as_built`` (fitting
errors of a built prism to measurements).
"""
from .families import FAMILIES, Family, FreeParameter, family
from .merit import Assessment, Figures, Margin, assess, figures
from .requirement import BAND_NORMS, TARGET_KINDS, Requirement, load_requirement, requirement_from_mapping
from .search import Ranking, search, suitable_crystals
from .solve import Design, solve, thin_prism_pair

__all__ = ["BAND_NORMS", "TARGET_KINDS", "FAMILIES", "Family", "FreeParameter", "family", "Assessment", "Figures", "Margin",
           "assess", "figures", "Requirement", "requirement_from_mapping", "load_requirement", "Design", "solve",
           "thin_prism_pair", "Ranking", "search", "suitable_crystals"]

from .allocation import Allocation, allocate
from .as_built import (AsBuiltFit, Measurements, UndeterminedParameterWarning, fit_as_built,
                       measurements, read_measurements)
from .monte_carlo import MonteCarloResult, monte_carlo
from .perturbation import Parameter, apply_errors, prism_parameters
from .sensitivity import Sensitivities, sensitivities, wollaston_closed_form
from .temperature import TemperatureSweep, temperature_sweep
from .tolerance import DISTRIBUTIONS, Tolerance, ToleranceSet

__all__ += ["Allocation", "allocate", "AsBuiltFit", "Measurements", "UndeterminedParameterWarning",
            "fit_as_built", "measurements", "read_measurements", "MonteCarloResult", "monte_carlo",
            "Parameter", "apply_errors", "prism_parameters", "Sensitivities", "sensitivities",
            "wollaston_closed_form", "TemperatureSweep", "temperature_sweep", "DISTRIBUTIONS",
            "Tolerance", "ToleranceSet"]

from .design_file import (DesignFile, PrismSpec, design_from_solution, load_design,
                          save_design)

__all__ += ["DesignFile", "PrismSpec", "design_from_solution", "load_design", "save_design"]
