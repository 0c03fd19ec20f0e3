"""Bad input, tried as a hostile user would: generated case files and run tables through every
command, counting exit codes, tracebacks, slow runs and exit-0 results with a non-finite or
non-physical value. Prints the counts table; asserts nothing.

Run from the repository root::

    python benchmarks/bad_inputs.py [--count N] [--seed S] [--workers W] [--timeout T]

Each input is a small change of a bundled case (a value replaced by one of a catalogue of bad
or odd values, a key removed or added, the segments duplicated, emptied or multiplied, the file
made unreadable) or of the demo run table (a cell replaced, a column removed, the bytes
damaged), run as a fresh process (``python -m mdao ...``) with a time limit. The generator is
seeded: the same seed gives the same inputs.
"""
import argparse
import copy
import json
import math
import os
import random
import subprocess
import sys
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

ROOT = Path(__file__).resolve().parent.parent
CASES = sorted((ROOT / "cases").glob("*.toml"))
RUNS = ROOT / "cases" / "data" / "demo_runs.csv"

#: Values that replace a case value: wrong types, odd numbers, hostile strings.
BAD_VALUES = [
    "", "m", "inf m", "-inf m", "nan m", "1e400 m", "1e-300 m", "-1 m", "0 m", "3 kg", "3",
    "2**2**2**2**2 m", "10**10**10 m", "9" * 400 + " m", "x" * 30000, "\x1b[31mred\x1b[0m",
    "1\x00 m", "\uff13 m", "1 m m", "1e308 km", "(1 m", "1 m)", "__import__('os')",
    0, -1, 1, 10 ** 15, -(10 ** 15), 1e308, -1e308, 1e-320, float("nan"), float("inf"),
    True, [], [1, 2, 3], ["1 m", "2 m"], {"a": 1}, {"lift_coefficient": [0.3], "value": [1.0]},
    {"lift_coefficient": [0.3, 0.6], "value": [float("nan"), 1.0]},
]
#: Odd segment names (names are echoed and used in key paths).
BAD_NAMES = ["", "a.b", "\x1b]0;pwned\x07", "x" * 5000, "cruise", "  ", "\n", "名前"]
#: Values that replace a cell of the run table.
BAD_CELLS = ["", "nan", "inf", "-inf", "1e400", "-1", "0", "x", "1e-320", "9" * 5000,
             "\x1b[31m", "1,2", '"', "1e308"]


