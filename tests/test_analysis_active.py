"""Analyses of prisms with an optically active piece: branches that leave together are one
output beam (prismdesign.analysis.beam_groups).

Sources beside each check. The rotation law of a plate cut perpendicular to the axis: the plane
of polarisation turns by ρ·t (Born & Wolf, *Principles of Optics*, 7th ed., §15.5, from
memory), so between crossed polarisers the transmitted fraction is sin²(ρt) (Malus's law); the
rotation of 1 mm of quartz at the sodium D line, 21.724°, is Soret & Sarasin's (Winkelmann,
*Handbuch der Physik* vol. II, 1894, p. 801; as in tests/test_optics_activity.py).
"""
import warnings

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from prismdesign.analysis import extinction, jones_matrices, separation, split, transmission
from prismdesign.analysis.beam_groups import (GROUP_TOLERANCE_RAD, group_labels,
                                              group_spread_rad, output_beam_trace)
from prismdesign.analysis.interference import optical_path_difference
from prismdesign.materials import material
from prismdesign.materials.activity import ActivePieceWarning
from prismdesign.prisms import StackPiece, free_stack, rochon, walkoff_displacer, wollaston

QUARTZ = material("quartz")
RIGHT = QUARTZ.with_handedness("right")
LAM = 0.5893


def _plate(hand="right", thickness_mm=1.0):
    crystal = QUARTZ.with_handedness(hand) if hand else QUARTZ
    return free_stack([StackPiece(crystal, "z", 0.0, thickness_mm)], design_wavelength_um=LAM)


def _rochon(crystal):
    return rochon(crystal, 20.0, width_mm=10.0, height_mm=10.0, edge_thickness_mm=1.0,
                  design_wavelength_um=LAM)


@pytest.mark.parametrize("thickness_mm", [0.5, 1.0, 2.7])
@pytest.mark.parametrize("wavelength_um", [0.4861, 0.5893, 0.6563])
def test_plate_between_crossed_polarisers_follows_rotation_law(thickness_mm, wavelength_um):
    # Rotation law (Born & Wolf §15.5, from memory) + Malus: crossed polarisers pass sin²(ρt)
    # of the light the plate transmits; the plate's two circular-wave branches are one beam.
    prism = _plate("right", thickness_mm)
    result = jones_matrices(prism, wavelength_um)
    assert result.labels == ("e+o",)
    j = result.jones["e+o"]
    through = np.abs(j[1, 0]) ** 2                       # x polariser, y analyser
    transmitted = transmission(prism, wavelength_um, polarisation=(1.0, 0.0))
    assert transmitted.labels == ("e+o",)
    total = float(transmitted.power["e+o"])
    assert total == pytest.approx(np.sum(np.abs(j[:, 0]) ** 2), rel=1e-12)
    rho = RIGHT.rotatory_power_deg_per_mm(wavelength_um)
    assert through / total == pytest.approx(np.sin(np.deg2rad(rho * thickness_mm)) ** 2,
                                            abs=1e-9)
    # Right-handed: clockwise seen facing the light, i.e. the azimuth from x toward y falls.
    assert np.real(j[1, 0] / j[0, 0]) == pytest.approx(-np.tan(np.deg2rad(rho * thickness_mm)),
                                                       rel=1e-8)


def test_plate_rotation_matches_soret_sarasin_d_line():
    # Soret & Sarasin: 21.724° for 1 mm at 0.5893 µm (Winkelmann 1894, p. 801); the fit of the
    # material data reproduces it to ~0.1 %, so the crossed-polariser fraction within 0.5 %.
    result = jones_matrices(_plate("right", 1.0), 0.5893)
    j = result.jones["e+o"]
    fraction = np.abs(j[1, 0]) ** 2 / np.sum(np.abs(j[:, 0]) ** 2)
    assert fraction == pytest.approx(np.sin(np.deg2rad(21.724)) ** 2, rel=5e-3)


