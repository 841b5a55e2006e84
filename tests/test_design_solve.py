"""Design solvers against closed forms and published formulas.

Sources are named beside each check. Targets are exact roots, so the solved parameters are
compared with independent root finds of the closed forms (scipy's brentq on the formula).
"""
import warnings

import numpy as np
import pytest
from scipy import optimize

import prismdesign as pd
from prismdesign import design
from prismdesign.prisms import localisation_plane

from closed_forms import wollaston_exit_angle_rad


def _exact_wollaston_split_deg(crystal, lam, wedge_deg):
    """Symmetric Wollaston split at normal incidence from Snell's law applied twice (Born & Wolf,
    Principles of Optics, 7th ed., 1999, §1.5.1): beam "eo" sees n_e then n_o, beam "oe" the
    reverse, both leave into air."""
    n_o, n_e = pd.material(crystal).indices(lam)
    n_air = pd.material("air").n(lam)
    theta = np.deg2rad(wedge_deg)
    a = wollaston_exit_angle_rad(n_e, n_o, theta, n_air)
    b = wollaston_exit_angle_rad(n_o, n_e, theta, n_air)
    return float(np.rad2deg(abs(a - b)))


@pytest.mark.parametrize("crystal, lam, split", [("calcite", 0.6328, 10.0),
                                                 ("calcite", 1.064, 2.0),
                                                 ("alpha_bbo", 0.355, 15.0),
                                                 ("quartz", 0.6328, 1.0)])
def test_wollaston_wedge_is_the_snell_root(crystal, lam, split):
    requirement = design.Requirement(lines_um=[lam], split_deg=split)
    solved = design.solve("wollaston", crystal, requirement)
    assert solved.converged and solved.meets
    expected = optimize.brentq(lambda w: _exact_wollaston_split_deg(crystal, lam, w) - split,
                               0.01, 60.0, xtol=1e-14)
    assert solved.parameters["wedge_angle_deg"] == pytest.approx(expected, abs=1e-9)
    # One free parameter: well inside the 50-evaluation budget, and the count is reported.
    assert 0 < solved.evaluations <= 50


def test_band_norms_meet_their_definitions():
    """mean: the band-average split equals the target; minimax: the largest deviation is as
    small as any wedge can make it (max and min deviations equal and opposite); rms: no other
    norm's wedge has a smaller root-mean-square deviation."""
    splits = {}
    for norm in ("mean", "minimax", "rms"):
        requirement = design.Requirement(band_um=(0.45, 0.7), split_deg=5.0, band_norm=norm)
        solved = design.solve("wollaston", "calcite", requirement)
        splits[norm] = solved.assessment.figures.split_deg[:, 0]
        assert solved.method and norm in solved.method
    assert splits["mean"].mean() == pytest.approx(5.0, abs=1e-9)
    assert splits["minimax"].max() - 5.0 == pytest.approx(5.0 - splits["minimax"].min(), abs=1e-9)
    rms = {norm: np.sqrt(np.mean((s - 5.0) ** 2)) for norm, s in splits.items()}
    worst = {norm: np.abs(s - 5.0).max() for norm, s in splits.items()}
    assert rms["rms"] <= min(rms.values()) + 1e-12
    assert worst["minimax"] <= min(worst.values()) + 1e-12


def test_displacer_offset_equals_length_times_walkoff():
    """Offset = L·tan ρ with tan ρ = (n_o² − n_e²)/(2 n_o n_e) at the maximum-walk-off cut
    tan θ = n_e/n_o (Born & Wolf §15.3.3, walk-off angle of the extraordinary ray)."""
    lam = 1.064
    requirement = design.Requirement(lines_um=[lam], offset_mm=1.5)
    solved = design.solve("walkoff_displacer", "calcite", requirement)
    n_o, n_e = pd.material("calcite").indices(lam)
    tan_rho = abs(n_o ** 2 - n_e ** 2) / (2 * n_o * n_e)
    assert solved.parameters["length_mm"] == pytest.approx(1.5 / tan_rho, abs=1e-9)
    offset = solved.assessment.figures.offset_mm[0, 0]
    assert offset == pytest.approx(solved.parameters["length_mm"] * tan_rho, abs=1e-9)


