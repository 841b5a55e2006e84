"""Solvers: the free parameters of one prism type in one crystal (or pair) for a requirement.

How each prism type is solved (the merit, :mod:`prismdesign.design.merit`, says what is good):

* **One free parameter** (wedge angle, length, plate thickness): the target figure rises with
  the parameter, so the band is met by a root of one equation, found with
  :func:`scipy.optimize.brentq` inside a bracket from a coarse scan: the mean over the band
  equals the target (``band_norm="mean"``), or the mid-range (max + min)/2 equals it
  (``"minimax"``: this makes the largest deviation from the target smallest, exactly, for a
  figure that rises with the parameter at every wavelength). ``"rms"`` minimises the root mean
  square deviation with :func:`scipy.optimize.minimize_scalar` inside that bracket.
* **Two free parameters** (unequal Wollaston wedges for a centred or biased split; two-crystal
  Wollastons whose split stays flat over the band): :func:`scipy.optimize.least_squares` with
  bounds, started from the one-parameter solution or a thin-prism estimate.
* **Glan-type polarisers**: the cut angle is solved in closed form from the critical angles
  (:func:`~prismdesign.prisms.glan_cut_angle_limits`) for the widest symmetric in-plane field
  over the band; the exact trace then checks the field asked for.
* **Nomarski prisms**: the wedge for the split, the optic-axis tilt for the fringe plane
  (solved by the prism builder), alternated until both hold.

Every solve counts its model evaluations (prism builds + traces) and returns a :class:`Design`
with its :class:`~prismdesign.design.merit.Assessment`: the margin on each requirement, the
active one, and, when the target cannot be reached, why (e.g. the split beyond which a beam is
totally reflected) and the closest design.
"""
from dataclasses import dataclass, replace

import numpy as np
from scipy import optimize

from .. import prisms
from ..materials import material as library_material
from .families import FAMILIES, Family, design_wavelength_um, family as family_named
from .merit import assess, figures
from .perturbation import has_thermo_optic_data
from .requirement import Requirement

__all__ = ["Design", "solve", "thin_prism_pair"]


@dataclass(frozen=True)
class Design:
    """A solved design and how it meets the requirement.

    Attributes
    ----------
    prism_type : str
        Family name (e.g. "wollaston").
    crystal : str or tuple of str
    parameters : dict[str, float]
        Solved free parameters, in their units (e.g. ``{"wedge_angle_deg": 9.79}``).
    prism : Prism or None
        The built prism (None when nothing could be built).
    assessment : Assessment or None
        Figures and margins against the requirement.
    evaluations : int
        Model evaluations the solve took (prism builds with a trace or an analysis).
    method : str
        How it was solved, in words (solver and band norm).
    message : str
        Why the solver stopped; for an unreachable target, why and what the closest design is.
    converged : bool
        The solver reached its target (the requirement may still fail on other limits).
    """

    prism_type: str
    crystal: object
    parameters: dict
    prism: object
    assessment: object
    evaluations: int
    method: str
    message: str
    converged: bool

    @property
    def meets(self):
        """True when the solver converged and every requirement is met."""
        return self.converged and self.assessment is not None and self.assessment.meets

    def summary(self):
        """One line: type, crystal, parameters, verdict."""
        crystal = "+".join(self.crystal) if isinstance(self.crystal, tuple) else self.crystal
        values = ", ".join(f"{k} = {v:.6g}" for k, v in self.parameters.items())
        verdict = "meets every requirement" if self.meets else "does not meet the requirement"
        return f"{self.prism_type} in {crystal} ({values}): {verdict}; {self.message}"


