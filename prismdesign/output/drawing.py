"""Side view of a prism (section y = 0) with optic-axis marks and traced beams."""
import numpy as np

from ..optics import TraceFlag

__all__ = ["draw_side_view", "BEAM_COLOURS", "beam_colour"]

#: Colours for beams, in the order the beams are listed (our own plain palette).
BEAM_COLOURS = ("#c0392b", "#1f6fb2", "#2e8b57", "#8e44ad", "#d35400", "#5d6d7e")
_PIECE_FILL = ("#dfe9f3", "#f3eadf", "#e4f3df", "#f0dff3")


def beam_colour(label):
    """The same colour for a beam label in every figure (labels of o/e letters)."""
    bits = "".join("1" if ch == "e" else "0" for ch in label if ch in "oe")
    index = (int(bits or "0", 2) + 2 ** len(bits)) if bits else sum(map(ord, label))
    return BEAM_COLOURS[index % len(BEAM_COLOURS)]


def _axis_marks(ax, piece, polygon, colour="#333333"):
    """Mark the optic axis inside a piece: segments along its in-section projection, dots for
    the component across the section (y)."""
    if piece.optic_axis is None or len(polygon) < 3:
        return
    z0, x0 = polygon.mean(axis=0)
    extent = 0.18 * min(np.ptp(polygon[:, 0]), np.ptp(polygon[:, 1]))
    cx, cy, cz = piece.optic_axis
    in_section = np.hypot(cx, cz)
    offsets = np.linspace(-1.0, 1.0, 3) * 1.1 * extent
    # Spread the marks across the piece, perpendicular to the mark direction.
    if in_section > 0.2:
        dz, dx = cz / in_section, cx / in_section
        for s in offsets:
            zc, xc = z0 - s * dx, x0 + s * dz
            ax.plot([zc - extent * dz, zc + extent * dz], [xc - extent * dx, xc + extent * dx],
                    color=colour, lw=1.2, solid_capstyle="round")
    if abs(cy) > 0.2:
        for s in offsets:
            ax.plot(z0 + 0.5 * s, x0 + 0.9 * s, "o", ms=3.5, color=colour)


def draw_side_view(prism, wavelength_um, ax=None, *, offsets_x_mm=None, in_plane_deg=0.0,
                   exit_length_mm=None, min_power=1e-3, title=None):
    """Draw the prism's section y = 0 with the traced beams.

    Parameters
    ----------
    prism : Prism
    wavelength_um : float
        Wavelength of the traced rays (µm).
    ax : matplotlib Axes, optional
    offsets_x_mm : array_like, optional
        Entry heights x of the drawn rays; default three rays across the aperture.
    in_plane_deg : float
        Input tilt in the principal section.
    exit_length_mm : float, optional
        Length of the drawn beams after the exit face; default the prism length.
    min_power : float
        Beams with less unpolarised power (relative) are not drawn.
    title : str, optional

    Returns
    -------
    matplotlib Axes
        Horizontal axis z (mm, beam direction), vertical axis x (mm, split direction).
    """
    import matplotlib.pyplot as plt
    from matplotlib.patches import Polygon

    if ax is None:
        _, ax = plt.subplots(figsize=(8.0, 4.0), layout="constrained")
    outline = prism.outline()
    for i, (piece, poly) in enumerate(outline):
        if len(poly) < 3:
            continue
        fill = _PIECE_FILL[i % len(_PIECE_FILL)] if piece.is_crystal else "#ffffff"
        ax.add_patch(Polygon(poly, closed=True, facecolor=fill, edgecolor="#222222", lw=1.0))
        _axis_marks(ax, piece, poly)
    if offsets_x_mm is None:
        offsets_x_mm = np.array([-0.3, 0.0, 0.3]) * prism.width_mm
    offsets = np.stack([np.asarray(offsets_x_mm, float), np.zeros(len(offsets_x_mm))], axis=-1)
    result = prism.trace(wavelength_um, in_plane_deg, offset_mm=offsets, polarisation="unpolarised")
    length = prism.length_mm if exit_length_mm is None else exit_length_mm
    z_end = prism.exit_z_mm + length
    labels = sorted(result.beams, key=lambda lab: -float(np.max(result.power(lab))))
    for label in labels:
        colour = beam_colour(label)
        beam = result.beams[label]
        power = result.power(label)
        if np.max(power) < min_power:
            continue
        positions = beam.positions_mm[:, 0]           # first of the incoherent pair
        end, _ = beam.at_plane((0.0, 0.0, z_end), (0.0, 0.0, 1.0))
        for j in range(positions.shape[1]):
            z = np.append(positions[:, j, 2], end[0, j, 2])
            x = np.append(positions[:, j, 0], end[0, j, 0])
            ax.plot(z, x, color=colour, lw=1.1, label=label if j == 0 else None)
    if prism.kind.startswith("glan"):
        _draw_rejected(ax, prism, wavelength_um, in_plane_deg, length)
    # Proxy entries explain the optic-axis marks.
    ax.plot([], [], color="#333333", lw=1.2, label="optic axis (in the drawing)")
    ax.plot([], [], "o", ms=3.5, color="#333333", label="optic axis (across it)")
    ax.set_xlabel("z (mm, along the beam)")
    ax.set_ylabel("x (mm, split direction)")
    ax.set_aspect("equal", adjustable="datalim")
    ax.grid(True, alpha=0.25)
    ax.legend(title="beams (mode per crystal)", fontsize=8, title_fontsize=8,
              loc="upper left", bbox_to_anchor=(1.01, 1.0))
    ax.set_title(title or f"{prism.kind.capitalize()}, side view at {wavelength_um:g} µm",
                 fontsize=9)
    return ax


def _draw_rejected(ax, prism, wavelength_um, in_plane_deg, length_mm):
    """Dashed path of a Glan prism's rejected beam, from the entrance to its exit face and on."""
    from ..prisms import trace_rejected

    rejected = trace_rejected(prism, wavelength_um, in_plane_deg)
    # Unpolarised traces carry a leading incoherent pair; both members share the geometry.
    positions = rejected.result.beams[rejected.label].positions_mm
    points = positions[:, 0] if rejected.result.incoherent_pair else positions
    exit_point = np.reshape(rejected.exit_position_mm, (-1, 3))[0]
    exit_direction = np.reshape(rejected.exit_direction, (-1, 3))[0]
    trapped = bool(np.any(np.asarray(rejected.flags) & TraceFlag.TOTAL_INTERNAL_REFLECTION))
    if trapped:
        # Totally reflected again at the face it meets: drawn up to that face only.
        z, x = points[:, 2], points[:, 0]
        label = f"rejected ({rejected.label}, trapped: totally reflected at the {rejected.exit_face})"
    else:
        end = exit_point + length_mm * exit_direction
        z = np.append(points[:, 2], end[2])
        x = np.append(points[:, 0], end[0])
        label = f"rejected ({rejected.label}, out of the {rejected.exit_face})"
    ax.plot(z, x, ls="--", color="#7f8c8d", lw=1.1, label=label)
