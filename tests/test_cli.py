"""The command line, run in-process through ``main``."""
import contextlib
import csv
import io
import re

import numpy as np
import pytest

from prismdesign import material, material_datasets, materials, save_material
from prismdesign.cli import main
from closed_forms import wollaston_exit_angle_rad


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_materials_lists_every_dataset(capsys):
    code, out, err = run(capsys, "materials")
    assert code == 0 and err == ""
    lines = out.splitlines()
    assert lines[0].split()[:5] == ["name", "dataset", "kind", "sign", "band"]
    table = [line.split() for line in lines[2:] if line.strip() and not line.startswith("*")]
    body = {(row[0], row[1].rstrip("*")): row for row in table}
    assert set(body) == {(name, d) for name in materials() for d in material_datasets(name)}
    calcite = material("calcite")
    row = body["calcite", "ghosh-1999"]
    assert row[2:4] == ["uniaxial", "negative"]
    assert float(row[5]) == pytest.approx(calcite.birefringence(0.6328), abs=1e-5)
    assert " ".join(row[6:]) == calcite.reference.short
    assert body["vacuum", "bipm-2019"][3] == "-" and body["vacuum", "bipm-2019"][5] == "-"
    # the default of a material with a choice is starred, and the star is explained
    assert body["yvo4", "lomheim-1978"][1] == "lomheim-1978*"
    assert body["yvo4", "shi-2001"][1] == "shi-2001"
    assert lines[-1].startswith("* default dataset (widest band)")


def test_index_table(capsys):
    code, out, err = run(capsys, "index", "alpha-BBO", "--band", "0.4", "1.0", "--points", "7")
    assert code == 0 and err == ""
    item = material("alpha-BBO")
    assert str(item.reference) in out
    rows = [line.split() for line in out.splitlines() if line[:1].isdigit()]
    assert len(rows) == 7
    lam = np.array([float(r[0]) for r in rows])
    np.testing.assert_allclose(lam, np.linspace(0.4, 1.0, 7))
    values = np.array([[float(x) for x in r[1:]] for r in rows])
    np.testing.assert_allclose(values[:, 0], item.n_o(lam), atol=1e-6)
    np.testing.assert_allclose(values[:, 1], item.n_e(lam), atol=1e-6)
    np.testing.assert_allclose(values[:, 2], item.birefringence(lam), atol=1e-6)
    np.testing.assert_allclose(values[:, 3], item.group_index_o(lam), atol=1e-6)
    np.testing.assert_allclose(values[:, 4], item.group_index_e(lam), atol=1e-6)


def test_index_isotropic_prints_n_only(capsys):
    code, out, _ = run(capsys, "index", "fused silica", "--band", "0.5", "0.6", "--points", "2")
    assert code == 0
    assert "n_o" not in out and "group n" in out
    rows = [line.split() for line in out.splitlines() if line[:1].isdigit()]
    assert float(rows[0][1]) == pytest.approx(material("fused_silica").n(0.5), abs=1e-6)


def test_index_out_of_band_warns_on_stderr(capsys):
    # Inside calcite's transparency window (to 2.3 um), beyond its data (to 2.172 um).
    code, out, err = run(capsys, "index", "calcite", "--band", "1.0", "2.25", "--points", "3")
    assert code == 0
    assert err.startswith("warning: calcite: wavelength_um up to 2.25 µm lies outside")
    assert len(err.strip().splitlines()) == 1


def test_index_where_opaque_is_one_line_exit_2(capsys):
    code, out, err = run(capsys, "index", "calcite", "--band", "1.0", "3.0", "--points", "3")
    assert code == 2 and out == ""
    assert err.startswith("prismdesign index: error: calcite (ghosh-1999): wavelength_um = 3 "
                          "lies outside its transparency window 0.2-2.3 µm")
    assert len(err.strip().splitlines()) == 1


