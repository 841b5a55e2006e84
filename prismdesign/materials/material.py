"""Material objects: isotropic, uniaxial and biaxial media with published dispersion and provenance.

Isotropic and uniaxial media answer ``indices(wavelength_um, temperature_c=None) -> (n_o, n_e)``
(an isotropic medium returns ``(n, n)``), which is what the ray tracer uses; a biaxial crystal
answers ``(n_x, n_y, n_z)``, its three principal indices (the tracer's medium adds the crystal's
orientation, see :class:`~prismdesign.optics.Medium`).  Scalar input gives a float;
arrays broadcast (wavelength against temperature).  The citation, validity range and data
temperature travel with the object.
"""
from __future__ import annotations

import re
import sys
import unicodedata
import warnings
from dataclasses import dataclass, field, replace
from typing import Optional

import numpy as np

from .._display import shown
from .activity import HANDEDNESS, ActiveIndices, OpticalActivity, chirality_from_rotation
from .registry import FORMULAS, check_coefficients

__all__ = [
    "BiaxialMaterial",
    "DispersionModel",
    "DispersionRangeWarning",
    "IsotropicMaterial",
    "Reference",
    "UniaxialMaterial",
]


class DispersionRangeWarning(UserWarning):
    """A wavelength lies outside the range over which the dispersion data were fitted."""


@dataclass(frozen=True)
class Reference:
    """Bibliographic source of a material's numbers.

    Attributes
    ----------
    authors, title : str
        As printed in the source.
    journal, volume, pages : str
        Journal (or book / standard) name, volume and page range; may be ``""`` for a book.
    year : int
        Publication year.
    doi : str or None
        Digital object identifier, when one exists.
    """

    authors: str
    title: str
    journal: str
    volume: str
    pages: str
    year: int
    doi: Optional[str] = None

    @property
    def short(self) -> str:
        """First author's surname and the year, e.g. ``"Ghosh 1999"``.

        Typical-value entries without a source read ``"typical values"``; entries whose title
        marks the numbers as recalled get ``" (from memory)"`` appended.
        """
        if self.authors.lower().startswith("none"):
            return "typical values"
        first = self.authors.replace(" and ", ",").replace(";", ",").split(",")[0].strip()
        surname = first.split()[-1] if first.split() else first
        # Numbers the data file marks as recalled, not checked against the source, say so.
        unverified = " (from memory)" if "from memory" in self.title.lower() else ""
        return f"{surname} {self.year}{unverified}"

    def __str__(self) -> str:
        parts = [self.authors, f'"{self.title}"']
        where = " ".join(p for p in (self.journal, self.volume) if p)
        if self.pages:
            where = f"{where}, {self.pages}" if where else self.pages
        if where:
            parts.append(where)
        text = ", ".join(parts) + f" ({self.year})"
        return text + (f", doi:{self.doi}" if self.doi else "")


@dataclass(frozen=True)
class DispersionModel:
    """One published dispersion formula with its coefficients.

    Attributes
    ----------
    formula : str
        A name from :data:`prismdesign.materials.formulas.FORMULAS` (e.g. ``"sellmeier"``).
    coefficients : dict
        Keyword coefficients of that formula as written in a data file (lists as tuples).
    """

    formula: str
    coefficients: dict = field(hash=False)

    def __post_init__(self):
        formula, coeffs = check_coefficients({"formula": self.formula, **self.coefficients},
                                             f"dispersion model {self.formula!r}")
        object.__setattr__(self, "coefficients", coeffs)
        object.__setattr__(self, "_kwargs", FORMULAS[formula].call_kwargs(coeffs))

    def n(self, wavelength_um):
        """Refractive index at ``wavelength_um`` (µm, any shape); no range checks."""
        return FORMULAS[self.formula].n(wavelength_um, **self._kwargs)

    def dn_dwl(self, wavelength_um):
        """dn/dλ in µm⁻¹ at ``wavelength_um`` (µm, any shape); no range checks."""
        return FORMULAS[self.formula].dn_dwl(wavelength_um, **self._kwargs)

    @property
    def poles_um(self) -> tuple:
        """Resonance wavelengths (µm) of the formula, sorted; empty for pole-free forms."""
        return FORMULAS[self.formula].poles_um(self._kwargs)


