"""Many optimizations, serially and on a local Dask cluster (mdao.studies.scaleout).

Every cluster here is a LocalCluster of two single-threaded worker processes on 127.0.0.1 with no
dashboard, started and closed by optimize_many itself. The timing of serial against two workers
is a benchmark, not a test: benchmarks/scaleout_bench.py.
"""
import functools
import io
import os
import sys
from pathlib import Path

import cloudpickle
import numpy as np
import pytest

from mdao.optimum import optimize

from mdao.case import CaseError, load_case
from mdao.cli import main
from mdao.cli.progress import OptimizationCounter
from mdao.studies.scaleout import (monte_carlo_overrides, multistart_overrides, optimize_many,
                                   run_many, solve_one)

ROOT = Path(__file__).resolve().parents[1]
CASE = ROOT / "cases" / "survey-drone.toml"
KEYS = {"index", "converged", "message", "mission_energy_saving_J", "slot_ratio",
        "momentum_coefficient", "fan_pressure_rise_Pa", "iterations"}

# the crashing task below is defined in this module: ship it to the workers by value
cloudpickle.register_pickle_by_value(sys.modules[__name__])


@pytest.fixture(scope="module")
def case():
    return load_case(CASE)


@pytest.fixture(scope="module")
def samples(case):
    return monte_carlo_overrides(case, 10, 99)[:8]


@pytest.fixture(scope="module")
def serial(case, samples):
    return optimize_many(case, samples)


def test_serial_results(case, samples, serial):
    assert [r["index"] for r in serial] == list(range(8))
    for r, override in zip(serial, samples):
        assert set(r) == KEYS
        assert r["converged"], r["message"]
        assert len(r["momentum_coefficient"]) == len(case.segments)
        # the result is the optimum of the case with that sample's values
        alone = solve_one(case, override, r["index"])
        assert alone == r
    # the samples differ, and so do their optima
    assert len({round(r["mission_energy_saving_J"], 3) for r in serial}) == 8


def test_two_workers_identical_to_serial(case, samples, serial):
    parallel = optimize_many(case, samples, workers=2)
    assert parallel == serial          # bit for bit, in input order


def _crash_once(case, override, index, marker, victim):
    """Kill the worker process the first time sample ``victim`` runs (marker file: run once)."""
    if index == victim:
        try:
            fd = os.open(marker, os.O_CREAT | os.O_EXCL | os.O_WRONLY)
        except FileExistsError:
            pass
        else:
            os.close(fd)
            os._exit(13)
    return solve_one(case, override, index)


def test_worker_death_loses_no_sample(case, samples, serial, tmp_path):
    marker = tmp_path / "crashed-once"
    task = functools.partial(_crash_once, marker=str(marker), victim=3)
    results = optimize_many(case, samples, workers=2, retries=3, task=task)
    assert marker.exists()             # a worker did die on sample 3
    assert results == serial           # ... and every sample is there, unchanged


def test_failure_after_retries_is_reported(case, samples):
    def always_fails(case, override, index):
        raise RuntimeError("boom")

    with pytest.raises(RuntimeError, match="sample 0 failed after 1 retries"):
        optimize_many(case, samples[:1], workers=2, retries=1, task=always_fails)


def test_progress_on_stderr(case, samples, capsys):
    calls = []
    optimize_many(case, samples[:2], progress=lambda done, total: calls.append((done, total)))
    assert calls == [(0, 2), (1, 2), (2, 2)]
    optimize_many(case, samples[:2], progress=OptimizationCounter())
    assert capsys.readouterr().err == ""          # stderr is not a terminal here: silent
    terminal = _Terminal()
    optimize_many(case, samples[:2], progress=OptimizationCounter(stream=terminal))
    shown = terminal.getvalue()
    assert "optimizations" in shown and "2/2" in shown       # tqdm's bar, to its end


class _Terminal(io.StringIO):
    """A text stream that says it is a terminal."""

    def isatty(self):
        return True


