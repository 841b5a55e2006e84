"""Tolerancing: perturbed prisms as one batch, sensitivities, Monte Carlo, allocation.

External checks: Snell's law (Born & Wolf, *Principles of Optics*, 7th ed., 1999, §1.5.1)
differentiated here with sympy for the Wollaston split against its wedge angle; the normal
distribution's CDF (scipy.stats.norm) for the yield of a one-parameter case; first-order error
propagation Var f = Σ (∂f/∂xᵢ)² σᵢ² (e.g. Taylor, *An Introduction to Error Analysis*, 2nd ed.,
1997, §3.11) for the Monte Carlo spread.
"""
import numpy as np
import pytest
import sympy as sp
from scipy import optimize, stats

import prismdesign as pd
from prismdesign.design import (Requirement, Tolerance, ToleranceSet, allocate, apply_errors,
                                assess, monte_carlo, prism_parameters, sensitivities,
                                temperature_sweep)
from prismdesign.design.batch_merit import sample_figures, sample_margins

LINE = 0.6328


@pytest.fixture(scope="module")
def wollaston():
    return pd.prisms.wollaston("calcite", 15.0)


def _split(prism, lam=LINE, **angles):
    return float(pd.analysis.split(prism, [lam], **angles).split_deg[0])


def _requirement(prism, tolerance=0.02, **extra):
    return Requirement(lines_um=(LINE,), split_deg=_split(prism), tolerance=tolerance, **extra)


# ---------------------------------------------------------------- batch equals loop
@pytest.mark.parametrize("kind", ["wollaston", "rochon"])
def test_batch_of_perturbed_prisms_equals_single_traces(kind):
    prism = getattr(pd.prisms, kind)("calcite", 20.0)
    rng = np.random.default_rng(5)
    names = ["piece0_axis_polar_deg", "piece1_axis_azimuth_deg", "face1_angle_deg",
             "face1_pyramid_deg", "face2_angle_deg", "piece0_length_mm"]
    errors = {n: rng.normal(0.0, 0.3, 3) for n in names}
    lam = np.array([0.5, 0.7])
    batch, _ = apply_errors(prism, errors, ray_ndim=1)
    together = batch.trace(lam, polarisation="unpolarised")
    for k in range(3):
        single, _ = apply_errors(prism, {n: v[k] for n, v in errors.items()})
        alone = single.trace(lam, polarisation="unpolarised")
        assert set(alone.beams) <= set(together.beams)
        for label, beam in alone.beams.items():
            other = together.beams[label]
            np.testing.assert_allclose(other.exit_direction[:, k], beam.exit_direction, atol=1e-14)
            np.testing.assert_allclose(other.exit_position_mm[:, k], beam.exit_position_mm,
                                       atol=1e-12)
            np.testing.assert_allclose(other.power[:, k], beam.power, atol=1e-14)
            np.testing.assert_allclose(other.optical_path_mm[:, k], beam.optical_path_mm,
                                       rtol=1e-13)


def test_batch_temperatures_equal_single_temperatures():
    prism = pd.prisms.wollaston(pd.material("yvo4", dataset="shi-2001"), 10.0)
    t = np.array([22.0, 35.0, 48.0])
    batch, _ = apply_errors(prism, {"temperature_change_c": t - 20.0}, ray_ndim=1)
    together = batch.trace([0.6328, 1.064])
    for k, temp in enumerate(t):
        single, _ = apply_errors(prism, {"temperature_change_c": temp - 20.0})
        alone = single.trace([0.6328, 1.064])
        for label, beam in alone.beams.items():
            np.testing.assert_allclose(together.beams[label].exit_direction[:, k],
                                       beam.exit_direction, atol=1e-14)


