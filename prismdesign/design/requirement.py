"""What a lab needs from a prism, as one validated object.

A :class:`Requirement` names the wavelengths (a sampled band or a list of laser lines), one
target (a split angle, a separation on a plane, a lateral offset or shear, or a polarising
field of view) and any number of limits (allowed variation of the target over the band, beam
size and clearance, clear aperture, length, field of view with a leakage floor, transmission,
crystals and prism types allowed). Every field is checked on construction; a bad value is a
one-line :class:`ValueError` naming the field, the value and what is allowed.

The same object is read from the ``[requirement]`` table of a design file
(:func:`requirement_from_mapping`), so the keys of that table are the field names below.
"""
import tomllib
from dataclasses import dataclass, fields
from pathlib import Path

import numpy as np

from .._display import shown

__all__ = ["Requirement", "requirement_from_mapping", "load_requirement", "BAND_NORMS", "FIELD_GOALS",
           "TARGET_KINDS",
           "UNDEVIATED_POLARISATIONS"]

#: How a figure that varies over the band is reduced to one number when solving: the mean
#: over the sampled wavelengths hits the target on average; "minimax" makes the largest
#: deviation from the target as small as possible; "rms" its root mean square.
BAND_NORMS = ("mean", "minimax", "rms")

#: The kinds of target a requirement can carry (exactly one per requirement).
TARGET_KINDS = ("split", "separation", "offset", "shear", "polariser")

#: What a polariser's cut angle is chosen for: the widest in-plane field that is symmetric
#: about the input direction, or the widest total field (its centre may lie off axis).
FIELD_GOALS = ("symmetric", "widest")

#: Polarisation of the beam that leaves undeviated (Rochon-type prisms): in the principal
#: section (x) or across it (y); None when it does not matter.
UNDEVIATED_POLARISATIONS = ("in_plane", "across")


def _number(name, value, *, low=None, high=None, low_open=True, optional=True):
    """float(value) checked against a range, or None when optional and absent."""
    if value is None:
        if optional:
            return None
        raise ValueError(f"{name} is required, got None")
    if isinstance(value, (str, bytes, bool, np.bool_)) or not np.isscalar(value):
        raise ValueError(f"{name} must be a number, got {shown(value)}")
    v = float(value)
    bad = not np.isfinite(v)
    if low is not None:
        bad |= v <= low if low_open else v < low
    if high is not None:
        bad |= v >= high
    if bad:
        rng = []
        if low is not None:
            rng.append(f"{'>' if low_open else '>='} {low:g}")
        if high is not None:
            rng.append(f"< {high:g}")
        raise ValueError(f"{name} must be a finite number {' and '.join(rng)}, got {shown(value)}")
    return v


def _pair(name, value, *, low=0.0):
    """(a, b) with low < a < b, or None."""
    if value is None:
        return None
    try:
        a, b = value
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a pair (low, high), got {shown(value)}") from None
    a = _number(name, a, low=low)
    b = _number(name, b, low=low)
    if not a < b:
        raise ValueError(f"{name} must be (low, high) with low < high, got {shown(value)}")
    return (a, b)


def _one_of(name, value, allowed, *, optional=False):
    """Check that `value` is one of the words `allowed` (or None when `optional`)."""
    if value in allowed or (optional and value is None):
        return
    raise ValueError(f"{name} must be one of {', '.join(allowed)}"
                     f"{' or None' if optional else ''}, got {shown(value)}")


def _names(name, value):
    """A tuple of non-empty strings, or None."""
    if value is None:
        return None
    if isinstance(value, str):
        value = (value,)
    try:
        items = tuple(value)
    except TypeError:
        raise ValueError(f"{name} must be a list of names, got {shown(value)}") from None
    if not items or not all(isinstance(v, str) and v.strip() for v in items):
        raise ValueError(f"{name} must be a non-empty list of names, got {shown(value)}")
    return tuple(v.strip() for v in items)


