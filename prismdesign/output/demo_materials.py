"""Built-in demonstration, material part: choosing a crystal for an invented setup.

Scenario (invented for the demo): our lab is building a two-channel polarimeter for a
0.8-1.0 µm source.  The splitting prism's beam separation scales with the birefringence, so we
compare |Δn| of the usual polariser crystals across the band and how much it changes from one
end of the band to the other.
"""
from __future__ import annotations

import csv
import io
import warnings
from pathlib import Path

import numpy as np

from ..materials import UnknownMaterialError, material
from .files import write_text
from .material_plots import curve_label, plot_birefringence_comparison
from .tables import format_table

__all__ = ["LASER_CAUTION", "run_demo"]

LASER_CAUTION = (
    "Laser safety: send rejected and ghost beams into beam dumps; cemented interfaces take far "
    "less power than air-spaced or optically contacted ones; UV and IR beams are invisible. "
    "Follow IEC 60825-1 / ANSI Z136.1 and your local laser safety officer."
)

CANDIDATES = ("calcite", "quartz", "alpha-BBO", "YVO4")
BAND_UM = (0.8, 1.0)


def run_demo(out_dir, caution=True) -> str:
    """Run the material part of the demo and write its figure and table into ``out_dir``.

    Parameters
    ----------
    out_dir : str or os.PathLike
        Folder for ``birefringence_0.8-1.0um.png`` and ``birefringence_0.8-1.0um.csv``
        (created if missing).
    caution : bool
        End with the laser-safety caution (off when the caller prints it itself).

    Returns
    -------
    str
        The text report (table, files written, laser caution).
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    lam = np.linspace(*BAND_UM, 41)
    found, missing = [], []
    for name in CANDIDATES:
        try:
            found.append(material(name))
        except UnknownMaterialError:
            missing.append(name)

    rows, records = [], [["material", "source", "wavelength_um", "n_o", "n_e", "birefringence"]]
    curves = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        for item in found:
            n_o, n_e = item.indices(lam)
            dn = n_e - n_o
            change = 100.0 * (abs(dn[-1]) - abs(dn[0])) / abs(dn[0])
            rows.append([item.name, item.optical_sign, f"{n_o[20]:.5f}", f"{n_e[20]:.5f}",
                         f"{dn[0]:+.5f}", f"{dn[20]:+.5f}", f"{dn[-1]:+.5f}", f"{change:+.2f}",
                         item.reference.short])
            records += [[item.name, item.reference.short, f"{w:.4f}", f"{a:.6f}", f"{b:.6f}",
                         f"{d:.6f}"] for w, a, b, d in zip(lam, n_o, n_e, dn)]
            curves.append((curve_label(item.name, item.reference.short), np.abs(dn)))
    figure = plot_birefringence_comparison(
        lam, curves, out / "birefringence_0.8-1.0um.png",
        title="Candidate crystals for our 0.8-1.0 µm two-channel polarimeter")
    # The csv module quotes a source that holds a comma, so every row keeps six fields.
    text = io.StringIO()
    csv.writer(text, lineterminator="\n").writerows(records)
    table_file = write_text(out / "birefringence_0.8-1.0um.csv", text.getvalue())

    headers = ["crystal", "sign", "n_o 0.9um", "n_e 0.9um", "dn 0.8um", "dn 0.9um", "dn 1.0um",
               "|dn| change %", "source"]
    lines = [
        "prismdesign demo - crystal choice for our two-channel polarimeter, 0.8-1.0 um",
        "",
        format_table(headers, rows),
        "",
        "A larger |dn| gives a larger split for the same prism angle; a smaller change across "
        "the band keeps the split steadier.",
    ]
    if missing:
        lines.append(f"Not in the library (skipped): {', '.join(missing)}")
    lines += [f"warning: {w.message}" for w in caught]
    lines += ["", f"wrote {figure}", f"wrote {table_file}"]
    if caution:
        lines += ["", LASER_CAUTION]
    return "\n".join(lines)
