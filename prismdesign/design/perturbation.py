"""Fabrication and alignment errors of a prism, applied to many copies at once.

A perturbed prism is the same :class:`~prismdesign.prisms.Prism` with arrays in place of
scalars: optic axes, boundary points and normals and the temperature carry a leading sample
axis that the tracer broadcasts against the rays, so N perturbed prisms trace as one batch.
Errors of the input (incidence angles, wavelength) come back as per-sample offsets to add to
the trace inputs.

Parameters that can carry errors, by name (``i`` a piece index, ``j`` a boundary index,
0 = entrance face):

==============================  ====  ==============================================================
``piece<i>_axis_polar_deg``     deg   polar angle of the optic axis from z (the cut angle)
``piece<i>_axis_azimuth_deg``   deg   azimuth of the optic axis about z, from x
``face<j>_angle_deg``           deg   tilt of the face within the principal section (about the
                                      prism's y axis through the face centre): a wedge-angle error
``face<j>_pyramid_deg``         deg   tilt of the face out of the principal section, toward +y
                                      (pyramidal error)
``piece<i>_length_mm``          mm    thickness of the piece along z (later faces move with it)
``incidence_in_plane_deg``      deg   misalignment of the input beam in the principal section
``incidence_out_of_plane_deg``  deg   misalignment across it
``wavelength_nm``               nm    error of the source wavelength
``temperature_change_c``        °C    change of the prism's temperature from its reference (only
                                      where every piece's material has thermo-optic data)
``face<j>_layer_thickness_mm``  mm    error of the thickness of the cement film or gap at a
                                      boundary that carries a thin layer (clipped at zero: a gap
                                      closes to optical contact, no further)
``face<j>_layer_index``         Δn    error of that layer's refractive index (added at every
                                      wavelength: a cement batch, a gas fill)
==============================  ====  ==============================================================

Layer errors ride on :class:`~prismdesign.optics.ThinLayer` arrays (thickness and index offset
with the sample axes), so perturbed layers trace in the same batch as everything else.
"""
import re
from dataclasses import dataclass, replace

import numpy as np

from .._display import shown
from ..analysis.temperature import has_thermo_optic_data
from ..optics.vectors import normalize

__all__ = ["Parameter", "InputErrors", "prism_parameters", "parameter", "apply_errors",
           "has_thermo_optic_data", "reference_temperature_c"]

_PATTERNS = (
    (re.compile(r"piece(\d+)_axis_polar_deg$"), "deg", "piece {0}: optic-axis polar angle"),
    (re.compile(r"piece(\d+)_axis_azimuth_deg$"), "deg", "piece {0}: optic-axis azimuth"),
    (re.compile(r"face(\d+)_angle_deg$"), "deg", "face {0}: angle in the principal section"),
    (re.compile(r"face(\d+)_pyramid_deg$"), "deg", "face {0}: pyramidal tilt"),
    (re.compile(r"piece(\d+)_length_mm$"), "mm", "piece {0}: length"),
    (re.compile(r"incidence_in_plane_deg$"), "deg", "incidence in the principal section"),
    (re.compile(r"incidence_out_of_plane_deg$"), "deg", "incidence across the principal section"),
    (re.compile(r"wavelength_nm$"), "nm", "source wavelength"),
    (re.compile(r"temperature_change_c$"), "°C", "temperature change"),
    (re.compile(r"face(\d+)_layer_thickness_mm$"), "mm", "face {0}: layer thickness"),
    (re.compile(r"face(\d+)_layer_index$"), "Δn", "face {0}: layer index"),
)


@dataclass(frozen=True)
class Parameter:
    """One quantity of a prism or its use that can carry an error.

    Attributes
    ----------
    name : str
        Key such as ``"face1_angle_deg"`` (see the module table).
    unit : str
        Unit of the error ("deg", "mm", "nm", "°C", "Δn" for a refractive-index error).
    description : str
        Plain words for tables.
    """

    name: str
    unit: str
    description: str


@dataclass(frozen=True)
class InputErrors:
    """Per-sample errors of the trace inputs, shaped like the samples (plus ray axes).

    Attributes
    ----------
    in_plane_deg, out_of_plane_deg : ndarray or float
        Added to the input direction angles (degrees).
    wavelength_um : ndarray or float
        Added to the wavelengths (µm).
    """

    in_plane_deg: object = 0.0
    out_of_plane_deg: object = 0.0
    wavelength_um: object = 0.0


