"""Figure of a temperature sweep: how the split and each main beam's direction move with
temperature. It takes a :class:`~prismdesign.analysis.TemperatureResult` and computes no
physics.

The changes are small (arcseconds per degree for most crystals), so both panels show the change
from a reference temperature in arcseconds rather than the absolute angles, whose large constant
part would flatten the curves; the legend carries the absolute value at the reference and the
slope.
"""
from pathlib import Path

import numpy as np

from .files import new_figure, save_figure

__all__ = ["plot_temperature_dependence", "temperature_figure"]

_ARCSEC_PER_DEG = 3600.0
_STYLES = ("-", "--", ":", "-.")


def plot_temperature_dependence(result, path, *, reference_c=None, title=""):
    """Write the split and deviation changes of a temperature sweep to `path` (atomic).

    Parameters
    ----------
    result : TemperatureResult
        From :func:`~prismdesign.analysis.temperature_dependence`.
    path : str or Path
        Output file; the format follows the suffix (.png, .pdf, .svg).
    reference_c : float, optional
        One of the swept temperatures (°C) to measure changes from; default the first.
    title : str
        Figure title (e.g. the prism); default names the heated pieces.

    Returns
    -------
    pathlib.Path
    """
    return save_figure(temperature_figure(result, reference_c=reference_c, title=title),
                       Path(path))


def temperature_figure(result, *, reference_c=None, title=""):
    """The figure of :func:`plot_temperature_dependence`, unsaved (a matplotlib Figure)."""
    t = np.asarray(result.temperature_c, dtype=float)
    if reference_c is None:
        row = 0
    else:
        matches = np.flatnonzero(np.isclose(t, float(reference_c)))
        if not matches.size:
            raise ValueError(f"reference_c must be one of the swept temperatures "
                             f"{', '.join(f'{v:g}' for v in t)} °C, got {reference_c!r}")
        row = int(matches[0])
    t_ref = t[row]
    lam = np.asarray(result.wavelength_um, dtype=float)
    fig = new_figure(figsize=(7.5, 6.4), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True)
    colours = [f"C{i % 10}" for i in range(lam.size)]
    if len(result.main_labels) == 2:
        a, b = result.main_labels
        for j, (w, colour) in enumerate(zip(lam, colours)):
            change = (result.split_deg[:, j] - result.split_deg[row, j]) * _ARCSEC_PER_DEG
            slope = np.asarray(result.split_slope_deg_per_c).reshape(-1)[j] * _ARCSEC_PER_DEG
            top.plot(t, change, color=colour, marker="o", ms=3,
                     label=f"{w:g} µm: {result.split_deg[row, j]:.4f}° at {t_ref:g} °C, "
                           f"{slope:+.3g}″/°C")
        top.set_ylabel(f"split change from {t_ref:g} °C (arcsec)")
        top.set_title(f"split = angle between beams {a} and {b}", fontsize=9)
    else:
        top.text(0.5, 0.5, f"no split: {result.reason or 'fewer than two main beams'}",
                 ha="center", va="center", transform=top.transAxes, fontsize=8, wrap=True)
        top.set_yticks([])
    for k, label in enumerate(result.deviation_deg):
        values = result.deviation_deg[label]
        slopes = np.asarray(result.deviation_slope_deg_per_c[label]).reshape(-1)
        for j, (w, colour) in enumerate(zip(lam, colours)):
            change = (values[:, j] - values[row, j]) * _ARCSEC_PER_DEG
            bottom.plot(t, change, color=colour, ls=_STYLES[k % len(_STYLES)],
                        label=f"{label}, {w:g} µm: {values[row, j]:+.4f}°, "
                              f"{slopes[j] * _ARCSEC_PER_DEG:+.3g}″/°C")
    bottom.set_ylabel(f"deviation change from {t_ref:g} °C (arcsec)")
    bottom.set_xlabel("temperature of the heated pieces (°C)")
    bottom.set_title("deviation = in-plane angle of a beam's exit ray from z "
                     "(positive toward +x)", fontsize=9)
    for ax in (top, bottom):
        ax.axhline(0.0, color="#777777", lw=0.6)
        ax.grid(alpha=0.3)
        _shade_outside(ax, t, result.valid_range_c)
        if ax.get_legend_handles_labels()[0]:
            ax.legend(fontsize=7)
    fig.supxlabel("linear model: each material's dn/dT, quoted at one wavelength, is applied at "
                  "every wavelength (curves of different wavelengths may coincide)", fontsize=7,
                  color="#555555")
    pieces = ", ".join(str(i) for i in result.pieces)
    which = "piece" if len(result.pieces) == 1 else "pieces"
    fig.suptitle(title or f"Temperature sweep ({which} {pieces} heated; linear dn/dT)",
                 fontsize=11)
    return fig


def _shade_outside(ax, t, valid_range_c):
    """Grey where the sweep leaves the range the dn/dT data were derived in."""
    if valid_range_c is None:
        return
    lo, hi = valid_range_c
    left, right = float(t.min()), float(t.max())
    label = "outside the dn/dT data range"
    if left < lo:
        ax.axvspan(left, min(lo, right), color="#bbbbbb", alpha=0.35, lw=0, label=label)
        label = None
    if right > hi:
        ax.axvspan(max(hi, left), right, color="#bbbbbb", alpha=0.35, lw=0, label=label)
