"""Sequential optical systems: media, plane surfaces with apertures, and thin layers."""
from dataclasses import dataclass, field

import numpy as np

from .biaxial import BIAXIAL_MODE_LETTERS, BiaxialIndices, check_crystal_axes
from .thin_layer import ThinLayer
from .vectors import as_unit_vectors, cross, dot

__all__ = ["FixedIndices", "FixedPrincipalIndices", "Medium", "CircularAperture",
           "RectangularAperture", "Surface", "SequentialSystem", "optic_axis_from_angles"]


@dataclass(frozen=True)
class FixedIndices:
    """A medium with wavelength-independent indices (tests, quick studies, index-matching fluids).

    Parameters
    ----------
    n_o : float
        Ordinary (or the only) index.
    n_e : float, optional
        Extraordinary index; omitted for an isotropic medium.
    name : str
    """

    n_o: float
    n_e: float | None = None
    name: str = "fixed index"

    def __post_init__(self):
        for key in ("n_o", "n_e"):
            value = getattr(self, key)
            if value is not None and not (np.isfinite(value) and value > 0):
                raise ValueError(f"FixedIndices {key} must be a positive finite index, got {value!r}")

    @property
    def kind(self):
        return "isotropic" if self.n_e is None or self.n_e == self.n_o else "uniaxial"

    def indices(self, wavelength_um, temperature_c=None):
        shape = np.shape(wavelength_um)
        n_o = np.full(shape, float(self.n_o))
        n_e = np.full(shape, float(self.n_o if self.n_e is None else self.n_e))
        return n_o, n_e


@dataclass(frozen=True)
class FixedPrincipalIndices:
    """A biaxial medium with wavelength-independent principal indices (tests, quick studies).

    Parameters
    ----------
    n_x, n_y, n_z : float
        Principal indices (any order; two may be equal, giving the uniaxial limit).
    name : str
    """

    n_x: float
    n_y: float
    n_z: float
    name: str = "fixed principal indices"

    kind = "biaxial"

    def __post_init__(self):
        for key in ("n_x", "n_y", "n_z"):
            value = getattr(self, key)
            if isinstance(value, bool) or not (np.isfinite(value) and value > 0):
                raise ValueError(f"FixedPrincipalIndices {key} must be a positive finite index, "
                                 f"got {value!r}")

    def indices(self, wavelength_um, temperature_c=None):
        shape = np.shape(wavelength_um)
        return tuple(np.full(shape, float(v)) for v in (self.n_x, self.n_y, self.n_z))


def optic_axis_from_angles(polar_deg, azimuth_deg):
    """Unit optic axis from its polar angle from z and azimuth from x (degrees).

    Parameters
    ----------
    polar_deg, azimuth_deg : array_like
        Angles in degrees; broadcast.

    Returns
    -------
    ndarray, shape (..., 3)
    """
    theta = np.deg2rad(np.asarray(polar_deg, dtype=float))
    phi = np.deg2rad(np.asarray(azimuth_deg, dtype=float))
    return np.stack(np.broadcast_arrays(np.sin(theta) * np.cos(phi), np.sin(theta) * np.sin(phi),
                                        np.cos(theta)), axis=-1)


