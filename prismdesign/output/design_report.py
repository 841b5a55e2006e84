"""One self-contained HTML report of a design file.

The report carries, in one file that opens in any browser and prints cleanly: the design's
title and notes, the prism's build parameters, the requirement against what the design
achieves (every margin), the analysis table over the band, the figures (side view, band
figure, and when the file lists tolerances the sensitivity bars and the Monte Carlo histogram)
as inline PNG images, the tolerance table with the yield, the data sources of every material
(reference and dataset), and the laser caution. Every string that came from the user (title,
notes, material names, file paths, requirement values) goes through :func:`html.escape`; the
page holds no script.
"""
from __future__ import annotations

import base64
import html
import io
import tempfile
from datetime import datetime, timezone
from pathlib import Path

import numpy as np

from .demo_materials import LASER_CAUTION
from .design_analysis import _band_figure, _side_figure, analyse_design
from .files import write_text

__all__ = ["render_report", "write_report", "tolerance_summary"]

_CSS = """
body { font-family: "DejaVu Sans", Helvetica, Arial, sans-serif; color: #1b1b1b;
       max-width: 60rem; margin: 2rem auto; padding: 0 1.2rem; line-height: 1.45; }
h1 { font-size: 1.6rem; margin-bottom: 0.2rem; }
h2 { font-size: 1.2rem; border-bottom: 2px solid #1f4e79; padding-bottom: 0.2rem;
     margin-top: 2rem; color: #1f4e79; }
.meta { color: #555; font-size: 0.9rem; }
.notes { white-space: pre-wrap; background: #f6f6f2; border-left: 4px solid #9a9a8a;
         padding: 0.6rem 0.9rem; }
table { border-collapse: collapse; margin: 0.6rem 0; font-size: 0.9rem; }
th, td { border: 1px solid #c8c8c8; padding: 0.25rem 0.6rem; text-align: right; }
th { background: #eef2f7; }
td.text, th.text { text-align: left; }
.met { color: #1e6b2e; font-weight: bold; }
.missed { color: #a11d1d; font-weight: bold; }
.verdict { font-size: 1.05rem; padding: 0.5rem 0.8rem; border-radius: 4px; display: inline-block; }
.verdict.met { background: #e4f3e7; } .verdict.missed { background: #f8e3e3; }
figure { margin: 1rem 0; page-break-inside: avoid; break-inside: avoid; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { font-size: 0.85rem; color: #444; }
.caution { border: 2px solid #b8860b; background: #fff8e1; padding: 0.6rem 0.9rem; }
@media print {
  body { max-width: none; margin: 0; font-size: 10pt; }
  h2 { page-break-after: avoid; break-after: avoid; }
  table, .caution { page-break-inside: avoid; break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
"""


def _e(value):
    """Escaped text of any value (quotes too: the text may land in an attribute)."""
    return html.escape(str(value), quote=True)


def _png(fig):
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=110)
    return base64.b64encode(buffer.getvalue()).decode("ascii")


def _figure(data, caption):
    return (f'<figure><img alt="{_e(caption)}" src="data:image/png;base64,{data}">'
            f"<figcaption>{_e(caption)}</figcaption></figure>")