def reference_temperature_c(prism):
    """Temperature the prism's errors are counted from (°C): its own, else its first piece's
    data temperature."""
    if prism.temperature_c is not None:
        return float(np.mean(prism.temperature_c))
    return float(getattr(prism.pieces[0].material, "temperature_c", 20.0))


def parameter(prism, name):
    """The :class:`Parameter` called `name` for this prism, or a one-line error."""
    for p in prism_parameters(prism, include_temperature=True):
        if p.name == name:
            return p
    known = ", ".join(p.name for p in prism_parameters(prism, include_temperature=True))
    raise ValueError(f"unknown or inapplicable error parameter {shown(name)} for this "
                     f"{prism.kind}; allowed: {known}")


def prism_parameters(prism, include_temperature=None):
    """Every parameter that can carry an error for this prism.

    Parameters
    ----------
    prism : Prism
    include_temperature : bool, optional
        Offer ``temperature_change_c``; default: when every piece has thermo-optic data.

    Returns
    -------
    tuple of Parameter
    """
    out = []
    for i, piece in enumerate(prism.pieces):
        if piece.is_crystal:
            out.append(Parameter(f"piece{i}_axis_polar_deg", "deg",
                                 f"piece {i}: optic-axis polar angle"))
            out.append(Parameter(f"piece{i}_axis_azimuth_deg", "deg",
                                 f"piece {i}: optic-axis azimuth"))
    for j in range(len(prism.boundaries)):
        out.append(Parameter(f"face{j}_angle_deg", "deg", f"face {j}: angle in the principal "
                                                           f"section"))
        out.append(Parameter(f"face{j}_pyramid_deg", "deg", f"face {j}: pyramidal tilt"))
    for i in range(len(prism.pieces)):
        out.append(Parameter(f"piece{i}_length_mm", "mm", f"piece {i}: length"))
    for j, b in enumerate(prism.boundaries):
        if b.layer is not None and not b.coated:
            out.append(Parameter(f"face{j}_layer_thickness_mm", "mm",
                                 f"face {j}: layer thickness"))
            out.append(Parameter(f"face{j}_layer_index", "Δn", f"face {j}: layer index"))
    out += [Parameter("incidence_in_plane_deg", "deg", "incidence in the principal section"),
            Parameter("incidence_out_of_plane_deg", "deg", "incidence across the principal "
                                                           "section"),
            Parameter("wavelength_nm", "nm", "source wavelength")]
    thermo = all(has_thermo_optic_data(p.material) for p in prism.pieces)
    if include_temperature is None:
        include_temperature = thermo
    if include_temperature and thermo:
        out.append(Parameter("temperature_change_c", "°C", "temperature change"))
    return tuple(out)


def _own_axes(prism):
    """The prism's own x and y axes (turned with it about z)."""
    a = np.deg2rad(prism.rotation_deg)
    return np.array([np.cos(a), np.sin(a), 0.0]), np.array([-np.sin(a), np.cos(a), 0.0])


def _check_errors(prism, errors):
    """Errors as float arrays of one common sample shape; names checked."""
    if not isinstance(errors, dict):
        raise ValueError(f"errors must be a mapping of parameter name to values, got "
                         f"{type(errors).__name__}")
    names = {p.name for p in prism_parameters(prism, include_temperature=True)}
    arrays = {}
    for name, value in errors.items():
        if name == "temperature_change_c" and not all(has_thermo_optic_data(p.material)
                                                      for p in prism.pieces):
            missing = [getattr(p.material, "name", "?") for p in prism.pieces
                       if not has_thermo_optic_data(p.material)]
            raise ValueError(f"temperature_change_c needs thermo-optic data for every piece; "
                             f"none for {', '.join(sorted(set(missing)))}")
        if name not in names:
            parameter(prism, name)  # raises the one-line error with the allowed names
        try:
            if isinstance(value, (str, bytes)):
                raise TypeError
            arr = np.asarray(value, dtype=float)
        except (TypeError, ValueError):
            raise ValueError(f"error of {name} must be numbers, got {shown(value)}") from None
        if not np.all(np.isfinite(arr)):
            raise ValueError(f"error of {name} must be finite, got {shown(value)}")
        arrays[name] = arr
    try:
        shape = np.broadcast_shapes(*(a.shape for a in arrays.values())) if arrays else ()
    except ValueError:
        raise ValueError(f"errors must share one sample shape, got shapes "
                         f"{ {k: v.shape for k, v in arrays.items()} }") from None
    return {k: np.broadcast_to(v, shape) for k, v in arrays.items()}, shape


