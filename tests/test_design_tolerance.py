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
    assert best / 1.25 * 0.97 < limit < best * 1.03
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
