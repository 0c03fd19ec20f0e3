"""Outputs and refusals of the command line: a bad ``--out`` or option is refused (exit 2) before
any computation and writes nothing; a run's files are written as a set (a folder never mixes two
runs; a killed run leaves the previous set or nothing new, never a 0-byte or partial file); file
modes follow the umask; a bug is one line and exit 4 (``--debug``: the traceback); text from the
user is escaped and bounded."""
import json
import os
import signal
import socket
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pytest

from mdao.cli import commands, main
from mdao.files import COMPLETE, MESSAGE_LIMIT, OutputError, OutputSet, safe_text, write_atomic

CASES = Path(__file__).resolve().parent.parent / "cases"
SURVEY = CASES / "survey-drone.toml"
COASTAL = CASES / "coastal-patrol.toml"
RUNS_CSV = CASES / "data" / "demo_runs.csv"
CALIBRATION_SET = ["calibration.json", "calibration.toml", "drag_momentum.png",
                   "duct_collapse.png", "residuals.png"]


def _tree(folder):
    """Every path under ``folder`` (hidden ones too), relative, sorted."""
    return sorted(str(p.relative_to(folder)) for p in Path(folder).rglob("*"))


def _refused(capsys, argv, *words):
    """Run ``argv`` in-process: exit 2, every word in one bounded stderr message, no traceback."""
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert len(err) < MESSAGE_LIMIT + 200
    for w in words:
        assert w in err, err
    return err


# --- bad --out: refused before any computation, nothing written ---------------------------------
def _bad_out(kind, tmp_path):
    if kind == "existing file":
        (tmp_path / "taken").write_text("mine\n")
        return str(tmp_path / "taken")
    if kind == "file as a parent":
        (tmp_path / "taken").write_text("mine\n")
        return str(tmp_path / "taken" / "out")
    if kind == "name too long":
        return str(tmp_path / ("n" * 300))
    if kind == "path too long":
        return str(tmp_path.joinpath(*["deep"] * 1200))
    if kind == "NUL byte":
        return str(tmp_path / "a\0b")
    if kind == "read-only folder":
        if os.geteuid() == 0:       # root writes through modes: a read-only file system instead
            if not os.path.isdir("/sys") or _writable("/sys"):
                pytest.skip("no read-only folder for root here")
            return "/sys/blownwing-out"
        ro = tmp_path / "ro"
        ro.mkdir()
        ro.chmod(0o555)
        return str(ro / "out")
    raise KeyError(kind)


def _writable(folder):
    try:
        os.rmdir(tempfile.mkdtemp(dir=folder))
        return True
    except OSError:
        return False


BAD_OUT = ("existing file", "file as a parent", "name too long", "path too long", "NUL byte",
           "read-only folder")


@pytest.mark.parametrize("kind", BAD_OUT)
def test_bad_out_is_refused_first(kind, tmp_path, capsys, monkeypatch):
    out = _bad_out(kind, tmp_path)
    before = _tree(tmp_path)
    # the case is never loaded: a refusal comes before any computation
    monkeypatch.setattr("mdao.case.load_case", lambda *a: pytest.fail("case loaded"))
    _refused(capsys, ["optimize", str(SURVEY), "--out", out], "--out")
    assert _tree(tmp_path) == before


@pytest.mark.parametrize("argv", [
    ["evaluate", str(SURVEY)], ["review", str(SURVEY), "--samples", "20"],
    ["many", str(SURVEY), "--kind", "multistart", "--samples", "2"],
    ["calibrate", str(RUNS_CSV)], ["duct", str(COASTAL), "--start"]],
    ids=lambda a: a[0])
def test_every_command_checks_out_first(argv, tmp_path, capsys):
    (tmp_path / "taken").write_text("mine\n")
    started = time.perf_counter()
    _refused(capsys, argv + ["--out", str(tmp_path / "taken")], "--out", "not a folder")
    assert time.perf_counter() - started < 2.0
    assert _tree(tmp_path) == ["taken"] and (tmp_path / "taken").read_text() == "mine\n"


