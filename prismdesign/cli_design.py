"""The ``prismdesign design`` verb: from a requirement (options or a TOML file) to ranked designs.

A thin shell over :func:`prismdesign.design.search`: it turns options into a
:class:`~prismdesign.design.Requirement`, shows progress on a terminal, and prints the ranked
table (or JSON) followed once by the laser caution.
"""
from __future__ import annotations

import argparse
import sys

from .cli_files import output_file, write_csv
from .design import FAMILIES, BAND_NORMS, load_requirement, requirement_from_mapping, search
from .output.demo_materials import LASER_CAUTION

__all__ = ["add_design_parser", "add_requirement_options"]

EXAMPLES = """examples:
  prismdesign design --band 0.45 0.7 --split-deg 10 --tolerance 0.05 --max-length-mm 25
  prismdesign design --lines 1.55 --offset-mm 1.0 --max-length-mm 15 --json
  prismdesign design --band 0.4 0.7 --polariser --field-deg 3 --max-leakage 1e-4
  prismdesign design my-requirement.toml --csv ranked.csv
  prismdesign design my-requirement.toml --save best.design.toml        # the best, as a design file
  prismdesign design my-requirement.toml --save second.design.toml --rank 2
"""

#: Options that map one-to-one onto requirement fields: (option, field, type, help).
_FIELDS = (
    ("--points", "band_points", int, "wavelengths sampled across --band (default 7)"),
    ("--split-deg", "split_deg", float, "target split angle between the two beams (degrees)"),
    ("--split-mrad", "split_mrad", float, "target split angle (milliradians)"),
    ("--separation-mm", "separation_mm", float, "target beam separation on a plane (mm)"),
    ("--distance-mm", "distance_mm", float, "distance of that plane beyond the exit face (mm)"),
    ("--offset-mm", "offset_mm", float, "target lateral offset of parallel beams (mm)"),
    ("--shear-mm", "shear_mm", float, "target lateral shear (Savart plate, mm)"),
    ("--tolerance", "tolerance", float,
     "allowed deviation of the target over the band, in its unit (default 1 %% of it)"),
    ("--localisation-mm", "localisation_distance_mm", float,
     "Nomarski: fringe plane distance beyond the exit face (mm)"),
    ("--objective-bfp-mm", "objective_bfp_mm", float,
     "Nomarski: depth of the objective's back focal plane below its shoulder (mm)"),
    ("--prism-gap-mm", "prism_gap_mm", float,
     "Nomarski: air gap from the objective shoulder to the prism (mm)"),
    ("--bisector-deg", "bisector_deg", float, "wanted bisector angle from the input (degrees)"),
    ("--beam-diameter-mm", "beam_diameter_mm", float, "1/e² input beam diameter (mm)"),
    ("--m-squared", "m_squared", float, "beam quality factor M² (default 1)"),
    ("--min-clearance-mm", "min_clearance_mm", float,
     "smallest gap between the beams' 1/e² edges on the plane (mm)"),
    ("--aperture-mm", "aperture_mm", float, "clear aperture (mm, default 10)"),
    ("--max-length-mm", "max_length_mm", float, "longest allowed prism (mm)"),
    ("--field-deg", "field_half_angle_deg", float, "field-of-view half-angle (degrees)"),
    ("--max-leakage", "max_leakage", float, "largest power fraction in unwanted beams"),
    ("--min-transmission", "min_transmission", float,
     "smallest transmittance of each main beam (fraction)"),
)


def add_requirement_options(p):
    """Options that set a requirement's fields (wavelengths, target, limits) on parser `p`."""
    p.add_argument("--band", nargs=2, type=float, metavar=("FROM_UM", "TO_UM"),
                   help="wavelength band (um)")
    p.add_argument("--lines", nargs="+", type=float, metavar="UM", help="laser lines (um)")
    for option, field, kind, text in _FIELDS:
        p.add_argument(option, dest=field, type=kind, default=None, help=text)
    p.add_argument("--polariser", action="store_true", default=None,
                   help="target: a polariser (Glan types); pair with --field-deg/--max-leakage")


