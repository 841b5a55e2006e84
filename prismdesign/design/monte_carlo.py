"""Monte Carlo of built prisms: yield against a requirement, spread of the figures, what fails.

N prisms are drawn from a :class:`~prismdesign.design.tolerance.ToleranceSet` and traced as
batches of `chunk_size` perturbed prisms (memory stays bounded whatever N is). A prism passes
when every margin of the requirement is met (:mod:`prismdesign.design.batch_merit`, the
per-sample twin of :func:`~prismdesign.design.merit.assess`). The yield comes with its binomial
standard error √(Y(1 − Y)/N).

Which parameters drive failures: the Spearman rank correlation between each parameter's
|error| and the sample's worst relative margin (margin over its scale, the least of all
requirements). A strongly negative value means: the larger that error, the closer to failing.
It catches a parameter that fails prisms on both sides of its nominal, where a signed
correlation would be zero.
"""
import sys
from dataclasses import dataclass

import numpy as np
from scipy import stats

from .._display import shown
from .batch_merit import sample_figures, sample_margins
from .merit import assess
from .tolerance import ToleranceSet

__all__ = ["MonteCarloResult", "monte_carlo", "passing", "DEFAULT_CHUNK"]

#: Perturbed prisms per batch: ~20k keeps a 5-wavelength batch well under 1 GB.
DEFAULT_CHUNK = 20000


@dataclass(frozen=True)
class MonteCarloResult:
    """Outcome of a Monte Carlo of built prisms.

    Attributes
    ----------
    tolerances : ToleranceSet
    seed : int
    errors : dict[str, ndarray of shape (N,)]
        The drawn error of each parameter.
    margins : dict[str, ndarray of shape (N,)]
        Margin of each requirement per sample (NaN: missed, a beam lost).
    scales : dict[str, float]
    target_figure : ndarray of shape (N, n) or None
        On-axis target figure (split, separation, offset or shear) per sample and wavelength.
    wavelength_um : ndarray, shape (n,)
    passed : ndarray of bool, shape (N,)
    """

    tolerances: ToleranceSet
    seed: int
    errors: dict
    margins: dict
    scales: dict
    target_kind: str
    target_figure: np.ndarray | None
    wavelength_um: np.ndarray
    passed: np.ndarray

    @property
    def samples(self):
        return int(self.passed.size)

    @property
    def yield_fraction(self):
        """Fraction of samples meeting every requirement."""
        return float(self.passed.mean())

    @property
    def yield_error(self):
        """Binomial standard error of the yield."""
        y = self.yield_fraction
        return float(np.sqrt(max(y * (1 - y), 0.0) / self.samples))

    @property
    def worst_relative_margin(self):
        """Least margin over its scale per sample (−inf where a beam is lost), shape (N,)."""
        rel = [np.where(np.isnan(m), -np.inf, m / self.scales[k])
               for k, m in self.margins.items()]
        return np.min(rel, axis=0)

    def worst_sample(self):
        """Index, errors and margins of the sample furthest from meeting the requirement."""
        i = int(np.argmin(self.worst_relative_margin))
        return dict(index=i, errors={k: float(v[i]) for k, v in self.errors.items()},
                    margins={k: float(v[i]) for k, v in self.margins.items()})

    def failure_drivers(self):
        """Rows (parameter, rank correlation of |error| with the worst relative margin,
        share of failing samples), most driving first; fixed tolerances are left out."""
        worst = self.worst_relative_margin
        finite = np.isfinite(worst)
        floor = worst[finite].min() - 1.0 if finite.any() else -1.0
        worst = np.where(finite, worst, floor)
        rows = []
        failing = ~self.passed
        for t in self.tolerances.items:
            if t.distribution == "fixed":
                continue
            size = np.abs(self.errors[t.name])
            if np.ptp(size) == 0 or np.ptp(worst) == 0:
                rho = 0.0
            else:
                rho = float(stats.spearmanr(size, worst).statistic)
            beyond = size > 2 * t.sigma if t.sigma > 0 else np.zeros_like(failing)
            share = float((beyond & failing).sum() / failing.sum()) if failing.any() else 0.0
            rows.append(dict(parameter=t.name, rank_correlation=rho,
                             failing_share_beyond_2_sigma=share))
        rows.sort(key=lambda r: (r["rank_correlation"], r["parameter"]))
        return rows

    def figure_spread(self):
        """Standard deviation of the target figure over the samples, per wavelength."""
        if self.target_figure is None:
            return None
        return np.nanstd(self.target_figure, axis=0, ddof=1)


