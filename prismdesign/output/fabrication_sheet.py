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

__all__ = ["write_fabrication_sheet", "sheet_figure", "fabrication_data", "FabricationData",
           "SHEET_FORMATS"]

#: File formats the sheet is written in (by suffix).
SHEET_FORMATS = (".svg", ".pdf")

_PAGE_W_IN = 16.54          # A3 landscape width; the height grows with the number of pieces
_HEADER_IN = 3.3
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
    """The sheet as a :class:`matplotlib.figure.Figure` (for viewing or other formats).

    Parameters
    ----------
    prism : Prism
    data : FabricationData
        From :func:`fabrication_data` for the same prism.
    """
    margin = 0.3
    inner = _PAGE_W_IN - 2 * margin
    card_w = 0.5 * inner
    # Each row of two cards is as tall as its longer table.
    rows = [data.pieces[k:k + 2] for k in range(0, len(data.pieces), 2)]
    row_h = [max(_card_height(p, card_w) for p in row) for row in rows]
    height = _HEADER_IN + sum(row_h) + _NOTES_IN + 0.75
    fig = new_figure(figsize=(_PAGE_W_IN, height))
    frame = fig.add_axes([0, 0, 1, 1])
    frame.set_axis_off()
    frame.set_xlim(0, _PAGE_W_IN)
    frame.set_ylim(0, height)

    # Header: title, then the assembly section beside its description.
    top = height - margin
    frame.text(margin + 0.1, top - 0.3, data.title, fontsize=15, weight="bold", color=_INK,
               va="baseline")
    frame.text(margin + 0.1, top - 0.55,
               f"design wavelength {1e3 * data.design_wavelength_um:g} nm; lengths in mm, angles "
               f"in degrees; x: split direction (in the principal section), y: across it, z: "
               f"along the beam", fontsize=8.5, color=_INK, va="baseline")
    header_h = _HEADER_IN - 0.75
    header_y = top - 0.75 - header_h
    frame.add_patch(_rect(margin, header_y, inner, header_h))
    view_w = 7.4
    ax = _axes_in(fig, height, margin + 0.1, header_y + 0.1, view_w, header_h - 0.2)
    _assembly_view(ax, prism, data, view_w, header_h - 0.2)
    lines = ["Assembly", *data.assembly, "Joints"]
    lines += [j.text for j in data.joints] or ["single piece: no joints"]
    _text_block(frame, lines, margin + view_w + 0.4, header_y + header_h - 0.15,
                inner - view_w - 0.6, headings={"Assembly", "Joints"}, size=8.5)

    # Piece cards, two per row.
    y_top = header_y
    for r, row in enumerate(rows):
        for col, piece in enumerate(row):
            x0 = margin + col * card_w
            frame.add_patch(_rect(x0, y_top - row_h[r], card_w, row_h[r]))
            _piece_card(fig, frame, height, piece, x0, y_top, card_w, 2 * r + col)
        y_top -= row_h[r]

    # Notes: tolerances, ISO meaning, crystal quality | dispersion data, notes, laser caution.
    notes_y = y_top - _NOTES_IN
    frame.add_patch(_rect(margin, notes_y, inner, _NOTES_IN))
    left = ["Tolerances", data.tolerance_note]
    if data.other_tolerances:
        left.append("Use conditions (not for the shop): " + "; ".join(data.other_tolerances))
    left += ["ISO 10110 callouts", *data.iso_notes,
             "Crystal quality", data.crystal_quality.replace("Crystal quality: ", "")]
    half = 0.5 * inner
    _text_block(frame, left, margin + 0.15, notes_y + _NOTES_IN - 0.12, half - 0.3,
                headings={"Tolerances", "ISO 10110 callouts", "Crystal quality"}, size=7.5)
    right = ["Dispersion data used", *data.dispersion_sources]
    if data.notes:
        right += ["Notes", data.notes]
    right += ["Workshop practice", " ".join(data.workshop)]
    right += ["Laser caution", data.laser_caution]
    _text_block(frame, right, margin + half + 0.15, notes_y + _NOTES_IN - 0.12, half - 0.3,
                headings={"Dispersion data used", "Notes", "Workshop practice", "Laser caution"},
                size=7.5)
    frame.text(_PAGE_W_IN - margin, notes_y - 0.22,
               "made with prismdesign from the design's own geometry; check every value against "
               "the design before ordering", fontsize=7, ha="right", va="top", color="#555555")
    return fig


