"""Memory estimates, chunked traces and refusals (issue 7: work that would not fit).

No large memory is allocated here: the limit is lowered with monkeypatch so that small inputs
take the chunked and the refusing paths. Chunked results must equal one batched call exactly
(the broadcasting contract of STYLE.md: a loop of calls equals one batched call).
"""
import tracemalloc
import warnings

import numpy as np
import pytest

from prismdesign.analysis import (MissingBeamWarning, extinction, field_of_view, memory,
                                  optical_path_difference, perturb_axes, requirement_margins,
                                  separation, split, transmission)
from prismdesign.analysis.field_of_view import beam_passes
from prismdesign.analysis.jones import jones_matrices
from prismdesign.prisms import double_wollaston, glan_air_spaced, wollaston


@pytest.mark.parametrize("build", [lambda: wollaston("calcite", 15.0), double_wollaston,
                                   glan_air_spaced])
@pytest.mark.parametrize("options", [dict(polarisation="unpolarised"),
                                     dict(polarisation="unpolarised", keep_reflections=True),
                                     dict(polarisation=(1.0, 0.0), power_threshold=0.0)])
def test_estimate_bounds_the_measured_peak(build, options):
    # The estimate must be an upper bound of the peak that tracemalloc (which numpy reports
    # to) measures, so that a chunk sized by it fits.
    prism = build()
    rays = 4000
    lam = np.linspace(0.5, 0.7, rays)
    tracemalloc.start()
    try:
        prism.trace(lam, **options)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    pair = 2 if options["polarisation"] == "unpolarised" else 1
    per_ray = memory.trace_bytes_per_ray(prism, keep_reflections=options.get(
        "keep_reflections", False))
    assert peak <= rays * pair * per_ray


def _small_limit(monkeypatch, prism, rays_per_chunk, pair=2, **options):
    """Lower the limit so that a chunk holds `rays_per_chunk` rays."""
    per = memory.trace_bytes_per_ray(prism, **options) * pair
    monkeypatch.setattr(memory, "MEMORY_LIMIT_BYTES", 4 * per * rays_per_chunk)


def _assert_same(a, b):
    if isinstance(a, dict):
        assert set(a) == set(b)
        for key in a:
            _assert_same(a[key], b[key])
    else:
        np.testing.assert_array_equal(np.asarray(a), np.asarray(b))


def test_chunked_split_equals_one_batch(monkeypatch):
    # 60° wedges: the "oe" beam is totally reflected on part of the band, so chunks differ in
    # which beams the trace keeps; samples of a perturbed prism are chunked with the rays.
    prism = perturb_axes(wollaston("calcite", 62.5), np.array([0.0, 0.3, 1.0])[:, None])
    lam = np.linspace(0.35, 1.2, 13)
    whole = split(prism, lam, 0.5)
    _small_limit(monkeypatch, prism, 5)
    chunked = split(prism, lam, 0.5)
    assert chunked.main_labels == whole.main_labels
    for name in ("in_plane_deg", "out_of_plane_deg", "direction", "power", "flags", "lost",
                 "split_deg", "bisector_in_plane_deg", "asymmetry_deg"):
        _assert_same(getattr(chunked, name), getattr(whole, name))


def test_chunked_separation_transmission_margins_opd_equal_one_batch(monkeypatch):
    prism = wollaston("calcite", 20.0)
    lam = np.linspace(0.45, 1.0, 7)[:, None]
    angles = np.array([-2.0, 0.0, 3.0])
    offsets = np.array([[0.0, 0.0], [2.0, 1.0]])[:, None, None, :]
    requirements = (beam_passes("eo"), beam_passes("oe"))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", MissingBeamWarning)
        runs = []
        for limit in (None, 3):
            if limit is not None:
                _small_limit(monkeypatch, prism, limit, keep_reflections=True)
            runs.append((
                separation(prism, lam, 50.0, angles, offset_mm=offsets, waist_mm=0.3),
                transmission(prism, lam, angles, offset_mm=offsets),
                requirement_margins(prism, lam, angles, 0.0, requirements, offset_mm=offsets),
                optical_path_difference(prism, lam, offsets, in_plane_deg=angles)))
    (sep_a, t_a, m_a, opd_a), (sep_b, t_b, m_b, opd_b) = runs
    for name in ("position_mm", "separation_mm", "clearance", "resolved", "beam_radius_mm",
                 "lost"):
        _assert_same(getattr(sep_a, name), getattr(sep_b, name))
    for name in ("power", "total", "reflected_by_face", "reflected", "lost"):
        _assert_same(getattr(t_a, name), getattr(t_b, name))
    _assert_same(m_a, m_b)
    _assert_same(opd_a, opd_b)


