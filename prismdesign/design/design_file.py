"""Design files: one TOML file (schema 1) holding a prism, its requirement, tolerances and notes.

A designer works in sessions; the design file is what carries a design from one to the next
and into version control. It holds:

* ``[prism]`` — the builder (``type``, one of :data:`BUILDERS`) and its keyword arguments
  (crystal, angles, lengths, aperture, axes, design wavelength, coatings); an internal cement
  film or air gap as a ``[prism.interface_layer]`` table; two prisms in series as
  ``type = "in_series"`` with ``[prism.first]`` and ``[prism.second]`` tables;
* ``[materials]`` — custom dispersion-data files by name → path (relative to the design file),
  usable wherever a material name is;
* ``[requirement]`` — the fields of :class:`~prismdesign.design.Requirement`;
* ``[[tolerance]]`` — one table per :class:`~prismdesign.design.Tolerance`;
* ``[solved]`` — optional provenance of a solved design (family, crystal, free parameters,
  evaluations, method, message);
* ``title`` and ``notes`` — free text.

The prism is stored as the builder's inputs, not as its surfaces, so a loaded design is the
same prism: floats are written with Python's shortest round-trip repr and read back to the same
bits, and the builder is deterministic, so a loaded design traces bit for bit like the saved
one. Saving writes a temporary file beside the target and renames it (never a half-written
file). Loading is strict: every unknown key or bad value is a one-line :class:`ValueError`
naming the key, the value and what is allowed. No user string is ever evaluated.
"""
from __future__ import annotations

import inspect
import os
import tempfile
from dataclasses import dataclass, field, fields, replace
from pathlib import Path

import numpy as np

from .. import prisms
from .._display import shown
from ..materials import load_material
from ..materials import material as library_material
from .families import FAMILIES, design_wavelength_um
from .requirement import Requirement, read_toml, requirement_from_mapping
from .tolerance import DISTRIBUTIONS, Tolerance, ToleranceSet

__all__ = ["DesignFile", "PrismSpec", "BUILDERS", "SCHEMA", "save_design", "load_design",
           "design_from_solution", "spec_from_solution"]

#: Schema version written and accepted.
SCHEMA = 1

#: Prism builders a design file may name in ``[prism] type``.
BUILDERS = {
    "wollaston": prisms.wollaston, "rochon": prisms.rochon, "senarmont": prisms.senarmont,
    "nomarski": prisms.nomarski, "glan_air_spaced": prisms.glan_air_spaced,
    "glan_cemented": prisms.glan_cemented, "savart_plate": prisms.savart_plate,
    "walkoff_displacer": prisms.walkoff_displacer,
}

#: Keys of ``type = "in_series"`` besides its ``first`` and ``second`` tables.
SERIES_KEYS = ("spacing_mm", "rotation_deg", "kind", "outer_faces_coated")

#: Keys of an ``interface_layer`` table (arguments of :func:`prismdesign.prisms.interface_layer`).
LAYER_KEYS = ("material", "thickness_mm", "treatment", "coherence_length_mm")

#: Builder arguments that name a material (library name or a ``[materials]`` entry).
MATERIAL_KEYS = ("material", "gap_material", "cement")

TOP_KEYS = ("schema", "title", "notes", "materials", "prism", "requirement", "tolerance",
            "solved")
SOLVED_KEYS = ("prism_type", "crystal", "parameters", "evaluations", "method", "message",
               "converged")
TOLERANCE_KEYS = ("name", "distribution", "size", "cost_weight", "loosest", "tightest",
                  "reference_size")


def _builder_keys(name):
    return tuple(inspect.signature(BUILDERS[name]).parameters)


def _check_string(where, value, what="a text string"):
    if not isinstance(value, str):
        raise ValueError(f"{where} must be {what}, got {shown(value)}")
    return value


