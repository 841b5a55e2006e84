"""Statements and files of the output layer: field-of-view words read from a 2-D map, figure
labels that define what they show, atomic saving, and plotting that leaves the backend alone."""
import os
import re
from pathlib import Path

import matplotlib
import numpy as np
import pytest

from prismdesign import material, materials
from prismdesign.output.field_words import RegionSummary, region_words, summarise_region
from prismdesign.output.files import new_figure, save_figure, write_text
from prismdesign.output.material_plots import (birefringence_comparison_figure, curve_label,
                                               plot_indices)
from prismdesign.output.plots import ASYMMETRY_CAPTION, split_figure

HALF, STEPS = 10.0, 81                     # grid of ±10° in 0.25° steps
GRID = np.linspace(-HALF, HALF, STEPS)
RADIUS = np.hypot(GRID[None, :], GRID[:, None])


def test_disc_map_matches_its_closed_form():
    # A disc of radius R: area πR² (Euclid, Elements XII.2) over the (2·HALF)² map; the four
    # axis extents are R on the grid and the cone (a lower bound) is within a step below R.
    r = 5.0
    summary = summarise_region(RADIUS <= r, GRID, GRID)
    assert summary.holds_at_normal_incidence
    assert summary.fraction == pytest.approx(np.pi * r**2 / (2 * HALF) ** 2, rel=0.03)
    assert r - 0.25 <= summary.cone_half_angle_deg <= r and not summary.cone_open
    np.testing.assert_allclose(summary.axis_extent_deg, r)
    assert not summary.axis_open.any()
    words = region_words(summary)
    cone = float(re.match(r"met at normal incidence and within ([\d.]+)° of it in every "
                          r"direction", words).group(1))
    assert cone == pytest.approx(summary.cone_half_angle_deg, abs=0.005)
    assert "in-plane ±5.00°, out-of-plane ±5.00°" in words


def test_stripe_is_open_along_the_axis_but_narrow_across():
    # The shape of a perfect Wollaston's leakage valley: a strip along the in-plane axis. A scan
    # along that axis alone would call the field "±10°"; the map says the cone is 1°.
    summary = summarise_region(np.abs(GRID[:, None]) + 0 * GRID[None, :] <= 1.0, GRID, GRID)
    assert summary.axis_open.tolist() == [True, True, False, False]
    np.testing.assert_allclose(summary.axis_extent_deg, [10.0, 10.0, 1.0, 1.0])
    assert summary.cone_half_angle_deg == pytest.approx(1.0)
    words = region_words(summary)
    assert "within 1.00° of it in every direction" in words
    assert "in-plane ±10.00° (grid edge), out-of-plane ±1.00°" in words


def test_ring_fails_at_normal_incidence_and_names_the_nearest_point():
    ring = (RADIUS >= 3.0) & (RADIUS <= 4.0)
    summary = summarise_region(ring, GRID, GRID)
    assert not summary.holds_at_normal_incidence and summary.cone_half_angle_deg == 0.0
    np.testing.assert_allclose(summary.axis_extent_deg, 0.0)
    assert summary.nearest_deg == pytest.approx(3.0)
    a, b = summary.nearest_point_deg
    assert np.hypot(a, b) == pytest.approx(3.0)
    words = region_words(summary)
    assert words.startswith("NOT met at normal incidence; met on ")
    assert "nearest to normal incidence 3.00° away" in words
    share = float(re.search(r"met on ([\d.]+) % of the map", words).group(1))
    assert share == pytest.approx(100 * ring.mean(), abs=0.05)


def test_an_asymmetric_region_states_both_sides():
    ok = (GRID[None, :] >= -2.0) & (GRID[None, :] <= 6.0) & (np.abs(GRID[:, None]) <= 3.0)
    summary = summarise_region(ok, GRID, GRID)
    np.testing.assert_allclose(summary.axis_extent_deg, [6.0, 2.0, 3.0, 3.0])
    assert summary.cone_half_angle_deg == pytest.approx(2.0)
    assert "in-plane +6.00° / -2.00°, out-of-plane ±3.00°" in region_words(summary)


def test_nowhere_and_everywhere():
    assert region_words(summarise_region(np.zeros((STEPS, STEPS), bool), GRID, GRID)) == \
        "NOT met anywhere on the map"
    everywhere = summarise_region(np.ones((STEPS, STEPS), bool), GRID, GRID)
    assert everywhere.cone_open and everywhere.cone_half_angle_deg == HALF
    assert region_words(everywhere).startswith("met everywhere on the map")
    nowhere = summarise_region(np.zeros((STEPS, STEPS), bool), GRID, GRID)
    assert np.isnan(nowhere.nearest_deg) and nowhere.fraction == 0.0


