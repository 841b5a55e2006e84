"""Throughput of the exact interface solver and of full prism traces.

Run:  python benchmarks/throughput.py [--rays N]

Prints interface solves per second (all four outgoing waves with amplitudes, power fractions,
wave vectors, ray directions and fields) for random incidence on a crystal with random optic
axes, the same solve one ray per call (how a per-ray Python implementation would use it), and
full Wollaston traces per second (3 surfaces, all branches kept).
"""
import argparse
import time

import numpy as np

from prismdesign import FixedIndices, material
from prismdesign.optics import interface
from prismdesign.optics.interface import solve_interface
from prismdesign.prisms import wollaston


def random_inputs(count, seed=1):
    rng = np.random.default_rng(seed)
    d = rng.normal(size=(count, 3))
    d[:, 2] = np.abs(d[:, 2]) + 2.0
    d /= np.linalg.norm(d, axis=1)[:, None]
    e = np.cross(d, [0.0, 1.0, 0.0])
    e /= np.linalg.norm(e, axis=1)[:, None]
    axis = rng.normal(size=(count, 3))
    axis /= np.linalg.norm(axis, axis=1)[:, None]
    return d, e.astype(complex), axis


def best_of(repeats, func):
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return min(times)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rays", type=int, default=1_000_000, help="rays per batched call")
    args = parser.parse_args(argv)
    count = args.rays
    d, e, axis = random_inputs(count)
    normal = np.array([0.0, 0.0, 1.0])
    one = np.ones(count)
    calcite = FixedIndices(1.6557, 1.4849)
    n_o, n_e = calcite.indices(one)

    def batched(with_h):
        res = solve_interface(d, e, normal, (one, one), normal, (n_o, n_e), axis)
        if with_h:
            res.wave_vector, res.h_field
        return res

    solve_all = best_of(3, lambda: batched(False))
    solve_h = best_of(3, lambda: batched(True))
    print(f"interface solves, batched ({count:,} rays, all four waves: coefficients, power "
          f"fractions, normal components, ray directions, E fields): {count / solve_all:,.0f} /s")
    print(f"  ... also forming the full wave vectors and H = k x E: {count / solve_h:,.0f} /s")
    for block in (1024, 4096, 32768):
        default, interface.BLOCK_SIZE = interface.BLOCK_SIZE, block
        t_block = best_of(2, lambda: batched(False))
        interface.BLOCK_SIZE = default
        print(f"  ... with blocks of {block:,} rays instead of {default:,}: {count / t_block:,.0f} /s")

    single = 2000
    t = best_of(1, lambda: [solve_interface(d[i], e[i], normal, (1.0, 1.0), normal,
                                            (1.6557, 1.4849), axis[i]) for i in range(single)])
    print(f"interface solves, one ray per call: {single / t:,.0f} /s "
          f"(batched is {(count / solve_all) / (single / t):,.0f}x faster)")

    prism = wollaston(material("calcite"), 15.0, width_mm=10.0)
    lam = np.linspace(0.45, 1.0, 100)
    offsets = np.stack(np.meshgrid(np.linspace(-4, 4, 100), np.linspace(-4, 4, 100)),
                       axis=-1)[:, :, None, :]
    rays = offsets.shape[0] * offsets.shape[1] * lam.size
    t_trace = best_of(2, lambda: prism.trace(lam, offset_mm=offsets, polarisation=(1.0, 0.0)))
    print(f"Wollaston traces (3 surfaces, all branches, {rays:,} rays): {rays / t_trace:,.0f} rays/s")


if __name__ == "__main__":
    main()
