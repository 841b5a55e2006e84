"""Figures of a prism's performance: deviation and split over a band, detector footprints, and
maps over incidence angle. Each function takes analysis results and writes a figure file; none
computes physics. Figures are built without pyplot (:mod:`.files`), so writing them leaves the
user's matplotlib backend alone."""
import numpy as np

from .drawing import beam_colour
from .files import new_figure, save_figure

__all__ = ["plot_split_versus_wavelength", "split_figure", "plot_footprints", "plot_angle_map",
           "plot_angle_maps", "ASYMMETRY_CAPTION"]

#: How the split figure defines its asymmetry panel.
ASYMMETRY_CAPTION = ("asymmetry: in-plane angle of the two beams' bisector minus the input's "
                     "(0: symmetric split; < 0: toward −x)")


def plot_split_versus_wavelength(wavelength_um, split_result, band_um, path, *, title=""):
    """Write :func:`split_figure` to `path` (format from the suffix); returns the written
    :class:`pathlib.Path`."""
    return save_figure(split_figure(wavelength_um, split_result, band_um, title=title), path)


def split_figure(wavelength_um, split_result, band_um, *, title=""):
    """Deviation of the main beams (magnitude, side in the legend), their exact split and the
    split's asymmetry (in-plane angle of the bisector minus that of the input, defined on the
    figure) versus wavelength.

    Parameters
    ----------
    wavelength_um : ndarray, shape (n,)
    split_result : SplitResult
        From :func:`prismdesign.analysis.split` over `wavelength_um`.
    band_um : (float, float)
        Working band, shaded.
    title : str

    Returns
    -------
    matplotlib.figure.Figure
        Three axes (deviation, split, asymmetry), made without pyplot.
    """
    fig = new_figure(figsize=(7.0, 7.4), layout="constrained")
    top, middle, bottom = fig.subplots(3, 1, sharex=True,
                                       gridspec_kw={"height_ratios": [2, 2, 1.5]})
    # Magnitudes share one narrow range, so their change across the band shows; on a signed
    # axis spanning both beams each curve would look flat. The side goes into the label.
    for label in split_result.main_labels:
        deviation = np.asarray(split_result.in_plane_deg[label], dtype=float)
        finite = deviation[np.isfinite(deviation)]
        mean = finite.mean() if finite.size else np.nan
        side = ("toward +x" if mean > 0 else "toward −x" if mean < 0 else
                "undeviated" if mean == 0 else "lost everywhere")
        top.plot(wavelength_um, np.abs(deviation), color=beam_colour(label),
                 label=f"beam {label} ({side})")
    top.set_ylabel("|in-plane deviation| (deg)")
    top.legend(fontsize=8)
    middle.plot(wavelength_um, split_result.split_deg, color="#222222")
    middle.set_ylabel("split, exact (deg)")
    bottom.plot(wavelength_um, 3600.0 * np.asarray(split_result.asymmetry_deg), color="#555555")
    bottom.set_ylabel("asymmetry (arcsec)")
    bottom.set_xlabel("vacuum wavelength (µm)")
    # The panel's quantity is not a standard term: define it on the figure itself.
    bottom.set_title(ASYMMETRY_CAPTION, fontsize=8, loc="left")
    for ax in (top, middle, bottom):
        ax.axvspan(*band_um, color="#f3d9a4", alpha=0.5, lw=0)
        ax.grid(True, alpha=0.3)
    top.set_title(title or "Deviation and split versus wavelength (working band shaded)",
                  fontsize=10)
    return fig


def plot_footprints(positions_mm, radii_mm, wavelength_um, path, *, detectors=(), title=""):
    """Beam footprints (1/e² circles) on an observation plane.

    Parameters
    ----------
    positions_mm : dict[str, ndarray of shape (n, 2 or 3)]
        Beam centres (x, y) per label, one row per wavelength.
    radii_mm : dict[str, ndarray of shape (n,)]
        1/e² radii per label and wavelength.
    wavelength_um : ndarray, shape (n,)
    path : str or Path
    detectors : sequence of (x_mm, y_mm, radius_mm, name)
        Detector outlines to draw (dashed).
    title : str
    """
    from matplotlib.patches import Circle

    fig = new_figure(figsize=(7.0, 4.5), layout="constrained")
    ax = fig.subplots()
    shades = np.linspace(0.35, 1.0, len(wavelength_um))
    for label in positions_mm:
        colour = beam_colour(label)
        pos = np.asarray(positions_mm[label])
        for i, lam in enumerate(wavelength_um):
            ax.add_patch(Circle((pos[i, 0], pos[i, 1]), radii_mm[label][i], fill=False,
                                color=colour, alpha=float(shades[i]), lw=1.0))
        # The drift is far smaller than the circles in a typical layout: give it in numbers.
        drift = float(np.max(np.hypot(*(pos[:, None, :2] - pos[None, :, :2]).transpose(2, 0, 1))))
        ax.plot(pos[:, 0], pos[:, 1], ".", color=colour, label=f"beam {label} "
                f"({wavelength_um[0]:g}–{wavelength_um[-1]:g} µm, darker = longer; centre "
                f"moves {1e3 * drift:.0f} µm)")
    for x, y, r, name in detectors:
        ax.add_patch(Circle((x, y), r, fill=False, ls="--", color="#444444", lw=1.0))
        ax.annotate(name, (x, y + r), ha="center", va="bottom", fontsize=8)
    ax.set_aspect("equal", adjustable="datalim")
    ax.autoscale_view()
    ax.set_xlabel("x (mm, split direction)")
    ax.set_ylabel("y (mm)")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8, loc="lower center")
    ax.set_title(title or "Beam footprints on the detector plane (1/e² radius)", fontsize=10)
    return save_figure(fig, path)


