"""Bad input found in a new-user review: each must fail in one line naming what was wrong, the
value and what is allowed (no tracebacks from the command line, no numpy internals, no NaN).

These are checks of the tool's own error contract (STYLE.md, "Errors that teach"), not of
physics, so they cite no outside source.
"""
import math

import numpy as np
import pytest

import prismdesign as pd
from prismdesign import prisms
from prismdesign.cli import main
from prismdesign.materials import fit_dispersion, load_material, save_material

NAN = float("nan")


def one_line_error(call, *fragments, error=ValueError):
    """Run `call`, expect `error` with a one-line message containing every fragment."""
    with pytest.raises(error) as info:
        call()
    message = str(info.value)
    assert "\n" not in message, message
    for fragment in fragments:
        assert fragment in message, f"{fragment!r} not in {message!r}"
    return message


# --------------------------------------------------------------------------- prism builders

TWO_WEDGE_BUILDERS = [prisms.wollaston, prisms.rochon, prisms.senarmont, prisms.glan_air_spaced,
                      prisms.glan_cemented,
                      lambda **kw: prisms.nomarski(axis_tilt_deg=10.0, **kw)]


@pytest.mark.parametrize("build", TWO_WEDGE_BUILDERS)
@pytest.mark.parametrize("value", [None, NAN, -1.0, 0.0, math.inf, [0.6, 0.7], "0.6", True])
def test_design_wavelength_is_checked_by_every_wedge_builder(build, value):
    one_line_error(lambda: build(design_wavelength_um=value), "design_wavelength_um",
                   "positive number", repr(value))


@pytest.mark.parametrize("call, name", [
    (lambda: prisms.wollaston(width_mm="10"), "width_mm"),
    (lambda: prisms.wollaston(wedge_angle_deg="15"), "wedge_angle_deg"),
    (lambda: prisms.savart_plate(plate_thickness_mm="5"), "plate_thickness_mm"),
    (lambda: prisms.walkoff_displacer(length_mm="10"), "length_mm"),
    (lambda: prisms.double_wollaston(rotation_deg="45"), "rotation_deg"),
    (lambda: prisms.savart_plate(azimuth_deg="45"), "azimuth_deg"),
])
def test_numbers_given_as_text_are_refused(call, name):
    one_line_error(call, name, "not text")


@pytest.mark.parametrize("call, name", [
    (lambda: prisms.wollaston(width_mm=True), "width_mm"),
    (lambda: prisms.glan_air_spaced(cut_angle_deg=True), "cut_angle_deg"),
    (lambda: prisms.glan_air_spaced(gap_mm=True), "gap_mm"),
])
def test_booleans_are_not_numbers(call, name):
    one_line_error(call, name, "True")


@pytest.mark.parametrize("call", [
    lambda: prisms.wollaston("air"),
    lambda: prisms.rochon("fused_silica"),
    lambda: prisms.glan_air_spaced("caf2"),
    lambda: prisms.savart_plate("fused_silica"),
    lambda: prisms.walkoff_displacer("air"),
    lambda: prisms.walkoff_angle_deg("air", 0.6, 45.0),
    lambda: prisms.glan_cut_angle_limits("air", 0.6, 1.0),
])
def test_isotropic_material_is_refused_where_a_crystal_is_needed(call):
    message = one_line_error(call, "must be a uniaxial crystal", "isotropic")
    assert "calcite" in message   # the allowed choices are listed


@pytest.mark.parametrize("value", [5, None, object()])
def test_material_must_be_a_name_or_material(value):
    one_line_error(lambda: prisms.wollaston(value), "material must be a material name")


def test_interface_layer_must_be_a_thin_layer():
    one_line_error(lambda: prisms.wollaston(interface_layer="optical_cement"), "interface_layer",
                   "'optical_cement'", "interface_layer(material, thickness_mm)")


def test_coated_must_be_true_or_false():
    one_line_error(lambda: prisms.wollaston(coated="yes"), "coated", "True or False", "'yes'")
    one_line_error(lambda: prisms.savart_plate(coated=1), "coated", "True or False")


def test_glan_gap_errors_name_the_builder_parameter():
    one_line_error(lambda: prisms.glan_air_spaced(gap_mm=-0.01), "gap_mm", ">= 0", "-0.01")
    one_line_error(lambda: prisms.glan_air_spaced(gap_material="calcite"), "gap_material",
                   "isotropic", "'calcite'")
    one_line_error(lambda: prisms.glan_cemented(cement_thickness_mm=NAN),
                   "cement_thickness_mm", "nan")