def _rect(x, y, w, h):
    from matplotlib.patches import Rectangle

    return Rectangle((x, y), w, h, fill=False, edgecolor="#777777", lw=0.8)


def _axes_in(fig, page_h, x, y, w, h):
    """Axes at a rectangle given in inches from the lower left of the page."""
    ax = fig.add_axes([x / _PAGE_W_IN, y / page_h, w / _PAGE_W_IN, h / page_h])
    ax.set_axis_off()
    return ax


def _wrap(line, width_in, size):
    """Wrap a line to a width in inches at a font size (points), continuation indented."""
    chars = max(20, int(width_in * 72.0 / (0.54 * size)))
    return textwrap.wrap(line, chars, subsequent_indent="   ") or [""]


def _text_block(frame, lines, x, y, width_in, *, headings=(), size=_FONT, leading=1.42):
    """Wrapped lines from (x, y) downward (inches); headings in bold. Returns the lowest y."""
    step = size * leading / 72.0
    for line in lines:
        if line in headings:
            y -= 0.3 * step
            frame.text(x, y, line, fontsize=size + 0.5, weight="bold", color=_INK, va="top")
            y -= step
            continue
        for part in _wrap(line, width_in, size):
            frame.text(x, y, part, fontsize=size, color=_INK, va="top")
            y -= step
    return y


def _fit(ax, box_mm, size_in, pad_in):
    """Equal-scale limits showing `box_mm` (z0, z1, x0, x1) with paddings in inches (left,
    right, bottom, top) inside axes of `size_in` (w, h); returns mm per inch."""
    z0, z1, x0, x1 = box_mm
    left, right, bottom, top = pad_in
    w, h = size_in
    scale = max((z1 - z0) / max(w - left - right, 0.3), (x1 - x0) / max(h - bottom - top, 0.3))
    # Centre the drawing in the space left over.
    extra_w = (w - left - right) * scale - (z1 - z0)
    extra_h = (h - bottom - top) * scale - (x1 - x0)
    ax.set_xlim(z0 - left * scale - 0.5 * extra_w, z1 + right * scale + 0.5 * extra_w)
    ax.set_ylim(x0 - bottom * scale - 0.5 * extra_h, x1 + top * scale + 0.5 * extra_h)
    ax.set_aspect("equal", adjustable="box")
    return scale


# ---------------------------------------------------------------------------- views
def _assembly_view(ax, prism, data, w_in, h_in):
    """All pieces at their places along z, each in its own prism's frame, numbered."""
    from matplotlib.patches import Polygon

    z_all = np.concatenate([p.polygon_mm[:, 0] for p in data.pieces])
    x_all = np.concatenate([p.polygon_mm[:, 1] for p in data.pieces])
    lo, hi = float(z_all.min()), float(z_all.max())
    s = _fit(ax, (lo, hi, x_all.min(), x_all.max()), (w_in, h_in), (0.3, 0.3, 0.55, 0.45))
    for k, piece in enumerate(data.pieces):
        poly = piece.polygon_mm
        ax.add_patch(Polygon(poly, closed=True, facecolor=_FILL[k % len(_FILL)],
                             edgecolor=_INK, lw=1.0))
        centre = _centroid(poly)
        ax.text(centre[0], centre[1] + 0.16 * s, f"{k + 1}", fontsize=10, weight="bold",
                ha="center", va="bottom", color=_INK)
        _axis_symbol(ax, piece, centre - [0, 0.12 * s], min(0.22 * s, 0.3 * piece.width_mm),
                     poly)
    top = float(x_all.max())
    _dim_line(ax, (lo, top + 0.22 * s), (hi, top + 0.22 * s), f"{hi - lo:.3f} mm overall",
              (lo, top), (hi, top), s)
    ax.text(lo, float(x_all.min()) - 0.12 * s,
            "principal section (x–z) at the centre line, beam from the left; pieces numbered as "
            "their cards; red arrow: optic axis in the drawing plane, ⊙: axis component across "
            "it",
            fontsize=7, va="top", color="#444444")


