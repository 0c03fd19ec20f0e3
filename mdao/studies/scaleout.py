"""Many independent optimizations, serially or on a Dask cluster (``dask.distributed``).

Optimization under uncertainty (one optimum per Monte Carlo sample), multi-start and grids of
optimizations are lists of *overrides*: ``{case key path: SI value}`` dicts, each applied to the
case with :meth:`mdao.case.Case.replace` and optimized on its own by
:func:`mdao.optimum.optimize`. :func:`optimize_many` runs them serially (no scheduler, no
workers) or as tasks on a Dask cluster: a local one on loopback (``workers=N``) or an existing
one (``scheduler="tcp://host:port"``).

Guarantees:

- *Same results as the serial run.* Each task is a pure function of (case, override): it builds
  its own problem and starts from the case's start point, so the optimum does not depend on which
  worker ran it, in what order, or whether it was retried. Results come back in input order.
  Every task runs its linear algebra on one BLAS thread (``threadpoolctl``, as Dask's workers
  do): multi-threaded BLAS changes the last bits of SLSQP's steps from run to run. The serial
  run and the local cluster then agree bit for bit; workers on other machines or with other
  library builds agree to rounding (about 1e-12 relative).
- Scripts that start a local cluster need the ``if __name__ == "__main__":`` guard (worker
  processes are spawned and import the main module).
- *No sample lost.* A task whose worker dies (killed, out of memory, crashed) is re-run on another
  worker, up to ``retries`` times; tasks that raise are retried too. On a local cluster the
  scheduler is told to tolerate ``retries`` worker deaths per task
  (``distributed.scheduler.allowed-failures``); on an external scheduler its own setting applies.
- *Progress* through a plain callback, ``progress(done, total)``: ``(0, N)`` at the start, then
  once per finished optimization (in completion order on a cluster). Nothing is printed here;
  the command line (:mod:`mdao.cli`) shows it.

Sampling rule of :func:`monte_carlo_overrides`: the review's own draws
(:func:`mdao.studies.uncertainty.draw_samples`), so both see the same samples for the same seed.
:func:`optimum_per_sample` re-optimizes the review's samples; :func:`run_many` is the study of
``blownwing many`` (it returns the content of ``many.json``).
"""
import contextlib
import tempfile
import time
from pathlib import Path

import numpy as np

from mdao import CAUTION, __version__, constraints

__all__ = ["optimize_many", "solve_one", "monte_carlo_overrides", "multistart_overrides",
           "optimum_per_sample", "run_many", "summarize", "KINDS"]

#: Study kinds of :func:`run_many`.
KINDS = ("monte-carlo", "multistart")


def _single_thread_blas():
    """One BLAS/OpenMP thread for the task (threadpoolctl), as Dask's workers have.

    Multi-threaded BLAS changes the last bits of SLSQP's linear algebra from run to run; with one
    thread everywhere the serial run and every worker give the same bits. Without threadpoolctl
    installed, results agree to rounding only.
    """
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # optional: exact agreement needs it
        return contextlib.nullcontext()
    return threadpool_limits(limits=1)


def solve_one(case, override, index=0):
    """Optimize ``case.replace(override)``; the result dict of :func:`optimize_many`.

    Pure: the same (case, override) always gives the same dict. An input the model rejects
    (a ``ValueError`` from a physics function, e.g. a sampled efficiency above 1) gives
    ``converged = False`` with the message, not an exception, so one bad sample does not stop a
    study.
    """
    from mdao.optimum import optimize

    base = {"index": int(index), "converged": False, "message": "",
            "mission_energy_saving_J": None, "slot_ratio": None, "momentum_coefficient": None,
            "fan_pressure_rise_Pa": None, "iterations": 0}
    try:
        with _single_thread_blas():
            outcome = optimize(case.replace(dict(override)))
    except (ValueError, ArithmeticError) as exc:
        base["message"] = f"model error: {exc}"
        return base
    blow = case.blowing
    base.update(
        converged=bool(outcome.converged), message=outcome.message,
        mission_energy_saving_J=float(outcome.mission_energy_saving_J),
        slot_ratio=float(outcome.slot_ratio),
        momentum_coefficient=[float(x) for x in outcome.values["momentum_coefficient"]],
        fan_pressure_rise_Pa=[float(x) if on else 0.0
                              for x, on in zip(outcome.values["fan_pressure_rise"], blow)],
        iterations=int(outcome.iterations))
    return base