class _Model:
    """Builds and traces candidates, counting evaluations and remembering the last figures."""

    def __init__(self, fam, crystal, requirement, solve_requirement, bounds=None):
        self.family, self.crystal = fam, crystal
        self.bounds = bounds if bounds is not None else fam.bounds()
        self.requirement, self.solve_requirement = requirement, solve_requirement
        self.count = 0
        self._cache = {}

    def figures(self, values):
        key = tuple(float(v) for v in np.atleast_1d(values))
        if key not in self._cache:
            self.count += 1
            try:
                prism = self.family.build(self.crystal, key, self.requirement)
                figs = figures(prism, self.solve_requirement)
            except ValueError:
                prism = figs = None
            self._cache[key] = (prism, figs)
        return self._cache[key]

    def target(self, values):
        """On-axis target figure over the band (NaN array if the candidate fails)."""
        _, figs = self.figures(values)
        n = self.requirement.wavelengths_um.size
        if figs is None or len(figs.main_labels) < 2:
            return np.full(n, np.nan)
        return figs.target_figure(self.requirement.target_kind)


def _reduce(values, norm, target):
    """The band figure reduced for root finding: mean or mid-range minus the target."""
    if np.any(np.isnan(values)):
        return np.nan
    if norm == "mean":
        return float(np.mean(values)) - target
    return 0.5 * float(values.max() + values.min()) - target


def _solve_one(model, norm):
    """One free parameter: scan for a bracket, then a root (or a bounded minimum for rms)."""
    req = model.requirement
    target = req.target_value
    (low,), (high,) = model.bounds
    reduce_norm = "minimax" if norm == "rms" else norm
    name = model.family.parameters[0].name

    def miss(x):
        return _reduce(model.target([x]), reduce_norm, target)

    bracket = _bracket_near(miss, model.family.estimate(model.crystal, req), low, high)
    if bracket is None:
        grid = np.linspace(low, high, 9)
        g = np.array([miss(x) for x in grid])
        finite = np.isfinite(g)
        crossing = np.nonzero(finite[:-1] & finite[1:] & (np.sign(g[:-1]) != np.sign(g[1:])))[0]
        if crossing.size == 0:
            return None, _unreachable(model, grid, g, norm, target)
        bracket = grid[crossing[0]], grid[crossing[0] + 1]
    a, b = bracket
    x = optimize.brentq(miss, a, b, xtol=1e-12, rtol=1e-13, maxiter=60)
    if norm == "rms":
        def rms(x):
            v = model.target([x])
            return np.inf if np.any(np.isnan(v)) else float(np.sqrt(np.mean((v - target) ** 2)))
        span = 0.05 * (b - a) + 1e-9
        res = optimize.minimize_scalar(rms, bounds=(max(low, x - span), min(high, x + span)),
                                       method="bounded", options={"xatol": 1e-10})
        x = float(res.x)
    return {name: float(x)}, f"{name} solved by {'brentq' if norm != 'rms' else 'brentq, then a bounded minimum of the rms'} ({norm} over the band)"


def _bracket_near(miss, guess, low, high, factor=1.25, steps=6):
    """A sign-changing bracket grown geometrically from a first-order `guess`, or None."""
    if guess is None or not low < guess < high:
        return None
    a = guess
    fa = miss(a)
    if not np.isfinite(fa):
        return None
    for _ in range(steps):
        b = min(a * factor, high) if fa < 0 else max(a / factor, low)
        fb = miss(b)
        if not np.isfinite(fb):
            return None
        if np.sign(fb) != np.sign(fa):
            return (a, b) if a < b else (b, a)
        if b in (low, high):
            return None
        a, fa = b, fb
    return None