@dataclass(frozen=True)
class Medium:
    """A region of a sequential system: a material and, for a crystal, its orientation.

    Parameters
    ----------
    material : object
        Anything with ``indices(wavelength_um, temperature_c=None) -> (n_o, n_e)`` and a
        ``name``: a library material, :class:`FixedIndices`, ...
    optic_axis : array_like, shape (3,) or (..., 3), optional
        Unit optic axis in the global frame; required for uniaxial materials. May carry
        leading axes (e.g. Monte Carlo samples) that broadcast against the rays.
    temperature_c : float or array_like, optional
        Temperature of this medium in °C; None means the data temperature. An array carries
        leading sample axes (e.g. Monte Carlo samples) that broadcast against the rays.
    crystal_axes : array_like, shape (3, 3), optional
        For a biaxial material (``kind == "biaxial"``, instead of an optic axis): a proper
        rotation whose rows are the crystal's principal x, y, z axes in the global frame
        (:func:`~prismdesign.optics.biaxial.crystal_axes_from_vectors`). Its ``indices`` are
        then a :class:`~prismdesign.optics.biaxial.BiaxialIndices` ``(n_x, n_y, n_z)``.
    """

    material: object
    optic_axis: object = None
    temperature_c: float | None = None
    crystal_axes: object = None

    def __post_init__(self):
        kind = getattr(self.material, "kind", None)
        name = getattr(self.material, "name", "material")
        if kind == "biaxial":
            if self.crystal_axes is None or self.optic_axis is not None:
                raise ValueError(f"medium of biaxial material {name!r} needs crystal_axes (a 3 × 3 "
                                 f"rotation, rows: its x, y, z principal axes) and no optic_axis")
            axes = check_crystal_axes(self.crystal_axes)
            if axes.shape != (3, 3):
                raise ValueError(f"crystal_axes of {name!r} must be one 3 × 3 rotation, got shape "
                                 f"{axes.shape} (per-sample orientations are not supported yet)")
            object.__setattr__(self, "crystal_axes", axes)
        elif self.crystal_axes is not None:
            raise ValueError(f"crystal_axes belong to biaxial materials; {name!r} is "
                             f"{kind or 'not a crystal'} (give a uniaxial crystal an optic_axis)")
        if self.optic_axis is None:
            if kind == "uniaxial":
                name = getattr(self.material, "name", "material")
                raise ValueError(f"medium of uniaxial material {name!r} needs an optic_axis (unit 3-vector)")
        else:
            object.__setattr__(self, "optic_axis", as_unit_vectors(self.optic_axis, "optic_axis"))
        if self.temperature_c is not None:
            t = np.asarray(self.temperature_c, dtype=float)
            if not np.all(np.isfinite(t)) or np.any(t < -273.15):
                raise ValueError(f"medium temperature_c must be finite and above -273.15 °C, got "
                                 f"{self.temperature_c!r}")
            object.__setattr__(self, "temperature_c", float(t) if t.ndim == 0 else t)

    @property
    def name(self):
        return getattr(self.material, "name", "medium")

    @property
    def is_crystal(self):
        """True for a birefringent medium (uniaxial material with an optic axis, or biaxial
        material with crystal axes)."""
        if self.crystal_axes is not None:
            return True
        return self.optic_axis is not None and getattr(self.material, "kind", "uniaxial") != "isotropic"

    @property
    def mode_letters(self):
        """Branch letters of this medium's two waves in mode order: "oe", or "fs" (fast, slow)
        in a biaxial crystal (:mod:`.biaxial`)."""
        return BIAXIAL_MODE_LETTERS if self.crystal_axes is not None else "oe"

    def indices(self, wavelength_um, temperature_c=None):
        """(n_o, n_e) at the given wavelengths (µm), equal for isotropic media; for a biaxial
        medium a :class:`~prismdesign.optics.biaxial.BiaxialIndices` (n_x, n_y, n_z, its axes).

        `temperature_c` (°C, broadcasting against the wavelengths) overrides the medium's own;
        the tracer passes per-sample temperatures flattened like the rays.
        """
        t = self.temperature_c if temperature_c is None else temperature_c
        if self.crystal_axes is not None:
            # The principal indices carry the orientation through to the interface solver.
            return BiaxialIndices(*self.material.indices(wavelength_um, t), self.crystal_axes)
        return self.material.indices(wavelength_um, t)


@dataclass(frozen=True)
class CircularAperture:
    """Circular clear aperture of radius `radius_mm` about the surface point."""

    radius_mm: float

    def contains(self, points_mm, surface):
        offset = points_mm - surface.point_mm
        radial = offset - dot(offset, surface.normal)[..., None] * surface.normal
        return dot(radial, radial) <= self.radius_mm ** 2