# --- bad options --------------------------------------------------------------------------------
@pytest.mark.parametrize("argv, words", [
    (["many", str(SURVEY), "--kind", "multistart", "--samples", "-3"], ["--samples", "-3"]),
    (["many", str(SURVEY), "--kind", "monte-carlo", "--samples", "0"], ["--samples"]),
    (["many", str(SURVEY), "--kind", "multistart", "--workers", "0"], ["--workers"]),
    (["many", str(SURVEY), "--kind", "multistart", "--seed", "-1"], ["--seed"]),
    (["review", str(SURVEY), "--samples", "0"], ["--samples", ">= 10"]),
    (["review", str(SURVEY), "--workers", "-2"], ["--workers"]),
    (["many", str(SURVEY), "--kind", "multistart", "--scheduler", "no-port"], ["--scheduler"]),
    (["review", str(SURVEY), "--scheduler", "udp://127.0.0.1:9"], ["--scheduler"]),
], ids=["many samples -3", "many samples 0", "many workers 0", "many seed -1",
        "review samples 0", "review workers -2", "scheduler no port", "scheduler udp"])
def test_bad_option_exits_2_writing_nothing(argv, words, tmp_path, capsys, monkeypatch):
    monkeypatch.setattr("mdao.case.load_case", lambda *a: pytest.fail("case loaded"))
    _refused(capsys, argv + ["--out", str(tmp_path / "o")], *words)
    assert _tree(tmp_path) == []


def test_unreachable_scheduler_is_refused_quickly(tmp_path, capsys, monkeypatch):
    """A closed port, and a port that accepts but never speaks (a proxy, another program)."""
    with socket.socket() as probe:            # a free port, closed again: nobody listens
        probe.bind(("127.0.0.1", 0))
        closed = probe.getsockname()[1]
    monkeypatch.setattr(commands, "SCHEDULER_TIMEOUT", 0.5)
    with socket.socket() as silent:
        silent.bind(("127.0.0.1", 0))
        silent.listen()
        for port in (closed, silent.getsockname()[1]):
            started = time.perf_counter()
            _refused(capsys, ["many", str(SURVEY), "--kind", "multistart", "--scheduler",
                              f"tcp://127.0.0.1:{port}", "--out", str(tmp_path / "o")],
                     "--scheduler", f"127.0.0.1:{port}")
            assert time.perf_counter() - started < 2.0
    assert _tree(tmp_path) == []


def test_every_option_has_help():
    from mdao.cli import _parser

    parser = _parser()
    subs = next(a for a in parser._actions if a.dest == "command").choices
    for name, sub in subs.items():
        for action in sub._actions:
            assert action.help, f"{name} {action.option_strings or action.dest}: no help text"


# --- internal errors ----------------------------------------------------------------------------
def test_internal_error_is_one_line_and_exit_4(monkeypatch, capsys):
    def broken(args):
        raise RuntimeError("the gearbox \x1b[2J fell off")

    monkeypatch.setitem(commands.COMMANDS, "optimize", broken)
    assert main(["optimize", str(SURVEY)]) == 4
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert "internal error" in err and "RuntimeError" in err and "--debug" in err
    assert "\x1b" not in err and "\\x1b[2J" in err
    with pytest.raises(RuntimeError, match="gearbox"):
        main(["optimize", str(SURVEY), "--debug"])


def test_debug_traceback_through_the_script(tmp_path):
    """``python -m mdao ... --debug`` on a bug prints the traceback; without it one line."""
    code = ("import sys, mdao.cli.commands as c\n"
            "def broken(a): raise ZeroDivisionError('deliberate')\n"
            "c.COMMANDS['evaluate'] = broken\n"
            "from mdao.cli import main\n"
            "sys.exit(main(sys.argv[1:]))\n")
    env = dict(os.environ, OPENMDAO_REPORTS="0")
    plain = subprocess.run([sys.executable, "-c", code, "evaluate", str(SURVEY)],
                           capture_output=True, text=True, env=env, timeout=120)
    debug = subprocess.run([sys.executable, "-c", code, "evaluate", str(SURVEY), "--debug"],
                           capture_output=True, text=True, env=env, timeout=120)
    assert plain.returncode == 4 and "Traceback" not in plain.stderr
    assert debug.returncode == 1 and "Traceback" in debug.stderr and "deliberate" in debug.stderr