@pytest.mark.parametrize("call, fragments", [
    (lambda: prisms.compound_prism(5), ("wedges must be a list", "5")),
    (lambda: prisms.compound_prism("calcite"), ("wedges must be a list", "'calcite'")),
    (lambda: prisms.free_stack(dict(material="calcite", optic_axis="x")),
     ("pieces must be a list",)),
    (lambda: prisms.free_stack([dict(material="calcite", optic_axis="x", exit_face_deg="a")]),
     ("exit face angle of piece 0", "'a'")),
])
def test_stack_inputs_are_lists(call, fragments):
    one_line_error(call, *fragments)


@pytest.mark.parametrize("call, fragments", [
    (lambda: prisms.glan_transmitted_mode(5), ("prism must be a Prism", "int")),
    (lambda: prisms.glan_transmitted_mode(prisms.glan_air_spaced(), "x"),
     ("wavelength_um", "'x'")),
    (lambda: prisms.trace_rejected("glan"), ("prism must be a Prism",)),
    (lambda: prisms.trace_rejected(prisms.glan_air_spaced(), []), ("at least one wavelength",)),
    (lambda: prisms.rejected_beam_system(None), ("prism must be a Prism",)),
    (lambda: prisms.localisation_plane(7), ("prism must be a Prism",)),
])
def test_prism_functions_check_their_prism_and_wavelength(call, fragments):
    one_line_error(call, *fragments)


def test_nan_angles_do_not_give_nan_results():
    one_line_error(lambda: prisms.walkoff_angle_deg("calcite", 0.6, NAN), "cut_angle_deg",
                   "finite")
    one_line_error(lambda: prisms.walkoff_angle_deg("calcite", 0.6, "45"), "cut_angle_deg",
                   "'45'")
    one_line_error(lambda: prisms.glan_cut_angle_limits("calcite", 0.6, 1.0, in_plane_deg=NAN),
                   "in_plane_deg", "finite")
    one_line_error(lambda: prisms.glan_cut_angle_limits("calcite", 0.6, 1.0, in_plane_deg=95),
                   "in_plane_deg", "-90 and 90", "95")
    one_line_error(lambda: prisms.glan_cut_angle_limits("calcite", 0.6, [1.0, "a"]), "gap_index",
                   "positive index")


def test_localisation_plane_options():
    prism = prisms.wollaston()
    one_line_error(lambda: prisms.localisation_plane(prism, extent="x"), "extent", "'x'")
    one_line_error(lambda: prisms.localisation_plane(prism, points="x"), "points",
                   "integer >= 2", "'x'")
    one_line_error(lambda: prisms.localisation_plane(prism, points=NAN), "points")
    assert np.isfinite(prisms.localisation_plane(prism, points=5.0).z_mm)   # whole floats pass


def test_prism_moves_and_helpers_check_numbers():
    prism = prisms.wollaston()
    one_line_error(lambda: prism.rotated("x"), "angle_deg", "'x'")
    one_line_error(lambda: prism.shifted(NAN), "dz_mm", "nan")
    one_line_error(lambda: prism.shifted("1"), "dz_mm", "not text")
    one_line_error(lambda: prisms.ideal_antireflection_layer(-1.0, 1.5, 0.6), "n_outside",
                   "positive", "-1.0")


@pytest.mark.parametrize("offset, fragment", [
    ((NAN, 0.0), "finite"),
    ((1 + 1j, 0.0), "pairs of numbers"),
    (("a", "b"), "pairs of numbers"),
])
def test_entry_offsets_are_checked(offset, fragment):
    prism = prisms.wollaston()
    one_line_error(lambda: prism.trace(0.8, offset_mm=offset), "offset_mm", fragment)


# --------------------------------------------------------------------------- materials

@pytest.mark.parametrize("value, shown", [(None, "None"), (True, "True"), ("0.6", "'0.6'"),
                                          (["0.5", "0.6"], "'0.5'")])
def test_wavelength_must_be_numbers(value, shown):
    calcite = pd.material("calcite")
    one_line_error(lambda: calcite.n_o(value), "wavelength_um", shown, "number")


def test_wavelength_and_temperature_shapes_are_named():
    calcite = pd.material("yvo4")
    one_line_error(lambda: calcite.indices([0.6, 0.7], [20.0, 30.0, 40.0]), "wavelength_um",
                   "temperature_c", "(2,)", "(3,)", "broadcast")
    one_line_error(lambda: calcite.n_o(0.6, "hot"), "temperature_c", "'hot'")


def test_data_file_temperature_below_absolute_zero(tmp_path):
    import tomli_w

    from prismdesign.materials.schema import material_to_dict

    data = material_to_dict(pd.material("calcite"))
    data["temperature_c"] = -300.0
    path = tmp_path / "calcite.toml"
    path.write_bytes(tomli_w.dumps(data).encode())
    one_line_error(lambda: load_material(path), str(path), "temperature_c", "-300",
                   "above -273.15")


