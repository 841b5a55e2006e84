"""Command line: ``prismdesign materials | index | demo | design | tolerance | fit-built |
analyse | report | sheet``.

A thin shell over the public API: it parses arguments, calls the library and formats text.
Errors from the library become one line on stderr and exit code 2; warnings (for example a
wavelength outside a material's data range) are printed as ``warning: ...`` lines on stderr.
"""
from __future__ import annotations

import argparse
import sys
import warnings
from pathlib import Path

import numpy as np

from . import load_material, material, material_datasets, materials
from .cli_files import output_file

REFERENCE_WAVELENGTH_UM = 0.6328   # HeNe line, the customary wavelength for quoting indices
FIGURE_SUFFIXES = (".png", ".pdf", ".svg")
MAX_POINTS = 10000                 # a table longer than this is a typo, not a request


def _figure_path(text: str) -> Path:
    """Check a --plot file name before any work is done, so a typo costs nothing."""
    return output_file(text, FIGURE_SUFFIXES, "--plot")


def _materials_command(args) -> str:
    from .output.tables import format_table
    rows = []
    for name in materials():
        sets = material_datasets(name)
        for dataset in sets:
            item = material(name, dataset=dataset)
            lo, hi = item.validity_um
            dn = "-"
            if item.kind == "uniaxial" and lo <= REFERENCE_WAVELENGTH_UM <= hi:
                dn = f"{item.birefringence(REFERENCE_WAVELENGTH_UM):+.5f}"
            # The default (widest band) is starred where a material has a choice.
            shown = f"{dataset}*" if len(sets) > 1 and dataset == sets[0] else dataset
            rows.append([item.name, shown, item.kind, item.optical_sign or "-", f"{lo:g}-{hi:g}",
                         dn, item.reference.short if item.reference else "-"])
    headers = ["name", "dataset", "kind", "sign", "band (um)",
               f"dn at {REFERENCE_WAVELENGTH_UM} um", "source"]
    return "\n".join([format_table(headers, rows), "",
                      "* default dataset (widest band); pick another with "
                      "'prismdesign index NAME --dataset DATASET' or "
                      "material(name, dataset=...)"])


def _is_data_file(text: str) -> bool:
    """A command-line material that names a dispersion-data file rather than a library entry."""
    return text.lower().endswith(".toml") or Path(text).is_file()


def _index_material(args):
    """The material the ``index`` command tabulates: a library entry or a user's data file."""
    if not _is_data_file(args.name):
        return material(args.name, dataset=args.dataset)
    path = Path(args.name)
    if not path.is_file():
        raise ValueError(f"{args.name}: no such dispersion-data file")
    item = load_material(path)
    if args.dataset is not None and args.dataset.strip().lower() != item.dataset:
        raise ValueError(f"--dataset {args.dataset}: the file {args.name} holds dataset "
                         f"{item.dataset!r} only")
    return item


def _temperature_line(item, t, from_file: bool) -> str:
    """What the tabulated values are, temperature-wise, in one line (or a one-line refusal)."""
    t0 = item.temperature_c
    if t is not None and not (np.isfinite(t) and t >= -273.15):
        raise ValueError(f"--temperature {t:g}: temperature_c = {t!r} must be finite and above "
                         f"-273.15 C")
    if t is None or t == t0:
        return f"values at {t0:g} C, the temperature of the data"
    if not _has_thermo(item):
        # A library material may have another dataset that does carry a dn/dT: say which.
        others = [] if from_file else [
            d for d in material_datasets(item.name)
            if d != item.dataset and _has_thermo(material(item.name, dataset=d))]
        hint = (f"; dataset {', '.join(others)} has a linear dn/dT (--dataset)" if others
                else "; leave out --temperature")
        raise ValueError(f"--temperature {t:g}: {item.label} has no thermo-optic data, its "
                         f"indices hold at {t0:g} C only{hint}")
    return (f"values at {t:g} C: the {t0:g} C data shifted by a linear thermo-optic model "
            f"(dn/dT from {item.thermo_reference or 'an unnamed source'})")


def _has_thermo(item) -> bool:
    if item.kind == "biaxial":
        return False                       # no thermo-optic model for biaxial crystals yet
    return (item.dn_dt_o_per_c if item.kind == "uniaxial" else item.dn_dt_per_c) is not None