DATASET_PATTERN = re.compile(r"[a-z0-9]+(-[a-z0-9]+)*")


def dataset_from_reference(reference) -> str:
    """Plain dataset name made from a reference: first author's surname and year, e.g.
    ``"ghosh-1999"``; ``"typical"`` for typical-value entries, ``"unnamed"`` without one."""
    if reference is None:
        return "unnamed"
    if reference.authors.lower().startswith("none"):
        return "typical"
    surname = reference.short.split(" (")[0].rsplit(" ", 1)[0]
    ascii_ = unicodedata.normalize("NFKD", surname).encode("ascii", "ignore").decode()
    words = re.findall(r"[a-z0-9]+", ascii_.lower())
    return "-".join(words + [str(reference.year)])


def _unphysical(model: DispersionModel, n) -> np.ndarray:
    """Where ``n`` is no index of a material: not finite, or n ≤ 1.

    A stated constant index of exactly 1 (vacuum) is exact, not a failing fit.
    """
    n = np.asarray(n, dtype=float)
    return ~((n > 1.0) | ((n == 1.0) & (model.formula == "constant")))


def _warn(message: str, category) -> None:
    """Warn at the first frame outside this module, so the message points at the user's call."""
    frame, level = sys._getframe(1), 2
    while frame is not None and frame.f_globals.get("__name__") == __name__:
        frame, level = frame.f_back, level + 1
    warnings.warn(message, category, stacklevel=level)


def _as_result(value, scalar: bool):
    return float(value) if scalar else value