def _check_plain(where, value):
    """TOML-writable plain values only: str, bool, int, float, lists of those, tables (numpy
    scalars become Python numbers; None stays None and is left out when saving)."""
    if value is None or isinstance(value, (str, bool)):
        return value               # None: the builder's default (left out of the file)
    if isinstance(value, (int, float, np.integer, np.floating)):
        if not np.isfinite(value):
            raise ValueError(f"{where} must be a finite number, got {shown(value)}")
        # Plain Python numbers: numpy scalars would not be written as TOML numbers.
        return int(value) if isinstance(value, (int, np.integer)) else float(value)
    if isinstance(value, (list, tuple)):
        return [_check_plain(f"{where}[{i}]", v) for i, v in enumerate(value)]
    if isinstance(value, dict):
        return {k: _check_plain(f"{where}.{k}", v) for k, v in value.items()}
    raise ValueError(f"{where} must be a number, text, true/false or a list of them, got "
                     f"{shown(value)}")


@dataclass(frozen=True)
class PrismSpec:
    """A prism as its builder and the builder's keyword arguments.

    Parameters
    ----------
    type : str
        A name in :data:`BUILDERS`, or ``"in_series"``.
    arguments : dict
        Keyword arguments of the builder (plain values: numbers, text, true/false, lists;
        ``interface_layer`` as a dict of :data:`LAYER_KEYS`). For ``"in_series"``: ``first``
        and ``second`` (each a :class:`PrismSpec`) and any of :data:`SERIES_KEYS`.
    surround : str, optional
        Medium around the prism (library name or ``[materials]`` entry); default air.
    """

    type: str
    arguments: dict = field(default_factory=dict)
    surround: str | None = None

    def __post_init__(self):
        where = "[prism]"
        allowed = tuple(BUILDERS) + ("in_series",)
        if self.type not in allowed:
            raise ValueError(f"{where} type must be one of {', '.join(allowed)}, got "
                             f"{shown(self.type)}")
        if self.surround is not None:
            _check_string(f"{where} surround", self.surround, "a material name")
        args = dict(self.arguments)
        if self.type == "in_series":
            unknown = sorted(set(args) - set(SERIES_KEYS) - {"first", "second"})
            if unknown:
                raise ValueError(f"{where} unknown key {unknown[0]!r} = {shown(args[unknown[0]])}"
                                 f" for type in_series; allowed keys are first, second, "
                                 f"{', '.join(SERIES_KEYS)}")
            for key in ("first", "second"):
                if not isinstance(args.get(key), PrismSpec) or args[key].type == "in_series":
                    raise ValueError(f"{where} in_series needs a [prism.{key}] table with a "
                                     f"single prism type ({', '.join(BUILDERS)}), got "
                                     f"{shown(args.get(key))}")
            for key in SERIES_KEYS:
                if key in args:
                    args[key] = _check_plain(f"{where} {key}", args[key])
        else:
            keys = _builder_keys(self.type)
            unknown = sorted(set(args) - set(keys))
            if unknown:
                raise ValueError(f"{where} unknown key {unknown[0]!r} = {shown(args[unknown[0]])}"
                                 f" for type {self.type}; allowed keys are {', '.join(keys)}")
            for key, value in args.items():
                if key == "interface_layer" and value is not None:
                    if not isinstance(value, dict):
                        raise ValueError(f"{where} interface_layer must be a table with keys "
                                         f"{', '.join(LAYER_KEYS)}, got {shown(value)}")
                    bad = sorted(set(value) - set(LAYER_KEYS))
                    if bad:
                        raise ValueError(f"{where} interface_layer: unknown key {bad[0]!r} = "
                                         f"{shown(value[bad[0]])}; allowed keys are "
                                         f"{', '.join(LAYER_KEYS)}")
                args[key] = _check_plain(f"{where} {key}", value)
        object.__setattr__(self, "arguments", args)

    # ------------------------------------------------------------------ building
    def build(self, custom_materials=None):
        """The :class:`~prismdesign.prisms.Prism` this spec describes.

        Parameters
        ----------
        custom_materials : dict[str, material], optional
            Materials loaded from the design file's ``[materials]`` table, by name.

        Raises
        ------
        ValueError
            One line naming the key and the builder's complaint.
        """
        custom = custom_materials or {}
        if self.type == "in_series":
            args = dict(self.arguments)
            first = args.pop("first").build(custom)
            second = args.pop("second").build(custom)
            coated = args.pop("outer_faces_coated", False)
            if not isinstance(coated, bool):
                raise ValueError(f"[prism] outer_faces_coated must be true or false, got "
                                 f"{shown(coated)}")
            try:
                prism = prisms.in_series(first, second, **args)
            except (TypeError, ValueError) as error:
                raise ValueError(f"[prism] in_series: {error}") from None
            if coated:
                faces = list(prism.boundaries)
                faces[0], faces[-1] = (replace(faces[0], coated=True),
                                       replace(faces[-1], coated=True))
                prism = replace(prism, boundaries=faces)
        else:
            args = {key: self._resolve(key, value, custom)
                    for key, value in self.arguments.items()}
            try:
                prism = BUILDERS[self.type](**args)
            except (TypeError, ValueError) as error:
                raise ValueError(f"[prism] {self.type}: {error}") from None
        if self.surround is not None:
            prism = prism.in_medium(_material(self.surround, custom, "[prism] surround"))
        return prism

    def _resolve(self, key, value, custom):
        if key in MATERIAL_KEYS and isinstance(value, str):
            return _material(value, custom, f"[prism] {key}")
        if key == "interface_layer" and value is not None:
            layer = dict(value)
            if isinstance(layer.get("material"), str):
                layer["material"] = _material(layer["material"], custom,
                                              "[prism.interface_layer] material")
            try:
                return prisms.interface_layer(**layer)
            except (TypeError, ValueError) as error:
                raise ValueError(f"[prism.interface_layer] {error}") from None
        if isinstance(value, list):
            return tuple(value)
        return value

    def to_mapping(self):
        """The ``[prism]`` table as a plain dict (nested tables for layers and series)."""
        out = {"type": self.type}
        if self.surround is not None:
            out["surround"] = self.surround
        for key, value in self.arguments.items():
            if value is None:
                continue   # TOML has no null; an absent key means the builder's default
            out[key] = value.to_mapping() if isinstance(value, PrismSpec) else value
        return out


