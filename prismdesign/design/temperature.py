"""Split and beam deviations of a prism versus temperature, where thermo-optic data exist.

The prism's pieces are evaluated at each temperature through their materials' linear
thermo-optic model n(λ, T) = n(λ, T0) + dn/dT · (T − T0) (the slopes and their source travel
with the dispersion data); the surroundings stay at their data temperature and the geometry
does not expand (thermal expansion changes no angle of a prism cut from one crystal). All
temperatures trace as one batch. A piece without thermo-optic data is refused: its indices
would silently stay at the data temperature.
"""
from dataclasses import dataclass, replace

import numpy as np

from .._display import shown
from .batch_merit import trace_figures
from .merit import figures as nominal_figures
from .perturbation import has_thermo_optic_data

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
        Temperatures (°C); outside a material's dn/dT range the material warns.

    Returns
    -------
    TemperatureSweep

    Raises
    ------
    ValueError
        When a piece's material has no thermo-optic data.
    """
    missing = sorted({getattr(p.material, "name", "?") for p in prism.pieces
                      if not has_thermo_optic_data(p.material)})
    if missing:
        raise ValueError(f"no thermo-optic data for {', '.join(missing)}: a temperature sweep "
                         f"needs dn/dT of every piece (e.g. yvo4 has it)")
    try:
        if isinstance(temperature_c, (str, bytes)):
            raise TypeError
        t = np.atleast_1d(np.asarray(temperature_c, dtype=float))
    except (TypeError, ValueError):
        raise ValueError(f"temperature_c must be numbers (°C), got {shown(temperature_c)}") \
            from None
    if t.ndim != 1 or not np.all(np.isfinite(t)) or np.any(t < -273.15):
        raise ValueError(f"temperature_c must be finite temperatures above -273.15 °C in one "
                         f"list, got {shown(temperature_c)}")
    main = nominal_figures(prism, requirement).main_labels
    hot = replace(prism, temperature_c=t[:, None])
    lam = requirement.wavelengths_um
    figs = trace_figures(hot, lam[None, :], 0.0, 0.0, main, plane_z_mm=prism.exit_z_mm)
    ranges = [getattr(p.material, "thermo_range_c", None) for p in prism.pieces]
    valid = None
    if all(r is not None for r in ranges):
        valid = (max(r[0] for r in ranges), min(r[1] for r in ranges))
    return TemperatureSweep(t, lam, figs.split_deg, dict(figs.deviation_deg), valid)
