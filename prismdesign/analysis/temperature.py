"""Split and beam deviations of a prism versus temperature, with their slopes.

The heated pieces (every piece, or the ones named) take each temperature through their
materials' linear thermo-optic model n(λ, T) = n(λ, T0) + dn/dT · (T − T0), whose slopes and
source travel with the dispersion data; the other pieces and the surroundings keep their own
temperature, and the geometry does not change (a uniform expansion of a prism cut from one
crystal changes no angle). All temperatures are traced as one batch: the temperature is a
leading sample axis of the heated media, broadcast against the wavelengths, so a sweep of t
temperatures at n wavelengths is a single trace of t × n rays.

A heated piece without thermo-optic data is refused: its indices would silently stay at the
data temperature and the sweep would report a flat split that nobody measured.
"""
from dataclasses import dataclass

import numpy as np

from ..prisms.base import check_prism, check_temperature
from ._common import as_output, check_numbers, shown
from .deviation import split

__all__ = ["TemperatureResult", "temperature_dependence", "has_thermo_optic_data",
           "least_squares_slope"]


@dataclass(frozen=True, slots=True)
class TemperatureResult:
    """Split and deviations over temperature (rows) and wavelength (columns).

    Attributes
    ----------
    temperature_c : ndarray, shape (t,)
        Temperatures of the heated pieces (°C).
    wavelength_um : ndarray, shape (n,)
    pieces : tuple of int
        Indices of the heated pieces (counted from the entrance).
    main_labels : tuple of str
        The two main beams, chosen at the prism's own temperature (or as given).
    split_deg : ndarray, shape (t, n)
        Exact angle between the two main beams (degrees); NaN where either is lost.
    deviation_deg : dict[str, ndarray of shape (t, n)]
        In-plane deviation of each main beam from z (degrees); NaN where it is lost.
    split_slope_deg_per_c : ndarray, shape (n,)
        Least-squares slope of `split_deg` over the temperatures (degrees per °C); NaN where
        a main beam is lost at any temperature.
    deviation_slope_deg_per_c : dict[str, ndarray of shape (n,)]
        The same for each main beam's deviation.
    lost : dict[str, ndarray of shape (t, n)]
        Per point, why each main beam does not exist (0 where it does), as in
        :class:`~prismdesign.analysis.SplitResult`.
    valid_range_c : (float, float) or None
        Where every heated piece's dn/dT was derived (None when a source states no range).
    reason : str
        "" when two main beams exist; else why not (the split is then NaN).
    """

    temperature_c: np.ndarray
    wavelength_um: np.ndarray
    pieces: tuple
    main_labels: tuple
    split_deg: np.ndarray
    deviation_deg: dict
    split_slope_deg_per_c: np.ndarray
    deviation_slope_deg_per_c: dict
    lost: dict
    valid_range_c: tuple | None
    reason: str = ""


def has_thermo_optic_data(material):
    """True when `material` carries a thermo-optic slope (uniaxial: both indices)."""
    if getattr(material, "kind", None) == "uniaxial":
        return (getattr(material, "dn_dt_o_per_c", None) is not None
                and getattr(material, "dn_dt_e_per_c", None) is not None)
    return getattr(material, "dn_dt_per_c", None) is not None


def least_squares_slope(x, y):
    """Slope of the least-squares line through (x, y[i]) along the first axis of `y`.

    Parameters
    ----------
    x : ndarray, shape (t,)
        At least two distinct abscissae.
    y : ndarray, shape (t, ...)

    Returns
    -------
    ndarray, shape (...)
        NaN wherever a column holds a NaN (a lost beam has no slope).
    """
    dx = x - x.mean()
    dx = dx.reshape((-1,) + (1,) * (np.ndim(y) - 1))
    return np.sum(dx * (y - np.mean(y, axis=0)), axis=0) / np.sum(dx * dx, axis=0)


def _material_label(material):
    return getattr(material, "label", None) or getattr(material, "name", "unnamed material")


def _temperatures(value):
    """`value` as one list of at least two different temperatures (°C)."""
    t = np.atleast_1d(check_temperature("temperature_c", value))
    if t.ndim != 1 or np.unique(t).size < 2:
        raise ValueError(f"temperature_c must be one list of at least two different "
                         f"temperatures (°C), got {shown(value)}")
    return t