@pytest.mark.parametrize("value", [None, 5])
def test_load_material_needs_a_path(value):
    one_line_error(lambda: load_material(value), "path", repr(value), "file name")


def test_save_material_names_missing_folder_and_wrong_object(tmp_path):
    target = tmp_path / "missing" / "calcite.toml"
    one_line_error(lambda: save_material(pd.material("calcite"), target), str(target.parent),
                   "does not exist", error=FileNotFoundError)
    assert not target.parent.exists()
    one_line_error(lambda: save_material(5, tmp_path / "x.toml"), "material must be an",
                   "int")


def test_fit_checks_name_temperature_and_data_before_fitting():
    lam = np.linspace(0.5, 1.0, 8)
    n = pd.material("fused_silica").n(lam)
    one_line_error(lambda: fit_dispersion(lam, n, temperature_c=NAN), "temperature_c", "nan")
    one_line_error(lambda: fit_dispersion(lam, n, name=5), "name", "5")
    one_line_error(lambda: fit_dispersion("abc", n), "wavelength_um", "'abc'",
                   "array of numbers")
    one_line_error(lambda: fit_dispersion(lam, [[1.5, 1.4], [1.3]]), "n", "array of numbers")


# --------------------------------------------------------------------------- command line

def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize("plot, fragment", [
    ("{tmp}", "need a file name ending in .png, .pdf, .svg"),
    ("{tmp}/figure.xyz", "need a file name ending in"),
    ("{tmp}/missing/figure.png", "does not exist"),
])
def test_plot_file_is_checked_before_any_work(capsys, tmp_path, plot, fragment):
    target = plot.format(tmp=tmp_path)
    code, out, err = run(capsys, "index", "calcite", "--plot", target)
    assert code == 2 and out == ""
    assert err.startswith(f"prismdesign index: error: --plot {target}: ") and fragment in err
    assert len(err.strip().splitlines()) == 1
    # Nothing written next to the folder (matplotlib would otherwise add ".png" to a bare name).
    assert not (tmp_path.parent / f"{tmp_path.name}.png").exists()


def test_points_upper_limit(capsys):
    code, _, err = run(capsys, "index", "calcite", "--points", "100000")
    assert code == 2 and "--points 100000: need at most" in err


def test_band_beyond_the_model_names_the_data_range(capsys):
    code, _, err = run(capsys, "index", "calcite", "--band", "0.1", "1.0")
    item = pd.material("calcite")
    assert code == 2 and len(err.strip().splitlines()) == 1
    assert f"data {item.validity_um[0]:g}-{item.validity_um[1]:g} µm" in err
    assert "wavelength_um = 0.1 lies outside its transparency window" in err


def test_demo_out_must_be_a_folder(capsys, tmp_path):
    a_file = tmp_path / "report.txt"
    a_file.write_text("keep me")
    code, out, err = run(capsys, "demo", "--out", str(a_file))
    assert code == 2 and out == ""
    assert err.strip() == (f"prismdesign demo: error: --out {a_file}: is a file; need a folder "
                           f"(created if missing)")
    assert a_file.read_text() == "keep me"


def test_unexpected_failure_is_one_line_without_traceback(capsys, monkeypatch):
    import prismdesign.cli as cli

    def broken(args):
        raise TypeError("something unforeseen")

    monkeypatch.setattr(cli, "_materials_command", broken)
    code, out, err = run(capsys, "materials")
    assert code == 1 and out == ""
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert "internal error (TypeError: something unforeseen)" in err


def test_prism_in_another_medium():
    # A mid-infrared CdSe Wollaston outside the standard-air data range (Ciddor 1996 covers
    # 0.23–1.69 µm) is assessed in vacuum: no range warning, and with n_surround = 1 the exit
    # angles follow Snell's law at the exit face directly (sin φ = n₂ sin γ).
    import warnings as _warnings

    import prismdesign as pd
    from closed_forms import wollaston_exit_angle_rad

    prism = pd.prisms.wollaston("cdse", 10.0, design_wavelength_um=10.0).in_medium("vacuum")
    with _warnings.catch_warnings():
        _warnings.simplefilter("error")
        split = pd.analysis.split(prism, 10.0)
    cdse = pd.material("cdse")
    n_o, n_e = cdse.n_o(10.0), cdse.n_e(10.0)
    theta = np.deg2rad(10.0)

    expected = np.rad2deg(abs(wollaston_exit_angle_rad(n_e, n_o, theta, 1.0)
                              - wollaston_exit_angle_rad(n_o, n_e, theta, 1.0)))
    assert float(split.split_deg) == pytest.approx(expected, abs=1e-12)
    with pytest.raises(ValueError, match="surround must be an isotropic material"):
        prism.in_medium("calcite")