_VIEW_IN = 2.45
_CARD_TEXT = dict(size=7.0, leading=1.36)
_CARD_HEADS = {"Optic axis", "Angles", "Lengths", "Optical faces"}


def _card_lines(piece):
    """The two text columns of a piece's card."""
    left = ["Optic axis", piece.axis_words]
    for name, value in piece.axis_angles:
        left.append(f"{name}: {value:.3f}°")
    if piece.crystal:
        left.append(piece.axis_tolerance)
    left.append("Angles")
    for a in piece.angles:
        tag = ("" if not a.reference else "  (faces parallel, derived)" if a.angle_deg < 1e-9
               else "  (wedge angle, derived)")
        left.append(f"{a.faces[0]} to {a.faces[1]}: {a.text()}{tag}")
    right = ["Lengths"]
    right += [f"{d.name}: {d.text()}" for d in piece.lengths]
    right.append("Optical faces")
    for (face, clear), (_, coat), (_, calls) in zip(piece.clear_apertures, piece.coatings,
                                                    piece.callouts):
        right.append(f"{face}: {'   '.join(calls)}")
        right.append(f"   clear aperture {clear}; {coat}")
    return left, right


def _column_width(card_w):
    return 0.5 * card_w - 0.2


def _block_height(lines, width_in, size, leading, headings):
    step = size * leading / 72.0
    count = sum(1.3 if line in headings else len(_wrap(line, width_in, size)) for line in lines)
    return count * step


def _card_height(piece, card_w):
    """Height of a piece's card (inches): title, views and the longer text column."""
    text = max(_block_height(lines, _column_width(card_w), headings=_CARD_HEADS, **_CARD_TEXT)
               for lines in _card_lines(piece))
    return 0.42 + _VIEW_IN + 0.1 + text + 0.15


def _piece_card(fig, frame, page_h, piece, x0, y_top, w, k):
    """One piece, hanging from y_top: title, section, end view and its table."""
    title = f"Piece {k + 1}: {piece.label} — {piece.dataset_label}"
    if not piece.crystal:
        title += " (isotropic)"
    frame.text(x0 + 0.15, y_top - 0.12, title, fontsize=10.5, weight="bold", va="top",
               color=_INK)
    if abs(piece.frame_deg) > 1e-9:
        frame.text(x0 + w - 0.15, y_top - 0.14, f"drawn in its prism's own frame, turned "
                   f"{piece.frame_deg:.2f}° about the beam", fontsize=7.5, ha="right", va="top",
                   color=_AXIS)
    view_y = y_top - 0.42 - _VIEW_IN
    sec_w, end_w = 0.6 * w - 0.1, 0.4 * w - 0.2
    sec = _axes_in(fig, page_h, x0 + 0.1, view_y, sec_w, _VIEW_IN)
    _section_view(sec, piece, (sec_w, _VIEW_IN))
    end = _axes_in(fig, page_h, x0 + 0.1 + sec_w + 0.1, view_y, end_w, _VIEW_IN)
    _end_view(end, piece, (end_w, _VIEW_IN))
    left, right = _card_lines(piece)
    col_w = _column_width(w)
    _text_block(frame, left, x0 + 0.15, view_y - 0.05, col_w, headings=_CARD_HEADS,
                **_CARD_TEXT)
    _text_block(frame, right, x0 + 0.5 * w + 0.05, view_y - 0.05, col_w, headings=_CARD_HEADS,
                **_CARD_TEXT)


