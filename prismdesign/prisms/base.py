"""Prism objects: crystal or glass pieces between plane boundaries, ready to trace and draw.

Geometry convention (all builders): the entrance face is the plane z = 0 with normal +z, the
prism extends toward +z, x lies in the principal section (the plane in which the beams split),
y completes a right-handed frame. Optic axes are unit vectors in this global frame. The clear
aperture is `width_mm` along x by `height_mm` along y, centred on the z axis.
"""
from dataclasses import dataclass, field, replace

import numpy as np

from .._display import shown
from ..materials import material as library_material
from ..optics import (FixedIndices, Medium, RectangularAperture, SequentialSystem, Surface,
                      ThinLayer, direction_from_angles, trace)
from ..optics.vectors import as_unit_vectors

__all__ = ["Piece", "Boundary", "Prism", "ideal_antireflection_layer", "check_positive",
           "check_angle", "check_angles", "check_finite", "check_flag", "check_prism",
           "check_temperature", "trace_from_front"]


def _as_float(name, value, what):
    """float(value), refusing text and booleans (a typo should not become a number)."""
    if isinstance(value, (str, bytes)):
        raise ValueError(f"{name} must be {what}, not text: got {shown(value)}")
    if isinstance(value, (bool, np.bool_)):
        raise ValueError(f"{name} must be {what}, got the boolean {shown(value)}")
    try:
        return float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be {what}, got {shown(value)}") from None


def check_positive(name, value):
    """Return float(value) or fail with a one-line message if it is not positive and finite."""
    v = _as_float(name, value, "a positive number")
    if not (np.isfinite(v) and v > 0):
        raise ValueError(f"{name} must be a positive number, got {shown(value)}")
    return v


def check_angle(name, value, low, high):
    """Return float(value) or fail with a one-line message if it is outside (low, high) degrees."""
    v = _as_float(name, value, "an angle in degrees")
    if not (np.isfinite(v) and low < v < high):
        raise ValueError(f"{name} must lie between {low:g} and {high:g} degrees, got {shown(value)}")
    return v


def check_finite(name, value, what="a finite number"):
    """Return float(value) or fail with a one-line message if it is not a finite number."""
    v = _as_float(name, value, what)
    if not np.isfinite(v):
        raise ValueError(f"{name} must be {what}, got {shown(value)}")
    return v


def check_angles(name, value):
    """Angles in degrees as a float array (any shape); text, NaN and infinity fail in one line."""
    try:
        if isinstance(value, (str, bytes)):
            raise TypeError
        angles = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be an angle in degrees or an array of angles, got "
                         f"{shown(value)}") from None
    if not np.all(np.isfinite(angles)):
        raise ValueError(f"{name} must be finite (degrees), got {shown(value)}")
    return angles


def check_flag(name, value):
    """Return bool(value) for a true/false switch, refusing anything else in one line."""
    if not isinstance(value, (bool, np.bool_)):
        raise ValueError(f"{name} must be True or False, got {shown(value)}")
    return bool(value)


@dataclass(frozen=True)
class Piece:
    """One piece of a prism: a crystal (with optic axis) or an isotropic glass / gap.

    Parameters
    ----------
    material : object
        Library material (or :class:`~prismdesign.optics.FixedIndices`).
    optic_axis : array_like, shape (3,), optional
        Unit optic axis in the global frame; required for uniaxial materials.
    label : str
    temperature_c : float or ndarray, optional
        Temperature of this piece (°C), overriding the prism's :attr:`Prism.temperature_c`;
        None follows the prism. An array carries leading sample axes like the prism's.
    crystal_axes : array_like, shape (3, 3), optional
        Required for a biaxial material instead of an optic axis: a proper rotation whose rows
        are the crystal's principal x, y, z axes in the global frame
        (:func:`~prismdesign.optics.crystal_axes_from_vectors`).
    """

    material: object
    optic_axis: object = None
    label: str = ""
    temperature_c: object = None
    crystal_axes: object = None

    def __post_init__(self):
        if getattr(self.material, "kind", None) == "biaxial" or self.crystal_axes is not None:
            # Medium checks the pairing (biaxial ⇔ crystal_axes, no optic axis) and the rotation.
            medium = Medium(self.material, self.optic_axis, crystal_axes=self.crystal_axes)
            object.__setattr__(self, "crystal_axes", medium.crystal_axes)
        if self.optic_axis is not None:
            object.__setattr__(self, "optic_axis", as_unit_vectors(self.optic_axis, "optic_axis"))
        elif getattr(self.material, "kind", None) == "uniaxial":
            raise ValueError(f"piece {self.label or self.material.name!r} of uniaxial "
                             f"{self.material.name} needs an optic_axis")

        if self.temperature_c is not None:
            object.__setattr__(self, "temperature_c",
                               check_temperature("temperature_c", self.temperature_c))

    @property
    def is_crystal(self):
        if self.crystal_axes is not None:
            return True
        return self.optic_axis is not None and getattr(self.material, "kind", "") == "uniaxial"


