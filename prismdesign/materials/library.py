"""The material library: load and save dispersion-data files, look materials up by name.

Bundled files live in the package ``prismdesign.dispersion_data`` (the top-level
``dispersion_data/`` folder of the repository, shipped inside the wheel).  Look-up is
case-insensitive and ignores spaces, hyphens and underscores, so ``"alpha-BBO"``,
``"Alpha BBO"`` and ``"alpha_bbo"`` name the same entry; aliases in each file add more names.

A material may carry several published datasets, one file each (``<name>.<dataset>.toml``); the
default is the one whose data cover the widest wavelength band, and ``dataset=`` picks another.
"""
from __future__ import annotations

import difflib
import functools
import importlib.resources
import os
import re
import tempfile
import tomllib
from pathlib import Path

import tomli_w

from .schema import material_from_dict, material_to_dict

__all__ = ["MaterialLibrary", "UnknownMaterialError", "load_material", "material",
           "material_datasets", "materials", "save_material"]


class UnknownMaterialError(LookupError):
    """No material of that name or alias in the library."""


def load_material(path, strict: bool = False):
    """Read one dispersion-data file (schema 1) and return its material.

    Parameters
    ----------
    path : str or os.PathLike
        A TOML file following the schema in ``DEVELOPERS.md``.
    strict : bool, optional
        If true, wavelengths outside the validity range raise instead of warning.

    Returns
    -------
    IsotropicMaterial or UniaxialMaterial

    Raises
    ------
    ValueError
        Malformed TOML or any schema violation, in one line naming the file, the key, the value
        and what is allowed.
    OSError
        The file cannot be read.
    """
    if not isinstance(path, (str, os.PathLike)):
        raise ValueError(f"path = {path!r} must be a file name (str or os.PathLike) of a "
                         f"dispersion-data TOML file")
    path = Path(path)
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except tomllib.TOMLDecodeError as error:
        raise ValueError(f"{path}: not valid TOML ({error})") from None
    except UnicodeDecodeError as error:
        raise ValueError(f"{path}: not valid UTF-8 TOML ({error.reason})") from None
    material_ = material_from_dict(data, str(path))
    return material_.with_strict(True) if strict else material_


def save_material(material, path) -> Path:
    """Write ``material`` as a schema-1 TOML file, atomically.

    The document is written to a temporary file in the same folder and then moved over
    ``path`` with ``os.replace``, so an existing file is never left half-written.

    Parameters
    ----------
    material : IsotropicMaterial or UniaxialMaterial
        The material to save; it must carry a :class:`~prismdesign.materials.Reference`.
    path : str or os.PathLike
        Destination file (conventionally ``<name>.toml``).

    Returns
    -------
    pathlib.Path
        The written path.
    """
    if getattr(material, "kind", None) not in ("isotropic", "uniaxial", "biaxial") or not hasattr(
            material, "validity_um"):
        raise ValueError(f"material must be an IsotropicMaterial, UniaxialMaterial or "
                         f"BiaxialMaterial, got "
                         f"{type(material).__name__} {material!r:.60}")
    if not isinstance(path, (str, os.PathLike)):
        raise ValueError(f"path = {path!r} must be a file name (str or os.PathLike)")
    path = Path(path)
    if not path.parent.is_dir():
        raise FileNotFoundError(f"cannot save {material.name} to {path}: the folder "
                                f"{path.parent} does not exist")
    data = material_to_dict(material)
    fd, temp_name = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            tomli_w.dump(data, fh)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(temp_name, path)
    except BaseException:
        Path(temp_name).unlink(missing_ok=True)
        raise
    return path


def _key(name: str) -> str:
    """Look-up key: lower case, Greek α/β spelled out, spaces, hyphens and underscores removed."""
    text = name.casefold().replace("α", "alpha").replace("β", "beta")
    return re.sub(r"[\s\-_]+", "", text)


def _band_width(item) -> float:
    """Sort key of the default dataset: the width of its band of data (µm). Taken with ``max``
    over the sorted dataset names, so on equal widths the earlier name wins."""
    lo, hi = item.validity_um
    return hi - lo


