"""Split and beam deviations of a prism versus temperature at a requirement's wavelengths.

The physics (one batched trace over temperatures and wavelengths, the refusal of pieces
without thermo-optic data) lives in :func:`prismdesign.analysis.temperature_dependence`; this
module picks the requirement's wavelengths and the merit's main beams, so a design and its
temperature sweep speak of the same beams.
"""
from dataclasses import dataclass

import numpy as np

from ..analysis.temperature import temperature_dependence
from .merit import figures as nominal_figures

__all__ = ["TemperatureSweep", "temperature_sweep"]


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
                                    main_labels=main if len(main) == 2 else None)
    split_deg = result.split_deg if len(result.main_labels) == 2 else None
    return TemperatureSweep(result.temperature_c, result.wavelength_um, split_deg,
                            dict(result.deviation_deg), result.valid_range_c)
