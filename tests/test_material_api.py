"""Material objects, the loader, the library look-up and saving."""
import copy
import math
import os
import warnings

import numpy as np
import pytest
import tomli_w

import prismdesign
from prismdesign import (DispersionRangeWarning, IsotropicMaterial, UniaxialMaterial,
                         UnknownMaterialError, load_material, material, materials, save_material)
from prismdesign.materials import MaterialLibrary, library

# Fixture documents built from published coefficients:
# G. Ghosh, "Dispersion-equation coefficients for the refractive index and birefringence of
# calcite and quartz crystals", Opt. Commun. 163, 95-102 (1999), Table 1 (calcite).
CALCITE = {
    "schema": 1, "name": "calcite_test", "aliases": ["test spar"], "kind": "uniaxial",
    "optical_sign": "negative", "temperature_c": 20.0, "validity_um": [0.204, 2.172],
    "transparency_um": [0.2, 2.3], "notes": "fixture",
    "reference": {"authors": "G. Ghosh", "title": "Dispersion-equation coefficients for the "
                  "refractive index and birefringence of calcite and quartz crystals",
                  "journal": "Optics Communications", "volume": "163", "pages": "95-102",
                  "year": 1999, "doi": "10.1016/S0030-4018(99)00091-7"},
    "ordinary": {"formula": "sellmeier", "A": 1.73358749, "B": [0.96464345, 1.82831454],
                 "C": [1.94325203e-2, 120.0]},
    "extraordinary": {"formula": "sellmeier", "A": 1.35859695, "B": [0.82427830, 0.14429128],
                      "C": [1.06689543e-2, 120.0]},
}
# I. H. Malitson, "Interspecimen comparison of the refractive index of fused silica",
# J. Opt. Soc. Am. 55, 1205 (1965), Eq. (2).
SILICA = {
    "schema": 1, "name": "silica_test", "kind": "isotropic", "temperature_c": 20.0,
    "validity_um": [0.21, 3.71],
    "reference": {"authors": "I. H. Malitson", "title": "Interspecimen comparison of the "
                  "refractive index of fused silica", "journal": "J. Opt. Soc. Am.",
                  "volume": "55", "pages": "1205-1208", "year": 1965},
    "index": {"formula": "sellmeier", "B": [0.6961663, 0.4079426, 0.8974794],
              "pole_um": [0.0684043, 0.1162414, 9.896161]},
}


def write(tmp_path, doc, name=None):
    path = tmp_path / f"{name or doc['name']}.toml"
    path.write_bytes(tomli_w.dumps(doc).encode())
    return path


@pytest.fixture
def calcite(tmp_path):
    return load_material(write(tmp_path, CALCITE))


def ghosh_n(lam, part):
    t = CALCITE[part]
    return math.sqrt(t["A"] + sum(b * lam**2 / (lam**2 - c) for b, c in zip(t["B"], t["C"])))


# --- values, shapes, uniform interface ----------------------------------------------------

def test_uniaxial_values_match_the_equation(calcite):
    for lam in (0.3, 0.6328, 1.55):
        assert calcite.n_o(lam) == pytest.approx(ghosh_n(lam, "ordinary"), abs=1e-14)
        assert calcite.n_e(lam) == pytest.approx(ghosh_n(lam, "extraordinary"), abs=1e-14)
        assert calcite.birefringence(lam) == pytest.approx(
            ghosh_n(lam, "extraordinary") - ghosh_n(lam, "ordinary"), abs=1e-14)


def test_group_index_is_n_minus_lambda_dn_dlambda(calcite):
    lam, h = 0.8, 1e-6
    for n, ng in ((calcite.n_o, calcite.group_index_o), (calcite.n_e, calcite.group_index_e)):
        slope = (n(lam + h) - n(lam - h)) / (2 * h)
        assert ng(lam) == pytest.approx(n(lam) - lam * slope, abs=1e-8)


def test_scalar_gives_float_and_arrays_broadcast(calcite, tmp_path):
    silica = load_material(write(tmp_path, SILICA))
    assert type(calcite.n_o(0.5)) is float and type(silica.n(0.5)) is float
    assert type(calcite.birefringence(0.5)) is float
    lam = np.linspace(0.3, 2.0, 12).reshape(3, 4)
    temps = np.array([20.0, 20.0, 20.0, 20.0])
    for method in (calcite.n_o, calcite.n_e, calcite.birefringence, calcite.group_index_o,
                   calcite.group_index_e, silica.n, silica.group_index):
        batch = method(lam, temps)
        assert batch.shape == (3, 4)
        loop = np.array([[method(float(x)) for x in row] for row in lam])
        np.testing.assert_array_equal(loop, batch)


