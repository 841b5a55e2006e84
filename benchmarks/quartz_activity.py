"""Figures for optical activity in quartz: rotatory power against the table, the angle where
activity and linear birefringence are equal, a quartz Rochon's undeviated beam, and the cost
of the gyrotropic solve against the plain one.

Run: python benchmarks/quartz_activity.py
"""
import time
import warnings

import numpy as np

from prismdesign.materials import material
from prismdesign.optics.gyrotropic import activity_crossover_angle_deg
from prismdesign.optics.interface import solve_interface
from prismdesign.optics.tracer import trace
from prismdesign.prisms import rochon

# Soret & Sarasin via Winkelmann, Handbuch der Physik II (1894) p. 801 (C, E, F from memory).
TABLE = {0.7594: 12.668, 0.6867: 15.746, 0.6563: 17.318, 0.5893: 21.724, 0.5270: 27.543,
         0.4861: 32.773, 0.4308: 42.604, 0.4102: 47.481, 0.3968: 51.193}


def main():
    quartz = material("quartz")
    right = quartz.with_handedness("right")
    lam = np.array(list(TABLE))
    rho = right.rotatory_power_deg_per_mm(lam)
    print("wavelength_um  table_deg_per_mm  model  difference_%")
    for w, t, r in zip(lam, TABLE.values(), rho):
        print(f"{w:.4f}  {t:8.3f}  {r:8.3f}  {100 * (r / t - 1):+.3f}")
    for w in (0.4861, 0.5893, 0.6563):
        n_o, n_e = quartz.indices(w)
        xi = right.indices(w).chirality
        print(f"crossover angle at {w} um: {float(activity_crossover_angle_deg(n_o, n_e, xi)):.3f} deg")

    w = 0.5893
    prism = rochon(right, 20.0, width_mm=10.0, height_mm=10.0, edge_thickness_mm=1.0,
                   design_wavelength_um=w)
    x = np.linspace(-5.0, 5.0, 11)
    start = np.stack([x, np.zeros_like(x), np.full_like(x, -1.0)], axis=-1)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")        # the branches are summed below, as it asks
        system = prism.system()
    res = trace(system, start, (0, 0, 1.0), w, (1.0, 0.0))
    beams = [res.beams["oo"], res.beams["eo"]]
    point = beams[0].exit_position_mm
    jones = 0
    for beam in beams:
        k = beam.indices[-1][..., None] * beam.exit_wave_normal
        path = beam.optical_path_mm + np.sum(k * (point - beam.exit_position_mm), -1)
        jones = jones + beam.jones() * np.exp(2j * np.pi * path * 1e3 / w)[..., None]
    total = sum(b.power for b in res.beams.values())
    t1 = np.linalg.norm(beams[0].positions_mm[2] - beams[0].positions_mm[1], axis=-1)
    split = beams[0].deviation_deg()[0] - beams[1].deviation_deg()[0]
    print("Right-handed quartz Rochon, 20 deg wedges, 10 mm aperture, x-polarised input, 589.3 nm")
    print(f"angle between the two o beams of the undeviated output: {abs(split[0]) * 3600:.3f} arcsec")
    print("x_mm  first_wedge_mm  rotation_deg  undeviated_fraction")
    frac = (np.abs(jones) ** 2).sum(-1) / total
    for xi_, t, f in zip(x, t1, frac):
        print(f"{xi_:+5.1f}  {t:6.3f}  {float(rho[3]) * t:8.2f}  {f:.4f}")

    n = 20000
    k_in = np.tile([np.sin(0.1), 0.0, np.cos(0.1)], (n, 1))
    e_in = np.tile([0.0, 1.0, 0.0], (n, 1))
    for label, crystal in (("inactive", quartz), ("active", right)):
        indices = crystal.indices(np.full(n, w))
        # First call outside the timing (the compiled kernel, if installed, compiles then).
        solve_interface(k_in, e_in, (0, 0, 1.0), (1.0, 1.0), (0, 0, 1.0), indices, (0, 0, 1.0))
        t0 = time.perf_counter()
        solve_interface(k_in, e_in, (0, 0, 1.0), (1.0, 1.0), (0, 0, 1.0), indices, (0, 0, 1.0))
        dt = time.perf_counter() - t0
        print(f"{label} interface solves per second: {n / dt:,.0f}")


if __name__ == "__main__":
    main()
