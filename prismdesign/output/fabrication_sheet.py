"""Fabrication sheet of a prism: dimensioned views of each piece and the notes a shop needs.

One page (SVG or PDF, chosen by the file suffix) made with matplotlib outside pyplot:

* a header with the prism type, design wavelength and the assembly (order of the pieces, joints,
  overall length) beside a principal section of the whole prism;
* one card per piece: its principal section with the lengths along both side faces, the width
  and the angles of the optical faces, its optic axis drawn and named; an end view (looking
  along the beam from the entrance side) with height, width and the axis projection; and the
  piece's table: material and dispersion dataset, the axis in words and angles to named faces,
  every angle and length with its tolerance, clear apertures, coatings and ISO 10110 callouts;
* notes: what the ISO callouts mean, how the crystal's quality is specified instead of
  ISO 10110-2, the tolerances' origin, the dispersion sources and the laser caution.

Text stays text in the SVG (``svg.fonttype = 'none'``), so the sheet is searchable and
editable. The numbers come from :func:`~prismdesign.output.fabrication_data.fabrication_data`.
"""
from __future__ import annotations

import textwrap
from pathlib import Path

import numpy as np

from .fabrication_data import FabricationData, fabrication_data
from .files import new_figure, save_figure

__all__ = ["write_fabrication_sheet", "fabrication_data", "FabricationData", "SHEET_FORMATS"]

#: File formats the sheet is written in (by suffix).
SHEET_FORMATS = (".svg", ".pdf")

_PAGE_W_IN = 16.54          # A3 landscape width; the height grows with the number of pieces
_HEADER_IN = 3.3
_CARD_IN = 4.9
_NOTES_IN = 2.9
_INK = "#1a1a1a"
_DIM = "#1f4e79"
_AXIS = "#b03a2e"
_FILL = ("#e8eef5", "#f5efe6", "#e9f3e6", "#f1e8f4")
_FONT = 7.5


def write_fabrication_sheet(prism, path, *, tolerances=None, notes="", requirement=None,
                            surface_spec=None) -> Path:
    """Write the fabrication sheet of `prism` to `path` (SVG or PDF by suffix), atomically.

    Parameters
    ----------
    prism : Prism
        Nominal prism (see :func:`~prismdesign.output.fabrication_data.fabrication_data` for
        the types drawn).
    path : str or os.PathLike
        Target file ending in ``.svg`` or ``.pdf``; an existing file is replaced only once the
        new one is complete.
    tolerances : ToleranceSet, optional
        Tolerances drawn next to the dimensions they change; None prints "tolerances: not
        specified".
    notes : str
        Free text added to the notes.
    requirement : Requirement, optional
        Names the coating band.
    surface_spec : dict, optional
        ISO 10110 surface specification (see
        :data:`~prismdesign.output.fabrication_data.SURFACE_SPEC_DEFAULTS`).

    Returns
    -------
    pathlib.Path
        The written file.
    """
    try:
        path = Path(path)
    except TypeError:
        raise ValueError(f"path must be a file name ending in .svg or .pdf, got "
                         f"{type(path).__name__}") from None
    if path.suffix.lower() not in SHEET_FORMATS:
        raise ValueError(f"path must end in .svg or .pdf, got {str(path)!r}")
    if not path.parent.is_dir():
        raise ValueError(f"folder {str(path.parent)!r} for the sheet does not exist")
    data = fabrication_data(prism, tolerances, notes=notes, requirement=requirement,
                            surface_spec=surface_spec)
    fig = sheet_figure(prism, data)
    import matplotlib

    # Text stays text (SVG) and fonts embed as TrueType (PDF); no date, so reruns are identical.
    with matplotlib.rc_context({"svg.fonttype": "none", "pdf.fonttype": 42,
                                "svg.hashsalt": "prismdesign-sheet"}):
        meta = {"Date": None} if path.suffix.lower() == ".svg" else {"CreationDate": None}
        return save_figure(fig, path, metadata=meta)