@pytest.mark.parametrize("hand", ["right", "left"])
def test_active_plate_jones_matrix_is_a_rotation(hand):
    # A lossless rotator is a real rotation matrix (Born & Wolf §15.5); at normal incidence
    # along the axis the faces only scale it by the Fresnel amplitude (the same for both
    # circular waves to first order in ξ): J = t·R(∓ρt) up to a common phase.
    lam = np.array([0.45, 0.55, 0.65])
    t_mm = 1.3
    j = jones_matrices(_plate(hand, t_mm), lam).jones["e+o"]
    gram = np.conj(np.swapaxes(j, -1, -2)) @ j
    scale = gram[..., 0, 0].real
    np.testing.assert_allclose(gram, scale[:, None, None] * np.eye(2), atol=1e-9)
    rho = QUARTZ.with_handedness(hand).rotatory_power_deg_per_mm(lam)
    angle = np.deg2rad(-rho * t_mm)
    rotation = np.stack([np.stack([np.cos(angle), -np.sin(angle)], -1),
                         np.stack([np.sin(angle), np.cos(angle)], -1)], -2)
    phase = j[..., 0, 0] / np.abs(j[..., 0, 0])
    np.testing.assert_allclose(j / (np.sqrt(scale) * phase)[:, None, None], rotation, atol=1e-9)
    # The Fresnel loss is that of the inactive plate (two faces at n_o).
    inactive = transmission(_plate(None, t_mm), lam).total
    np.testing.assert_allclose(scale, inactive, rtol=1e-6)


def test_rochon_split_pairs_undeviated_with_deviated_beam():
    # Before grouping, split took the two halves of the undeviated beam (0.0015°). Grouped,
    # the split equals the inactive Rochon's to within the arcsecond doubling of the halves
    # (Δ ≈ 2ξ tanθ, test_optics_activity), and the undeviated beam's power is the inactive one.
    active = split(_rochon(RIGHT), LAM)
    inactive = split(_rochon(QUARTZ), LAM)
    assert set(active.main_labels) == {"eo+oo", "ee+oe"}
    spread_deg = np.rad2deg(2 * RIGHT.indices(LAM).chirality * np.tan(np.deg2rad(20.0)))
    assert abs(active.split_deg - inactive.split_deg) < spread_deg
    assert active.split_deg == pytest.approx(inactive.split_deg, abs=1e-5)
    undeviated_inactive = min(inactive.main_labels,
                              key=lambda k: abs(inactive.in_plane_deg[k]))
    assert active.power["eo+oo"] == pytest.approx(inactive.power[undeviated_inactive], rel=1e-6)
    # The reported spread of the group is the arcsecond doubling.
    traced = _rochon(RIGHT).trace(LAM, 0.0, 0.0, polarisation="unpolarised")
    assert np.rad2deg(group_spread_rad(traced, "eo+oo")) == pytest.approx(spread_deg, rel=0.02)


def test_rochon_separation_and_extinction_use_grouped_beams():
    sep_a = separation(_rochon(RIGHT), LAM, 100.0)
    sep_i = separation(_rochon(QUARTZ), LAM, 100.0)
    assert set(sep_a.main_labels) == {"eo+oo", "ee+oe"}
    # 100 mm × the arcsecond doubling (2.6e-5 rad) bounds the change: 2.6 µm.
    assert sep_a.separation_mm == pytest.approx(sep_i.separation_mm, abs=3e-3)
    ext = extinction(_rochon(RIGHT), LAM)
    assert set(ext.main_labels) == {"eo+oo", "ee+oe"}


