"""Every subcommand through the installed console script ``blownwing``, as a user runs it.

Each command runs once, as a subprocess of the ``blownwing`` script installed beside this Python
(``Path(sys.executable).with_name("blownwing")``); they run two at a time (this machine's two
cores) from a module fixture, and each test checks one: the exit code, the files written, and
one figure in them against the same study run here in-process. Bad input (exit 2) and a case that
cannot converge (exit 3) go through the script too. The many bad-input cases, in-process:
tests/test_cli.py.
"""
import json
import os
import re
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path
from subprocess import run

import pytest

import mdao

BLOWNWING = Path(sys.executable).with_name("blownwing")
CASES = Path(__file__).resolve().parents[1] / "cases"
SURVEY = CASES / "survey-drone.toml"
RUNS_CSV = CASES / "data" / "demo_runs.csv"
SUBCOMMANDS = ("optimize", "evaluate", "calibrate", "review", "many", "duct")
COASTAL = CASES / "coastal-patrol.toml"

pytestmark = pytest.mark.skipif(
    not BLOWNWING.exists(),
    reason=f"console script {BLOWNWING} not installed (pip install -e . puts it beside "
           "sys.executable)")


def _swap(old, new):
    text = SURVEY.read_text()
    assert text.count(old) == 1, old
    return text.replace(old, new)


BAD_CASES = {
    "wrong unit": (_swap('chord = "0.42 m"', 'chord = "0.42 s"'), "wing.chord"),
    "unknown key": (_swap("[wing]\n", '[wing]\nsweep = "3 deg"\n'), "wing.sweep"),
}
NOT_CONVERGING = _swap('objective = "mission-energy"',
                       'objective = "mission-energy"\nmax_iterations = 1')

# name: (arguments, output folder or None); the slowest first, so that the pool of two ends early
COMMANDS = {
    "review": (["review", str(SURVEY), "--samples", "50", "--no-plots"], "review"),
    "optimize": (["optimize", str(SURVEY)], "optimize"),
    "evaluate": (["evaluate", str(SURVEY)], "evaluate"),
    "many": (["many", str(SURVEY), "--kind", "multistart", "--samples", "2"], "many"),
    "not converging": (["optimize", "not-converging.toml"], "nc"),
    "calibrate": (["calibrate", str(RUNS_CSV), "--no-plots"], "calibrate"),
    "duct": (["duct", str(COASTAL), "--start"], "duct"),
    **{f"bad: {label}": (["optimize", f"bad-{i}.toml"], f"bad-{i}")
       for i, label in enumerate(BAD_CASES)},
    "version": (["--version"], None),
    "python -m mdao": (["--version"], None),
    **{f"help {sub}": ([sub, "--help"], None) for sub in ("",) + SUBCOMMANDS},
}


@pytest.fixture(scope="module")
def ran(tmp_path_factory):
    """``ran(name)`` -> (completed process, output folder or None): every command is queued at
    once on a pool of two; a test waits only for its own."""
    work = tmp_path_factory.mktemp("commands")
    (work / "not-converging.toml").write_text(NOT_CONVERGING)
    for i, (text, _) in enumerate(BAD_CASES.values()):
        (work / f"bad-{i}.toml").write_text(text)
    env = dict(os.environ, OPENMDAO_REPORTS="0", OPENMDAO_WORKDIR=str(work), MPLBACKEND="Agg")

    def one(name, args, out):
        extra = ["--out", str(work / out)] if out else []
        script = [sys.executable, "-m", "mdao"] if name == "python -m mdao" else [str(BLOWNWING)]
        argv = script + [a for a in args if a] + extra
        return run(argv, capture_output=True, text=True, cwd=work, env=env, timeout=300), \
            (work / out if out else None)

    with ThreadPoolExecutor(max_workers=2) as pool:
        futures = {name: pool.submit(one, name, *spec) for name, spec in COMMANDS.items()}
        yield lambda name: futures[name].result()


@pytest.fixture(scope="module")
def survey_optimum():
    """The survey case optimized in-process."""
    from mdao.case import load_case
    from mdao.optimum import optimize

    return optimize(load_case(SURVEY))


def _ok(done):
    assert done.returncode == 0, done.stderr
    assert "Traceback" not in done.stderr


def test_optimize(ran, survey_optimum):
    done, out = ran("optimize")
    _ok(done)
    assert "optimum" in done.stdout and "mission energy saved" in done.stdout
    data = json.loads((out / "results.json").read_text())
    assert data["converged"] is True and data["version"] == mdao.__version__
    # the same optimum as in-process (rounding only: the script's BLAS may use other threads)
    assert data["mission_energy_saving_J"] == pytest.approx(
        survey_optimum.mission_energy_saving_J, rel=1e-9)
    assert data["slot_ratio"] == pytest.approx(survey_optimum.slot_ratio, rel=1e-6)


