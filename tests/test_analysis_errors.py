"""Bad input to the analysis layer: each case must fail in one line that names the parameter,
shows the value as a plain number and says what is allowed (no numpy internals, no silent NaN).

These are checks of the tool's own error contract (STYLE.md, "Errors that teach"), not of
physics, so they cite no outside source.
"""
import re

import numpy as np
import pytest

import prismdesign as pd
from prismdesign import analysis as A
from prismdesign.optics import TraceFlag

NAN = float("nan")
WOLLASTON = pd.prisms.wollaston()
GLAN = pd.prisms.glan_air_spaced()

NOT_A_PRISM = "must be a Prism made by a builder in prismdesign.prisms"
WAVELENGTHS = re.escape("wavelength_um must be positive, finite vacuum wavelengths in µm")
IN_PLANE = re.escape("in_plane_deg must be finite angles in degrees between -90 and 90 "
                     "(exclusive)")
BROADCAST = "must broadcast together .*got shapes"
REQUIREMENTS = "requirements must be a non-empty sequence of Requirement objects"


def one_line_error(call, pattern):
    """Run `call`; expect a one-line ValueError matching `pattern`, without numpy reprs."""
    with pytest.raises(ValueError, match=pattern) as info:
        call()
    message = str(info.value)
    assert "\n" not in message, message
    assert "np." not in message and "array(" not in message, message
    return message