def test_savart_thickness_matches_francon_mallick():
    """Shear = √2 t |n_e² − n_o²|/(n_e² + n_o²) for axes at 45° (M. Françon and S. Mallick,
    Polarization Interferometers, Wiley, 1971; from memory, re-derived in
    tests/test_prisms_savart.py from Born & Wolf §15.3.3)."""
    lam = 0.5461
    requirement = design.Requirement(lines_um=[lam], shear_mm=0.05)
    solved = design.solve("savart_plate", "quartz", requirement)
    n_o, n_e = pd.material("quartz").indices(lam)
    expected = 0.05 / (np.sqrt(2) * abs(n_e ** 2 - n_o ** 2) / (n_e ** 2 + n_o ** 2))
    assert solved.parameters["plate_thickness_mm"] == pytest.approx(expected, abs=1e-9)


def test_nomarski_puts_the_fringe_plane_where_asked():
    """The solved prism's fringe plane, found by the independently validated localisation
    analysis, lies at the requested distance; for a small split the wedge tends to the
    thin-prism value tan θ = split / (|n(τ) − n_o| + |n_e − n_o|): each wedge contributes its
    birefringence times tan θ (Hecht, Optics, 4th ed., 2002, §8.4.3, from memory), the first
    with the extraordinary index of a wave along z whose optic axis is tilted by τ out of the
    face, 1/n(τ)² = sin²τ/n_o² + cos²τ/n_e² (index ellipsoid, Born & Wolf §15.3.2)."""
    lam = 0.55
    requirement = design.Requirement(lines_um=[lam], split_deg=0.05,
                                     localisation_distance_mm=-5.0, tolerance=1e-7)
    solved = design.solve("nomarski", "quartz", requirement)
    assert solved.meets
    plane = localisation_plane(solved.prism, lam)
    assert plane.distance_from_exit_mm == pytest.approx(-5.0, abs=1e-3)
    n_o, n_e = pd.material("quartz").indices(lam)
    tau = np.deg2rad(solved.prism.parameters["axis_tilt_deg"])
    n_tau = 1 / np.sqrt(np.sin(tau) ** 2 / n_o ** 2 + np.cos(tau) ** 2 / n_e ** 2)
    paraxial = np.rad2deg(np.arctan(np.deg2rad(0.05) / (abs(n_tau - n_o) + abs(n_e - n_o))))
    assert solved.parameters["wedge_angle_deg"] == pytest.approx(paraxial, rel=2e-3)


def test_nomarski_plane_reaches_an_objective_back_focal_plane():
    """Given the objective's back-focal-plane depth and the gap to the prism, the solved
    prism's fringe plane (localisation analysis) lies at the back focal plane: in front of the
    exit face by the prism's length at the centre + gap + depth (geometry, no source needed)."""
    lam = 0.55
    requirement = design.Requirement(lines_um=[lam], split_deg=0.03, tolerance=1e-7,
                                     objective_bfp_mm=6.0, prism_gap_mm=2.0)
    solved = design.solve("nomarski", "quartz", requirement)
    assert solved.meets
    exit_z = solved.prism.boundaries[-1].point_mm[2]
    plane = localisation_plane(solved.prism, lam)
    assert plane.distance_from_exit_mm == pytest.approx(-(exit_z + 2.0 + 6.0), abs=1e-3)