def _section_view(ax, piece, size_in):
    """Principal section of one piece: lengths along both side faces, angles at the corners
    that are not square, face names along the faces, optic axis."""
    from matplotlib.patches import Polygon

    poly = piece.polygon_mm
    pts = poly - [poly[:, 0].min(), 0.0]
    half = 0.5 * piece.width_mm
    s = _fit(ax, (0.0, pts[:, 0].max(), -half, half), size_in, (1.05, 1.05, 0.72, 0.62))
    ax.add_patch(Polygon(pts, closed=True, facecolor=_FILL[0], edgecolor=_INK, lw=1.2))
    tol = 1e-9 * (1.0 + np.abs(pts).max())
    # Lengths along the side faces: +x above, −x below, clear of the corner angle labels.
    for index, x_side, sign in ((1, half, 1.0), (0, -half, -1.0)):
        on = pts[np.abs(pts[:, 1] - x_side) < tol]
        if len(on) >= 2:
            a, b = on[:, 0].min(), on[:, 0].max()
            level = x_side + sign * 0.3 * s
            _dim_line(ax, (a, level), (b, level), piece.lengths[index].text(), (a, x_side),
                      (b, x_side), s, above=sign > 0)
    for a in piece.angles:
        if not a.reference and abs(a.angle_deg - 90.0) > 1e-6:
            _corner_angle(ax, pts, piece, a, s, tol)
    wedge = next(a for a in piece.angles if a.reference)
    if wedge.angle_deg > 1e-6:
        ax.text(0.5 * pts[:, 0].max(), -half - 0.5 * s,
                f"wedge angle {wedge.text()} (follows from the face angles)", fontsize=7,
                ha="center", va="top",
                color=_DIM)
    # Face names along the faces, just outside.
    for name, face_side in zip(piece.faces, (-1.0, 1.0)):
        _face_label(ax, pts, name, face_side, half, s, tol)
    centre = _centroid(pts)
    _axis_symbol(ax, piece, centre, min(0.3 * piece.width_mm, 0.35 * s), pts)
    _axis_angle(ax, piece, pts, centre, half, s, tol)
    ax.text(ax.get_xlim()[0], ax.get_ylim()[1],
            "principal section (x–z): beam from the left, +x up", fontsize=7, va="top",
            color="#444444")


def _face_edge(pts, face_side, half, tol):
    """End points of an optical face in the section: the extreme-z vertices on the two side
    faces (face_side −1: entrance side, +1: exit side); None if a side is missing."""
    ends = []
    for x_side in (-half, half):
        on = pts[np.abs(pts[:, 1] - x_side) < tol]
        if not len(on):
            return None
        ends.append(on[on[:, 0].argmin()] if face_side < 0 else on[on[:, 0].argmax()])
    return ends


def _face_label(ax, pts, name, face_side, half, s, tol):
    """The face's name parallel to it, outside the piece (face_side −1: entrance side)."""
    ends = _face_edge(pts, face_side, half, tol)
    if ends is None:
        return
    (za, xa), (zb, xb) = ends
    angle = np.degrees(np.arctan2(xb - xa, zb - za))
    angle = angle - 180.0 if angle > 90.0 else angle + 180.0 if angle <= -90.0 else angle
    mid = np.array([0.5 * (za + zb), 0.5 * (xa + xb)])
    normal = np.array([xb - xa, -(zb - za)]) / np.hypot(xb - xa, zb - za)
    normal = normal if normal[0] * face_side > 0 else -normal
    pos = mid + normal * 0.13 * s
    ax.text(pos[0], pos[1], name, rotation=angle, rotation_mode="anchor", fontsize=6.8,
            ha="center", va="center", color="#555555")


def _axis_angle(ax, piece, pts, centre, half, s, tol):
    """For an axis in the section but tilted against its reference face: a dashed line along
    that face through the axis mark, an arc to the axis and the angle."""
    if piece.axis_local is None or abs(piece.axis_local[1]) > 1e-7:
        return
    tilt = dict(piece.axis_angles).get(f"angle to the {piece.axis_face}")
    if tilt is None or not 1e-5 < tilt < 90.0 - 1e-5:
        return
    ends = _face_edge(pts, -1.0 if piece.axis_face == piece.faces[0] else 1.0, half, tol)
    if ends is None:
        return
    face = (ends[1] - ends[0]) / np.hypot(*(ends[1] - ends[0]))
    cx, _, cz = piece.axis_local
    axis = np.array([cz, cx]) / np.hypot(cx, cz)
    face = face if face @ axis >= 0 else -face
    length = 0.32 * s
    ax.plot([centre[0] - face[0] * length, centre[0] + face[0] * length],
            [centre[1] - face[1] * length, centre[1] + face[1] * length], ls=(0, (3, 2)),
            color=_AXIS, lw=0.7)
    from matplotlib.patches import Arc

    a1, a2 = np.degrees(np.arctan2(face[1], face[0])), np.degrees(np.arctan2(axis[1], axis[0]))
    lo, hi = sorted((a1, a2))
    if hi - lo > 180.0:
        lo, hi = hi, lo + 360.0
    r = 0.24 * s
    ax.add_patch(Arc(centre, 2 * r, 2 * r, theta1=lo, theta2=hi, color=_AXIS, lw=0.8))
    mid = np.radians(0.5 * (lo + hi))
    tip = centre + 1.05 * r * np.array([np.cos(mid), np.sin(mid)])
    # The value sits beside the piece's exit side, led from the arc.
    # (above the middle of the exit-side face, where that face's own name sits).
    label = (pts[:, 0].max() + 0.12 * s, centre[1] + 0.42 * s)
    ax.annotate(f"axis {tilt:.2f}° to the {piece.axis_face}", xy=tip, xytext=label,
                fontsize=6.8, color=_AXIS, ha="left", va="bottom",
                arrowprops=dict(arrowstyle="-", color=_AXIS, lw=0.5, shrinkA=1, shrinkB=0))