def _unreachable(model, grid, g, norm, target):
    """Why no parameter value reaches the target, and the closest one."""
    finite = np.isfinite(g)
    name = model.family.parameters[0].name
    unit = model.requirement.target_unit
    kind = model.requirement.target_kind
    if not finite.any():
        return (f"no {name} between {grid[0]:g} and {grid[-1]:g} gives two beams leaving the "
                f"prism", None)
    best = int(np.nanargmin(np.abs(g)))
    reached = g[best] + target
    if g[finite].max() < 0:
        last = int(np.nonzero(finite)[0][-1])
        if last < grid.size - 1:
            # Refine where the beams are lost: the reachable maximum lies just below it.
            lo, hi = grid[last], grid[last + 1]
            for _ in range(12):
                mid = 0.5 * (lo + hi)
                value = _reduce(model.target([mid]), "minimax" if norm == "rms" else norm, target)
                lo, hi = (mid, hi) if np.isfinite(value) else (lo, mid)
                if np.isfinite(value):
                    reached = value + target
            _, figs = model.figures([hi])
            why = "a beam is lost"
            if figs is not None and figs.main_labels:
                for label, reasons in figs.lost.items():
                    bad = reasons[:, 0][reasons[:, 0] != ""]
                    if bad.size:
                        why = f"beam {label!r} is {bad[0]}"
                        break
            elif figs is not None:
                why = "only one beam leaves the prism"
            return (f"target {kind} {target:g} {unit} is beyond reach in this crystal: the "
                    f"largest is {reached:.6g} {unit} at {name} = {lo:.6g}; beyond that {why}",
                    lo)
        return (f"target {kind} {target:g} {unit} is beyond reach: at most {reached:.6g} {unit} "
                f"within {name} <= {grid[-1]:g}", grid[best])
    return (f"target {kind} {target:g} {unit} is below reach: at least {reached:.6g} {unit} "
            f"within {name} >= {grid[0]:g}", grid[best])


def _solve_two(model, start, residuals, method):
    """Two free parameters by bounded least squares from `start`."""
    lows, highs = model.bounds
    start = np.clip(start, lows + 1e-9, highs - 1e-9)

    def fun(x):
        r = residuals(x)
        # A lost beam: a large, smooth-ish penalty steers the solver back.
        return np.where(np.isfinite(r), r, 1e3)

    res = optimize.least_squares(fun, start, bounds=(lows, highs), x_scale=1.0,
                                 xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=200)
    names = [p.name for p in model.family.parameters]
    return dict(zip(names, map(float, res.x))), f"{method} (least_squares: {res.message})"


def thin_prism_pair(first, second, wavelength_um, split_deg):
    """Thin-prism estimate of two Wollastons in series whose split is flat over a band.

    Each Wollaston splits by 2 (n_e − n_o) tan θ to first order (Hecht, *Optics*, 4th ed.,
    2002, §8.4.3, from memory); in series the signed contributions add, the second's sign
    flipped when it is turned 180° about the beam. The least-squares fit of
    2 Δn₁(λ) t₁ + 2 Δn₂(λ) t₂ = split over the band gives t₁ = tan θ₁, t₂ = ±tan θ₂.

    Parameters
    ----------
    first, second : str
        Crystal names.
    wavelength_um : array_like
        Band samples (µm).
    split_deg : float
        Target split (degrees).

    Returns
    -------
    first_wedge_deg, second_wedge_deg : float
        Wedge angles (degrees); a negative second angle means the second prism is turned.
    spread_deg : float
        Peak-to-peak of the first-order split over the band (degrees).
    """
    lam = np.asarray(wavelength_um, dtype=float)
    dn = []
    for name in (first, second):
        n_o, n_e = library_material(name).indices(lam)
        dn.append(2.0 * (n_e - n_o))
    target = np.deg2rad(split_deg) * np.sign(np.mean(dn[0]))
    matrix = np.stack(dn, axis=-1)
    (t1, t2), *_ = np.linalg.lstsq(matrix, np.full(lam.shape, target), rcond=None)
    if t1 < 0:
        # Turning both prisms over reverses the split, not its size: keep the first upright.
        t1, t2 = -t1, -t2
    model = np.rad2deg(np.abs(matrix @ np.array([t1, t2])))
    return (float(np.rad2deg(np.arctan(t1))), float(np.rad2deg(np.arctan(t2))),
            float(model.max() - model.min()))


