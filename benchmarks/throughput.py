"""Throughput of the exact interface solver, of prism traces and of the extinction analysis.

Run:  python benchmarks/throughput.py [--rays N] [--repeats R] [--parts solver,trace,...]

Every figure is measured in a fresh child process (so its peak memory is its own) and repeated;
the medians are printed side by side, numpy reference against the compiled kernel
(:mod:`prismdesign.optics.compiled_interface`, needs numba), in one run. Parts:

solver      interface solves per second at N rays (all four outgoing waves: amplitudes, power
            fractions, normal components, ray directions, E fields): one ray per call, numpy
            batched, compiled batched; and a general 4 × 4 transfer-matrix library (GeneralTmm,
            test extra) sweeping the incidence, one interface per point, for comparison.
trace       unpolarised Wollaston traces (3 surfaces, all branches), input rays per second.
extinction  extinction analysis of 10⁵ perturbed axes × 5 wavelengths against a raw polarised
            trace of the same rays: time and peak memory.
scaling     solver rate and peak memory per ray from 10⁴ to 10⁷ rays (compiled kernel).

Figures on a shared machine are noisy: compare the columns of one run, not runs on different
days. The first compiled call in a process pays numba's compile (or cache load); the child
processes call the kernel (serial and parallel) before timing, and the "first call" row reports
that cost.
"""
import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import time

import numpy as np

SCRIPT = os.path.abspath(__file__)


def random_inputs(count, seed=1):
    """Random incidence from air onto calcite with random optic axes (unit wave normals)."""
    rng = np.random.default_rng(seed)
    d = rng.normal(size=(count, 3))
    d[:, 2] = np.abs(d[:, 2]) + 2.0
    d /= np.linalg.norm(d, axis=1)[:, None]
    e = np.cross(d, [0.0, 1.0, 0.0])
    e /= np.linalg.norm(e, axis=1)[:, None]
    axis = rng.normal(size=(count, 3))
    axis /= np.linalg.norm(axis, axis=1)[:, None]
    return d, e.astype(complex), axis


def peak_mb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


# --- cases, each run in its own process -------------------------------------------------------

def case_solver(kernel, rays):
    from prismdesign.optics.interface import set_kernel, solve_interface
    set_kernel(kernel)
    d, e, axis = random_inputs(rays)
    normal = np.array([0.0, 0.0, 1.0])
    one = np.ones(rays)
    n_o, n_e = 1.6557 * one, 1.4849 * one                  # calcite near 590 nm, rounded
    # Warm-up: small batches run serially, large ones in parallel: load (or compile) both.
    start = time.perf_counter()
    solve_interface(d[:10], e[:10], normal, (1.0, 1.0), normal, (1.6557, 1.4849), axis[:10])
    solve_interface(d[:5000], e[:5000], normal, (1.0, 1.0), normal, (1.6557, 1.4849), axis[:5000])
    first = time.perf_counter() - start
    base = peak_mb()

    def timed(out=None):
        start, cpu = time.perf_counter(), time.process_time()
        res = solve_interface(d, e, normal, (one, one), normal, (n_o, n_e), axis, out=out)
        return res, time.perf_counter() - start, time.process_time() - cpu

    # The first full-size call takes its ~500 bytes per ray fresh from the operating system
    # (page faults: several times the solve itself on this machine); later calls get memory
    # the process has used before. Both are reported, and calls that overwrite the previous
    # result's arrays (solve_interface(..., out=previous)).
    res, first_large, _ = timed()
    del res
    fresh = []
    for _ in range(3):
        res, wall, cpu = timed()
        fresh.append((wall, cpu))
        del res
    reused = []
    res = None
    for _ in range(3):
        res, wall, cpu = timed(out=res)
        reused.append((wall, cpu))
    wall, cpu = (statistics.median(v) for v in zip(*fresh))
    return {"rate": rays / wall, "cpu_rate": rays / cpu,
            "rate_reused": rays / statistics.median(w for w, _ in reused),
            "rate_first_large": rays / first_large, "first_call_s": first,
            "extra_mb": peak_mb() - base}