def test_indices_is_uniform_for_both_kinds(calcite, tmp_path):
    silica = load_material(write(tmp_path, SILICA))
    lam = np.array([0.4, 1.0])
    n_o, n_e = calcite.indices(lam)
    np.testing.assert_array_equal(n_o, calcite.n_o(lam))
    np.testing.assert_array_equal(n_e, calcite.n_e(lam))
    a, b = silica.indices(lam)
    np.testing.assert_array_equal(a, silica.n(lam))
    np.testing.assert_array_equal(a, b)
    assert silica.kind == "isotropic" and silica.optical_sign is None
    assert calcite.kind == "uniaxial" and calcite.optical_sign == "negative"


def test_provenance_travels_with_the_object(calcite):
    assert calcite.validity_um == (0.204, 2.172)
    assert calcite.transparency_um == (0.2, 2.3)
    assert calcite.temperature_c == 20.0
    assert calcite.reference.short == "Ghosh 1999"
    text = str(calcite.reference)
    assert "Ghosh" in text and "163" in text and "(1999)" in text and "doi:10.1016" in text
    assert "\n" not in text


# --- range warnings and strict mode --------------------------------------------------------

def test_out_of_range_warns_naming_material_and_range(calcite):
    with pytest.warns(DispersionRangeWarning, match=r"calcite_test: .*0\.204-2\.172 µm"):
        calcite.n_o(2.25)
    with pytest.warns(DispersionRangeWarning, match=r"down to 0\.2 and up to 2\.25"):
        calcite.indices(np.array([0.2, 1.0, 2.25]))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        calcite.n_o(np.array([0.204, 2.172]))   # the ends of the range are inside


def test_strict_mode_raises(calcite, tmp_path):
    with pytest.raises(ValueError, match="outside the validity range 0.204-2.172"):
        calcite.n_e(2.25, strict=True)
    strict = load_material(write(tmp_path, CALCITE), strict=True)
    with pytest.raises(ValueError, match="calcite_test"):
        strict.birefringence([0.5, 2.25])
    with pytest.warns(DispersionRangeWarning):
        strict.n_o(2.25, strict=False)
    assert strict.n_o(0.5) == calcite.n_o(0.5)


@pytest.mark.parametrize("bad", [0.0, -0.5, float("nan"), float("inf"), [0.5, -1.0]])
def test_bad_wavelengths_raise(calcite, bad):
    with pytest.raises(ValueError,
                       match=r"wavelength_um = (0\.0|-0\.5|nan|inf|-1\.0) must be positive"):
        calcite.n_o(bad)
    with pytest.raises(ValueError, match="must be positive and finite"):
        calcite.indices(bad)


def test_non_numeric_wavelength_raises(calcite):
    with pytest.raises(ValueError, match=r"wavelength_um = 'red' must be a number"):
        calcite.n_o("red")


# --- temperature ---------------------------------------------------------------------------

def test_linear_thermo_optic_model(tmp_path):
    doc = copy.deepcopy(CALCITE)
    doc["thermo_optic"] = {"model": "linear", "dn_dt_o_per_c": 3.0e-6,
                           "dn_dt_e_per_c": 1.2e-5, "reference": "fixture values"}
    hot = load_material(write(tmp_path, doc))
    assert hot.n_o(0.6, 45.0) == pytest.approx(hot.n_o(0.6) + 3.0e-6 * 25.0, abs=1e-15)
    assert hot.n_e(0.6, -5.0) == pytest.approx(hot.n_e(0.6) - 1.2e-5 * 25.0, abs=1e-15)
    # temperature broadcasts against wavelength
    grid = hot.n_o(np.array([0.5, 1.0])[:, None], np.array([20.0, 30.0, 40.0]))
    assert grid.shape == (2, 3)


def test_missing_thermo_model_warns_once(calcite):
    with pytest.warns(UserWarning, match="calcite_test: no thermo-optic data") as record:
        first = calcite.n_o(0.6, temperature_c=60.0)
        calcite.n_e(0.6, temperature_c=70.0)
    assert len([w for w in record if "thermo-optic" in str(w.message)]) == 1
    assert first == calcite.n_o(0.6)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        calcite.n_o(0.6, temperature_c=20.0)   # the data temperature itself: no warning