def _glan_cut(fam, crystal, requirement):
    """Cut angle for the widest in-plane field over the band, from critical angles.

    The o beam must be totally reflected at the gap (cut ≥ θ_o(α)) and the e beam transmitted
    (cut < θ_e(α)) at every wavelength; both critical angles rise with the in-plane input
    angle α, so for a cut c the field is [α₋, α₊] with max_λ θ_o(α₊) = c and
    min_λ θ_e(α₋) = c (Born & Wolf §1.5.4). The symmetric goal solves α₊ = −α₋ with brentq;
    the widest goal maximises α₊ − α₋ over c on the same two monotonic curves.
    """
    lam = requirement.wavelengths_um
    air = fam.name == "glan_air_spaced"
    gap = "air" if air else "optical_cement"
    axis = "x" if air else "y"
    count = 0

    def limits(alpha):
        nonlocal count
        count += 1
        alpha = np.asarray(alpha, dtype=float)
        t_o, t_e = prisms.glan_cut_angle_limits(crystal, lam[:, None], gap, axis,
                                                in_plane_deg=np.atleast_1d(alpha)[None, :])
        t_e = np.where(np.isnan(t_e), 90.0, t_e)
        return np.max(t_o, axis=0).reshape(alpha.shape), np.min(t_e, axis=0).reshape(alpha.shape)

    lo0, hi0 = (float(v) for v in limits(0.0))
    if not np.isfinite(lo0):
        return None, count, (f"the o beam cannot be totally reflected at the {gap} gap (its "
                             f"index is not above the gap's somewhere in the band)")
    if lo0 >= hi0:
        return None, count, (f"no cut angle polarises over the whole band on axis: the o beam "
                             f"needs a cut >= {lo0:.4g}°, the e beam < {hi0:.4g}°")
    # Both curves on one grid of input angles (one vectorised call), for the field edges.
    alpha = np.linspace(-40.0, 40.0, 8001)
    o_curve, e_curve = limits(alpha)
    usable = np.isfinite(o_curve)

    def edges(cut):
        plus = np.interp(cut, o_curve[usable], alpha[usable])
        minus = np.interp(cut, e_curve, alpha)
        return minus, plus

    if requirement.field_goal == "symmetric":
        def asymmetry(a):
            o, _ = limits(a)
            _, e = limits(-a)
            return float(o) - float(e)
        top = 40.0
        if asymmetry(top) < 0:
            return float(limits(top)[0]), count, "field wider than ±40° (not refined)"
        a = optimize.brentq(asymmetry, 0.0, top, xtol=1e-10)
        cut = float(limits(a)[0])
        return cut, count, (f"cut angle for the widest symmetric in-plane field, ±{a:.4g}° "
                            f"over the band (critical angles, brentq)")
    cuts = np.linspace(lo0, hi0, 2001)[1:-1]
    minus, plus = edges(cuts)
    best = int(np.argmax(plus - minus))
    res = optimize.minimize_scalar(lambda c: -np.subtract(*edges(c)[::-1]),
                                   bounds=(cuts[max(best - 1, 0)], cuts[min(best + 1, cuts.size - 1)]),
                                   method="bounded", options={"xatol": 1e-9})
    cut = float(res.x)
    low, high = edges(cut)
    return cut, count, (f"cut angle for the widest in-plane field, {float(low):+.4g}° to "
                        f"{float(high):+.4g}° (total {float(high - low):.4g}°) over the band "
                        f"(critical angles)")