def test_evaluate(ran):
    from mdao.case import load_case
    from mdao.optimum import evaluate_start_point

    done, out = ran("evaluate")
    _ok(done)
    assert "start point (not optimized)" in done.stdout
    data = json.loads((out / "results.json").read_text())
    start = evaluate_start_point(load_case(SURVEY))
    assert data["mission_energy_saving_J"] == pytest.approx(start.mission_energy_saving_J,
                                                            rel=1e-12)
    assert data["slot_ratio"] == start.slot_ratio


def test_calibrate(ran):
    from mdao.studies.calibration import calibrate, read_runs

    done, out = ran("calibrate")
    _ok(done)
    assert {p.name for p in out.iterdir()} == {"calibration.json", "calibration.toml"}  # no PNG
    data = json.loads((out / "calibration.json").read_text())
    here = calibrate(read_runs(RUNS_CSV))
    for key in ("duct.jet_loss_factor", "airfoil.drag_per_momentum"):
        assert data["constants"][key]["value"] == pytest.approx(here["constants"][key]["value"],
                                                                rel=1e-12)
    assert "duct.jet_loss_factor" in done.stdout


def test_review(ran, survey_optimum):
    done, out = ran("review")
    _ok(done)
    assert {p.name for p in out.iterdir()} == {"review.json", "review.md"}       # --no-plots
    data = json.loads((out / "review.json").read_text())
    assert data["converged"] is True
    assert data["uncertainty"]["samples"] == 50
    assert data["optimum"]["mission_energy_saving_J"] == pytest.approx(
        survey_optimum.mission_energy_saving_J, rel=1e-9)
    assert "probability of saving" in done.stdout


def test_many_multistart(ran, survey_optimum):
    done, out = ran("many")
    _ok(done)
    data = json.loads((out / "many.json").read_text())
    assert data["kind"] == "multistart" and data["samples"] == 2 and data["workers"] is None
    assert [r["index"] for r in data["results"]] == [0, 1]
    assert data["summary"]["converged"] >= 1
    # random starts may stop at other local optima of the energy-limited problem; none beats
    # the optimum from the default (grid-chosen) start on these seeds
    for r in data["results"]:
        if r["converged"]:
            assert r["mission_energy_saving_J"] <= \
                survey_optimum.mission_energy_saving_J * (1 + 1e-7)


@pytest.mark.parametrize("label", list(BAD_CASES))
def test_bad_case_exits_2(ran, label):
    done, out = ran(f"bad: {label}")
    assert done.returncode == 2
    assert BAD_CASES[label][1] in done.stderr, done.stderr
    assert "Traceback" not in done.stderr
    assert done.stdout == ""
    assert not out.exists()


def test_not_converged_exits_3(ran):
    done, out = ran("not converging")
    assert done.returncode == 3, done.stderr
    assert "NOT CONVERGED" in done.stderr and "Traceback" not in done.stderr
    assert "optimum" not in done.stdout and "mission energy saved" not in done.stdout
    assert json.loads((out / "results.json").read_text())["converged"] is False


def test_duct(ran):
    """``duct --start`` on the geometric case: the stations, the section loops and the figure,
    the stations those of the start point's duct (mdao.physics.chain.duct_stations)."""
    from mdao.case import load_case
    from mdao.optimum import evaluate_start_point
    from mdao.studies.duct_export import duct_data

    done, out = ran("duct")
    _ok(done)
    assert {p.name for p in out.iterdir()} == {"transition.csv", "sections.csv", "duct.png"}
    rows = [r.split(",") for r in (out / "transition.csv").read_text().splitlines()
            if not r.startswith("#")]
    case = load_case(COASTAL)
    here = duct_data(case, evaluate_start_point(case), "start point")
    assert len(rows) == 1 + len(here["x_m"])
    area = [float(r[rows[0].index("area [m^2]")]) for r in rows[1:]]
    assert area == pytest.approx(here["area_m2"], rel=1e-11)


def test_version(ran):
    from importlib.metadata import version

    done, _ = ran("version")
    _ok(done)
    assert done.stdout.strip() == f"blownwing {mdao.__version__}" == f"blownwing {version('blownwing')}"


def test_python_dash_m(ran):
    """``python -m mdao`` is the same command line."""
    done, _ = ran("python -m mdao")
    _ok(done)
    assert done.stdout.strip() == f"blownwing {mdao.__version__}"


@pytest.mark.parametrize("sub", ("",) + SUBCOMMANDS)
def test_help(ran, sub):
    done, _ = ran(f"help {sub}")
    _ok(done)
    assert done.stdout.startswith(f"usage: blownwing {sub}".rstrip())
    if sub:
        assert "--out" in done.stdout
    else:   # every subcommand the script offers is one this file runs
        offered = re.search(r"\{([a-z,]+)\}", done.stdout).group(1).split(",")
        assert sorted(offered) == sorted(SUBCOMMANDS)