@dataclass(frozen=True)
class Requirement:
    """What the prism must do, in the lab's own terms.

    Give the wavelengths either as `band_um` (sampled at `band_points` evenly spaced
    wavelengths, ends included) or as `lines_um` (laser lines), and exactly one target.

    Parameters
    ----------
    band_um : (float, float), optional
        Wavelength band (µm).
    band_points : int
        Number of wavelengths sampled across the band (>= 2; default 7).
    lines_um : sequence of float, optional
        Laser lines (µm), instead of a band.
    split_deg : float, optional
        Target: exact angle between the two main exit beams (degrees, 0 < split < 90).
        ``split_mrad`` in a design file or on the command line is converted to this.
    separation_mm, distance_mm : float, optional
        Target: distance between the two beam centres (mm) on a plane `distance_mm` beyond the
        prism's exit face (both needed together).
    offset_mm : float, optional
        Target: lateral offset between two parallel exit beams (mm), as from a walk-off
        displacer.
    shear_mm : float, optional
        Target: lateral shear between two parallel exit beams (mm), as from a Savart plate.
    polariser : bool
        Target: one beam passes with its polarisation cleaned up (Glan-type prisms); pair it
        with `field_half_angle_deg` and `max_leakage`.
    tolerance : float, optional
        Allowed deviation of the target figure from its value at any sampled wavelength, in
        the target's own unit (degrees for a split, mm otherwise). Default: 1 % of the target.
    localisation_distance_mm : float, optional
        Nomarski prisms: wanted distance of the fringe-localisation plane beyond the exit face
        (mm), e.g. to reach a microscope objective's back focal plane.
    objective_bfp_mm, prism_gap_mm : float, optional
        Nomarski prisms, instead of `localisation_distance_mm`: depth of a microscope
        objective's back focal plane below its mounting shoulder (mm) and the air gap from the
        shoulder to the prism's entrance face (mm). The light comes from the objective, so the
        fringe plane must lie ``exit_z + prism_gap_mm + objective_bfp_mm`` in front of the exit
        face (a negative localisation distance).
    bisector_deg : float, optional
        Wanted in-plane angle of the bisector of the two beams from the input direction
        (degrees); 0 centres the split. Unequal-wedge Wollaston designs solve for it.
    undeviated_polarisation : {"in_plane", "across"}, optional
        Rochon-type prisms: polarisation of the undeviated beam.
    beam_diameter_mm : float, optional
        1/e² diameter of the input beam (mm), taken as its waist at the entrance face.
    m_squared : float
        Beam quality factor M² (>= 1).
    min_clearance_mm : float, optional
        Smallest allowed gap between the two beams' 1/e² edges on the observation plane (mm;
        needs `beam_diameter_mm` and `distance_mm`). May be negative to allow overlap.
    aperture_mm : float, optional
        Clear aperture (square, mm); default 10 mm.
    max_length_mm : float, optional
        Largest allowed length of the prism along the beam (mm).
    field_half_angle_deg : float, optional
        Half-angle of the cone of input directions (degrees) over which the limits must hold.
    field_goal : {"symmetric", "widest"}
        Polarisers: choose the cut for the widest field symmetric about the input direction
        (default) or for the widest total field.
    max_leakage : float, optional
        Largest allowed power in unwanted beams, as a fraction of the transmitted power.
    min_transmission : float, optional
        Smallest allowed transmittance of each main beam for the polarisation it carries
        (fraction, Fresnel losses included).
    temperature_range_c : (float, float), optional
        Operating temperature range (°C), for temperature-flat designs where thermo-optic
        data exist.
    coated : bool
        The outer faces carry an antireflection coating (modelled as an ideal single layer
        for the middle of the band); default uncoated.
    crystals : sequence of str, optional
        Allowed crystals (library names); default every suitable crystal.
    prism_types : sequence of str, optional
        Allowed prism types (names of :data:`~prismdesign.design.families.FAMILIES`).
    band_norm : {"mean", "minimax", "rms"}
        How a target that varies over the band is met when solving (see :data:`BAND_NORMS`).

    Raises
    ------
    ValueError
        One line naming the field, the value and what is allowed.
    """

    band_um: tuple | None = None
    band_points: int = 7
    lines_um: tuple | None = None
    split_deg: float | None = None
    separation_mm: float | None = None
    distance_mm: float | None = None
    offset_mm: float | None = None
    shear_mm: float | None = None
    polariser: bool = False
    tolerance: float | None = None
    localisation_distance_mm: float | None = None
    objective_bfp_mm: float | None = None
    prism_gap_mm: float | None = None
    bisector_deg: float | None = None
    undeviated_polarisation: str | None = None
    beam_diameter_mm: float | None = None
    m_squared: float = 1.0
    min_clearance_mm: float | None = None
    aperture_mm: float | None = None
    max_length_mm: float | None = None
    field_half_angle_deg: float | None = None
    field_goal: str = "symmetric"
    max_leakage: float | None = None
    min_transmission: float | None = None
    temperature_range_c: tuple | None = None
    coated: bool = False
    crystals: tuple | None = None
    prism_types: tuple | None = None
    band_norm: str = "minimax"

    def __post_init__(self):
        put = object.__setattr__
        if (self.band_um is None) == (self.lines_um is None):
            raise ValueError(f"give exactly one of band_um and lines_um, got band_um="
                             f"{shown(self.band_um)} and lines_um={shown(self.lines_um)}")
        put(self, "band_um", _pair("band_um", self.band_um))
        if isinstance(self.band_points, (bool, np.bool_)) or not isinstance(
                self.band_points, (int, np.integer)) or not 2 <= self.band_points <= 201:
            raise ValueError(f"band_points must be a whole number from 2 to 201, got "
                             f"{shown(self.band_points)}")
        if self.lines_um is not None:
            lines = self.lines_um
            if np.isscalar(lines):
                lines = (lines,)
            try:
                lines = tuple(_number("lines_um", v, low=0.0, optional=False) for v in lines)
            except TypeError:
                raise ValueError(f"lines_um must be a list of wavelengths in µm, got "
                                 f"{shown(self.lines_um)}") from None
            if not lines or len(set(lines)) != len(lines):
                raise ValueError(f"lines_um must be distinct wavelengths in µm, got "
                                 f"{shown(self.lines_um)}")
            put(self, "lines_um", tuple(sorted(lines)))
        put(self, "split_deg", _number("split_deg", self.split_deg, low=0.0, high=90.0))
        for name in ("separation_mm", "distance_mm", "offset_mm", "shear_mm", "beam_diameter_mm",
                     "aperture_mm", "max_length_mm", "tolerance"):
            put(self, name, _number(name, getattr(self, name), low=0.0))
        for name in ("localisation_distance_mm", "min_clearance_mm"):
            put(self, name, _number(name, getattr(self, name)))
        for name in ("objective_bfp_mm", "prism_gap_mm"):
            put(self, name, _number(name, getattr(self, name), low=0.0, low_open=False))
        if (self.objective_bfp_mm is None) != (self.prism_gap_mm is None):
            raise ValueError(f"objective_bfp_mm and prism_gap_mm go together, got "
                             f"{shown(self.objective_bfp_mm)} and {shown(self.prism_gap_mm)}")
        if self.objective_bfp_mm is not None and self.localisation_distance_mm is not None:
            raise ValueError("give localisation_distance_mm or objective_bfp_mm with "
                             "prism_gap_mm, not both")
        put(self, "bisector_deg", _number("bisector_deg", self.bisector_deg, low=-45.0, high=45.0))
        put(self, "m_squared", _number("m_squared", self.m_squared, low=1.0, low_open=False,
                                       optional=False))
        put(self, "field_half_angle_deg", _number("field_half_angle_deg",
                                                  self.field_half_angle_deg, low=0.0, high=45.0))
        put(self, "max_leakage", _number("max_leakage", self.max_leakage, low=0.0, high=1.0))
        put(self, "min_transmission", _number("min_transmission", self.min_transmission,
                                               low=0.0, high=1.0, low_open=False))
        put(self, "temperature_range_c", _pair("temperature_range_c", self.temperature_range_c,
                                               low=-273.15))
        for name in ("polariser", "coated"):
            if not isinstance(getattr(self, name), (bool, np.bool_)):
                raise ValueError(f"{name} must be true or false, got {shown(getattr(self, name))}")
            put(self, name, bool(getattr(self, name)))
        _one_of("undeviated_polarisation", self.undeviated_polarisation,
                UNDEVIATED_POLARISATIONS, optional=True)
        _one_of("field_goal", self.field_goal, FIELD_GOALS)
        _one_of("band_norm", self.band_norm, BAND_NORMS)
        put(self, "crystals", _names("crystals", self.crystals))
        put(self, "prism_types", _names("prism_types", self.prism_types))
        self._check_target()

    def _check_target(self):
        given = [kind for kind in TARGET_KINDS if self._target_given(kind)]
        if len(given) != 1:
            raise ValueError(f"give exactly one target (split_deg, separation_mm with "
                             f"distance_mm, offset_mm, shear_mm or polariser = true), got "
                             f"{', '.join(given) if given else 'none'}")
        if self.separation_mm is not None and self.distance_mm is None:
            raise ValueError("separation_mm needs distance_mm (the plane beyond the exit face, "
                             "mm), got distance_mm=None")
        if self.min_clearance_mm is not None and (self.beam_diameter_mm is None
                                                  or self.distance_mm is None):
            raise ValueError(f"min_clearance_mm needs beam_diameter_mm and distance_mm, got "
                             f"beam_diameter_mm={shown(self.beam_diameter_mm)}, "
                             f"distance_mm={shown(self.distance_mm)}")
        if self.polariser and self.max_leakage is None and self.field_half_angle_deg is None:
            raise ValueError("polariser = true needs field_half_angle_deg or max_leakage to say "
                             "what the polariser must achieve, got neither")

    def _target_given(self, kind):
        if kind == "polariser":
            return self.polariser
        return getattr(self, f"{kind}_deg" if kind == "split" else f"{kind}_mm") is not None

    # ------------------------------------------------------------------ derived
    @property
    def target_kind(self):
        """Which target the requirement carries: one of :data:`TARGET_KINDS`."""
        return next(kind for kind in TARGET_KINDS if self._target_given(kind))

    @property
    def target_value(self):
        """The target's value in its own unit (degrees or mm; None for a polariser)."""
        kind = self.target_kind
        return None if kind == "polariser" else getattr(
            self, "split_deg" if kind == "split" else f"{kind}_mm")

    @property
    def target_unit(self):
        """Unit of the target and of `tolerance`: "deg" or "mm" ("" for a polariser)."""
        return {"split": "deg", "polariser": ""}.get(self.target_kind, "mm")

    @property
    def target_tolerance(self):
        """Allowed deviation from the target (target unit): `tolerance` or 1 % of the target."""
        if self.target_value is None:
            return None
        return self.tolerance if self.tolerance is not None else 0.01 * self.target_value

    @property
    def wants_localisation(self):
        """True when a fringe-localisation plane is asked for (Nomarski designs)."""
        return self.localisation_distance_mm is not None or self.objective_bfp_mm is not None

    def wanted_localisation_mm(self, exit_z_mm):
        """Wanted fringe-plane distance beyond the exit face (mm) of a prism whose exit face
        lies at `exit_z_mm` on axis; None when none is asked for."""
        if self.localisation_distance_mm is not None:
            return self.localisation_distance_mm
        if self.objective_bfp_mm is None:
            return None
        return -(float(exit_z_mm) + self.prism_gap_mm + self.objective_bfp_mm)

    @property
    def wavelengths_um(self):
        """The sampled wavelengths (µm), ascending, as a float array."""
        if self.lines_um is not None:
            return np.array(self.lines_um)
        return np.linspace(*self.band_um, self.band_points)

    @property
    def clear_aperture_mm(self):
        """Clear aperture used for the designs (mm): `aperture_mm` or 10 mm."""
        return 10.0 if self.aperture_mm is None else self.aperture_mm

    def describe(self):
        """One line per field that was set, for tables and reports."""
        lines = []
        for f in fields(self):
            value = getattr(self, f.name)
            if value is None or value is False or (f.name == "band_points" and self.band_um is None):
                continue
            if (f.name, value) in (("m_squared", 1.0), ("field_goal", "symmetric")):
                continue
            lines.append(f"{f.name} = {value}")
        return lines


