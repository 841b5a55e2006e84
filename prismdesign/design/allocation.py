"""Tolerance allocation: the cheapest (loosest) tolerances that keep the yield above a target.

Method (a greedy search on a fixed sample, documented here because the answer depends on it):

1. Draw the unit variates once (common random numbers): every candidate set of sizes is judged
   on the same N built prisms, so comparisons between candidates carry no sampling noise.
2. If the starting set misses the target yield, tighten: each round tries dividing each
   tolerance's size by `step` and keeps the change with the largest yield gain per added
   cost, until the target is reached (or nothing can be tightened: then it is unreachable).
3. Loosen: each round tries multiplying each size by `step` (up to its `loosest`) and keeps the
   change that saves the most cost while the yield stays at or above the target; it stops
   when no loosening keeps the target. Then the same with the finer steps √step, ⁴√step, ...
   (`refinements` times), so each size ends within a factor step^(1/2^refinements) of where
   it would break the target rather than a whole `step`.

All candidates of one round are traced as one batch. The result is a local optimum on the
`step` grid: each size is within a factor `step` of where it would break the target (given the
others). The final yield is re-checked on fresh samples (another seed) so that the answer is
not tuned to one draw.

Why allocation pays: errors differ in cost and in effect by orders of magnitude. For a 15°
calcite Wollaston at 632.8 nm a 0.5° error of the interface angle moves the split by 0.184°,
a 0.5° tilt of a wedge's optic axis out of its face by 1.7e-4° (the wave then sees
n_e(90° − δ) = n_e + O(δ²)) and a 0.5° turn of the axis within the face by less than 1e-6°:
the axis can be cut loosely, the wedge angle cannot (measured and checked against Snell's law
and the index ellipsoid in ``tests/test_design_tolerance.py``).
"""
from dataclasses import dataclass

import numpy as np

from .._display import shown
from .batch_merit import sample_figures, sample_margins
from .merit import assess
from .monte_carlo import monte_carlo, passing
from .tolerance import ToleranceSet

__all__ = ["Allocation", "allocate"]


@dataclass(frozen=True)
class Allocation:
    """Allocated tolerances with their yield and cost.

    Attributes
    ----------
    start, allocated : ToleranceSet
    target_yield : float
    yield_fraction, yield_error : float
        On the allocation's own samples.
    check_yield, check_error : float
        On fresh samples (independent seed).
    samples : int
    rounds : int
        Rounds of the greedy search (each one batch trace of candidates × samples).
    reached : bool
        Whether the target yield was reached.
    message : str
    """

    start: ToleranceSet
    allocated: ToleranceSet
    target_yield: float
    yield_fraction: float
    yield_error: float
    check_yield: float
    check_error: float
    samples: int
    rounds: int
    reached: bool
    message: str

    def table(self):
        """Rows: parameter, distribution, start size, allocated size, relative cost."""
        return [dict(parameter=a.name, distribution=a.distribution, start=s.size,
                     allocated=a.size, cost=a.cost)
                for s, a in zip(self.start.items, self.allocated.items)]


def _yields(prism, requirement, tolerances, units, candidates, main, nominal, chunk):
    """Yield of each candidate sizes dict, traced as one batch (chunked)."""
    n = next(iter(units.values())).size
    errors = {t.name: np.concatenate([units[t.name] * c.get(t.name, t.size) for c in candidates])
              for t in tolerances.items}
    total = n * len(candidates)
    ok = np.empty(total, dtype=bool)
    for start in range(0, total, chunk):
        part = {k: v[start:start + chunk] for k, v in errors.items()}
        figs, batch = sample_figures(prism, requirement, part, main_labels=main)
        margins, _ = sample_margins(prism, requirement, figs, batch, nominal)
        size = next(iter(part.values())).size
        ok[start:start + size] = np.broadcast_to(passing(margins), (size,))
    return ok.reshape(len(candidates), n).mean(axis=1)


def _cost(tolerances, sizes):
    return sum(t.resized(sizes[t.name]).cost for t in tolerances.items)


