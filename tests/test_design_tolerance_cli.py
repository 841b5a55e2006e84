"""The 'tolerance' and 'fit-built' verbs: output, JSON, exit codes, one-line errors."""
import json

import numpy as np

from prismdesign.cli import main

PRISM = ["tolerance", "--type", "wollaston", "--crystal", "calcite", "--size", "15",
         "--lines", "0.6328", "--split-deg", "5.245", "--tolerance", "0.02", "--samples", "400"]
BASE = PRISM + ["--error", "face1_angle_deg", "uniform", "0.05"]


def test_tolerance_text_json_and_csv(capsys, tmp_path):
    table = tmp_path / "table.csv"
    assert main(BASE + ["--csv", str(table)]) == 0
    out = capsys.readouterr().out
    assert "face1_angle_deg" in out and "yield" in out and out.count("IEC 60825-1") == 1
    assert table.read_text().startswith("parameter,distribution,size")
    assert main(BASE + ["--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert 0 <= data["yield_fraction"] <= 1 and data["sensitivities"][0]["parameter"] == \
        "face1_angle_deg"


def test_output_names_are_checked_before_the_monte_carlo(capsys, tmp_path, monkeypatch):
    import prismdesign.cli_tolerance as verb

    def never(*args, **kwargs):
        raise AssertionError("the Monte Carlo ran before the output names were checked")

    monkeypatch.setattr(verb, "monte_carlo", never)
    monkeypatch.setattr(verb, "sensitivities", never)
    assert main(BASE + ["--csv", str(tmp_path / "nowhere" / "t.csv")]) == 2
    assert "does not exist" in capsys.readouterr().err
    (tmp_path / "plain").write_text("x", encoding="utf-8")
    assert main(BASE + ["--plots", str(tmp_path / "plain")]) == 2
    assert "need a folder" in capsys.readouterr().err


def test_tolerance_bad_input_exits_2(capsys):
    assert main(PRISM + ["--error", "face7_angle_deg", "uniform", "0.05"]) == 2
    err = capsys.readouterr().err
    assert "face7_angle_deg" in err and len(err.strip().splitlines()) == 1
    assert main(PRISM + ["--error", "face1_angle_deg", "wide", "0.05"]) == 2


def _bench_csv(tmp_path):
    """Splits of a Wollaston built with face 1 off by 0.04 deg, traced, as a bench CSV."""
    import prismdesign as pd
    from prismdesign.design import apply_errors
    prism = pd.prisms.wollaston("calcite", 15.0)
    built, _ = apply_errors(prism, {"face1_angle_deg": 0.04})
    lam = np.array([0.45, 0.6328, 0.98])
    split = pd.analysis.split(built, lam).split_deg
    path = tmp_path / "bench.csv"
    path.write_text("wavelength_um,split_deg\n" + "".join(f"{float(l)!r},{float(s)!r}\n"
                                                        for l, s in zip(lam, split)),
                    encoding="utf-8")
    return path


def test_fit_built_from_csv(capsys, tmp_path):
    path = _bench_csv(tmp_path)
    code = main(["fit-built", str(path), "--type", "wollaston", "--crystal", "calcite",
                 "--size", "15", "--fit", "face1_angle_deg", "--json"])
    assert code == 0
    data = json.loads(capsys.readouterr().out)
    assert abs(data["parameters"][0]["value"] - 0.04) < 1e-8
    assert main(["fit-built", str(tmp_path / "missing.csv"), "--type", "wollaston",
                 "--crystal", "calcite", "--size", "15", "--fit", "face1_angle_deg"]) == 2


def _refuse(token):
    raise ValueError(f"not JSON: {token}")


def test_json_has_no_nan_and_names_why_a_figure_is_null(capsys, tmp_path):
    # RFC 8259 (The JSON Data Interchange Format, 2017, §6) has no NaN or Infinity: undefined
    # figures are written as null and listed with a reason.
    path = _bench_csv(tmp_path)
    # The first wedge's axis polar angle moves no split to first order: its uncertainty and
    # correlations are undefined (see test_design_as_built.test_undetermined_parameter_is_named).
    code = main(["fit-built", str(path), "--type", "wollaston", "--crystal", "calcite",
                 "--size", "15", "--fit", "face1_angle_deg", "piece0_axis_polar_deg", "--json"])
    assert code == 0
    data = json.loads(capsys.readouterr().out, parse_constant=_refuse)
    assert data["parameters"][1]["uncertainty"] is None
    fields = {u["field"]: u["reason"] for u in data["undefined"]}
    assert "not determined" in fields["parameters[1].uncertainty"]
    assert data["correlation"][0][1] is None and "correlation[0][1]" in fields
    assert main(BASE + ["--json"]) == 0
    data = json.loads(capsys.readouterr().out, parse_constant=_refuse)
    assert isinstance(data["undefined"], list)


def test_json_writer_turns_every_non_finite_number_into_null_with_a_reason():
    from prismdesign.cli_tolerance import _json_dumps
    text = _json_dumps(dict(sensitivities=[dict(parameter="a", sensitivity=np.float64(np.nan))],
                            spread=np.array([1.0, np.inf]), count=np.int64(3)))
    data = json.loads(text, parse_constant=_refuse)
    assert data["sensitivities"][0]["sensitivity"] is None and data["spread"] == [1.0, None]
    assert data["count"] == 3
    assert [u["field"] for u in data["undefined"]] == ["sensitivities[0].sensitivity", "spread[1]"]
    assert "lost beam" in data["undefined"][0]["reason"]
