"""The numbers and words of a prism's fabrication sheet, read from its geometry.

Everything a shop needs to make each piece, computed from the prism's plane boundaries (not
from the builder's inputs, so any builder's prism reads the same way):

* per piece: material and dispersion dataset, the optic-axis direction in words and as angles
  to the piece's named faces, the angles of the principal section (each optical face against
  the side faces, and the wedge angle between the two optical faces), the lengths along the
  side faces and at the centre, width and height, the clear aperture of each optical face;
* per internal interface: cement, air gap or optical contact; per outer face: the coating;
* ISO 10110 callouts per optical face (3/ surface form, 4/ tilt, 5/ surface imperfections,
  6/ laser damage threshold);
* tolerances taken from a :class:`~prismdesign.design.ToleranceSet` and attached to the
  dimension they change (see :func:`fabrication_data`), or "tolerances: not specified".

Frame of each piece: z along the beam, x in the piece's principal section (the split
direction), y across it. Pieces of a second prism in series (``prisms.in_series``) are read in
that prism's own frame (turned with it about z), so their wedges are drawn true to shape.

Notation of ISO 10110 as used here (from memory, checked against public summaries of the
standard where one could be found; verify against the current edition before release):
``3/ A(B)`` sagitta (power) error A and irregularity B in fringe spacings at the test
wavelength (ISO 10110-5; the 2015 edition prefers nanometres and allows fringes when the
wavelength is stated, which the sheet does); ``4/ σ`` tilt tolerance of a surface in minutes
of arc (ISO 10110-6); ``5/ N×A`` at most N imperfections of grade A, the square root of the
largest allowed area in mm (ISO 10110-7); ``6/ H; λ; τ`` laser damage threshold with its
wavelength and pulse length (ISO 10110-17). ISO 10110-2, -3 and -4 (``0/``, ``1/``, ``2/``:
stress birefringence, bubbles and inclusions, inhomogeneity and striae) are written for
isotropic glass; the sheet states the crystal's quality in words instead.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._display import shown
from ..design.perturbation import parameter
from ..design.requirement import Requirement
from ..design.tolerance import ToleranceSet
from ..prisms.base import Prism, check_prism
from .demo_materials import LASER_CAUTION

__all__ = ["FabricationData", "PieceSheet", "AngleDimension", "LengthDimension", "Joint",
           "SURFACE_SPEC_DEFAULTS", "fabrication_data", "iso_form_callout", "iso_tilt_callout",
           "iso_imperfection_callout", "iso_damage_callout", "CRYSTAL_QUALITY_NOTE",
           "WORKSHOP_NOTES"]

#: Surface specification used where the caller gives none (common practice for polarising
#: prisms of about 10 mm aperture, no source): form 0.5 fringe of power and 0.2 fringe of
#: irregularity at 546.07 nm, at most 3 imperfections of grade 0.16; no damage threshold
#: (a threshold is the user's to state, never a default).
SURFACE_SPEC_DEFAULTS = {
    "form_fringes": (0.5, 0.2),
    "test_wavelength_nm": 546.07,
    "imperfections": (3, 0.16),
    "damage_threshold": None,
}

#: How the quality of a crystal is specified in place of ISO 10110-2/-3/-4 (our own words).
CRYSTAL_QUALITY_NOTE = (
    "Crystal quality: ISO 10110-2, -3 and -4 (0/ stress birefringence, 1/ bubbles and "
    "inclusions, 2/ inhomogeneity and striae) are written for isotropic glass and are not used "
    "for the birefringent pieces. Specify instead, as agreed with the crystal supplier: the "
    "optic-axis orientation (tolerance on this sheet, checked by conoscope or X-ray), "
    "inclusions, twinning and scatter (none visible in a collimated laser beam across the clear "
    "aperture), and birefringence homogeneity across the aperture.")

#: Workshop practice printed on every sheet (common practice, no source).
WORKSHOP_NOTES = (
    "Mark each crystal piece on a ground side face with its piece number and an arrow along "
    "the optic axis' projection on that face; mark the entrance face.",
    "Edges: protective chamfers at most 0.2 mm wide, outside the clear aperture.",
    "Side faces fine ground unless stated otherwise.",
    "(Common practice, no source.)",
)

_UNITS = {"J/cm²", "J/cm2", "W/cm²", "W/cm2", "kW/cm²", "kW/cm2", "MW/cm²", "MW/cm2"}
_SPEC_KEYS = tuple(SURFACE_SPEC_DEFAULTS)
_EPS = 1e-9


@dataclass(frozen=True)
class AngleDimension:
    """An angle of a piece between two named faces.

    Attributes
    ----------
    faces : (str, str)
        The two faces.
    angle_deg : float
        Angle between them inside the piece (degrees).
    limit_deg : float or None
        ± limit (degrees) from the tolerance set; None when not specified.
    source : str
        Tolerance entries the limit comes from ("" when none).
    reference : bool
        True for a derived angle (the wedge angle between the optical faces).
    """

    faces: tuple
    angle_deg: float
    limit_deg: float | None = None
    source: str = ""
    reference: bool = False

    def text(self):
        """e.g. "105.000° ±0.050°" (value to 0.001°)."""
        return f"{self.angle_deg:.3f}°" + ("" if self.limit_deg is None
                                           else f" ±{self.limit_deg:.3g}°")


@dataclass(frozen=True)
class LengthDimension:
    """A length of a piece.

    Attributes
    ----------
    name : str
        Where it is measured ("along side face +x", "at the centre", "width", "height").
    length_mm : float
    limit_mm : float or None
        ± limit (mm) from the tolerance set; None when not specified.
    source : str
        Tolerance entries the limit comes from.
    """

    name: str
    length_mm: float
    limit_mm: float | None = None
    source: str = ""

    def text(self):
        """e.g. "3.679 ±0.05 mm"."""
        return f"{self.length_mm:.3f}" + ("" if self.limit_mm is None
                                          else f" ±{self.limit_mm:.3g}") + " mm"


@dataclass(frozen=True)
class Joint:
    """What joins two pieces (or separates two prisms in series).

    Attributes
    ----------
    faces : str
        The interface's name.
    pieces : (str, str)
        Labels of the pieces on either side.
    kind : {"contact", "cement", "gap", "space"}
    text : str
        The specification in words.
    material : str or None
    thickness_mm : float or None
    """

    faces: str
    pieces: tuple
    kind: str
    text: str
    material: str | None = None
    thickness_mm: float | None = None


@dataclass(frozen=True)
class PieceSheet:
    """Everything about one piece to make it.

    Attributes
    ----------
    index : int
        Index of the piece in ``prism.pieces`` (names its tolerance entries).
    label : str
    material, dataset_label, reference : str
        Material name, name with its dispersion dataset, and the source of its data.
    crystal : bool
    faces : (str, str)
        Entrance-side and exit-side optical faces (boundary names).
    side_faces : (str, str)
        The side faces at −x and +x of the piece's principal section.
    axis_local : ndarray (3,) or None
        Optic axis in the piece's own frame (x in its section, y across, z along the beam),
        sign chosen with z ≥ 0.
    axis_words : str
        The axis direction in words relative to the named faces.
    axis_face : str
        The face the words describe the axis against ("" without an axis).
    axis_angles : tuple of (str, float)
        Named angles of the axis (degrees).
    axis_tolerance : str
    angles : tuple of AngleDimension
    lengths : tuple of LengthDimension
    width_mm, height_mm : float
    clear_apertures : tuple of (str, str)
        Per optical face: its name and the clear aperture in words.
    callouts : tuple of (str, tuple of str)
        Per optical face: its name and its ISO 10110 callouts.
    coatings : tuple of (str, str)
        Per optical face: its name and coating.
    polygon_mm : ndarray (k, 2)
        Principal section as (z, x) in the piece's own frame, z from the piece's first point.
    frame_deg : float
        Turn of the piece's own x axis about z from the global x axis (degrees).
    """

    index: int
    label: str
    material: str
    dataset_label: str
    reference: str
    crystal: bool
    faces: tuple
    side_faces: tuple
    axis_local: object
    axis_words: str
    axis_face: str
    axis_angles: tuple
    axis_tolerance: str
    angles: tuple
    lengths: tuple
    width_mm: float
    height_mm: float
    clear_apertures: tuple
    callouts: tuple
    coatings: tuple
    polygon_mm: object
    frame_deg: float


@dataclass(frozen=True)
class FabricationData:
    """The content of a fabrication sheet.

    Attributes
    ----------
    title : str
    kind : str
    design_wavelength_um : float
    pieces : tuple of PieceSheet
        Pieces to make (spaces between prisms in series are joints, not pieces).
    joints : tuple of Joint
    assembly : tuple of str
        How the pieces go together (order, turns about the beam, overall length).
    tolerance_note : str
        Which tolerances apply, or "tolerances: not specified".
    other_tolerances : tuple of str
        Tolerance entries that are not for the shop (alignment, wavelength, temperature).
    iso_notes : tuple of str
        What the ISO 10110 callouts mean and where their defaults come from.
    crystal_quality : str
    workshop : tuple of str
        Marking, chamfers and side faces (common practice, no source).
    dispersion_sources : tuple of str
    notes : str
        The caller's own notes.
    laser_caution : str
    """

    title: str
    kind: str
    design_wavelength_um: float
    pieces: tuple
    joints: tuple
    assembly: tuple
    tolerance_note: str
    other_tolerances: tuple
    iso_notes: tuple
    crystal_quality: str
    workshop: tuple
    dispersion_sources: tuple
    notes: str
    laser_caution: str


# ---------------------------------------------------------------------------- ISO callouts
def _positive(name, value):
    if isinstance(value, (str, bytes, bool, np.bool_)) or not np.isscalar(value):
        raise ValueError(f"{name} must be a positive number, got {shown(value)}")
    v = float(value)
    if not (np.isfinite(v) and v > 0):
        raise ValueError(f"{name} must be a positive number, got {shown(value)}")
    return v


def _num(value):
    """Compact number for a callout, four significant digits at most: 0.5, 0.16, 3, 1064."""
    return np.format_float_positional(float(value), precision=4, unique=True, fractional=False,
                                      trim="-")


def iso_form_callout(power_fringes, irregularity_fringes):
    """ISO 10110-5 surface form callout ``3/ A(B)`` in fringe spacings.

    Parameters
    ----------
    power_fringes, irregularity_fringes : float
        Sagitta (power) error A and irregularity B (fringe spacings, > 0; B ≤ A as usual).

    Returns
    -------
    str
        e.g. ``"3/ 0.5(0.2)"``.
    """
    a = _positive("form power (fringes)", power_fringes)
    b = _positive("form irregularity (fringes)", irregularity_fringes)
    return f"3/ {_num(a)}({_num(b)})"


def iso_tilt_callout(limit_deg):
    """ISO 10110-6 tilt callout ``4/ σ`` with σ in minutes (or seconds) of arc.

    Parameters
    ----------
    limit_deg : float
        Tilt limit (degrees, > 0).

    Returns
    -------
    str
        e.g. ``"4/ 3'"`` (0.05°) or ``"4/ 30\""`` below one minute.
    """
    arcmin = 60.0 * _positive("tilt limit (degrees)", limit_deg)
    if arcmin < 1.0:
        return f'4/ {_num(60.0 * arcmin)}"'
    return f"4/ {_num(arcmin)}'"


def iso_imperfection_callout(count, grade_mm):
    """ISO 10110-7 surface imperfection callout ``5/ N×A``.

    Parameters
    ----------
    count : int
        Largest number N of imperfections of the largest grade (≥ 1).
    grade_mm : float
        Grade A: square root of the largest allowed imperfection area (mm).

    Returns
    -------
    str
        e.g. ``"5/ 3×0.16"``.
    """
    if isinstance(count, (bool, np.bool_)) or not isinstance(count, (int, np.integer)) or count < 1:
        raise ValueError(f"imperfection count must be a whole number >= 1, got {shown(count)}")
    return f"5/ {int(count)}×{_num(_positive('imperfection grade (mm)', grade_mm))}"


def iso_damage_callout(threshold, unit, wavelength_nm, pulse_length_ns=None):
    """ISO 10110-17 laser damage threshold callout ``6/ H; λ; τ`` (from memory).

    Parameters
    ----------
    threshold : float
        Damage threshold, > 0, in `unit`.
    unit : str
        "J/cm²" for pulses (fluence), "W/cm²", "kW/cm²" or "MW/cm²" for continuous light.
    wavelength_nm : float
        Laser wavelength (nm).
    pulse_length_ns : float, optional
        Pulse length (ns); required with a fluence, refused with an irradiance.

    Returns
    -------
    str
        e.g. ``"6/ 5 J/cm²; 1064 nm; 10 ns"`` or ``"6/ 1 kW/cm²; 1064 nm"``.
    """
    h = _positive("damage threshold", threshold)
    if unit not in _UNITS:
        raise ValueError(f"damage threshold unit must be one of J/cm², W/cm², kW/cm², MW/cm², "
                         f"got {shown(unit)}")
    unit = unit.replace("cm2", "cm²")
    lam = _positive("damage wavelength_nm", wavelength_nm)
    if unit == "J/cm²":
        if pulse_length_ns is None:
            raise ValueError("a damage fluence (J/cm²) needs its pulse_length_ns, got None")
        return (f"6/ {_num(h)} {unit}; {_num(lam)} nm; "
                f"{_num(_positive('pulse_length_ns', pulse_length_ns))} ns")
    if pulse_length_ns is not None:
        raise ValueError(f"an irradiance ({unit}) is for continuous light: give no "
                         f"pulse_length_ns, got {shown(pulse_length_ns)}")
    return f"6/ {_num(h)} {unit}; {_num(lam)} nm"


def _surface_spec(spec):
    """The surface specification with defaults filled in, checked."""
    if spec is None:
        spec = {}
    if not isinstance(spec, dict):
        raise ValueError(f"surface_spec must be a dict with keys {', '.join(_SPEC_KEYS)}, got "
                         f"{type(spec).__name__}")
    unknown = sorted(set(spec) - set(_SPEC_KEYS))
    if unknown:
        raise ValueError(f"surface_spec: unknown key {unknown[0]!r}; allowed: "
                         f"{', '.join(_SPEC_KEYS)}")
    out = dict(SURFACE_SPEC_DEFAULTS, **spec)
    defaulted = tuple(k for k in _SPEC_KEYS if k not in spec)
    for key, size in (("form_fringes", 2), ("imperfections", 2)):
        value = out[key]
        if isinstance(value, (str, bytes)) or not hasattr(value, "__len__") or len(value) != size:
            raise ValueError(f"surface_spec {key} must be a pair, got {shown(value)}")
    damage = out["damage_threshold"]
    if damage is not None and (isinstance(damage, (str, bytes)) or not hasattr(damage, "__len__")
                               or len(damage) not in (3, 4)):
        raise ValueError(f"surface_spec damage_threshold must be (value, unit, wavelength_nm"
                         f"[, pulse_length_ns]), got {shown(damage)}")
    _positive("surface_spec test_wavelength_nm", out["test_wavelength_nm"])
    return out, defaulted


def _callouts(spec, tilt_limit_deg):
    """ISO 10110 callouts of one optical face."""
    lines = [iso_form_callout(*spec["form_fringes"])]
    if tilt_limit_deg is not None:
        lines.append(iso_tilt_callout(tilt_limit_deg))
    lines.append(iso_imperfection_callout(*spec["imperfections"]))
    if spec["damage_threshold"] is not None:
        lines.append(iso_damage_callout(*spec["damage_threshold"]))
    return tuple(lines)


# ---------------------------------------------------------------------------- tolerances
def _limit(tolerance):
    """± limit of a tolerance for a drawing: the uniform limit, or 3σ of a normal one (common
    practice, no source); None for a fixed offset (not a tolerance)."""
    if tolerance.distribution == "uniform":
        return tolerance.size
    if tolerance.distribution == "normal":
        return 3.0 * tolerance.size
    return None


class _Tolerances:
    """Look-up of the limits in a ToleranceSet by error-parameter name."""

    def __init__(self, prism, tolerances):
        if tolerances is not None and not isinstance(tolerances, ToleranceSet):
            raise ValueError(f"tolerances must be a ToleranceSet or None, got "
                             f"{type(tolerances).__name__}")
        self.items = {} if tolerances is None else {t.name: t for t in tolerances.items}
        for name in self.items:
            parameter(prism, name)  # one-line error for a name that does not fit this prism
        self.used = set()
        self.given = tolerances is not None

    def limit(self, *names):
        """Worst-case sum of the limits of the named entries that exist, and their names."""
        found = [(n, _limit(self.items[n])) for n in names if n in self.items]
        found = [(n, v) for n, v in found if v is not None]
        self.used.update(n for n, _ in found)
        if not found:
            return None, ""
        return float(sum(v for _, v in found)), " + ".join(n for n, _ in found)


# ---------------------------------------------------------------------------- geometry
def _segments(prism):
    """Pieces grouped into prisms (split at spaces of the surrounding medium), each with the
    turn of its own x axis about z (degrees), width and height."""
    gap = [i for i, p in enumerate(prism.pieces)
           if p.optic_axis is None and p.material is prism.surround]
    params = prism.parameters or {}
    starts = [0] + [i + 1 for i in gap]
    ends = gap + [len(prism.pieces)]
    out = []
    for k, (a, b) in enumerate(zip(starts, ends)):
        turn = prism.rotation_deg
        sub = {}
        if len(starts) == 2 and "first" in params and "second" in params:
            # prisms.in_series: the second prism is turned by rotation_deg about z.
            sub = params["second" if k else "first"] or {}
            turn += float(params.get("rotation_deg", 0.0)) if k else 0.0
        width = float(sub.get("width_mm", prism.width_mm) or prism.width_mm)
        height = float(sub.get("height_mm", prism.height_mm) or prism.height_mm)
        out.append((list(range(a, b)), turn, width, height, k))
    return out, gap


def _face_names(prism, gap):
    """Unique names of the boundaries: their labels, prefixed with the prism's number when
    two prisms are in series (faces after the space belong to prism 2)."""
    labels = [b.label or f"face {j}" for j, b in enumerate(prism.boundaries)]
    if not gap:
        return labels
    return [f"prism {1 if j <= gap[0] else 2} {label}" for j, label in enumerate(labels)]


def _local(vector, turn_deg):
    """A global vector in a frame turned by `turn_deg` about z."""
    a = np.deg2rad(turn_deg)
    x = np.array([np.cos(a), np.sin(a), 0.0])
    y = np.array([-np.sin(a), np.cos(a), 0.0])
    v = np.asarray(vector, dtype=float)
    return np.array([v @ x, v @ y, v[2]])


def _angle_between_planes_deg(n1, n2):
    """Dihedral angle between two planes with unit normals (0-90°), as atan2(|n₁×n₂|, |n₁·n₂|):
    arccos of the dot product loses half the digits for nearly parallel faces."""
    n1, n2 = np.asarray(n1, dtype=float), np.asarray(n2, dtype=float)
    return float(np.degrees(np.arctan2(np.linalg.norm(np.cross(n1, n2)), abs(n1 @ n2))))


def _interior_angles(polygon):
    """Interior angle (degrees) at each vertex of a convex polygon."""
    out = []
    k = len(polygon)
    for i in range(k):
        a = polygon[i - 1] - polygon[i]
        b = polygon[(i + 1) % k] - polygon[i]
        cross = a[0] * b[1] - a[1] * b[0]
        out.append(float(np.degrees(np.arctan2(abs(cross), a @ b))))
    return out


def _side_z(point, normal, x):
    """z of a face (point, normal in the piece frame) at height x of the section."""
    return point[2] - (x - point[0]) * normal[0] / normal[2]


def _axis_description(c, n_in, n_out, name_in, name_out):
    """Words, named angles and the reference face for an optic axis c in the piece frame.

    The axis is described against the face it lies in, else the face it is perpendicular to,
    else the face closest to square with the beam (the entrance-side face on a tie), so the
    words name the face a fabricator orients the crystal by.
    """
    cx, cy, cz = c
    faces = []
    for name, n in ((name_in, n_in), (name_out, n_out)):
        faces.append((name, n, float(np.degrees(np.arcsin(np.clip(abs(c @ n), 0.0, 1.0))))))
    out_of_section = float(np.degrees(np.arcsin(np.clip(abs(cy), 0.0, 1.0))))
    angles = [(f"angle to the {name}", value) for name, _, value in faces]
    angles.append(("angle to the principal section", out_of_section))
    tol = 1e-7
    lying = [f for f in faces if f[2] < 1e-5]
    square = [f for f in faces if f[2] > 90.0 - 1e-5]
    ref = (lying or square or sorted(faces, key=lambda f: -abs(f[1][2]))[:1])[0]
    name, n, tilt = ref
    other = faces[1] if ref is faces[0] else faces[0]
    if abs(cy) > 1 - tol:
        words = (f"across the principal section, along the height (y): parallel to the "
                 f"{name_in} and to the {name_out}")
    elif abs(cy) < tol:
        if lying:
            words = f"in the {name}, along the width (x, in the principal section)"
        elif square:
            words = f"perpendicular to the {name}" + (" (along the beam)" if abs(n[2]) > 1 - tol
                                                      else "")
        else:
            turn = (f" (turned from {'+x' if cx >= 0 else '−x'} toward +z, the beam direction)"
                    if abs(n[2]) > 1 - tol else " (in the principal section)")
            words = f"in the principal section, tilted {tilt:.2f}° out of the {name}{turn}"
        if abs(other[2] - tilt) > 1e-5:
            words += f"; {other[2]:.2f}° to the {other[0]}"
    else:
        # Projection on the reference face, its direction from the face's own x direction
        # (the section's trace on the face) toward ±y.
        proj = c - (c @ n) * n
        x_face = np.array([n[2], 0.0, -n[0]])
        along_x, along_y = float(proj @ x_face), float(proj[1])
        az = float(np.degrees(np.arctan2(abs(along_y), abs(along_x))))
        words = (f"oblique: {90.0 - tilt:.2f}° from the normal of the {name}; its projection on "
                 f"that face at {az:.2f}° from {'+x' if along_x >= 0 else '−x'} toward "
                 f"{'+y' if along_y >= 0 else '−y'}")
        angles.append((f"azimuth in the {name} from the x direction", az))
    return words, tuple(angles), name


def _coating_text(boundary, prism, band):
    if boundary.coated:
        return (f"antireflection coated for {band} (an ideal single layer in the model: agree "
                f"the residual reflectance with the coater)")
    return "uncoated, polished"


def _band_text(prism, requirement):
    if requirement is not None:
        if requirement.band_um is not None:
            lo, hi = requirement.band_um
            return f"{1e3 * lo:g}-{1e3 * hi:g} nm"
        if requirement.lines_um is not None:
            return ", ".join(f"{1e3 * w:g}" for w in requirement.lines_um) + " nm"
    return f"{1e3 * prism.design_wavelength_um:g} nm"


def _joint(prism, j, layer, names, left, right):
    if layer is None or layer.thickness_mm == 0:
        return Joint(names[j], (left, right), "contact",
                     f"{names[j]}: optically contacted (no cement, no gap)")
    mat = layer.material
    name = getattr(mat, "name", "layer")
    index = float(mat.indices(prism.design_wavelength_um)[0])
    t_um = 1e3 * layer.thickness_mm
    if name in ("air", "vacuum") or abs(index - 1.0) < 1e-3:
        return Joint(names[j], (left, right), "gap",
                     f"{names[j]}: {name} gap {t_um:.3g} µm (spacers outside the clear aperture)",
                     name, layer.thickness_mm)
    return Joint(names[j], (left, right), "cement",
                 f"{names[j]}: cemented, {name} (n = {index:.4f} at "
                 f"{1e3 * prism.design_wavelength_um:g} nm), film {t_um:.3g} µm",
                 name, layer.thickness_mm)


def _check_nominal(prism):
    for i, p in enumerate(prism.pieces):
        if p.optic_axis is not None and np.ndim(p.optic_axis) != 1:
            raise ValueError(f"a fabrication sheet needs the nominal prism; piece {i} carries "
                             f"per-sample optic axes of shape {np.shape(p.optic_axis)}")
    for j, b in enumerate(prism.boundaries):
        if np.ndim(b.normal) != 1 or np.ndim(b.point_mm) != 1:
            raise ValueError(f"a fabrication sheet needs the nominal prism; boundary {j} carries "
                             f"per-sample geometry of shape {np.shape(b.normal)}")


# ---------------------------------------------------------------------------- main
def fabrication_data(prism, tolerances=None, *, notes="", requirement=None, surface_spec=None):
    """The numbers and words of a prism's fabrication sheet.

    Parameters
    ----------
    prism : Prism
        Nominal prism from any builder in :mod:`prismdesign.prisms` whose faces are
        perpendicular to their principal section (all catalogue types, free stacks, compound
        prisms and two prisms in series).
    tolerances : ToleranceSet, optional
        Error parameters (names as in :mod:`prismdesign.design.perturbation`) mapped onto the
        drawing: ``face<j>_angle_deg`` → every angle at face j against the side faces (and,
        summed worst case with the other face, the piece's wedge angle) and the face's
        ISO 10110-6 tilt callout; ``face<j>_pyramid_deg`` → the face's pyramidal error;
        ``piece<i>_length_mm`` → the piece's lengths along the beam; ``piece<i>_axis_*`` → the
        axis-orientation tolerance. A uniform tolerance is drawn as its ± limit, a normal one as
        ±3σ (common practice, no source). Entries for the input beam, wavelength or temperature
        are listed as use conditions, not fabrication tolerances. None: the sheet says
        "tolerances: not specified".
    notes : str
        Free text printed on the sheet.
    requirement : Requirement, optional
        Its wavelengths name the coating band.
    surface_spec : dict, optional
        ``form_fringes`` (A, B), ``test_wavelength_nm``, ``imperfections`` (N, A) and
        ``damage_threshold`` (value, unit, wavelength_nm[, pulse_length_ns]); missing keys take
        :data:`SURFACE_SPEC_DEFAULTS`.

    Returns
    -------
    FabricationData
    """
    check_prism(prism)
    _check_nominal(prism)
    if not isinstance(notes, str):
        raise ValueError(f"notes must be text, got {type(notes).__name__}")
    if requirement is not None and not isinstance(requirement, Requirement):
        raise ValueError(f"requirement must be a Requirement or None, got "
                         f"{type(requirement).__name__}")
    spec, defaulted = _surface_spec(surface_spec)
    tol = _Tolerances(prism, tolerances)
    segments, gap = _segments(prism)
    names = _face_names(prism, gap)
    band = _band_text(prism, requirement)

    pieces, joints, assembly = [], [], []
    for members, turn, width, height, k in segments:
        sub = Prism(kind=prism.kind, pieces=[prism.pieces[i] for i in members],
                    boundaries=[prism.boundaries[i] for i in members + [members[-1] + 1]],
                    width_mm=width, height_mm=height,
                    design_wavelength_um=prism.design_wavelength_um, surround=prism.surround,
                    rotation_deg=turn)
        for i, (piece, polygon) in zip(members, sub.outline()):
            pieces.append(_piece_sheet(prism, i, piece, polygon, turn, width, height, names,
                                       tol, spec, band, [prism.pieces[g] for g in gap]))
    for j in range(1, len(prism.boundaries) - 1):
        left, right = prism.pieces[j - 1], prism.pieces[j]
        if j - 1 in gap or j in gap:
            continue
        joints.append(_joint(prism, j, prism.boundaries[j].layer, names,
                             left.label or f"piece {j - 1}", right.label or f"piece {j}"))
    for g in gap:
        # The space's length along z at the centre line (in_series stores the spacing asked for,
        # measured from the first prism's last point).
        spacing = float(prism.parameters.get(
            "spacing_mm", prism.boundaries[g + 1].point_mm[2] - prism.boundaries[g].point_mm[2]))
        limit, _ = tol.limit(f"piece{g}_length_mm")
        spacing_text = f"{spacing:.3f}" + ("" if limit is None else f" ±{limit:.3g}")
        joints.append(Joint("space between prism 1 and prism 2", ("prism 1", "prism 2"), "space",
                            f"prism 2 follows prism 1 after {spacing_text} mm of "
                            f"{getattr(prism.surround, 'name', 'air')} (set by the mount)",
                            getattr(prism.surround, "name", None), spacing))
    if gap:
        turn2 = float(prism.parameters.get("rotation_deg", 0.0))
        assembly.append(f"Two prisms in series: prism 2 is turned {turn2:.2f}° about the beam "
                        f"axis (z) from prism 1; each piece is drawn in its own prism's frame.")
    if prism.kind.startswith("glan"):
        assembly.append("The rejected beam leaves through a side face of the first wedge: "
                        "polish that face and send the beam into a dump, or grind and blacken "
                        "it, as the mount design needs.")
    order = ", ".join(p.label for p in pieces)
    assembly.append(f"Order along the beam: {order}.")
    # From the pieces as drawn (each prism of a series in its own frame).
    z_all = np.concatenate([p.polygon_mm[:, 0] for p in pieces])
    assembly.append(f"Overall length along the beam (section at the centre line): "
                    f"{float(z_all.max() - z_all.min()):.3f} mm.")

    if tol.given:
        other = tuple(tol.items[n].text() for n in tol.items
                      if n.startswith(("incidence", "wavelength", "temperature")))
        unused = sorted(set(tol.items) - tol.used - {n for n in tol.items
                                                       if n.startswith(("incidence", "wavelength",
                                                                        "temperature"))})
        tolerance_note = ("Tolerances from the tolerance set: ± limits are the uniform limits, or "
                          "3σ of normally distributed errors (common practice, no source); a "
                          "wedge angle's limit is the worst-case sum of its two faces' limits."
                          " Dimensions without a ± limit: tolerance not specified.")
        if unused:
            tolerance_note += (" Not drawn (fixed offsets, or no dimension of a piece): "
                               + ", ".join(unused) + ".")
    else:
        other = ()
        tolerance_note = "tolerances: not specified"

    iso_notes = [
        f"3/ form in fringe spacings at {spec['test_wavelength_nm']:g} nm over the clear "
        f"aperture (ISO 10110-5); 4/ tilt of a face in minutes of arc (ISO 10110-6), given where "
        f"a face-angle tolerance is set; 5/ N×A surface imperfections (ISO 10110-7); 6/ laser "
        f"damage threshold (ISO 10110-17). Notation from memory: check against the current "
        f"editions."]
    if defaulted:
        iso_notes.append("Defaults used (common practice, no source): "
                         + ", ".join(k for k in defaulted if k != "damage_threshold") + ".")
    if spec["damage_threshold"] is None:
        iso_notes.append("6/ laser damage threshold: not specified; state the laser's fluence or "
                         "irradiance, wavelength and pulse length before ordering for a "
                         "high-power beam.")

    sources = []
    for p in prism.pieces:
        mat = p.material
        if p.optic_axis is None and mat is prism.surround:
            continue
        ref = getattr(mat, "reference", None)
        label = getattr(mat, "label", getattr(mat, "name", "material"))
        text = f"{label}: {ref}" if ref is not None else f"{label}: no published source"
        if text not in sources:
            sources.append(text)
    for b in prism.boundaries:
        if b.layer is not None and b.layer.thickness_mm > 0:
            mat = b.layer.material
            ref = getattr(mat, "reference", None)
            label = getattr(mat, "label", getattr(mat, "name", "layer"))
            text = f"{label}: {ref}" if ref is not None else f"{label}: no published source"
            if text not in sources:
                sources.append(text)

    title = f"{prism.kind.capitalize()} — fabrication sheet"
    return FabricationData(title=title, kind=prism.kind,
                           design_wavelength_um=float(prism.design_wavelength_um),
                           pieces=tuple(pieces), joints=tuple(joints), assembly=tuple(assembly),
                           tolerance_note=tolerance_note, other_tolerances=other,
                           iso_notes=tuple(iso_notes), crystal_quality=CRYSTAL_QUALITY_NOTE,
                           workshop=WORKSHOP_NOTES,
                           dispersion_sources=tuple(sources), notes=notes,
                           laser_caution=LASER_CAUTION)


def _piece_sheet(prism, i, piece, polygon, turn, width, height, names, tol, spec, band, spaces):
    """The sheet of piece i (boundaries i and i+1), in its prism's frame turned by `turn`;
    `spaces` are the pieces that are spaces between prisms in series."""
    if len(polygon) < 3:
        raise ValueError(f"piece {i} ({piece.label}) has no extent inside the clear aperture; "
                         f"cannot draw it")
    b_in, b_out = prism.boundaries[i], prism.boundaries[i + 1]
    n_in, n_out = _local(b_in.normal, turn), _local(b_out.normal, turn)
    for j, n in ((i, n_in), (i + 1, n_out)):
        if abs(n[1]) > 1e-9:
            raise ValueError(f"face {j} ({names[j]}) is tilted out of the principal section "
                             f"(normal y component {n[1]:.3g}); the sheet draws faces "
                             f"perpendicular to the section only")
    p_in, p_out = _local(b_in.point_mm, turn), _local(b_out.point_mm, turn)
    name_in, name_out = names[i], names[i + 1]
    side_lo, side_hi = "side face −x", "side face +x"
    half = 0.5 * width

    # Angles of the section: each optical face against each side face, and the wedge angle.
    angles = []
    for j, n, name in ((i, n_in, name_in), (i + 1, n_out, name_out)):
        limit, source = tol.limit(f"face{j}_angle_deg")
        tilt = float(np.degrees(np.arctan2(n[0], n[2])))
        # The face meets the −x side at 90° ± tilt inside the piece (the piece lies at larger z
        # beyond its entrance-side face and at smaller z before its exit-side face).
        sign = 1.0 if j == i else -1.0
        at_lo = 90.0 + sign * tilt
        angles.append(AngleDimension((name, side_lo), at_lo, limit, source))
        angles.append(AngleDimension((name, side_hi), 180.0 - at_lo, limit, source))
    wedge_limit, wedge_source = tol.limit(f"face{i}_angle_deg", f"face{i + 1}_angle_deg")
    angles.append(AngleDimension((name_in, name_out), _angle_between_planes_deg(n_in, n_out),
                                 wedge_limit, wedge_source, reference=True))

    len_limit, len_source = tol.limit(f"piece{i}_length_mm")
    z_lo = _side_z(p_out, n_out, -half) - _side_z(p_in, n_in, -half)
    z_hi = _side_z(p_out, n_out, half) - _side_z(p_in, n_in, half)
    z_mid = _side_z(p_out, n_out, 0.0) - _side_z(p_in, n_in, 0.0)
    lengths = (LengthDimension(f"length along {side_lo}", float(z_lo), len_limit, len_source),
               LengthDimension(f"length along {side_hi}", float(z_hi), len_limit, len_source),
               LengthDimension("length at the centre line", float(z_mid), len_limit, len_source),
               LengthDimension("width (x)", float(width)),
               LengthDimension("height (y)", float(height)))

    clear, coatings, callouts = [], [], []
    for j, n, name, b in ((i, n_in, name_in, b_in), (i + 1, n_out, name_out, b_out)):
        along = width / max(abs(n[2]), 1e-12)
        clear.append((name, f"{along:.2f} × {height:.2f} mm (centred; {width:.2f} mm across "
                            f"the beam)" if abs(n[2]) < 1 - 1e-12 else
                      f"{width:.2f} × {height:.2f} mm (centred)"))
        # Outer faces meet the surroundings: the ends, and the faces beside a space between
        # prisms in series.
        outer = (j in (0, len(prism.boundaries) - 1) or b.coated
                 or any(prism.pieces[j - 1 if j == i else j] is g for g in spaces))
        coatings.append((name, _coating_text(b, prism, band) if outer else
                         "internal face: no coating (joined as stated)"))
        tilt_limit, _ = tol.limit(f"face{j}_angle_deg")
        pyr_limit, _ = tol.limit(f"face{j}_pyramid_deg")
        lines = list(_callouts(spec, tilt_limit))
        if pyr_limit is not None:
            lines.append(f"pyramidal error ±{pyr_limit:.3g}°")
        callouts.append((name, tuple(lines)))

    mat = piece.material
    ref = getattr(mat, "reference", None)
    if piece.is_crystal:
        c = _local(piece.optic_axis, turn)
        c = c / np.linalg.norm(c)
        # The axis is a line: show it with c_z ≥ 0 (then c_x ≥ 0, then c_y ≥ 0).
        key = next((v for v in (c[2], c[0], c[1]) if abs(v) > 1e-12), 1.0)
        c = c if key > 0 else -c
        words, axis_angles, axis_face = _axis_description(c, n_in, n_out, name_in, name_out)
        polar, _ = tol.limit(f"piece{i}_axis_polar_deg")
        azim, _ = tol.limit(f"piece{i}_axis_azimuth_deg")
        parts = []
        if polar is not None:
            parts.append(f"±{polar:.3g}° in polar angle (from the beam axis z)")
        if azim is not None:
            parts.append(f"±{azim:.3g}° in azimuth (about z)")
        axis_tol = ("axis orientation " + ", ".join(parts)) if parts else \
            "axis orientation tolerance: not specified"
    else:
        c, words, axis_angles, axis_face = None, "isotropic: no optic axis", (), ""
        axis_tol = ""
    poly = np.array(polygon, dtype=float)
    return PieceSheet(index=i, label=piece.label or f"piece {i}",
                      material=getattr(mat, "name", "material"),
                      dataset_label=getattr(mat, "label", getattr(mat, "name", "material")),
                      reference=str(ref) if ref is not None else "no published source",
                      crystal=piece.is_crystal, faces=(name_in, name_out),
                      side_faces=(side_lo, side_hi), axis_local=c, axis_words=words,
                      axis_face=axis_face,
                      axis_angles=axis_angles, axis_tolerance=axis_tol, angles=tuple(angles),
                      lengths=lengths, width_mm=float(width), height_mm=float(height),
                      clear_apertures=tuple(clear), callouts=tuple(callouts),
                      coatings=tuple(coatings), polygon_mm=poly, frame_deg=float(turn))

