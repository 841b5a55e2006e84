"""Cost of a Monte Carlo of perturbed prisms against the raw trace of the same rays.

Prints: seconds for N perturbed Wollastons at 5 wavelengths (figures, margins, yield), seconds
for the bare batched trace of the same rays (same chunks), their ratio, and the peak resident
memory. Not a test: run ``python benchmarks/monte_carlo.py [N]``.
"""
import resource
import sys
import time

import numpy as np

import prismdesign as pd
from prismdesign.design import Requirement, Tolerance, ToleranceSet, apply_errors, monte_carlo
from prismdesign.design.monte_carlo import DEFAULT_CHUNK


def main(samples=100_000):
    prism = pd.prisms.wollaston("calcite", 15.0)
    need = Requirement(lines_um=(0.45, 0.55, 0.6328, 0.78, 0.98), split_deg=5.29, tolerance=0.3)
    tolerances = ToleranceSet((Tolerance("face1_angle_deg", "uniform", 0.05),
                               Tolerance("face2_angle_deg", "uniform", 0.05),
                               Tolerance("piece0_axis_polar_deg", "uniform", 0.5),
                               Tolerance("piece1_axis_azimuth_deg", "uniform", 0.5),
                               Tolerance("incidence_in_plane_deg", "normal", 0.1)))
    start = time.perf_counter()
    result = monte_carlo(prism, need, tolerances, samples, seed=1, progress=False)
    mc_seconds = time.perf_counter() - start
    errors = tolerances.scale(tolerances.unit_draws(samples, 1))
    lam = need.wavelengths_um[:, None]
    start = time.perf_counter()
    for first in range(0, samples, DEFAULT_CHUNK):
        chunk = {k: v[first:first + DEFAULT_CHUNK] for k, v in errors.items()}
        batch, inputs = apply_errors(prism, chunk, ray_ndim=2)
        batch.trace(lam + inputs.wavelength_um, inputs.in_plane_deg, inputs.out_of_plane_deg,
                    polarisation="unpolarised")
    trace_seconds = time.perf_counter() - start
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"{samples} perturbed prisms x 5 wavelengths (unpolarised pair): "
          f"Monte Carlo {mc_seconds:.2f} s, raw trace {trace_seconds:.2f} s, "
          f"ratio {mc_seconds / trace_seconds:.2f}; yield {100 * result.yield_fraction:.2f} %; "
          f"peak memory {peak_mb:.0f} MB")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