#: Alternative keys accepted by :func:`requirement_from_mapping`, with their conversion.
_CONVERTED = {"split_mrad": ("split_deg", lambda v: np.rad2deg(_number("split_mrad", v) * 1e-3))}


def requirement_from_mapping(mapping, where="requirement"):
    """Build a :class:`Requirement` from a mapping (a design file's ``[requirement]`` table).

    Parameters
    ----------
    mapping : dict
        Keys are :class:`Requirement` field names, plus ``split_mrad`` (converted to degrees).
    where : str
        Where the mapping came from, for error messages (e.g. a file name).

    Returns
    -------
    Requirement

    Raises
    ------
    ValueError
        One line naming an unknown key (with the allowed keys) or a bad value.
    """
    if not isinstance(mapping, dict):
        raise ValueError(f"{where} must be a table of requirement keys, got {shown(mapping)}")
    allowed = {f.name for f in fields(Requirement)} | set(_CONVERTED)
    unknown = sorted(set(mapping) - allowed)
    if unknown:
        raise ValueError(f"{where}: unknown key {unknown[0]!r} = {shown(mapping[unknown[0]])}; "
                         f"allowed keys are "
                         f"{', '.join(sorted(allowed))}")
    values = dict(mapping)
    for key, (target, convert) in _CONVERTED.items():
        if key in values:
            if target in values:
                raise ValueError(f"{where}: give {key} or {target}, not both")
            values[target] = convert(values.pop(key))
    for key in ("band_um", "lines_um", "temperature_range_c", "crystals", "prism_types"):
        if isinstance(values.get(key), list):
            values[key] = tuple(values[key])
    try:
        return Requirement(**values)
    except ValueError as error:
        raise ValueError(f"{where}: {error}") from None