def case_single(kernel, rays):
    from prismdesign.optics.interface import set_kernel, solve_interface
    set_kernel(kernel)
    count = min(rays, 3000)
    d, e, axis = random_inputs(count)
    normal = np.array([0.0, 0.0, 1.0])
    solve_interface(d[0], e[0], normal, (1.0, 1.0), normal, (1.6557, 1.4849), axis[0])
    start = time.perf_counter()
    for i in range(count):
        solve_interface(d[i], e[i], normal, (1.0, 1.0), normal, (1.6557, 1.4849), axis[i])
    return {"rate": count / (time.perf_counter() - start)}


def case_generaltmm(kernel, rays):
    """GeneralTmm: air | uniaxial half-space, intensity matrix (p and s inputs) per incidence."""
    import GeneralTmm
    count = min(rays, 100_000)
    mat = GeneralTmm.Material.Static
    tmm = GeneralTmm.Tmm(wl=0.59e-6)
    tmm.AddIsotropicLayer(float("inf"), mat(1.0))
    tmm.AddLayer(float("inf"), mat(1.4849), mat(1.6557), mat(1.6557), 0.3, 0.7)
    betas = np.linspace(0.0, 0.9, count)
    start = time.perf_counter()
    tmm.Sweep("beta", betas)
    return {"rate": count / (time.perf_counter() - start)}


def _wollaston():
    from prismdesign import material
    from prismdesign.prisms import wollaston
    return wollaston(material("calcite"), 15.0, width_mm=10.0)


def case_trace(kernel, rays):
    from prismdesign.optics.interface import set_kernel
    set_kernel(kernel)
    prism = _wollaston()
    side = max(2, int(round(np.sqrt(rays / 100))))
    lam = np.linspace(0.45, 1.0, 100)
    grid = np.linspace(-4, 4, side)
    offsets = np.stack(np.meshgrid(grid, grid), axis=-1)[:, :, None, :]
    prism.trace(lam, offset_mm=offsets[:4, :4], polarisation="unpolarised")    # warm-up
    base = peak_mb()
    runs = []
    for _ in range(3):             # median of three in one process (the first pays page faults)
        start, cpu = time.perf_counter(), time.process_time()
        prism.trace(lam, offset_mm=offsets, polarisation="unpolarised")
        runs.append((time.perf_counter() - start, time.process_time() - cpu))
    elapsed, cpu = (statistics.median(v) for v in zip(*runs))
    return {"rate": side * side * lam.size / elapsed, "cpu_rate": side * side * lam.size / cpu,
            "extra_mb": peak_mb() - base}


def _perturbed(samples):
    from prismdesign.analysis.extinction import perturb_axes
    rng = np.random.default_rng(7)
    prism = _wollaston()
    errors = rng.normal(0.0, 0.2, (2, samples))            # degrees: azimuth, tilt
    return prism, perturb_axes(prism, errors[0][:, None], errors[1][:, None])


EXTINCTION_WAVELENGTHS = np.array([0.5, 0.6, 0.7, 0.8, 0.9])


def case_extinction(kernel, samples):
    from prismdesign.analysis import extinction
    from prismdesign.optics.interface import set_kernel
    set_kernel(kernel)
    prism, perturbed = _perturbed(samples)
    extinction(_perturbed(min(samples, 1000))[1], EXTINCTION_WAVELENGTHS, nominal=prism)
    base = peak_mb()
    start, cpu = time.perf_counter(), time.process_time()
    extinction(perturbed, EXTINCTION_WAVELENGTHS, nominal=prism)
    elapsed, cpu = time.perf_counter() - start, time.process_time() - cpu
    return {"seconds": elapsed, "cpu_seconds": cpu, "peak_mb": peak_mb(),
            "extra_mb": peak_mb() - base}