# ---------------------------------------------------------------------------- layout
def sheet_figure(prism, data):
    """The sheet as a :class:`matplotlib.figure.Figure` (for viewing or other formats)."""
    cards = len(data.pieces)
    rows = (cards + 1) // 2
    height = _HEADER_IN + rows * _CARD_IN + _NOTES_IN + 0.7
    fig = new_figure(figsize=(_PAGE_W_IN, height))
    frame = fig.add_axes([0, 0, 1, 1])
    frame.set_axis_off()
    frame.set_xlim(0, _PAGE_W_IN)
    frame.set_ylim(0, height)

    def box(x, y, w, h):
        frame.add_patch(_rect(x, y, w, h))

    margin = 0.3
    # Header: title and assembly.
    top = height - margin
    frame.text(margin + 0.1, top - 0.3, data.title, fontsize=15, weight="bold", color=_INK,
               va="baseline")
    frame.text(margin + 0.1, top - 0.55,
               f"design wavelength {1e3 * data.design_wavelength_um:g} nm; all lengths in mm, "
               f"angles in degrees; x: split direction (principal section), y: across it, "
               f"z: along the beam", fontsize=8.5, color=_INK, va="baseline")
    header_h = _HEADER_IN - 0.75
    header_y = top - 0.75 - header_h
    box(margin, header_y, _PAGE_W_IN - 2 * margin, header_h)
    ax = _axes_in(fig, height, margin + 0.15, header_y + 0.15, 7.6, header_h - 0.3)
    _assembly_view(ax, prism, data)
    lines = ["Assembly"] + list(data.assembly) + ["Joints"] + \
        [j.text for j in data.joints] if data.joints else ["Assembly"] + list(data.assembly)
    if not data.joints:
        lines += ["Joints", "single piece: none"]
    _text_block(frame, lines, margin + 8.0, header_y + header_h - 0.2, _PAGE_W_IN - 8.6,
                headings={"Assembly", "Joints"}, size=8.0)

    # Piece cards, two per row.
    card_w = 0.5 * (_PAGE_W_IN - 2 * margin)
    for k, piece in enumerate(data.pieces):
        row, col = divmod(k, 2)
        x0 = margin + col * card_w
        y0 = header_y - (row + 1) * _CARD_IN
        box(x0, y0, card_w, _CARD_IN)
        _piece_card(fig, frame, height, piece, x0, y0, card_w, k)

    # Notes and caution.
    notes_y = header_y - rows * _CARD_IN - _NOTES_IN
    box(margin, notes_y, _PAGE_W_IN - 2 * margin, _NOTES_IN)
    note_lines = ["Tolerances", data.tolerance_note]
    if data.other_tolerances:
        note_lines.append("Use conditions (not for the shop): " + "; ".join(data.other_tolerances))
    note_lines += ["ISO 10110 callouts"] + list(data.iso_notes)
    note_lines += ["Crystal quality", data.crystal_quality.replace("Crystal quality: ", "")]
    half = 0.5 * (_PAGE_W_IN - 2 * margin)
    _text_block(frame, note_lines, margin + 0.15, notes_y + _NOTES_IN - 0.2, half - 0.3,
                headings={"Tolerances", "ISO 10110 callouts", "Crystal quality"}, size=7.5)
    right = ["Dispersion data used"] + list(data.dispersion_sources)
    if data.notes:
        right += ["Notes"] + [data.notes]
    right += ["Laser caution", data.laser_caution]
    _text_block(frame, right, margin + half + 0.15, notes_y + _NOTES_IN - 0.2, half - 0.3,
                headings={"Dispersion data used", "Notes", "Laser caution"}, size=7.5)
    frame.text(_PAGE_W_IN - margin, notes_y - 0.25,
               "made with prismdesign from the design's own geometry; check every value against "
               "the design before ordering", fontsize=7, ha="right", color="#555555")
    return fig


def _rect(x, y, w, h):
    from matplotlib.patches import Rectangle

    return Rectangle((x, y), w, h, fill=False, edgecolor="#777777", lw=0.8)


def _axes_in(fig, page_h, x, y, w, h):
    """Axes at a rectangle given in inches from the lower left of the page."""
    ax = fig.add_axes([x / _PAGE_W_IN, y / page_h, w / _PAGE_W_IN, h / page_h])
    ax.set_axis_off()
    return ax