def test_index_header_names_dataset_and_temperature(capsys):
    code, out, err = run(capsys, "index", "yvo4", "--band", "1.5", "1.6", "--points", "2")
    assert code == 0 and err == ""                  # 1.55 um is inside Lomheim & DeShazer's data
    lines = out.splitlines()
    assert lines[0] == "yvo4 (uniaxial), dataset lomheim-1978 (default, widest band; " \
                       "others: shi-2001)"
    assert lines[1].startswith("values at 20 C, the temperature of the data")
    code, out, err = run(capsys, "index", "yvo4", "--dataset", "shi-2001", "--temperature", "35",
                         "--band", "0.6", "1.0", "--points", "2")
    assert code == 0 and err == ""
    assert "dataset shi-2001 (chosen; others: lomheim-1978)" in out
    assert "values at 35 C: the 20 C data shifted by a linear thermo-optic model (dn/dT from " \
           "H. S. Shi" in out
    rows = [line.split() for line in out.splitlines() if line[:1].isdigit()]
    shi = material("yvo4", dataset="shi-2001")
    assert float(rows[0][1]) == pytest.approx(shi.n_o(0.6, 35.0), abs=1e-6)


@pytest.mark.parametrize("argv, pattern", [
    # Before: a table headed "at 500 C" holding 20 °C values.
    (["index", "sapphire", "--temperature", "500"],
     "--temperature 500: sapphire (malitson-1972) has no thermo-optic data, its indices hold at "
     "20 C only; leave out --temperature"),
    (["index", "yvo4", "--temperature", "50"],
     "yvo4 (lomheim-1978) has no thermo-optic data, its indices hold at 20 C only; dataset "
     "shi-2001 has a linear dn/dT (--dataset)"),
    (["index", "yvo4", "--dataset", "shi"],
     "dataset = 'shi' is not a dataset of yvo4; allowed: lomheim-1978, shi-2001"),
])
def test_index_refusals(capsys, argv, pattern):
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == "" and pattern in err
    assert len(err.strip().splitlines()) == 1


def test_index_reads_a_users_file(capsys, tmp_path):
    path = save_material(material("yvo4", dataset="shi-2001"), tmp_path / "our_yvo4.toml")
    code, out, err = run(capsys, "index", str(path), "--band", "0.6", "1.0", "--points", "3")
    assert code == 0 and err == ""
    assert out.splitlines()[0] == f"yvo4 (uniaxial), dataset shi-2001 (from {path})"
    rows = [line.split() for line in out.splitlines() if line[:1].isdigit()]
    assert float(rows[1][2]) == pytest.approx(material("yvo4", dataset="shi-2001").n_e(0.8),
                                              abs=1e-6)
    code, _, err = run(capsys, "index", str(tmp_path / "missing.toml"))
    assert code == 2 and "missing.toml: no such dispersion-data file" in err
    code, _, err = run(capsys, "index", str(path), "--dataset", "lomheim-1978")
    assert code == 2 and "holds dataset 'shi-2001' only" in err


def test_index_plot_writes_png(capsys, tmp_path):
    target = tmp_path / "calcite.png"
    code, out, _ = run(capsys, "index", "calcite", "--plot", str(target))
    assert code == 0 and f"wrote {target}" in out
    data = target.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 20_000


def test_unknown_material_is_one_line_exit_2(capsys):
    code, out, err = run(capsys, "index", "calcit")
    assert code == 2 and out == ""
    assert err.strip() == ("prismdesign index: error: unknown material 'calcit'; closest "
                           "matches: " + err.split("closest matches: ")[1].strip())
    assert "calcite" in err and len(err.strip().splitlines()) == 1
    assert "Traceback" not in err


@pytest.mark.parametrize("argv, pattern", [
    (["index", "calcite", "--band", "0", "1"], "--band 0 1: need two increasing positive"),
    (["index", "calcite", "--band", "1", "0.5"], "--band 1 0.5"),
    (["index", "calcite", "--points", "1"], "--points 1: need at least 2"),
    (["index", "calcite", "--temperature", "-300"], "temperature_c = -300.0 must be finite"),
])
def test_bad_arguments_exit_2(capsys, argv, pattern):
    code, out, err = run(capsys, *argv)
    assert code == 2 and pattern in err and len(err.strip().splitlines()) == 1


