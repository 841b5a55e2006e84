"""The built-in demonstration: the main job, end to end, on an invented setup.

Scenario (invented for the demo): in our lab's polarimetry bench, a two-channel polarimeter
splits a collimated 0.8–1.0 µm beam (1/e² waist radius 1.0 mm) with a calcite Wollaston prism
(10 mm square aperture, 12° wedges) onto a pair of 3 mm photodiodes 150 mm behind the prism. The
demo builds the prism, traces it exactly across the band and reports split, deviations,
separation and clearance at the photodiodes, transmission, and the extinction ratio and stray
leakage of the prism as specified, whose first wedge's optic axis is turned by 0.1° in azimuth.
The field of view is read from the whole 2-D map of incidence angles for that prism (and, for
comparison, for a perfectly aligned one): where the stray leakage stays at or below 1e-6 of the
transmitted power with both beams transmitted. It writes figures.
"""
import warnings
from pathlib import Path

import numpy as np

from .. import analysis
from ..analysis.extinction import perturb_axes
from ..prisms import wollaston
from .demo_materials import LASER_CAUTION, run_demo as crystal_comparison
from .drawing import draw_side_view
from .field_words import region_words, summarise_region
from .files import new_figure, save_figure
from .plots import plot_angle_maps, plot_footprints, plot_split_versus_wavelength
from .tables import format_table

__all__ = ["run_demo", "DEMO_SETUP"]

#: The invented setup of the demo.
DEMO_SETUP = dict(material="calcite", wedge_angle_deg=12.0, width_mm=10.0, height_mm=10.0,
                  band_um=(0.8, 1.0), design_wavelength_um=0.9, detector_distance_mm=150.0,
                  waist_mm=1.0, photodiode_radius_mm=1.5, axis_error_deg=0.1,
                  leakage_limit=1e-6, field_half_range_deg=15.0, field_steps=121)


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


def _leakage_field(prism, setup, main):
    """Leakage map of `prism` at the design wavelength and where the demo's spec holds.

    Spec: both main beams transmitted (:func:`analysis.field_of_view` with ``beam_passes``)
    and the stray beams together carry at most ``leakage_limit`` of the transmitted power,
    the quantity of the table's leakage column.

    Returns
    -------
    grid_deg : ndarray, shape (n,)
    leakage : ndarray, shape (n, n)
        Stray share of the transmitted power, indexed [out_of_plane, in_plane].
    ok : bool ndarray, shape (n, n)
    summary : RegionSummary
    """
    lam = setup["design_wavelength_um"]
    fov = analysis.field_of_view(prism, lam, requirements=[analysis.beam_passes(b) for b in main],
                                 half_range_deg=setup["field_half_range_deg"],
                                 steps=setup["field_steps"], refine=False)
    grid = fov.in_plane_deg
    trans = analysis.transmission(prism, lam, grid[None, :], grid[:, None])
    stray = sum((p for label, p in trans.power.items() if label not in main),
                np.zeros(np.shape(trans.total)))
    leakage = stray / trans.total
    ok = fov.combined & (leakage <= setup["leakage_limit"])
    return grid, leakage, ok, summarise_region(ok, grid, grid)


def run_demo(out_dir="prismdesign-demo"):
    """Run the demonstration and write its figures into `out_dir`.

    Parameters
    ----------
    out_dir : str or os.PathLike
        Folder for the figures (created if missing).

    Returns
    -------
    str
        The printed report: crystal comparison, design table, field of view, files written,
        laser caution.
    """
    setup = DEMO_SETUP
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    lines = [crystal_comparison(out, caution=False), ""]
    prism = _prism(setup)
    # The prism as specified: the first wedge's axis turned by the stated azimuth error.
    as_specified = perturb_axes(prism, azimuth_error_deg=setup["axis_error_deg"], piece=0)
    band = setup["band_um"]
    lam0 = setup["design_wavelength_um"]
    limit = setup["leakage_limit"]
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        wavelengths = np.linspace(band[0], band[1], 5)
        headers, rows, main = _table(prism, setup, wavelengths)

        wide = np.linspace(band[0] - 0.1, band[1] + 0.1, 121)
        split_path = plot_split_versus_wavelength(
            wide, analysis.split(prism, wide), band, out / "split_versus_wavelength.png",
            title=f"Calcite Wollaston, 12° wedges: deviation and split ({band[0]:g}–{band[1]:g} "
                  f"µm band shaded)")

        fig = new_figure(figsize=(8.0, 4.0), layout="constrained")
        draw_side_view(prism, lam0, ax=fig.subplots(), exit_length_mm=2.0 * prism.length_mm)
        side_path = save_figure(fig, out / "side_view.png")

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

        fields = {name: _leakage_field(p, setup, main)
                  for name, p in (("as specified", as_specified), ("aligned", prism))}
        grid = fields["aligned"][0]
        floor = np.log10(limit) - 3.0          # colour scale: 1000× below the spec ...
        panels = [(np.log10(np.maximum(leak, 10.0 ** (floor - 1))), ok, subtitle)
                  for (_, leak, ok, _), subtitle in zip(
                      fields.values(),
                      (f"as specified: first wedge's axis turned {setup['axis_error_deg']:g}°",
                       "perfectly aligned (for comparison)"))]
        fov_path = plot_angle_maps(
            grid, grid, panels, out / "field_of_view.png",
            label="log10 leakage: stray (oo + ee) / transmitted power",
            levels=[floor + 1, floor + 2, floor + 4, floor + 5],
            value_range=(floor, floor + 6),    # ... to 1000× above it
            spec_label=f"leakage ≤ {limit:g} and both beams pass (the spec)",
            title=f"Field of view of the demo Wollaston at {lam0:g} µm")
    step = grid[1] - grid[0]
    on_axis = {name: f"{f[1][grid.size // 2, grid.size // 2]:.1e}".replace("0.0e+00", "0")
               for name, f in fields.items()}
    lines += [
        "prismdesign demo - our two-channel polarimeter: calcite Wollaston, 12° wedges, "
        f"{setup['width_mm']:g} mm aperture, photodiodes {setup['detector_distance_mm']:g} mm away",
        "",
        format_table(headers, rows),
        "",
        "split: exact angle between the two beams; dev: in-plane deviation from the input;",
        f"clearance: gap between the 1/e² circles in beam radii (waist {setup['waist_mm']:g} mm);",
        "T: transmitted power of each beam for unpolarised input, uncoated faces;",
        "ER: extinction ratio of each channel read in the nominal frame, and leakage: share of",
        "    the transmitted power in the stray oo/ee beams, both for the prism as specified:",
        f"    the first wedge's axis turned by {setup['axis_error_deg']:g}°.",
        "",
        f"Field of view at {lam0:g} µm, spec: leakage ≤ {limit:g} and both beams transmitted; "
        f"map of ±{grid[-1]:g}° × ±{grid[-1]:g}° in {step:g}° steps (field_of_view.png):",
        f"  as specified ({setup['axis_error_deg']:g}° axis error): on-axis leakage "
        f"{on_axis['as specified']}; the spec is {region_words(fields['as specified'][3])}.",
        f"  perfectly aligned, for comparison: on-axis leakage {on_axis['aligned']}; the spec "
        f"is {region_words(fields['aligned'][3])}.",
        "",
    ]
    lines += [f"warning: {w.message}" for w in caught]
    lines += [f"wrote {p}" for p in (split_path, side_path, foot_path, fov_path)]
    lines += ["", LASER_CAUTION]
    return "\n".join(lines)
