"""The dispersion-data file schema (version 1): parsed TOML <-> material objects.

The schema is described in ``DEVELOPERS.md`` ("Dispersion data files").  Validation is strict:
every unknown key, missing key, wrong type or bad value raises a one-line ``ValueError`` naming
the file, the key, the value and what is allowed.  No user string is ever evaluated.
"""
from __future__ import annotations

import numpy as np

from .registry import check_coefficients
from .activity import OpticalActivity
from .material import (BiaxialMaterial, DispersionModel, IsotropicMaterial, Reference,
                       UniaxialMaterial)

__all__ = ["SCHEMA_VERSION", "material_from_dict", "material_to_dict"]

SCHEMA_VERSION = 1

_COMMON = {"schema", "name", "dataset", "aliases", "kind", "temperature_c", "validity_um",
           "transparency_um", "notes", "reference", "thermo_optic", "optical_activity"}
_KIND_KEYS = {"uniaxial": {"optical_sign", "ordinary", "extraordinary"},
              "isotropic": {"index"},
              "biaxial": {"x", "y", "z"}}
_KINDS_ALLOWED = "'uniaxial', 'isotropic', 'biaxial'"
_REQUIRED = {"schema", "name", "kind", "temperature_c", "validity_um", "reference"}
_REFERENCE_KEYS = {"authors": True, "title": True, "year": True, "journal": False,
                   "volume": False, "pages": False, "doi": False}
_THERMO_KEYS = {"uniaxial": ("dn_dt_o_per_c", "dn_dt_e_per_c"), "isotropic": ("dn_dt_per_c",)}


def _fail(where, key, value, allowed):
    raise ValueError(f"{where}: key {key!r} = {value!r} is not allowed; allowed: {allowed}")


def _number(where, key, value):
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not np.isfinite(value):
        _fail(where, key, value, "a finite number")
    return float(value)


def _string(where, key, value):
    if not isinstance(value, str):
        _fail(where, key, value, "a string")
    return value


def _band(where, key, value):
    ok = (isinstance(value, list) and len(value) == 2
          and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in value)
          and all(np.isfinite(v) for v in value) and 0 < value[0] < value[1])
    if not ok:
        _fail(where, key, value, "two increasing positive wavelengths in µm, e.g. [0.2, 2.2]")
    return (float(value[0]), float(value[1]))


def _check_keys(where, table, allowed, required):
    for key, value in table.items():
        if key not in allowed:
            raise ValueError(f"{where}: unknown key {key!r} = {value!r}; allowed: "
                             f"{', '.join(sorted(allowed))}")
    for key in sorted(required):
        if key not in table:
            raise ValueError(f"{where}: missing key {key!r}; required: "
                             f"{', '.join(sorted(required))}")


def _reference(where, table):
    if not isinstance(table, dict):
        _fail(where, "reference", table, "a table with authors, title, year, journal, ...")
    where = f"{where} [reference]"
    _check_keys(where, table, set(_REFERENCE_KEYS), {k for k, r in _REFERENCE_KEYS.items() if r})
    year = table["year"]
    if isinstance(year, bool) or not isinstance(year, int) or not 1600 <= year <= 2200:
        _fail(where, "year", year, "an integer year such as 1999")
    text = {k: _string(where, k, table.get(k, "")) for k in
            ("authors", "title", "journal", "volume", "pages")}
    doi = table.get("doi")
    return Reference(**text, year=year, doi=None if doi is None else _string(where, "doi", doi))


def _dispersion(where, kind_key, table):
    formula, coefficients = check_coefficients(table, f"{where} [{kind_key}]")
    return DispersionModel(formula, coefficients)


def _thermo(where, kind, table):
    if not isinstance(table, dict):
        _fail(where, "thermo_optic", table, "a table with model, dn/dT values and reference")
    where = f"{where} [thermo_optic]"
    keys = _THERMO_KEYS[kind]
    _check_keys(where, table, {"model", "reference", "temperature_range_c", *keys},
                {"model", *keys})
    if table["model"] != "linear":
        _fail(where, "model", table["model"], "'linear'")
    reference = _string(where, "reference", table.get("reference", ""))
    values = {k: _number(where, k, table[k]) for k in keys}
    if "temperature_range_c" in table:
        span = table["temperature_range_c"]
        if (not isinstance(span, list) or len(span) != 2
                or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in span)
                or not -273.15 <= span[0] < span[1] or not np.isfinite(span[1])):
            _fail(where, "temperature_range_c", span, "two increasing temperatures in °C, "
                  "e.g. [20.0, 50.0]")
        values["thermo_range_c"] = (float(span[0]), float(span[1]))
    return values, reference