CASES = {
    # zero or non-finite directions used to give 0.0 or nan
    "split angle of a zero vector": (
        lambda: A.split_angle_deg([0, 0, 0], [0, 1, 0]),
        r"direction_a must be non-zero 3-vectors .*got \[0, 0, 0\]"),
    "split angle of a NaN vector": (
        lambda: A.split_angle_deg([NAN, 0, 1], [0, 1, 0]),
        r"direction_a must be non-zero 3-vectors \(finite numbers.*got \[nan, 0.0, 1.0\]"),
    "split angle of vectors that do not broadcast": (
        lambda: A.split_angle_deg(np.ones((2, 3)), np.ones((3, 3))),
        r"direction_a, direction_b " + BROADCAST + r" direction_a \(2, 3\)"),
    "Gaussian radius at a NaN wavelength": (
        lambda: A.gaussian_beam_radius_mm(1, NAN, 100),
        WAVELENGTHS + ", got nan"),
    "Gaussian radius with a negative waist": (
        lambda: A.gaussian_beam_radius_mm(-1, 0.8, 100),
        "waist_mm must be positive, finite waist radii in mm, got -1"),
    "Gaussian radius with M² below 1": (
        lambda: A.gaussian_beam_radius_mm(1, 0.8, 100, m_squared=0.5),
        "m_squared must be finite beam quality factors M² >= 1, got 0.5"),
    "Gaussian radius with shapes that do not broadcast": (
        lambda: A.gaussian_beam_radius_mm([1, 2], 0.8, [1, 2, 3]),
        "waist_mm, wavelength_um, distance_mm, m_squared " + BROADCAST),
    "small-angle split with a negative index": (
        lambda: A.wollaston_small_angle_split_deg(-1.6, 1.5, 10),
        "n_o must be positive, finite refractive indices, got -1.6"),
    "small-angle split with a NaN index": (
        lambda: A.wollaston_small_angle_split_deg(1.6, NAN, 10),
        "n_e must be positive, finite refractive indices, got nan"),
    "small-angle split with a wedge of 90 degrees": (
        lambda: A.wollaston_small_angle_split_deg(1.6, 1.5, 90),
        r"wedge_angle_deg must be an angle in degrees between 0 and 90 \(exclusive\), got 90"),
    # silently accepted NaN
    "separation with a NaN clearance": (
        lambda: A.separation(WOLLASTON, 0.8, 100, min_clearance=NAN),
        r"min_clearance must be a finite number \(clearance in beam radii\), got nan"),
    "default requirements at a NaN wavelength": (
        lambda: A.default_requirements(GLAN, NAN),
        WAVELENGTHS + ", got nan"),
    # numeric text parsed as a number
    "split at a wavelength given as text": (
        lambda: A.split(WOLLASTON, "0.8"),
        WAVELENGTHS + ", got the text '0.8'"),
    "split at a wavelength given as non-numeric text": (
        lambda: A.split(WOLLASTON, "abc"),
        WAVELENGTHS + ", got the text 'abc'"),
    "axis errors given as text": (
        lambda: A.perturb_axes(WOLLASTON, "x"),
        "azimuth_error_deg must be finite angles in degrees, got the text 'x'"),
    "separation at a distance given as text": (
        lambda: A.separation(WOLLASTON, 0.8, "x"),
        "distance_mm must be finite distances in mm, >= 0, got the text 'x'"),
    "entry point given as text": (
        lambda: A.split(WOLLASTON, 0.8, offset_mm=("1", "2")),
        r"offset_mm must be \(x, y\) entry points in mm, finite numbers, got text"),
    "Jones vector given as text": (
        lambda: A.transmission(WOLLASTON, 0.8, polarisation=("1", "0")),
        r"polarisation must be a Jones vector \(2 complex numbers on the last axis\) or "
        r"'unpolarised', got \('1', '0'\)"),
    "coincidence tolerance given as text": (
        lambda: A.extinction(WOLLASTON, 0.8, coincidence_deg="0.1"),
        "coincidence_deg must be a finite angle in degrees >= 0, not text"),
    "half range given as text": (
        lambda: A.field_of_view(GLAN, 0.6328, half_range_deg="10"),
        "half_range_deg must be an angle in degrees, not text"),
    "power fraction given as text": (
        lambda: A.power_at_least("ee", "0.5"),
        "fraction must be a power fraction between 0 and 1, not text"),
    # not a prism
    "split of a number": (lambda: A.split(5, 0.8), "prism " + NOT_A_PRISM + ".*got int 5"),
    "transmission of a number": (
        lambda: A.transmission(5, 0.8), "prism " + NOT_A_PRISM + ".*got int 5"),
    "extinction of a number": (
        lambda: A.extinction(5, 0.8), "prism " + NOT_A_PRISM + ".*got int 5"),
    "separation of a number": (
        lambda: A.separation(5, 0.8, 100), "prism " + NOT_A_PRISM + ".*got int 5"),
    "extinction against a nominal number": (
        lambda: A.extinction(WOLLASTON, 0.8, nominal=5), "nominal " + NOT_A_PRISM),
    "axis errors of a number": (
        lambda: A.perturb_axes(5, 1.0), "prism " + NOT_A_PRISM),
    "field of view of a number": (
        lambda: A.field_of_view(5, 0.6), "prism " + NOT_A_PRISM),
    # requirements that are not Requirement objects
    "field of view with requirements=5": (
        lambda: A.field_of_view(GLAN, 0.6328, requirements=5), REQUIREMENTS + ".*got 5"),
    "margins of a list of text": (
        lambda: A.requirement_margins(GLAN, 0.6328, 0, 0, ["x"]),
        REQUIREMENTS + r".*got \['x'\]"),
    "a requirement of an unknown kind": (
        lambda: A.Requirement("nope", "ee"), "Requirement kind must be one of passes, blocked"),
    # complex input
    "split at a complex wavelength": (
        lambda: A.split(WOLLASTON, 0.8 + 1j), WAVELENGTHS + r", got complex \(0.8\+1j\)"),
    "split at a complex angle": (
        lambda: A.split(WOLLASTON, 0.8, in_plane_deg=1j), IN_PLANE + ", got complex 1j"),
    # shapes
    "split at a ragged list of wavelengths": (
        lambda: A.split(WOLLASTON, [[0.8, 0.9], [1.0]]),
        WAVELENGTHS + r", got a ragged nested list \[\[0.8, 0.9\], \[1.0\]\]"),
    "split with wavelengths and angles that do not broadcast": (
        lambda: A.split(WOLLASTON, [0.8, 0.9], in_plane_deg=[0, 1, 2]),
        r"wavelength_um, in_plane_deg, out_of_plane_deg, offset_mm " + BROADCAST
        + r" wavelength_um \(2,\), in_plane_deg \(3,\)"),
    "transmission with Jones vectors that do not broadcast": (
        lambda: A.transmission(WOLLASTON, [0.8, 0.9], polarisation=[[1, 0], [0, 1], [1, 1]]),
        "polarisation " + BROADCAST + r".*polarisation \(3, 2\) \(last axis not broadcast\)"),
    "axis errors that do not broadcast": (
        lambda: A.perturb_axes(WOLLASTON, [1, 2], [1, 2, 3]),
        r"azimuth_error_deg, tilt_error_deg " + BROADCAST),
    "split at no wavelength at all": (
        lambda: A.split(WOLLASTON, []), WAVELENGTHS + r", got an empty array \[\]"),
    "split at a boolean wavelength": (
        lambda: A.split(WOLLASTON, True), WAVELENGTHS + ", got the boolean True"),
    # NaN where an integer count was derived
    "edge search towards a NaN angle": (
        lambda: A.find_edges(GLAN, 0.6328, A.default_requirements(GLAN), 0, NAN),
        r"outside_deg must be finite angles in degrees between -90 and 90 \(exclusive\), "
        r"got nan"),
    "edge search for a fractional requirement index": (
        lambda: A.find_edges(GLAN, 0.6328, A.default_requirements(GLAN), 0, 5, which=0.5),
        r"which must be integer indices from 0 to 1 into the requirements, or -1, got 0.5"),
    "field of view with a negative tolerance": (
        lambda: A.field_of_view(GLAN, 0.6328, tolerance_deg=-1),
        "tolerance_deg must be a positive number, got -1"),
    "field of view with refine=1": (
        lambda: A.field_of_view(GLAN, 0.6328, refine=1), "refine must be True or False, got 1"),
    "axis errors of a boolean piece": (
        lambda: A.perturb_axes(WOLLASTON, 1.0, piece=True),
        r"piece must be the index of a crystal piece \[0, 1\] or None, got True"),
    "split with main_labels=5": (
        lambda: A.split(WOLLASTON, 0.8, main_labels=5),
        r"main_labels must name at least 2 of the traced beams \['eo', 'oe'\], got 5"),
    # numpy reprs in messages
    "numpy scalar wavelength shown as a plain number": (
        lambda: A.split(WOLLASTON, np.float64(-1.0)), WAVELENGTHS + r", got -1.0$"),
    "0-d array angle shown as a plain number": (
        lambda: A.split(WOLLASTON, 0.8, in_plane_deg=np.array(95.0)), IN_PLANE + r", got 95.0$"),
    "numpy scalar extinction ratio shown as a plain number": (
        lambda: A.extinction_at_least("ee", "oo", np.float64(-1.0)),
        "extinction ratio must be a positive number, got -1.0$"),
    "large array shown by its shape": (
        lambda: A.split(WOLLASTON, np.r_[np.linspace(0.5, 0.9, 20), NAN]),
        WAVELENGTHS + r", got an array of shape \(21,\)$"),
}