def _index_command(args) -> str:
    from .output.tables import format_table
    lo, hi = args.band
    if not (0 < lo < hi) or not np.isfinite(hi):
        raise ValueError(f"--band {lo:g} {hi:g}: need two increasing positive wavelengths in um")
    if args.points < 2:
        raise ValueError(f"--points {args.points}: need at least 2")
    if args.points > MAX_POINTS:
        raise ValueError(f"--points {args.points}: need at most {MAX_POINTS}")
    item = _index_material(args)
    figure = _figure_path(args.plot) if args.plot else None
    lam = np.linspace(lo, hi, args.points)
    t = args.temperature
    temperature_line = _temperature_line(item, t, _is_data_file(args.name))
    if item.kind == "uniaxial":
        n_o, n_e = item.indices(lam, t)
        g_o, g_e = item.group_index_o(lam, t), item.group_index_e(lam, t)
        headers = ["wavelength (um)", "n_o", "n_e", "n_e - n_o", "group n_o", "group n_e"]
        rows = [[f"{w:.4f}", f"{a:.6f}", f"{b:.6f}", f"{b - a:+.6f}", f"{c:.6f}", f"{d:.6f}"]
                for w, a, b, c, d in zip(lam, n_o, n_e, g_o, g_e)]
    elif item.kind == "biaxial":
        n_x, n_y, n_z = item.indices(lam, t)
        headers = ["wavelength (um)", "n_x", "n_y", "n_z", "n_z - n_x"]
        rows = [[f"{w:.4f}", f"{a:.6f}", f"{b:.6f}", f"{c:.6f}", f"{c - a:+.6f}"]
                for w, a, b, c in zip(lam, n_x, n_y, n_z)]
    else:
        n, g = item.n(lam, t), item.group_index(lam, t)
        headers = ["wavelength (um)", "n", "group n"]
        rows = [[f"{w:.4f}", f"{a:.6f}", f"{c:.6f}"] for w, a, c in zip(lam, n, g)]
    source = str(item.reference) if item.reference else "no reference"
    window = item.usable_um
    text = [f"{item.name} ({item.kind}), dataset {item.dataset}{_other_datasets(item, args)}",
            f"{temperature_line}; data valid {item.validity_um[0]:g}-{item.validity_um[1]:g} um"
            f", indices given {window[0]:g}-{window[1]:g} um",
            f"source: {source}", "", format_table(headers, rows)]
    if figure is not None:
        from .output.material_plots import plot_indices
        # The figure uses a fine grid of its own so curves stay smooth for any --points.
        fine = np.linspace(lo, hi, 400)
        text += ["", f"wrote {plot_indices(item, fine, figure, t)}"]
    return "\n".join(text)


def _other_datasets(item, args) -> str:
    """`` (default; others: ...)`` for a library material with a choice of datasets."""
    if _is_data_file(args.name):
        return f" (from {args.name})"
    sets = material_datasets(item.name)
    if len(sets) == 1:
        return ""
    others = ", ".join(d for d in sets if d != item.dataset)
    role = "default, widest band" if item.dataset == sets[0] else "chosen"
    return f" ({role}; others: {others})"


def _demo_command(args) -> str:
    from .output.demo import run_demo
    out = Path(args.out)
    if out.exists() and not out.is_dir():
        raise ValueError(f"--out {args.out}: is a file; need a folder (created if missing)")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        raise ValueError(f"--out {args.out}: cannot create the folder "
                         f"({error.strerror or error})") from None
    return run_demo(out)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser (exposed for documentation and tests)."""
    parser = argparse.ArgumentParser(
        prog="prismdesign", description="Design birefringent crystal prisms.")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    raw = argparse.RawDescriptionHelpFormatter
    p = sub.add_parser("materials", help="list the crystal and glass library",
                       epilog="examples:\n  prismdesign materials", formatter_class=raw)
    p.set_defaults(run=_materials_command)
    p = sub.add_parser("index", help="table (and plot) of a material's indices over a band",
                       formatter_class=raw, epilog="examples:\n"
                       "  prismdesign index calcite --band 0.4 1.0\n"
                       "  prismdesign index yvo4 --dataset shi-2001 --temperature 40\n"
                       "  prismdesign index my_crystal.toml --plot my_crystal.png")
    p.add_argument("name", help="material name or alias (e.g. calcite, alpha-BBO), or a "
                   "dispersion-data file of your own (e.g. my_crystal.toml)")
    p.add_argument("--dataset", metavar="NAME", default=None,
                   help="one of the material's published datasets (see 'prismdesign "
                   "materials'); default: the one covering the widest band")
    p.add_argument("--band", nargs=2, type=float, metavar=("FROM_UM", "TO_UM"),
                   default=(0.4, 1.0), help="wavelength band in um (default 0.4 1.0)")
    p.add_argument("--points", type=int, default=13, help="number of wavelengths (default 13)")
    p.add_argument("--temperature", type=float, default=None, metavar="C",
                   help="crystal temperature in degrees C (default: that of the data)")
    p.add_argument("--plot", metavar="FILE", help="also write a figure (PNG, PDF or SVG)")
    p.set_defaults(run=_index_command)
    p = sub.add_parser("demo", help="run the built-in example", formatter_class=raw,
                       epilog="examples:\n  prismdesign demo --out my-demo")
    p.add_argument("--out", default="prismdesign-demo", metavar="DIR",
                   help="folder for the demo's figures and tables (default prismdesign-demo)")
    p.set_defaults(run=_demo_command)
    from .cli_design import add_design_parser
    add_design_parser(sub)
    from .cli_tolerance import add_tolerance_parsers
    add_tolerance_parsers(sub)
    from .cli_workflow import add_workflow_parsers
    add_workflow_parsers(sub)
    return parser


def main(argv=None) -> int:
    """Entry point of the ``prismdesign`` command; returns the exit code."""
    args = build_parser().parse_args(argv)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            text = args.run(args)
        except (ValueError, LookupError, OSError) as error:
            print(f"prismdesign {args.command}: error: {error}", file=sys.stderr)
            return 2
        except KeyboardInterrupt:
            print(f"prismdesign {args.command}: interrupted", file=sys.stderr)
            return 130
        except Exception as error:   # a bug, not bad input: one line, and ask for a report
            print(f"prismdesign {args.command}: internal error ({type(error).__name__}: "
                  f"{error}); please report it with the command line you used", file=sys.stderr)
            return 1
    for message in dict.fromkeys(str(w.message) for w in caught):
        print(f"warning: {message}", file=sys.stderr)
    print(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