def _table(headers, rows, text_columns=(0,)):
    head = "".join(f'<th class="{"text" if i in text_columns else ""}">{_e(h)}</th>'
                   for i, h in enumerate(headers))
    body = []
    for row in rows:
        cells = []
        for i, cell in enumerate(row):
            cls = "text" if i in text_columns else ""
            if isinstance(cell, tuple):        # (html already escaped, css class)
                cells.append(f'<td class="{cls} {cell[1]}">{cell[0]}</td>')
            else:
                cells.append(f'<td class="{cls}">{_e(cell)}</td>')
        body.append("<tr>" + "".join(cells) + "</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def _number(value, digits=5):
    if value is None or (isinstance(value, float) and not np.isfinite(value)):
        return "-"
    return f"{value:.{digits}g}"


def tolerance_summary(prism, requirement, tolerances, *, samples=2000, seed=0, progress=None):
    """Sensitivities ranked at the tolerances and the Monte Carlo yield.

    Returns
    -------
    dict
        ``ranked`` (rows of :meth:`~prismdesign.design.Sensitivities.ranked`), ``figure``
        (the target figure's name), ``monte_carlo`` (the result), ``samples``, ``seed``.
    """
    from ..design import monte_carlo, sensitivities

    figure = {"split": "split_deg", "separation": "separation_mm", "offset": "offset_mm",
              "shear": "offset_mm", "polariser": "leakage"}[requirement.target_kind]
    sens = sensitivities(prism, requirement, tolerances.names)
    ranked = sens.ranked(figure, tolerances)
    mc = monte_carlo(prism, requirement, tolerances, samples, seed=seed, progress=progress)
    return dict(ranked=ranked, figure=figure, monte_carlo=mc, samples=samples, seed=seed)


def _tolerance_figures(summary, requirement):
    from .tolerance_plots import plot_histogram, plot_tornado

    out = []
    with tempfile.TemporaryDirectory() as folder:
        tornado = Path(folder) / "tornado.png"
        plot_tornado(summary["ranked"], tornado,
                     title=f"what moves the {summary['figure']} (swing at each tolerance)")
        out.append((tornado.read_bytes(), "Sensitivity: swing of the target figure at each "
                                          "tolerance, largest first."))
        mc = summary["monte_carlo"]
        if mc.target_figure is not None:
            hist = Path(folder) / "histogram.png"
            plot_histogram(mc, hist, target=requirement.target_value,
                           tolerance=requirement.target_tolerance,
                           title=f"{mc.samples} simulated built prisms")
            out.append((hist.read_bytes(), "Monte Carlo: the target figure over simulated "
                                           "built prisms, with the allowed range."))
    return [(base64.b64encode(data).decode("ascii"), caption) for data, caption in out]


def _sources(prism):
    """(material label, role, reference text, dataset, data file note) per distinct medium."""
    rows, seen = [], set()
    media = [(p.material, "crystal" if p.is_crystal else "medium") for p in prism.pieces]
    media.append((prism.surround, "surround"))
    for material, role in media:
        label = getattr(material, "label", getattr(material, "name", str(material)))
        name = getattr(material, "name", label)
        if label in seen:
            continue
        seen.add(label)
        reference = getattr(material, "reference", None)
        rows.append([name, role, str(reference) if reference else "no reference given",
                     getattr(material, "dataset", "-") or "-"])
    return rows


def render_report(design_file, *, source_name="", samples=2000, seed=0, progress=None):
    """The report of `design_file` as an HTML string (see the module docstring).

    Parameters
    ----------
    design_file : DesignFile
    source_name : str
        Name of the design file shown in the header.
    samples, seed : int
        Monte Carlo size and seed (used only when the file lists tolerances).
    progress : bool, optional
        Monte Carlo progress bar on stderr; default only on a terminal.
    """
    analysis = analyse_design(design_file)
    req, prism = analysis.requirement, analysis.prism
    title = design_file.title or "Prism design"
    parts = [f"<h1>{_e(title)}</h1>",
             f'<p class="meta">{_e(prism.kind)} · design file {_e(source_name or "-")} · '
             f"written {datetime.now(timezone.utc):%Y-%m-%d %H:%M} UTC by prismdesign</p>"]
    if design_file.notes:
        parts.append(f'<div class="notes">{_e(design_file.notes)}</div>')
    verdict = ("met" if analysis.meets else "missed")
    active = analysis.assessment.active
    text = ("Meets every requirement" + (f"; limited by {active.name}" if active else "")
            if analysis.meets else "Misses: " + "; ".join(m.text() for m in
                                                         analysis.assessment.failed))
    parts.append(f'<p class="verdict {verdict}">{_e(text)}</p>')

    parts.append("<h2>Requirement and what the design achieves</h2>")
    rows = []
    for m in analysis.margins():
        mark = ("yes", "met") if m["met"] else ("no", "missed")
        limit = _number(m["limit"])
        if m["name"] == req.target_kind and req.target_tolerance is not None:
            limit = f"{limit} ± {req.target_tolerance:g}"   # the target and its allowed swing
        rows.append([m["name"], _number(m["achieved"]), limit,
                     _number(m["margin"], 4), m["unit"], (mark[0], mark[1]), m["reason"] or ""])
    parts.append(_table(["requirement", "achieved", "limit", "margin", "unit", "met", "note"],
                        rows, text_columns=(0, 6)))
    given = design_file.to_mapping().get("requirement", {})
    parts.append("<p>Requirement as given: " + "; ".join(
        f"{_e(k)} = {_e(_spec_value(v))}" for k, v in given.items()) + ".</p>")

    parts.append("<h2>Prism</h2>")
    spec_rows = [[k, _spec_value(v)] for k, v in design_file.prism.to_mapping().items()]
    spec_rows.append(["length along the beam (mm)", f"{prism.length_mm:.4f}"])
    parts.append(_table(["build parameter", "value"], spec_rows, text_columns=(0, 1)))
    if design_file.solved:
        s = design_file.solved
        parts.append(f"<p>Solved as {_e(s.get('prism_type', '-'))} in "
                     f"{_e(_spec_value(s.get('crystal', '-')))}: {_e(s.get('method', ''))}; "
                     f"{_e(s.get('message', ''))}.</p>")

    parts.append("<h2>Over the band (on axis)</h2>")
    parts.append(_table(analysis.headings(), analysis.table_rows(), text_columns=()))
    parts.append("<p>A dash means the beam the figure needs does not leave the prism there. "
                 "T min: the lower transmittance of the main beams, each for the polarisation "
                 "it carries (Fresnel losses included); leakage: power in unwanted beams over "
                 "the transmitted power.</p>")
    parts.append(_figure(_png(_side_figure(analysis)),
                         "Side view: the prism's section with the traced beams at the design "
                         "wavelength; optic-axis marks in each crystal."))
    parts.append(_figure(_png(_band_figure(analysis)),
                         "The target figure over the band with the allowed range shaded, and "
                         "each main beam's transmittance."))

    parts.append("<h2>Tolerances and yield</h2>")
    if design_file.tolerances is None:
        parts.append("<p>The design file lists no tolerances ([[tolerance]] tables); add them "
                     "to see which errors matter and the expected yield.</p>")
    else:
        summary = tolerance_summary(prism, req, design_file.tolerances, samples=samples,
                                    seed=seed, progress=progress)
        mc = summary["monte_carlo"]
        swing = {r["parameter"]: r for r in summary["ranked"]}
        rows = []
        for t in design_file.tolerances.items:
            r = swing.get(t.name, {})
            rows.append([t.name, t.distribution, f"{t.size:g}", _number(r.get("sensitivity"), 4),
                         _number(r.get("swing"), 4), f"{t.cost:.3g}"])
        unit = summary["ranked"][0]["figure_unit"] if summary["ranked"] else ""
        parts.append(_table(["error", "distribution", "size", f"per unit ({summary['figure']})",
                             f"swing ({unit})", "relative cost"], rows, text_columns=(0, 1)))
        parts.append(f"<p><strong>Yield: {100 * mc.yield_fraction:.2f} % ± "
                     f"{100 * mc.yield_error:.2f} %</strong> of {mc.samples} simulated built prisms "
                     f"meet every requirement (seed {seed}). Failure drivers (rank correlation "
                     f"of |error| with the worst margin): "
                     + _e(", ".join(f"{d['parameter']} {d['rank_correlation']:+.2f}"
                                    for d in mc.failure_drivers())) + ".</p>")
        for data, caption in _tolerance_figures(summary, req):
            parts.append(_figure(data, caption))

    parts.append("<h2>Data sources</h2>")
    parts.append(_table(["material", "role", "reference", "dataset"], _sources(prism),
                        text_columns=(0, 1, 2, 3)))
    if design_file.materials:
        parts.append("<p>Custom dispersion data: " + "; ".join(
            f"{_e(k)} from {_e(v)}" for k, v in design_file.materials.items()) + "</p>")
    parts.append("<p>Figures are from an exact vector ray trace through the published "
                 "dispersion models above; outside a dataset's fit range the indices are "
                 "extrapolated (with a warning).</p>")
    parts.append("<h2>Caution</h2>")
    parts.append(f'<p class="caution">{_e(LASER_CAUTION)}</p>')
    body = "\n".join(parts)
    return (f'<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8">\n'
            f'<meta name="viewport" content="width=device-width, initial-scale=1">\n'
            f"<title>{_e(title)}</title>\n<style>{_CSS}</style>\n</head>\n<body>\n{body}\n"
            f"</body>\n</html>\n")


def _spec_value(value):
    if isinstance(value, list):
        return ", ".join(_spec_value(v) for v in value)
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, dict):
        return ", ".join(f"{k} = {_spec_value(v)}" for k, v in value.items())
    if isinstance(value, float):
        return f"{value:.10g}"
    return str(value)


def write_report(design_file, path, **kwargs):
    """Write :func:`render_report` to `path` atomically; returns the path."""
    return write_text(path, render_report(design_file, **kwargs))
