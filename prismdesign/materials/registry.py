"""Registry of the dispersion formulas: which coefficients each accepts, and their validation.

The loader (``schema.py``) and :class:`~prismdesign.materials.material.DispersionModel` use
:func:`check_coefficients` so that a data file, a fitted model and a hand-built model obey the
same rules.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from . import formulas as f

__all__ = ["FORMULAS", "FormulaSpec", "check_coefficients"]


@dataclass(frozen=True)
class FormulaSpec:
    """What a formula accepts: used to validate data files and fitted models.

    Attributes
    ----------
    name : str
        Formula name as written in a data file (``formula = "..."``).
    equation : str
        The published form, for messages and documentation.
    n, dn_dwl : callable
        ``f(wavelength_um, **coefficients)`` giving n and dn/dλ (µm⁻¹).
    float_keys : dict
        Scalar coefficients and their defaults (``None`` = required).
    list_keys : tuple of str
        Coefficients that are lists of floats.
    int_list_keys : tuple of str
        Coefficients that are lists of integers.
    required : tuple of str
        Keys that must be present.
    equal_length : tuple of tuple of str
        Groups of list keys that must have the same length.
    one_of : tuple of tuple of str
        Groups from which exactly one key must be given (e.g. ``C`` or ``pole_um``).
    pole_keys : tuple of str
        Keyword arguments of :attr:`n` holding poles Cᵢ in µm² (resonance at λ = √Cᵢ).
    inverse_pole_keys : tuple of str
        Keyword arguments of :attr:`n` holding poles Cᵢ in µm⁻² (resonance at λ = 1/√Cᵢ).
    """

    name: str
    equation: str
    n: Callable
    dn_dwl: Callable
    float_keys: dict = field(default_factory=dict)
    list_keys: tuple = ()
    int_list_keys: tuple = ()
    required: tuple = ()
    equal_length: tuple = ()
    one_of: tuple = ()
    pole_keys: tuple = ()
    inverse_pole_keys: tuple = ()

    @property
    def allowed_keys(self) -> tuple:
        """All coefficient keys this formula accepts (``formula`` excluded)."""
        return tuple(self.float_keys) + self.list_keys + self.int_list_keys

    def call_kwargs(self, coefficients: dict) -> dict:
        """Turn validated file coefficients into keyword arguments of :attr:`n`."""
        kwargs = dict(coefficients)
        if "pole_um" in kwargs:
            # Cᵢ = (resonance wavelength)²: some papers tabulate the pole wavelength itself.
            kwargs["C"] = tuple(p * p for p in kwargs.pop("pole_um"))
        for key, default in self.float_keys.items():
            if default is not None:
                kwargs.setdefault(key, default)
        return kwargs

    def poles_um(self, kwargs: dict) -> tuple:
        """Resonance wavelengths (µm) of the model with keyword arguments ``kwargs``, sorted.

        A dispersion formula describes the material only on the side of a resonance where it was
        fitted; beyond it the formula is a different branch of the function, not the material.
        Non-positive poles lie at no real wavelength and are left out.
        """
        poles = [np.sqrt(c) for key in self.pole_keys for c in kwargs.get(key, ()) if c > 0]
        poles += [1.0 / np.sqrt(c) for key in self.inverse_pole_keys for c in kwargs.get(key, ())
                  if c > 0]
        return tuple(sorted(float(p) for p in poles))


FORMULAS: dict[str, FormulaSpec] = {
    spec.name: spec
    for spec in (
        FormulaSpec("sellmeier", "n² = A + Σ Bᵢ λ²/(λ² − Cᵢ) − D λ²",
                    f.sellmeier, f.sellmeier_dn_dwl,
                    float_keys={"A": 1.0, "D": 0.0}, list_keys=("B", "C", "pole_um"),
                    required=("B",), equal_length=(("B", "C"), ("B", "pole_um")),
                    one_of=(("C", "pole_um"),), pole_keys=("C",)),
        FormulaSpec("sellmeier_reciprocal", "n² = A + Σ Bᵢ/(λ² − Cᵢ) − D λ²",
                    f.sellmeier_reciprocal, f.sellmeier_reciprocal_dn_dwl,
                    float_keys={"A": None, "D": 0.0}, list_keys=("B", "C"),
                    required=("A", "B", "C"), equal_length=(("B", "C"),), pole_keys=("C",)),
        FormulaSpec("sellmeier_mixed", "n² = A + Σ Bᵢ/(λ² − Cᵢ) + Σ Fⱼ λ²/(λ² − Gⱼ) − D λ²",
                    f.sellmeier_mixed, f.sellmeier_mixed_dn_dwl,
                    float_keys={"A": None, "D": 0.0}, list_keys=("B", "C", "F", "G"),
                    required=("A", "B", "C", "F", "G"), equal_length=(("B", "C"), ("F", "G")),
                    pole_keys=("C", "G")),
        FormulaSpec("cauchy", "n = Σ aₖ λ^(−2k)", f.cauchy, f.cauchy_dn_dwl,
                    list_keys=("coefficients",), required=("coefficients",)),
        FormulaSpec("power_series_n2", "n² = Σ aₖ λ^pₖ",
                    f.power_series_n2, f.power_series_n2_dn_dwl,
                    list_keys=("coefficients",), int_list_keys=("powers",),
                    required=("coefficients", "powers"),
                    equal_length=(("coefficients", "powers"),)),
        FormulaSpec("gas_two_term", "n − 1 = Σ Bᵢ/(Cᵢ − λ⁻²)",
                    f.gas_two_term, f.gas_two_term_dn_dwl,
                    list_keys=("B", "C"), required=("B", "C"), equal_length=(("B", "C"),),
                    inverse_pole_keys=("C",)),
        FormulaSpec("constant", "n = value", f.constant, f.constant_dn_dwl,
                    float_keys={"value": None}, required=("value",)),
    )
}


def _is_number(value) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def check_coefficients(table: dict, where: str) -> tuple[str, dict]:
    """Validate one dispersion table (``formula`` plus its coefficients).

    Parameters
    ----------
    table : dict
        The parsed table, e.g. ``{"formula": "sellmeier", "B": [...], "C": [...]}``.
    where : str
        Location prefix for messages, e.g. ``"calcite.toml [ordinary]"``.

    Returns
    -------
    formula : str
        The formula name.
    coefficients : dict
        Coefficients with lists turned into tuples of floats (ints for integer lists).

    Raises
    ------
    ValueError
        One line naming ``where``, the key, the value and what is allowed.
    """
    if not isinstance(table, dict):
        raise ValueError(f"{where}: expected a table with 'formula' and coefficients, "
                         f"got {table!r}")
    formula = table.get("formula")
    if formula is None:
        raise ValueError(f"{where}: missing key 'formula'; allowed: {', '.join(FORMULAS)}")
    if formula not in FORMULAS:
        raise ValueError(f"{where}: key 'formula' = {formula!r} is unknown; "
                         f"allowed: {', '.join(FORMULAS)}")
    spec = FORMULAS[formula]
    coefficients = {}
    for key, value in table.items():
        if key == "formula":
            continue
        if key not in spec.allowed_keys:
            raise ValueError(f"{where}: unknown key {key!r} = {value!r} for formula "
                             f"{formula!r}; allowed: {', '.join(spec.allowed_keys)}")
        if key in spec.float_keys:
            if not _is_number(value) or not np.isfinite(value):
                raise ValueError(f"{where}: key {key!r} = {value!r} must be a finite number")
            coefficients[key] = float(value)
        else:
            integer = key in spec.int_list_keys
            ok = isinstance(value, (list, tuple)) and len(value) > 0 and all(
                (isinstance(v, int) and not isinstance(v, bool)) if integer
                else (_is_number(v) and np.isfinite(v)) for v in value)
            if not ok:
                what = "integers" if integer else "finite numbers"
                raise ValueError(f"{where}: key {key!r} = {value!r} must be a non-empty "
                                 f"list of {what}")
            coefficients[key] = tuple(int(v) if integer else float(v) for v in value)
    for group in spec.one_of:
        given = [k for k in group if k in coefficients]
        if len(given) != 1:
            raise ValueError(f"{where}: formula {formula!r} needs exactly one of "
                             f"{' or '.join(map(repr, group))}, got {len(given)}")
    for key in spec.required:
        if key not in coefficients:
            raise ValueError(f"{where}: missing key {key!r} for formula {formula!r} "
                             f"({spec.equation}); required: {', '.join(spec.required)}")
    for group in spec.equal_length:
        present = [k for k in group if k in coefficients]
        lengths = {k: len(coefficients[k]) for k in present}
        if len(present) == len(group) and len(set(lengths.values())) > 1:
            detail = ", ".join(f"{k} has {n}" for k, n in lengths.items())
            raise ValueError(f"{where}: lists {' and '.join(map(repr, group))} must have "
                             f"equal length ({detail})")
    return formula, coefficients
