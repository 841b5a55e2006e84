"""The ``prismdesign tolerance`` and ``prismdesign fit-built`` verbs.

``tolerance``: which errors matter for a prism against a requirement (ranked sensitivities),
the yield of built prisms (Monte Carlo) and, when asked, the loosest tolerances for a target
yield. ``fit-built``: what a built prism actually is, fitted to a CSV of measurements. Thin
shells over :mod:`prismdesign.design`; they print text (or JSON) and the laser caution once.
"""
from __future__ import annotations

import argparse
import json
from pathlib import Path

import numpy as np

from . import prisms
from .cli_design import _requirement, add_requirement_options
from .cli_files import output_file, output_folder, write_csv
from .design.perturbation import parameter
from .design import (DISTRIBUTIONS, Tolerance, ToleranceSet, allocate, fit_as_built,
                     monte_carlo, read_measurements, sensitivities)
from .output.demo_materials import LASER_CAUTION

__all__ = ["add_tolerance_parsers"]

#: Why a figure of the JSON output can be undefined, by its key (JSON has no NaN: such a
#: figure is written as null and listed under "undefined" with the reason).
_UNDEFINED_REASONS = {
    "sensitivity": "the figure does not exist at the nominal or a stepped prism (a lost beam)",
    "swing": "the figure does not exist at the nominal or a stepped prism (a lost beam)",
    "rank_correlation": "no spread: every sample passed, or this error or the margin is constant",
    "uncertainty": "not determined by these data",
    "correlation": "a parameter not determined by these data",
    "reduced_chi_square": "no degrees of freedom: no more measurements than fitted parameters",
    "residuals": "the model beam is lost at this measurement",
}
_UNDEFINED_DEFAULT = "undefined: the quantity does not exist for this prism (a lost beam)"


def _json_ready(value, where="", undefined=None):
    """`value` with numpy types as plain Python and non-finite floats as None; each None so
    written is recorded in `undefined` as {"field": JSON path, "reason": ...}."""
    if isinstance(value, dict):
        return {k: _json_ready(v, f"{where}.{k}" if where else str(k), undefined)
                for k, v in value.items()}
    if isinstance(value, (list, tuple, np.ndarray)):
        return [_json_ready(v, f"{where}[{i}]", undefined) for i, v in enumerate(value)]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not np.isfinite(value):
        if undefined is not None:
            key = where.rsplit(".", 1)[-1].split("[", 1)[0]
            undefined.append(dict(field=where, value=str(value),
                                  reason=_UNDEFINED_REASONS.get(key, _UNDEFINED_DEFAULT)))
        return None
    return value


def _json_dumps(payload):
    """Strict JSON (no NaN / Infinity tokens) with an "undefined" list of what was null."""
    undefined = []
    clean = _json_ready(payload, "", undefined)
    clean["undefined"] = undefined
    return json.dumps(clean, indent=2, allow_nan=False)

#: Prism types these verbs build from one size value (wedge / cut angle or thickness).
BUILDERS = {"wollaston": prisms.wollaston, "rochon": prisms.rochon,
            "senarmont": prisms.senarmont, "glan_air_spaced": prisms.glan_air_spaced,
            "glan_cemented": prisms.glan_cemented, "savart_plate": prisms.savart_plate,
            "walkoff_displacer": prisms.walkoff_displacer}

TOLERANCE_EXAMPLES = """examples:
  prismdesign tolerance --type wollaston --crystal calcite --size 15 --lines 0.6328 \\
      --split-deg 5.245 --tolerance 0.02 --error face1_angle_deg uniform 0.05 \\
      --error piece0_axis_azimuth_deg uniform 0.5 3 --samples 5000 --target-yield 0.95
  prismdesign tolerance --type wollaston --crystal yvo4 --size 10 --band 0.5 0.7 \\
      --split-deg 4.5 --error face1_angle_deg normal 0.02 --json
  prismdesign tolerance --design my.design.toml      # prism, requirement and tolerances from the file

Error names: piece<i>_axis_polar_deg, piece<i>_axis_azimuth_deg, face<j>_angle_deg,
face<j>_pyramid_deg, piece<i>_length_mm, incidence_in_plane_deg, incidence_out_of_plane_deg,
wavelength_nm, temperature_change_c (faces counted from 0 = entrance).
"""

