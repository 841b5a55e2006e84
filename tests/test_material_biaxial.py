"""Biaxial dispersion-data files: the strict loader, the material object, the save round trip.

The numbers themselves are checked elsewhere: against the CC0 database in
tests/test_material_data_database.py (Kato & Takaoka 2002 for KTP, Hanson & Dick 1991 for LBO)
and against makers' data sheets in tests/test_material_data_tables.py.
"""
import copy
import tomllib
import warnings
from pathlib import Path

import numpy as np
import pytest
import tomli_w

from prismdesign import load_material, material, save_material
from prismdesign.materials import BiaxialMaterial, DispersionRangeWarning

KTP_DOC = tomllib.loads((Path(__file__).resolve().parents[1] / "dispersion_data"
                         / "ktp.toml").read_text())


def _write(tmp_path, doc):
    path = tmp_path / "bad.toml"
    path.write_bytes(tomli_w.dumps(doc).encode())
    return path


def _changed(change):
    doc = copy.deepcopy(KTP_DOC)
    change(doc)
    return doc


BAD = [
    (_changed(lambda d: d.pop("z")), r"missing key 'z'; required: "),
    (_changed(lambda d: d.update(optical_sign="positive")),
     r"unknown key 'optical_sign' = 'positive'; allowed: "),
    (_changed(lambda d: d.update(ordinary=dict(d["x"]))), r"unknown key 'ordinary'"),
    (_changed(lambda d: d.update(thermo_optic={"model": "linear", "dn_dt_per_c": 1e-5})),
     r"key 'thermo_optic' = '\[table\]' is not allowed; allowed: only in uniaxial and "
     r"isotropic files"),
    (_changed(lambda d: d.update(optical_activity={"model": "drude"})),
     r"only in uniaxial crystal files"),
    (_changed(lambda d: d["y"].update(Q=1.0)), r"\[y\]: unknown key 'Q' = 1.0"),
    (_changed(lambda d: d["x"].update(C=[0.03978, 0.5])),
     r"\[x\]|resonance at 0.707107 µm, inside validity_um"),
]


@pytest.mark.parametrize("doc, pattern", BAD, ids=[str(i) for i in range(len(BAD))])
def test_bad_biaxial_file_gives_one_line_error(tmp_path, doc, pattern):
    path = _write(tmp_path, doc)
    with pytest.raises(ValueError, match=pattern) as info:
        load_material(path)
    assert str(info.value).startswith(str(path)) and "\n" not in str(info.value)


def test_ktp_object():
    ktp = material("KTiOPO4")
    assert isinstance(ktp, BiaxialMaterial) and ktp.kind == "biaxial"
    assert ktp.label == "ktp (kato-2002)"
    n_x, n_y, n_z = ktp.indices(np.array([0.5, 1.0, 2.0]))
    assert np.all(n_x < n_y) and np.all(n_y < n_z)
    # The single-axis methods agree with indices(); scalars give floats.
    assert isinstance(ktp.n_y(1.064), float)
    assert ktp.indices(1.064) == (ktp.n_x(1.064), ktp.n_y(1.064), ktp.n_z(1.064))


def test_range_and_transparency():
    lbo = material("lbo")
    with pytest.warns(DispersionRangeWarning, match="outside the validity range"):
        lbo.indices(1.3)                              # data to 1.064 µm, window to 2.6 µm
    with pytest.raises(ValueError, match="outside the validity range"):
        lbo.indices(1.3, strict=True)
    with pytest.raises(ValueError, match="transparency window"):
        lbo.indices(3.0)
    with pytest.raises(ValueError, match="no thermo-optic data"):
        lbo.with_strict().indices(0.8, 40.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert len(lbo.indices(0.8, 20.0)) == 3        # the data temperature itself is fine


def test_save_round_trip(tmp_path):
    ktp = material("ktp")
    path = save_material(ktp, tmp_path / "ktp.toml")
    again = load_material(path)
    assert again == ktp
    assert again.indices(0.8) == ktp.indices(0.8)