@pytest.mark.parametrize("call, pattern", CASES.values(), ids=CASES.keys())
def test_bad_analysis_input_fails_in_one_line(call, pattern):
    one_line_error(call, pattern)


@pytest.mark.parametrize("analysis", [
    lambda offset: A.split(WOLLASTON, 0.8, offset_mm=offset).flags,
    lambda offset: A.separation(WOLLASTON, 0.8, 100.0, offset_mm=offset).flags,
    lambda offset: A.transmission(WOLLASTON, 0.8, offset_mm=offset).flags,
], ids=["split", "separation", "transmission"])
def test_rays_outside_the_clear_aperture_are_flagged(analysis):
    # An entry point 20 mm off axis misses the 10 mm clear aperture: the analysis still
    # reports numbers for it, so each beam must carry the flag that says they are not valid.
    flags = analysis([(0.0, 0.0), (20.0, 0.0)])
    assert flags
    for value in flags.values():
        assert value[0] & TraceFlag.OUTSIDE_APERTURE == 0
        assert value[1] & TraceFlag.OUTSIDE_APERTURE


# Interference and Jones/Mueller functions: the same one-line rules (reviewer findings).
@pytest.mark.parametrize("call, pattern", [
    (lambda A, w: A.optical_path_difference(w, 0.8, in_plane_deg=95), r"in_plane_deg .*-90 and 90"),
    (lambda A, w: A.optical_path_difference(w, 0.8, offset_mm=(100, 0)), r"clear aperture"),
    (lambda A, w: A.optical_path_difference(w, 0.8, plane_z_mm=float("nan")), r"plane_z_mm .*finite"),
    (lambda A, w: A.optical_path_difference(w, []), r"wavelength_um .*empty"),
    (lambda A, w: A.shear_mm(5, 0.8), r"prism must be a Prism"),
    (lambda A, w: A.shear_mm(w, [0.8, 0.9], in_plane_deg=[0, 1, 2]), r"must broadcast together"),
    (lambda A, w: A.fringe_localisation(w, 0.8, in_plane_deg=float("nan")), r"in_plane_deg"),
    (lambda A, w: A.small_angle_estimates(w, "0.8"), r"wavelength_um .*text"),
    (lambda A, w: A.main_beams(5), r"prism must be a Prism"),
    (lambda A, w: A.jones_matrices(w, "0.8"), r"wavelength_um .*text"),
    (lambda A, w: A.jones_matrices(w, 0.8, include_path_phase="x"), r"include_path_phase .*True or False"),
    (lambda A, w: A.stokes_from_jones("x"), r"jones must be complex numbers"),
    (lambda A, w: A.mueller_from_jones([[1, 0], [0, float("nan")]]), r"jones must be finite"),
])
def test_interference_and_jones_errors_are_one_line(call, pattern):
    import prismdesign as pd
    with pytest.raises(ValueError, match=pattern) as info:
        call(pd.analysis, pd.prisms.wollaston())
    assert "\n" not in str(info.value) and "np." not in str(info.value)