def allocate(prism, requirement, tolerances, target_yield=0.95, *, samples=2000, seed=0,
             step=1.25, max_rounds=100, chunk_size=20000, check_samples=None, refinements=3):
    """Loosest tolerances (least relative cost) keeping the yield at or above a target.

    Parameters
    ----------
    prism : Prism
    requirement : Requirement
    tolerances : ToleranceSet
        Starting sizes, bounds (`tightest`, `loosest`) and cost weights; fixed ones stay.
    target_yield : float
        Wanted fraction of built prisms meeting the requirement (0 < target < 1).
    samples : int
        Built prisms per candidate (the same ones for every candidate).
    seed : int
    step : float
        Factor by which a size is loosened or tightened per move (> 1).
    max_rounds : int
    chunk_size : int
    check_samples : int, optional
        Fresh samples for the final check (default = `samples`).
    refinements : int
        Finer loosening passes after the first, each with the square root of the last step.

    Returns
    -------
    Allocation
    """
    if not isinstance(tolerances, ToleranceSet):
        tolerances = ToleranceSet(tuple(tolerances))
    if isinstance(target_yield, (bool, str)) or not 0 < float(target_yield) < 1:
        raise ValueError(f"target_yield must lie between 0 and 1 (e.g. 0.95), got "
                         f"{shown(target_yield)}")
    if isinstance(step, (bool, str)) or not float(step) > 1:
        raise ValueError(f"step must be a factor > 1 (e.g. 1.25), got {shown(step)}")
    target_yield, step = float(target_yield), float(step)
    units = tolerances.unit_draws(samples, seed)
    nominal = assess(prism, requirement)
    main = nominal.figures.main_labels
    free = [t for t in tolerances.items if t.distribution != "fixed"]
    sizes = {t.name: t.size for t in tolerances.items}
    current = _yields(prism, requirement, tolerances, units, [sizes], main, nominal, chunk_size)[0]
    rounds = 0
    while current < target_yield and rounds < max_rounds:
        rounds += 1
        moves = [t for t in free if sizes[t.name] / step >= t.tightest * (1 - 1e-12)]
        if not moves:
            break
        candidates = [dict(sizes, **{t.name: sizes[t.name] / step}) for t in moves]
        ys = _yields(prism, requirement, tolerances, units, candidates, main, nominal, chunk_size)
        gain = [(y - current) / max(_cost(tolerances, c) - _cost(tolerances, sizes), 1e-300)
                for y, c in zip(ys, candidates)]
        best = int(np.argmax(gain))
        sizes, current = candidates[best], float(ys[best])
    reached = current >= target_yield
    for factor in (step ** (0.5 ** k) for k in range(int(refinements) + 1)):
        while reached and rounds < max_rounds:
            rounds += 1
            moves = [t for t in free if sizes[t.name] * factor <= t.loosest * (1 + 1e-12)]
            if not moves:
                break
            candidates = [dict(sizes, **{t.name: sizes[t.name] * factor}) for t in moves]
            ys = _yields(prism, requirement, tolerances, units, candidates, main, nominal,
                         chunk_size)
            keep = [k for k, y in enumerate(ys) if y >= target_yield]
            if not keep:
                break
            saving = {k: _cost(tolerances, sizes) - _cost(tolerances, candidates[k])
                      for k in keep}
            best = max(keep, key=lambda k: (saving[k], ys[k]))
            sizes, current = candidates[best], float(ys[best])
    allocated = tolerances.with_sizes(sizes)
    check = monte_carlo(prism, requirement, allocated, check_samples or samples,
                        seed=seed + 1, chunk_size=chunk_size, progress=False)
    error = float(np.sqrt(current * (1 - current) / samples))
    if reached:
        message = (f"yield {current:.4f} ≥ {target_yield:g} with relative cost "
                   f"{allocated.cost:.4g} (start {tolerances.cost:.4g}); {rounds} rounds")
    else:
        message = (f"target yield {target_yield:g} not reached: {current:.4f} with every "
                   f"tolerance at its tightest the search allowed")
    return Allocation(tolerances, allocated, target_yield, float(current), error,
                      check.yield_fraction, check.yield_error, int(samples), rounds, reached,
                      message)