def test_argparse_errors_exit_2(capsys):
    with pytest.raises(SystemExit) as info:
        main(["index"])
    assert info.value.code == 2
    with pytest.raises(SystemExit):
        main(["no-such-command"])


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    """The demo run once through the command line: exit code, printed text, output folder."""
    folder = tmp_path_factory.mktemp("demo")
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(["demo", "--out", str(folder)])
    return code, out.getvalue(), folder


def test_demo_writes_its_files(demo_run):
    code, out, folder = demo_run
    assert code == 0
    for name in ("calcite", "quartz", "alpha_bbo", "yvo4"):
        assert name in out
    assert "IEC 60825-1" in out
    png = folder / "birefringence_0.8-1.0um.png"
    table = folder / "birefringence_0.8-1.0um.csv"
    assert png.read_bytes()[:4] == b"\x89PNG"
    rows = list(csv.reader(table.read_text().splitlines()))
    assert rows[0] == ["material", "source", "wavelength_um", "n_o", "n_e", "birefringence"]
    first = rows[1]
    assert first[0] == "calcite" and float(first[2]) == 0.8
    assert first[1] == material("calcite").reference.short
    assert float(first[5]) == pytest.approx(material("calcite").birefringence(0.8), abs=1e-6)


def test_demo_design_table_and_figures(demo_run):
    # The demo's printed split must be the exact Snell's-law value for its symmetric Wollaston
    # at normal incidence: refraction at the tilted interface (n₁ sinθ = n₂ sinθ') and at the
    # parallel exit face (n₂ sin(θ' − θ) = n_air sin φ); Born & Wolf, Principles of Optics §1.5.1.
    from prismdesign.output.demo import DEMO_SETUP

    code, out, folder = demo_run
    assert code == 0
    assert out.count("IEC 60825-1") == 1
    for name in ("split_versus_wavelength.png", "side_view.png", "detector_footprints.png",
                 "field_of_view.png"):
        assert (folder / name).read_bytes()[:4] == b"\x89PNG"
    row = next(line for line in out.splitlines() if line.startswith("0.900 "))
    printed_split = float(row.split()[1])
    calcite, air = material("calcite"), material("air")
    n_o, n_e, n_air = calcite.n_o(0.9), calcite.n_e(0.9), air.n(0.9)
    theta = np.deg2rad(DEMO_SETUP["wedge_angle_deg"])

    expected = np.rad2deg(abs(wollaston_exit_angle_rad(n_e, n_o, theta, n_air)
                              - wollaston_exit_angle_rad(n_o, n_e, theta, n_air)))
    assert printed_split == pytest.approx(expected, abs=1e-4)   # printed to 4 decimals


def _field_line(out, which):
    line = next(line for line in out.splitlines() if line.lstrip().startswith(which))
    match = re.search(r"on-axis leakage (\S+); the spec is (.*)\.$", line)
    return float(match.group(1)), match.group(2)


def _leakage_map(prism, setup):
    """Stray share of the transmitted power over the demo's grid, read independently of the
    demo's code: every beam other than the two main ones is stray."""
    from prismdesign.analysis import transmission

    half, steps = setup["field_half_range_deg"], setup["field_steps"]
    grid = np.linspace(-half, half, steps)
    t = transmission(prism, setup["design_wavelength_um"], grid[None, :], grid[:, None])
    main = t.power["oe"] + t.power["eo"]
    # Both main beams transmitted: far above zero everywhere on the map (no total reflection).
    passes = (t.power["oe"] > 0.1) & (t.power["eo"] > 0.1)
    return grid, (t.total - main) / t.total, passes