@settings(max_examples=25, deadline=None)
@given(a=st.floats(-1, 1), b=st.floats(-1, 1), c=st.floats(-1, 1), d=st.floats(-1, 1))
def test_grouped_power_is_the_coherent_sum_of_any_polarised_input(a, b, c, d):
    # Each grouped power is |J·E_in|² of its Jones matrix, for any input (linear, circular:
    # circular input feeds one circular wave only, and the labels must not change with it).
    jin = np.array([a + 1j * b, c + 1j * d])
    if np.sum(np.abs(jin) ** 2) < 1e-3:
        return
    prism = _rochon(RIGHT)
    jones = jones_matrices(prism, LAM).jones
    result = transmission(prism, LAM, polarisation=jin)
    assert set(result.labels) == {"eo+oo", "ee+oe"}
    in_power = np.sum(np.abs(jin) ** 2)
    for label in ("eo+oo", "ee+oe"):
        assert float(result.power[label]) == pytest.approx(
            np.sum(np.abs(jones[label] @ jin) ** 2) / in_power, abs=1e-9)


@pytest.mark.parametrize("jin", [(1.0, 0.0), (0.0, 1.0), (1.0, 1.0j), (0.6, -0.8)])
def test_grouping_moves_power_between_beams_within_the_polarisation_dependent_loss(jin):
    # Energy conservation (Born & Wolf §1.5.3): with lossless, polarisation-independent faces
    # the grouped beams together carry what the branches carried (interference only moves
    # power from one beam to the other). The Rochon's exit face passes o and e light with
    # different Fresnel transmittances T = 4n/(n + 1)² (normal incidence, Born & Wolf §1.5.3),
    # so the cross terms cancel only up to |T_o − T_e|: the bound checked here.
    prism = _rochon(RIGHT)
    raw = prism.trace(LAM, 0.0, np.linspace(-1, 1, 5), polarisation=np.array(jin),
                      power_threshold=0.0)
    grouped = output_beam_trace(raw, prism)
    change = (sum(b.power for b in grouped.beams.values())
              - sum(b.power for b in raw.beams.values()))
    n_o, n_e = QUARTZ.n_o(LAM), QUARTZ.n_e(LAM)
    bound = abs(4 * n_o / (n_o + 1) ** 2 - 4 * n_e / (n_e + 1) ** 2)
    assert np.all(np.abs(change) <= bound)
    # The plate's faces treat both circular waves alike (along the axis): exact.
    plate = _plate("right", 1.7)
    raw = plate.trace(LAM, 0.0, 0.0, polarisation=np.array(jin), power_threshold=0.0)
    grouped = output_beam_trace(raw, plate)
    assert sum(float(b.power) for b in grouped.beams.values()) == pytest.approx(
        sum(float(b.power) for b in raw.beams.values()), abs=1e-7)


@pytest.mark.parametrize("build", [lambda: _rochon(RIGHT), lambda: _plate("left", 2.0)])
def test_unpolarised_grouped_power_is_the_incoherent_sum_of_its_branches(build):
    # Unpolarised light = incoherent sum over two orthogonal input states; the cross terms of
    # two branches born as orthogonal eigenwaves cancel in that sum, so a group carries the sum
    # of its branches' powers (up to the ~ξ difference of their Fresnel factors).
    prism = build()
    raw = prism.trace(LAM, 0.0, 0.0, polarisation="unpolarised")
    groups = group_labels(raw, prism)
    grouped = output_beam_trace(raw, prism)
    assert all(len(g) == 2 for g in groups)
    for group in groups:
        branches = sum(raw.power(label) for label in group)
        assert grouped.power("+".join(group)) == pytest.approx(branches, abs=1e-6)


@pytest.mark.parametrize("build", [
    lambda: _rochon(QUARTZ), lambda: wollaston("calcite", 20.0, design_wavelength_um=LAM),
    lambda: walkoff_displacer("calcite", 10.0), lambda: _plate(None, 1.0)])
def test_prisms_without_active_piece_are_unchanged(build):
    # Grouping never touches a prism without an active piece: the analyses get the very same
    # trace object, so every figure and label is identical.
    prism = build()
    for pol in ("unpolarised", (1.0, 0.0)):
        raw = prism.trace(LAM, [0.0, 2.0], 0.0, polarisation=pol)
        assert output_beam_trace(raw, prism) is raw
        assert all(len(g) == 1 for g in group_labels(raw, prism))