def plot_angle_map(in_plane_deg, out_of_plane_deg, values, path, *, label, title="",
                   levels=None, ok=None, value_range=None):
    """A quantity over the incidence-angle grid, e.g. log10 extinction ratio.

    Parameters
    ----------
    in_plane_deg, out_of_plane_deg : ndarray, shape (nx,), (ny,)
    values : ndarray, shape (ny, nx)
    path : str or Path
    label : str
        Colour-bar label.
    levels : sequence of float, optional
        Contour levels to draw and label.
    ok : bool ndarray, shape (ny, nx), optional
        Region meeting the spec; its edge is drawn as a thick red line.
    value_range : (float, float), optional
        Colour scale limits; values beyond are shown in the end colours.

    Returns
    -------
    pathlib.Path
    """
    return plot_angle_maps(in_plane_deg, out_of_plane_deg, [(values, ok, "")], path,
                           label=label, title=title, levels=levels, value_range=value_range)


def plot_angle_maps(in_plane_deg, out_of_plane_deg, panels, path, *, label, title="",
                    levels=None, value_range=None, spec_label="spec met inside the red line"):
    """Maps of one quantity over the incidence-angle grid, side by side on one colour scale.

    Each panel marks normal incidence with a cross and outlines where its spec holds in red;
    a panel whose spec holds nowhere (or everywhere) on the grid says so in words, since there
    is no outline to draw.

    Parameters
    ----------
    in_plane_deg, out_of_plane_deg : ndarray, shape (nx,), (ny,)
        Grid axes (degrees).
    panels : sequence of (values, ok, subtitle)
        `values`: ndarray (ny, nx); `ok`: bool ndarray (ny, nx) or None; `subtitle`: str.
    path : str or Path
    label : str
        Colour-bar label.
    title : str
    levels : sequence of float, optional
        Contour levels to draw (thin white lines, labelled).
    value_range : (float, float), optional
        Colour scale limits shared by all panels; default the range of all finite values.
    spec_label : str
        Legend text of the red outline.

    Returns
    -------
    pathlib.Path
    """
    from matplotlib.lines import Line2D

    panels = list(panels)
    # Arrows on the colour bar only when a given range may cut values off.
    extend = "neither" if value_range is None else "both"
    if value_range is None:
        finite = np.concatenate([np.ravel(v)[np.isfinite(np.ravel(v))] for v, _, _ in panels])
        value_range = (float(finite.min()), float(finite.max())) if finite.size else (0.0, 1.0)
    low, high = value_range
    fig = new_figure(figsize=(5.0 * len(panels) + 1.2, 5.2), layout="constrained")
    axes = np.atleast_1d(fig.subplots(1, len(panels), sharey=True))
    for ax, (values, ok, subtitle) in zip(axes, panels):
        mesh = ax.pcolormesh(in_plane_deg, out_of_plane_deg, np.clip(values, low, high),
                             shading="auto", cmap="cividis", vmin=low, vmax=high)
        if levels is not None:
            lines = ax.contour(in_plane_deg, out_of_plane_deg, values, levels=levels,
                               colors="white", linewidths=0.7, linestyles="dashed")
            ax.clabel(lines, fontsize=7, fmt="%g")
        note = None
        if ok is not None and ok.any() and not ok.all():
            ax.contour(in_plane_deg, out_of_plane_deg, ok.astype(float), levels=[0.5],
                       colors="#e74c3c", linewidths=2.0)
        elif ok is not None:
            note = "spec met everywhere on the map" if ok.all() else "spec met nowhere on the map"
        if note:
            ax.text(0.5, 0.03, note, transform=ax.transAxes, ha="center", va="bottom",
                    fontsize=9, color="white", bbox=dict(facecolor="#e74c3c", lw=0))
        ax.plot([0.0], [0.0], "+", color="white", ms=12, mew=2.0)
        ax.set_xlabel("in-plane incidence angle (deg)")
        ax.set_aspect("equal")
        ax.set_title(subtitle, fontsize=9)
    axes[0].set_ylabel("out-of-plane incidence angle (deg)")
    handles = [Line2D([], [], color="#e74c3c", lw=2.0, label=spec_label),
               Line2D([], [], color="white", marker="+", ls="", ms=10, mew=2.0,
                      markeredgecolor="#333333", label="normal incidence")]
    fig.legend(handles=handles, loc="outside lower center", ncols=2, fontsize=8)
    fig.colorbar(mesh, ax=list(axes), label=label, extend=extend)
    if title:
        fig.suptitle(title, fontsize=10)
    return save_figure(fig, path)