def check_temperature(name, value):
    """`value` as a float or float array of finite temperatures above absolute zero (°C)."""
    try:
        if isinstance(value, (str, bytes, bool, np.bool_)):
            raise TypeError
        t = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a temperature in °C (a number or an array of "
                         f"numbers), got {shown(value)}") from None
    if t.size == 0 or not np.all(np.isfinite(t)) or np.any(t < -273.15):
        raise ValueError(f"{name} must be finite temperatures above -273.15 °C, got "
                         f"{shown(value)}")
    return float(t) if t.ndim == 0 else t


@dataclass(frozen=True)
class Boundary:
    """A plane boundary between pieces (or between a piece and the surroundings).

    Parameters
    ----------
    point_mm : array_like, shape (3,)
        A point on the plane.
    normal : array_like, shape (3,)
        Unit normal, oriented toward +z.
    layer : ThinLayer, optional
        Thin film at the boundary (cement, air gap), coherent or incoherent as its
        `treatment` says.
    coated : bool
        Outer faces only: an ideal single-layer antireflection coating for the design wavelength.
    label : str
    """

    point_mm: object
    normal: object
    layer: ThinLayer | None = None
    coated: bool = False
    label: str = ""

    def __post_init__(self):
        object.__setattr__(self, "point_mm", np.asarray(self.point_mm, dtype=float))
        n = as_unit_vectors(self.normal, "boundary normal")
        # Per-sample normals (perturbed prisms) are oriented one by one.
        object.__setattr__(self, "normal", np.where(n[..., 2:3] >= 0, n, -n))


def ideal_antireflection_layer(n_outside, n_inside, wavelength_um):
    """Quarter-wave single layer of index √(n₁n₂): zero reflectance at normal incidence.

    Parameters
    ----------
    n_outside, n_inside : float
        Indices on the two sides at the design wavelength.
    wavelength_um : float
        Design wavelength (µm).

    Returns
    -------
    ThinLayer
        Index √(n₁n₂), thickness λ/(4n) (Born & Wolf, *Principles of Optics*, §1.6.4); a
        coherent film.
    """
    n_outside = check_positive("n_outside", n_outside)
    n_inside = check_positive("n_inside", n_inside)
    wavelength_um = check_positive("wavelength_um", wavelength_um)
    n_c = float(np.sqrt(n_outside * n_inside))
    # A coating works by interference: always a coherent film.
    return ThinLayer(FixedIndices(n_c, name="ideal antireflection layer"),
                     thickness_mm=wavelength_um / (4.0 * n_c) * 1e-3, treatment="coherent")


def _clip(polygon, point, normal, keep_positive):
    """Clip a 2-D polygon (rows (z, x)) by the half plane (p − point)·normal ≷ 0."""
    out = []
    sign = 1.0 if keep_positive else -1.0
    dist = sign * ((polygon - point) @ normal)
    count = len(polygon)
    for i in range(count):
        j = (i + 1) % count
        if dist[i] >= 0:
            out.append(polygon[i])
        if (dist[i] >= 0) != (dist[j] >= 0):
            t = dist[i] / (dist[i] - dist[j])
            out.append(polygon[i] + t * (polygon[j] - polygon[i]))
    return np.array(out)