def optimize_many(case, overrides, scheduler=None, workers=None, progress=None, retries=3,
                  task=None):
    """One independent optimization per override, serially or on a Dask cluster.

    Parameters
    ----------
    case : mdao.case.Case
        The base case.
    overrides : sequence of dict
        ``{case key path: SI value}`` per optimization (an empty dict: the case itself).
    scheduler : str, optional
        Address of a running Dask scheduler, ``tcp://host:port``.
    workers : int, optional
        Start a local cluster of this many single-threaded worker processes on 127.0.0.1 (no
        dashboard) for the duration of the call. Ignored when ``scheduler`` is given.
    progress : callable, optional
        ``progress(done, total)``: ``(0, total)`` before the first optimization, then after each
        finished one (in completion order on a cluster).
    retries : int
        Re-runs allowed per task when it raises or its worker dies, >= 0.
    task : callable, optional
        ``task(case, override, index) -> dict`` instead of :func:`solve_one` (it must be pure
        and importable or picklable by value on the workers).

    Returns
    -------
    list of dict
        In input order, each ``{"index", "converged", "message", "mission_energy_saving_J",
        "slot_ratio", "momentum_coefficient", "fan_pressure_rise_Pa", "iterations"}``.

    Raises
    ------
    ValueError
        For ``workers < 1`` or ``retries < 0``.
    TypeError
        For a ``progress`` that is not callable.
    RuntimeError
        When a task still fails after its retries (the message names the sample index).
    """
    overrides = [dict(o) for o in overrides]
    task = task or solve_one
    if isinstance(retries, bool) or not isinstance(retries, int) or retries < 0:
        raise ValueError(f"retries = {retries!r}: an integer >= 0 is allowed")
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int)
                                or workers < 1):
        raise ValueError(f"workers = {workers!r}: an integer >= 1 is allowed")
    if progress is not None and not callable(progress):
        raise TypeError(f"progress = {progress!r}: a callable progress(done, total) or None")
    report = progress if progress is not None else (lambda done, total: None)
    report(0, len(overrides))
    if scheduler is None and workers is None:
        results = []
        for i, override in enumerate(overrides):
            results.append(task(case, override, i))
            report(i + 1, len(overrides))
        return results
    return _distributed(case, overrides, scheduler, workers, report, retries, task)


def _distributed(case, overrides, scheduler, workers, report, retries, task):
    import dask
    from distributed import Client, LocalCluster, as_completed

    # the workers' statistical profiler samples the task's (deep) stack every 10 ms: with
    # sub-second optimizations it costs more than it tells, so it is off
    settings = {"distributed.scheduler.allowed-failures": retries,
                "distributed.worker.profile.enabled": False}
    scratch = None
    if scheduler is None:  # the local cluster's scratch files go to a folder removed afterwards
        scratch = tempfile.TemporaryDirectory(prefix="blownwing-dask-")
        settings["temporary-directory"] = scratch.name
    with dask.config.set(settings):
        cluster = None
        if scheduler is None:
            cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                                   host="127.0.0.1", dashboard_address=None,
                                   local_directory=scratch.name)
        try:
            with Client(scheduler or cluster, set_as_default=False) as client:
                futures = [client.submit(task, case, override, i, retries=retries,
                                         pure=False, key=f"optimize-many-{i}")
                           for i, override in enumerate(overrides)]
                results = [None] * len(futures)
                where = {f.key: i for i, f in enumerate(futures)}
                done = 0
                for future in as_completed(futures, loop=client.loop):
                    i = where[future.key]
                    try:
                        results[i] = future.result()
                    except Exception as exc:
                        for f in futures:
                            f.cancel()
                        raise RuntimeError(f"optimize_many: sample {i} failed after {retries} "
                                           f"retries: {type(exc).__name__}: {exc}") from exc
                    done += 1
                    report(done, len(futures))
        finally:
            if cluster is not None:
                cluster.close()
            if scratch is not None:
                scratch.cleanup()
    return results