def test_model_value_error_is_exit_2(monkeypatch, capsys):
    def cannot(case):
        raise ValueError("fan map evaluated outside its range")

    monkeypatch.setattr("mdao.optimum.evaluate_start_point", cannot)
    err = _refused(capsys, ["evaluate", str(SURVEY)], "model error", "outside its range")
    assert err.count("\n") == 1


# --- text from the user -------------------------------------------------------------------------
def test_safe_text():
    assert safe_text("a\x1b[31mb\r\n\x00\u202e") == "a\\x1b[31mb\\r\n\\x00\\u202e"
    assert safe_text("a\nb", newlines=False) == "a\\nb"
    long = safe_text("x" * 30_000)
    assert len(long) < MESSAGE_LIMIT + 50 and long.endswith("[cut: 30000 characters in all]")
    assert len(safe_text("\x01" * 5000)) < MESSAGE_LIMIT + 50      # escaping cannot grow it
    assert safe_text("plain Ünïcode ÷ 20 °C") == "plain Ünïcode ÷ 20 °C"


def test_escape_codes_in_title_and_names_never_reach_console_or_files(tmp_path, capsys):
    text = SURVEY.read_text()
    title = next(line for line in text.splitlines() if line.startswith("title = "))
    case = tmp_path / "case.toml"
    case.write_text(text.replace(title, 'title = "Drone \\u001b[2J\\r\\nowned | $x$"', 1))
    code = main(["optimize", str(case), "--out", str(tmp_path / "o")])
    captured = capsys.readouterr()
    for stream in (captured.out, captured.err):
        assert "\x1b" not in stream and "\r" not in stream
    assert code in (0, 2)       # a case check may refuse control characters in a title
    if code == 0:
        assert "\\x1b[2J" in captured.out
        assert json.loads((tmp_path / "o" / "results.json").read_text())["title"].startswith(
            "Drone \x1b")     # the data keep the title as given; JSON escapes it


def test_long_path_message_is_bounded(tmp_path, capsys):
    err = _refused(capsys, ["optimize", str(tmp_path / ("q" * 200) / ("z" * 200) / "c.toml")])
    assert len(err) < MESSAGE_LIMIT + 200


# --- modes and sets -----------------------------------------------------------------------------
@pytest.fixture
def umask_027():
    old = os.umask(0o027)
    yield 0o640
    os.umask(old)


def test_review_replaces_another_runs_set_with_umask_modes(tmp_path, capsys, umask_027):
    """A review into a folder that held another case's review leaves only its own outputs (and
    the user's other files); every file it writes (JSON, Markdown, PNG) has the umask's mode."""
    out = tmp_path / "review"
    out.mkdir()
    for name in ("review.md", "review.json", "duct.png", "break_even_7.png", "tornado.png"):
        (out / name).write_text("another case's review\n")
    (out / "notes.txt").write_text("the user's own file\n")
    (out / ".review.md.k2m9x0ab.tmp").write_text("left by a killed run\n")
    old = time.time() - 3600
    os.utime(out / ".review.md.k2m9x0ab.tmp", (old, old))
    assert main(["review", str(SURVEY), "--samples", "12", "--out", str(out)]) == 0
    names = set(os.listdir(out))
    assert names >= {"review.md", "review.json", "tornado.png", "notes.txt",
                     "break_even_slot_ratio_vs_jet_loss_factor.png"}
    assert not names & {"duct.png", "break_even_7.png"}          # not written by this run
    assert not [n for n in names if n.startswith(".")]           # no temporary or staging file
    assert (out / "notes.txt").read_text() == "the user's own file\n"
    listed = json.loads((out / "review.json").read_text())["figures"]
    assert sorted(n for n in names if n.endswith(".png")) == sorted(listed)
    for name in names - {"notes.txt"}:
        assert (out / name).stat().st_mode & 0o777 == umask_027, name
        assert (out / name).stat().st_size > 0
    assert "another case" not in (out / "review.md").read_text()
    wrote = [line for line in capsys.readouterr().out.splitlines() if line.startswith("wrote ")]
    assert sorted(Path(w[6:]).name for w in wrote) == sorted(names - {"notes.txt"})


