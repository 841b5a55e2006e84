"""A design file analysed against its requirement: a table over the band and its figures.

One merit trace (:func:`prismdesign.design.assess`) gives the table: per wavelength of the
requirement, on axis, the split, the bisector (deviation of the pair), the separation on the
requirement's plane, the lateral offset, the lower transmittance of the main beams and the
leakage into unwanted beams, plus every margin. Figures: the side view with the traced beams at
the design wavelength, and the target figure (or the leakage of a polariser) over a finely
sampled band with the allowed range shaded.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from ..design import assess
from .files import new_figure, save_figure

__all__ = ["DesignAnalysis", "analyse_design", "write_analysis_figures", "TABLE_COLUMNS"]

#: Columns of the analysis table: (key, heading with unit).
TABLE_COLUMNS = (("wavelength_um", "wavelength (um)"), ("split_deg", "split (deg)"),
                 ("bisector_deg", "bisector (deg)"), ("separation_mm", "separation (mm)"),
                 ("offset_mm", "offset (mm)"), ("transmission", "T min"),
                 ("leakage", "leakage"), ("field_leakage", "leakage, worst in field"))


def _plain(value):
    """A float for JSON and tables, None where the figure does not exist (NaN)."""
    value = float(value)
    return value if np.isfinite(value) else None


@dataclass(frozen=True)
class DesignAnalysis:
    """What a design achieves against its requirement.

    Attributes
    ----------
    prism : Prism
    requirement : Requirement
    assessment : Assessment
    rows : list of dict
        One per wavelength, keys of :data:`TABLE_COLUMNS` (None where a beam is lost or the
        figure does not apply).
    columns : tuple of str
        Keys of the figures that apply to this design (e.g. no separation without a plane,
        no split for a polariser); text and HTML tables show only these.
    """

    prism: object
    requirement: object
    assessment: object
    rows: list
    columns: tuple = tuple(key for key, _ in TABLE_COLUMNS)

    def headings(self):
        """Headings (with units) of :attr:`columns`."""
        return [heading for key, heading in TABLE_COLUMNS if key in self.columns]

    @property
    def meets(self):
        return self.assessment.meets

    def margins(self):
        """Every margin as a dict: name, achieved, limit, margin, unit, met, reason."""
        return [dict(name=m.name, achieved=_plain(m.achieved), limit=_plain(m.limit),
                     margin=_plain(m.margin), unit=m.unit, met=bool(m.met), reason=m.reason)
                for m in self.assessment.margins]

    def to_dict(self):
        figs = self.assessment.figures
        return dict(prism_type=self.prism.kind, length_mm=_plain(figs.length_mm),
                    main_beams=list(figs.main_labels), meets=bool(self.meets),
                    limited_by=None if self.assessment.active is None
                    else self.assessment.active.name,
                    table=self.rows, margins=self.margins())

    def table_rows(self):
        """The table as text cells (headings :meth:`headings`); "-" where a beam is lost."""
        out = []
        for row in self.rows:
            cells = []
            for key in self.columns:
                v = row[key]
                if v is None:
                    cells.append("-")
                elif key == "wavelength_um":
                    cells.append(f"{v:.4f}")
                elif key in ("leakage", "field_leakage"):
                    cells.append(f"{v:.3g}")
                else:
                    cells.append(f"{v:.5f}")
            out.append(cells)
        return out


def analyse_design(design_file):
    """Analyse a :class:`~prismdesign.design.design_file.DesignFile` against its requirement.

    Raises
    ------
    ValueError
        When the file has no ``[requirement]`` (there would be no band to analyse over).
    """
    requirement = design_file.requirement
    if requirement is None:
        raise ValueError("the design file has no [requirement] table: add one (band_um or "
                         "lines_um and a target) to analyse it")
    prism = design_file.build()
    assessment = assess(prism, requirement)
    figs = assessment.figures
    rows = []
    for i, lam in enumerate(figs.wavelength_um):
        def at(values):
            return None if values is None else _plain(values[i, 0])
        trans = [v[i, 0] for v in figs.transmittance.values()]
        rows.append(dict(wavelength_um=float(lam), split_deg=at(figs.split_deg),
                         bisector_deg=at(figs.bisector_deg), separation_mm=at(figs.separation_mm),
                         offset_mm=at(figs.offset_mm),
                         transmission=_plain(min(trans)) if trans else None,
                         leakage=_plain(figs.leakage[i, 0]),
                         field_leakage=_plain(np.nanmax(figs.leakage[i]))
                         if figs.leakage.shape[1] > 1 and np.isfinite(figs.leakage[i]).any()
                         else None))
    computed = dict(split_deg=figs.split_deg, bisector_deg=figs.bisector_deg,
                    separation_mm=figs.separation_mm, offset_mm=figs.offset_mm,
                    field_leakage=figs.leakage if figs.leakage.shape[1] > 1 else None)
    columns = tuple(key for key, _ in TABLE_COLUMNS if computed.get(key, 0) is not None)
    return DesignAnalysis(prism=prism, requirement=requirement, assessment=assessment, rows=rows,
                          columns=columns)


def _band_figure(analysis):
    """The target figure (or a polariser's leakage) and the transmittance over the band."""
    req = analysis.requirement
    fine = replace(req, band_points=61) if req.band_um is not None else req
    figs = assess(analysis.prism, fine).figures
    lam = figs.wavelength_um
    # Laser lines are separate points: no line drawn between them.
    marker, style = ("o", "none") if req.lines_um is not None else (None, "-")
    fig = new_figure(figsize=(7.0, 5.2), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 2))
    kind = req.target_kind
    if kind == "polariser":
        # Zero leakage (no unwanted beam at all) sits at the floor of the log axis.
        floor = 1e-12
        top.semilogy(lam, np.clip(figs.leakage[:, 0], floor, None), marker=marker,
                     linestyle=style, color="#1f4e79",
                     label=f"on axis (below {floor:g} drawn at {floor:g})")
        if figs.leakage.shape[1] > 1:
            top.semilogy(lam, np.clip(np.nanmax(figs.leakage, axis=1), floor, None),
                         marker=marker, linestyle="--" if style == "-" else style,
                         color="#7b3f9e",
                         label=f"worst within ±{req.field_half_angle_deg:g}° field")
        top.set_ylabel("leakage (power in unwanted\nbeams / transmitted power)")
        top.legend(loc="best")
        if req.max_leakage is not None:
            top.axhline(req.max_leakage, color="#b03a2e", linestyle="--",
                        label=f"allowed {req.max_leakage:g}")
            top.legend(loc="best")
    else:
        values = figs.target_figure(kind)
        unit = req.target_unit
        name = {"split": "split", "separation": "separation on the plane",
                "offset": "lateral offset", "shear": "shear"}[kind]
        top.plot(lam, values, marker=marker, linestyle=style, color="#1f4e79",
                 label="achieved (on axis)")
        t, tol = req.target_value, req.target_tolerance
        top.axhspan(t - tol, t + tol, color="#9fc5a8", alpha=0.5,
                    label=f"target {t:g} ± {tol:g} {unit}")
        top.axhline(t, color="#2e7d32", linewidth=0.8)
        top.set_ylabel(f"{name} ({unit})")
        top.legend(loc="best")
        # Keep the allowed band in view even when the curve is flat within it.
        finite = values[np.isfinite(values)]
        if finite.size:
            lo, hi = min(finite.min(), t - tol), max(finite.max(), t + tol)
            pad = 0.15 * (hi - lo)
            top.set_ylim(lo - pad, hi + pad)
    for label, v in figs.transmittance.items():
        bottom.plot(lam, v[:, 0], marker=marker, linestyle=style, label=f"beam {label}")
    if req.min_transmission is not None:
        bottom.axhline(req.min_transmission, color="#b03a2e", linestyle="--",
                       label=f"allowed {req.min_transmission:g}")
    bottom.set_ylabel("transmittance of\nits polarisation")
    bottom.set_xlabel("wavelength (µm)")
    bottom.legend(loc="best", fontsize="small")
    top.set_title(f"{analysis.prism.kind} over the requirement's wavelengths")
    top.grid(alpha=0.3)
    bottom.grid(alpha=0.3)
    return fig


def _side_figure(analysis):
    from .drawing import draw_side_view

    fig = new_figure(figsize=(7.0, 4.2), layout="constrained")
    ax = fig.add_subplot()
    lam = float(analysis.prism.design_wavelength_um)
    draw_side_view(analysis.prism, lam, ax,
                   title=f"{analysis.prism.kind}, section y = 0, beams at {lam:g} µm")
    return fig


def write_analysis_figures(analysis, folder, *, suffix=".png"):
    """Write the side view and the band figure into `folder` (created if missing).

    Returns
    -------
    list of pathlib.Path
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    return [save_figure(_side_figure(analysis), folder / f"side_view{suffix}"),
            save_figure(_band_figure(analysis), folder / f"band{suffix}")]