@dataclass(frozen=True)
class Prism:
    """A birefringent prism: pieces between plane boundaries, in a surrounding medium.

    Parameters
    ----------
    kind : str
        Catalogue name ("wollaston", "rochon", ...).
    pieces : sequence of Piece
    boundaries : sequence of Boundary
        ``len(boundaries) == len(pieces) + 1``: entrance face, internal interfaces, exit face.
    width_mm, height_mm : float
        Clear aperture along x and y.
    design_wavelength_um : float
        Design wavelength (µm): the coatings are designed for it and analyses that take an
        optional wavelength default to it.
    surround : object, optional
        Material around the prism; default the library's standard air.
    parameters : dict
        The builder's inputs, for reports.
    rotation_deg : float
        Turn of the prism about z from its built orientation (set by :meth:`rotated`); the
        clear aperture turns with it.
    temperature_c : float or ndarray, optional
        Temperature of the pieces (°C; the surroundings stay at their data temperature); None
        means each material's data temperature. An array carries leading sample axes
        (perturbed prisms), as may the optic axes and boundary points and normals. A piece
        with its own :attr:`Piece.temperature_c` keeps it (see :meth:`at_temperature`).
    """

    kind: str
    pieces: tuple
    boundaries: tuple
    width_mm: float
    height_mm: float
    design_wavelength_um: float
    surround: object = None
    parameters: dict = field(default_factory=dict)
    rotation_deg: float = 0.0
    temperature_c: object = None

    def __post_init__(self):
        object.__setattr__(self, "pieces", tuple(self.pieces))
        object.__setattr__(self, "boundaries", tuple(self.boundaries))
        if len(self.boundaries) != len(self.pieces) + 1:
            raise ValueError(f"a prism needs one more boundary than pieces, got "
                             f"{len(self.boundaries)} boundaries for {len(self.pieces)} pieces")
        if self.surround is None:
            object.__setattr__(self, "surround", library_material("air"))

    # ----------------------------------------------------------------- geometry
    def outline(self):
        """Principal section of each piece as a polygon.

        The section is the prism's own x–z plane (y = 0 before any turn about z), so a turned
        prism keeps its outline; x below is measured along the prism's own x axis.

        Returns
        -------
        list of (Piece, ndarray of shape (k, 2))
            Polygon vertices as (z, x) in mm.
        """
        half = 0.5 * self.width_mm
        big = 1e3 * (1.0 + self.width_mm)
        turn = np.deg2rad(self.rotation_deg)
        own_x = np.array([np.cos(turn), np.sin(turn), 0.0])
        result = []
        for i, piece in enumerate(self.pieces):
            poly = np.array([[-big, -half], [big, -half], [big, half], [-big, half]])
            for b, keep in ((self.boundaries[i], True), (self.boundaries[i + 1], False)):
                point = np.array([b.point_mm[2], b.point_mm @ own_x])
                normal = np.array([b.normal[2], b.normal @ own_x])
                poly = _clip(poly, point, normal, keep)
            result.append((piece, poly))
        return result

    @property
    def length_mm(self):
        """Extent along z of the whole prism (section y = 0)."""
        z = np.concatenate([poly[:, 0] for _, poly in self.outline() if len(poly)])
        return float(z.max() - z.min())

    @property
    def exit_z_mm(self):
        """Largest z of the prism (section y = 0)."""
        return float(max(poly[:, 0].max() for _, poly in self.outline() if len(poly)))

    def rotated(self, angle_deg):
        """The same prism turned by `angle_deg` (degrees) about the z axis (e.g. for a double
        Wollaston)."""
        angle_deg = check_finite("angle_deg", angle_deg, "an angle in degrees")
        a = np.deg2rad(angle_deg)
        rot = np.array([[np.cos(a), -np.sin(a), 0.0], [np.sin(a), np.cos(a), 0.0], [0.0, 0.0, 1.0]])
        # Row vectors times rotᵀ: also turns axes that carry leading (Monte Carlo) sample axes.
        pieces = [replace(p, optic_axis=None if p.optic_axis is None else p.optic_axis @ rot.T,
                          crystal_axes=None if p.crystal_axes is None else p.crystal_axes @ rot.T)
                  for p in self.pieces]
        boundaries = [replace(b, point_mm=b.point_mm @ rot.T, normal=b.normal @ rot.T)
                      for b in self.boundaries]
        return replace(self, pieces=pieces, boundaries=boundaries,
                       rotation_deg=self.rotation_deg + float(angle_deg))

    def in_medium(self, surround):
        """The same prism in another surrounding medium (e.g. "vacuum" for a mid-infrared
        design beyond the standard-air data, or an index-matching liquid).

        Parameters
        ----------
        surround : str or material
            Library name or material object; must be isotropic.
        """
        if isinstance(surround, str):
            surround = library_material(surround)
        if getattr(surround, "kind", None) != "isotropic" or not hasattr(surround, "indices"):
            raise ValueError(f"surround must be an isotropic material (name or object), got "
                             f"{shown(getattr(surround, 'name', surround))}")
        return replace(self, surround=surround)

    def shifted(self, dz_mm):
        """The same prism moved by `dz_mm` (mm) along z."""
        dz_mm = check_finite("dz_mm", dz_mm, "a finite distance in mm")
        boundaries = [replace(b, point_mm=b.point_mm + np.array([0.0, 0.0, dz_mm]))
                      for b in self.boundaries]
        return replace(self, boundaries=boundaries)

    def at_temperature(self, temperature_c, piece=None):
        """The same prism with every piece, or the given pieces, at `temperature_c`.

        Parameters
        ----------
        temperature_c : float or ndarray
            Temperature (°C); an array carries leading sample axes that must broadcast against
            the ray inputs of a trace (e.g. shape (t, 1) against wavelengths of shape (n,)).
        piece : int or sequence of int, optional
            Index of the piece (or pieces) to set, counted from the entrance; the others keep
            their temperature. None sets the whole prism: every piece, clearing any piece's own.

        Returns
        -------
        Prism
            Indices follow each material's linear thermo-optic model (materials without one
            warn and keep their data-temperature indices); the geometry does not change.
        """
        t = check_temperature("temperature_c", temperature_c)
        if piece is None:
            pieces = [replace(p, temperature_c=None) for p in self.pieces]
            return replace(self, pieces=pieces, temperature_c=t)
        chosen = self.piece_indices(piece)
        pieces = [replace(p, temperature_c=t) if i in chosen else p
                  for i, p in enumerate(self.pieces)]
        return replace(self, pieces=pieces)

    def piece_indices(self, piece):
        """`piece` (an index or a sequence of indices) as a sorted tuple of valid piece indices,
        or a one-line ValueError naming the allowed range."""
        values = [piece] if np.ndim(piece) == 0 else list(np.asarray(piece, dtype=object))
        count = len(self.pieces)
        out = set()
        for v in values:
            if isinstance(v, (bool, np.bool_)) or not isinstance(v, (int, np.integer)) \
                    or not 0 <= int(v) < count:
                raise ValueError(f"piece must be a piece index from 0 to {count - 1} (or a list "
                                 f"of them), got {shown(piece)}")
            out.add(int(v))
        if not out:
            raise ValueError(f"piece must name at least one piece (0 to {count - 1}), got "
                             f"{shown(piece)}")
        return tuple(sorted(out))

    def piece_temperatures_c(self):
        """Temperature of each piece as traced (°C, or None for the data temperature)."""
        return [p.temperature_c if p.temperature_c is not None else self.temperature_c
                for p in self.pieces]

    # ----------------------------------------------------------------- tracing
    def media(self):
        """Media in order: surroundings, each piece, surroundings."""
        outside = Medium(self.surround)
        return [outside] + [Medium(p.material, p.optic_axis if p.is_crystal else None, t,
                                   crystal_axes=p.crystal_axes)
                            for p, t in zip(self.pieces, self.piece_temperatures_c())] \
            + [outside]

    def system(self):
        """The prism as a :class:`~prismdesign.optics.SequentialSystem`.

        The branches of an optically active piece (a crystal given a hand) are traced
        separately; the analyses add those that leave together into one output beam
        (:mod:`prismdesign.analysis.beam_groups`).
        """
        media = self.media()
        surfaces = []
        lam = self.design_wavelength_um
        for i, b in enumerate(self.boundaries):
            layer = b.layer
            if b.coated:
                if i not in (0, len(self.boundaries) - 1):
                    raise ValueError(f"boundary {i} is internal: only outer faces take an "
                                     f"antireflection coating")
                # Coatings are made once, for the data temperature of the nominal prism.
                inside = media[1] if i == 0 else media[-2]
                n_in = float(inside.material.indices(lam)[0])
                n_out = float(media[0].indices(lam)[0])
                layer = ideal_antireflection_layer(n_out, n_in, lam)
            # The aperture's width runs along the prism's own x axis (turned with the prism),
            # projected into the face; a face tilted by t is 1/cos t wider than the aperture.
            a = np.deg2rad(self.rotation_deg)
            width_dir = np.array([np.cos(a), np.sin(a), 0.0])
            # A perturbed boundary (per-sample normals) keeps the aperture of its mean normal.
            normal = b.normal if b.normal.ndim == 1 else _mean_direction(b.normal)
            in_face = width_dir - np.dot(width_dir, normal) * normal
            stretch = 1.0 / max(np.linalg.norm(in_face), 1e-6)
            aperture = RectangularAperture(0.5 * self.width_mm * stretch * (1.0 + 1e-9),
                                           0.5 * self.height_mm, width_direction=tuple(in_face))
            surfaces.append(Surface(b.point_mm, b.normal, aperture=aperture, layer=layer,
                                    label=b.label or f"boundary {i}"))
        return SequentialSystem(media, surfaces, label=self.kind)

    def trace(self, wavelength_um, in_plane_deg=0.0, out_of_plane_deg=0.0, *,
              offset_mm=(0.0, 0.0), polarisation="unpolarised", keep_reflections=False,
              power_threshold=1e-12):
        """Trace collimated input through the prism.

        Parameters
        ----------
        wavelength_um : array_like
            Vacuum wavelengths (µm).
        in_plane_deg, out_of_plane_deg : array_like
            Input direction (see :func:`~prismdesign.optics.direction_from_angles`).
        offset_mm : array_like, shape (..., 2)
            Entry point (x, y) on the entrance face.
        polarisation : array_like or "unpolarised"
            Jones vector in the input's transverse basis (x̂, ŷ at normal incidence).
        keep_reflections, power_threshold
            Passed to :func:`~prismdesign.optics.trace`.

        Returns
        -------
        TraceResult
            Arrays broadcast over wavelength, angles and offsets (in that order of axes as
            given by numpy broadcasting).
        """
        return trace_from_front(self.system(), wavelength_um, in_plane_deg, out_of_plane_deg,
                                offset_mm, polarisation, keep_reflections=keep_reflections,
                                power_threshold=power_threshold)