@dataclass(frozen=True)
class RectangularAperture:
    """Rectangular clear aperture centred on the surface point.

    Parameters
    ----------
    half_width_mm : float
        Half extent along `width_direction` (projected into the surface).
    half_height_mm : float
        Half extent along normal × width_direction.
    width_direction : array_like, shape (3,)
        A direction in (or projected into) the surface plane.
    """

    half_width_mm: float
    half_height_mm: float
    width_direction: tuple = (1.0, 0.0, 0.0)

    def contains(self, points_mm, surface):
        n = surface.normal
        w = np.asarray(self.width_direction, dtype=float)
        # Per-ray normals (perturbed surfaces) project the width direction ray by ray.
        w = w - dot(w, n)[..., None] * n
        w = w / np.sqrt(dot(w, w))[..., None]
        h = cross(n, w)
        offset = points_mm - surface.point_mm
        return ((np.abs(dot(offset, w)) <= self.half_width_mm * (1 + 1e-12))
                & (np.abs(dot(offset, h)) <= self.half_height_mm * (1 + 1e-12)))


@dataclass(frozen=True)
class Surface:
    """A plane surface of a sequential system.

    Parameters
    ----------
    point_mm : array_like, shape (3,) or (..., 3)
        A point on the plane (mm).
    normal : array_like, shape (3,) or (..., 3)
        Plane normal (normalised here; its sign does not matter). Point and normal may carry
        leading sample axes (perturbed prisms, Monte Carlo) that broadcast against the rays,
        exactly as optic axes do; the aperture stays one for all samples.
    aperture : CircularAperture or RectangularAperture, optional
        Rays meeting the plane outside it are flagged, not dropped.
    layer : ThinLayer, optional
        Thin isotropic layer at this surface (cement film, air gap, coating), coherent or
        incoherent as its `treatment` says.
    label : str
    reflect_from : Medium, optional
        Makes this a reflecting surface: the tracer follows the reflected waves (back into the
        medium before the surface, which must then also be the medium after it) and uses
        `reflect_from` as the medium on the far side. Used to follow rejected beams.
    """

    point_mm: object
    normal: object
    aperture: object = None
    layer: ThinLayer | None = None
    label: str = ""
    reflect_from: object = None

    def __post_init__(self):
        point = np.asarray(self.point_mm, dtype=float)
        if point.ndim == 0 or point.shape[-1] != 3 or not np.all(np.isfinite(point)):
            raise ValueError(f"surface point_mm must be three finite numbers (last axis), got "
                             f"{self.point_mm!r}")
        object.__setattr__(self, "point_mm", point)
        object.__setattr__(self, "normal", as_unit_vectors(self.normal, "surface normal"))


@dataclass(frozen=True)
class SequentialSystem:
    """Ordered surfaces with the medium before the first and after each surface.

    Parameters
    ----------
    media : sequence of Medium
        ``len(media) == len(surfaces) + 1``; media[i] precedes surfaces[i].
    surfaces : sequence of Surface
    """

    media: tuple
    surfaces: tuple
    label: str = ""
    notes: dict = field(default_factory=dict)

    def __post_init__(self):
        object.__setattr__(self, "media", tuple(self.media))
        object.__setattr__(self, "surfaces", tuple(self.surfaces))
        if len(self.media) != len(self.surfaces) + 1:
            raise ValueError(f"a sequential system needs one more medium than surfaces, got "
                             f"{len(self.media)} media for {len(self.surfaces)} surfaces")
        if not self.surfaces:
            raise ValueError("a sequential system needs at least one surface")
        if self.media[0].is_crystal:
            raise ValueError("the first medium must be isotropic: rays start outside the crystals")
        for i, surface in enumerate(self.surfaces):
            if surface.reflect_from is not None and self.media[i + 1] != self.media[i]:
                raise ValueError(f"reflecting surface {i} ({surface.label or 'unnamed'}) must have "
                                 f"the same medium before and after it")