def _corner_angle(ax, pts, piece, angle, s, tol):
    """Arc and value (with tolerance) of an angle between an optical face and a side face."""
    from matplotlib.patches import Arc

    face, side = angle.faces
    x_side = 0.5 * piece.width_mm * (1.0 if side.endswith("+x") else -1.0)
    on = pts[np.abs(pts[:, 1] - x_side) < tol]
    if len(on) < 2:
        return
    entrance_side = face == piece.faces[0]
    corner = on[on[:, 0].argmin()] if entrance_side else on[on[:, 0].argmax()]
    other = on[on[:, 0].argmax()] if entrance_side else on[on[:, 0].argmin()]
    # The other edge at this corner runs along the optical face.
    idx = int(np.argmin(np.hypot(*(pts - corner).T)))
    neighbours = [pts[idx - 1], pts[(idx + 1) % len(pts)]]
    along_face = next(p for p in neighbours if np.hypot(*(p - other)) > tol)
    a1 = np.degrees(np.arctan2(*(other - corner)[::-1]))
    a2 = np.degrees(np.arctan2(*(along_face - corner)[::-1]))
    lo, hi = sorted((a1, a2))
    if hi - lo > 180.0:
        lo, hi = hi, lo + 360.0
    # Radius: a fixed size on paper, but inside the shorter edge at this corner.
    r = min(0.22 * s, 0.4 * np.hypot(*(other - corner)), 0.8 * np.hypot(*(along_face - corner)))
    ax.add_patch(Arc(corner, 2 * r, 2 * r, theta1=lo, theta2=hi, color=_DIM, lw=0.8))
    # Label beside the corner, outside the piece: left of entrance-side corners, right of
    # exit-side ones; above the +x side, below the −x side.
    dz = (-0.06 if entrance_side else 0.06) * s
    dx = (0.04 if x_side > 0 else -0.04) * s
    ax.text(corner[0] + dz, corner[1] + dx, angle.text(), fontsize=7, color=_DIM,
            ha="right" if entrance_side else "left", va="bottom" if x_side > 0 else "top")


def _end_view(ax, piece, size_in):
    """End view looking along +z from the entrance side: x up, y to the right, with the
    optic axis projected on the face."""
    from matplotlib.patches import Rectangle

    h, w = piece.height_mm, piece.width_mm
    s = _fit(ax, (-0.5 * h, 0.5 * h, -0.5 * w, 0.5 * w), size_in, (0.35, 0.8, 0.72, 0.62))
    ax.add_patch(Rectangle((-0.5 * h, -0.5 * w), h, w, facecolor=_FILL[1], edgecolor=_INK,
                           lw=1.2))
    level = -0.5 * w - 0.3 * s
    _dim_line(ax, (-0.5 * h, level), (0.5 * h, level), piece.lengths[4].text(),
              (-0.5 * h, -0.5 * w), (0.5 * h, -0.5 * w), s, above=False)
    side = 0.5 * h + 0.3 * s
    _dim_line(ax, (side, -0.5 * w), (side, 0.5 * w), piece.lengths[3].text(),
              (0.5 * h, -0.5 * w), (0.5 * h, 0.5 * w), s, vertical=True)
    if piece.axis_local is not None:
        cx, cy, cz = piece.axis_local
        length = 0.32 * min(h, w)
        if np.hypot(cx, cy) > 0.05:
            u = np.array([cy, cx]) / np.hypot(cx, cy)
            ax.annotate("", xy=u * length, xytext=-u * length,
                        arrowprops=dict(arrowstyle="<|-|>", color=_AXIS, lw=1.4,
                                        shrinkA=0, shrinkB=0))
        if abs(cz) > 0.05:
            ax.plot(0, 0, marker="o", ms=9, mfc="none", mec=_AXIS, mew=1.2)
            ax.plot(0, 0, marker="o", ms=2.5, color=_AXIS)
    ax.text(ax.get_xlim()[0], ax.get_ylim()[1], "end view along the beam, from the entrance "
            "side\n(x up, y to the right); red: optic axis projected,\n⊙ its component along "
            "the beam", fontsize=7, va="top", color="#444444")