def _thin_prism_pair_by_hand(first, second, lam, split_deg):
    """Least squares of 2Δn₁ t₁ + 2Δn₂ t₂ = split over the band written out as its 2×2 normal
    equations (first-order Wollaston split 2(n_e − n_o) tan θ, Hecht §8.4.3, from memory)."""
    d1 = 2 * np.subtract(*pd.material(first).indices(lam)[::-1])
    d2 = 2 * np.subtract(*pd.material(second).indices(lam)[::-1])
    s = np.deg2rad(split_deg) * np.sign(d1.mean())
    a11, a12, a22 = (d1 * d1).sum(), (d1 * d2).sum(), (d2 * d2).sum()
    b1, b2 = (d1 * s).sum(), (d2 * s).sum()
    det = a11 * a22 - a12 ** 2
    t1, t2 = (a22 * b1 - a12 * b2) / det, (a11 * b2 - a12 * b1) / det
    if t1 < 0:
        t1, t2 = -t1, -t2
    return np.rad2deg(np.arctan(t1)), np.rad2deg(np.arctan(t2))


def test_two_crystal_split_is_far_flatter_than_one_crystal():
    lam = np.linspace(0.45, 0.7, 7)
    requirement = design.Requirement(band_um=(0.45, 0.7), split_deg=5.0)
    t1, t2, _ = design.thin_prism_pair("alpha_bbo", "lithium_niobate", lam, 5.0)
    by_hand = _thin_prism_pair_by_hand("alpha_bbo", "lithium_niobate", lam, 5.0)
    assert (t1, t2) == pytest.approx(by_hand, abs=1e-10)
    pair = design.solve("two_crystal_wollaston", ("alpha_bbo", "lithium_niobate"), requirement)
    single = design.solve("wollaston", "alpha_bbo", requirement)
    pair_spread = np.ptp(pair.assessment.figures.split_deg[:, 0])
    single_spread = np.ptp(single.assessment.figures.split_deg[:, 0])
    # Exact trace: the pair holds the split to about 0.1 % of 5°, a single crystal varies by
    # several per cent over 450–700 nm.
    assert pair_spread < 0.002 * 5.0
    assert single_spread > 0.03 * 5.0
    assert pair_spread < single_spread / 20
    # The exact optimum stays close to the first-order estimate (within a degree here).
    assert pair.parameters["first_wedge_deg"] == pytest.approx(t1, abs=1.0)
    assert pair.parameters["second_wedge_deg"] == pytest.approx(t2, abs=1.0)


def test_unequal_wedges_centre_the_split():
    """A symmetric Wollaston's bisector is off the input direction by a small angle (the two
    beams see different index pairs); unequal wedges can put it back on axis."""
    requirement = design.Requirement(lines_um=[0.6328], split_deg=20.0, bisector_deg=0.0,
                                     tolerance=1e-6)
    symmetric = design.solve("wollaston", "calcite", requirement)
    assert abs(symmetric.assessment.figures.bisector_deg[0, 0]) > 1e-3
    solved = design.solve("wollaston_unequal", "calcite", requirement)
    figs = solved.assessment.figures
    assert figs.split_deg[0, 0] == pytest.approx(20.0, abs=1e-6)
    assert figs.bisector_deg[0, 0] == pytest.approx(0.0, abs=1e-6)
    assert solved.meets


def test_rochon_keeps_one_beam_undeviated_and_names_its_polarisation():
    requirement = design.Requirement(lines_um=[0.6328], split_deg=5.0,
                                     undeviated_polarisation="in_plane")
    rochon = design.solve("rochon", "calcite", requirement)
    senarmont = design.solve("senarmont", "calcite", requirement)
    # Rochon and Sénarmont differ exactly in the polarisation of the undeviated beam.
    pols = {rochon.assessment.figures.undeviated_polarisation,
            senarmont.assessment.figures.undeviated_polarisation}
    assert pols == {"in_plane", "across"}
    assert rochon.meets != senarmont.meets