# --- the bundled library -------------------------------------------------------------------

def test_materials_lists_sorted_canonical_names():
    names = materials()
    assert names == sorted(names) and len(names) == len(set(names))
    assert {"calcite", "quartz", "vacuum"} <= set(names)
    for name in names:
        item = material(name)
        assert item.name == name
        assert item.indices(np.mean(item.validity_um))[0] > 0


@pytest.mark.parametrize("query", ["alpha-BBO", "a-BBO", "alpha_bbo", "Alpha BBO", "ALPHA-bbo",
                                   "α-BBO"])
def test_lookup_ignores_case_spaces_hyphens_underscores(query):
    assert material(query).name == material("alpha_bbo").name


def test_lookup_by_alias():
    assert material("Iceland spar").name == "calcite"
    assert material("yvo4") is material("YVO4")        # cached: the same object


def test_unknown_material_lists_closest_matches():
    with pytest.raises(UnknownMaterialError, match=r"unknown material 'calcit'; closest "
                                                   r"matches: calcite") as info:
        material("calcit")
    assert "\n" not in str(info.value)
    assert isinstance(info.value, LookupError)


def test_strict_lookup():
    with pytest.raises(ValueError, match="outside the validity range"):
        material("calcite", strict=True).n_o(2.25)


def test_every_bundled_file_round_trips_through_save(tmp_path):
    for name in materials():
        original = material(name)
        again = load_material(save_material(original, tmp_path / f"{name}.toml"))
        assert again == original


def test_library_on_a_folder(tmp_path):
    write(tmp_path, CALCITE)
    write(tmp_path, SILICA)
    lib = MaterialLibrary(tmp_path)
    assert lib.names() == ["calcite_test", "silica_test"]
    assert lib.get("TEST SPAR").name == "calcite_test"


def test_library_rejects_name_file_mismatch_and_duplicates(tmp_path):
    write(tmp_path, CALCITE, name="calcite_other")
    with pytest.raises(ValueError, match=r"needs the file name calcite_test.toml or "
                                         r"calcite_test.ghosh-1999.toml, not calcite_other.toml"):
        MaterialLibrary(tmp_path).names()
    (tmp_path / "calcite_other.toml").unlink()
    write(tmp_path, CALCITE)
    write(tmp_path, CALCITE, name="calcite_test.ghosh-1999")
    with pytest.raises(ValueError, match="dataset 'ghosh-1999' of 'calcite_test' is given twice"):
        MaterialLibrary(tmp_path).names()
    (tmp_path / "calcite_test.ghosh-1999.toml").unlink()
    write(tmp_path, CALCITE)
    write(tmp_path, dict(SILICA, aliases=["Calcite-Test"]))
    with pytest.raises(ValueError, match="'Calcite-Test' is already used by 'calcite_test'"):
        MaterialLibrary(tmp_path).names()


def test_default_dataset_is_the_widest_band_then_the_earlier_name(tmp_path):
    # The documented rule of MaterialLibrary: widest band of data; equal widths, earlier name.
    write(tmp_path, dict(CALCITE, dataset="b-second", validity_um=[0.5, 1.5]),
          name="calcite_test.b-second")
    write(tmp_path, dict(CALCITE, dataset="a-first", validity_um=[0.25, 1.25]),
          name="calcite_test.a-first")
    assert MaterialLibrary(tmp_path).datasets("calcite_test") == ["a-first", "b-second"]
    write(tmp_path, dict(CALCITE, dataset="c-wide", validity_um=[0.25, 2.0]),
          name="calcite_test.c-wide")
    assert MaterialLibrary(tmp_path).datasets("calcite_test")[0] == "c-wide"


def test_public_names_exported():
    for name in ("material", "materials", "material_datasets", "load_material", "save_material",
                 "fit_dispersion",
                 "IsotropicMaterial", "UniaxialMaterial", "DispersionRangeWarning",
                 "UnknownMaterialError"):
        assert hasattr(prismdesign, name)


def test_data_directory_is_found():
    folder = library._data_directory()
    assert folder.is_dir()
    assert any(p.name == "calcite.toml" for p in folder.iterdir())


# --- bad files: one-line messages naming file, key, value and what is allowed -------------

def _drop(doc, *keys):
    doc = copy.deepcopy(doc)
    target = doc
    for k in keys[:-1]:
        target = target[k]
    del target[keys[-1]]
    return doc