def test_demo_field_of_view_words_match_the_map(demo_run):
    from prismdesign.analysis.extinction import perturb_axes
    from prismdesign.output.demo import DEMO_SETUP, _prism

    setup = DEMO_SETUP
    limit = setup["leakage_limit"]
    _, out, _ = demo_run
    prism = _prism(setup)
    as_specified = perturb_axes(prism, azimuth_error_deg=setup["axis_error_deg"], piece=0)

    leak, words = _field_line(out, "as specified")
    # Closed form: with the first wedge's axis turned by δ, each beam's polarisation leaving
    # wedge 1 sits at δ to the eigen-directions of wedge 2, which passes the fraction sin²δ into
    # the other mode (Malus's law; Hecht, Optics, 4th ed. 2002, §8.2.1): stray share sin²δ of
    # the transmitted power at normal incidence, up to the slightly mode-dependent Fresnel loss
    # at the interface and the 2-digit print.
    assert leak == pytest.approx(np.sin(np.deg2rad(setup["axis_error_deg"])) ** 2, rel=0.03)
    row = next(line for line in out.splitlines() if line.startswith("0.900 "))
    assert float(row.split()[-1]) == leak                  # the table's leakage column
    # On axis above the spec: the words must say so first.
    assert leak > limit and words.startswith("NOT met at normal incidence; ")

    grid, leakage, passes = _leakage_map(as_specified, setup)
    ok = passes & (leakage <= limit)
    assert 0 < ok.mean() < 1
    share = float(re.search(r"met on ([\d.]+) % of the map", words).group(1))
    assert share == pytest.approx(100 * ok.mean(), abs=0.05)
    nearest = re.search(r"nearest to normal incidence ([\d.]+)° away \(in-plane ([-+\d.]+)°, "
                        r"out-of-plane ([-+\d.]+)°\)", words)
    distance, a, b = (float(v) for v in nearest.groups())
    radius = np.hypot(grid[None, :], grid[:, None])
    assert distance == pytest.approx(radius[ok].min(), abs=0.005)
    i, j = np.argmin(np.abs(grid - b)), np.argmin(np.abs(grid - a))
    assert ok[i, j] and np.hypot(a, b) == pytest.approx(distance, abs=0.01)

    leak, words = _field_line(out, "perfectly aligned")
    # By symmetry a perfectly crossed Wollaston has no stray beam at normal incidence.
    assert leak == 0.0 and words.startswith("met at normal incidence and within ")
    grid, leakage, passes = _leakage_map(prism, setup)
    ok = passes & (leakage <= limit)
    c = grid.size // 2
    run_up = np.argmin(ok[c:, c]) if not ok[c:, c].all() else None
    along = re.search(r"along the axes in-plane (.*), out-of-plane ±([\d.]+)°;", words)
    assert along.group(1) == f"±{grid[-1]:.2f}° (grid edge)"
    assert ok[c, :].all()                                  # the whole in-plane axis holds
    assert run_up is not None and float(along.group(2)) == pytest.approx(grid[c + run_up - 1])
    cone = float(re.search(r"within ([\d.]+)° of it in every direction", words).group(1))
    # Every grid direction within the stated cone meets the spec.
    assert ok[radius <= cone].all()


def test_side_view_draws_the_rejected_beam_of_a_glan_prism(tmp_path):
    # The drawing must show where the rejected beam goes (laser safety: it needs a beam dump);
    # its label comes from trace_rejected, which is checked against Snell/Fresnel elsewhere.
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from prismdesign.output.drawing import draw_side_view
    from prismdesign.prisms import glan_air_spaced, glan_cemented

    for prism, words in ((glan_air_spaced(), "out of the side face"),
                         (glan_cemented(), "trapped")):
        fig, ax = plt.subplots()
        draw_side_view(prism, 0.6328, ax=ax)
        labels = [text.get_text() for text in ax.get_legend().get_texts()]
        assert any(label.startswith("rejected") and words in label for label in labels)
        plt.close(fig)