@dataclass(frozen=True)
class _MaterialBase:
    """Range, temperature and warning logic shared by both kinds (not public)."""

    def __post_init__(self):
        if not isinstance(self.name, str) or not self.name.strip():
            raise ValueError(f"material name = {self.name!r} must be a non-empty string")
        t0 = self.temperature_c
        if isinstance(t0, (bool, str)) or not np.isscalar(t0) or not np.isfinite(t0) \
                or t0 <= -273.15:
            raise ValueError(f"{self.name}: temperature_c = {t0!r} must be a finite number of "
                             f"°C above -273.15")
        lo, hi = self.validity_um
        if not (0.0 < lo < hi and np.isfinite(hi)):
            raise ValueError(f"{self.name}: validity_um = {list(self.validity_um)} must be two "
                             f"increasing positive wavelengths in µm")
        object.__setattr__(self, "validity_um", (float(lo), float(hi)))
        object.__setattr__(self, "aliases", tuple(self.aliases))
        if not self.dataset:
            object.__setattr__(self, "dataset", dataset_from_reference(self.reference))
        if not isinstance(self.dataset, str) or not DATASET_PATTERN.fullmatch(self.dataset):
            raise ValueError(f"{self.name}: dataset = {self.dataset!r} must be a plain name of "
                             f"lower-case letters, digits and single hyphens, e.g. 'ghosh-1999'")
        if self.transparency_um is not None:
            object.__setattr__(self, "transparency_um", tuple(map(float, self.transparency_um)))
        poles = sorted({p for model in self._models().values() for p in model.poles_um})
        inside = [p for p in poles if lo <= p <= hi]
        if inside:
            raise ValueError(f"{self.name}: its dispersion formula has a resonance at "
                             f"{inside[0]:.6g} µm, inside validity_um = {[lo, hi]}; allowed: "
                             f"poles outside the range of the data")
        # The formula describes the material only between the resonances that bracket its data.
        below = [p for p in poles if p < lo]
        above = [p for p in poles if p > hi]
        object.__setattr__(self, "_poles_around", (below[-1] if below else None,
                                                   above[0] if above else None))
        # Evaluating the models across the band catches coefficient sets that go unphysical
        # (n² ≤ 0, a pole) inside their own stated range.
        grid = np.geomspace(lo, hi, 65)
        for part, model in self._models().items():
            try:
                n = model.n(grid)
            except ValueError as error:
                raise ValueError(f"{self.name} [{part}]: {error}; this lies inside validity_um "
                                 f"= {list(self.validity_um)}") from None
            bad = _unphysical(model, n)
            if np.any(bad):
                raise ValueError(f"{self.name} [{part}]: n = {float(n[bad][0]):.6g} at "
                                 f"wavelength_um = {float(grid[bad][0]):.6g}, inside validity_um "
                                 f"= {list(self.validity_um)}; allowed: n > 1 across the data")

    def _models(self):
        raise NotImplementedError

    @property
    def label(self) -> str:
        """Name and dataset as shown in tables and figures, e.g. ``"yvo4 (lomheim-1978)"``."""
        return f"{self.name} ({self.dataset})"

    def _transmits_um(self):
        """Transparency window, widened to the data range where a file states it narrower (the
        data were measured through the material, so it transmits wherever they hold)."""
        if self.transparency_um is None:
            return 0.0, np.inf
        (t_lo, t_hi), (lo, hi) = self.transparency_um, self.validity_um
        return min(t_lo, lo), max(t_hi, hi)

    @property
    def usable_um(self) -> tuple:
        """(min, max) wavelength in µm at which an index is given at all.

        The transparency window, narrowed to the stretch between the dispersion formula's
        resonances that bracket its data; without a transparency window, that stretch alone
        (``0`` and ``inf`` where no resonance bounds it).  Inside it but outside
        :attr:`validity_um` the index is extrapolated with a warning; outside it every call
        raises ``ValueError``.
        """
        lo, hi = self._transmits_um()
        below, above = self._poles_around
        return (max(lo, below) if below is not None else lo,
                min(hi, above) if above is not None else hi)

    def _check_usable(self, lam):
        """Refuse wavelengths where the material is opaque or the formula passes a resonance."""
        t_lo, t_hi = self._transmits_um()
        below, above = self._poles_around
        outside = (lam < t_lo) | (lam > t_hi)
        # At a resonance itself the formula is infinite: the poles are excluded, not reached.
        if below is not None:
            outside |= lam <= below
        if above is not None:
            outside |= lam >= above
        if not np.any(outside):
            return
        lo, hi = self.usable_um
        worst = float(lam[outside].min() if np.any(lam[outside] <= lo) else lam[outside].max())
        window = f"{lo:g}-{hi:g} µm"
        if not t_lo <= worst <= t_hi:
            why = (f"outside its transparency window {t_lo:g}-{t_hi:g} µm, where the material "
                   f"is opaque")
        else:
            pole = below if below is not None and worst <= below else above
            why = (f"beyond the resonance of its dispersion formula at {pole:.4g} µm, where the "
                   f"formula no longer describes the material")
        raise ValueError(f"{self.label}: wavelength_um = {worst:g} lies {why}; no index is given "
                         f"there (allowed: {window}, data {self.validity_um[0]:g}-"
                         f"{self.validity_um[1]:g} µm, {self._source()})")

    def _check_physical(self, model, lam, n):
        """Refuse an index a formula gives but no material has (n ≤ 1 or not finite)."""
        n = np.asarray(n, dtype=float)
        bad = _unphysical(model, n)
        if np.any(bad):
            where = np.broadcast_to(lam, n.shape)[bad]
            raise ValueError(f"{self.label}: its dispersion formula gives n = "
                             f"{float(n[bad].flat[0]):.6g} at wavelength_um = "
                             f"{float(where.flat[0]):g}, not a physical index (allowed: finite "
                             f"n > 1; data {self.validity_um[0]:g}-{self.validity_um[1]:g} µm, "
                             f"{self._source()})")

    def _wavelength(self, wavelength_um, strict):
        try:
            # None would become NaN and True 1 µm, text would be parsed: refuse all three.
            if wavelength_um is None or isinstance(wavelength_um, (str, bytes, bool, np.bool_)):
                raise TypeError
            lam = np.asarray(wavelength_um, dtype=float)
            if np.asarray(wavelength_um).dtype.kind in "USb":
                raise TypeError
        except (TypeError, ValueError):
            raise ValueError(f"wavelength_um = {wavelength_um!r} must be a number or an array "
                             f"of numbers (µm)") from None
        bad = ~np.isfinite(lam) | (lam <= 0.0)
        if np.any(bad):
            raise ValueError(f"wavelength_um = {float(lam[bad].flat[0])!r} must be positive and "
                             f"finite (µm)")
        self._check_usable(lam)
        lo, hi = self.validity_um
        outside = (lam < lo) | (lam > hi)
        if np.any(outside):
            if lam.ndim == 0:
                shown = f"wavelength_um = {float(lam):g} is"
            else:
                ends = ([f"down to {lam.min():g}"] if lam.min() < lo else []) + \
                    ([f"up to {lam.max():g}"] if lam.max() > hi else [])
                shown = f"wavelength_um {' and '.join(ends)} µm lies"
            message = (f"{self.name}: {shown} outside the validity range {lo:g}-{hi:g} µm of "
                       f"its dispersion data ({self._source()})")
            if self.strict if strict is None else strict:
                raise ValueError(message)
            _warn(message + "; the values are extrapolated", DispersionRangeWarning)
        return lam

    def _source(self) -> str:
        return self.reference.short if self.reference is not None else "no reference"

    def _shift(self, temperature_c, dn_dt, strict):
        """Linear thermo-optic change dn/dT·(T − T0); 0 when T is the data temperature."""
        if temperature_c is None:
            return 0.0
        try:
            if isinstance(temperature_c, (str, bytes, bool, np.bool_)):
                raise TypeError
            t = np.asarray(temperature_c, dtype=float)
        except (TypeError, ValueError):
            raise ValueError(f"temperature_c = {temperature_c!r} must be a number (°C)") from None
        if not np.all(np.isfinite(t)) or np.any(t < -273.15):
            raise ValueError(f"temperature_c = {temperature_c!r} must be finite and above "
                             f"-273.15 °C")
        delta = t - self.temperature_c
        if dn_dt is not None:
            span = self.thermo_range_c
            if span is not None and np.any((t < span[0]) | (t > span[1])):
                message = (f"{self.name}: temperature_c = {shown(temperature_c)} lies outside "
                           f"{span[0]:g}-{span[1]:g} °C, where its linear dn/dT was derived; "
                           f"the shift is extrapolated")
                if self.strict if strict is None else strict:
                    raise ValueError(message)
                _warn(message, DispersionRangeWarning)
            return dn_dt * delta
        if np.any(delta != 0.0):
            message = (f"{self.name}: no thermo-optic data; indices are for the data "
                       f"temperature {self.temperature_c:g} °C, not temperature_c = "
                       f"{temperature_c!r}")
            if self.strict if strict is None else strict:
                raise ValueError(message)
            if "temperature" not in self._warned:
                self._warned.add("temperature")
                _warn(message, UserWarning)
        return np.zeros_like(delta)

    def _evaluate(self, model, dn_dt, wavelength_um, temperature_c, strict, group=False):
        lam = self._wavelength(wavelength_um, strict)
        return self._value(model, dn_dt, lam, temperature_c, strict, group)

    def _value(self, model, dn_dt, lam, temperature_c, strict, group=False):
        """Index (or group index) for an already checked wavelength array."""
        shift = self._shift(temperature_c, dn_dt, strict)
        if np.ndim(temperature_c) and np.ndim(lam):
            try:
                np.broadcast_shapes(np.shape(lam), np.shape(temperature_c))
            except ValueError:
                raise ValueError(f"{self.name}: wavelength_um of shape {np.shape(lam)} and "
                                 f"temperature_c of shape {np.shape(temperature_c)} do not "
                                 f"broadcast; allowed: numpy-broadcastable shapes") from None
        try:
            n = model.n(lam)
        except ValueError as error:
            raise ValueError(f"{self.label}: {error}; data {self.validity_um[0]:g}-"
                             f"{self.validity_um[1]:g} µm, {self._source()}") from None
        value = n + shift
        self._check_physical(model, lam, value)
        if group:
            value = value - lam * model.dn_dwl(lam)
        scalar = np.ndim(value) == 0
        return _as_result(value, scalar)

    def with_strict(self, strict: bool = True):
        """A copy whose range (and temperature) problems raise instead of warning."""
        return replace(self, strict=bool(strict))