def add_design_parser(sub):
    """Add the ``design`` verb to the sub-command parsers `sub`."""
    p = sub.add_parser(
        "design", help="solve and rank prism designs for a requirement",
        description="Solve every allowed prism type in every suitable crystal for one "
                    "requirement and print them ranked, best first.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("requirement_file", nargs="?", metavar="FILE",
                   help="TOML file with schema = 1 and a [requirement] table (options below "
                        "override its values)")
    add_requirement_options(p)
    p.add_argument("--coated", action="store_true", default=None,
                   help="outer faces antireflection coated (ideal single layer)")
    p.add_argument("--undeviated", dest="undeviated_polarisation",
                   choices=("in_plane", "across"), help="Rochon types: polarisation of the "
                                                         "undeviated beam")
    p.add_argument("--field-goal", dest="field_goal", choices=("symmetric", "widest"),
                   help="polarisers: widest symmetric field (default) or widest total field")
    p.add_argument("--temperature-range", dest="temperature_range_c", nargs=2, type=float,
                   metavar=("FROM_C", "TO_C"),
                   help="hold a split target over this temperature range (needs dn/dT data)")
    p.add_argument("--crystals", nargs="+", metavar="NAME", help="allowed crystals")
    p.add_argument("--types", dest="prism_types", nargs="+", metavar="TYPE",
                   help=f"allowed prism types: {', '.join(FAMILIES)}")
    p.add_argument("--norm", dest="band_norm", choices=BAND_NORMS,
                   help="how a varying target is met over the band (default minimax)")
    p.add_argument("--json", action="store_true", help="print the ranking as JSON")
    p.add_argument("--csv", metavar="FILE", help="also write the ranked table as CSV")
    p.add_argument("--save", metavar="FILE", help="save a design (the best, or --rank N) as a "
                   "design file with its requirement, for analyse / tolerance / report")
    p.add_argument("--rank", type=int, default=1, metavar="N",
                   help="which ranked design --save writes (default 1, the best)")
    p.add_argument("--title", default="", help="title stored in the saved design file")
    p.set_defaults(run=_design_command)


def _requirement(args):
    values = {}
    if args.requirement_file:
        base = load_requirement(args.requirement_file)
        values = {k: v for k, v in vars(base).items() if v is not None}
    if args.band is not None:
        values["band_um"] = tuple(args.band)
        values.pop("lines_um", None)
    if args.lines is not None:
        values["lines_um"] = tuple(args.lines)
        values.pop("band_um", None)
    for _, field, _, _ in _FIELDS:
        if getattr(args, field, None) is not None:
            values[field] = getattr(args, field)
            if field == "split_mrad":
                values.pop("split_deg", None)
    for field in ("polariser", "coated", "undeviated_polarisation", "crystals", "prism_types",
                  "band_norm", "field_goal", "temperature_range_c"):
        if getattr(args, field, None) is not None:
            values[field] = getattr(args, field)
    if "band_um" not in values and "lines_um" not in values:
        raise ValueError("give the wavelengths: --band FROM_UM TO_UM or --lines UM ..., or a "
                         "requirement FILE")
    return requirement_from_mapping(values, where="requirement")


def _progress(done, total, label):
    """A one-line bar on a terminal; nothing when stderr is not a terminal."""
    if not sys.stderr.isatty():
        return
    width = 30
    filled = int(width * done / total)
    sys.stderr.write(f"\r[{'#' * filled}{'.' * (width - filled)}] {done}/{total} {label:<40.40}")
    if done == total:
        sys.stderr.write("\r" + " " * (width + 50) + "\r")
    sys.stderr.flush()


def _write_csv(ranking, path):
    """The ranked rows as CSV, written atomically (never half-written)."""
    write_csv(path, ["rank", "prism_type", "crystal", "parameters", "meets", "length_mm",
                     "transmission", "leakage", "limited_by", "misses", "evaluations"],
              ([row["rank"], row["prism_type"], row["crystal"],
                "; ".join(f"{k}={v}" for k, v in row["parameters"].items()),
                row["meets"], row["length_mm"], row["transmission"], row["leakage"],
                row["active"], " | ".join(row["failing"]), row["evaluations"]]
               for row in ranking.rows()))


def _design_command(args) -> str:
    requirement = _requirement(args)
    # Checked before the search, so a mistyped file name costs nothing.
    if args.csv:
        output_file(args.csv, None, "--csv")
    if args.save:
        output_file(args.save, None, "--save")
    ranking = search(requirement, progress=_progress)
    if args.csv:
        _write_csv(ranking, args.csv)
    if args.save:
        _save(ranking, requirement, args)
    if args.json:
        return ranking.to_json(caution=LASER_CAUTION)
    lines = [ranking.text()]
    if args.csv:
        lines.append(f"wrote {args.csv}")
    if args.save:
        lines.append(f"wrote {args.save} (rank {args.rank})")
    lines += ["", LASER_CAUTION]
    return "\n".join(lines)


def _save(ranking, requirement, args):
    """Write the design of rank `args.rank` as a design file (see design.design_file)."""
    from .design.design_file import design_from_solution, save_design

    count = len(ranking.designs)
    if not 1 <= args.rank <= count:
        raise ValueError(f"--rank {args.rank}: the ranking has {count} design(s); choose 1 to "
                         f"{count}")
    chosen = ranking.designs[args.rank - 1]
    if chosen.prism is None:
        raise ValueError(f"--rank {args.rank}: {chosen.prism_type} in {chosen.crystal} could "
                         f"not be built ({chosen.message}); choose another rank")
    save_design(design_from_solution(chosen, requirement, title=args.title), args.save)