def test_monte_carlo_overrides_follow_the_review_draws(case):
    from mdao.studies.uncertainty import draw_samples

    over = monte_carlo_overrides(case, 20, 5)
    keys, x, _ = draw_samples(case, 20, 5)
    assert [[o[k] for k in keys] for o in over] == x.tolist()
    # the documented rule, by hand (no draw of this case leaves its allowed range)
    rng = np.random.default_rng(5)
    expect = {}
    for key in sorted(case.uncertainty):
        spec = case.uncertainty[key]
        expect[key] = (rng.normal(case.value(key), spec["sd"], 20) if spec["distribution"] == "normal"
                       else rng.uniform(spec["low"], spec["high"], 20))
    for key, values in expect.items():
        np.testing.assert_array_equal([o[key] for o in over], values)
    assert monte_carlo_overrides(case, 20, 5) == over


def test_multistart_overrides(case):
    starts = multistart_overrides(case, 6, 3)
    assert starts == multistart_overrides(case, 6, 3)
    assert starts != multistart_overrides(case, 6, 4)
    lo, hi = case.airfoil["momentum_coefficient_range"]
    rlo, rhi = case.slot["ratio_bounds"]
    for s in starts:
        assert rlo <= s["slot.ratio"] <= rhi
        for name in case.segment_names:
            assert lo <= s[f"segment.{name}.momentum_coefficient"] <= hi
    res = optimize_many(case, starts[:3])
    energies = [r["mission_energy_saving_J"] for r in res if r["converged"]]
    assert energies
    # The energy balance splits the admissible momentum coefficients into branches, so random
    # starts may stop at different local optima; on these seeds none beats the optimum from
    # the default (grid-chosen) start.
    best = optimize(case).mission_energy_saving_J
    assert max(energies) <= best * (1 + 1e-6)



def test_multistart_passes_over_starts_the_model_refuses(monkeypatch):
    """The island shuttle's map fan runs off its map at most random starts (21 of 24 drawn with
    seed 5). Every start multistart gives is one the model runs from (its problem built and run
    at that start raises nothing), the refused draws were passed over, and a budget of draws
    that leaves too few accepted starts is refused by name."""
    from mdao.studies import scaleout
    from mdao import system
    island = load_case(ROOT / "cases" / "island-shuttle.toml")
    checked = []
    refusal = system.start_refusal
    monkeypatch.setattr(system, "start_refusal",
                        lambda c: checked.append(refusal(c)) or checked[-1])
    starts = multistart_overrides(island, 4, 5)
    assert len(starts) == 4 and len(checked) > 4
    assert sum(why is not None for why in checked) == len(checked) - 4
    assert any("off the map" in why for why in checked if why is not None)
    for start in starts:
        prob = system.build_problem(island.replace(start))
        prob.run_model()
    monkeypatch.setattr(scaleout, "DRAWS_PER_START", 1)
    with pytest.raises(CaseError, match=r"starts = 4: the model refused \d+ of 4 random starts"):
        multistart_overrides(island, 4, 5)

def test_bad_arguments(case):
    with pytest.raises(ValueError, match="workers"):
        optimize_many(case, [{}], workers=0)
    with pytest.raises(ValueError, match="retries"):
        optimize_many(case, [{}], retries=-1)
    with pytest.raises(ValueError, match="starts"):
        multistart_overrides(case, 0, 1)
    with pytest.raises(ValueError, match="kind"):
        run_many(case, "grid", 10, 1)


def test_model_error_is_a_result_not_a_crash(case):
    r = solve_one(case, {"segment.climb.altitude": 30000.0}, 7)   # ISA covers 0-20 km
    assert r["index"] == 7 and not r["converged"] and r["message"]


def test_run_many_monte_carlo(case):
    """The study of ``blownwing many``: the review's draws, one optimum each, and the summary
    computed from the results (the command line writes it: tests/test_commands.py)."""
    data = run_many(case, "monte-carlo", 10, 2)
    assert data["kind"] == "monte-carlo" and data["samples"] == 10 and data["seed"] == 2
    assert data["overrides"] == monte_carlo_overrides(case, 10, 2)
    assert [r["index"] for r in data["results"]] == list(range(10))
    ok = [r["mission_energy_saving_J"] for r in data["results"] if r["converged"]]
    summary = data["summary"]
    assert summary["optimizations"] == 10 and summary["converged"] == len(ok) > 0
    assert summary["mission_energy_saving_J"]["max"] == max(ok)
    assert summary["mission_energy_saving_J"]["median"] == pytest.approx(np.median(ok), rel=1e-15)
    best = data["results"][summary["mission_energy_saving_J"]["best_index"]]
    assert best["mission_energy_saving_J"] == max(ok)
    assert data["results"][4] == solve_one(case, data["overrides"][4], 4)