def test_batch_margins_equal_assess_of_each_prism(wollaston):
    req = Requirement(lines_um=(0.55, 0.6328, 0.7), split_deg=_split(wollaston), tolerance=0.05,
                      max_length_mm=20, min_transmission=0.8, field_half_angle_deg=1.0)
    rng = np.random.default_rng(1)
    names = ["piece0_axis_polar_deg", "face1_angle_deg", "face2_pyramid_deg", "face2_angle_deg",
             "piece1_length_mm"]
    errors = {n: rng.normal(0, 0.05, 4) for n in names}
    figs, batch = sample_figures(wollaston, req, errors)
    margins, _ = sample_margins(wollaston, req, figs, batch)
    for k in range(4):
        single, _ = apply_errors(wollaston, {n: v[k] for n, v in errors.items()})
        for m in assess(single, req).margins:
            assert margins[m.name][k] == pytest.approx(m.margin, abs=1e-11), m.name


def test_zero_errors_give_the_nominal_prism(wollaston):
    same, inputs = apply_errors(wollaston, {n.name: 0.0 for n in prism_parameters(wollaston)})
    assert _split(same) == pytest.approx(_split(wollaston), abs=1e-13)
    assert inputs.wavelength_um == 0.0


def test_errors_reject_unknown_names_and_temperature_without_data(wollaston):
    with pytest.raises(ValueError, match="face9_angle_deg"):
        apply_errors(wollaston, {"face9_angle_deg": 0.1})
    with pytest.raises(ValueError, match="thermo-optic data"):
        apply_errors(pd.prisms.wollaston("sapphire", 10.0), {"temperature_change_c": 1.0})
    with pytest.raises(ValueError, match="distribution"):
        Tolerance("face1_angle_deg", "triangular", 0.1)
    with pytest.raises(ValueError, match="positive"):
        Tolerance("face1_angle_deg", "normal", -0.1)


# ---------------------------------------------------------------- sensitivities
def _split_derivative_from_snell(n_o, n_e, n_air, wedge_deg):
    """d(split)/d(wedge) of a symmetric Wollaston, both in degrees: Snell's law twice
    (Born & Wolf §1.5.1), the exit face parallel to the entrance, differentiated by sympy."""
    theta, n1, n2, n0 = sp.symbols("theta n1 n2 n0", real=True)
    exit_angle = sp.asin(n2 / n0 * sp.sin(sp.asin(n1 * sp.sin(theta) / n2) - theta))
    split = exit_angle.subs({n1: n_o, n2: n_e}) - exit_angle.subs({n1: n_e, n2: n_o})
    value = sp.diff(split, theta).subs({theta: sp.rad(sp.Float(wedge_deg, 30)), n0: n_air})
    return abs(float(value))


@pytest.mark.parametrize("crystal,wedge", [("calcite", 15.0), ("quartz", 30.0), ("yvo4", 8.0)])
def test_split_sensitivity_to_wedge_equals_snell_closed_form(crystal, wedge):
    prism = pd.prisms.wollaston(crystal, wedge)
    req = _requirement(prism)
    n_o, n_e = pd.material(crystal).indices(LINE)
    n_air = float(pd.material("air").indices(LINE)[0])
    expected = _split_derivative_from_snell(float(n_o), float(n_e), n_air, wedge)
    s = sensitivities(prism, req, ["face1_angle_deg"])
    assert s.method["split_deg"][0] == "closed form"
    assert abs(s.of("split_deg", "face1_angle_deg")[0]) == pytest.approx(expected, rel=1e-6)
    assert abs(s.central["split_deg"][0, 0]) == pytest.approx(expected, rel=1e-6)
    assert max(s.cross_check().values()) < 1e-6


def _five_point(f, h):
    return (f(-2 * h) - 8 * f(-h) + 8 * f(h) - f(2 * h)) / (12 * h)


