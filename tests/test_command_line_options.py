"""The command line's own options: the JSON document on stdout, OpenMDAO's N2 diagram and case
recorder, quiet runs, the review's seed, one default output folder convention and help for every
option."""
import argparse
import base64
import json
import zlib
from pathlib import Path

import pytest

from mdao.cli import _parser, main

CASES = Path(__file__).resolve().parents[1] / "cases"
SURVEY = str(CASES / "survey-drone.toml")


def _n2_model(path):
    """The model data OpenMDAO's N2 page embeds (zlib-compressed JSON in base64)."""
    text = Path(path).read_text(encoding="utf-8")
    start = text.index('var compressedModel = "') + len('var compressedModel = "')
    blob = text[start:text.index('"', start)]
    return json.loads(zlib.decompress(base64.b64decode(blob)).decode("utf-8"))


def _names(tree):
    """Every subsystem name in the N2 model tree."""
    names = {tree.get("name")}
    for child in tree.get("children", []) or []:
        names |= _names(child)
    return names


def test_json_on_stdout_equals_results_json(tmp_path, capsys):
    assert main(["optimize", SURVEY, "--out", str(tmp_path / "o"), "--json"]) == 0
    out = capsys.readouterr().out
    document = json.loads(out)                       # stdout is the document, nothing else
    written = (tmp_path / "o" / "results.json").read_text(encoding="utf-8")
    assert out == written
    assert document == json.loads(written)
    assert document["converged"] is True


def test_n2_and_record_from_the_command_line(tmp_path, capsys):
    import openmdao.api as om
    n2 = tmp_path / "model.html"
    record = tmp_path / "iterations.sql"
    assert main(["optimize", SURVEY, "--out", str(tmp_path / "o"), "--n2", str(n2),
                 "--record", str(record)]) == 0
    said = capsys.readouterr().out
    assert f"wrote {n2}" in said and f"wrote {record}" in said
    names = _names(_n2_model(n2)["tree"])
    assert {"wing", "chain", "pressure_balance"} <= names
    results = json.loads((tmp_path / "o" / "results.json").read_text(encoding="utf-8"))
    reader = om.CaseReader(str(record))
    cases = reader.list_cases("driver", out_stream=None)
    assert len(cases) >= results["iterations"] >= 1       # at least one per iteration
    last = reader.get_case(cases[-1])
    assert "mission_energy_saving" in last.get_objectives()
    assert {"slot_ratio", "momentum_coefficient"} <= set(last.get_design_vars())
    assert not [p.name for p in tmp_path.iterdir() if p.name.startswith(".")]   # no temporaries


def test_evaluate_writes_an_n2_too(tmp_path, capsys):
    n2 = tmp_path / "start.html"
    assert main(["evaluate", SURVEY, "--out", str(tmp_path / "e"), "--n2", str(n2)]) == 0
    assert "chain" in _names(_n2_model(n2)["tree"])


@pytest.mark.parametrize("option", ["--n2", "--record"])
def test_a_file_option_in_a_missing_folder_is_refused_first(tmp_path, capsys, option):
    target = tmp_path / "nowhere" / "file"
    assert main(["optimize", SURVEY, "--out", str(tmp_path / "o"), option, str(target)]) == 2
    err = capsys.readouterr().err
    assert option in err and "does not exist" in err
    assert not (tmp_path / "o").exists()             # refused before anything was computed


def test_quiet_prints_nothing_and_writes_the_files(tmp_path, capsys):
    assert main(["optimize", SURVEY, "--out", str(tmp_path / "o"), "--quiet"]) == 0
    captured = capsys.readouterr()
    assert captured.out == "" and captured.err == ""
    assert (tmp_path / "o" / "results.json").is_file()


def test_default_output_folder_is_named_after_the_command(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert main(["optimize", SURVEY, "--quiet"]) == 0
    assert (tmp_path / "optimize" / "results.json").is_file()
    sub = next(a for a in _parser()._actions if isinstance(a, argparse._SubParsersAction))
    for command, parser in sub.choices.items():
        out = next(a for a in parser._actions if a.dest == "out")
        assert out.default == command


def test_every_option_has_help():
    sub = next(a for a in _parser()._actions if isinstance(a, argparse._SubParsersAction))
    for command, parser in sub.choices.items():
        for action in parser._actions:
            assert action.help and action.help != argparse.SUPPRESS, (command, action.dest)


def test_review_seed_reaches_the_monte_carlo(tmp_path, capsys):
    assert main(["review", SURVEY, "--out", str(tmp_path / "r"), "--samples", "10",
                 "--no-plots", "--seed", "7", "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert document["uncertainty"]["seed"] == 7
    history = document["optimization_history"]          # the recorder read back
    assert history["cases"] >= document["optimum"]["iterations"] >= 1
    assert history["worst_violation"][-1] < 1e-6
    assert main(["review", SURVEY, "--out", str(tmp_path / "r"), "--seed", "-1"]) == 2
    assert "--seed" in capsys.readouterr().err