def _text_block(frame, lines, x, y, width_in, *, headings=(), size=_FONT, leading=1.45):
    """Wrapped lines from (x, y) down (inches); headings in bold. Returns the lowest y."""
    chars = max(20, int(width_in * 72.0 / (0.53 * size)))
    step = size * leading / 72.0
    for line in lines:
        if line in headings:
            y -= 0.25 * step
            frame.text(x, y, line, fontsize=size + 0.5, weight="bold", color=_INK, va="top")
            y -= step
            continue
        for part in textwrap.wrap(line, chars, subsequent_indent="  ") or [""]:
            frame.text(x, y, part, fontsize=size, color=_INK, va="top")
            y -= step
    return y


# ---------------------------------------------------------------------------- views
def _assembly_view(ax, prism, data):
    """All pieces side by side along z, each in its own prism's frame, with overall lengths."""
    from matplotlib.patches import Polygon

    z_shift = 0.0
    previous_end = None
    for k, piece in enumerate(data.pieces):
        poly = piece.polygon_mm
        start = _piece_start_z(prism, piece)
        if previous_end is not None and k and data.pieces[k - 1].frame_deg != piece.frame_deg:
            # Next prism of a series: keep its real spacing along z.
            z_shift = 0.0
        zs = poly[:, 0] + z_shift
        ax.add_patch(Polygon(np.column_stack([zs, poly[:, 1]]), closed=True,
                             facecolor=_FILL[k % len(_FILL)], edgecolor=_INK, lw=1.0))
        centre = np.array([zs.mean(), poly[:, 1].mean()])
        ax.text(centre[0], centre[1], f"{k + 1}", fontsize=10, weight="bold", ha="center",
                va="center", color=_INK)
        _axis_symbol(ax, piece, centre + [0, -0.28 * piece.width_mm], 0.18 * piece.width_mm)
        previous_end = zs.max()
        del start
    ax.set_aspect("equal")
    z_all = np.concatenate([p.polygon_mm[:, 0] for p in data.pieces])
    x_all = np.concatenate([p.polygon_mm[:, 1] for p in data.pieces])
    lo, hi = z_all.min(), z_all.max()
    top = x_all.max()
    span = max(hi - lo, x_all.max() - x_all.min())
    _dim_line(ax, (lo, top + 0.12 * span), (hi, top + 0.12 * span),
              f"{prism.length_mm:.3f} overall", (lo, top), (hi, top))
    ax.text(lo, x_all.min() - 0.1 * span,
            "principal section (x–z), pieces numbered as their cards; arrows: optic axis "
            "in the drawing, ⊙: across it", fontsize=7, va="top", color="#444444")
    ax.set_xlim(lo - 0.08 * span, hi + 0.08 * span)
    ax.set_ylim(x_all.min() - 0.25 * span, top + 0.3 * span)


def _piece_start_z(prism, piece):
    return float(piece.polygon_mm[:, 0].min())


def _piece_card(fig, frame, page_h, piece, x0, y0, w, k):
    """One piece: section, end view and its table."""
    frame.text(x0 + 0.15, y0 + _CARD_IN - 0.12,
               f"Piece {k + 1}: {piece.label} — {piece.dataset_label}", fontsize=10,
               weight="bold", va="top", color=_INK)
    view_h = 2.35
    sec = _axes_in(fig, page_h, x0 + 0.1, y0 + _CARD_IN - 0.45 - view_h, 0.56 * w, view_h)
    _section_view(sec, piece)
    end = _axes_in(fig, page_h, x0 + 0.6 * w, y0 + _CARD_IN - 0.45 - view_h, 0.38 * w, view_h)
    _end_view(end, piece)
    lines = [f"Optic axis: {piece.axis_words}"]
    if piece.axis_angles:
        lines.append("Axis angles: " + "; ".join(f"{name} {value:.3f}°"
                                                 for name, value in piece.axis_angles))
        lines.append(piece.axis_tolerance)
    lines.append("Angles: " + "; ".join(f"{a.faces[0]} / {a.faces[1]} {a.text()}"
                                        + (" (wedge, ref.)" if a.reference else "")
                                        for a in piece.angles))
    lines.append("Lengths: " + "; ".join(f"{d.name} {d.text()}" for d in piece.lengths))
    for (face, clear), (_, coat), (_, calls) in zip(piece.clear_apertures, piece.coatings,
                                                    piece.callouts):
        lines.append(f"{face}: clear aperture {clear}; {coat}; " + "   ".join(calls))
    _text_block(frame, lines, x0 + 0.15, y0 + _CARD_IN - 0.55 - view_h, w - 0.3, size=7.0,
                leading=1.38)