def test_field_of_view_with_a_million_steps_is_refused_before_allocating():
    # The case: 1 000 001² angles would need terabytes; refused in one line with the
    # estimate (before any grid is built).
    with pytest.raises(ValueError) as info:
        field_of_view(wollaston("calcite", 15.0), steps=1_000_001)
    message = str(info.value)
    assert "\n" not in message
    assert "TiB" in message and "MEMORY_LIMIT_BYTES" in message and "fewer steps" in message


def test_results_that_do_not_fit_are_refused_with_the_estimate(monkeypatch):
    prism = wollaston("calcite", 15.0)
    # A limit that lets chunks of 2 rays through but not 1000 rays of results.
    _small_limit(monkeypatch, prism, 2)
    with pytest.raises(ValueError, match=r"split would need about .* \(1000 rays"):
        split(prism, np.full(1000, 0.6))
    with pytest.raises(ValueError, match="jones_matrices would need about"):
        jones_matrices(prism, np.full(1000, 0.6))
    with pytest.raises(ValueError, match="extinction would need about"):
        extinction(prism, np.full(1000, 0.6))


def test_format_bytes():
    assert memory.format_bytes(512) == "512 B"
    assert memory.format_bytes(3 * 2 ** 30) == "3 GiB"
    assert memory.format_bytes(7.28 * 2 ** 40) == "7.28 TiB"


def test_chunks_slice_per_sample_faces_and_layers(monkeypatch):
    """Perturbed prisms of the tolerancing layer carry per-sample face normals and points and
    per-sample gap thicknesses: chunked analyses must slice them with the rays (batch ==
    chunks, exactly), and the sample shape must count them."""
    from prismdesign.analysis._common import prism_sample_shape
    from prismdesign.design import apply_errors
    from prismdesign.prisms import glan_air_spaced

    base = wollaston("calcite", 15.0)
    built, _ = apply_errors(base, {"face1_angle_deg": np.linspace(-0.5, 0.5, 7)[:, None]})
    assert prism_sample_shape(built) == (7, 1)
    lam = np.linspace(0.5, 0.7, 4)
    whole = split(built, lam)
    _small_limit(monkeypatch, built, 5)
    chunked = split(built, lam)
    _assert_same(whole.split_deg, chunked.split_deg)
    glan = glan_air_spaced("calcite", 39.0)
    gapped, _ = apply_errors(glan, {"face1_layer_thickness_mm": np.array([-0.002, 0.0, 0.003])})
    assert prism_sample_shape(gapped) == (3,)
    monkeypatch.undo()
    whole = transmission(gapped, 0.6328)
    _small_limit(monkeypatch, gapped, 1)
    chunked = transmission(gapped, 0.6328)
    _assert_same(whole.power, chunked.power)


@pytest.mark.parametrize("with_nominal", [True, False])
@pytest.mark.parametrize("polarisation", ["unpolarised", (np.sqrt(0.5), 1j * np.sqrt(0.5))])
def test_chunked_extinction_equals_one_batch(monkeypatch, with_nominal, polarisation):
    # Monte Carlo axis errors streamed in chunks of rays (issue 11: memory bounded by a
    # chunk): every figure equals the one-batch analysis exactly.
    nominal = wollaston("calcite", 15.0)
    rng = np.random.default_rng(3)
    prism = perturb_axes(nominal, rng.normal(0, 0.3, 9)[:, None], rng.normal(0, 0.3, 9)[:, None],
                         piece=0)
    lam = np.array([0.55, 0.65, 0.75])
    kwargs = dict(nominal=nominal if with_nominal else None, polarisation=polarisation)
    whole = extinction(prism, lam, **kwargs)
    _small_limit(monkeypatch, prism, 4)
    chunked = extinction(prism, lam, **kwargs)
    assert chunked.main_labels == whole.main_labels
    for name in ("power", "wanted_power", "other_power", "beam_purity_ratio",
                 "analyser_extinction_ratio", "wanted_jones", "input_jones", "lost",
                 "leakage_power"):
        _assert_same(getattr(whole, name), getattr(chunked, name))
    _assert_same(whole.leakage_fraction, chunked.leakage_fraction)