def test_glan_cut_gives_a_symmetric_field_from_critical_angles():
    """At the solved cut the o beam's critical angle is reached at +a and the e beam's at −a
    (Born & Wolf §1.5.4; critical angles from prisms.glan_cut_angle_limits, itself tested
    against Snell's law)."""
    requirement = design.Requirement(lines_um=[0.5893], polariser=True, field_half_angle_deg=2.0)
    solved = design.solve("glan_air_spaced", "calcite", requirement)
    cut = solved.parameters["cut_angle_deg"]
    half = optimize.brentq(lambda a: pd.prisms.glan_cut_angle_limits(
        "calcite", 0.5893, "air", "x", in_plane_deg=a)[0] - cut, 0.0, 20.0)
    t_e = pd.prisms.glan_cut_angle_limits("calcite", 0.5893, "air", "x", in_plane_deg=-half)[1]
    assert t_e == pytest.approx(cut, abs=1e-8)
    assert 3.0 < half < 5.0   # Feussner's ~8° total field of an air-spaced calcite Glan


def test_glan_widest_field_is_at_least_the_symmetric_one():
    """The widest-total goal can only widen the in-plane field; its edges sit where the o and e
    critical angles (Born & Wolf §1.5.4) equal the cut."""
    fields = {}
    for goal in ("symmetric", "widest"):
        requirement = design.Requirement(lines_um=[0.5893], polariser=True,
                                         field_half_angle_deg=1.0, field_goal=goal)
        cut = design.solve("glan_air_spaced", "calcite", requirement).parameters["cut_angle_deg"]
        plus = optimize.brentq(lambda a: pd.prisms.glan_cut_angle_limits(
            "calcite", 0.5893, "air", "x", in_plane_deg=a)[0] - cut, -30.0, 30.0)
        minus = optimize.brentq(lambda a: pd.prisms.glan_cut_angle_limits(
            "calcite", 0.5893, "air", "x", in_plane_deg=a)[1] - cut, -30.0, 30.0)
        fields[goal] = (minus, plus)
    total = {goal: b - a for goal, (a, b) in fields.items()}
    assert total["widest"] >= total["symmetric"] - 1e-6
    assert fields["symmetric"][0] == pytest.approx(-fields["symmetric"][1], abs=1e-6)


def test_split_over_temperature_against_snell_with_linear_dn_dt():
    """The temperature margin's worst split equals Snell's law twice (Born & Wolf §1.5.1) with
    the indices shifted by the data's linear dn/dT (Shi et al. 2001 YVO4 slopes) at an end of
    the range; a crystal without dn/dT makes the requirement undecidable (missed, with why)."""
    yvo4 = pd.material("yvo4", dataset="shi-2001")
    lam, low, high = 1.064, 20.0, 50.0
    prism = pd.prisms.wollaston(yvo4, 8.0)
    requirement = design.Requirement(lines_um=[lam], split_deg=5.0, tolerance=1.0,
                                     temperature_range_c=(low, high))
    margin = next(m for m in design.assess(prism, requirement).margins
                  if m.name == "split over temperature")
    n_air = pd.material("air").n(lam)
    splits = []
    for t in (low, 0.5 * (low + high), high):
        n_o, n_e = yvo4.indices(lam, t)
        a = wollaston_exit_angle_rad(n_e, n_o, np.deg2rad(8.0), n_air)
        b = wollaston_exit_angle_rad(n_o, n_e, np.deg2rad(8.0), n_air)
        splits.append(np.rad2deg(abs(a - b)))
    worst = max(splits, key=lambda s: abs(s - 5.0))
    assert margin.achieved == pytest.approx(worst, abs=1e-9)
    assert margin.margin == pytest.approx(1.0 - abs(worst - 5.0), abs=1e-9)
    sapphire = design.assess(pd.prisms.wollaston("sapphire", 8.0), requirement)
    undecided = next(m for m in sapphire.margins if m.name == "split over temperature")
    assert not undecided.met and "no thermo-optic data" in undecided.reason