def monte_carlo_overrides(case, samples, seed):
    """Overrides drawn from the case's uncertain inputs: one dict per sample.

    The draws are those of the review's Monte Carlo,
    :func:`mdao.studies.uncertainty.draw_samples`, so an optimum per sample here belongs to the
    same sample there: ``rng = numpy.random.default_rng(seed)``; for each ``[uncertainty]`` key
    in sorted order all ``samples`` draws at once (``rng.normal(nominal, sd, samples)`` or
    ``rng.uniform(low, high, samples)``), then the calibration's joint normal over its other
    constants when the case reads a calibration; whole samples with an input outside the range
    the case file allows are drawn again. Sample ``i`` takes row ``i``.

    Parameters
    ----------
    case : mdao.case.Case
    samples : int
        Number of samples (the review needs at least 10).
    seed : int
        Seed of the generator.

    Returns
    -------
    list of dict
        ``[{key path: SI value}, ...]``, ``samples`` long.
    """
    from mdao.studies.uncertainty import draw_samples

    keys, x, _ = draw_samples(case, samples, seed)
    return [{key: float(x[i, j]) for j, key in enumerate(keys)} for i in range(len(x))]


#: Random starts drawn per start asked for, at most, before ``multistart_overrides`` gives up.
DRAWS_PER_START = 20


def multistart_overrides(case, starts, seed):
    """Random start points within the bounds that the model accepts: one override dict per
    start.

    With ``rng = numpy.random.default_rng(seed)``, per drawn start: the slot ratio uniform within
    ``slot.ratio_bounds`` (when the case lets it vary), then per blowing segment (in case order)
    the momentum coefficient log-uniform within the calibrated range. The overrides are the start
    values ``slot.ratio`` and ``segment.NAME.momentum_coefficient``; the start pressure rise is
    then the requirement there (:func:`mdao.system.start_point`). A drawn start the model would
    refuse (:func:`mdao.system.start_refusal`: a fan map run off its map there) is passed over
    and the next one drawn, so that every start asked for is one the optimizer can run from.

    Parameters
    ----------
    case : mdao.case.Case
    starts : int
        Number of starts, >= 1.
    seed : int

    Returns
    -------
    list of dict

    Raises
    ------
    mdao.case.CaseError
        When fewer than ``starts`` of ``DRAWS_PER_START * starts`` drawn starts are accepted,
        with the model's last reason.
    """
    from mdao.case import CaseError
    from mdao.system import start_refusal

    if isinstance(starts, bool) or not isinstance(starts, (int, np.integer)) or starts < 1:
        raise ValueError(f"starts = {starts!r}: an integer >= 1 is allowed")
    rng = np.random.default_rng(seed)
    lo, hi = case.airfoil["momentum_coefficient_range"]
    bounds = case.slot["ratio_bounds"]
    vary = constraints.slot_ratio_free(case)
    names = [s["name"] for s in case.segments if s["blowing"]]
    out = []
    refusal = None
    for drawn in range(1, DRAWS_PER_START * starts + 1):
        override = {}
        if vary:
            override["slot.ratio"] = float(rng.uniform(bounds[0], bounds[1]))
        for name in names:
            override[f"segment.{name}.momentum_coefficient"] = float(
                np.exp(rng.uniform(np.log(lo), np.log(hi))))
        why = start_refusal(case.replace(override))
        if why is None:
            out.append(override)
            if len(out) == starts:
                return out
        else:
            refusal = why
    raise CaseError(f"starts = {starts}: the model refused {drawn - len(out)} of {drawn} random "
                     f"starts within the bounds (the last: {refusal}); narrow "
                     "[airfoil] momentum_coefficient_range or slot.ratio_bounds, or ask for "
                     "fewer starts")


def summarize(results):
    """Counts and statistics of the converged results' mission energy saving [J].

    ``refused``: the results the model refused before any optimum (a sample's input or a
    start point outside its range; no saving); ``not_converged``: the others that did not
    converge."""
    ok = [r for r in results if r["converged"]]
    e = np.array([r["mission_energy_saving_J"] for r in ok], float)
    refused = sum(1 for r in results if r["mission_energy_saving_J"] is None)
    summary = {"optimizations": len(results), "converged": len(ok), "refused": refused,
               "not_converged": len(results) - len(ok) - refused}
    if e.size:
        summary.update(mission_energy_saving_J={
            "mean": float(e.mean()), "sd": float(e.std(ddof=1)) if e.size > 1 else 0.0,
            "min": float(e.min()), "p05": float(np.percentile(e, 5)),
            "median": float(np.median(e)), "p95": float(np.percentile(e, 95)),
            "max": float(e.max()), "best_index": int(ok[int(np.argmax(e))]["index"])})
    return summary