FIT_EXAMPLES = """examples:
  prismdesign fit-built bench.csv --type wollaston --crystal calcite --size 15 \\
      --fit face1_angle_deg face2_angle_deg
  prismdesign fit-built bench.csv --design my.design.toml --fit face1_angle_deg

The CSV has a wavelength_um column, optional in_plane_deg / out_of_plane_deg, measured columns
(split_deg, first_deviation_deg, second_deviation_deg, offset_mm, opd_um) and optional
sigma_<column> uncertainties; an empty cell means not measured.
"""


def _prism_options(p, aperture=True):
    p.add_argument("--design", metavar="FILE", help="design file (TOML, schema = 1): its prism, "
                   "and its requirement and tolerances unless given as options")
    p.add_argument("--type", dest="prism_type", choices=sorted(BUILDERS),
                   help="prism type (without --design)")
    p.add_argument("--crystal", help="crystal name, e.g. calcite, or a dispersion-data file of "
                   "your own (without --design)")
    p.add_argument("--size", type=float,
                   help="wedge or cut angle (degrees), or plate thickness / length (mm)")
    if aperture:  # the tolerance verb takes it from the requirement's --aperture-mm
        p.add_argument("--aperture-mm", dest="prism_aperture_mm", type=float, default=10.0,
                       help="clear aperture, square (mm, default 10)")


