"""The built-in demonstration: the main job, end to end, on an invented setup.

Scenario (invented for the demo): in our lab's polarimetry bench, a two-channel polarimeter
splits a collimated 0.8–1.0 µm beam (1/e² waist radius 1.0 mm) with a calcite Wollaston prism
(10 mm square aperture, 12° wedges) onto a pair of 3 mm photodiodes 150 mm behind the prism. The
demo builds the prism, traces it exactly across the band and reports split, deviations,
separation and clearance at the photodiodes, transmission, the extinction ratio with a 0.1° axis
azimuth error, and the field of view in which stray leakage stays below 1e-6; it writes figures.
"""
import warnings
from pathlib import Path

import numpy as np

from .. import analysis
from ..analysis.extinction import perturb_axes
from ..prisms import wollaston
from .demo_materials import LASER_CAUTION, run_demo as crystal_comparison
from .drawing import draw_side_view
from .plots import plot_angle_map, plot_footprints, plot_split_versus_wavelength
from .tables import format_table

__all__ = ["run_demo", "DEMO_SETUP"]

#: The invented setup of the demo.
DEMO_SETUP = dict(material="calcite", wedge_angle_deg=12.0, width_mm=10.0, height_mm=10.0,
                  band_um=(0.8, 1.0), design_wavelength_um=0.9, detector_distance_mm=150.0,
                  waist_mm=1.0, photodiode_radius_mm=1.5, axis_error_deg=0.1,
                  leakage_limit=1e-6)


def _prism(setup):
    return wollaston(setup["material"], setup["wedge_angle_deg"], width_mm=setup["width_mm"],
                     height_mm=setup["height_mm"],
                     design_wavelength_um=setup["design_wavelength_um"])


def _table(prism, setup, wavelengths):
    """Rows of the main table and the analysis results behind them."""
    split = analysis.split(prism, wavelengths)
    sep = analysis.separation(prism, wavelengths, setup["detector_distance_mm"],
                              waist_mm=setup["waist_mm"])
    trans = analysis.transmission(prism, wavelengths)
    tilted = perturb_axes(prism, azimuth_error_deg=setup["axis_error_deg"], piece=0)
    ext = analysis.extinction(tilted, wavelengths, nominal=prism)
    a, b = split.main_labels
    rows = []
    for i, lam in enumerate(wavelengths):
        rows.append([f"{lam:.3f}", f"{split.split_deg[i]:.4f}",
                     f"{split.in_plane_deg[a][i]:+.4f}", f"{split.in_plane_deg[b][i]:+.4f}",
                     f"{sep.separation_mm[i]:.3f}", f"{sep.clearance[i]:.2f}",
                     f"{100 * trans.power[a][i]:.2f}", f"{100 * trans.power[b][i]:.2f}",
                     f"{ext.analyser_extinction_ratio[a][i]:.2e}", f"{ext.analyser_extinction_ratio[b][i]:.2e}",
                     f"{ext.leakage_fraction[i]:.1e}"])
    headers = ["wavelength um", "split deg", f"dev {a} deg", f"dev {b} deg",
               "separation mm", "clearance (radii)", f"T {a} %", f"T {b} %",
               f"ER {a}", f"ER {b}", "leakage"]
    return headers, rows, (a, b)


