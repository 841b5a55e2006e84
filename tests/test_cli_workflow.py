"""The designer's workflow from the command line, end to end in a temporary folder.

requirement file -> ``design --save`` -> ``analyse`` (table, CSV, figures, JSON) ->
``tolerance --design`` -> ``fit-built --design`` -> ``report`` (self-contained HTML with every
user string escaped). Exit codes: 0 done, 2 bad input (one line on stderr), 1 internal failure.
"""
import csv
import json
import re
import shutil
from pathlib import Path

import pytest

import prismdesign as pd
from prismdesign.cli import build_parser, main
from prismdesign.design.design_file import load_design, save_design

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


@pytest.fixture
def folder(tmp_path, monkeypatch):
    for item in EXAMPLES.glob("*.toml"):
        shutil.copy(item, tmp_path / item.name)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_requirement_to_report(folder, capsys):
    code, out, err = _run(capsys, "design", "imager_split.requirement.toml", "--save",
                          "mine.design.toml", "--title", "Bench <splitter> & co")
    assert code == 0, err
    assert "wrote mine.design.toml (rank 1)" in out and "IEC 60825-1" in out
    saved = load_design(folder / "mine.design.toml")
    assert saved.solved["prism_type"] == "wollaston" and saved.title == "Bench <splitter> & co"
    # The saved prism is the ranked design: its analysis meets the requirement.
    code, out, err = _run(capsys, "analyse", "mine.design.toml", "--json", "--csv", "band.csv",
                          "--figures", "figs")
    assert code == 0, err
    data = json.loads(out)
    assert data["meets"] is True and len(data["table"]) == 7
    with open("band.csv", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert [float(r["split_deg"]) for r in rows] == [r["split_deg"] for r in data["table"]]
    assert (folder / "figs" / "side_view.png").stat().st_size > 10000
    assert (folder / "figs" / "band.png").stat().st_size > 10000
    # Plain text too, with every margin.
    code, out, err = _run(capsys, "analyse", "mine.design.toml")
    assert code == 0 and "met    split" in out and "meets every requirement" in out


def test_analyse_numbers_equal_the_library(folder, capsys):
    """The CLI is a thin shell: its JSON equals the figures of the library's own merit trace."""
    code, out, _ = _run(capsys, "analyse", "imager_split.design.toml", "--json")
    assert code == 0
    design = load_design(folder / "imager_split.design.toml")
    figs = pd.design.assess(design.build(), design.requirement).figures
    assert [r["split_deg"] for r in json.loads(out)["table"]] == figs.split_deg[:, 0].tolist()


def test_tolerance_and_fit_built_from_the_design_file(folder, capsys):
    code, out, err = _run(capsys, "tolerance", "--design", "imager_split.design.toml",
                          "--samples", "300", "--json", "--csv", "tol.csv")
    assert code == 0, err
    data = json.loads(out)
    assert [t["parameter"] for t in data["tolerances"]] == [
        "face1_angle_deg", "face2_angle_deg", "piece0_axis_azimuth_deg",
        "piece1_axis_azimuth_deg"]
    assert 0.0 <= data["yield_fraction"] <= 1.0 and (folder / "tol.csv").exists()
    # Measurements of the nominal prism itself: the fitted face error is ~0.
    design = load_design(folder / "imager_split.design.toml")
    split = pd.analysis.split(design.build(), [0.5, 0.55, 0.6, 0.65]).split_deg
    lines = ["wavelength_um,split_deg"] + [f"{w},{float(s)!r}" for w, s in
                                          zip([0.5, 0.55, 0.6, 0.65], split)]
    (folder / "bench.csv").write_text("\n".join(lines) + "\n")
    code, out, err = _run(capsys, "fit-built", "bench.csv", "--design",
                          "imager_split.design.toml", "--fit", "face1_angle_deg", "--json",
                          "--csv", "fit.csv")
    assert code == 0, err
    fitted = json.loads(out)["parameters"][0]
    assert abs(fitted["value"]) < 1e-6
    with open("fit.csv", newline="") as handle:
        assert next(csv.DictReader(handle))["parameter"] == "face1_angle_deg"


HOSTILE_TITLE = "<script>alert('t')</script> & Sons"
HOSTILE_NOTES = 'Ship to "R&D" <b>bold</b> <img src=x onerror=alert(1)>'


def test_report_escapes_every_user_string(folder, capsys):
    design = load_design(folder / "imager_split.design.toml")
    shutil.copy(Path(pd.__file__).resolve().parent.parent / "dispersion_data" / "calcite.toml",
                folder / "cal<&>.toml")
    hostile = type(design)(design.prism, requirement=design.requirement,
                           tolerances=design.tolerances, title=HOSTILE_TITLE,
                           notes=HOSTILE_NOTES, materials={"x<y>&z": "cal<&>.toml"},
                           solved=dict(design.solved, message="done <i>&</i>"))
    save_design(hostile, folder / "hostile.design.toml")
    code, out, err = _run(capsys, "report", "hostile.design.toml", "--out", "report.html",
                          "--samples", "200")
    assert code == 0, err
    assert "Monte Carlo [" not in err          # no progress bar when stderr is not a terminal
    text = (folder / "report.html").read_text(encoding="utf-8")
    for raw in ("<script", "<b>bold", "<img src=x", "<i>&", "onerror=alert(1)>", "x<y>", "cal<&>"):
        assert raw not in text, raw
    assert "&lt;script&gt;alert(&#x27;t&#x27;)&lt;/script&gt; &amp; Sons" in text
    assert "x&lt;y&gt;&amp;z" in text and "&quot;R&amp;D&quot;" in text
    # Every ampersand starts an entity; the page loads nothing from outside itself.
    assert not re.search(r"&(?!(amp|lt|gt|quot|#x27|#\d+);)", text)
    assert not re.search(r"""(src|href)=["'](?!data:)""", text)
    assert text.count("data:image/png;base64,") == 4   # side view, band, tornado, histogram
    for heading in ("Requirement and what the design achieves", "Tolerances and yield",
                    "Data sources", "Caution", "Yield:", "Ghosh", "IEC 60825-1"):
        assert heading in text, heading


def test_report_without_tolerances_says_so(folder, capsys):
    design = load_design(folder / "imager_split.design.toml")
    save_design(type(design)(design.prism, requirement=design.requirement),
                folder / "bare.design.toml")
    code, _, err = _run(capsys, "report", "bare.design.toml", "--out", "bare.html")
    assert code == 0, err
    text = (folder / "bare.html").read_text(encoding="utf-8")
    assert "lists no tolerances" in text and text.count("data:image/png;base64,") == 2


@pytest.mark.parametrize("argv, words", [
    (["analyse", "missing.design.toml"], ["missing.design.toml"]),
    (["analyse", "imager_split.requirement.toml"], ["no [prism] table"]),
    (["analyse", "imager_split.design.toml", "--csv", "nowhere/x.csv"], ["does not exist"]),
    (["report", "imager_split.design.toml", "--out", "report.pdf"], [".html"]),
    (["report", "imager_split.design.toml", "--out", "r.html", "--samples", "0"],
     ["--samples"]),
    (["design", "imager_split.requirement.toml", "--save", "x.toml", "--rank", "99"],
     ["--rank 99"]),
    (["design", "imager_split.requirement.toml", "--save", "nowhere/x.toml"],
     ["does not exist"]),
    (["tolerance", "--design", "imager_split.design.toml", "--crystal", "quartz"],
     ["--crystal"]),
    (["tolerance", "--lines", "0.6", "--split-deg", "4", "--error", "face1_angle_deg",
      "uniform", "0.05"], ["--design"]),
])
def test_bad_input_is_exit_2_and_one_line(folder, capsys, argv, words):
    code, out, err = _run(capsys, *argv)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "error:" in err
    for word in words:
        assert word in err, (word, err)


def test_bad_key_in_design_file_names_it(folder, capsys):
    text = (folder / "imager_split.design.toml").read_text().replace(
        "coated = true\n", "coated = true\nshiny = true\n", 1)
    (folder / "bad.design.toml").write_text(text)
    code, _, err = _run(capsys, "analyse", "bad.design.toml")
    assert code == 2 and "shiny" in err and "allowed keys" in err and err.count("\n") == 1


def test_internal_failure_is_exit_1(folder, capsys, monkeypatch):
    from prismdesign.output import design_analysis

    def broken(*args, **kwargs):
        raise RuntimeError("simulated bug")

    monkeypatch.setattr(design_analysis, "analyse_design", broken)
    code, _, err = _run(capsys, "analyse", "imager_split.design.toml")
    assert code == 1 and "internal error" in err and err.count("\n") == 1


@pytest.mark.parametrize("verb", ["materials", "index", "demo", "design", "analyse", "report",
                                  "tolerance", "fit-built"])
def test_help_has_an_example(verb, capsys):
    with pytest.raises(SystemExit) as stop:
        build_parser().parse_args([verb, "--help"])
    assert stop.value.code == 0
    out = capsys.readouterr().out
    assert "examples:" in out and f"prismdesign {verb} " in out


def test_polariser_analysis_reports_the_worst_leakage_in_the_field(folder, capsys):
    (folder / "glan.design.toml").write_text('''schema = 1
[prism]
type = "glan_air_spaced"
material = "calcite"
cut_angle_deg = 39.5
width_mm = 6.0
height_mm = 6.0
[requirement]
band_um = [0.45, 0.70]
band_points = 3
polariser = true
field_half_angle_deg = 1.0
max_leakage = 1e-4
aperture_mm = 6.0
''')
    code, out, err = _run(capsys, "analyse", "glan.design.toml", "--json")
    assert code == 0, err
    rows = json.loads(out)["table"]
    design = load_design(folder / "glan.design.toml")
    figs = pd.design.assess(design.build(), design.requirement).figures
    assert [r["field_leakage"] for r in rows] == figs.leakage.max(axis=1).tolist()
    assert all(r["split_deg"] is None for r in rows)      # a polariser has one beam
    code, out, _ = _run(capsys, "analyse", "glan.design.toml")
    assert "leakage, worst in field" in out and "split" not in out.split("\n\n")[1]


def test_a_material_file_works_where_a_crystal_name_does(folder, capsys):
    """--crystal takes a user's dispersion-data file: here the bundled calcite data under our
    own name, so the sensitivities must equal those of the library's calcite."""
    text = (Path(pd.__file__).resolve().parent.parent / "dispersion_data" /
            "calcite.toml").read_text(encoding="utf-8")
    text = text.replace('name = "calcite"', 'name = "bench_calcite"', 1)
    text = "\n".join(ln for ln in text.splitlines() if not ln.startswith("aliases"))
    (folder / "bench_calcite.toml").write_text(text + "\n", encoding="utf-8")
    results = []
    for crystal in ("calcite", "bench_calcite.toml"):
        code, out, err = _run(capsys, "tolerance", "--type", "wollaston", "--crystal", crystal,
                              "--size", "12", "--lines", "0.6328", "--split-deg", "4.2",
                              "--tolerance", "0.1", "--error", "face1_angle_deg", "uniform",
                              "0.05", "--samples", "50", "--json")
        assert code == 0, err
        results.append(json.loads(out)["sensitivities"])
    assert results[0] == results[1]
    code, _, err = _run(capsys, "tolerance", "--type", "wollaston", "--crystal", "gone.toml",
                        "--size", "12", "--lines", "0.6328", "--split-deg", "4.2",
                        "--error", "face1_angle_deg", "uniform", "0.05")
    assert code == 2 and "gone.toml" in err


def test_sheet_verb_draws_the_design_with_its_own_numbers(tmp_path, capsys):
    """The sheet written from the example design file states the design's wedge angle and
    length (as text in the SVG) and the tolerance the file gives for the interface angle."""
    import xml.etree.ElementTree as ET
    from pathlib import Path

    from prismdesign.cli import main as cli_main
    from prismdesign.design import load_design
    from prismdesign.output.fabrication_data import fabrication_data

    example = Path(__file__).resolve().parent.parent / "examples" / "imager_split.design.toml"
    out = tmp_path / "sheet.svg"
    assert cli_main(["sheet", str(example), "--out", str(out)]) == 0
    assert "wrote" in capsys.readouterr().out
    design = load_design(example)
    prism = design.build()
    data = fabrication_data(prism, design.tolerances)
    wedge = float(prism.parameters["wedge_angle_deg"])
    texts = " ".join("".join(e.itertext()) for e in ET.parse(out).getroot().iter()
                     if e.tag.endswith("text"))
    assert f"{wedge:.3f}°" in texts
    assert f"{prism.length_mm:.3f} mm" in texts
    assert data.pieces[0].material.startswith("calcite")