def _solve_nomarski(model, norm):
    """Wedge for the split with the tilt solved for the fringe plane, alternated to agree."""
    req = model.requirement
    size = dict(width_mm=req.clear_aperture_mm, height_mm=req.clear_aperture_mm,
                design_wavelength_um=design_wavelength_um(req), coated=req.coated)
    tilt = [0.0]
    fixed = Family("nomarski", ("split",), model.family.parameters, 1, "fixed tilt",
                   lambda c, v, r: prisms.nomarski(c, v["wedge_angle_deg"],
                                                   axis_tilt_deg=tilt[0], **size))
    inner = _Model(fixed, model.crystal, req, model.solve_requirement, model.bounds)
    values, method = None, ""
    history = []        # (tilt tried, tilt the fringe plane then asks for)
    for _ in range(12):
        inner._cache.clear()
        values, method = _solve_one(inner, norm)
        if values is None:
            break
        exit_z = inner.figures([values["wedge_angle_deg"]])[0].boundaries[-1].point_mm[2]
        prism = prisms.nomarski(model.crystal, values["wedge_angle_deg"],
                                localisation_distance_mm=req.wanted_localisation_mm(exit_z),
                                **size)
        inner.count += 1
        wanted = prism.parameters["axis_tilt_deg"]
        if abs(wanted - tilt[0]) < 1e-10:
            break
        history.append((tilt[0], wanted - tilt[0]))
        if len(history) >= 2 and history[-1][1] != history[-2][1]:
            # Secant step on g(t) = wanted(t) − t: the plain alternation converges only
            # linearly (each step shrinks the error by the split's sensitivity to the tilt).
            (t0, g0), (t1, g1) = history[-2:]
            tilt[0] = t1 - g1 * (t1 - t0) / (g1 - g0)
        else:
            tilt[0] = wanted
    model.count += inner.count
    if values is None:
        return None, method
    return values, f"{method}; axis tilt {tilt[0]:.6g}° for the fringe plane (alternated)"


def _check_bounds(fam, bounds):
    """(lows, highs) from the family's limits narrowed by user `bounds`, or a one-line error."""
    lows, highs = fam.bounds()
    if bounds is None:
        return lows, highs
    if not isinstance(bounds, dict):
        raise ValueError(f"bounds must be a dict of parameter name to (low, high), got "
                         f"{bounds!r:.60}")
    names = [p.name for p in fam.parameters]
    for name, pair in bounds.items():
        if name not in names:
            raise ValueError(f"bounds: a {fam.name} has free parameters {', '.join(names)}, "
                             f"got {name!r}")
        i = names.index(name)
        try:
            low, high = (float(v) for v in pair)
        except (TypeError, ValueError):
            raise ValueError(f"bounds[{name!r}] must be (low, high) numbers, got {pair!r}") \
                from None
        if not (np.isfinite(low) and np.isfinite(high) and fam.parameters[i].low <= low < high
                <= fam.parameters[i].high):
            raise ValueError(f"bounds[{name!r}] must satisfy {fam.parameters[i].low:g} <= low "
                             f"< high <= {fam.parameters[i].high:g}, got {pair!r}")
        lows[i], highs[i] = low, high
    return lows, highs