def _section_view(ax, piece):
    """Principal section of one piece with its dimensions."""
    from matplotlib.patches import Polygon

    poly = piece.polygon_mm
    z0 = poly[:, 0].min()
    pts = poly - [z0, 0.0]
    ax.add_patch(Polygon(pts, closed=True, facecolor=_FILL[0], edgecolor=_INK, lw=1.2))
    half = 0.5 * piece.width_mm
    span = max(np.ptp(pts[:, 0]), piece.width_mm)
    off = 0.1 * span
    # Lengths along the side faces (above: +x, below: −x).
    for side, x_side, sign in ((1, half, 1.0), (0, -half, -1.0)):
        on = pts[np.abs(pts[:, 1] - x_side) < 1e-9 * (1 + span)]
        if len(on) >= 2:
            a, b = on[:, 0].min(), on[:, 0].max()
            d = piece.lengths[side]
            _dim_line(ax, (a, x_side + sign * off), (b, x_side + sign * off), d.text(),
                      (a, x_side), (b, x_side), above=sign > 0)
    # Width at the left.
    zl = pts[:, 0].min() - off
    _dim_line(ax, (zl, -half), (zl, half), piece.lengths[3].text(), (pts[:, 0].min(), -half),
              (pts[:, 0].min(), half), vertical=True)
    # Angles that are not right angles, at the corners where they sit.
    for a in piece.angles:
        if a.reference or abs(a.angle_deg - 90.0) < 1e-6:
            continue
        _corner_angle(ax, pts, piece, a, span)
    wedge = next(a for a in piece.angles if a.reference)
    if wedge.angle_deg > 1e-6:
        ax.text(0.5 * pts[:, 0].max(), -half - 2.6 * off,
                f"wedge {wedge.faces[0]} / {wedge.faces[1]}: {wedge.text()} (ref.)",
                fontsize=7, ha="center", va="top", color=_DIM)
    # Face names.
    for name, side in zip(piece.faces, (0, 1)):
        zs = pts[:, 0]
        z_face = zs[pts[:, 1].argmax()] if side == 0 else zs[pts[:, 1].argmax()]
        del z_face
    ax.text(pts[:, 0].min(), 0.0, piece.faces[0] + " ", rotation=90, fontsize=6.5,
            ha="right", va="center", color="#555555")
    right_z = pts[:, 0].max()
    ax.text(right_z + 0.02 * span, 0.0, " " + piece.faces[1], rotation=90, fontsize=6.5,
            ha="left", va="center", color="#555555")
    centre = pts.mean(axis=0)
    _axis_symbol(ax, piece, centre, 0.22 * min(np.ptp(pts[:, 0]) + 0.5 * span, piece.width_mm),
                 label=True)
    ax.set_aspect("equal")
    ax.set_xlim(pts[:, 0].min() - 0.35 * span, pts[:, 0].max() + 0.2 * span)
    ax.set_ylim(-half - 0.42 * span, half + 0.3 * span)
    ax.set_title("principal section (x–z); beam enters from the left", fontsize=7,
                 color="#444444", loc="left")


def _corner_angle(ax, pts, piece, angle, span):
    """Arc and value of an angle between an optical face and a side face."""
    face, side = angle.faces
    x_side = 0.5 * piece.width_mm * (1 if side.endswith("+x") else -1)
    on = pts[np.abs(pts[:, 1] - x_side) < 1e-9 * (1 + span)]
    if len(on) < 2:
        return
    # Entrance-side face: the corner at the smaller z; exit-side face: the larger.
    corner = on[on[:, 0].argmin()] if face == piece.faces[0] else on[on[:, 0].argmax()]
    r = 0.12 * span
    ax.plot(*corner, "o", ms=2, color=_DIM)
    label_z = corner[0] + (0.5 if face == piece.faces[0] else -0.5) * r
    label_x = corner[1] - np.sign(x_side) * 0.5 * r
    ax.annotate(angle.text(), xy=corner, xytext=(label_z, label_x + (-1.6 if x_side < 0 else 1.6) * r * 0),
                fontsize=6.8, color=_DIM, ha="center",
                va="top" if x_side > 0 else "bottom",
                arrowprops=None)