def case_raw_trace(kernel, samples):
    from prismdesign.optics.interface import set_kernel
    set_kernel(kernel)
    prism, perturbed = _perturbed(samples)
    _perturbed(min(samples, 1000))[1].trace(EXTINCTION_WAVELENGTHS, polarisation=(1.0, 0.0))
    base = peak_mb()
    start, cpu = time.perf_counter(), time.process_time()
    perturbed.trace(EXTINCTION_WAVELENGTHS, polarisation=(1.0, 0.0), power_threshold=0.0)
    elapsed, cpu = time.perf_counter() - start, time.process_time() - cpu
    return {"seconds": elapsed, "cpu_seconds": cpu, "peak_mb": peak_mb(),
            "extra_mb": peak_mb() - base}


CASES = {"solver": case_solver, "single": case_single, "generaltmm": case_generaltmm,
         "trace": case_trace, "extinction": case_extinction, "raw_trace": case_raw_trace}


# --- driver ----------------------------------------------------------------------------------

def run_case(name, kernel, size):
    out = subprocess.run([sys.executable, SCRIPT, "--case", name, "--kernel", kernel,
                          "--size", str(size)], capture_output=True, text=True)
    if out.returncode != 0:
        return {"error": (out.stderr.strip().splitlines() or ["failed"])[-1]}
    return json.loads(out.stdout.strip().splitlines()[-1])


def measure(jobs, repeats):
    """Run each (label, case, kernel, size) `repeats` times, interleaved; medians per field."""
    samples = {job[0]: [] for job in jobs}
    for _ in range(repeats):
        for label, name, kernel, size in jobs:
            samples[label].append(run_case(name, kernel, size))
    result = {}
    for label, runs in samples.items():
        good = [r for r in runs if "error" not in r]
        if not good:
            result[label] = runs[0]
            continue
        result[label] = {key: statistics.median(r[key] for r in good) for key in good[0]}
        result[label]["spread"] = ({key: (min(r[key] for r in good), max(r[key] for r in good))
                                    for key in good[0]})
    return result