def _material(name, custom, where):
    """A ``[materials]`` entry or a library material, by name."""
    if name in custom:
        return custom[name]
    try:
        return library_material(name)
    except (ValueError, LookupError) as error:
        raise ValueError(f"{where} = {shown(name)}: not a library material nor a [materials] "
                         f"entry ({error})") from None


def _spec_from_mapping(table, where="[prism]"):
    if not isinstance(table, dict):
        raise ValueError(f"{where} must be a table, got {shown(table)}")
    args = dict(table)
    kind = args.pop("type", None)
    if kind is None:
        raise ValueError(f"{where} needs a type: one of {', '.join(BUILDERS)}, in_series")
    surround = args.pop("surround", None)
    if kind == "in_series":
        for key in ("first", "second"):
            if key in args:
                args[key] = _spec_from_mapping(args[key], f"[prism.{key}]")
    return PrismSpec(kind, args, surround)


@dataclass(frozen=True)
class DesignFile:
    """Everything a design file holds.

    Parameters
    ----------
    prism : PrismSpec
    requirement : Requirement, optional
    tolerances : ToleranceSet, optional
    title : str
        Short name of the design (free text).
    notes : str
        Free notes (free text).
    materials : dict[str, str]
        Custom dispersion-data files: name → path (relative paths are relative to the design
        file's folder once loaded; :attr:`base_folder` records it).
    solved : dict, optional
        Provenance of a solved design (keys :data:`SOLVED_KEYS`).
    base_folder : pathlib.Path, optional
        Folder relative material paths are taken from (set by :func:`load_design`; default the
        current folder).
    """

    prism: PrismSpec
    requirement: Requirement | None = None
    tolerances: ToleranceSet | None = None
    title: str = ""
    notes: str = ""
    materials: dict = field(default_factory=dict)
    solved: dict | None = None
    base_folder: Path | None = field(default=None, compare=False)

    def __post_init__(self):
        if not isinstance(self.prism, PrismSpec):
            raise ValueError(f"prism must be a PrismSpec, got {shown(self.prism)}")
        if self.requirement is not None and not isinstance(self.requirement, Requirement):
            raise ValueError(f"requirement must be a Requirement, got {shown(self.requirement)}")
        if self.tolerances is not None and not isinstance(self.tolerances, ToleranceSet):
            raise ValueError(f"tolerances must be a ToleranceSet, got {shown(self.tolerances)}")
        _check_string("title", self.title)
        _check_string("notes", self.notes)
        if not isinstance(self.materials, dict):
            raise ValueError(f"[materials] must be a table of name = path, got "
                             f"{shown(self.materials)}")
        for name, path in self.materials.items():
            _check_string(f"[materials] {name}", str(path) if isinstance(path, Path) else path,
                          "a file path")
        object.__setattr__(self, "materials", {k: str(v) for k, v in self.materials.items()})
        if self.solved is not None:
            if not isinstance(self.solved, dict):
                raise ValueError(f"[solved] must be a table, got {shown(self.solved)}")
            unknown = sorted(set(self.solved) - set(SOLVED_KEYS))
            if unknown:
                raise ValueError(f"[solved] unknown key {unknown[0]!r} = "
                                 f"{shown(self.solved[unknown[0]])}; allowed keys are "
                                 f"{', '.join(SOLVED_KEYS)}")
            object.__setattr__(self, "solved", _check_plain("[solved]", self.solved))

    def custom_materials(self):
        """The ``[materials]`` files loaded, by name."""
        base = self.base_folder or Path.cwd()
        out = {}
        for name, text in self.materials.items():
            path = Path(text)
            if not path.is_absolute():
                path = base / path
            if not path.is_file():
                raise ValueError(f"[materials] {name} = {shown(text)}: no such file "
                                 f"(relative paths are taken from {base})")
            out[name] = load_material(path)
        return out

    def build(self):
        """The prism (a :class:`~prismdesign.prisms.Prism`)."""
        return self.prism.build(self.custom_materials())

    def material_objects(self):
        """Every material the prism uses (library or custom), for data-source listings."""
        prism = self.build()
        seen = {}
        for piece in prism.pieces:
            seen.setdefault(getattr(piece.material, "label", str(piece.material)), piece.material)
        return list(seen.values())

    def to_mapping(self):
        """The whole file as plain TOML-writable data."""
        data = {"schema": SCHEMA}
        if self.title:
            data["title"] = self.title
        if self.notes:
            data["notes"] = self.notes
        if self.materials:
            data["materials"] = dict(self.materials)
        data["prism"] = self.prism.to_mapping()
        if self.requirement is not None:
            data["requirement"] = _requirement_mapping(self.requirement)
        if self.tolerances is not None:
            data["tolerance"] = [_tolerance_mapping(t) for t in self.tolerances.items]
        if self.solved is not None:
            data["solved"] = dict(self.solved)
        return data