@pytest.mark.parametrize("kind,name,figure", [
    ("wollaston", "face2_pyramid_deg", "out_of_plane_{0}_deg"),
    ("wollaston", "incidence_in_plane_deg", "deviation_{0}_deg"),
    ("wollaston", "piece1_axis_azimuth_deg", "transmittance_{0}"),
    ("rochon", "piece0_axis_polar_deg", "split_deg"),
    ("rochon", "face1_angle_deg", "deviation_{1}_deg"),
])
def test_sensitivities_equal_finite_differences_of_single_traces(kind, name, figure):
    prism = getattr(pd.prisms, kind)("calcite", 20.0)
    req = _requirement(prism)
    s = sensitivities(prism, req, [name])
    main = assess(prism, req).figures.main_labels
    figure = figure.format(*main)

    def value(x):
        errors = {} if name.startswith("incidence") else {name: x}
        single, _ = apply_errors(prism, errors)
        angle = x if name.startswith("incidence") else 0.0
        b = {k: v for k, v in single.trace([LINE], angle).beams.items()}
        res = single.trace([LINE], angle)
        if figure == "split_deg":
            return float(pd.analysis.split(single, [LINE], in_plane_deg=angle).split_deg[0])
        label = figure.split("_")[-2] if figure.endswith("_deg") else figure.split("_")[-1]
        beam = b[label]
        d = beam.exit_direction[0, 0]
        if figure.startswith("out_of_plane"):
            return float(np.rad2deg(np.arcsin(d[1])))
        if figure.startswith("deviation"):
            return float(np.rad2deg(np.arctan2(d[0], d[2])))
        return float(2 * res.power(label)[0])

    expected = _five_point(value, 1e-3)
    got = s.of(figure, name)[0]
    assert got == pytest.approx(expected, rel=1e-6, abs=1e-12)


# ---------------------------------------------------------------- Monte Carlo
def test_monte_carlo_spread_equals_first_order_propagation(wollaston):
    req = _requirement(wollaston)
    ts = ToleranceSet((Tolerance("face1_angle_deg", "normal", 0.01),
                       Tolerance("face2_angle_deg", "uniform", 0.02),
                       Tolerance("incidence_in_plane_deg", "normal", 0.05)))
    result = monte_carlo(wollaston, req, ts, 20000, seed=11)
    s = sensitivities(wollaston, req, ts.names)
    predicted = np.sqrt(sum((s.of("split_deg", t.name)[0] * t.sigma) ** 2 for t in ts.items))
    spread = result.figure_spread()[0]
    sampling = predicted / np.sqrt(2 * (result.samples - 1))
    assert abs(spread - predicted) < 4 * sampling


def test_one_parameter_yield_equals_normal_cdf(wollaston):
    req = _requirement(wollaston, tolerance=0.01)
    sigma = 0.03
    target = req.split_deg

    def margin(x):
        single, _ = apply_errors(wollaston, {"face1_angle_deg": x})
        return 0.01 - abs(_split(single) - target)

    upper = optimize.brentq(margin, 0.0, 0.2, xtol=1e-12)
    lower = optimize.brentq(margin, -0.2, 0.0, xtol=1e-12)
    expected = stats.norm.cdf(upper / sigma) - stats.norm.cdf(lower / sigma)
    result = monte_carlo(wollaston, req, [Tolerance("face1_angle_deg", "normal", sigma)], 20000,
                         seed=2)
    assert abs(result.yield_fraction - expected) < 4 * result.yield_error
    drivers = result.failure_drivers()
    assert drivers[0]["parameter"] == "face1_angle_deg" and drivers[0]["rank_correlation"] < -0.5


def test_same_seed_same_bytes_whatever_the_chunks(wollaston):
    req = _requirement(wollaston)
    ts = ToleranceSet((Tolerance("face1_angle_deg", "normal", 0.02),
                       Tolerance("piece0_axis_azimuth_deg", "uniform", 0.5)))
    a = monte_carlo(wollaston, req, ts, 3000, seed=7, chunk_size=700)
    b = monte_carlo(wollaston, req, ts, 3000, seed=7, chunk_size=3000)
    c = monte_carlo(wollaston, req, ts, 3000, seed=8)
    assert a.target_figure.tobytes() == b.target_figure.tobytes()
    assert a.margins["split"].tobytes() == b.margins["split"].tobytes()
    assert a.target_figure.tobytes() != c.target_figure.tobytes()


