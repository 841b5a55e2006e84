"""Air gap of a Glan prism: coherent etalon against the incoherent (default) treatment.

Run:  python benchmarks/glan_gap_treatment.py [--plot FILE.png]

Calcite, air-spaced, axis in the principal section, 10 µm gap, 633 nm, unpolarised input at
normal incidence. Prints the transmitted power (relative to the input) against the cut angle
in 0.1° steps around 38.5° and against the gap thickness ±0.1 µm, for the gap treated as a
coherent film (ideal etalon) and as an incoherent sum of its reflections, and the cost of each
treatment per traced ray. With --plot, saves both scans as a figure.
"""
import argparse
import time
import warnings

import numpy as np

from prismdesign.prisms import glan_air_spaced

LAM_UM = 0.6328


def transmitted(cut_deg, gap_mm, treatment):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")           # cuts near the limits warn; not the point here
        prism = glan_air_spaced("calcite", cut_deg, gap_mm, layer_treatment=treatment)
    result = prism.trace(LAM_UM)
    return float(sum(result.power(label) for label in result.labels()))


def time_per_ray(treatment, rays=20000):
    prism = glan_air_spaced("calcite", 38.5, 0.01, layer_treatment=treatment)
    angles = np.linspace(-2.0, 2.0, rays)
    start = time.perf_counter()
    prism.trace(LAM_UM, angles, polarisation=(1.0, 0.0))
    return (time.perf_counter() - start) / rays


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--plot", help="save the two scans to this image file")
    args = parser.parse_args()
    cuts = np.round(np.arange(38.0, 39.0001, 0.1), 3)
    gaps_um = np.round(10.0 + np.arange(-0.1, 0.1001, 0.025), 4)
    scans = {}
    for treatment in ("coherent", "incoherent"):
        scans[treatment] = ([transmitted(c, 0.01, treatment) for c in cuts],
                            [transmitted(38.5, g * 1e-3, treatment) for g in gaps_um])
    print("cut_deg  coherent  incoherent   (gap 10 um)")
    for i, c in enumerate(cuts):
        print(f"{c:6.1f}   {scans['coherent'][0][i]:.4f}    {scans['incoherent'][0][i]:.4f}")
    print("\ngap_um   coherent  incoherent   (cut 38.5 deg)")
    for i, g in enumerate(gaps_um):
        print(f"{g:7.3f}  {scans['coherent'][1][i]:.4f}    {scans['incoherent'][1][i]:.4f}")
    for treatment in ("coherent", "incoherent"):
        cut_scan, gap_scan = (np.array(s) for s in scans[treatment])
        print(f"\n{treatment:>10}: largest step between 0.1 deg cuts "
              f"{np.max(np.abs(np.diff(cut_scan))):.4f}; range over gap +-0.1 um "
              f"{np.ptp(gap_scan):.4f}; {time_per_ray(treatment) * 1e6:.1f} us per ray")
    if args.plot:
        import matplotlib
        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
        fig, (left, right) = plt.subplots(1, 2, figsize=(9, 3.6), sharey=True)
        for treatment, style in (("coherent", "o-"), ("incoherent", "s-")):
            left.plot(cuts, scans[treatment][0], style, label=treatment)
            right.plot(gaps_um, scans[treatment][1], style, label=treatment)
        left.set_xlabel("cut angle (deg), gap 10 um")
        right.set_xlabel("gap (um), cut 38.5 deg")
        right.set_xticks(gaps_um[::2])
        left.set_ylabel("transmitted power / input (unpolarised)")
        left.legend()
        fig.suptitle("Calcite air-spaced Glan at 633 nm: gap as etalon or incoherent")
        fig.tight_layout()
        fig.savefig(args.plot, dpi=120)
        print(f"\nfigure saved to {args.plot}")


if __name__ == "__main__":
    main()