def test_active_displacer_keeps_its_two_displaced_beams():
    # Parallel but displaced (walk-off ~0.3° over 10 mm: ~60 µm): two beams, not one.
    prism = walkoff_displacer(RIGHT, 10.0, 45.0, design_wavelength_um=LAM)
    raw = prism.trace(LAM, 0.0, 0.0)
    assert sorted(raw.beams) == ["e", "o"]
    assert all(len(g) == 1 for g in group_labels(raw, prism))
    assert GROUP_TOLERANCE_RAD == 1e-3


def test_no_stopgap_warning_but_interference_of_grouped_beams_warns():
    prism = _rochon(RIGHT)
    with warnings.catch_warnings():
        warnings.simplefilter("error", ActivePieceWarning)
        prism.system()
        split(prism, LAM)
    with pytest.warns(ActivePieceWarning, match="first branch"):
        optical_path_difference(prism, LAM)


def test_split_reports_the_spread_of_each_output_beam():
    # The undeviated beam's halves are Δ ≈ 2ξ tanθ apart (small-angle refraction at the
    # tilted interface, test_optics_activity); single branches have no spread.
    result = split(_rochon(RIGHT), LAM, 0.0, 0.0, offset_mm=[(0.0, 0.0), (2.0, 0.0)])
    expected = np.rad2deg(2 * RIGHT.indices(LAM).chirality * np.tan(np.deg2rad(20.0)))
    np.testing.assert_allclose(result.spread_deg["eo+oo"], expected, rtol=0.02)
    inactive = split(_rochon(QUARTZ), LAM)
    assert all(float(v) == 0.0 for v in inactive.spread_deg.values())


def test_field_of_view_of_an_output_beam_is_that_of_its_weakest_branch():
    # A beam passes where every branch it adds passes (total-reflection margin, index²): the
    # grouped margin is the minimum of the members' margins on the raw trace.
    from prismdesign.analysis import beam_passes, default_requirements, requirement_margins
    from prismdesign.analysis.total_reflection import total_reflection_margin
    prism = _rochon(RIGHT)
    assert {r.beam for r in default_requirements(prism)} == {"eo+oo", "ee+oe"}
    angles = np.linspace(-20.0, 20.0, 9)
    grouped = requirement_margins(prism, LAM, angles, 0.0, [beam_passes("ee+oe")])[0]
    raw = prism.trace(LAM, angles, 0.0, polarisation=(1.0, 0.0), power_threshold=0.0)
    system = prism.system()
    expected = np.minimum(total_reflection_margin(raw, system, "ee"),
                          total_reflection_margin(raw, system, "oe"))
    np.testing.assert_allclose(grouped, expected, rtol=1e-12)
    # Members can still be named on their own.
    single = requirement_margins(prism, LAM, angles, 0.0, [beam_passes("oe")])[0]
    np.testing.assert_allclose(single, total_reflection_margin(raw, system, "oe"), rtol=1e-12)


def test_chunked_trace_groups_alike(monkeypatch):
    # Chunks are grouped one by one (analysis.memory): labels and figures must not depend on
    # where the chunks fall (compare tests/test_analysis_memory.py for inactive prisms).
    from prismdesign.analysis import memory
    prism = _rochon(RIGHT)
    lam = np.linspace(0.5, 0.7, 20)
    angles = np.linspace(-5.0, 5.0, 5)[:, None]
    whole = split(prism, lam, angles)
    monkeypatch.setattr(memory, "MEMORY_LIMIT_BYTES", 4 * 2 * memory.trace_bytes_per_ray(prism) * 7)
    chunked = split(prism, lam, angles)
    assert chunked.main_labels == whole.main_labels
    np.testing.assert_array_equal(chunked.split_deg, whole.split_deg)
    np.testing.assert_array_equal(chunked.spread_deg["eo+oo"], whole.spread_deg["eo+oo"])