class MaterialLibrary:
    """All materials in one folder of dispersion-data files, read once on first use.

    Each file is named ``<name>.toml`` or, where a material has several published datasets,
    ``<name>.<dataset>.toml``.

    Parameters
    ----------
    directory : path-like or importlib.resources.abc.Traversable
        Folder holding ``*.toml`` files.
    """

    def __init__(self, directory):
        self.directory = directory
        self._by_key = None
        self._materials = None
        self._default = None

    def _load(self):
        if self._materials is not None:
            return
        found, by_key = {}, {}
        if not self.directory.is_dir():
            raise FileNotFoundError(f"dispersion data folder {self.directory} not found; the "
                                    f"installation is incomplete (reinstall prismdesign)")
        files = sorted((f for f in self.directory.iterdir() if f.name.endswith(".toml")),
                       key=lambda f: f.name)
        for file in files:
            with importlib.resources.as_file(file) as real_path:
                item = load_material(real_path)
            stem = file.name[:-len(".toml")]
            if stem not in (item.name, f"{item.name}.{item.dataset}"):
                raise ValueError(f"{file}: key 'name' = {item.name!r} with dataset "
                                 f"{item.dataset!r} needs the file name {item.name}.toml or "
                                 f"{item.name}.{item.dataset}.toml, not {file.name}")
            sets = found.setdefault(item.name, {})
            if item.dataset in sets:
                raise ValueError(f"{file}: dataset {item.dataset!r} of {item.name!r} is given "
                                 f"twice; allowed: one file per dataset")
            first = next(iter(sets.values()), None)
            if first is not None and (first.kind, first.optical_sign) != (item.kind,
                                                                          item.optical_sign):
                raise ValueError(f"{file}: kind {item.kind!r}, optical_sign "
                                 f"{item.optical_sign!r} differ from dataset {first.dataset!r} "
                                 f"of {item.name!r}; allowed: datasets of one material agree")
            sets[item.dataset] = item
            for label in (item.name, *item.aliases):
                other = by_key.setdefault(_key(label), item.name)
                if other != item.name:
                    raise ValueError(f"{file}: name or alias {label!r} is already used by "
                                     f"{other!r}; allowed: names unique in the library")
        self._default = {name: max(sorted(sets), key=lambda d: _band_width(sets[d]))
                         for name, sets in found.items()}
        self._materials, self._by_key = found, by_key

    def names(self) -> list:
        """Sorted canonical names of all materials in the folder."""
        self._load()
        return sorted(self._materials)

    def _canonical(self, name):
        if not isinstance(name, str):
            raise UnknownMaterialError(f"material name {name!r} must be a string")
        self._load()
        canonical = self._by_key.get(_key(name))
        if canonical is None:
            keys = difflib.get_close_matches(_key(name), list(self._by_key), n=8, cutoff=0.5)
            close = list(dict.fromkeys(self._by_key[k] for k in keys))[:4]
            hint = (f"closest matches: {', '.join(close)}" if close
                    else f"known: {', '.join(self.names()) or '(none)'}")
            raise UnknownMaterialError(f"unknown material {name!r}; {hint}")
        return canonical

    def datasets(self, name: str) -> list:
        """Dataset names of material ``name``, the default first; see :func:`material_datasets`."""
        canonical = self._canonical(name)
        default = self._default[canonical]
        return [default] + sorted(d for d in self._materials[canonical] if d != default)

    def get(self, name: str, strict: bool = False, dataset=None):
        """The material called ``name`` (or an alias); see :func:`material`."""
        canonical = self._canonical(name)
        sets = self._materials[canonical]
        if dataset is None:
            item = sets[self._default[canonical]]
        else:
            key = dataset.strip().lower() if isinstance(dataset, str) else None
            if key not in sets:
                raise ValueError(f"dataset = {dataset!r} is not a dataset of {canonical}; "
                                 f"allowed: {', '.join(self.datasets(canonical))}")
            item = sets[key]
        return item.with_strict(True) if strict else item


def _data_directory():
    """Folder of the bundled data files (the installed package, else the repository folder)."""
    try:
        folder = importlib.resources.files("prismdesign.dispersion_data")
        if folder.is_dir():
            return folder
    except ModuleNotFoundError:
        pass
    # An editable install may not map the data package; the repository folder is then the
    # source of truth.
    return Path(__file__).resolve().parents[2] / "dispersion_data"


@functools.lru_cache(maxsize=1)
def _bundled() -> MaterialLibrary:
    return MaterialLibrary(_data_directory())


def material(name: str, strict: bool = False, dataset=None):
    """Look up a bundled material by name or alias.

    Parameters
    ----------
    name : str
        Canonical name or alias; case, spaces, hyphens and underscores are ignored
        (``"alpha-BBO"`` = ``"Alpha_BBO"``).
    strict : bool, optional
        If true, the returned material raises ``ValueError`` for wavelengths outside its
        validity range instead of warning.
    dataset : str, optional
        Plain name of one of the material's published datasets (``material_datasets(name)`` lists
        them, e.g. ``"shi-2001"`` for YVO4); default: the one covering the widest band.

    Returns
    -------
    IsotropicMaterial or UniaxialMaterial

    Raises
    ------
    UnknownMaterialError
        No such name; the message lists the closest matches.
    ValueError
        No such dataset; the message lists the material's datasets.
    """
    return _bundled().get(name, strict=strict, dataset=dataset)


def material_datasets(name: str) -> list:
    """Plain names of the published datasets of a bundled material, the default first.

    The default is the dataset whose data cover the widest wavelength band; pass any of the
    names as ``material(name, dataset=...)``.
    """
    return _bundled().datasets(name)


def materials() -> list:
    """Sorted canonical names of the bundled materials (pass any to :func:`material`)."""
    return _bundled().names()