@dataclass(frozen=True)
class IsotropicMaterial(_MaterialBase):
    """An optically isotropic medium (glass, cement, gas, vacuum).

    Attributes
    ----------
    name : str
        Canonical lower-case name.
    index : DispersionModel
        Dispersion of the refractive index.
    validity_um : tuple of float
        (min, max) wavelength in µm over which the dispersion data hold.
    temperature_c : float
        Temperature of the data in °C.
    reference : Reference or None
        Source of the numbers.
    aliases, transparency_um, notes
        Alternative look-up names, transmission window (µm) and free-text remarks.
    dn_dt_per_c : float or None
        Linear thermo-optic coefficient in 1/°C, if published.
    thermo_reference : str
        Source of the thermo-optic coefficient.
    thermo_range_c : (float, float) or None
        Temperatures (°C) over which the linear dn/dT was derived; outside it the shift warns
        (raises in strict mode).
    strict : bool
        Raise instead of warn for wavelengths outside ``validity_um``.
    """

    name: str
    index: DispersionModel
    validity_um: tuple
    temperature_c: float
    reference: Optional[Reference]
    aliases: tuple = ()
    transparency_um: Optional[tuple] = None
    notes: str = ""
    dn_dt_per_c: Optional[float] = None
    thermo_reference: str = ""
    thermo_range_c: Optional[tuple] = None
    dataset: str = ""
    strict: bool = False
    _warned: set = field(default_factory=set, init=False, repr=False, compare=False, hash=False)
    _poles_around: tuple = field(default=(None, None), init=False, repr=False, compare=False,
                                 hash=False)

    kind = "isotropic"
    optical_sign = None

    def _models(self):
        return {"index": self.index}

    def n(self, wavelength_um, temperature_c=None, *, strict=None):
        """Refractive index at ``wavelength_um`` (µm); float for scalar input, else an array.

        ``temperature_c`` (°C) defaults to the data temperature; ``strict`` overrides the
        material's setting for out-of-range wavelengths.
        """
        return self._evaluate(self.index, self.dn_dt_per_c, wavelength_um, temperature_c, strict)

    def group_index(self, wavelength_um, temperature_c=None, *, strict=None):
        """Group index n − λ dn/dλ at ``wavelength_um`` (µm)."""
        return self._evaluate(self.index, self.dn_dt_per_c, wavelength_um, temperature_c, strict,
                              group=True)

    def dn_dwl(self, wavelength_um, *, strict=None):
        """dn/dλ in µm⁻¹ at ``wavelength_um`` (µm)."""
        lam = self._wavelength(wavelength_um, strict)
        return _as_result(self.index.dn_dwl(lam), lam.ndim == 0)

    def indices(self, wavelength_um, temperature_c=None, *, strict=None):
        """``(n, n)``: the same interface as :meth:`UniaxialMaterial.indices`."""
        n = self.n(wavelength_um, temperature_c, strict=strict)
        return n, n


