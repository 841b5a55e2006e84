"""Figures of a prism's performance: deviation and split over a band, detector footprints, and
maps over incidence angle. Each function takes analysis results and writes (or draws) a figure;
none computes physics."""
import numpy as np

from .drawing import beam_colour

__all__ = ["plot_split_versus_wavelength", "plot_footprints", "plot_angle_map"]


def _figure(path, fig):
    fig.savefig(path, dpi=120)
    import matplotlib.pyplot as plt
    plt.close(fig)
    return path


def plot_split_versus_wavelength(wavelength_um, split_result, band_um, path, *, title=""):
    """Deviation of the main beams, their exact split and the split's asymmetry (deviation of
    the bisector from the input) versus wavelength.

    Parameters
    ----------
    wavelength_um : ndarray, shape (n,)
    split_result : SplitResult
        From :func:`prismdesign.analysis.split` over `wavelength_um`.
    band_um : (float, float)
        Working band, shaded.
    path : str or Path
    title : str
    """
    import matplotlib.pyplot as plt

    fig, (top, middle, bottom) = plt.subplots(3, 1, sharex=True, figsize=(7.0, 7.0),
                                              layout="constrained",
                                              gridspec_kw={"height_ratios": [2, 2, 1.3]})
    for label in split_result.main_labels:
        top.plot(wavelength_um, split_result.in_plane_deg[label], color=beam_colour(label),
                 label=f"beam {label}")
    top.axhline(0.0, color="#777777", lw=0.8)
    top.set_ylabel("in-plane deviation (deg)")
    top.legend(fontsize=8)
    middle.plot(wavelength_um, split_result.split_deg, color="#222222")
    middle.set_ylabel("split, exact (deg)")
    bottom.plot(wavelength_um, 3600.0 * np.asarray(split_result.asymmetry_deg), color="#555555")
    bottom.set_ylabel("asymmetry (arcsec)")
    bottom.set_xlabel("vacuum wavelength (µm)")
    for ax in (top, middle, bottom):
        ax.axvspan(*band_um, color="#f3d9a4", alpha=0.5, lw=0)
        ax.grid(True, alpha=0.3)
    top.set_title(title or "Deviation and split versus wavelength (working band shaded)",
                  fontsize=10)
    return _figure(path, fig)


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
    import matplotlib.pyplot as plt
    from matplotlib.patches import Circle

    fig, ax = plt.subplots(figsize=(7.0, 4.5), layout="constrained")
    shades = np.linspace(0.35, 1.0, len(wavelength_um))
    for label in positions_mm:
        colour = beam_colour(label)
        pos = np.asarray(positions_mm[label])
        for i, lam in enumerate(wavelength_um):
            ax.add_patch(Circle((pos[i, 0], pos[i, 1]), radii_mm[label][i], fill=False,
                                color=colour, alpha=float(shades[i]), lw=1.0))
        ax.plot(pos[:, 0], pos[:, 1], ".", color=colour, label=f"beam {label} "
                f"({wavelength_um[0]:g}–{wavelength_um[-1]:g} µm, darker = longer)")
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
    return _figure(path, fig)


def plot_angle_map(in_plane_deg, out_of_plane_deg, values, path, *, label, title="",
                   levels=None, ok=None):
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
        Region meeting the spec; its edge is drawn as a thick line.
    """
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(6.0, 5.0), layout="constrained")
    mesh = ax.pcolormesh(in_plane_deg, out_of_plane_deg, values, shading="auto", cmap="cividis")
    fig.colorbar(mesh, ax=ax, label=label)
    if levels is not None:
        lines = ax.contour(in_plane_deg, out_of_plane_deg, values, levels=levels, colors="white",
                           linewidths=0.8)
        ax.clabel(lines, fontsize=7, fmt="%g")
    if ok is not None and ok.any() and not ok.all():
        ax.contour(in_plane_deg, out_of_plane_deg, ok.astype(float), levels=[0.5],
                   colors="#e74c3c", linewidths=2.0)
    ax.set_xlabel("in-plane incidence angle (deg)")
    ax.set_ylabel("out-of-plane incidence angle (deg)")
    ax.set_aspect("equal")
    ax.set_title(title, fontsize=10)
    return _figure(path, fig)
