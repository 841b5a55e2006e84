"""Optical activity (rotatory power) of a crystal and the handedness of a piece.

A material file may carry an ``[optical_activity]`` table (see ``DEVELOPERS.md``): the rotatory
power along the optic axis as a Drude-type sum

    ρ(λ) = Σᵢ Aᵢ / (λ² − λᵢ²) + C        (degrees per mm, λ in µm)

(Drude, *Lehrbuch der Optik*, 1900; the form used for quartz by Lowry & Coode-Adams, Phil.
Trans. R. Soc. A 226, 391 (1927); from memory), its validity range and its source. The data
give the magnitude; the sense belongs to the piece, because quartz grows in both hands: a
material becomes optically active only through :meth:`with_handedness`, which returns a copy
whose :meth:`indices` carry the chirality (:class:`ActiveIndices`).

Sign convention: a *right-handed* (dextrorotatory) piece turns the plane of polarisation
clockwise as seen by an observer looking toward the oncoming light (Born & Wolf, *Principles of
Optics*, 7th ed., §15.5; Hecht, *Optics*, 4th ed., §8.10), i.e. the azimuth measured from x
toward y decreases along +z.

The optics core uses the chirality ξ of the reciprocal, lossless constitutive relations
D = εE + iξH, B = H − iξE (ε₀ = μ₀ = 1; see :mod:`prismdesign.optics.gyrotropic`). Along the
axis the circular waves have indices n_o ± ξ₁, so ρ = 2πξ₁/λ and ξ₁ = ±ρλ/(2π).
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np

__all__ = ["OpticalActivity", "ActiveIndices", "HANDEDNESS", "chirality_from_rotation",
           "ActivePieceWarning"]

#: Allowed handedness settings of a piece.
HANDEDNESS = ("right", "left")


class ActivePieceWarning(UserWarning):
    """An analysis meets an optically active piece where it cannot fully describe it.

    The analyses add the branches of an active piece that leave together into one output beam
    (:mod:`prismdesign.analysis.beam_groups`); what remains is the phase of such a beam, which
    the interference analyses take from its first branch (they warn with this class).
    """


def chirality_from_rotation(rotatory_power_deg_per_mm, wavelength_um):
    """Chirality ξ (dimensionless) of a rotatory power along the axis: ξ = ρλ/(2π).

    Parameters
    ----------
    rotatory_power_deg_per_mm : array_like
        Signed rotatory power (positive: right-handed), degrees per mm.
    wavelength_um : array_like
        Vacuum wavelength, µm.

    Returns
    -------
    ndarray
    """
    rho_rad_per_um = np.deg2rad(np.asarray(rotatory_power_deg_per_mm, dtype=float)) * 1e-3
    return rho_rad_per_um * np.asarray(wavelength_um, dtype=float) / (2.0 * np.pi)


class ActiveIndices(tuple):
    """``(n_o, n_e)`` of an optically active piece, carrying its chirality.

    Unpacks like the plain pair, so every consumer of ``indices()`` keeps working; the
    interface solver reads :attr:`chirality` and :attr:`transverse_ratio` to use the
    gyrotropic solution.

    Attributes
    ----------
    chirality : ndarray
        ξ₁, signed (positive for a right-handed piece), shape of the wavelengths.
    transverse_ratio : float
        Rotatory power across the axis over that along it (0 when not published).
    """

    def __new__(cls, n_o, n_e, chirality, transverse_ratio=0.0):
        self = super().__new__(cls, (n_o, n_e))
        self.chirality = chirality
        self.transverse_ratio = float(transverse_ratio)
        return self


@dataclass(frozen=True)
class OpticalActivity:
    """Rotatory power of a crystal along its optic axis (magnitude; the piece sets the sense).

    Parameters
    ----------
    amplitudes_deg_um2_per_mm : tuple of float
        Aᵢ of the Drude sum (degrees per mm × µm²).
    poles_um2 : tuple of float
        λᵢ² of the Drude sum (µm²), all below the validity range.
    constant_deg_per_mm : float
        C, a constant standing for distant infrared terms.
    validity_um : tuple of float
        Wavelength range of the data the sum was fitted to.
    reference : str
        Source of the numbers (and how they were obtained).
    transverse_ratio : float or None
        Rotatory power for light perpendicular to the axis over that along it, if published;
        None means not included (taken as 0).
    """

    amplitudes_deg_um2_per_mm: tuple
    poles_um2: tuple
    validity_um: tuple
    reference: str
    constant_deg_per_mm: float = 0.0
    transverse_ratio: float | None = None

    def __post_init__(self):
        amps = tuple(float(a) for a in self.amplitudes_deg_um2_per_mm)
        poles = tuple(float(p) for p in self.poles_um2)
        object.__setattr__(self, "amplitudes_deg_um2_per_mm", amps)
        object.__setattr__(self, "poles_um2", poles)
        if not amps or len(amps) != len(poles):
            raise ValueError(f"optical activity needs as many amplitudes as poles (at least one), "
                             f"got {len(amps)} amplitudes and {len(poles)} poles")
        lo, hi = (float(v) for v in self.validity_um)
        object.__setattr__(self, "validity_um", (lo, hi))
        if not 0 < lo < hi:
            raise ValueError(f"optical activity validity_um = {[lo, hi]} must be two increasing "
                             f"positive wavelengths in µm")
        if any(not np.isfinite(p) or p < 0 or p >= lo * lo for p in poles):
            raise ValueError(f"optical activity poles_um2 = {list(poles)}: each must be ≥ 0 and "
                             f"below the shortest wavelength squared ({lo * lo:.4g} µm²)")
        ratio = self.transverse_ratio
        if ratio is not None and not (np.isfinite(ratio) and abs(ratio) <= 2.0):
            raise ValueError(f"optical activity transverse_ratio = {ratio!r}; allowed: a number "
                             f"between -2 and 2")

    def rotatory_power_deg_per_mm(self, wavelength_um, *, strict=False):
        """Rotatory power along the optic axis (degrees per mm, magnitude).

        Warns (``DispersionRangeWarning``) outside ``validity_um``, or raises with
        ``strict=True``; always raises at or below the shortest pole.

        Parameters
        ----------
        wavelength_um : array_like
            Vacuum wavelengths (µm).
        strict : bool

        Returns
        -------
        ndarray or float
        """
        from .material import DispersionRangeWarning
        lam = np.asarray(wavelength_um, dtype=float)
        lo, hi = self.validity_um
        if np.any(lam * lam <= max(self.poles_um2)) or not np.all(np.isfinite(lam)):
            bad = lam[(lam * lam <= max(self.poles_um2)) | ~np.isfinite(lam)]
            raise ValueError(f"rotatory power at wavelength_um = {float(np.ravel(bad)[0]):g} is "
                             f"past the Drude pole; allowed: above "
                             f"{np.sqrt(max(self.poles_um2)):.4g} µm (data {lo}-{hi} µm)")
        outside = (lam < lo) | (lam > hi)
        if np.any(outside):
            message = (f"rotatory power extrapolated to wavelength_um = "
                       f"{float(np.ravel(lam[outside])[0]):g}; data range {lo}-{hi} µm")
            if strict:
                raise ValueError(message)
            warnings.warn(message, DispersionRangeWarning, stacklevel=3)
        l2 = lam * lam
        rho = sum(a / (l2 - p) for a, p in zip(self.amplitudes_deg_um2_per_mm, self.poles_um2))
        rho = rho + self.constant_deg_per_mm
        return float(rho) if np.ndim(rho) == 0 else rho
