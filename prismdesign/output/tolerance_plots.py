"""Figures of a tolerance analysis: a tornado chart of the errors that matter and a histogram
of the target figure over built prisms. Each takes results and writes a figure; none computes
physics. Built without pyplot (:mod:`.files`), so writing them leaves the user's backend alone
and an existing file is replaced atomically."""
import numpy as np

from .files import new_figure, save_figure

__all__ = ["plot_tornado", "plot_histogram"]


def _save(fig, path):
    return save_figure(fig, path, dpi=120)


def plot_tornado(rows, path, *, title="", count=12):
    """Horizontal bars: how far each error moves a figure, largest on top.

    Two bars per parameter, with a legend: the first-order change of the figure for a
    positive error (solid) and for a negative one (light, hatched).

    Parameters
    ----------
    rows : list of dict
        From :meth:`~prismdesign.design.Sensitivities.ranked` (with or without tolerances):
        the bar is the swing at the tolerance when present, else the sensitivity per unit.
    path : str or Path
    title : str
    count : int
        Number of parameters shown.
    """
    rows = list(rows)[:count]
    swing = "swing" in (rows[0] if rows else {})
    values = np.array([r["swing"] if swing else abs(r["sensitivity"]) for r in rows])
    signs = np.array([np.sign(r["sensitivity"]) or 1.0 for r in rows])
    labels = [f"{r['parameter']} (±{r['tolerance']:.3g} {r['parameter_unit']})" if swing
              else f"{r['parameter']} (per {r['parameter_unit']})" for r in rows]
    fig = new_figure(figsize=(7.5, 0.45 * len(rows) + 1.9), layout="constrained")
    ax = fig.add_subplot()
    y = np.arange(len(rows))[::-1]
    # Each parameter gets two bars, to first order: the change of the figure for a positive
    # error (solid) and for the same negative error (light, hatched), so the sign of the
    # sensitivity reads off the side the solid bar is on.
    size = "tolerance" if swing else "1 unit"
    ax.barh(y, values * signs, color="#3b6ea5", label=f"+ error (at +{size})")
    ax.barh(y, -values * signs, color="#e8a33d", alpha=0.55, hatch="//", edgecolor="#a86c12",
            lw=0.0, label=f"− error (at −{size})")
    ax.set_yticks(y, labels, fontsize=8)
    ax.axvline(0.0, color="#333333", lw=0.8)
    if rows:
        ax.legend(loc="lower center", bbox_to_anchor=(0.5, 1.0), ncol=2, fontsize=8,
                  frameon=False)
    unit = rows[0]["figure_unit"] if rows else ""
    what = rows[0]["figure"] if rows else ""
    ax.set_xlabel(f"change of {what} ({unit})" + (" at + / − the tolerance" if swing
                                                  else " per unit of error"))
    ax.set_title(title or f"What moves {what}", pad=22)
    return _save(fig, path)


def plot_histogram(result, path, *, target=None, tolerance=None, title=""):
    """Histogram of the on-axis target figure over the Monte Carlo samples (every wavelength
    pooled), with the allowed window shaded.

    Parameters
    ----------
    result : MonteCarloResult
    path : str or Path
    target, tolerance : float, optional
        The requirement's target and allowed deviation (shaded window).
    title : str
    """
    if result.target_figure is None:
        raise ValueError("this Monte Carlo has no target figure to plot (a polariser)")
    values = result.target_figure
    fig = new_figure(figsize=(7.0, 4.0), layout="constrained")
    ax = fig.add_subplot()
    for i, lam in enumerate(result.wavelength_um):
        column = values[:, i]
        ax.hist(column[np.isfinite(column)], bins=60, histtype="step", lw=1.2,
                label=f"{lam:.4g} µm")
    if target is not None and tolerance is not None:
        ax.axvspan(target - tolerance, target + tolerance, color="#9bbb59", alpha=0.2,
                   label="allowed")
    ax.set_xlabel(f"{result.target_kind} ({'deg' if result.target_kind == 'split' else 'mm'})")
    ax.set_ylabel("built prisms")
    ax.set_title(title or f"{result.samples} built prisms: yield {100 * result.yield_fraction:.1f}"
                          f" ± {100 * result.yield_error:.1f} %")
    ax.legend(fontsize=8)
    return _save(fig, path)
