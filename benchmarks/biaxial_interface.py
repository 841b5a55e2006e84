"""Cost of a biaxial interface solve (Berreman 4 × 4 path) against the uniaxial closed form.

Run:  python benchmarks/biaxial_interface.py [--rays N] [--repeats R]

Prints interface solves per second, air → crystal at random incidence, for
- a uniaxial crystal through the closed-form solver (compiled kernel when numba is installed),
- the same crystal written as biaxial (n_x = n_y), which takes the general-ε Berreman path,
- KTP at 1.064 µm (biaxial) at a tilted orientation,
and an unpolarised trace of a 5 mm KTP walk-off plate (input rays per second).
Figures on a shared machine are noisy: compare the rows of one run.
"""
import argparse
import statistics
import time

import numpy as np

import prismdesign as pd
from prismdesign.optics import crystal_axes_from_vectors, solve_interface
from prismdesign.optics.biaxial import BiaxialIndices


def _rate(call, count, repeats):
    call()
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        call()
        times.append(time.perf_counter() - start)
    return count / statistics.median(times)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rays", type=int, default=100_000)
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    rng = np.random.default_rng(0)
    m = args.rays
    theta = rng.uniform(0.0, 1.2, m)
    k = np.stack([np.sin(theta), np.zeros(m), np.cos(theta)], axis=-1)
    field = np.stack([np.cos(theta), np.zeros(m), -np.sin(theta)], axis=-1).astype(complex)
    z = np.array([0.0, 0.0, 1.0])
    axes = crystal_axes_from_vectors([np.cos(0.5), 0.0, -np.sin(0.5)], [np.sin(0.5), 0.0, np.cos(0.5)])
    ktp = pd.material("ktp").indices(1.064)
    rows = [
        ("uniaxial, closed form", lambda: solve_interface(k, field, z, (1.0, 1.0), z, (1.6, 1.7),
                                                          axes[2])),
        ("same crystal as biaxial (Berreman)",
         lambda: solve_interface(k, field, z, (1.0, 1.0), z, BiaxialIndices(1.6, 1.6, 1.7, axes), z)),
        ("KTP at 1.064 µm (Berreman)",
         lambda: solve_interface(k, field, z, (1.0, 1.0), z, BiaxialIndices(*ktp, axes), z)),
    ]
    print(f"interface solves per second, {m} rays, median of {args.repeats}:")
    for label, call in rows:
        print(f"  {label:38s} {_rate(call, m, args.repeats):12.3g}")
    plate = pd.prisms.free_stack([dict(material="ktp", crystal_axes=axes, thickness_mm=5.0)])
    angles = rng.uniform(-2.0, 2.0, m // 10)
    rate = _rate(lambda: plate.trace(1.064, in_plane_deg=angles), angles.size, args.repeats)
    print(f"  {'KTP plate trace, unpolarised':38s} {rate:12.3g} input rays per second")


if __name__ == "__main__":
    main()