def optimum_per_sample(case, keys, x, scheduler=None, workers=None, progress=None):
    """Re-optimize every Monte Carlo sample (optimization under uncertainty) through
    :func:`optimize_many`.

    Parameters
    ----------
    case : mdao.case.Case
    keys : list of str
        Key paths, the columns of ``x`` (as :func:`mdao.studies.uncertainty.draw_samples`
        returns them).
    x : ndarray, shape (samples, len(keys))
        Sampled values in SI.
    scheduler, workers, progress
        As in :func:`optimize_many`.

    Returns
    -------
    dict
        ``samples``, ``converged``, ``probability_of_saving`` (over all samples; a sample that
        did not converge counts as not saving), ``percentiles_J`` over the converged samples,
        ``slot_ratio_percentiles`` and ``energy_J`` (array; dropped from the JSON).
    """
    overrides = [{k: float(x[i, j]) for j, k in enumerate(keys)} for i in range(len(x))]
    res = optimize_many(case, overrides, scheduler=scheduler, workers=workers, progress=progress)
    ok = np.array([bool(r["converged"]) for r in res])
    e = np.array([r["mission_energy_saving_J"] if r["converged"] else np.nan for r in res], float)
    sr = np.array([r["slot_ratio"] if r["converged"] else np.nan for r in res], float)
    pct = np.percentile(e[ok], [5, 50, 95]) if ok.any() else [np.nan] * 3
    spct = np.percentile(sr[ok], [5, 50, 95]) if ok.any() else [np.nan] * 3
    return {"samples": len(res), "converged": int(ok.sum()),
            "probability_of_saving": float(np.count_nonzero(ok & (e > 0)) / len(res)),
            "percentiles_J": {"5": float(pct[0]), "50": float(pct[1]), "95": float(pct[2])},
            "slot_ratio_percentiles": {"5": float(spct[0]), "50": float(spct[1]),
                                       "95": float(spct[2])},
            "energy_J": e}


def run_many(case, kind, samples=None, seed=None, scheduler=None, workers=None, progress=None):
    """The study of ``blownwing many``: one optimization per Monte Carlo sample or per random
    start; returns the content of ``many.json`` (the command writes and prints it).

    Parameters
    ----------
    case : mdao.case.Case
    kind : {"monte-carlo", "multistart"}
        One optimum per Monte Carlo sample of ``[uncertainty]``
        (:func:`monte_carlo_overrides`), or one per random start (:func:`multistart_overrides`).
    samples, seed : int, optional
        Number of samples or starts, and the seed (default: the case's ``[review]`` values).
    scheduler, workers, progress
        As in :func:`optimize_many` (neither scheduler nor workers: serial).

    Returns
    -------
    dict
        ``case`` (the case file's path), ``title``, ``kind``, ``samples``, ``seed``,
        ``scheduler``, ``workers``, ``wall_time_s`` (of the optimizations), ``version``,
        ``caution``, ``summary`` (:func:`summarize`), ``overrides`` and ``results`` (in input
        order).

    Raises
    ------
    ValueError
        For an unknown ``kind``.
    """
    if kind not in KINDS:
        raise ValueError(f"kind = {kind!r}: allowed are " + ", ".join(KINDS))
    samples = case.review["samples"] if samples is None else samples
    seed = case.review["seed"] if seed is None else seed
    overrides = (monte_carlo_overrides(case, samples, seed) if kind == "monte-carlo"
                 else multistart_overrides(case, samples, seed))
    t0 = time.perf_counter()
    results = optimize_many(case, overrides, scheduler=scheduler, workers=workers,
                            progress=progress)
    wall = time.perf_counter() - t0
    return {"case": str(case.path) if case.path else None, "title": case.title, "kind": kind,
            "samples": samples, "seed": seed, "scheduler": scheduler, "workers": workers,
            "wall_time_s": wall, "version": __version__, "caution": CAUTION,
            "summary": summarize(results), "overrides": overrides, "results": results}