def _requirement_mapping(requirement):
    """Requirement fields that differ from their defaults, as plain values."""
    out = {}
    for f in fields(Requirement):
        value = getattr(requirement, f.name)
        if value == f.default and not (f.name == "band_points" and requirement.band_um):
            continue
        if value is None:
            continue
        out[f.name] = list(value) if isinstance(value, tuple) else value
    return out


def _tolerance_mapping(t):
    out = {"name": t.name, "distribution": t.distribution, "size": t.size,
           "cost_weight": t.cost_weight}
    # The derived defaults are left out so a hand-edited size moves them with it.
    if t.loosest != 10.0 * abs(t.size):
        out["loosest"] = t.loosest
    if t.tightest != 0.1 * abs(t.size):
        out["tightest"] = t.tightest
    if t.reference_size != (abs(t.size) or 1.0):
        out["reference_size"] = t.reference_size
    return out


def _tolerances_from(items, where):
    if not isinstance(items, list) or not items:
        raise ValueError(f"{where} must be one or more [[tolerance]] tables, got {shown(items)}")
    out = []
    for i, item in enumerate(items):
        here = f"{where} {i + 1}"
        if not isinstance(item, dict):
            raise ValueError(f"{here} must be a table, got {shown(item)}")
        unknown = sorted(set(item) - set(TOLERANCE_KEYS))
        if unknown:
            raise ValueError(f"{here}: unknown key {unknown[0]!r} = {shown(item[unknown[0]])}; "
                             f"allowed keys are {', '.join(TOLERANCE_KEYS)}")
        missing = [k for k in ("name", "distribution", "size") if k not in item]
        if missing:
            raise ValueError(f"{here}: missing key {missing[0]!r}; a tolerance needs name, "
                             f"distribution ({', '.join(DISTRIBUTIONS)}) and size")
        try:
            out.append(Tolerance(**item))
        except ValueError as error:
            raise ValueError(f"{here}: {error}") from None
    try:
        return ToleranceSet(tuple(out))
    except ValueError as error:
        raise ValueError(f"{where}: {error}") from None