def _end_view(ax, piece):
    """End view looking along +z: x up, y to the right, with the axis projection."""
    from matplotlib.patches import Rectangle

    h, w = piece.height_mm, piece.width_mm
    ax.add_patch(Rectangle((-0.5 * h, -0.5 * w), h, w, facecolor=_FILL[1], edgecolor=_INK,
                           lw=1.2))
    span = max(h, w)
    off = 0.12 * span
    _dim_line(ax, (-0.5 * h, -0.5 * w - off), (0.5 * h, -0.5 * w - off), piece.lengths[4].text(),
              (-0.5 * h, -0.5 * w), (0.5 * h, -0.5 * w), above=False)
    _dim_line(ax, (0.5 * h + off, -0.5 * w), (0.5 * h + off, 0.5 * w), piece.lengths[3].text(),
              (0.5 * h, -0.5 * w), (0.5 * h, 0.5 * w), vertical=True, left=False)
    if piece.axis_local is not None:
        cx, cy, cz = piece.axis_local
        length = 0.35 * span
        if np.hypot(cx, cy) > 0.05:
            u = np.array([cy, cx]) / np.hypot(cx, cy)
            ax.annotate("", xy=u * length, xytext=-u * length,
                        arrowprops=dict(arrowstyle="<|-|>", color=_AXIS, lw=1.4))
        if abs(cz) > 0.05:
            ax.plot(0, 0, marker="o", ms=9, mfc="none", mec=_AXIS, mew=1.2)
            ax.plot(0, 0, marker="o", ms=2.5, color=_AXIS)
        ax.text(0.0, 0.5 * w + 0.06 * span, "optic axis projection", fontsize=6.5, ha="center",
                va="bottom", color=_AXIS)
    ax.text(-0.5 * h, -0.5 * w - 2.8 * off, "end view along the beam (from the entrance side):"
            "\nx up, y to the right", fontsize=6.5, va="top", color="#444444")
    ax.set_aspect("equal")
    ax.set_xlim(-0.5 * h - 0.3 * span, 0.5 * h + 0.45 * span)
    ax.set_ylim(-0.5 * w - 0.55 * span, 0.5 * w + 0.25 * span)


def _axis_symbol(ax, piece, centre, length, label=False):
    """Double arrow along the axis' projection on the section; ⊙ for a component across it."""
    if piece.axis_local is None:
        if label:
            ax.text(*centre, "isotropic", fontsize=7, ha="center", va="center", color=_INK)
        return
    cx, cy, cz = piece.axis_local
    shown_any = False
    if np.hypot(cx, cz) > 0.05:
        u = np.array([cz, cx]) / np.hypot(cx, cz)
        ax.annotate("", xy=centre + u * length, xytext=centre - u * length,
                    arrowprops=dict(arrowstyle="<|-|>", color=_AXIS, lw=1.4))
        shown_any = True
    if abs(cy) > 0.05:
        ax.plot(*centre, marker="o", ms=8, mfc="none", mec=_AXIS, mew=1.2)
        ax.plot(*centre, marker="o", ms=2.2, color=_AXIS)
        shown_any = True
    if label and shown_any:
        ax.text(centre[0], centre[1] - 1.15 * length, "optic axis", fontsize=6.5, ha="center",
                va="top", color=_AXIS)


def _dim_line(ax, a, b, text, ext_a, ext_b, *, above=True, vertical=False, left=True):
    """A dimension line from a to b with extension lines from the part and the value."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    for p, q in ((ext_a, a), (ext_b, b)):
        ax.plot([p[0], q[0]], [p[1], q[1]], color=_DIM, lw=0.5)
    ax.annotate("", xy=b, xytext=a, arrowprops=dict(arrowstyle="<|-|>", color=_DIM, lw=0.8,
                                                     shrinkA=0, shrinkB=0, mutation_scale=7))
    mid = 0.5 * (a + b)
    if vertical:
        ax.text(mid[0], mid[1], text + ("  " if left else ""), rotation=90, fontsize=7,
                ha="right" if left else "left", va="center", color=_DIM)
    else:
        ax.text(mid[0], mid[1], text, fontsize=7, ha="center",
                va="bottom" if above else "top", color=_DIM)
