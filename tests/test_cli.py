"""The command line as a user meets it: demo, JSON and CSV cases, flags, errors."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from ibl.cli import main

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "strut.json"


def test_demo_prints_summary_and_caution(capsys):
    assert main(["demo"]) == 0
    out = capsys.readouterr().out
    for text in ("[upper]", "[lower]", "transition", "separation", "first cell y+", "CAUTION"):
        assert text in out


def test_run_json_format_is_the_result_document(capsys):
    assert main(["run", str(EXAMPLE), "--format", "json"]) == 0
    result = json.loads(capsys.readouterr().out)
    assert {s["name"] for s in result["sides"]} == {"upper", "lower"}
    assert result["caution"]


def test_run_csv_with_reynolds_flag(tmp_path, capsys):
    case = json.loads(EXAMPLE.read_text())
    path = tmp_path / "taps.csv"
    with path.open("w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["x", "y", "cp"])
        writer.writerows(
            zip(case["surface"]["x"], case["surface"]["y"], case["pressure"]["cp"], strict=True)
        )
    assert main(["run", str(path), "--reynolds", "2e5", "--format", "json"]) == 0
    from_csv = json.loads(capsys.readouterr().out)
    case["flow"] = {"reynolds": 2e5}
    case.pop("name")
    path_json = tmp_path / "case.json"
    path_json.write_text(json.dumps(case))
    assert main(["run", str(path_json), "--format", "json"]) == 0
    from_json = json.loads(capsys.readouterr().out)
    assert from_csv["sides"] == from_json["sides"]


def test_flags_override_the_case(capsys):
    assert main(["run", str(EXAMPLE), "--criterion", "none", "--format", "json"]) == 0
    result = json.loads(capsys.readouterr().out)
    assert result["options"]["transition_criterion"] == "none"
    assert all(side["transition"] is None for side in result["sides"])


def test_csv_single_surface(tmp_path, capsys):
    path = tmp_path / "plate.csv"
    rows = ["s,edge_velocity"] + [f"{i / 100},{1.0}" for i in range(101)]
    path.write_text("\n".join(rows))
    assert main(["run", str(path), "--reynolds", "1e7", "--format", "json"]) == 0
    side = json.loads(capsys.readouterr().out)["sides"][0]
    assert side["name"] == "surface"
    assert side["transition"]["cause"] == "criterion"


@pytest.mark.parametrize(
    ("content", "message"),
    [
        ("a,b\n1,2\n", "header"),
        ("x,y,cp\n0,0,abc\n", "not a number"),
        ('{"surface": ', "malformed JSON"),
    ],
    ids=["bad-header", "bad-number", "bad-json"],
)
def test_bad_files_exit_2_with_a_reason(tmp_path, capsys, content, message):
    path = tmp_path / ("case.json" if content.startswith("{") else "taps.csv")
    path.write_text(content)
    assert main(["run", str(path), "--reynolds", "1e5"]) == 2
    assert message in capsys.readouterr().err


def test_missing_file(capsys):
    assert main(["run", "no-such-case.json"]) == 2
    assert "no such file" in capsys.readouterr().err


def test_invalid_case_names_the_field(tmp_path, capsys):
    case = json.loads(EXAMPLE.read_text())
    case["pressure"]["cp"][5] = 3.0
    path = tmp_path / "case.json"
    path.write_text(json.dumps(case))
    assert main(["run", str(path)]) == 2
    assert "/pressure/cp/5" in capsys.readouterr().err


def test_summary_flag_leaves_the_arrays_out(capsys):
    assert main(["run", str(EXAMPLE), "--format", "json"]) == 0
    full = json.loads(capsys.readouterr().out)
    assert main(["run", str(EXAMPLE), "--format", "json", "--summary"]) == 0
    summary = json.loads(capsys.readouterr().out)
    for side in full["sides"]:
        for name in ("s", "x", "y", "edge_velocity", "theta", "delta_star", "shape_factor"):
            del side[name]
        for name in ("cf", "re_theta", "delta99", "regime"):
            del side[name]
    assert summary == full


def test_text_summary_shows_drag(capsys):
    assert main(["run", str(EXAMPLE), "--summary"]) == 0
    out = capsys.readouterr().out
    assert "friction drag" in out and "Drag (D/q_inf L" in out and "profile" in out
    assert "CAUTION" in out


@pytest.mark.parametrize("flags", [["--format", "csv"], ["--plot", "figure.svg"]])
def test_summary_flag_with_a_station_output_exits_2(flags, capsys):
    assert main(["run", str(EXAMPLE), "--summary", *flags]) == 2
    assert "--summary" in capsys.readouterr().err


def test_case_output_is_overridden_for_the_table(tmp_path, capsys):
    case = json.loads(EXAMPLE.read_text())
    case["output"] = {"stations": False}
    path = tmp_path / "case.json"
    path.write_text(json.dumps(case))
    assert main(["run", str(path), "--format", "csv"]) == 0
    assert "shape_factor" in capsys.readouterr().out