# ----------------------------------------------------------------- impossible and bad input
def test_split_beyond_total_reflection_is_refused_with_the_reason():
    requirement = design.Requirement(lines_um=[0.6328], split_deg=70.0)
    solved = design.solve("wollaston", "calcite", requirement)
    assert not solved.converged and not solved.meets
    assert "beyond reach" in solved.message and "largest" in solved.message
    # The closest design is returned with its assessment.
    assert solved.assessment is not None


def test_offset_needing_a_long_crystal_misses_the_length_limit():
    requirement = design.Requirement(lines_um=[1.55], offset_mm=2.0, max_length_mm=5.0)
    solved = design.solve("walkoff_displacer", "calcite", requirement)
    assert solved.converged and not solved.meets
    (failed,) = solved.assessment.failed
    assert failed.name == "length" and failed.margin < 0


@pytest.mark.parametrize("kwargs, fragment", [
    (dict(bounds={"wedge": (1, 2)}), "free parameters"),
    (dict(bounds={"wedge_angle_deg": (20, 10)}), "low"),
    (dict(bounds={"wedge_angle_deg": (0.0, 10)}), "low"),
    (dict(bounds=[1, 2]), "dict"),
])
def test_bad_bounds_are_one_line_errors(kwargs, fragment):
    requirement = design.Requirement(lines_um=[0.6328], split_deg=5.0)
    with pytest.raises(ValueError, match=fragment) as error:
        design.solve("wollaston", "calcite", requirement, **kwargs)
    assert "\n" not in str(error.value)


def test_bounds_narrow_the_search():
    requirement = design.Requirement(lines_um=[0.6328], split_deg=5.0)
    solved = design.solve("wollaston", "calcite", requirement,
                          bounds={"wedge_angle_deg": (1.0, 5.0)})
    assert not solved.converged and "beyond reach" in solved.message


@pytest.mark.parametrize("call, fragment", [
    (lambda r: design.solve("prism", "calcite", r), "prism type must be one of"),
    (lambda r: design.solve("glan_air_spaced", "calcite", r), "cannot meet a split"),
    (lambda r: design.solve("wollaston", ("calcite", "quartz"), r), "1 crystal"),
    (lambda r: design.solve("wollaston", "calcite", {"split_deg": 3}), "Requirement"),
    (lambda r: design.search({"split_deg": 3}), "Requirement"),
])
def test_bad_solver_calls_are_one_line_errors(call, fragment):
    requirement = design.Requirement(lines_um=[0.6328], split_deg=5.0)
    with pytest.raises(ValueError, match=fragment) as error:
        call(requirement)
    assert "\n" not in str(error.value)


def test_search_ranks_meeting_designs_first_and_says_what_fails():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        requirement = design.Requirement(lines_um=[1.55], offset_mm=1.0, max_length_mm=15.0,
                                         crystals=["calcite", "quartz"])
        ranking = design.search(requirement)
    meets = [d.meets for d in ranking.designs]
    assert meets == sorted(meets, reverse=True) and meets[0]
    assert ranking.best.crystal == "calcite"
    text = ranking.text()
    assert "walkoff_displacer" in text and "length" in text
    failing = [row for row in ranking.rows() if not row["meets"]]
    assert failing and all(row["failing"] for row in failing)


def test_search_with_nothing_allowed_is_a_one_line_error():
    requirement = design.Requirement(lines_um=[0.6328], split_deg=5.0,
                                     prism_types=["glan_air_spaced"])
    with pytest.raises(ValueError, match="can meet a split") as error:
        design.search(requirement)
    assert "\n" not in str(error.value)