def apply_errors(prism, errors, *, ray_ndim=0):
    """The prism with errors applied, and the errors of its inputs.

    Parameters
    ----------
    prism : Prism
        The nominal prism (scalar geometry).
    errors : dict[str, array_like]
        Error of each named parameter (see the module table) in its unit; arrays share one
        sample shape S (e.g. (n_samples,)); missing parameters are nominal.
    ray_ndim : int
        Number of ray axes the samples must broadcast against (e.g. 2 for a grid of
        wavelengths × input directions): sample arrays get that many trailing length-1 axes.

    Returns
    -------
    prism : Prism
        Optic axes, boundary points and normals (and the temperature) of shape
        S + (1,)*ray_ndim (+ (3,)) where an error applies; plain (3,) vectors when S = ().
    inputs : InputErrors
        Offsets to add to the input angles (degrees) and wavelengths (µm), of shape
        S + (1,)*ray_ndim.
    """
    arrays, shape = _check_errors(prism, errors)
    pad = (1,) * int(ray_ndim) if shape else ()

    def get(name):
        value = arrays.get(name)
        return None if value is None else value.reshape(shape + pad)

    def rad(name):
        value = get(name)
        return None if value is None else np.deg2rad(value)[..., None]

    own_x, own_y = _own_axes(prism)
    pieces = list(prism.pieces)
    for i, piece in enumerate(prism.pieces):
        d_polar, d_az = rad(f"piece{i}_axis_polar_deg"), rad(f"piece{i}_axis_azimuth_deg")
        if not piece.is_crystal or (d_polar is None and d_az is None):
            continue
        c = piece.optic_axis
        polar = np.arccos(np.clip(c[2], -1.0, 1.0))
        azimuth = np.arctan2(c[1], c[0])
        polar = polar + (0.0 if d_polar is None else d_polar[..., 0])
        azimuth = azimuth + (0.0 if d_az is None else d_az[..., 0])
        axis = np.stack(np.broadcast_arrays(np.sin(polar) * np.cos(azimuth),
                                            np.sin(polar) * np.sin(azimuth), np.cos(polar)),
                        axis=-1)
        pieces[i] = replace(piece, optic_axis=axis)
    boundaries = list(prism.boundaries)
    shift = 0.0
    for j, b in enumerate(prism.boundaries):
        if j > 0:
            d_len = get(f"piece{j - 1}_length_mm")
            if d_len is not None:
                shift = shift + d_len[..., None]
        tilt, pyramid = rad(f"face{j}_angle_deg"), rad(f"face{j}_pyramid_deg")
        if tilt is None and pyramid is None and np.ndim(shift) == 0:
            continue
        n = b.normal
        if tilt is not None:
            # Turn about the prism's own y axis: n' = n cos t + (ŷ × n) sin t (Rodrigues, ŷ ⟂ n).
            y_cross_n = np.cross(own_y, n)
            along = np.dot(own_y, n)
            n = n * np.cos(tilt) + y_cross_n * np.sin(tilt) + own_y * along * (1 - np.cos(tilt))
        if pyramid is not None:
            across = normalize(own_y - np.asarray(n @ own_y)[..., None] * n)
            n = normalize(n * np.cos(pyramid) + across * np.sin(pyramid))
        point = b.point_mm + np.array([0.0, 0.0, 1.0]) * shift
        boundaries[j] = replace(b, point_mm=point, normal=n)
    for j, b in enumerate(boundaries):
        d_thick, d_index = get(f"face{j}_layer_thickness_mm"), get(f"face{j}_layer_index")
        if b.layer is None or (d_thick is None and d_index is None):
            continue
        layer = b.layer
        if d_thick is not None:
            layer = replace(layer, thickness_mm=np.maximum(layer.thickness_mm + d_thick, 0.0))
        if d_index is not None:
            layer = replace(layer, index_offset=layer.index_offset + d_index)
        boundaries[j] = replace(b, layer=layer)
    temperature = prism.temperature_c
    if get("temperature_change_c") is not None:
        change = get("temperature_change_c")
        temperature = reference_temperature_c(prism) + change
        # A piece held at its own temperature (Piece.temperature_c) moves by the same change.
        pieces = [p if p.temperature_c is None else replace(p, temperature_c=p.temperature_c
                                                               + change) for p in pieces]
    perturbed = replace(prism, pieces=pieces, boundaries=boundaries, temperature_c=temperature)

    def offset(name, scale=1.0):
        value = get(name)
        return 0.0 if value is None else value * scale
    inputs = InputErrors(offset("incidence_in_plane_deg"), offset("incidence_out_of_plane_deg"),
                         offset("wavelength_nm", 1e-3))
    return perturbed, inputs