# ---------------------------------------------------------------------- file I/O
def save_design(design, path):
    """Write `design` to `path` as TOML, atomically (temporary file, then rename).

    Parameters
    ----------
    design : DesignFile
    path : str or path-like

    Returns
    -------
    pathlib.Path
        The written file.

    Raises
    ------
    ValueError
        When the folder does not exist or `design` is not a :class:`DesignFile`.
    """
    import tomli_w

    if not isinstance(design, DesignFile):
        raise ValueError(f"design must be a DesignFile, got {shown(design)}")
    path = Path(path)
    if not path.parent.is_dir():
        raise ValueError(f"{path}: the folder {path.parent} does not exist")
    data = design.to_mapping()
    tolerances = data.pop("tolerance", [])
    solved = data.pop("solved", None)
    # Tolerances as [[tolerance]] tables and provenance last: easier to read and to diff.
    text = tomli_w.dumps(data, multiline_strings=True)
    text += "".join("\n[[tolerance]]\n" + tomli_w.dumps(t) for t in tolerances)
    if solved is not None:
        text += "\n" + tomli_w.dumps({"solved": solved}, multiline_strings=True)
    fd, temp_name = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        # mkstemp makes the file private (0600); keep an existing file's mode, else the umask's.
        try:
            mode = path.stat().st_mode & 0o777
        except FileNotFoundError:
            mask = os.umask(0)
            os.umask(mask)
            mode = 0o666 & ~mask
        os.chmod(temp_name, mode)
        os.replace(temp_name, path)
    except BaseException:
        Path(temp_name).unlink(missing_ok=True)
        raise
    return path


def load_design(path):
    """Read a design file (strict: unknown keys and bad values are one-line errors).

    Parameters
    ----------
    path : str or path-like

    Returns
    -------
    DesignFile
        With :attr:`~DesignFile.base_folder` set to the file's folder.

    Raises
    ------
    ValueError
        One line naming the file, the key, the value and what is allowed.
    OSError
        When the file cannot be read.
    """
    path = Path(path)
    data = read_toml(path)
    try:
        return design_from_mapping(data, base_folder=path.resolve().parent)
    except ValueError as error:
        raise ValueError(f"{path}: {error}") from None