# --- TOML written by hand (no writer in the standard library) --------------------------------------
def _toml_value(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{json.dumps(k)} = {_toml_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(type(v))


def to_toml(data):
    """A case dict as TOML text (top-level keys, tables, the array of segment tables)."""
    lines = []
    for key, value in data.items():
        if not isinstance(value, (dict, list)) or (isinstance(value, list) and key != "segment"):
            lines.append(f"{json.dumps(key)} = {_toml_value(value)}")
    for key, value in data.items():
        if isinstance(value, dict):
            lines.append(f"[{json.dumps(key)}]")
            lines += [f"{json.dumps(k)} = {_toml_value(v)}" for k, v in value.items()]
    for seg in data.get("segment", []) if isinstance(data.get("segment"), list) else []:
        lines.append("[[segment]]")
        if isinstance(seg, dict):
            lines += [f"{json.dumps(k)} = {_toml_value(v)}" for k, v in seg.items()]
    return "\n".join(lines) + "\n"


# --- generators ------------------------------------------------------------------------------------
def paths(data):
    """Every (table, key) and (segment index, key) of a case dict."""
    out = []
    for table, value in data.items():
        if isinstance(value, dict):
            out += [(table, k) for k in value]
        elif table == "segment":
            out += [(("segment", i), k) for i, s in enumerate(value) for k in s]
    return out


def case_inputs(rng, count):
    """``count`` bad case files: (label, bytes)."""
    bases = [tomllib.loads(p.read_text()) for p in CASES]
    out = []
    while len(out) < count:
        base = copy.deepcopy(rng.choice(bases))
        kind = rng.random()
        if kind < 0.62:      # a value replaced
            table, key = rng.choice(paths(base))
            value = rng.choice(BAD_VALUES)
            target = base["segment"][table[1]] if isinstance(table, tuple) else base[table]
            target[key] = value
            out.append((f"{table}.{key} = {str(value)[:30]!r}", to_toml(base).encode()))
        elif kind < 0.72:    # a key removed, or an unknown one added
            table, key = rng.choice(paths(base))
            target = base["segment"][table[1]] if isinstance(table, tuple) else base[table]
            if rng.random() < 0.5:
                del target[key]
                out.append((f"no {table}.{key}", to_toml(base).encode()))
            else:
                target[key + "_x"] = 1.0
                out.append((f"unknown {table}.{key}_x", to_toml(base).encode()))
        elif kind < 0.82:    # the segments
            choice = rng.randrange(5)
            if choice == 0:
                base["segment"] = []
            elif choice == 1:
                base["segment"] = base["segment"] * rng.choice((2, 50, 400))
            elif choice == 2:
                base["segment"][0]["name"] = rng.choice(BAD_NAMES)
            elif choice == 3:
                for s in base["segment"]:
                    s["blowing"] = False
            else:
                base["title"] = rng.choice([42, "", "\x1b[2J", "t" * 20000])
            out.append((f"segments/title variant {choice}", to_toml(base).encode()))
        else:                # the file itself
            text = to_toml(base).encode()
            choice = rng.randrange(5)
            if choice == 0:
                data = text[: rng.randrange(len(text))]
            elif choice == 1:
                data = b"\xff\xfe" + text
            elif choice == 2:
                data = b"a = " + b"[" * 3000 + b"]" * 3000
            elif choice == 3:
                data = bytes(rng.randrange(256) for _ in range(2000))
            else:
                data = text.replace(b"=", b"==", 1)
            out.append((f"file damage {choice}", data))
    return out


def run_inputs(rng, count):
    """``count`` bad run tables: (label, bytes)."""
    lines = RUNS.read_text().splitlines()
    head, rows = lines[0], lines[1:]
    out = []
    while len(out) < count:
        kind = rng.random()
        body = list(rows)
        header = head
        if kind < 0.6:
            r = rng.randrange(len(body))
            cells = body[r].split(",")
            c = rng.randrange(len(cells))
            cells[c] = rng.choice(BAD_CELLS)
            body[r] = ",".join(cells)
            label = f"row {r + 1} column {c}"
        elif kind < 0.75:
            cols = header.split(",")
            c = rng.randrange(len(cols))
            header = ",".join(cols[:c] + cols[c + 1:])
            body = [",".join(row.split(",")[:c] + row.split(",")[c + 1:]) for row in body]
            label = f"column {c} removed"
        elif kind < 0.85:
            body = body[: rng.randrange(0, 6)]
            label = "few rows"
        else:
            cols = header.split(",")
            c = rng.randrange(len(cols))
            cols[c] = cols[c].replace("[", "[kg").replace("]", "]") if "[" in cols[c] else cols[c] + " [m]"
            header = ",".join(cols)
            label = f"unit of column {c}"
        data = ("\n".join([header] + body) + "\n").encode()
        if rng.random() < 0.05:
            data = b"\xff" + data
            label += ", not UTF-8"
        out.append((label, data))
    return out


# --- running ---------------------------------------------------------------------------------------
def _finite_and_physical(path):
    """Problems of an exit-0 results.json: non-finite numbers, fan efficiency outside (0, 1],
    negative powers."""
    try:
        data = json.loads(Path(path).read_text())
    except (OSError, ValueError):
        return ["no readable results.json"]
    bad = []
    for seg in data.get("segments", []):
        for key, value in seg.items():
            if isinstance(value, float) and not math.isfinite(value):
                bad.append(f"{seg.get('name')}.{key} = {value}")
        eta = seg.get("fan_efficiency")
        if seg.get("blowing") and eta is not None and not 0 < eta <= 1:
            bad.append(f"{seg.get('name')}.fan_efficiency = {eta}")
        for key in ("fan_shaft_power_W", "fan_electric_power_W"):
            if seg.get("blowing") and seg.get(key) is not None and seg[key] < 0:
                bad.append(f"{seg.get('name')}.{key} = {seg[key]}")
    e = data.get("mission_energy_saving_J")
    if e is not None and not math.isfinite(e):
        bad.append("mission_energy_saving_J")
    return bad


def run_one(command, label, data, suffix, timeout):
    """Run one command on one input in a fresh process: a row of the results."""
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / f"input{suffix}"
        path.write_bytes(data)
        out = Path(tmp) / "out"
        args = {"optimize": ["optimize", str(path), "--out", str(out)],
                "evaluate": ["evaluate", str(path), "--out", str(out)],
                "review": ["review", str(path), "--out", str(out), "--samples", "20",
                           "--no-plots"],
                "duct": ["duct", str(path), "--out", str(out), "--no-plots"],
                "calibrate": ["calibrate", str(path), "--out", str(out), "--no-plots"]}[command]
        env = dict(os.environ, OPENMDAO_REPORTS="0", PYTHONWARNINGS="ignore")
        t0 = time.perf_counter()
        try:
            proc = subprocess.run([sys.executable, "-m", "mdao", *args], capture_output=True,
                                  timeout=timeout, env=env, cwd=tmp)
            code, err = proc.returncode, proc.stderr.decode("utf-8", "replace")
        except subprocess.TimeoutExpired:
            code, err = None, ""
        wall = time.perf_counter() - t0
        problems = []
        if code == 0 and command == "optimize":
            problems = _finite_and_physical(out / "results.json")
        return {"command": command, "label": label, "exit": code, "wall_s": wall,
                "traceback": "Traceback (most recent call last)" in err,
                "stderr_tail": err.strip().splitlines()[-1][:200] if err.strip() else "",
                "stderr_chars": len(err), "bad_result": problems}


def table(rows, slow):
    """The counts table (Markdown)."""
    lines = ["| command | runs | exit 0 | exit 2 | exit 3 | other exit | traceback | "
             f"over {slow:g} s | killed at the limit | exit 0 with a bad value |",
             "|---|---|---|---|---|---|---|---|---|---|"]
    for command in sorted({r["command"] for r in rows}):
        sub = [r for r in rows if r["command"] == command]
        count = lambda f: sum(1 for r in sub if f(r))  # noqa: E731
        lines.append(
            f"| {command} | {len(sub)} | {count(lambda r: r['exit'] == 0)} | "
            f"{count(lambda r: r['exit'] == 2)} | {count(lambda r: r['exit'] == 3)} | "
            f"{count(lambda r: r['exit'] not in (0, 2, 3, None))} | "
            f"{count(lambda r: r['traceback'])} | {count(lambda r: r['wall_s'] > slow)} | "
            f"{count(lambda r: r['exit'] is None)} | {count(lambda r: r['bad_result'])} |")
    return "\n".join(lines)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=300, help="case files (run tables: a third)")
    parser.add_argument("--seed", type=int, default=20261202, help="generator seed")
    parser.add_argument("--workers", type=int, default=2, help="processes at a time")
    parser.add_argument("--timeout", type=float, default=60.0, help="time limit per run [s]")
    parser.add_argument("--slow", type=float, default=20.0, help="a run over this is slow [s]")
    parser.add_argument("--json", default=None, help="write every run's row to this file")
    args = parser.parse_args(argv)
    rng = random.Random(args.seed)
    jobs = []
    commands = ["optimize", "optimize", "evaluate", "duct", "review"]
    for i, (label, data) in enumerate(case_inputs(rng, args.count)):
        jobs.append((commands[i % len(commands)], label, data, ".toml"))
    for label, data in run_inputs(rng, max(1, args.count // 3)):
        jobs.append(("calibrate", label, data, ".csv"))
    t0 = time.perf_counter()
    with ThreadPoolExecutor(args.workers) as pool:
        rows = list(pool.map(lambda j: run_one(*j, timeout=args.timeout), jobs))
    print(f"{len(rows)} runs in {time.perf_counter() - t0:.0f} s (seed {args.seed})")
    print(table(rows, args.slow))
    for r in rows:
        if r["traceback"] or r["exit"] not in (0, 2, 3) or r["bad_result"] \
                or r["wall_s"] > args.slow:
            print(f"- {r['command']} [{r['label'][:60]!r}]: exit {r['exit']}, "
                  f"{r['wall_s']:.1f} s, {r['stderr_tail'][:150]!r} {r['bad_result'][:3]}")
    if args.json:
        Path(args.json).write_text(json.dumps(rows, indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main())