def _mean_direction(vectors):
    """Unit mean of unit vectors with leading sample axes, shape (3,)."""
    mean = np.asarray(vectors, dtype=float).reshape(-1, 3).mean(axis=0)
    return mean / np.linalg.norm(mean)


def check_prism(value, name="prism"):
    """Return `value` if it is a :class:`Prism`, else fail with a one-line message."""
    if not isinstance(value, Prism):
        raise ValueError(f"{name} must be a Prism made by a builder in prismdesign.prisms "
                         f"(wollaston, glan_air_spaced, ...), got {type(value).__name__} "
                         f"{value!r:.60}")
    return value


def trace_from_front(system, wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm,
                     polarisation, **options):
    """Trace collimated input that meets the entrance plane z = 0 at `offset_mm` (x, y).

    Rays start 1 mm before the entrance plane along the direction given by the two angles
    (degrees); `options` go to :func:`~prismdesign.optics.trace`.
    """
    direction = direction_from_angles(in_plane_deg, out_of_plane_deg)
    try:
        offset = np.asarray(offset_mm, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"offset_mm must be (x, y) pairs of numbers in mm, got {offset_mm!r}") \
            from None
    if not np.all(np.isfinite(offset)):
        raise ValueError(f"offset_mm must be finite (mm), got {offset_mm!r}")
    if offset.ndim == 0 or offset.shape[-1] != 2:
        raise ValueError(f"offset_mm must be (x, y) pairs on the last axis, got shape {offset.shape}")
    start = np.concatenate([offset, np.zeros(offset.shape[:-1] + (1,))], axis=-1)
    start = start - direction * (1.0 / direction[..., 2:3])
    return trace(system, start, direction, wavelength_um, polarisation, **options)