def design_from_mapping(data, base_folder=None):
    """A :class:`DesignFile` from parsed TOML data (see :func:`load_design`)."""
    if data.get("schema") != SCHEMA:
        raise ValueError(f"schema must be {SCHEMA}, got {shown(data.get('schema'))}")
    unknown = sorted(set(data) - set(TOP_KEYS))
    if unknown:
        raise ValueError(f"unknown key {unknown[0]!r} = {shown(data[unknown[0]])}; allowed "
                         f"top-level keys are {', '.join(TOP_KEYS)}")
    if "prism" not in data:
        raise ValueError("no [prism] table (type and the builder's arguments)")
    requirement = None
    if "requirement" in data:
        requirement = requirement_from_mapping(data["requirement"], where="[requirement]")
    tolerances = None
    if "tolerance" in data:
        tolerances = _tolerances_from(data["tolerance"], "[[tolerance]]")
    materials = data.get("materials", {})
    if not isinstance(materials, dict):
        raise ValueError(f"[materials] must be a table of name = path, got {shown(materials)}")
    design = DesignFile(prism=_spec_from_mapping(data["prism"]), requirement=requirement,
                        tolerances=tolerances, title=data.get("title", ""),
                        notes=data.get("notes", ""), materials=materials,
                        solved=data.get("solved"), base_folder=base_folder)
    design.build()   # bad builder values fail now, in one line, not at first use
    return design


# ------------------------------------------------------------- from a solved design
def spec_from_solution(prism_type, crystal, parameters, requirement):
    """The :class:`PrismSpec` of a solved design, equal to the family's own build.

    Parameters
    ----------
    prism_type : str
        A family name in :data:`~prismdesign.design.families.FAMILIES`.
    crystal : str or (str, str)
    parameters : dict[str, float]
        Solved free parameters.
    requirement : Requirement

    Returns
    -------
    PrismSpec
    """
    if prism_type not in FAMILIES:
        raise ValueError(f"prism type must be one of {', '.join(FAMILIES)}, got "
                         f"{shown(prism_type)}")
    a = requirement.clear_aperture_mm
    size = dict(width_mm=a, height_mm=a, design_wavelength_um=design_wavelength_um(requirement),
                coated=requirement.coated)
    v = {k: float(x) for k, x in parameters.items()}
    if prism_type == "two_crystal_wollaston":
        first, second = crystal
        plain = dict(size, coated=False)
        b_angle = v["second_wedge_deg"]
        return PrismSpec("in_series", dict(
            first=PrismSpec("wollaston", dict(material=first,
                                              wedge_angle_deg=v["first_wedge_deg"], **plain)),
            second=PrismSpec("wollaston", dict(material=second, wedge_angle_deg=abs(b_angle),
                                               **plain)),
            spacing_mm=0.5, rotation_deg=180.0 if b_angle < 0 else 0.0,
            kind="two-crystal Wollaston", outer_faces_coated=requirement.coated))
    builder = {"wollaston_unequal": "wollaston"}.get(prism_type, prism_type)
    args = dict(material=crystal, **v, **size)
    if prism_type == "nomarski":
        args["localisation_distance_mm"] = requirement.localisation_distance_mm
    return PrismSpec(builder, args)


def design_from_solution(design, requirement, *, tolerances=None, title="", notes=""):
    """A :class:`DesignFile` from a solved :class:`~prismdesign.design.Design`.

    Parameters
    ----------
    design : Design
        From :func:`~prismdesign.design.solve` or a :class:`~prismdesign.design.Ranking`.
    requirement : Requirement
    tolerances : ToleranceSet, optional
    title, notes : str

    Returns
    -------
    DesignFile
    """
    crystal = list(design.crystal) if isinstance(design.crystal, tuple) else design.crystal
    solved = dict(prism_type=design.prism_type, crystal=crystal,
                  parameters={k: float(v) for k, v in design.parameters.items()},
                  evaluations=int(design.evaluations), method=str(design.method),
                  message=str(design.message), converged=bool(design.converged))
    return DesignFile(prism=spec_from_solution(design.prism_type, design.crystal,
                                               design.parameters, requirement),
                      requirement=requirement, tolerances=tolerances, title=title, notes=notes,
                      solved=solved)