@pytest.mark.parametrize("ok, axes, words", [
    (np.ones((STEPS, STEPS)), (GRID, GRID), "2-D boolean map"),
    (np.ones((STEPS, STEPS - 2), bool), (GRID, GRID), "square and centred"),
    (np.ones((4, 4), bool), (np.linspace(-1, 1, 4),) * 2, "odd-sized"),
    (np.ones((STEPS, STEPS), bool), (GRID + 1.0, GRID + 1.0), "symmetric about 0"),
])
def test_bad_maps_fail_in_one_line(ok, axes, words):
    with pytest.raises(ValueError, match=words) as info:
        summarise_region(ok, *axes)
    assert "\n" not in str(info.value)


def test_region_words_wants_a_summary():
    with pytest.raises(ValueError, match="must be a RegionSummary"):
        region_words({"fraction": 0.5})
    assert isinstance(summarise_region(RADIUS <= 1, GRID, GRID), RegionSummary)


def test_save_figure_never_corrupts_an_existing_file(tmp_path):
    target = tmp_path / "figure.png"
    target.write_bytes(b"previous figure")
    fig = new_figure()
    fig.subplots().plot([0, 1], [0, 1])
    with pytest.raises(ValueError):                     # matplotlib knows no "nosuchformat"
        save_figure(fig, tmp_path / "figure.nosuchformat")
    bad = tmp_path / "figure.nosuchformat"
    assert not bad.exists()
    # A failure while writing over an existing file leaves it as it was, and no temp file.
    original = fig.savefig

    def broken(*args, **kwargs):
        original(*args, **kwargs)
        raise OSError("disk full")
    fig.savefig = broken
    with pytest.raises(OSError, match="disk full"):
        save_figure(fig, target)
    assert target.read_bytes() == b"previous figure"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["figure.png"]
    fig.savefig = original
    save_figure(fig, target)
    assert target.read_bytes()[:4] == b"\x89PNG"


def test_written_files_get_ordinary_permissions(tmp_path):
    mask = os.umask(0o022)
    try:
        path = write_text(tmp_path / "table.csv", "a,b\n")
    finally:
        os.umask(mask)
    assert path.read_text() == "a,b\n"
    assert path.stat().st_mode & 0o777 == 0o644


def test_curve_labels_of_every_material_read_cleanly():
    # A short citation may carry "(from memory)"; the label must not nest it into "...))".
    assert curve_label("alpha_bbo", "Zhou 1998 (from memory)") == \
        "alpha_bbo — Zhou 1998 (from memory)"
    for name in materials():
        item = material(name)
        label = curve_label(item.name, item.reference.short if item.reference else None)
        assert "))" not in label and label.count("(") == label.count(")"), label


def test_birefringence_comparison_reads_the_differences():
    lam = np.linspace(0.8, 1.0, 21)
    crystals = [material(name) for name in ("calcite", "quartz")]
    curves = [(curve_label(m.name, m.reference.short), np.abs(m.birefringence(lam)))
              for m in crystals]
    fig = birefringence_comparison_figure(lam, curves)
    top, bottom = fig.axes[:2]
    # Not a linear axis from 0, on which both curves look flat.
    assert top.get_yscale() == "log" and top.get_ylim()[0] > 0
    assert [t.get_text() for t in fig.legends[0].get_texts()] == [c[0] for c in curves]
    # The lower panel ends at the table's "|dn| change %" column of the demo.
    for line, m in zip(bottom.get_lines(), crystals):
        x, y = line.get_data()
        dn = np.abs(m.birefringence(lam))
        assert y[-1] == pytest.approx(100 * (dn[-1] - dn[0]) / dn[0], rel=1e-9)


def test_split_figure_defines_its_asymmetry_panel():
    from prismdesign.analysis import split
    from prismdesign.prisms import wollaston

    lam = np.linspace(0.8, 1.0, 5)
    fig = split_figure(lam, split(wollaston("calcite", 12.0), lam), (0.8, 1.0))
    bottom = fig.axes[2]
    assert bottom.get_title(loc="left") == ASYMMETRY_CAPTION
    assert "bisector" in ASYMMETRY_CAPTION and "input" in ASYMMETRY_CAPTION
    legend = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert legend == ["beam oe (toward −x)", "beam eo (toward +x)"]


def test_writing_a_figure_leaves_the_backend_alone(tmp_path):
    # In Jupyter the backend is the inline one; a library that switched it to Agg would stop
    # every later figure from showing. Any backend other than Agg stands in for it here.
    previous = matplotlib.get_backend()
    matplotlib.use("svg", force=True)
    try:
        plot_indices(material("calcite"), np.linspace(0.5, 1.0, 50), tmp_path / "calcite.png")
        assert matplotlib.get_backend().lower() == "svg"
        assert (tmp_path / "calcite.png").read_bytes()[:4] == b"\x89PNG"
    finally:
        matplotlib.use(previous, force=True)
    assert Path(tmp_path / "calcite.png").stat().st_size > 20_000