def _progress(done, total, stream):
    width = 30
    filled = int(width * done / total)
    stream.write(f"\r  Monte Carlo [{'#' * filled}{'.' * (width - filled)}] {done}/{total}")
    if done == total:
        stream.write("\n")
    stream.flush()


def passing(margins):
    """True where every margin is defined and >= 0 (+inf: nothing to meet there)."""
    values = list(margins.values())
    ok = np.ones(np.shape(values[0]), dtype=bool)
    for m in values:
        ok &= ~np.isnan(m) & (m >= 0)
    return ok


def monte_carlo(prism, requirement, tolerances, samples=10000, seed=0, *,
                chunk_size=DEFAULT_CHUNK, progress=None, sizes=None, units=None):
    """Draw built prisms, trace them in batches, and judge each against the requirement.

    Parameters
    ----------
    prism : Prism
        Nominal design.
    requirement : Requirement
    tolerances : ToleranceSet or sequence of Tolerance
    samples : int
        Number of built prisms N (>= 1).
    seed : int
        Seed of ``numpy.random.default_rng``: the same seed gives the same bytes.
    chunk_size : int
        Prisms per traced batch (bounds memory; does not change the result).
    progress : bool, optional
        Show a progress bar on stderr; default: only when stderr is a terminal.
    sizes : dict[str, float], optional
        Override tolerance sizes (used by the allocation, with `units`).
    units : dict[str, ndarray], optional
        Unit variates to reuse (common random numbers); default drawn from `seed`.

    Returns
    -------
    MonteCarloResult
    """
    if not isinstance(tolerances, ToleranceSet):
        tolerances = ToleranceSet(tuple(tolerances))
    if isinstance(seed, (bool, np.bool_)) or not isinstance(seed, (int, np.integer)):
        raise ValueError(f"seed must be a whole number, got {shown(seed)}")
    if isinstance(chunk_size, (bool, np.bool_)) or not isinstance(chunk_size, (int, np.integer)) \
            or chunk_size < 1:
        raise ValueError(f"chunk_size must be a whole number >= 1, got {shown(chunk_size)}")
    units = tolerances.unit_draws(samples, seed) if units is None else units
    errors = tolerances.scale(units, sizes)
    count = next(iter(errors.values())).size
    nominal = assess(prism, requirement)
    main = nominal.figures.main_labels
    show = sys.stderr.isatty() if progress is None else bool(progress)
    margins, scales, target = {}, {}, []
    kind = requirement.target_kind
    for start in range(0, count, chunk_size):
        chunk = {k: v[start:start + chunk_size] for k, v in errors.items()}
        figs, batch = sample_figures(prism, requirement, chunk, main_labels=main)
        m, scales = sample_margins(prism, requirement, figs, batch, nominal)
        for k, v in m.items():
            margins.setdefault(k, []).append(np.broadcast_to(v, (next(iter(chunk.values())).size,)))
        if kind != "polariser":
            value = {"split": figs.split_deg, "separation": figs.separation_mm,
                     "offset": figs.offset_mm, "shear": figs.offset_mm}[kind]
            if value is not None:
                target.append(value[..., 0])
        if show:
            _progress(min(start + chunk_size, count), count, sys.stderr)
    margins = {k: np.concatenate(v) for k, v in margins.items()}
    return MonteCarloResult(tolerances=tolerances.with_sizes(sizes or {}), seed=int(seed),
                            errors=errors, margins=margins, scales=scales, target_kind=kind,
                            target_figure=np.concatenate(target) if target else None,
                            wavelength_um=requirement.wavelengths_um, passed=passing(margins))