def test_csv_and_new_folder_modes(tmp_path, capsys, umask_027):
    out = tmp_path / "new" / "duct"
    assert main(["duct", str(COASTAL), "--start", "--out", str(out)]) == 0
    assert sorted(os.listdir(out)) == ["duct.png", "sections.csv", "transition.csv"]
    for name in os.listdir(out):
        assert (out / name).stat().st_mode & 0o777 == umask_027
    assert (tmp_path / "new").stat().st_mode & 0o777 == 0o750
    assert out.stat().st_mode & 0o777 == 0o750
    assert os.listdir(tmp_path) == ["new"]                       # no staging folder beside it


def test_write_atomic_mode_follows_umask(tmp_path):
    for mask in (0o022, 0o077, 0o002):
        old = os.umask(mask)
        try:
            write_atomic(tmp_path / "a.json", "{}\n")
            write_atomic(tmp_path / "b.png", lambda handle: handle.write(b"\x89PNG"))
        finally:
            os.umask(old)
        for name in ("a.json", "b.png"):
            assert (tmp_path / name).stat().st_mode & 0o777 == 0o666 & ~mask


def test_failed_run_leaves_previous_set(tmp_path, capsys):
    """A bad case after a good run: exit 2 and the previous results untouched; a folder that did
    not exist is not created."""
    out = tmp_path / "o"
    assert main(["evaluate", str(SURVEY), "--out", str(out)]) == 0
    before = (out / "results.json").read_bytes()
    bad = tmp_path / "bad.toml"
    bad.write_text(SURVEY.read_text().replace('chord = "0.42 m"', 'chord = "0.42 s"'))
    _refused(capsys, ["evaluate", str(bad), "--out", str(out)], "wing.chord")
    assert os.listdir(out) == ["results.json"] and (out / "results.json").read_bytes() == before
    _refused(capsys, ["evaluate", str(bad), "--out", str(tmp_path / "fresh")], "wing.chord")
    assert sorted(os.listdir(tmp_path)) == ["bad.toml", "o"]


def test_calibrate_checks_everything_before_writing(tmp_path, monkeypatch):
    from mdao.studies.calibration import CalibrationError, files

    real = files.calibrate

    def with_nan(runs, lift_bands=None):
        result = real(runs, lift_bands=lift_bands)
        result["fits"]["drag"]["t95"] = float("nan")
        return result

    monkeypatch.setattr(files, "calibrate", with_nan)
    with pytest.raises(CalibrationError, match="t95"):
        files.calibrate_file(RUNS_CSV, tmp_path / "c")
    assert not (tmp_path / "c").exists()


def _dead_pid():
    done = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    return int(done.stdout)


def test_next_run_finishes_or_removes_what_a_killed_run_left(tmp_path):
    """A staging folder of a dead process marked complete is moved into place (roll forward, its
    stale names removed); an unmarked one is removed; stale temporary files are removed."""
    out = tmp_path / "out"
    out.mkdir()
    (out / "results.json").write_text('{"old": true}\n')
    (out / "many.json").write_text("{}\n")
    pid = _dead_pid()
    complete = out / f".blownwing-run-{pid}-abcd1234"
    complete.mkdir()
    (complete / "many.json").write_text('{"new": true}\n')
    (complete / COMPLETE).write_text(json.dumps({"patterns": ["many.json", "results.json"]}))
    partial = out / f".blownwing-run-{pid}-zzzz9999"
    partial.mkdir()
    (partial / "results.json").write_text('{"partial')
    beside = tmp_path / f".other.blownwing-run-{pid}-qqqq1111"
    beside.mkdir()
    (out / ".many.json.abcdefgh.tmp").write_text("")
    old = time.time() - 60
    os.utime(out / ".many.json.abcdefgh.tmp", (old, old))
    young = out / ".results.json.ijklmnop.tmp"     # younger than the run: another writer's
    with OutputSet(tmp_path / "other", ["x"]) as s:   # recovers beside the missing "other"
        assert s.path.parent == tmp_path and s.path.name.startswith(".other.blownwing-run-")
    assert not beside.exists() and not s.path.exists() and not (tmp_path / "other").exists()
    with OutputSet(out, ["many.json"]) as s:
        young.write_text("")
        assert sorted(os.listdir(out)) == sorted([".results.json.ijklmnop.tmp", s.path.name,
                                                  "many.json"])
        assert json.loads((out / "many.json").read_text()) == {"new": True}
        (s.path / "many.json").write_text('{"newest": true}\n')
        s.commit()
    assert sorted(os.listdir(out)) == [".results.json.ijklmnop.tmp", "many.json"]
    assert json.loads((out / "many.json").read_text()) == {"newest": True}