def _set(doc, keys, value):
    doc = copy.deepcopy(doc)
    target = doc
    for k in keys[:-1]:
        target = target[k]
    target[keys[-1]] = value
    return doc


BAD = [
    (_drop(CALCITE, "ordinary", "B"), r"\[ordinary\]: missing key 'B' for formula 'sellmeier'"),
    (_drop(CALCITE, "extraordinary"), r"missing key 'extraordinary'; required: "),
    (_drop(CALCITE, "schema"), r"missing key 'schema'; allowed: schema = 1"),
    (_set(CALCITE, ["schema"], 2), r"key 'schema' = 2 is not allowed; allowed: 1"),
    (_set(CALCITE, ["colour"], "clear"), r"unknown key 'colour' = 'clear'; allowed: aliases, "),
    (_set(CALCITE, ["ordinary", "Q"], 1.0), r"\[ordinary\]: unknown key 'Q' = 1.0 for formula"),
    (_set(CALCITE, ["kind"], "triaxial"), r"key 'kind' = 'triaxial' is not allowed; allowed: "
                                          r"'uniaxial', 'isotropic', 'biaxial'"),
    (_set(CALCITE, ["kind"], "biaxial"), r"unknown key 'optical_sign' = 'negative'; allowed: .*x, y, z"),
    (_set(CALCITE, ["optical_sign"], "neg"), r"key 'optical_sign' = 'neg' is not allowed"),
    (_set(CALCITE, ["optical_sign"], "positive"),
     r"optical_sign = 'positive' but the data give mean n_e - n_o = -0.1"),
    (_set(CALCITE, ["temperature_c"], "20 C"), r"key 'temperature_c' = '20 C' is not allowed; "
                                               r"allowed: a finite number"),
    (_set(CALCITE, ["validity_um"], [2.0, 0.3]), r"key 'validity_um' = \[2.0, 0.3\] .*two "
                                                 r"increasing positive wavelengths"),
    (_set(CALCITE, ["validity_um"], [0.3]), r"key 'validity_um' = \[0.3\]"),
    (_set(CALCITE, ["ordinary", "B"], [0.96464345]),
     r"lists 'B' and 'C' must have equal length \(B has 1, C has 2\)"),
    (_set(CALCITE, ["ordinary", "B"], "0.96"), r"key 'B' = '0.96' must be a non-empty list"),
    (_set(CALCITE, ["ordinary", "formula"], "selmeier"),
     r"key 'formula' = 'selmeier' is unknown; allowed: sellmeier"),
    (_set(CALCITE, ["reference", "year"], "1999"), r"\[reference\]: key 'year' = '1999'"),
    (_drop(CALCITE, "reference", "authors"), r"\[reference\]: missing key 'authors'"),
    (_set(CALCITE, ["index"], {"formula": "constant", "value": 1.5}), r"unknown key 'index'"),
    (_set(CALCITE, ["aliases"], "spar"), r"key 'aliases' = 'spar' is not allowed"),
    (_set(CALCITE, ["thermo_optic"], {"model": "table", "dn_dt_o_per_c": 1e-6,
                                      "dn_dt_e_per_c": 1e-6}),
     r"\[thermo_optic\]: key 'model' = 'table' is not allowed; allowed: 'linear'"),
    (_set(CALCITE, ["thermo_optic"], {"model": "linear", "dn_dt_per_c": 1e-6}),
     r"\[thermo_optic\]: unknown key 'dn_dt_per_c'"),
    # The UV pole moved to 0.3 µm² (λ ≈ 0.548 µm), inside the stated range.
    (_set(CALCITE, ["ordinary", "C"], [0.3, 120.0]),
     r"bad.toml: calcite_test: its dispersion formula has a resonance at 0.5477.* µm, inside "
     r"validity_um = \[0.204, 2.172\]"),
    # n² < 0 inside the stated range with no pole there: a large negative infrared term.
    (_set(CALCITE, ["ordinary", "D"], 2.0),
     r"bad.toml: calcite_test \[ordinary\]: sellmeier: n² = .* at wavelength_um = "
     r".* inside validity_um = \[0.204, 2.172\]"),
    (_set(CALCITE, ["dataset"], "Ghosh 1999"), r"dataset = 'Ghosh 1999' must be a plain name"),
    (_set(SILICA, ["optical_sign"], "positive"), r"unknown key 'optical_sign'"),
]