def run_demo(out_dir="prismdesign-demo"):
    """Run the demonstration and write its figures into `out_dir`.

    Parameters
    ----------
    out_dir : str or os.PathLike
        Folder for the figures (created if missing).

    Returns
    -------
    str
        The printed report: crystal comparison, design table, files written, laser caution.
    """
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    setup = DEMO_SETUP
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    lines = [crystal_comparison(out, caution=False), ""]
    prism = _prism(setup)
    band = setup["band_um"]
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        wavelengths = np.linspace(band[0], band[1], 5)
        headers, rows, main = _table(prism, setup, wavelengths)

        wide = np.linspace(band[0] - 0.1, band[1] + 0.1, 121)
        split_path = plot_split_versus_wavelength(
            wide, analysis.split(prism, wide), band, out / "split_versus_wavelength.png",
            title=f"Calcite Wollaston, 12° wedges: deviation and split ({band[0]:g}–{band[1]:g} "
                  f"µm band shaded)")

        fig, ax = plt.subplots(figsize=(8.0, 4.0), layout="constrained")
        draw_side_view(prism, setup["design_wavelength_um"], ax=ax,
                       exit_length_mm=2.0 * prism.length_mm)
        side_path = out / "side_view.png"
        fig.savefig(side_path, dpi=120)
        plt.close(fig)

        band_lams = np.linspace(band[0], band[1], 5)
        sep = analysis.separation(prism, band_lams, setup["detector_distance_mm"],
                                  waist_mm=setup["waist_mm"])
        centre = {label: sep.position_mm[label][:, :2] for label in main}
        radii = {label: sep.beam_radius_mm[label] for label in main}
        mid = len(band_lams) // 2
        diodes = [(centre[label][mid, 0], 0.0, setup["photodiode_radius_mm"], f"photodiode {label}")
                  for label in main]
        foot_path = plot_footprints(
            centre, radii, band_lams, out / "detector_footprints.png", detectors=diodes,
            title=f"Footprints {setup['detector_distance_mm']:g} mm behind the prism "
                  f"(1/e² radius; dashed: 3 mm photodiodes)")

        limit = setup["leakage_limit"]
        leaks = ("oo", "ee")   # the stray beams of a Wollaston: same mode in both wedges
        requirements = [analysis.beam_passes(main[0]), analysis.beam_passes(main[1])] + [
            analysis.power_at_most(label, limit) for label in leaks]
        fov = analysis.field_of_view(prism, setup["design_wavelength_um"],
                                     requirements=requirements, half_range_deg=15.0, steps=121)
        grid_in = fov.in_plane_deg
        grid_out = fov.out_of_plane_deg
        leak_power = analysis.transmission(prism, setup["design_wavelength_um"],
                                           grid_in[None, :], grid_out[:, None])
        total_leak = sum(leak_power.power.get(label, 0.0) for label in leaks)
        fov_path = plot_angle_map(
            grid_in, grid_out, np.log10(np.maximum(total_leak, 1e-16)),
            out / "field_of_view.png", label="log10 leakage power (oo + ee) / input",
            levels=[-7, -6, -5, -4, -3], ok=fov.combined,
            title=f"Field of view at {setup['design_wavelength_um']:g} µm: leakage ≤ {limit:g} "
                  f"inside the red line")
    half = fov.half_angles_deg["combined"]
    # Open-ended half-angles only say the spec still held at the edge of the grid.
    edge = fov.open_ended["combined"]

    def axis_text(i):
        if edge[i] and edge[i + 1]:
            return f"at least ±{half[i]:.2f}° (grid edge)"
        mark = [" (grid edge)" if edge[j] else "" for j in (i, i + 1)]
        return f"+{half[i]:.2f}°{mark[0]} / -{half[i + 1]:.2f}°{mark[1]}"
    lines += [
        "prismdesign demo - our two-channel polarimeter: calcite Wollaston, 12° wedges, "
        f"{setup['width_mm']:g} mm aperture, photodiodes {setup['detector_distance_mm']:g} mm away",
        "",
        format_table(headers, rows),
        "",
        "split: exact angle between the two beams; dev: in-plane deviation from the input;",
        f"clearance: gap between the 1/e² circles in beam radii (waist {setup['waist_mm']:g} mm);",
        "T: transmitted power of each beam for unpolarised input, uncoated faces;",
        "ER: extinction ratio of each channel read in the nominal frame, and leakage: power in",
        f"    the stray oo/ee beams, both with the first wedge's axis turned by "
        f"{setup['axis_error_deg']:g}°.",
        f"Field of view (leakage ≤ {limit:g}, both beams transmitted): in-plane "
        f"{axis_text(0)}, out-of-plane {axis_text(2)}",
        "",
    ]
    lines += [f"warning: {w.message}" for w in caught]
    lines += [f"wrote {p}" for p in (split_path, side_path, foot_path, fov_path)]
    lines += ["", LASER_CAUTION]
    return "\n".join(lines)