def test_output_set_refusals(tmp_path):
    (tmp_path / "f").write_text("")
    for bad, words in ((tmp_path / "f", "not a folder"), (str(tmp_path) + "/a\0", "NUL"),
                       ("", "empty")):
        with pytest.raises(OutputError, match=words):
            OutputSet(bad, ["x"]).open()
    assert os.listdir(tmp_path) == ["f"]


# --- kill test ----------------------------------------------------------------------------------
def _state(out):
    """``"absent"``, ``"old"`` (the two files of the earlier --no-plots run, unchanged) or
    ``"new"`` (the complete set of five); anything else fails."""
    if not out.exists():
        return "absent"
    names = sorted(os.listdir(out))
    visible = [n for n in names if not n.startswith(".")]
    for n in visible:
        assert (out / n).stat().st_size > 0, f"0-byte {n}"
    if visible == CALIBRATION_SET[:2]:
        data = json.loads((out / "calibration.json").read_text())
        assert not any(f.endswith(".png") for f in data["files"]), "a mixed set"
        return "old"
    assert visible == CALIBRATION_SET, names
    data = json.loads((out / "calibration.json").read_text())     # whole JSON
    assert sorted(Path(f).name for f in data["files"]) == CALIBRATION_SET
    for n in CALIBRATION_SET[2:]:
        assert (out / n).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    return "new"


def test_killed_runs_leave_previous_set_or_complete_new_one(tmp_path):
    """``calibrate`` (JSON, TOML and three PNGs) killed with SIGKILL at points spread over its
    run: the folder that held an earlier run's set holds that set or the whole new one, a folder
    that did not exist is absent or whole; the next run cleans what the killed ones left. The two
    folders' runs go side by side (two processes)."""
    env = dict(os.environ, OPENMDAO_REPORTS="0", MPLBACKEND="Agg")
    argv = [sys.executable, "-m", "mdao", "calibrate", str(RUNS_CSV)]
    kept, fresh, pristine = tmp_path / "kept", tmp_path / "fresh", tmp_path / "pristine"

    def start(out, *extra):
        return subprocess.Popen(argv + ["--out", str(out), *extra], env=env,
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)

    began = time.perf_counter()
    runs = [start(pristine, "--no-plots"), start(tmp_path / "timing")]
    assert [p.wait(timeout=120) for p in runs] == [0, 0]
    whole = time.perf_counter() - began       # two runs side by side, as the kills below
    shutil.copytree(pristine, kept)
    outcomes = []
    for fraction in (0.5, 0.9):
        runs = [start(kept), start(fresh)]
        time.sleep(fraction * whole)
        for proc in runs:
            proc.send_signal(signal.SIGKILL)
        for proc, out in zip(runs, (kept, fresh)):
            proc.wait()
            state = _state(out)
            staged = sum(len(files) for where in (out, tmp_path) if where.is_dir()
                         for entry in where.iterdir() if "blownwing-run-" in entry.name
                         for _, _, files in os.walk(entry))
            outcomes.append((fraction, out.name, state, f"{staged} staged", proc.returncode))
            assert state in (("old", "new") if out is kept else ("absent", "new"))
            if state == "new":      # the next try starts from the old set, or nothing, again
                shutil.rmtree(out)
                if out is kept:
                    shutil.copytree(pristine, kept)
    print("kill outcomes (fraction of a run, folder, state, files staged, exit):", outcomes)
    assert outcomes[0][2] == "old" and outcomes[1][2] == "absent"   # 30 %: still importing
    # the next run into each folder leaves no temporary or staging file there or beside it
    runs = [start(kept), start(fresh)]
    assert [p.wait(timeout=120) for p in runs] == [0, 0]
    for out in (kept, fresh):
        assert _state(out) == "new"
        assert not [n for n in os.listdir(out) if n.startswith(".")]
    assert not [n for n in os.listdir(tmp_path) if n.startswith(".")]
