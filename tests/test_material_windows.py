"""Where a material stops being physical, and materials with more than one published dataset.

Inside the transparency window but outside the fit range an index is extrapolated with a
warning; outside the transparency window, beyond a resonance of the dispersion formula, or where
the formula gives n <= 1 there is no index and every call raises a one-line ValueError naming
the material, the wavelength and the window.
"""
import warnings

import numpy as np
import pytest

import prismdesign
from prismdesign import (DispersionRangeWarning, load_material, material, material_datasets,
                         save_material)
from prismdesign.materials import DispersionModel, IsotropicMaterial, Reference
from prismdesign.materials.schema import material_to_dict

REF = Reference(authors="A. Tester", title="test data", journal="", volume="", pages="",
                year=2020)


def _one_line(error):
    message = str(error.value)
    assert "\n" not in message
    return message


# --- opaque wavelengths ------------------------------------------------------------------

def test_calcite_at_100_nm_is_an_error_not_0_843():
    # Before: n_o(0.1) = 0.843 with a warning (the Ghosh 1999 formula beyond its UV pole).
    # Calcite transmits from about 0.2 um (Ghosh's data start at 0.204 um).
    with pytest.raises(ValueError) as info:
        material("calcite").n_o(0.1)
    message = _one_line(info)
    assert "calcite" in message and "wavelength_um = 0.1 " in message
    assert "transparency window 0.2-2.3 µm" in message and "opaque" in message


def test_inside_transparency_outside_fit_still_warns():
    with pytest.warns(DispersionRangeWarning, match=r"calcite: .*0\.204-2\.172 µm"):
        value = material("calcite").n_e(2.25)
    assert 1.4 < value < 1.5


def test_array_with_one_opaque_wavelength_names_it():
    with pytest.raises(ValueError, match=r"wavelength_um = 3 lies outside"):
        material("calcite").indices(np.array([0.5, 1.0, 3.0]))
    with pytest.raises(ValueError, match=r"wavelength_um = 0.15 lies outside"):
        material("calcite").group_index_o(np.array([0.15, 0.5]))
    with pytest.raises(ValueError, match="opaque"):
        material("calcite").dn_dwl_e(0.15)


def test_strict_does_not_relax_opacity():
    with pytest.raises(ValueError, match="opaque"):
        material("calcite").n_o(0.1, strict=False)


def _calcite_without_window():
    data = material_to_dict(material("calcite"))
    del data["transparency_um"]
    return data


def test_pole_crossing_without_a_window(tmp_path):
    # Ghosh's UV pole sits at sqrt(1.94325203e-2 um^2) = 0.1394 um (ordinary); with no
    # transparency window stated the pole alone bounds the usable band.
    import tomli_w
    path = tmp_path / "calcite_bare.toml"
    path.write_bytes(tomli_w.dumps(_calcite_without_window()).encode())
    bare = load_material(path)
    assert bare.usable_um[0] == pytest.approx(np.sqrt(1.94325203e-2), rel=1e-12)
    assert bare.usable_um[1] == pytest.approx(np.sqrt(120.0), rel=1e-12)
    for wavelength_um in (0.1, np.sqrt(1.94325203e-2)):
        with pytest.raises(ValueError) as info:
            bare.n_o(wavelength_um)
        message = _one_line(info)
        assert "beyond the resonance of its dispersion formula at 0.1394 µm" in message
    with pytest.warns(DispersionRangeWarning):
        assert bare.n_o(0.15) > 1.0                 # between pole and data: extrapolated


def test_formula_below_one_is_an_error():
    # n = 1.05 - 0.02/λ² (a made-up Cauchy fit, no pole): n > 1 over its 0.8-1.6 um data but
    # n = 0.925 at 0.4 um, which no material has.
    fake = IsotropicMaterial(name="fake", index=DispersionModel("cauchy", {
        "coefficients": [1.05, -0.02]}), validity_um=(0.8, 1.6), temperature_c=20.0,
        reference=REF)
    with pytest.raises(ValueError) as info:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DispersionRangeWarning)
            fake.n(0.4)
    message = _one_line(info)
    assert "fake (tester-2020)" in message and "n = 0.925" in message and "0.4" in message


def test_formula_below_one_inside_the_data_is_refused():
    with pytest.raises(ValueError, match=r"n = 0\.99.* inside validity_um = \[0\.6, 1\.6\]"):
        IsotropicMaterial(name="fake", index=DispersionModel("cauchy", {
            "coefficients": [1.05, -0.02]}), validity_um=(0.6, 1.6), temperature_c=20.0,
            reference=REF)


