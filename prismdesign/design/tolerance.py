"""Tolerances: named error parameters with a distribution and a relative cost.

A :class:`Tolerance` says how one error parameter (see
:mod:`prismdesign.design.perturbation`) is spread over built prisms:

* ``"normal"`` — normally distributed about zero with standard deviation `size`;
* ``"uniform"`` — uniform within ±`size` (a fabricator's "±limit" with no preferred value);
* ``"fixed"`` — the same error `size` on every prism (a known offset, e.g. a wavelength).

Cost model (common practice, no source): holding a tolerance to size s costs
``cost_weight · reference_size / s`` — halving a limit doubles its cost; the weight says how
expensive that kind of error is to control relative to the others (an axis cut to ±0.1° costs
more than a face angle to ±0.1°). Costs are relative numbers for comparing allocations, not
money.

Samples are drawn as unit variates (standard normal, uniform on [−1, 1], or 1 for fixed) in the
order the tolerances are listed, from ``numpy.random.default_rng(seed)``, then scaled by the
sizes: the same seed gives the same bytes, whatever the chunking, and a change of sizes
reuses the same draws (common random numbers, which keeps the allocation's yield comparisons
free of sampling noise between candidates).
"""
from dataclasses import dataclass, field, replace

import numpy as np

from .._display import shown

__all__ = ["Tolerance", "ToleranceSet", "DISTRIBUTIONS"]

#: Allowed distributions of a tolerance.
DISTRIBUTIONS = ("normal", "uniform", "fixed")


@dataclass(frozen=True)
class Tolerance:
    """One error parameter with its distribution and cost.

    Parameters
    ----------
    name : str
        Error parameter (e.g. ``"face1_angle_deg"``).
    distribution : {"normal", "uniform", "fixed"}
    size : float
        σ (normal), the ±limit (uniform) or the fixed error, in the parameter's unit.
    cost_weight : float
        Relative cost of holding this tolerance at its reference size (> 0).
    loosest, tightest : float, optional
        Bounds of the size for allocation; default 10× and 1/10 of `size`.
    """

    name: str
    distribution: str
    size: float
    cost_weight: float = 1.0
    loosest: float | None = None
    tightest: float | None = None
    reference_size: float | None = field(default=None, repr=False)

    def __post_init__(self):
        if not isinstance(self.name, str) or not self.name:
            raise ValueError(f"tolerance name must be an error parameter name, got "
                             f"{shown(self.name)}")
        if self.distribution not in DISTRIBUTIONS:
            raise ValueError(f"distribution of {self.name} must be one of "
                             f"{', '.join(DISTRIBUTIONS)}, got {shown(self.distribution)}")
        for key in ("size", "cost_weight", "loosest", "tightest", "reference_size"):
            value = getattr(self, key)
            if value is None:
                continue
            if isinstance(value, (str, bytes, bool, np.bool_)) or not np.isscalar(value):
                raise ValueError(f"{key} of tolerance {self.name} must be a number, got "
                                 f"{shown(value)}")
            value = float(value)
            # A fixed error may be any finite offset; everything else is a positive size.
            signed = key == "size" and self.distribution == "fixed"
            if not np.isfinite(value) or (not signed and value <= 0):
                raise ValueError(f"{key} of tolerance {self.name} must be a positive number, "
                                 f"got {shown(value)}")
            object.__setattr__(self, key, value)
        if self.reference_size is None:
            object.__setattr__(self, "reference_size", abs(self.size) or 1.0)
        if self.loosest is None:
            object.__setattr__(self, "loosest", 10.0 * abs(self.size))
        if self.tightest is None:
            object.__setattr__(self, "tightest", 0.1 * abs(self.size))
        if self.distribution != "fixed" and not self.tightest <= self.size <= self.loosest:
            raise ValueError(f"tolerance {self.name}: size {self.size:g} must lie between "
                             f"tightest {self.tightest:g} and loosest {self.loosest:g}")

    @property
    def cost(self):
        """Relative cost ``cost_weight · reference_size / size`` (fixed errors cost nothing)."""
        if self.distribution == "fixed":
            return 0.0
        return self.cost_weight * self.reference_size / self.size

    @property
    def sigma(self):
        """Standard deviation of the error (uniform: limit/√3; fixed: 0)."""
        return {"normal": self.size, "uniform": self.size / np.sqrt(3.0), "fixed": 0.0}[
            self.distribution]

    def resized(self, size):
        """The same tolerance at another size (cost reference kept)."""
        return replace(self, size=float(size))

    def text(self):
        """e.g. "face1_angle_deg ±0.05 (uniform)" or "… σ 0.02 (normal)"."""
        if self.distribution == "normal":
            return f"{self.name} σ {self.size:.3g}"
        if self.distribution == "uniform":
            return f"{self.name} ±{self.size:.3g}"
        return f"{self.name} = {self.size:.3g} (fixed)"


@dataclass(frozen=True)
class ToleranceSet:
    """An ordered set of tolerances, one per error parameter.

    Parameters
    ----------
    items : sequence of Tolerance
    """

    items: tuple

    def __post_init__(self):
        items = tuple(self.items)
        if not items or not all(isinstance(t, Tolerance) for t in items):
            raise ValueError("a tolerance set needs one or more Tolerance objects, got "
                             f"{shown(self.items)}")
        names = [t.name for t in items]
        if len(set(names)) != len(names):
            raise ValueError(f"each error parameter may carry one tolerance, got {names}")
        object.__setattr__(self, "items", items)

    @property
    def names(self):
        return tuple(t.name for t in self.items)

    @property
    def cost(self):
        """Total relative cost."""
        return float(sum(t.cost for t in self.items))

    def __getitem__(self, name):
        for t in self.items:
            if t.name == name:
                return t
        raise ValueError(f"no tolerance named {shown(name)}; have {', '.join(self.names)}")

    def with_sizes(self, sizes):
        """The same set with new sizes (dict name → size)."""
        return ToleranceSet(tuple(t.resized(sizes[t.name]) if t.name in sizes else t
                                  for t in self.items))

    def unit_draws(self, samples, seed):
        """Unit variates per tolerance, shape (samples,), reproducible from `seed`."""
        samples = int(samples)
        if samples < 1:
            raise ValueError(f"samples must be a whole number >= 1, got {shown(samples)}")
        rng = np.random.default_rng(seed)
        out = {}
        for t in self.items:
            if t.distribution == "normal":
                out[t.name] = rng.standard_normal(samples)
            elif t.distribution == "uniform":
                out[t.name] = rng.uniform(-1.0, 1.0, samples)
            else:
                out[t.name] = np.ones(samples)
        return out

    def scale(self, units, sizes=None):
        """Errors from unit variates: unit × size per tolerance."""
        sizes = sizes or {}
        return {t.name: units[t.name] * sizes.get(t.name, t.size) for t in self.items}