@dataclass(frozen=True)
class UniaxialMaterial(_MaterialBase):
    """A uniaxial crystal with ordinary and extraordinary dispersion.

    Attributes
    ----------
    name : str
        Canonical lower-case name.
    ordinary, extraordinary : DispersionModel
        Dispersion of n_o and n_e (n_e is the index for light polarised along the optic axis).
    optical_sign : {"positive", "negative"}
        Sign of n_e − n_o; checked against the data across the validity range.
    validity_um, temperature_c, reference, aliases, transparency_um, notes, thermo_reference,
    thermo_range_c,
    strict
        As for :class:`IsotropicMaterial`.
    dn_dt_o_per_c, dn_dt_e_per_c : float or None
        Linear thermo-optic coefficients in 1/°C, if published.
    """

    name: str
    ordinary: DispersionModel
    extraordinary: DispersionModel
    optical_sign: str
    validity_um: tuple
    temperature_c: float
    reference: Optional[Reference]
    aliases: tuple = ()
    transparency_um: Optional[tuple] = None
    notes: str = ""
    dn_dt_o_per_c: Optional[float] = None
    dn_dt_e_per_c: Optional[float] = None
    thermo_reference: str = ""
    thermo_range_c: Optional[tuple] = None
    dataset: str = ""
    strict: bool = False
    optical_activity: Optional[OpticalActivity] = None
    handedness: Optional[str] = None
    _warned: set = field(default_factory=set, init=False, repr=False, compare=False, hash=False)
    _poles_around: tuple = field(default=(None, None), init=False, repr=False, compare=False,
                                 hash=False)

    kind = "uniaxial"

    def __post_init__(self):
        if self.optical_sign not in ("positive", "negative"):
            raise ValueError(f"{self.name}: optical_sign = {self.optical_sign!r}; allowed: "
                             f"'positive', 'negative'")
        if (self.dn_dt_o_per_c is None) != (self.dn_dt_e_per_c is None):
            raise ValueError(f"{self.name}: give both dn_dt_o_per_c and dn_dt_e_per_c or neither")
        if self.handedness is not None:
            if self.handedness not in HANDEDNESS:
                raise ValueError(f"{self.name}: handedness = {self.handedness!r}; allowed: "
                                 f"'right', 'left' or None")
            if self.optical_activity is None:
                raise ValueError(f"{self.name}: handedness = {self.handedness!r} needs optical "
                                 f"activity data ([optical_activity]); this dataset has none")
        super().__post_init__()
        grid = np.geomspace(*self.validity_um, 65)
        mean_dn = float(np.mean(self.extraordinary.n(grid) - self.ordinary.n(grid)))
        data_sign = "positive" if mean_dn > 0 else "negative"
        if data_sign != self.optical_sign:
            raise ValueError(f"{self.name}: optical_sign = {self.optical_sign!r} but the data give "
                             f"mean n_e - n_o = {mean_dn:.3g} over {self.validity_um} µm; "
                             f"allowed: {data_sign!r}")

    def _models(self):
        return {"ordinary": self.ordinary, "extraordinary": self.extraordinary}

    def n_o(self, wavelength_um, temperature_c=None, *, strict=None):
        """Ordinary index at ``wavelength_um`` (µm); float for scalar input, else an array.

        ``temperature_c`` (°C) defaults to the data temperature; ``strict`` overrides the
        material's setting for out-of-range wavelengths.
        """
        return self._evaluate(self.ordinary, self.dn_dt_o_per_c, wavelength_um, temperature_c,
                              strict)

    def n_e(self, wavelength_um, temperature_c=None, *, strict=None):
        """Extraordinary (principal) index at ``wavelength_um`` (µm)."""
        return self._evaluate(self.extraordinary, self.dn_dt_e_per_c, wavelength_um,
                              temperature_c, strict)

    def indices(self, wavelength_um, temperature_c=None, *, strict=None):
        """``(n_o, n_e)`` at ``wavelength_um`` (µm), with one range check.

        For a piece with a handedness (:meth:`with_handedness`) the pair is an
        :class:`~prismdesign.materials.activity.ActiveIndices` carrying the chirality, which
        makes the interface solver treat the medium as optically active.
        """
        lam = self._wavelength(wavelength_um, strict)
        pair = (self._value(self.ordinary, self.dn_dt_o_per_c, lam, temperature_c, strict),
                self._value(self.extraordinary, self.dn_dt_e_per_c, lam, temperature_c, strict))
        if self.handedness is None:
            return pair
        activity = self.optical_activity
        rho = activity.rotatory_power_deg_per_mm(
            lam, strict=self.strict if strict is None else strict)
        sign = 1.0 if self.handedness == "right" else -1.0
        ratio = activity.transverse_ratio or 0.0
        return ActiveIndices(*pair, chirality_from_rotation(sign * rho, lam),
                             transverse_ratio=ratio)

    def rotatory_power_deg_per_mm(self, wavelength_um, *, strict=None):
        """Signed rotatory power along the optic axis (degrees per mm): positive for a
        right-handed piece (clockwise seen facing the light), negative for a left-handed one.

        Raises for a material without activity data or without a handedness.
        """
        if self.optical_activity is None or self.handedness is None:
            raise ValueError(f"{self.label}: rotatory power needs optical activity data and a "
                             f"handedness ('right' or 'left'); got handedness = "
                             f"{self.handedness!r}")
        sign = 1.0 if self.handedness == "right" else -1.0
        rho = self.optical_activity.rotatory_power_deg_per_mm(
            wavelength_um, strict=self.strict if strict is None else strict)
        return sign * rho

    def with_handedness(self, handedness):
        """A copy of this crystal as a right- or left-handed piece (optically active).

        Parameters
        ----------
        handedness : {"right", "left"} or None
            "right": dextrorotatory (clockwise seen facing the oncoming light); None gives
            back the inactive description (activity ignored, as before it was modelled).
        """
        return replace(self, handedness=handedness)

    def birefringence(self, wavelength_um, temperature_c=None, *, strict=None):
        """Signed birefringence n_e − n_o at ``wavelength_um`` (µm)."""
        n_o, n_e = self.indices(wavelength_um, temperature_c, strict=strict)
        return n_e - n_o

    def group_index_o(self, wavelength_um, temperature_c=None, *, strict=None):
        """Ordinary group index n_o − λ dn_o/dλ at ``wavelength_um`` (µm)."""
        return self._evaluate(self.ordinary, self.dn_dt_o_per_c, wavelength_um, temperature_c,
                              strict, group=True)

    def group_index_e(self, wavelength_um, temperature_c=None, *, strict=None):
        """Extraordinary group index n_e − λ dn_e/dλ at ``wavelength_um`` (µm)."""
        return self._evaluate(self.extraordinary, self.dn_dt_e_per_c, wavelength_um,
                              temperature_c, strict, group=True)

    def dn_dwl_o(self, wavelength_um, *, strict=None):
        """dn_o/dλ in µm⁻¹ at ``wavelength_um`` (µm)."""
        lam = self._wavelength(wavelength_um, strict)
        return _as_result(self.ordinary.dn_dwl(lam), lam.ndim == 0)

    def dn_dwl_e(self, wavelength_um, *, strict=None):
        """dn_e/dλ in µm⁻¹ at ``wavelength_um`` (µm)."""
        lam = self._wavelength(wavelength_um, strict)
        return _as_result(self.extraordinary.dn_dwl(lam), lam.ndim == 0)


