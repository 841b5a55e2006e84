"""Prisms in series and stacks of wedges: double Wollaston, compound prisms, free stacks.

A free stack is any sequence of pieces (crystal or glass) between faces tilted about y, each
with its own optic axis; compound prisms (several wedges of different crystals, the basis of
achromatic designs) and the catalogue's two-wedge prisms are special cases. Each internal
interface may carry a cement film or an air gap (:func:`~prismdesign.prisms.interface_layer`).
"""
from dataclasses import dataclass, replace

from ..optics import ThinLayer
from .base import Piece, Prism, check_finite, check_positive
from .stack import interface_layer, resolve_axis, resolve_material, stacked_prism
from .wollaston import wollaston

__all__ = ["StackPiece", "free_stack", "compound_prism", "double_wollaston", "in_series"]


@dataclass(frozen=True)
class StackPiece:
    """One piece of a free stack.

    Parameters
    ----------
    material : str or material
        Crystal or glass (library name or object).
    optic_axis : str, pair or 3-vector, optional
        "x", "y", "z", (polar_deg, azimuth_deg) or a unit 3-vector (global frame); None for an
        isotropic material.
    exit_face_deg : float
        Tilt of the piece's exit face from the entrance plane, about y (degrees, |α| < 80;
        positive when the face normal leans toward +x).
    thickness_mm : float
        Thinnest z-thickness of the piece across the aperture (mm).
    label : str
    crystal_axes : array_like, shape (3, 3), optional
        For a biaxial crystal instead of an optic axis: rows are its principal x, y, z axes
        in the global frame (:func:`~prismdesign.optics.crystal_axes_from_vectors`).
    """

    material: object
    optic_axis: object = None
    exit_face_deg: float = 0.0
    thickness_mm: float = 1.0
    label: str = ""
    crystal_axes: object = None


def _as_list(items, name, kind):
    """The pieces (or wedges) as a list; a lone string or number is refused in one line."""
    if isinstance(items, (str, bytes, dict, StackPiece)) or not hasattr(items, "__iter__"):
        raise ValueError(f"{name} must be a list with one entry per {kind} (dicts, tuples or "
                         f"StackPiece), got {items!r}")
    return list(items)


def _as_spec(item, index, cls_keys, kind):
    """A dict of piece settings from a StackPiece, a dict or a tuple."""
    if isinstance(item, StackPiece):
        spec = dict(material=item.material, optic_axis=item.optic_axis,
                    exit_face_deg=item.exit_face_deg, thickness_mm=item.thickness_mm,
                    label=item.label)
        return spec | ({} if item.crystal_axes is None else {"crystal_axes": item.crystal_axes})
    if isinstance(item, dict):
        unknown = sorted(set(item) - set(cls_keys))
        if unknown:
            raise ValueError(f"{kind} {index}: unknown key {unknown[0]!r}; allowed: "
                             f"{', '.join(cls_keys)}")
        if "material" not in item:
            raise ValueError(f"{kind} {index}: 'material' is required, got keys {sorted(item)}")
        return dict(item)
    if isinstance(item, (tuple, list)) and 1 <= len(item) <= len(cls_keys):
        return dict(zip(cls_keys, item))
    raise ValueError(f"{kind} {index} must be a dict (keys {', '.join(cls_keys)}) or a tuple, "
                     f"got {item!r}")


def _layer(value, index):
    """Interface layer from None, a ThinLayer or a dict(material=..., thickness_mm=...,
    treatment=..., coherence_length_mm=...)."""
    if value is None or isinstance(value, ThinLayer):
        return value
    if isinstance(value, dict):
        unknown = sorted(set(value) - {"material", "thickness_mm", "treatment",
                                       "coherence_length_mm"})
        if unknown:
            raise ValueError(f"interface {index}: unknown key {unknown[0]!r}; allowed: material, "
                             f"thickness_mm, treatment, coherence_length_mm")
        return interface_layer(**value)
    raise ValueError(f"interface {index} must be None, a ThinLayer or a dict(material=..., "
                     f"thickness_mm=...), got {value!r}")