_ACTIVITY_KEYS = {"model", "A_deg_um2_per_mm", "pole_um2", "constant_deg_per_mm", "validity_um",
                  "transverse_ratio", "reference"}


def _number_list(where, key, value):
    if (not isinstance(value, list) or not value
            or any(isinstance(v, bool) or not isinstance(v, (int, float)) or not np.isfinite(v)
                   for v in value)):
        _fail(where, key, value, "a non-empty list of finite numbers")
    return tuple(float(v) for v in value)


def _activity(where, kind, table):
    """The ``[optical_activity]`` table: a Drude sum for the rotatory power along the axis."""
    if not isinstance(table, dict):
        _fail(where, "optical_activity", table, "a table with model, A_deg_um2_per_mm, "
              "pole_um2, validity_um and reference")
    if kind != "uniaxial":
        _fail(where, "optical_activity", "[table]", "only in uniaxial crystal files")
    where = f"{where} [optical_activity]"
    _check_keys(where, table, _ACTIVITY_KEYS,
                {"model", "A_deg_um2_per_mm", "pole_um2", "validity_um", "reference"})
    if table["model"] != "drude":
        _fail(where, "model", table["model"], "'drude'")
    amplitudes = _number_list(where, "A_deg_um2_per_mm", table["A_deg_um2_per_mm"])
    poles = _number_list(where, "pole_um2", table["pole_um2"])
    if len(amplitudes) != len(poles):
        _fail(where, "pole_um2", table["pole_um2"],
              f"one pole per amplitude ({len(amplitudes)})")
    ratio = table.get("transverse_ratio")
    try:
        return OpticalActivity(
            amplitudes_deg_um2_per_mm=amplitudes, poles_um2=poles,
            validity_um=_band(where, "validity_um", table["validity_um"]),
            reference=_string(where, "reference", table["reference"]),
            constant_deg_per_mm=_number(where, "constant_deg_per_mm",
                                        table.get("constant_deg_per_mm", 0.0)),
            transverse_ratio=None if ratio is None else _number(where, "transverse_ratio", ratio))
    except ValueError as error:
        message = str(error)
        raise ValueError(message if message.startswith(where) else f"{where}: {message}") \
            from None


def _activity_table(activity) -> dict:
    table = {"model": "drude", "A_deg_um2_per_mm": list(activity.amplitudes_deg_um2_per_mm),
             "pole_um2": list(activity.poles_um2),
             "constant_deg_per_mm": activity.constant_deg_per_mm,
             "validity_um": list(activity.validity_um), "reference": activity.reference}
    if activity.transverse_ratio is not None:
        table["transverse_ratio"] = activity.transverse_ratio
    return table