def test_polariser_yield_against_misalignment():
    """A Glan polariser fails where misalignment pushes the field past its critical angles: the
    failing samples are the strongly tilted ones, and any undefined margin fails."""
    glan = pd.prisms.glan_air_spaced("calcite", 38.5)
    req = Requirement(lines_um=(0.5893,), polariser=True, field_half_angle_deg=2.0,
                      max_leakage=1e-3)
    result = monte_carlo(glan, req, [Tolerance("incidence_in_plane_deg", "uniform", 4.0)], 400,
                         seed=1)
    assert 0.0 < result.yield_fraction < 1.0
    tilt = np.abs(result.errors["incidence_in_plane_deg"])
    assert tilt[~result.passed].mean() > tilt[result.passed].mean()
    undefined = np.any([np.isnan(m) for m in result.margins.values()], axis=0)
    assert not np.any(result.passed & undefined)


# ---------------------------------------------------------------- allocation
def test_allocation_with_one_dominant_parameter(wollaston):
    """Uniform ±L on the wedge with a linear split s·δ: yield = t/(|s| L), so the loosest limit
    at yield Y is L* = t/(|s| Y); the cheap, ineffective axis error goes to its loosest."""
    req = _requirement(wollaston, tolerance=0.02)
    ts = ToleranceSet((Tolerance("face1_angle_deg", "uniform", 0.01, loosest=1.0, tightest=1e-3),
                       Tolerance("piece0_axis_azimuth_deg", "uniform", 0.1, loosest=0.8,
                                 cost_weight=3.0)))
    result = allocate(wollaston, req, ts, 0.9, samples=4000, step=1.25)
    slope = abs(sensitivities(wollaston, req, ["face1_angle_deg"]).of(
        "split_deg", "face1_angle_deg")[0])
    best = 0.02 / (slope * 0.9)
    limit = result.allocated["face1_angle_deg"].size
    # Refined loosening ends within the finest step, 1.25^(1/8), of the answer (±3 % sampling).
    fine = 1.25 ** (0.5 ** 3)
    assert best / fine * 0.97 < limit < best * 1.03
    assert result.allocated["piece0_axis_azimuth_deg"].size > 0.8 / 1.25
    assert result.reached and result.yield_fraction >= 0.9
    assert result.allocated.cost < ts.cost


# ---------------------------------------------------------------- temperature
def test_temperature_sweep_slope_equals_closed_form():
    prism = pd.prisms.wollaston(pd.material("yvo4", dataset="shi-2001"), 10.0)
    req = _requirement(prism)
    sweep = temperature_sweep(prism, req, [25.0, 45.0])
    slope = (sweep.split_deg[1, 0] - sweep.split_deg[0, 0]) / 20.0
    closed = sensitivities(prism, req, ["temperature_change_c"]).of(
        "split_deg", "temperature_change_c")[0]
    # Linear dn/dT: the split is nearly linear in T over 20 °C.
    assert slope == pytest.approx(closed, rel=1e-3)
    with pytest.raises(ValueError, match="no thermo-optic data"):
        temperature_sweep(pd.prisms.wollaston("sapphire", 10.0), req, [20.0, 30.0])