def _piece(spec, index):
    crystal = resolve_material(spec["material"], f"material of piece {index}")
    axis = resolve_axis(spec.get("optic_axis"), f"optic_axis of piece {index}")
    if getattr(crystal, "kind", "") == "uniaxial" and axis is None:
        raise ValueError(f"piece {index} of uniaxial {crystal.name} needs an optic_axis "
                         f"('x', 'y', 'z', (polar_deg, azimuth_deg) or a 3-vector), got None")
    if getattr(crystal, "kind", "") == "biaxial":
        if axis is not None or spec.get("crystal_axes") is None:
            raise ValueError(f"piece {index} of biaxial {crystal.name} needs crystal_axes (a 3 × 3 "
                             f"rotation, rows: its x, y, z principal axes) and no optic_axis")
        return Piece(crystal, None, label=spec.get("label") or f"piece {index + 1}",
                     crystal_axes=spec["crystal_axes"])
    return Piece(crystal, axis if getattr(crystal, "kind", "") == "uniaxial" else None,
                 label=spec.get("label") or f"piece {index + 1}",
                 crystal_axes=spec.get("crystal_axes"))


def _record(spec, piece):
    """Parameters of one piece for reports."""
    axis = piece.optic_axis
    return {key: (value if key != "material" else getattr(piece.material, "name", str(value)))
            for key, value in spec.items()} | {"optic_axis": None if axis is None else axis.tolist()} \
        | ({} if piece.crystal_axes is None else {"crystal_axes": piece.crystal_axes.tolist()})


def free_stack(pieces, *, interfaces=None, width_mm=10.0, height_mm=10.0,
               design_wavelength_um=0.6328, coated=False, kind="free stack"):
    """Build any sequence of plates and wedges with their crystals, optic axes and face angles.

    Parameters
    ----------
    pieces : sequence of StackPiece or dict
        In order from the entrance face; dict keys as the :class:`StackPiece` fields.
    interfaces : sequence, optional
        One entry per internal interface: None (optically contacted), a
        :class:`~prismdesign.optics.ThinLayer`, or ``dict(material=..., thickness_mm=...)``
        (e.g. ``dict(material="air", thickness_mm=0.005)``; optional keys ``treatment`` and
        ``coherence_length_mm`` as for :func:`~prismdesign.prisms.interface_layer`).
    width_mm, height_mm : float
        Clear aperture along x and y (mm).
    design_wavelength_um : float
        Design wavelength (µm) of the coatings and default wavelength of the analyses.
    coated : bool
        Ideal antireflection coatings on the outer faces.
    kind : str
        Name stored on the prism.

    Returns
    -------
    Prism
    """
    keys = ("material", "optic_axis", "exit_face_deg", "thickness_mm", "label", "crystal_axes")
    specs = [_as_spec(item, i, keys, "piece") for i, item in enumerate(_as_list(pieces, "pieces",
                                                                                "piece"))]
    built = [_piece(spec, i) for i, spec in enumerate(specs)]
    layers = None if interfaces is None else [
        _layer(v, i) for i, v in enumerate(_as_list(interfaces, "interfaces", "interface"))]
    return stacked_prism(kind, built, [s.get("exit_face_deg", 0.0) for s in specs],
                         [s.get("thickness_mm", 1.0) for s in specs], width_mm=width_mm,
                         height_mm=height_mm, design_wavelength_um=design_wavelength_um,
                         layers=layers, coated=coated,
                         parameters=dict(pieces=[_record(s, p) for s, p in zip(specs, built)],
                                         interfaces=list(interfaces or [])))


