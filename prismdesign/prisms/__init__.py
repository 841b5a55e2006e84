"""Prism catalogue: builders that turn a few parameters into traceable, drawable prisms."""
from .base import Boundary, Piece, Prism, ideal_antireflection_layer
from .compound import StackPiece, compound_prism, double_wollaston, free_stack, in_series
from .displacer import max_walkoff_cut_angle_deg, walkoff_angle_deg, walkoff_displacer
from .glan import (RejectedBeam, glan_air_spaced, glan_cemented, glan_cut_angle_limits,
                   glan_transmitted_mode, rejected_beam_system, trace_rejected)
from .nomarski import LocalisationPlane, localisation_plane, nomarski
from .rochon import rochon, senarmont
from .savart import savart_plate
from .stack import interface_layer
from .wollaston import wollaston

__all__ = ["Boundary", "Piece", "Prism", "ideal_antireflection_layer", "wollaston",
           "glan_air_spaced", "glan_cemented", "glan_cut_angle_limits", "glan_transmitted_mode",
           "rejected_beam_system", "trace_rejected", "RejectedBeam", "savart_plate", "nomarski",
           "localisation_plane", "LocalisationPlane", "rochon", "senarmont",
           "walkoff_displacer", "walkoff_angle_deg", "max_walkoff_cut_angle_deg",
           "double_wollaston", "compound_prism", "free_stack", "in_series", "StackPiece",
           "interface_layer"]