def add_tolerance_parsers(sub):
    """Add the ``tolerance`` and ``fit-built`` verbs to the sub-command parsers `sub`."""
    p = sub.add_parser(
        "tolerance", help="which fabrication errors matter, yield, and tolerance allocation",
        description="Rank the errors of a prism by how much they move its target figure, run "
                    "a Monte Carlo of built prisms against the requirement, and optionally "
                    "find the loosest tolerances that keep a target yield.",
        epilog=TOLERANCE_EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    _prism_options(p, aperture=False)
    add_requirement_options(p)
    p.add_argument("--error", nargs="+", action="append", default=[],
                   metavar="NAME DISTRIBUTION SIZE [COST]",
                   help=f"a tolerance: error name, distribution ({', '.join(DISTRIBUTIONS)}), "
                        f"size (sigma, +-limit or fixed value) and optional relative cost weight")
    p.add_argument("--samples", type=int, default=5000, help="built prisms drawn (default 5000)")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("--target-yield", type=float, default=None,
                   help="also allocate the loosest tolerances for this yield (e.g. 0.95)")
    p.add_argument("--plots", metavar="DIR", help="write tornado and histogram PNGs here")
    p.add_argument("--json", action="store_true", help="print the results as JSON")
    p.add_argument("--csv", metavar="FILE", help="write the tolerance table as CSV")
    p.set_defaults(run=_tolerance_command, undeviated_polarisation=None, crystals=None,
                   prism_types=None, band_norm=None, requirement_file=None)

    p = sub.add_parser(
        "fit-built", help="fit a built prism's errors to measurements (CSV)",
        description="Infer the errors of a built prism (face angles, axis errors, ...) from "
                    "measured splits, deviations, offsets or path differences by least "
                    "squares, with uncertainties and correlations.",
        epilog=FIT_EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("measurements", metavar="CSV", help="measurements file")
    _prism_options(p)
    p.add_argument("--fit", nargs="+", required=True, metavar="NAME",
                   help="error parameters to fit")
    p.add_argument("--json", action="store_true", help="print the fit as JSON")
    p.add_argument("--csv", metavar="FILE", help="also write the fitted parameters as CSV")
    p.set_defaults(run=_fit_command)


def _design_file(args):
    """The --design file (loaded once), or None."""
    if not getattr(args, "design", None):
        return None
    if getattr(args, "_loaded_design", None) is None:
        from .design.design_file import load_design
        args._loaded_design = load_design(args.design)
    return args._loaded_design


def _build(args, aperture_mm=None):
    design = _design_file(args)
    options = (("--type", args.prism_type), ("--crystal", args.crystal), ("--size", args.size))
    if design is not None:
        given = [o for o, v in options if v is not None]
        if given:
            raise ValueError(f"--design {args.design}: the file holds the prism; leave out "
                             f"{', '.join(given)}")
        return design.build()
    missing = [o for o, v in options if v is None]
    if missing:
        raise ValueError(f"give --design FILE, or the prism as --type, --crystal and --size "
                         f"(missing {', '.join(missing)})")
    a = args.prism_aperture_mm if aperture_mm is None else aperture_mm
    if not (np.isfinite(a) and a > 0):
        raise ValueError(f"--aperture-mm must be a positive size in mm, got {a:g}")
    crystal = args.crystal
    if crystal.lower().endswith(".toml") or Path(crystal).is_file():   # a user's data file
        from . import load_material
        if not Path(crystal).is_file():
            raise ValueError(f"--crystal {crystal}: no such dispersion-data file")
        crystal = load_material(crystal)
    return BUILDERS[args.prism_type](crystal, args.size, width_mm=a, height_mm=a)


def _tolerances(raw):
    if not raw:
        raise ValueError("give at least one --error NAME DISTRIBUTION SIZE [COST]")
    items = []
    for entry in raw:
        if len(entry) not in (3, 4):
            raise ValueError(f"--error takes NAME DISTRIBUTION SIZE [COST], got "
                             f"{' '.join(entry)!r}")
        try:
            numbers = [float(v) for v in entry[2:]]
        except ValueError:
            raise ValueError(f"--error {' '.join(entry)}: SIZE and COST must be numbers") \
                from None
        items.append(Tolerance(entry[0], entry[1], numbers[0],
                               cost_weight=numbers[1] if len(numbers) > 1 else 1.0))
    return ToleranceSet(tuple(items))


def _tolerance_command(args) -> str:
    if args.samples < 1:
        raise ValueError(f"--samples must be >= 1, got {args.samples}")
    # Output names are checked before the (long) Monte Carlo, so a typo costs nothing.
    if args.csv:
        output_file(args.csv, None, "--csv")
    if args.plots:
        output_folder(args.plots, "--plots")
    design = _design_file(args)
    if design is not None and design.requirement is not None and args.band is None \
            and args.lines is None:
        args.requirement_file = None
        requirement = design.requirement
    else:
        requirement = _requirement(args)
    prism = _build(args, requirement.clear_aperture_mm)
    if design is not None and design.tolerances is not None and not args.error:
        tolerances = design.tolerances
    else:
        tolerances = _tolerances(args.error)
    for t in tolerances.items:
        parameter(prism, t.name)  # one-line error naming the allowed errors of this prism
    sens = sensitivities(prism, requirement, tolerances.names)
    figure = {"split": "split_deg", "separation": "separation_mm", "offset": "offset_mm",
              "shear": "offset_mm", "polariser": "leakage"}[requirement.target_kind]
    ranked = sens.ranked(figure, tolerances)
    mc = monte_carlo(prism, requirement, tolerances, args.samples, seed=args.seed)
    allocation = None
    if args.target_yield is not None:
        allocation = allocate(prism, requirement, tolerances, args.target_yield,
                              samples=min(args.samples, 4000), seed=args.seed)
    rows = [dict(parameter=t.name, distribution=t.distribution, size=t.size,
                 cost=t.cost, **({"allocated": a.size, "allocated_cost": a.cost}
                                 if allocation else {}))
            for t, a in zip(tolerances.items,
                            allocation.allocated.items if allocation else tolerances.items)]
    if args.csv:
        write_csv(args.csv, list(rows[0]), (row.values() for row in rows))
    if args.plots:
        from .output.tolerance_plots import plot_histogram, plot_tornado
        folder = Path(args.plots)
        folder.mkdir(parents=True, exist_ok=True)
        plot_tornado(ranked, folder / "tornado.png")
        if mc.target_figure is not None:
            plot_histogram(mc, folder / "histogram.png", target=requirement.target_value,
                           tolerance=requirement.target_tolerance)
    if args.json:
        return _json_dumps(dict(sensitivities=ranked, yield_fraction=mc.yield_fraction,
                               yield_error=mc.yield_error, samples=mc.samples, seed=args.seed,
                               worst_sample=mc.worst_sample(), drivers=mc.failure_drivers(),
                               tolerances=rows,
                               allocation=None if allocation is None else dict(
                                   message=allocation.message,
                                   check_yield=allocation.check_yield),
                               caution=LASER_CAUTION))
    unit = ranked[0]["figure_unit"] if ranked else ""
    what = args.design if design is not None else f"{args.crystal}, {args.size:g}"
    lines = [f"What moves the {figure} of this {prism.kind} ({what}):",
             f"  {'error':30s} {'per unit':>12s} {'tolerance':>10s} {'swing ' + unit:>12s}"]
    for r in ranked:
        lines.append(f"  {r['parameter']:30s} {r['sensitivity']:+12.4g} {r['tolerance']:10.3g} "
                     f"{r['swing']:12.4g}")
    lines += ["", f"Monte Carlo: {mc.samples} built prisms (seed {args.seed}): yield "
                  f"{100 * mc.yield_fraction:.2f} % ± {100 * mc.yield_error:.2f} %"]
    worst = mc.worst_sample()
    lines.append("  worst sample: " + ", ".join(f"{k} {v:+.3g}" for k, v in
                                                  worst["errors"].items()))
    lines.append("  failure drivers (rank correlation of |error| with the worst margin): "
                 + ", ".join(f"{d['parameter']} {d['rank_correlation']:+.2f}"
                             for d in mc.failure_drivers()))
    if allocation is not None:
        lines += ["", f"Allocation for yield >= {args.target_yield:g}: {allocation.message}",
                  f"  {'error':30s} {'distribution':>12s} {'start':>10s} {'allocated':>10s} "
                  f"{'cost':>8s}"]
        for row in allocation.table():
            lines.append(f"  {row['parameter']:30s} {row['distribution']:>12s} "
                         f"{row['start']:10.3g} {row['allocated']:10.3g} {row['cost']:8.3g}")
        lines.append(f"  check on fresh samples: yield {100 * allocation.check_yield:.2f} % ± "
                     f"{100 * allocation.check_error:.2f} %")
    if args.csv:
        lines.append(f"wrote {args.csv}")
    if args.plots:
        lines.append(f"figures in {args.plots}")
    lines += ["", LASER_CAUTION]
    return "\n".join(lines)


def _fit_command(args) -> str:
    if args.csv:
        output_file(args.csv, None, "--csv")
    prism = _build(args)
    data = read_measurements(args.measurements)
    fit = fit_as_built(prism, data, args.fit)
    if args.csv:
        table = fit.table()
        write_csv(args.csv, list(table[0]), (row.values() for row in table))
    if args.json:
        return _json_dumps(dict(parameters=fit.table(), reduced_chi_square=fit.reduced_chi_square,
                                correlation=fit.correlation, residuals=fit.residuals,
                                undetermined=list(fit.undetermined),
                                evaluations=fit.evaluations, message=fit.message,
                                caution=LASER_CAUTION))
    wrote = f"\nwrote {args.csv}" if args.csv else ""
    return fit.report() + wrote + "\n\n" + LASER_CAUTION