# ---------------------------------------------------------------- the allocation example
def test_axis_error_moves_the_split_a_thousand_times_less_than_a_wedge_error(wollaston):
    """The example behind tolerance allocation, measured for a 15° calcite Wollaston at
    632.8 nm against closed forms (Snell's law at the interface and exit face, Born & Wolf
    §1.5.2; the extraordinary index at angle θ from the axis, 1/n² = cos²θ/n_o² + sin²θ/n_e²,
    Born & Wolf §15.3): a 0.5° error of the interface angle moves the split by 0.184°; a
    0.5° tilt of the first wedge's axis out of its face (polar error δ) by only 1.7e-4°, since
    the wave along z then sees n_e(90° − δ) = n_e + O(δ²); an azimuth error (axis turned within
    the face) keeps the axis ⟂ z and moves it by < 1e-6°. (The issue's rough 0.0014° and 0.4°
    were estimates; the measured ratio is ~1000.)"""
    lam = np.array([LINE])
    split0 = pd.analysis.split(wollaston, lam).split_deg[0]
    moved = {}
    for name in ("face1_angle_deg", "piece0_axis_polar_deg", "piece0_axis_azimuth_deg"):
        built, _ = apply_errors(wollaston, {name: 0.5})
        moved[name] = pd.analysis.split(built, lam).split_deg[0] - split0
    n_o, n_e = (float(v[0]) for v in pd.material("calcite").indices(lam))
    n_air = float(pd.material("air").indices(lam)[0][0])
    theta, n1, n2, n0, tilt = sp.symbols("theta n1 n2 n0 tilt", real=True)
    exit_angle = sp.asin(n2 / n0 * sp.sin(sp.asin(n1 * sp.sin(theta) / n2) - theta))
    wedge = sp.rad(sp.Float(15, 30))

    def split(wedge_angle, n_first_e):
        """|eo − oe| exit angles in degrees, the first wedge's e index given."""
        eo = exit_angle.subs({n1: n_first_e, n2: n_o, theta: wedge_angle, n0: n_air})
        oe = exit_angle.subs({n1: n_o, n2: n_e, theta: wedge_angle, n0: n_air})
        return abs(float(sp.deg(eo - oe)))

    # The exit face stays put when the interface turns about its centre: the closed form above
    # has the exit face parallel to the entrance, as the built prism does.
    expected_wedge = split(wedge + sp.rad(sp.Float(0.5, 30)), n_e) - split(wedge, n_e)
    delta = np.deg2rad(0.5)
    n_tilted = (np.sin(delta) ** 2 / n_o ** 2 + np.cos(delta) ** 2 / n_e ** 2) ** -0.5
    expected_axis = split(wedge, n_tilted) - split(wedge, n_e)
    assert moved["face1_angle_deg"] == pytest.approx(expected_wedge, rel=1e-6)
    assert moved["face1_angle_deg"] == pytest.approx(0.184, abs=5e-4)
    assert moved["piece0_axis_polar_deg"] == pytest.approx(expected_axis, rel=1e-3)
    assert abs(moved["piece0_axis_polar_deg"]) == pytest.approx(1.7e-4, rel=0.02)
    assert abs(moved["piece0_axis_azimuth_deg"]) < 1e-6
    assert abs(moved["face1_angle_deg"] / moved["piece0_axis_polar_deg"]) > 1000


def test_tornado_legend_names_the_positive_and_negative_error_bars(wollaston, monkeypatch):
    from prismdesign.output import tolerance_plots
    captured = {}
    monkeypatch.setattr(tolerance_plots, "_save", lambda fig, path: captured.setdefault("fig", fig))
    sens = sensitivities(wollaston, _requirement(wollaston), ["face0_angle_deg",
                                                               "face1_angle_deg"])
    rows = sens.ranked("split_deg")
    tolerance_plots.plot_tornado(rows, "unused.png")
    ax = captured["fig"].axes[0]
    texts = [t.get_text() for t in ax.get_legend().get_texts()]
    assert texts == ["+ error (at +1 unit)", "− error (at −1 unit)"]
    # The solid (+ error) bar of the interface angle lies on the side of its sensitivity.
    plus = ax.containers[0]
    top = plus.patches[0]  # first row plotted is the largest, face1_angle_deg
    assert np.sign(top.get_width()) == np.sign(rows[0]["sensitivity"]) and rows[0]["parameter"] \
        == "face1_angle_deg"
    import matplotlib.pyplot as plt
    plt.close(captured["fig"])


# ---------------------------------------------------------------- field-of-view edges
@pytest.fixture(scope="module")
def glan_edges():
    prism = pd.prisms.glan_air_spaced("calcite", 38.5)
    req = Requirement(lines_um=(0.55, LINE), polariser=True, max_leakage=1e-3)
    names = ["face1_angle_deg", "face0_angle_deg", "piece0_axis_polar_deg",
             "incidence_in_plane_deg"]
    return prism, req, sensitivities(prism, req, names, field_edges=True)