def test_two_crystal_split_held_flat_over_temperature():
    """Two Wollastons of crystals with different thermo-optic slopes can hold the split over a
    temperature range. First order (thin-prism split 2Δn tan θ, Hecht §8.4.3, from memory, with
    the data files' linear dn/dT): 2Δn₁t₁ + 2Δn₂t₂ = split and 2(dΔn₁/dT)t₁ + 2(dΔn₂/dT)t₂ = 0;
    the exact solve lands near it and its split over 0–40 °C varies far less than a
    single-crystal design's (both from the analysis layer's temperature trace)."""
    lam, low, high = 0.6328, 0.0, 40.0
    requirement = design.Requirement(lines_um=[lam], split_deg=5.0, tolerance=0.005,
                                     temperature_range_c=(low, high))
    single = design.solve("wollaston", "calcite", requirement)
    pair = design.solve("two_crystal_wollaston", ("calcite", "alpha_bbo"), requirement)
    assert pair.meets and not single.meets
    assert "temperatures" in pair.method

    def spread(prism):
        crystals = [i for i, p in enumerate(prism.pieces) if p.is_crystal]
        result = pd.analysis.temperature_dependence(prism, [low, high], [lam], piece=crystals)
        return float(np.ptp(result.split_deg))
    assert spread(single.prism) > 0.01
    assert spread(pair.prism) < 1e-4 * spread(single.prism)

    def dn(name, t):
        n_o, n_e = pd.material(name).indices(lam, t)
        return float(n_e - n_o)
    matrix = np.array([[2 * dn("calcite", 20.0), 2 * dn("alpha_bbo", 20.0)],
                       [2 * (dn("calcite", high) - dn("calcite", low)) / (high - low),
                        2 * (dn("alpha_bbo", high) - dn("alpha_bbo", low)) / (high - low)]])
    t = np.linalg.solve(matrix, [np.deg2rad(5.0) * np.sign(dn("calcite", 20.0)), 0.0])
    t = -t if t[0] < 0 else t
    first, second = np.rad2deg(np.arctan(t))
    assert pair.parameters["first_wedge_deg"] == pytest.approx(first, abs=0.05)
    assert pair.parameters["second_wedge_deg"] == pytest.approx(second, abs=0.05)


def test_clearance_matches_the_separation_analysis_and_the_batch_path():
    # The design layer's clearance (separation minus both 1/e² radii on the plane) uses the same
    # Gaussian-beam rule as analysis.separation, which is checked against the closed form
    # w(z) = w0 √(1 + (z/z_R)²), z_R = π w0² / (M² λ) (Siegman, "Lasers", 1986, §17.1) in
    # test_analysis_separation; here both design paths (single prism, batch of samples) must
    # give that analysis' numbers for the same prism, plane and beam.
    import prismdesign as pd
    from prismdesign.design.batch_merit import sample_figures
    from prismdesign.design.merit import figures

    prism = pd.prisms.wollaston("calcite", 15.0)
    lam = np.array([0.532, 0.8])
    requirement = design.Requirement(lines_um=lam.tolist(), separation_mm=50.0,
                                     distance_mm=200.0, beam_diameter_mm=1.0, m_squared=1.3)
    figs = figures(prism, requirement)
    ref = pd.analysis.separation(prism, lam, 200.0, waist_mm=0.5, m_squared=1.3,
                                 main_labels=figs.main_labels)
    radii = sum(ref.beam_radius_mm[label] for label in figs.main_labels)
    expected = ref.separation_mm - radii
    assert np.all(np.isfinite(expected)) and np.all(radii > 1.0)   # far field: radii matter
    np.testing.assert_allclose(figs.separation_mm[:, 0], ref.separation_mm, rtol=1e-12)
    np.testing.assert_allclose(figs.clearance_mm[:, 0], expected, rtol=1e-12, atol=1e-12)
    batch, _ = sample_figures(prism, requirement, {"face1_angle_deg": np.zeros(3)},
                              main_labels=figs.main_labels)
    np.testing.assert_allclose(batch.clearance_mm[:, :, 0], np.broadcast_to(expected, (3, 2)),
                               rtol=1e-10, atol=1e-10)