def fmt(value, unit=""):
    return f"{value:,.3g}{unit}" if isinstance(value, float) else str(value)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rays", type=int, default=1_000_000, help="rays per batched solve")
    parser.add_argument("--repeats", type=int, default=5, help="runs per figure (median)")
    parser.add_argument("--samples", type=int, default=100_000,
                        help="perturbed axes for the extinction part")
    parser.add_argument("--max-scaling-rays", type=int, default=10_000_000)
    parser.add_argument("--parts", default="solver,trace,extinction,scaling")
    parser.add_argument("--case", help=argparse.SUPPRESS)
    parser.add_argument("--kernel", default="auto", help=argparse.SUPPRESS)
    parser.add_argument("--size", type=int, help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.case:
        print(json.dumps(CASES[args.case](args.kernel, args.size)))
        return

    from prismdesign.optics.interface import _NUMBA_FOUND
    kernels = ["numpy"] + (["compiled"] if _NUMBA_FOUND else [])
    if not _NUMBA_FOUND:
        print("numba is not installed: compiled figures skipped (pip install \"prismdesign[fast]\")")
    parts = args.parts.split(",")
    print(f"{os.cpu_count()} CPUs; medians of {args.repeats} runs, each in a fresh process "
          f"(min-max in brackets)")

    def row(title, results, key, unit="", scale=1.0):
        cells = []
        for kernel in kernels:
            r = results.get(kernel)
            if r is None:
                continue
            if "error" in r:
                cells.append(f"{kernel}: {r['error']}")
                continue
            lo, hi = r["spread"][key]
            cells.append(f"{kernel} {fmt(r[key] * scale, unit)} "
                         f"[{fmt(lo * scale)}-{fmt(hi * scale)}]")
        print(f"  {title:<44} " + "   ".join(cells))

    if "solver" in parts:
        jobs = [(k + name, name, k, size) for k in kernels
                for name, size in (("solver", args.rays), ("single", 3000))]
        jobs.append(("generaltmm", "generaltmm", "numpy", min(args.rays, 100_000)))
        res = measure(jobs, args.repeats)
        print(f"interface solves ({args.rays:,} rays, random incidence air -> calcite, random axes)")
        row("one ray per call, solves/s", {k: res[k + "single"] for k in kernels}, "rate")
        row("batched, first large call in a process, /s", {k: res[k + "solver"] for k in kernels},
            "rate_first_large")
        row("batched, solves/s", {k: res[k + "solver"] for k in kernels}, "rate")
        row("batched, overwriting the last result, /s", {k: res[k + "solver"] for k in kernels},
            "rate_reused")
        row("batched, solves per CPU-second (all threads)", {k: res[k + "solver"] for k in kernels},
            "cpu_rate")
        row("memory per ray while solving, bytes", {k: res[k + "solver"] for k in kernels},
            "extra_mb", "", 2**20 / args.rays)
        row("first call in a process, s", {k: res[k + "solver"] for k in kernels}, "first_call_s")
        g = res["generaltmm"]
        if "error" in g:
            print(f"  general 4x4 library (GeneralTmm): not run ({g['error']})")
        else:
            print(f"  {'general 4x4 library (GeneralTmm sweep), /s':<44} {fmt(g['rate'])} "
                  f"[{fmt(g['spread']['rate'][0])}-{fmt(g['spread']['rate'][1])}] (one "
                  f"interface, p and s inputs per point)")
    if "trace" in parts:
        res = measure([(k, "trace", k, args.rays // 10) for k in kernels], args.repeats)
        print(f"unpolarised Wollaston traces (3 surfaces, all branches, {args.rays // 10:,} input rays)")
        row("input rays/s", res, "rate")
        row("input rays per CPU-second (all threads)", res, "cpu_rate")
        row("memory per input ray, bytes", res, "extra_mb", "", 2**20 / (args.rays // 10))
    if "extinction" in parts:
        s = args.samples
        jobs = [(k + name, name, k, s) for k in kernels for name in ("extinction", "raw_trace")]
        res = measure(jobs, max(1, min(args.repeats, 3)))
        print(f"extinction analysis, {s:,} perturbed axes x {EXTINCTION_WAVELENGTHS.size} wavelengths")
        row("analysis, s", {k: res[k + "extinction"] for k in kernels}, "seconds")
        row("raw polarised trace of the same rays, s", {k: res[k + "raw_trace"] for k in kernels},
            "seconds")
        row("analysis, CPU-seconds (all threads)", {k: res[k + "extinction"] for k in kernels},
            "cpu_seconds")
        row("raw trace, CPU-seconds (all threads)", {k: res[k + "raw_trace"] for k in kernels},
            "cpu_seconds")
        row("analysis peak memory, MB", {k: res[k + "extinction"] for k in kernels}, "peak_mb")
        row("raw trace peak memory, MB", {k: res[k + "raw_trace"] for k in kernels}, "peak_mb")
        for k in kernels:
            a, b = res[k + "extinction"], res[k + "raw_trace"]
            if "error" not in a and "error" not in b:
                print(f"  {k}: analysis / raw trace = {a['seconds'] / b['seconds']:.2f} "
                      f"(CPU time: {a['cpu_seconds'] / b['cpu_seconds']:.2f})")
    if "scaling" in parts:
        sizes = [n for n in (10_000, 100_000, 1_000_000, 10_000_000) if n <= args.max_scaling_rays]
        kernel = kernels[-1]
        res = measure([(str(n), "solver", kernel, n) for n in sizes], max(1, min(args.repeats, 3)))
        print(f"scaling of the batched solve ({kernel})")
        for n in sizes:
            r = res[str(n)]
            if "error" in r:
                print(f"  {n:>12,} rays: {r['error']}")
                continue
            print(f"  {n:>12,} rays: {fmt(r['rate'])} solves/s, {fmt(r['cpu_rate'])} per "
                  f"CPU-second, {r['extra_mb'] * 2**20 / n:,.0f} bytes per ray")


if __name__ == "__main__":
    main()