def temperature_dependence(prism, temperature_c, wavelength_um=None, *, piece=None,
                           in_plane_deg=0.0, out_of_plane_deg=0.0, main_labels=None):
    """Split and each main beam's deviation at each temperature, and their slopes.

    Parameters
    ----------
    prism : Prism
    temperature_c : array_like, shape (t,)
        At least two different temperatures (°C) of the heated pieces; outside the range a
        material's dn/dT was derived in, the material warns
        (:class:`~prismdesign.materials.DispersionRangeWarning`).
    wavelength_um : array_like, shape (n,), optional
        Vacuum wavelengths (µm); default the prism's design wavelength.
    piece : int or sequence of int, optional
        Heat only these pieces (indices from the entrance, e.g. one wedge of a two-crystal
        Wollaston); default every piece (:meth:`~prismdesign.prisms.Prism.at_temperature`).
    in_plane_deg, out_of_plane_deg : float
        Input direction (degrees), one direction for the whole sweep.
    main_labels : pair of str, optional
        The beams whose split is wanted; default the two strongest at the prism's own
        temperature.

    Returns
    -------
    TemperatureResult

    Raises
    ------
    ValueError
        In one line: a heated piece whose material has no thermo-optic data (naming it),
        fewer than two temperatures, temperatures below absolute zero, wavelengths that are
        not positive numbers, an unknown piece index.

    Notes
    -----
    One trace: the heated media carry the temperatures as an axis of shape (t, 1) against
    wavelengths of shape (1, n) (see :class:`~prismdesign.optics.Medium`). The slopes are
    least-squares lines over the temperatures; with the linear thermo-optic model the split
    is linear in T to second order in dn/dT · ΔT.
    """
    check_prism(prism)
    t = _temperatures(temperature_c)
    lam = check_numbers("wavelength_um", prism.design_wavelength_um if wavelength_um is None
                        else wavelength_um, "positive wavelengths in µm (one list)",
                        lambda v: v > 0)
    if lam.ndim > 1:
        raise ValueError(f"wavelength_um must be one list of wavelengths (µm), got shape "
                         f"{lam.shape}")
    lam = np.atleast_1d(lam)
    angles = [check_numbers(name, value, "one angle in degrees between -90 and 90",
                            lambda a: np.abs(a) < 90) for name, value in
              (("in_plane_deg", in_plane_deg), ("out_of_plane_deg", out_of_plane_deg))]
    if any(a.ndim for a in angles):
        raise ValueError(f"in_plane_deg and out_of_plane_deg must be single angles for a "
                         f"temperature sweep, got {shown(in_plane_deg)} and "
                         f"{shown(out_of_plane_deg)}")
    heated = tuple(range(len(prism.pieces))) if piece is None else prism.piece_indices(piece)
    missing = [f"piece {i} ({_material_label(prism.pieces[i].material)})"
               for i in heated if not has_thermo_optic_data(prism.pieces[i].material)]
    if missing:
        raise ValueError(f"no thermo-optic data for {', '.join(missing)}: a temperature sweep "
                         f"needs dn/dT of every heated piece (heat only the others with piece=, "
                         f"or pick a dataset with dn/dT)")
    if main_labels is None:
        main = split(prism, lam, float(angles[0]), float(angles[1])).main_labels
    else:
        main = tuple(main_labels)
    hot = prism.at_temperature(t[:, None], piece=piece)
    result = split(hot, lam[None, :], float(angles[0]), float(angles[1]),
                   main_labels=main if len(main) == 2 else None)
    shape = (t.size, lam.size)
    deviation = {label: np.broadcast_to(result.in_plane_deg[label], shape).copy()
                 for label in main if label in result.in_plane_deg}
    lost = {label: np.broadcast_to(result.lost[label], shape).copy() for label in deviation}
    split_deg = np.broadcast_to(result.split_deg, shape).copy()
    ranges = [getattr(prism.pieces[i].material, "thermo_range_c", None) for i in heated]
    valid = None
    if all(r is not None for r in ranges):
        valid = (max(r[0] for r in ranges), min(r[1] for r in ranges))
    return TemperatureResult(
        temperature_c=t, wavelength_um=lam, pieces=heated, main_labels=tuple(main),
        split_deg=split_deg, deviation_deg=deviation,
        split_slope_deg_per_c=as_output(least_squares_slope(t, split_deg)),
        deviation_slope_deg_per_c={label: as_output(least_squares_slope(t, v))
                                   for label, v in deviation.items()},
        lost=lost, valid_range_c=valid, reason=result.reason)