def read_toml(path):
    """The tables of a TOML file (standard-library reader), or a one-line error naming it.

    Parameters
    ----------
    path : pathlib.Path

    Returns
    -------
    dict

    Raises
    ------
    ValueError
        Not valid TOML, or not UTF-8 text.
    OSError
        When the file cannot be read.
    """
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as error:
        raise ValueError(f"{path}: not valid TOML ({error})") from None
    except UnicodeDecodeError:
        raise ValueError(f"{path}: not a text file (UTF-8 TOML expected)") from None


def load_requirement(path):
    """Read a requirement from a TOML file: ``schema = 1`` and a ``[requirement]`` table.

    Parameters
    ----------
    path : str or path-like

    Returns
    -------
    Requirement

    Raises
    ------
    ValueError
        One line naming the file and the bad key or value (unknown top-level keys too).
    OSError
        When the file cannot be read.
    """
    path = Path(path)
    data = read_toml(path)
    if data.get("schema") != 1:
        raise ValueError(f"{path}: schema must be 1, got {shown(data.get('schema'))}")
    unknown = sorted(set(data) - {"schema", "requirement"})
    if unknown:
        raise ValueError(f"{path}: unknown key {unknown[0]!r}; a requirement file holds "
                         f"'schema' and a [requirement] table")
    if "requirement" not in data:
        raise ValueError(f"{path}: no [requirement] table")
    return requirement_from_mapping(data["requirement"], where=f"{path} [requirement]")
