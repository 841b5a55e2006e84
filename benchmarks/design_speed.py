"""Design-layer speed: one single-wedge solve, and a ranked search over every crystal and type.

Prints wall-clock figures (median of a few runs); run from the repository:
``python benchmarks/design_speed.py``. Not a test: timings depend on the machine.
"""
import statistics
import time
import warnings

from prismdesign import design


def timed(function, repeats):
    """Median wall time (s) over `repeats` calls, and the last result."""
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        result = function()
        times.append(time.perf_counter() - start)
    return statistics.median(times), result


def main():
    warnings.simplefilter("ignore")
    band = design.Requirement(band_um=(0.45, 0.7), split_deg=10.0)
    line = design.Requirement(lines_um=[0.6328], split_deg=10.0)
    offset = design.Requirement(lines_um=[1.55], offset_mm=1.0, max_length_mm=15.0)
    polariser = design.Requirement(band_um=(0.4, 0.7), polariser=True, field_half_angle_deg=3.0,
                                   max_leakage=1e-4)
    design.solve("wollaston", "calcite", line)        # warm-up: imports, material caches
    rows = []
    for label, requirement in (("one line", line), ("band of 7", band)):
        seconds, solved = timed(lambda: design.solve("wollaston", "calcite", requirement), 5)
        rows.append((f"single-wedge solve, {label}", seconds, f"{solved.evaluations} evaluations"))
    for label, requirement in (("split over a band", band), ("offset at 1.55 um", offset),
                               ("polariser 0.4-0.7 um", polariser)):
        seconds, ranking = timed(lambda: design.search(requirement), 1)
        rows.append((f"ranked search, {label}", seconds,
                     f"{len(ranking.designs)} designs, "
                     f"{sum(d.evaluations for d in ranking.designs)} evaluations"))
    width = max(len(r[0]) for r in rows)
    for name, seconds, note in rows:
        print(f"{name:<{width}}  {seconds:8.3f} s  {note}")


if __name__ == "__main__":
    main()