def _centroid(polygon):
    """Area centroid of a simple polygon (rows (z, x))."""
    z, x = polygon[:, 0], polygon[:, 1]
    cross = z * np.roll(x, -1) - np.roll(z, -1) * x
    area = 0.5 * cross.sum()
    if abs(area) < 1e-15:
        return polygon.mean(axis=0)
    return np.array([((z + np.roll(z, -1)) * cross).sum(), ((x + np.roll(x, -1)) * cross).sum()]
                    ) / (6.0 * area)


def _axis_symbol(ax, piece, centre, length, polygon):
    """Double arrow along the axis' projection on the section; ⊙ where it has a component
    across the section (y). The arrow is shortened until it lies inside the piece."""
    from matplotlib.path import Path as _Path

    outline = _Path(polygon)
    if piece.axis_local is None:
        ax.text(*centre, "isotropic", fontsize=7, ha="center", va="center", color=_INK)
        return
    cx, cy, cz = piece.axis_local
    if np.hypot(cx, cz) > 0.05:
        u = np.array([cz, cx]) / np.hypot(cx, cz)
        for _ in range(20):
            if outline.contains_points([centre + u * length, centre - u * length]).all():
                break
            length *= 0.85
        ax.annotate("", xy=centre + u * length, xytext=centre - u * length,
                    arrowprops=dict(arrowstyle="<|-|>", color=_AXIS, lw=1.4, shrinkA=0,
                                    shrinkB=0))
    if abs(cy) > 0.05:
        ax.plot(*centre, marker="o", ms=8, mfc="none", mec=_AXIS, mew=1.2)
        ax.plot(*centre, marker="o", ms=2.2, color=_AXIS)


def _dim_line(ax, a, b, text, ext_a, ext_b, s, *, above=True, vertical=False):
    """A dimension line from a to b with extension lines from the part and its value; s is
    the view's scale (mm per inch) for the text gap."""
    a, b = np.asarray(a, float), np.asarray(b, float)
    for p, q in ((ext_a, a), (ext_b, b)):
        ax.plot([p[0], q[0]], [p[1], q[1]], color=_DIM, lw=0.5)
    if np.hypot(*(b - a)) > 0.2 * s:
        ax.annotate("", xy=b, xytext=a, arrowprops=dict(arrowstyle="<|-|>", color=_DIM, lw=0.8,
                                                         shrinkA=0, shrinkB=0, mutation_scale=7))
    else:
        # Too short for arrows inside: arrows from outside pointing in (drawing practice).
        u = (b - a) / max(np.hypot(*(b - a)), 1e-12)
        for tip, back in ((a, a - 0.15 * s * u), (b, b + 0.15 * s * u)):
            ax.annotate("", xy=tip, xytext=back, arrowprops=dict(
                arrowstyle="-|>", color=_DIM, lw=0.8, shrinkA=0, shrinkB=0, mutation_scale=7))
        ax.plot([a[0], b[0]], [a[1], b[1]], color=_DIM, lw=0.8)
    mid = 0.5 * (a + b)
    if vertical:
        ax.text(mid[0] + 0.05 * s, mid[1], text, rotation=90, fontsize=7, ha="left",
                va="center", color=_DIM)
    else:
        ax.text(mid[0], mid[1] + (0.03 if above else -0.03) * s, text, fontsize=7, ha="center",
                va="bottom" if above else "top", color=_DIM)