def test_surrounds_and_cements_work_over_their_windows():
    # Standard air is used around every prism; vacuum is exactly 1 (not "n <= 1").
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DispersionRangeWarning)
        air = material("air").n(np.geomspace(0.2, 20.0, 40))
    assert np.all(air > 1.0)
    assert np.all(material("vacuum").n(np.geomspace(0.01, 1000.0, 40)) == 1.0)
    for name in ("optical_cement", "index_matching_gel"):
        mat = material(name)
        assert np.all(mat.n(np.linspace(*mat.validity_um, 20)) > 1.3)


def test_every_bundled_window_contains_its_data():
    # The data were measured through the crystal, so its transparency window holds them.
    for name in prismdesign.materials():
        for dataset in material_datasets(name):
            mat = material(name, dataset=dataset)
            lo, hi = mat.usable_um
            assert lo <= mat.validity_um[0] and mat.validity_um[1] <= hi, mat.label


def test_opaque_crystal_fails_a_prism_analysis():
    # Before: YVO4 at 355 nm (below its ~0.4 um absorption edge) got a Glan window computed.
    glan = prismdesign.prisms.glan_air_spaced("yvo4", cut_angle_deg=28.5)
    with pytest.raises(ValueError) as info:
        prismdesign.analysis.field_of_view(glan, 0.355)
    message = _one_line(info)
    assert message.startswith("yvo4 (lomheim-1978): wavelength_um = 0.355")
    assert "transparency window 0.4-5 µm" in message
    wollaston = prismdesign.prisms.wollaston("calcite", wedge_angle_deg=15.0, width_mm=10.0)
    with pytest.raises(ValueError, match=r"calcite .*wavelength_um = 3 .*opaque"), \
            warnings.catch_warnings():
        warnings.simplefilter("ignore", DispersionRangeWarning)   # air beyond 1.69 um
        prismdesign.analysis.split(wollaston, [0.5, 3.0])


# --- several datasets per material -------------------------------------------------------

def test_yvo4_datasets_and_default():
    assert material_datasets("YVO4") == ["lomheim-1978", "shi-2001"]
    default = material("yvo4")
    assert default.dataset == "lomheim-1978" and default.label == "yvo4 (lomheim-1978)"
    assert default.validity_um == (0.488, 3.39)
    shi = material("yttrium vanadate", dataset="Shi-2001")
    assert shi.dataset == "shi-2001" and shi.reference.short == "Shi 2001"
    assert shi.dn_dt_o_per_c is not None and default.dn_dt_o_per_c is None


def test_yvo4_at_1550_nm_no_longer_warns():
    # Before: every 1.55 um call warned (Shi et al. 2001 stop at 1.34 um).
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        n_o, n_e = material("yvo4").indices(1.55)
    # Lomheim & DeShazer 1978: n² = 1 + B λ²/(λ² − C), evaluated by hand at 1.55 um.
    lam2 = 1.55 ** 2
    assert n_o == pytest.approx(np.sqrt(1 + 2.7665 * lam2 / (lam2 - 0.026884)), abs=1e-14)
    assert n_e == pytest.approx(np.sqrt(1 + 3.5930 * lam2 / (lam2 - 0.032103)), abs=1e-14)
    with pytest.warns(DispersionRangeWarning, match=r"yvo4: .*0\.48-1\.34 µm .*Shi 2001"):
        material("yvo4", dataset="shi-2001").n_o(1.55)


def test_mgf2_reaches_the_vacuum_uv():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        n_o = material("mgf2").n_o(0.15)            # Li 1980 holds from 0.14 um
    assert 1.45 < n_o < 1.50
    with pytest.warns(DispersionRangeWarning, match="Dodge 1984"):
        material("mgf2", dataset="dodge-1984").n_o(0.15)


def test_unknown_dataset_lists_the_known_ones():
    with pytest.raises(ValueError, match=r"dataset = 'li-1985' is not a dataset of mgf2; "
                                         r"allowed: li-1980, dodge-1984"):
        material("mgf2", dataset="li-1985")
    with pytest.raises(ValueError, match="allowed: ghosh-1999"):
        material("calcite", dataset=3)


def test_dataset_round_trips_through_save(tmp_path):
    shi = material("yvo4", dataset="shi-2001")
    copy = load_material(save_material(shi, tmp_path / "yvo4_copy.toml"))
    assert copy.dataset == "shi-2001" and copy == shi


def test_dataset_defaults_to_first_author_and_year():
    assert material("calcite").dataset == "ghosh-1999"
    assert material("optical_cement").dataset == "typical"
    fitted = prismdesign.fit_dispersion(np.linspace(0.5, 1.0, 8),
                                        1.5 + 0.004 / np.linspace(0.5, 1.0, 8) ** 2,
                                        form="cauchy", terms=2, name="sample")
    assert fitted.material.dataset.startswith("measurement-")
