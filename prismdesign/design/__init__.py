"""Design layer: from what a lab needs (a requirement) to prism designs that meet it.

``requirement`` says what is needed, ``merit`` how well a candidate meets it (one trace per
candidate), ``families`` which prism types can be solved and their free parameters, ``solve``
how one type in one crystal is solved, ``search`` every allowed type and crystal ranked.
"""
from .families import FAMILIES, Family, FreeParameter, family
from .merit import Assessment, Figures, Margin, assess, figures
from .requirement import BAND_NORMS, TARGET_KINDS, Requirement, load_requirement, requirement_from_mapping
from .search import Ranking, search, suitable_crystals
from .solve import Design, solve, thin_prism_pair

__all__ = ["BAND_NORMS", "TARGET_KINDS", "FAMILIES", "Family", "FreeParameter", "family", "Assessment", "Figures", "Margin",
           "assess", "figures", "Requirement", "requirement_from_mapping", "load_requirement", "Design", "solve",
           "thin_prism_pair", "Ranking", "search", "suitable_crystals"]