def material_from_dict(data: dict, where: str):
    """Build a material from a parsed schema-1 document.

    Parameters
    ----------
    data : dict
        The parsed TOML document.
    where : str
        Name of the source (file path) used in error messages.

    Returns
    -------
    IsotropicMaterial or UniaxialMaterial

    Raises
    ------
    ValueError
        One line naming ``where``, the key, the value and what is allowed.
    """
    schema = data.get("schema")
    if schema is None:
        raise ValueError(f"{where}: missing key 'schema'; allowed: schema = {SCHEMA_VERSION}")
    if isinstance(schema, bool) or schema != SCHEMA_VERSION:
        _fail(where, "schema", schema, str(SCHEMA_VERSION))
    kind = data.get("kind")
    if kind not in _KIND_KEYS:
        if kind is None:
            raise ValueError(f"{where}: missing key 'kind'; allowed: {_KINDS_ALLOWED}")
        _fail(where, "kind", kind, _KINDS_ALLOWED)
    _check_keys(where, data, _COMMON | _KIND_KEYS[kind], _REQUIRED | _KIND_KEYS[kind])

    name = _string(where, "name", data["name"])
    if not name.strip() or name != name.strip():
        _fail(where, "name", name, "a non-empty name without surrounding spaces")
    aliases = data.get("aliases", [])
    if not isinstance(aliases, list) or not all(isinstance(a, str) and a.strip() for a in aliases):
        _fail(where, "aliases", aliases, "a list of non-empty strings")
    dataset = _string(where, "dataset", data.get("dataset", ""))
    if "dataset" in data and not dataset:
        _fail(where, "dataset", dataset, "a plain name such as 'ghosh-1999'")
    common = dict(
        name=name,
        dataset=dataset,
        aliases=tuple(aliases),
        temperature_c=_number(where, "temperature_c", data["temperature_c"]),
        validity_um=_band(where, "validity_um", data["validity_um"]),
        transparency_um=(_band(where, "transparency_um", data["transparency_um"])
                         if "transparency_um" in data else None),
        notes=_string(where, "notes", data.get("notes", "")),
        reference=_reference(where, data["reference"]),
    )
    if "thermo_optic" in data and kind == "biaxial":
        _fail(where, "thermo_optic", "[table]", "only in uniaxial and isotropic files (no "
              "thermo-optic model for biaxial crystals yet)")
    if "thermo_optic" in data:
        dn_dt, common["thermo_reference"] = _thermo(where, kind, data["thermo_optic"])
        common.update(dn_dt)
    if "optical_activity" in data:
        activity = _activity(where, kind, data["optical_activity"])
    try:
        if kind == "isotropic":
            return IsotropicMaterial(index=_dispersion(where, "index", data["index"]), **common)
        if kind == "biaxial":
            return BiaxialMaterial(**{f"index_{axis}": _dispersion(where, axis, data[axis])
                                      for axis in "xyz"}, **common)
        sign = data["optical_sign"]
        if sign not in ("positive", "negative"):
            _fail(where, "optical_sign", sign, "'positive', 'negative'")
        return UniaxialMaterial(ordinary=_dispersion(where, "ordinary", data["ordinary"]),
                                extraordinary=_dispersion(where, "extraordinary",
                                                          data["extraordinary"]),
                                optical_sign=sign, optical_activity=(
                                    activity if "optical_activity" in data else None),
                                **common)
    except ValueError as error:
        message = str(error)
        raise ValueError(message if message.startswith(where) else f"{where}: {message}") \
            from None


def _dispersion_table(model: DispersionModel) -> dict:
    table = {"formula": model.formula}
    for key, value in model.coefficients.items():
        table[key] = list(value) if isinstance(value, tuple) else value
    return table


def material_to_dict(material) -> dict:
    """The schema-1 document of ``material`` (inverse of :func:`material_from_dict`)."""
    data = {"schema": SCHEMA_VERSION, "name": material.name, "dataset": material.dataset,
            "aliases": list(material.aliases), "kind": material.kind}
    if material.kind == "uniaxial":
        data["optical_sign"] = material.optical_sign
    data["temperature_c"] = float(material.temperature_c)
    data["validity_um"] = list(material.validity_um)
    if material.transparency_um is not None:
        data["transparency_um"] = list(material.transparency_um)
    data["notes"] = material.notes
    if material.reference is None:
        raise ValueError(f"{material.name}: reference = None cannot be saved; allowed: a "
                         f"Reference naming the source of the numbers")
    ref = material.reference
    data["reference"] = {k: getattr(ref, k) for k in
                         ("authors", "title", "journal", "volume", "pages", "year")}
    if ref.doi:
        data["reference"]["doi"] = ref.doi
    if material.kind == "biaxial":
        for axis in "xyz":
            data[axis] = _dispersion_table(getattr(material, f"index_{axis}"))
        return data
    if material.kind == "uniaxial":
        data["ordinary"] = _dispersion_table(material.ordinary)
        data["extraordinary"] = _dispersion_table(material.extraordinary)
        dn_dt = {"dn_dt_o_per_c": material.dn_dt_o_per_c,
                 "dn_dt_e_per_c": material.dn_dt_e_per_c}
    else:
        data["index"] = _dispersion_table(material.index)
        dn_dt = {"dn_dt_per_c": material.dn_dt_per_c}
    if all(v is not None for v in dn_dt.values()):
        data["thermo_optic"] = {"model": "linear", **dn_dt,
                                "reference": material.thermo_reference}
        if material.thermo_range_c is not None:
            data["thermo_optic"]["temperature_range_c"] = list(material.thermo_range_c)
    if getattr(material, "optical_activity", None) is not None:
        data["optical_activity"] = _activity_table(material.optical_activity)
    return data
