"""Property-based tests of bad input (hypothesis): any generated case file or run table is read
into a case or refused with the input error, and any generated case run through the command line
ends with exit 0, 2 or 3, never a traceback.

The generated inputs are small changes of the bundled cases and of the demo run table: a value
replaced by a generated one (any text, number, list or table) or by one of a catalogue of hostile
values, a key removed, the bytes of the file damaged. benchmarks/bad_inputs.py runs the same kind
of inputs, several hundred at a time, through every command in fresh processes.
"""
import copy
import math
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

from mdao.case import CaseError, load_case, parse_case
from mdao.cli import main

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "benchmarks"))
from bad_inputs import BAD_CELLS, BAD_NAMES, BAD_VALUES, paths, to_toml  # noqa: E402

BASES = {p.name: tomllib.loads(p.read_text()) for p in sorted((ROOT / "cases").glob("*.toml"))}
RUN_LINES = (ROOT / "cases" / "data" / "demo_runs.csv").read_text().splitlines()

scalars = st.one_of(
    st.sampled_from(BAD_VALUES), st.text(max_size=40), st.floats(allow_nan=True),
    st.integers(min_value=-(2 ** 63), max_value=2 ** 63 - 1), st.booleans(),
    st.builds(lambda x, u: f"{x} {u}", st.floats(allow_nan=True),
              st.sampled_from(["m", "mm", "kg", "m/s", "rpm", "Pa", "deg", "h", "W/kg", ""])))
values = st.one_of(scalars, st.lists(scalars, max_size=4),
                   st.dictionaries(st.text(max_size=8), scalars, max_size=3))


@st.composite
def changed_cases(draw):
    """A bundled case with one to three values replaced (or removed)."""
    name = draw(st.sampled_from(sorted(BASES)))
    data = copy.deepcopy(BASES[name])
    for _ in range(draw(st.integers(1, 3))):
        table, key = draw(st.sampled_from(paths(data)))
        target = data["segment"][table[1]] if isinstance(table, tuple) else data[table]
        if key not in target:
            continue
        if draw(st.integers(0, 9)) == 0:
            del target[key]
        elif key == "name":
            target[key] = draw(st.one_of(st.sampled_from(BAD_NAMES), st.text(max_size=20)))
        else:
            target[key] = draw(values)
    return data


def _no_surrogates(data):
    """TOML text must be encodable: hypothesis text may hold lone surrogates."""
    try:
        to_toml(data).encode("utf-8")
        return True
    except UnicodeEncodeError:
        return False


@settings(max_examples=150, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(data=changed_cases())
def test_any_changed_case_reads_or_is_refused(data):
    """parse_case on the changed dict, and load_case on its TOML text: a case, or CaseError."""
    try:
        parse_case(copy.deepcopy(data))
    except CaseError as exc:
        assert str(exc).strip()
        assert len(str(exc)) <= 4000


@settings(max_examples=60, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(data=changed_cases(), damage=st.integers(0, 3), draw=st.data())
def test_any_case_file_bytes_read_or_are_refused(tmp_path_factory, data, damage, draw):
    if not _no_surrogates(data):
        return
    text = to_toml(data).encode("utf-8")
    if damage == 1:
        text = text[: draw.draw(st.integers(0, len(text)))]
    elif damage == 2:
        text = draw.draw(st.binary(max_size=300))
    elif damage == 3:
        text = b"\xff" + text
    path = tmp_path_factory.mktemp("bad") / "case.toml"
    path.write_bytes(text)
    try:
        load_case(path)
    except CaseError as exc:
        assert str(exc).strip()


@st.composite
def changed_run_tables(draw):
    lines = list(RUN_LINES)
    for _ in range(draw(st.integers(1, 3))):
        r = draw(st.integers(1, len(lines) - 1))
        cells = lines[r].split(",")
        c = draw(st.integers(0, len(cells) - 1))
        cells[c] = draw(st.one_of(st.sampled_from(BAD_CELLS),
                                  st.floats(allow_nan=True).map(repr),
                                  st.text(alphabet="0123456789.e-+xn", max_size=12)))
        lines[r] = ",".join(cells)
    if draw(st.integers(0, 9)) == 0:
        lines = lines[: draw(st.integers(1, 6))]
    return "\n".join(lines) + "\n"


@settings(max_examples=40, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(text=changed_run_tables())
def test_any_changed_run_table_fits_or_is_refused(tmp_path_factory, text):
    """read_runs and calibrate: a result with finite constants, or CalibrationError."""
    import warnings
    from mdao.studies.calibration import CalibrationError, calibrate, read_runs
    path = tmp_path_factory.mktemp("runs") / "runs.csv"
    path.write_text(text)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            result = calibrate(read_runs(path))
    except CalibrationError as exc:
        assert str(exc).strip()
        return
    for key, entry in result["constants"].items():
        assert math.isfinite(entry["value"]), key


@settings(max_examples=10, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(data=changed_cases())
def test_any_changed_case_through_the_command_line(tmp_path, capsys, data):
    """``blownwing optimize``: exit 0, 2 or 3, never a traceback; exit 0 only with finite
    results."""
    if not _no_surrogates(data):
        return
    path = tmp_path / "case.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    code = main(["optimize", str(path), "--out", str(tmp_path / "o")])
    out = capsys.readouterr()
    assert code in (0, 2, 3), out.err[-500:]
    assert "Traceback" not in out.err
    if code == 0:
        import json
        res = json.loads((tmp_path / "o" / "results.json").read_text())
        assert math.isfinite(res["mission_energy_saving_J"])