def solve(prism_type, crystal, requirement, *, bounds=None):
    """Solve one prism type in one crystal (or pair) for a requirement.

    Parameters
    ----------
    prism_type : str
        A name from :data:`~prismdesign.design.families.FAMILIES`.
    crystal : str or (str, str)
        Library crystal name; a pair for two-crystal types.
    requirement : Requirement
    bounds : dict[str, (float, float)], optional
        Narrower bounds for free parameters (name to (low, high), in their units).

    Returns
    -------
    Design
        Always returned; an unreachable target gives ``converged=False`` with the reason and,
        where one exists, the closest design in `prism` and `assessment`.

    Raises
    ------
    ValueError
        In one line, for an unknown prism type, a prism type that cannot meet this kind of
        target, or a crystal of the wrong count.
    """
    if not isinstance(requirement, Requirement):
        raise ValueError(f"requirement must be a Requirement, got {type(requirement).__name__}")
    fam = family_named(prism_type)
    kind = requirement.target_kind
    if kind not in fam.targets:
        raise ValueError(f"a {fam.name} cannot meet a {kind} target; prism types for it: "
                         f"{', '.join(n for n, f in FAMILIES.items() if kind in f.targets)}")
    crystals = (crystal,) if isinstance(crystal, str) else tuple(crystal)
    if len(crystals) != fam.crystals or not all(isinstance(c, str) for c in crystals):
        raise ValueError(f"a {fam.name} takes {fam.crystals} crystal name(s), got {crystal!r}")
    crystal = crystals[0] if fam.crystals == 1 else crystals
    norm = requirement.band_norm
    limits = _check_bounds(fam, bounds)
    if kind == "polariser":
        return _finish_glan(fam, crystal, requirement)
    solve_req = replace(requirement, field_half_angle_deg=None, max_leakage=None)
    model = _Model(fam, crystal, requirement, solve_req, limits)
    target = requirement.target_value
    message = ""
    if fam.name == "nomarski":
        values, method = _solve_nomarski(model, norm)
    elif fam.crystals == 2:
        t1, t2, _ = thin_prism_pair(crystal[0], crystal[1], requirement.wavelengths_um,
                                    target if kind == "split" else _split_for(requirement))
        residuals, what = (lambda x: model.target(x) - target), "over the band"
        if requirement.temperature_range_c is not None and kind == "split" and all(
                has_thermo_optic_data(library_material(c)) for c in crystal):
            residuals, what = _over_temperature(model, target), "over the band and temperatures"
        values, method = _solve_two(
            model, np.array([t1, t2]), residuals,
            f"split {what} fitted to the target from the thin-prism estimate")
    elif fam.name == "wollaston_unequal":
        sym = _Model(family_named("wollaston"), crystal, requirement, solve_req,
                     (limits[0][:1], limits[1][:1]))
        start, _ = _solve_one(sym, norm)
        model.count += sym.count
        if start is None:
            values, method = None, _
        else:
            want = requirement.bisector_deg or 0.0
            theta = start["wedge_angle_deg"]

            def residuals(x):
                _, figs = model.figures(x)
                if figs is None or figs.split_deg is None:
                    return np.array([np.nan, np.nan])
                v = figs.target_figure(kind)
                return np.array([_reduce(v, norm if norm != "rms" else "mean", target),
                                 float(np.mean(figs.bisector_deg[:, 0])) - want])
            values, method = _solve_two(model, np.array([theta, theta]), residuals,
                                        f"split ({norm}) and bisector {want:g}°")
    else:
        values, method = _solve_one(model, norm)
    if values is None:
        message, closest = method
        if closest is None:
            return Design(fam.name, crystal, {}, None, None, model.count, "", message, False)
        # Two-wedge types fall back to their symmetric closest design.
        values = {p.name: float(closest) for p in fam.parameters}
        converged = False
    else:
        converged = True
    prism, _ = model.figures(list(values.values()))
    if prism is None:
        return Design(fam.name, crystal, values, None, None, model.count, method,
                      "the solved parameters do not build a prism", False)
    distance = prism.parameters.get("localisation_distance_mm") if prism.kind == "nomarski" else None
    assessment = assess(prism, requirement, localisation_distance_mm=distance)
    model.count += 1
    if converged:
        active = assessment.active
        message = (f"{model.count} evaluations; " + (f"limited by {active.name}"
                                                      if active is not None else "no limits"))
    else:
        message = f"{message} ({model.count} evaluations)"
    return Design(fam.name, crystal, values, prism, assessment, model.count, method if converged
                  else "", message, converged)


def _over_temperature(model, target):
    """Residuals of the split over (temperature, wavelength) for a two-parameter solve."""
    from .temperature import temperature_sweep

    req = model.requirement
    temperatures = np.linspace(*req.temperature_range_c, 3)

    def residuals(x):
        prism, _ = model.figures(x)
        if prism is None:
            return np.full(temperatures.size * req.wavelengths_um.size, np.nan)
        model.count += 1
        return (temperature_sweep(prism, req, temperatures).split_deg - target).ravel()
    return residuals


def _split_for(requirement):
    """Split (deg) that puts two beams `separation_mm` apart at `distance_mm` (first guess)."""
    return float(np.rad2deg(2 * np.arctan(0.5 * requirement.separation_mm
                                          / requirement.distance_mm)))


def _finish_glan(fam, crystal, requirement):
    cut, count, message = _glan_cut(fam, crystal, requirement)
    if cut is None:
        return Design(fam.name, crystal, {}, None, None, count, "", message, False)
    prism = fam.build(crystal, [cut], requirement)
    assessment = assess(prism, requirement)
    return Design(fam.name, crystal, {"cut_angle_deg": float(cut)}, prism, assessment, count + 1,
                  "critical-angle solution", f"{message}; {count + 1} evaluations", True)