def compound_prism(wedges, *, interfaces=None, width_mm=10.0, height_mm=10.0,
                   design_wavelength_um=0.6328, coated=False):
    """Build a compound prism of wedges given by their (signed) wedge angles.

    Each wedge's exit face is tilted from its entrance face by its wedge angle, so the exit
    face of wedge i sits at the running sum of the wedge angles (degrees) from the entrance
    plane. A Wollaston prism is ``[("calcite", "x", 15), ("calcite", "y", -15)]``.

    Parameters
    ----------
    wedges : sequence of dict or tuple
        Keys (or tuple order): material, optic_axis, wedge_angle_deg, thickness_mm (thinnest
        z-thickness, default 1 mm), label.
    interfaces, width_mm, height_mm, design_wavelength_um, coated
        As for :func:`free_stack`.

    Returns
    -------
    Prism
        ``kind = "compound prism"``.
    """
    keys = ("material", "optic_axis", "wedge_angle_deg", "thickness_mm", "label")
    specs = [_as_spec(item, i, keys, "wedge") for i, item in enumerate(_as_list(wedges, "wedges",
                                                                                "wedge"))]
    total = 0.0
    pieces = []
    for i, spec in enumerate(specs):
        total += check_finite(f"wedge {i}: wedge_angle_deg", spec.get("wedge_angle_deg", 0.0),
                              "a number of degrees")
        pieces.append(dict(material=spec["material"], optic_axis=spec.get("optic_axis"),
                           exit_face_deg=total, thickness_mm=spec.get("thickness_mm", 1.0),
                           label=spec.get("label", "")))
    prism = free_stack(pieces, interfaces=interfaces, width_mm=width_mm, height_mm=height_mm,
                       design_wavelength_um=design_wavelength_um, coated=coated,
                       kind="compound prism")
    return replace(prism, parameters=dict(prism.parameters, wedges=[dict(s) for s in specs]))


def in_series(first, second, spacing_mm=1.0, rotation_deg=0.0, *, kind="prisms in series"):
    """Two prisms one after the other, the second turned about z and separated by a gap.

    Parameters
    ----------
    first, second : Prism
    spacing_mm : float
        Gap along z between the last point of the first prism and the entrance face of the
        second (mm, > 0), filled with the surrounding medium.
    rotation_deg : float
        Rotation of the second prism about z (degrees).
    kind : str

    Returns
    -------
    Prism
        Beam labels concatenate both prisms' labels (the gap adds no letter).
    """
    for name, value in (("first", first), ("second", second)):
        if not isinstance(value, Prism):
            raise ValueError(f"{name} must be a Prism, got {type(value).__name__}")
    spacing = check_positive("spacing_mm", spacing_mm)
    rotation = check_finite("rotation_deg", rotation_deg, "a finite angle in degrees")
    if getattr(first.surround, "name", None) != getattr(second.surround, "name", None):
        raise ValueError(f"both prisms must sit in the same medium, got "
                         f"{first.surround.name!r} and {second.surround.name!r}")
    moved = second.rotated(rotation).shifted(first.exit_z_mm + spacing)
    gap = Piece(first.surround, label="space between prisms")
    params = dict(first=dict(kind=first.kind, **first.parameters),
                  second=dict(kind=second.kind, **second.parameters), spacing_mm=spacing,
                  rotation_deg=rotation)
    return Prism(kind=kind, pieces=first.pieces + (gap,) + moved.pieces,
                 boundaries=first.boundaries + moved.boundaries,
                 width_mm=min(first.width_mm, second.width_mm),
                 height_mm=min(first.height_mm, second.height_mm),
                 design_wavelength_um=first.design_wavelength_um, surround=first.surround,
                 parameters=params)


def double_wollaston(first=None, second=None, spacing_mm=1.0, rotation_deg=45.0):
    """Two Wollaston prisms in series, the second turned about z: four beams.

    Parameters
    ----------
    first, second : Prism, optional
        The two prisms (default :func:`~prismdesign.prisms.wollaston` with its defaults).
    spacing_mm : float
        Air space between them along z (mm).
    rotation_deg : float
        Rotation of the second prism about z (degrees); 45° gives four beams of equal power
        for unpolarised light.

    Returns
    -------
    Prism
        ``kind = "double wollaston"``; beams "eoeo", "eooe", "oeeo", "oeoe" (first prism's
        modes, then the second's).
    """
    return in_series(wollaston() if first is None else first,
                     wollaston() if second is None else second, spacing_mm, rotation_deg,
                     kind="double wollaston")