@dataclass(frozen=True)
class BiaxialMaterial(_MaterialBase):
    """A biaxial crystal: three principal indices, each with its own published dispersion.

    The principal axes x, y, z are those of the dielectric tensor (the crystal frame in which
    ε is diagonal); a piece places them in the global frame (``crystal_axes`` of
    :class:`~prismdesign.optics.Medium`). The data files of the library label them so that
    n_x < n_y < n_z (n_α, n_β, n_γ), and say in their notes how they lie against the
    crystallographic axes.

    Attributes
    ----------
    name : str
        Canonical lower-case name.
    index_x, index_y, index_z : DispersionModel
        Dispersion of the index for light polarised along each principal axis.
    validity_um, temperature_c, reference, aliases, transparency_um, notes, strict
        As for :class:`IsotropicMaterial`.
    """

    name: str
    index_x: DispersionModel
    index_y: DispersionModel
    index_z: DispersionModel
    validity_um: tuple
    temperature_c: float
    reference: Optional[Reference]
    aliases: tuple = ()
    transparency_um: Optional[tuple] = None
    notes: str = ""
    dataset: str = ""
    strict: bool = False
    thermo_reference: str = ""
    thermo_range_c: Optional[tuple] = None
    _warned: set = field(default_factory=set, init=False, repr=False, compare=False, hash=False)
    _poles_around: tuple = field(default=(None, None), init=False, repr=False, compare=False,
                                 hash=False)

    kind = "biaxial"
    #: Not given: the sign of a biaxial crystal depends on the wavelength through its optic-axis
    #: angle; the data files carry none.
    optical_sign = None

    def _models(self):
        return {"x": self.index_x, "y": self.index_y, "z": self.index_z}

    def indices(self, wavelength_um, temperature_c=None, *, strict=None):
        """``(n_x, n_y, n_z)`` at ``wavelength_um`` (µm), with one range check.

        Floats for scalar input, arrays of the broadcast shape otherwise. No thermo-optic data
        are carried: a ``temperature_c`` other than the data temperature warns (raises with
        ``strict``) and the data-temperature values are returned.
        """
        lam = self._wavelength(wavelength_um, strict)
        return tuple(self._value(model, None, lam, temperature_c, strict)
                     for model in (self.index_x, self.index_y, self.index_z))

    def n_x(self, wavelength_um, temperature_c=None, *, strict=None):
        """Principal index n_x at ``wavelength_um`` (µm)."""
        return self._evaluate(self.index_x, None, wavelength_um, temperature_c, strict)

    def n_y(self, wavelength_um, temperature_c=None, *, strict=None):
        """Principal index n_y at ``wavelength_um`` (µm)."""
        return self._evaluate(self.index_y, None, wavelength_um, temperature_c, strict)

    def n_z(self, wavelength_um, temperature_c=None, *, strict=None):
        """Principal index n_z at ``wavelength_um`` (µm)."""
        return self._evaluate(self.index_z, None, wavelength_um, temperature_c, strict)
