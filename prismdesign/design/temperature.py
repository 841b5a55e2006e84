"""Split and beam deviations of a prism versus temperature at a requirement's wavelengths.

The physics (one batched trace over temperatures and wavelengths, the refusal of pieces
without thermo-optic data) lives in :func:`prismdesign.analysis.temperature_dependence`; this
module picks the requirement's wavelengths and the merit's main beams, so a design and its
temperature sweep speak of the same beams, and turns a requirement's operating temperature
range into a margin (:func:`temperature_margin`) that the assessment adds to a split target.
"""
from dataclasses import dataclass

import numpy as np

from ..analysis.temperature import has_thermo_optic_data, temperature_dependence
from .merit import Margin, figures as nominal_figures

__all__ = ["TemperatureSweep", "temperature_sweep", "temperature_margin", "heated_pieces"]


def heated_pieces(prism):
    """Indices of the crystal pieces: the ones a design's temperature range heats.

    Isotropic spacers (the air between two prisms in series, a glass window) stay at their
    data temperature: their index changes by ~1e-6 per °C on both beams alike and moves no
    split to first order (common practice, no source), and air carries no dn/dT in the library.
    """
    return [i for i, p in enumerate(prism.pieces) if p.is_crystal]


@dataclass(frozen=True)
class TemperatureSweep:
    """Figures over temperature (rows) and wavelength (columns).

    Attributes
    ----------
    temperature_c : ndarray, shape (t,)
    wavelength_um : ndarray, shape (n,)
    split_deg : ndarray, shape (t, n) or None
    deviation_deg : dict[str, ndarray of shape (t, n)]
        In-plane deviation of each main beam.
    valid_range_c : (float, float) or None
        Where every piece's dn/dT was derived (None when not stated).
    """

    temperature_c: np.ndarray
    wavelength_um: np.ndarray
    split_deg: np.ndarray | None
    deviation_deg: dict
    valid_range_c: tuple | None


def temperature_sweep(prism, requirement, temperature_c):
    """Split and deviations of `prism` at each temperature (°C), at the requirement's wavelengths.

    Parameters
    ----------
    prism : Prism
    requirement : Requirement
        Wavelengths (on axis).
    temperature_c : array_like, shape (t,)
        At least two temperatures (°C); outside a material's dn/dT range the material warns.

    Returns
    -------
    TemperatureSweep

    Raises
    ------
    ValueError
        When a piece's material has no thermo-optic data.
    """
    main = nominal_figures(prism, requirement).main_labels
    result = temperature_dependence(prism, temperature_c, requirement.wavelengths_um,
                                    main_labels=main if len(main) == 2 else None,
                                    piece=heated_pieces(prism))
    split_deg = result.split_deg if len(result.main_labels) == 2 else None
    return TemperatureSweep(result.temperature_c, result.wavelength_um, split_deg,
                            dict(result.deviation_deg), result.valid_range_c)


def temperature_margin(prism, requirement, main_labels):
    """How well a split target holds over the requirement's operating temperature range.

    Parameters
    ----------
    prism : Prism
    requirement : Requirement
        Its `temperature_range_c` (°C), split target and tolerance, and wavelengths.
    main_labels : tuple of str
        The candidate's main beams (from its nominal figures).

    Returns
    -------
    Margin or None
        "split over temperature": the worst on-axis split at either end of the range (the
        linear thermo-optic model makes the split monotonic in T, so the ends bound it), its
        margin to the tolerance; NaN with a reason when a piece has no dn/dT. None when the
        requirement gives no temperature range, its target is not a split, or fewer than two
        beams leave the prism (the assessment already says so).
    """
    span = requirement.temperature_range_c
    if span is None or requirement.target_kind != "split" or len(main_labels) != 2:
        return None
    target, tol = requirement.target_value, requirement.target_tolerance
    name = "split over temperature"
    heated = heated_pieces(prism)
    missing = sorted({getattr(prism.pieces[i].material, "name", "?") for i in heated
                      if not has_thermo_optic_data(prism.pieces[i].material)})
    if missing:
        return Margin(name, np.nan, target, np.nan, "deg", tol,
                      f"no thermo-optic data for {', '.join(missing)}: the split cannot be "
                      f"held over {span[0]:g}-{span[1]:g} °C")
    result = temperature_dependence(prism, span, requirement.wavelengths_um, piece=heated,
                                    main_labels=main_labels)
    error = np.abs(result.split_deg - target)
    if np.any(np.isnan(error)):
        return Margin(name, np.nan, target, np.nan, "deg", tol,
                      f"a main beam is lost between {span[0]:g} and {span[1]:g} °C")
    worst = np.unravel_index(np.argmax(error), error.shape)
    return Margin(name, float(result.split_deg[worst]), target, tol - float(error[worst]),
                  "deg", tol)