def test_field_edge_sensitivities_equal_differences_of_field_of_view_maps(glan_edges):
    # The batched bisection against the edges of separate field_of_view maps of each stepped
    # prism (prismdesign.analysis.field_of_view, itself checked against the critical angle in
    # test_analysis_field_of_view.py).
    prism, req, sens = glan_edges
    names = ("plus_in_plane", "minus_in_plane")
    for k, name in enumerate(["face1_angle_deg", "face0_angle_deg", "piece0_axis_polar_deg"]):
        edges = []
        for sign in (1, -1):
            built, _ = apply_errors(prism, {name: sign * 1e-3})
            edges.append(pd.analysis.field_of_view(built, req.wavelengths_um, steps=21,
                                                   tolerance_deg=1e-10)
                         .half_angles_deg["combined"])
        loop = (edges[0] - edges[1]) / 2e-3
        for j, direction in enumerate(names):
            np.testing.assert_allclose(sens.of(f"field_edge_{direction}_deg", name),
                                       loop[:, j], atol=2e-6)


def test_glan_edge_moves_with_the_critical_angle_condition(glan_edges):
    """The +in-plane edge of an air-spaced Glan is where the ordinary beam stops being totally
    reflected at the gap: n_o sin(θ_gap) = n_air (Born & Wolf §1.5.4). Tilting the gap by δ
    changes θ_gap by δ, so the beam inside must turn by δ to stay at the condition, and by
    Snell's law at the entrance face (n_air sin a = n_o sin β) the edge a moves by
    da/dδ = n_o cos β / (n_air cos a). A misalignment α of the input moves both in-plane edges
    by ∓α one-for-one (edges are counted from the nominal input direction)."""
    prism, req, sens = glan_edges
    a = np.deg2rad(sens.nominal["field_edge_plus_in_plane_deg"])
    n_o = pd.material("calcite").indices(req.wavelengths_um)[0]
    n_air = pd.material("air").indices(req.wavelengths_um)[0]
    beta = np.arcsin(n_air * np.sin(a) / n_o)
    expected = n_o * np.cos(beta) / (n_air * np.cos(a))
    got = sens.of("field_edge_plus_in_plane_deg", "face1_angle_deg")
    np.testing.assert_allclose(np.abs(got), expected, rtol=1e-5)
    np.testing.assert_allclose(sens.of("field_edge_plus_in_plane_deg", "incidence_in_plane_deg"),
                               -1.0, atol=1e-6)
    np.testing.assert_allclose(sens.of("field_edge_minus_in_plane_deg",
                                       "incidence_in_plane_deg"), 1.0, atol=1e-6)
    # Out of the principal section the spec holds to the map's border: no edge, NaN, a note.
    assert np.all(np.isnan(sens.values["field_edge_plus_out_of_plane_deg"]))
    assert any("field_edge_plus_out_of_plane_deg" in note for note in sens.notes)


@pytest.mark.parametrize("build,expected", [(pd.prisms.rochon, "in_plane"),
                                            (pd.prisms.senarmont, "across")])
def test_undeviated_polarisation_is_judged_per_sample(build, expected):
    """The undeviated (ordinary) beam of a Rochon carries the x (in-plane) input, of a
    Sénarmont the y input (Bennett, Handbook of Optics vol. II ch. 3, from memory; checked by
    trace in test_prisms_rochon.py). The batch judges each built prism as the single-prism
    merit does, and the margin follows the requirement prism by prism."""
    from prismdesign.design.merit import figures as single_figures
    prism = build("calcite", 20.0)
    errors = {"piece1_axis_azimuth_deg": [0.0, 0.3, -0.4], "face1_angle_deg": [0.0, 0.2, -0.1],
              "incidence_in_plane_deg": [0.0, 0.5, -0.5]}
    for wanted in ("in_plane", "across"):
        req = Requirement(lines_um=(0.55, LINE), split_deg=_split(prism), tolerance=0.5,
                          undeviated_polarisation=wanted)
        figs, batch = sample_figures(prism, req, errors)
        assert list(figs.undeviated_polarisation) == [expected] * 3
        for k in range(3):
            one, _ = apply_errors(prism, {name: v[k] for name, v in errors.items()
                                          if name != "incidence_in_plane_deg"})
            assert single_figures(one, req).undeviated_polarisation == expected
        margins, _ = sample_margins(prism, req, figs, batch)
        np.testing.assert_array_equal(margins["undeviated polarisation"],
                                      [0.0 if wanted == expected else -1.0] * 3)