@pytest.mark.parametrize("doc, pattern", BAD)
def test_bad_file_gives_one_line_error(tmp_path, doc, pattern):
    path = write(tmp_path, doc, name="bad")
    with pytest.raises(ValueError, match=pattern) as info:
        load_material(path)
    message = str(info.value)
    assert message.startswith(str(path)) and "\n" not in message


def test_malformed_toml(tmp_path):
    path = tmp_path / "broken.toml"
    path.write_text('schema = 1\nname = "x\nkind = "uniaxial"\n')
    with pytest.raises(ValueError, match=r"broken.toml: not valid TOML \(") as info:
        load_material(path)
    assert "\n" not in str(info.value)


def test_missing_file_is_an_os_error(tmp_path):
    with pytest.raises(OSError):
        load_material(tmp_path / "nothing.toml")


# --- saving --------------------------------------------------------------------------------

def test_save_load_round_trip(calcite, tmp_path):
    path = save_material(calcite, tmp_path / "copy.toml")
    again = load_material(path)
    assert again == calcite
    assert again.n_o(0.5) == calcite.n_o(0.5)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["calcite_test.toml", "copy.toml"]


def test_failed_save_leaves_existing_file_intact(calcite, tmp_path, monkeypatch):
    target = tmp_path / "keep.toml"
    target.write_text("precious = true\n")

    def broken_dump(data, fh):
        fh.write(b"schema = 1\nname = ")   # a partial write, then the writer fails
        raise RuntimeError("disk full")

    monkeypatch.setattr(library.tomli_w, "dump", broken_dump)
    with pytest.raises(RuntimeError, match="disk full"):
        save_material(calcite, target)
    assert target.read_text() == "precious = true\n"
    assert sorted(os.listdir(tmp_path)) == ["calcite_test.toml", "keep.toml"]


def test_constructed_materials_are_validated():
    from prismdesign.materials import DispersionModel
    with pytest.raises(ValueError, match="optical_sign = 'positive'"):
        UniaxialMaterial(name="wrong", ordinary=DispersionModel("constant", {"value": 1.6}),
                         extraordinary=DispersionModel("constant", {"value": 1.5}),
                         optical_sign="positive", validity_um=(0.4, 1.0), temperature_c=20.0,
                         reference=None)
    with pytest.raises(ValueError, match=r"validity_um = \[1.0, 0.4\]"):
        IsotropicMaterial(name="x", index=DispersionModel("constant", {"value": 1.5}),
                          validity_um=(1.0, 0.4), temperature_c=20.0, reference=None)


def test_thermo_optic_range_is_enforced_and_round_trips(tmp_path):
    # YVO4's linear dn/dT is the secant of Shi et al.'s (2001) 20 °C and 50 °C fits (see the data
    # file): inside that range the shift is dn/dT·ΔT without a warning, outside it warns with the
    # range, strict mode raises, and save/load keeps the range.
    import warnings as _warnings
    from prismdesign import DispersionRangeWarning, load_material, material, save_material

    yvo4 = material("yvo4", dataset="shi-2001")
    assert yvo4.thermo_range_c == (20.0, 50.0)
    with _warnings.catch_warnings():
        _warnings.simplefilter("error")
        shifted = yvo4.n_o(0.6, 35.0)
    assert shifted - yvo4.n_o(0.6) == pytest.approx(1.67e-5 * 15.0, rel=1e-12)
    with pytest.warns(DispersionRangeWarning, match=r"20-50 °C"):
        yvo4.n_e(0.6, 100.0)
    with pytest.raises(ValueError, match=r"temperature_c = 100(\.0)? lies outside 20-50 °C"):
        material("yvo4", strict=True, dataset="shi-2001").n_o(0.6, 100.0)
    copy = load_material(save_material(yvo4, tmp_path / "yvo4_copy.toml"))
    assert copy.thermo_range_c == (20.0, 50.0)


def test_bad_thermo_optic_range_is_a_one_line_error(tmp_path):
    from prismdesign import load_material

    text = tmp_path / "caf2.toml"
    source = (library._data_directory() / "caf2.toml").read_text(encoding="utf-8")
    text.write_text(source.replace("temperature_range_c = [20.0, 25.0]",
                                   "temperature_range_c = [25.0, 20.0]"), encoding="utf-8")
    with pytest.raises(ValueError, match=r"temperature_range_c.*two increasing temperatures") as info:
        load_material(text)
    assert "\n" not in str(info.value)
