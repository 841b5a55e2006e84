"""Prism catalogue: builders that turn a few parameters into traceable, drawable prisms."""
from .base import Boundary, Piece, Prism, ideal_antireflection_layer
from .wollaston import wollaston

__all__ = ["Boundary", "Piece", "Prism", "ideal_antireflection_layer", "wollaston"]
