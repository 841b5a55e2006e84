"""The ``prismdesign analyse``, ``report`` and ``sheet`` verbs.

Thin shells over :mod:`prismdesign.design.design_file` and the output layer: ``analyse`` prints
a design file's table over its requirement's band (or JSON), writes it as CSV and its figures
into a folder; ``report`` writes one self-contained HTML report; ``sheet`` draws the
fabrication sheet (SVG or PDF). Each prints the laser caution once.
"""
from __future__ import annotations

import argparse
import json
from pathlib import Path

from .cli_files import output_file, output_folder, write_csv
from .design.design_file import load_design
from .output.demo_materials import LASER_CAUTION

__all__ = ["add_workflow_parsers"]

ANALYSE_EXAMPLES = """examples:
  prismdesign analyse examples/camera_splitter.design.toml
  prismdesign analyse my.design.toml --figures my-figures --csv band.csv
  prismdesign analyse my.design.toml --json
"""

REPORT_EXAMPLES = """examples:
  prismdesign report examples/camera_splitter.design.toml --out report.html
  prismdesign report my.design.toml --out report.html --samples 5000 --seed 3
"""

SHEET_EXAMPLES = """examples:
  prismdesign sheet examples/imager_split.design.toml --out sheet.svg
  prismdesign sheet my.design.toml --out sheet.pdf
"""


def add_workflow_parsers(sub):
    """Add the ``analyse``, ``report`` and ``sheet`` verbs."""
    p = sub.add_parser(
        "analyse", help="a design file against its requirement: table over the band, figures",
        description="Trace the prism of a design file over its requirement's wavelengths and "
                    "print the split, bisector, separation, offset, transmission and leakage, "
                    "and every margin.",
        epilog=ANALYSE_EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("design_file", metavar="FILE", help="design file (TOML, schema = 1)")
    p.add_argument("--figures", metavar="DIR", help="write side_view.png and band.png here")
    p.add_argument("--csv", metavar="FILE", help="also write the table as CSV")
    p.add_argument("--json", action="store_true", help="print the analysis as JSON")
    p.set_defaults(run=_analyse_command)

    p = sub.add_parser(
        "report", help="one self-contained HTML report of a design file",
        description="Write an HTML report: requirement against achieved, the figures, the "
                    "tolerance table and Monte Carlo yield (when the file lists tolerances), "
                    "the data sources and the laser caution. Opens in any browser; prints "
                    "cleanly.",
        epilog=REPORT_EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("design_file", metavar="FILE", help="design file (TOML, schema = 1)")
    p.add_argument("--out", required=True, metavar="FILE", help="report file (.html)")
    p.add_argument("--samples", type=int, default=2000,
                   help="Monte Carlo built prisms (default 2000)")
    p.add_argument("--seed", type=int, default=0, help="Monte Carlo seed (default 0)")
    p.set_defaults(run=_report_command)

    p = sub.add_parser(
        "sheet", help="fabrication sheet of a design file (SVG or PDF)",
        description="Draw the prism's fabrication sheet: views with dimensions, optic axes, "
                    "tolerances from the design file, notes.",
        epilog=SHEET_EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("design_file", metavar="FILE", help="design file (TOML, schema = 1)")
    p.add_argument("--out", required=True, metavar="FILE", help="sheet file (.svg or .pdf)")
    p.set_defaults(run=_sheet_command)


def _analyse_command(args) -> str:
    from .output.design_analysis import TABLE_COLUMNS, analyse_design, write_analysis_figures
    from .output.tables import format_table

    if args.csv:
        output_file(args.csv, (".csv",), "--csv")
    if args.figures:
        output_folder(args.figures, "--figures")
    design = load_design(args.design_file)
    analysis = analyse_design(design)
    written = []
    if args.csv:
        written.append(write_csv(
            args.csv, [key for key, _ in TABLE_COLUMNS],
            (["" if row[k] is None else repr(row[k]) for k, _ in TABLE_COLUMNS]
             for row in analysis.rows)))
    if args.figures:
        written += write_analysis_figures(analysis, Path(args.figures))
    if args.json:
        data = analysis.to_dict()
        data.update(design_file=str(args.design_file), title=design.title,
                    written=[str(p) for p in written], caution=LASER_CAUTION)
        return json.dumps(data, indent=2)
    lines = [f"{design.title or args.design_file}: {analysis.prism.kind}, length "
             f"{analysis.assessment.figures.length_mm:.3f} mm, main beams "
             f"{', '.join(analysis.assessment.figures.main_labels)}",
             "Requirement: " + "; ".join(analysis.requirement.describe()), "",
             format_table(analysis.headings(), analysis.table_rows()), ""]
    lines += [("  met    " if m.met else "  MISSED ") + m.text()
              for m in analysis.assessment.margins]
    lines.append("meets every requirement" if analysis.meets else "does NOT meet every "
                                                                    "requirement")
    lines += [f"wrote {p}" for p in written]
    lines += ["", LASER_CAUTION]
    return "\n".join(lines)


def _report_command(args) -> str:
    from .output.design_report import write_report

    out = output_file(args.out, (".html", ".htm"), "--out")
    if args.samples < 1:
        raise ValueError(f"--samples must be >= 1, got {args.samples}")
    design = load_design(args.design_file)
    write_report(design, out, source_name=Path(args.design_file).name, samples=args.samples,
                 seed=args.seed)
    return f"wrote {out}\n\n{LASER_CAUTION}"


def _sheet_command(args) -> str:
    from .output.fabrication_sheet import write_fabrication_sheet

    out = output_file(args.out, (".svg", ".pdf"), "--out")
    design = load_design(args.design_file)
    path = write_fabrication_sheet(design.build(), out, tolerances=design.tolerances,
                                   notes=design.notes, requirement=design.requirement)
    return f"wrote {path}\n\n{LASER_CAUTION}"