def test_rochon_extinction_input_is_turned_by_the_first_wedge():
    # The undeviated beam is the o wave of the second wedge; the active first wedge turns the
    # input by -ρ·t₁ on the way (rotation law, Born & Wolf §15.5, from memory), so the input
    # the undeviated beam passes best is the inactive prism's (x) turned by +ρ·t₁.
    prism = _rochon(RIGHT)
    result = extinction(prism, LAM)
    jin = result.input_jones["eo+oo"]
    # Azimuth of the polarisation ellipse, ½ atan2(S2, S1) (Born & Wolf §1.4.2).
    azimuth = 0.5 * np.rad2deg(np.arctan2(2 * np.real(jin[0] * np.conj(jin[1])),
                                          np.abs(jin[0]) ** 2 - np.abs(jin[1]) ** 2))
    raw = prism.trace(LAM, 0.0, 0.0, polarisation=(1.0, 0.0))
    t1 = np.linalg.norm(raw.beams["oo"].positions_mm[2] - raw.beams["oo"].positions_mm[1])
    expected = RIGHT.rotatory_power_deg_per_mm(LAM) * t1
    assert (azimuth - expected + 90.0) % 180.0 - 90.0 == pytest.approx(0.0, abs=0.05)
    assert result.analyser_extinction_ratio["eo+oo"] > 1e6


@pytest.mark.parametrize("wedge_deg", [20.0, 0.05])
def test_active_wollaston_keeps_its_two_beams_even_when_nearly_parallel(wedge_deg):
    # Far from the axis the two waves of an active piece are the linear o and e waves (their
    # index split ≫ 2ξ): distinct beams, as in the inactive prism, even when a DIC-sized wedge
    # makes them leave within the direction tolerance. Split: 2|n_e − n_o| tanθ (small-angle
    # Wollaston formula, Born & Wolf §15.4, from memory) — here compared with the inactive twin.
    active = split(wollaston(RIGHT, wedge_deg, design_wavelength_um=LAM), LAM)
    inactive = split(wollaston(QUARTZ, wedge_deg, design_wavelength_um=LAM), LAM)
    assert active.main_labels == inactive.main_labels == ("eo", "oe")
    assert active.split_deg == pytest.approx(inactive.split_deg, rel=1e-6)
    if wedge_deg < 1:
        # The case that needs the index-regime rule: within the direction tolerance.
        assert np.deg2rad(active.split_deg) < GROUP_TOLERANCE_RAD


def test_active_plate_with_axis_in_its_faces_keeps_o_and_e():
    # A quartz wave plate (axis along x): the waves are the linear o and e waves, kept apart
    # as for the inactive plate; cut across the axis, the two circular waves are one beam.
    lateral = free_stack([StackPiece(RIGHT, "x", 0.0, 1.0)], design_wavelength_um=LAM)
    assert sorted(jones_matrices(lateral, LAM).labels) == ["e", "o"]
    assert jones_matrices(_plate("right"), LAM).labels == ("e+o",)


def test_extinction_with_circular_input_and_a_pruning_threshold_keeps_the_beams():
    # Right-circular input feeds one circular wave of the first wedge only; the other half of
    # each beam must not be pruned away (its label would change with the input).
    result = extinction(_rochon(RIGHT), LAM, polarisation=(1.0, -1.0j), power_threshold=1e-6)
    assert set(result.main_labels) == {"eo+oo", "ee+oe"}
    assert set(result.labels) >= {"eo+oo", "ee+oe"}
    # Circular input splits evenly between the two linear exit polarisations (Malus, averaged).
    total = sum(float(result.power[k]) for k in result.main_labels)
    assert float(result.power["eo+oo"]) / total == pytest.approx(0.5, abs=2e-3)
