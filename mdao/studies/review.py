"""The design review: optimum, sensitivities, sweeps, break-even maps, Monte Carlo.

:func:`run_review` computes everything and returns one dict (the content of ``review.json``
plus a few arrays for the figures); :func:`mdao.report.review.write_review` writes
``review.md``, ``review.json`` and the PNG figures; the command ``blownwing review`` is
:mod:`mdao.cli`.
"""
import contextlib
import hashlib
import tempfile
import time
from pathlib import Path

import numpy as np

from mdao import CAUTION, __version__
from mdao.studies import duct_export, scaleout, sensitivity, sweeps, uncertainty
from mdao.studies.high_lift import high_lift_cost


def _steps(progress, timings):
    """A context manager per step: reports it through ``progress(step, done, total)`` and
    records its wall time [s] in ``timings[key]``; it yields the step's own ``(done, total)``
    callback for the units in between."""
    report = progress if progress is not None else (lambda step, done, total: None)

    @contextlib.contextmanager
    def step(key, name, total=1):
        total = max(int(total), 1)
        report(name, 0, total)
        t0 = time.perf_counter()
        yield lambda done, of: report(name, done, of) if 0 < done < of else None
        timings[key] = time.perf_counter() - t0
        report(name, total, total)

    return step


def case_echo(case):
    """Every case value with its SI unit: list of {key, value, unit}."""
    from mdao.case import SCHEMA, SEGMENT

    rows = []
    for section, schema in SCHEMA.items():
        table = getattr(case, section)
        for key in schema:
            value = table.get(key)
            if value is None:
                continue
            rows.append({"key": f"{section}.{key}", "value": _plain(value),
                         "unit": sensitivity.unit_label(f"{section}.{key}")})
    for seg in case.segments:
        for key in SEGMENT:
            if key != "name" and seg[key] is not None:
                rows.append({"key": f"segment.{seg['name']}.{key}", "value": _plain(seg[key]),
                             "unit": sensitivity.unit_label(f"segment.x.{key}")
                             if key in ("altitude", "speed", "duration", "climb_rate") else "-"})
    return rows


def _plain(value):
    if hasattr(value, "as_dict"):     # a lift table
        return value.as_dict()
    if isinstance(value, tuple):
        return list(value)
    return value


def sensitivity_table(case, outcome, fixed, post, mult):
    """Rows of the sensitivity table (the ``sensitivities`` list of review.json)."""
    e = outcome.mission_energy_saving_J
    rows = []
    for key, d in fixed.items():
        v = float(case.value(key))
        po = post[key]["derivative"] if post is not None else None
        rows.append({"parameter": key, "unit": sensitivity.unit_label(key), "value": v,
                     "derivative_J_per_unit": d, "post_optimal_derivative_J_per_unit": po,
                     "post_optimal_derivative_multipliers_J_per_unit": (
                         mult["derivatives"].get(key) if mult else None),
                     "elasticity": sensitivity.elasticity(d, v, e),
                     "post_optimal_elasticity": sensitivity.elasticity(po, v, e),
                     "post_optimal_scheme": post[key]["scheme"] if post else None,
                     "post_optimal_converged": post[key]["converged"] if post else None})
    return rows


def _agreement(rows, post, resolution):
    """Largest difference between post-optimal derivatives by re-optimization and by
    multipliers, relative to the larger of the two, or where both are smaller, to what the
    re-optimized differences resolve: ``resolution`` [J] (the answer times the optimizer's
    tolerance) over twice the input's step."""
    worst = 0.0
    for r in rows:
        a, b = (r["post_optimal_derivative_J_per_unit"],
                r["post_optimal_derivative_multipliers_J_per_unit"])
        if a is None or b is None:
            continue
        ref = max(abs(a), abs(b), resolution / (2.0 * post[r["parameter"]]["step"]))
        if ref == 0:
            continue
        worst = max(worst, abs(a - b) / ref)
    return worst


def run_review(case, samples=None, optimum_per_sample=False, scheduler=None, workers=None,
               progress=None, map_points=None, seed=None):
    """Run the whole design review of a case.

    Parameters
    ----------
    case : mdao.case.Case
    samples : int, optional
        Monte Carlo samples (default ``[review] samples``).
    optimum_per_sample : bool
        Also re-optimize every sample (:func:`mdao.studies.scaleout.optimum_per_sample`).
    scheduler, workers
        Passed to the scale-out for ``optimum_per_sample``.
    progress : callable, optional
        ``progress(step, done, total)``: ``step`` names the step, called with ``done = 0`` when
        it starts and ``done = total`` when it ends (``total >= 1``); the re-optimizations also
        report each unit in between. Default: silent.
    map_points : int, optional
        Grid points per axis of the break-even maps (default 31; 21 for the geometric duct,
        whose loss factor is built at every point).
    seed : int, optional
        Random seed of the Monte Carlo draws (default ``[review] seed``).

    Returns
    -------
    dict
        The review (see docs/review.md); ``converged`` False (and nothing else computed) when
        the optimization failed.
    """
    from mdao.optimum import optimize
    from mdao.optimum.history import optimization_history

    timings = {}
    step = _steps(progress, timings)
    head = {"tool": "blownwing", "version": __version__, "caution": CAUTION,
            "case": {"path": str(case.path) if case.path else None, "title": case.title,
                     "sha256": hashlib.sha256(case.text.encode("utf-8")).hexdigest(),
                     "echo": case_echo(case)}}
    with step("optimize", "optimizing the case"):
        with tempfile.TemporaryDirectory(prefix="blownwing-history-") as folder:
            record = Path(folder) / "iterations.sql"
            outcome = optimize(case, record=record)
            history = optimization_history(record)
    opt = outcome.to_json()
    head["optimum"] = opt
    head["optimization_history"] = history
    head["converged"] = outcome.converged
    if not outcome.converged:
        head["timings_s"] = timings
        return head

    cost = None
    if case.high_lift.any():
        with step("high_lift_cost", "the optimum without the high-lift requirement"):
            cost = high_lift_cost(case, outcome)
    head["high_lift_cost"] = cost

    keys = sensitivity.sensitivity_keys(case)
    with step("fixed_design_derivatives",
              f"fixed-design derivatives of {len(keys)} inputs (OpenMDAO totals)"):
        fixed = sensitivity.fixed_design_derivatives(case, outcome, keys)
    with step("post_optimal_derivatives",
              f"post-optimal derivatives: {2 * len(keys)} warm-started re-optimizations",
              total=len(keys)) as units:
        post = sensitivity.post_optimal_derivatives(case, outcome, keys, progress=units)
    with step("multiplier_derivatives", "post-optimal derivatives from the multipliers"):
        mult = sensitivity.multiplier_derivatives(case, outcome, keys)
    rows = sensitivity_table(case, outcome, fixed, post, mult)
    resolution = abs(outcome.mission_energy_saving_J) * case.optimize["tolerance"]
    with step("tornado", "tornado (each input at the ends of its spread)"):
        torn = sensitivity.tornado(case, outcome, keys)

    with step("net_power_sweep", "net power sweeps"):
        sweep = sweeps.net_power_sweep(case, outcome)
    points = map_points or (31 if case.duct["model"] == "lumped" else 21)
    with step("break_even_maps", f"break-even maps ({points} x {points} points each)"):
        maps = sweeps.review_maps(case, outcome, points=points)

    n = case.review["samples"] if samples is None else int(samples)
    with step("monte_carlo", f"Monte Carlo, {n} samples"):
        mc = uncertainty.monte_carlo(case, outcome, samples=n, seed=seed, derivatives=fixed)
    per_sample = None
    if optimum_per_sample:
        with step("optimum_per_sample", f"re-optimizing each of {n} samples",
                  total=n) as units:
            per_sample = scaleout.optimum_per_sample(case, mc["keys"], mc["x"],
                                                     scheduler=scheduler, workers=workers,
                                                     progress=units)

    head.update({
        "sensitivities": rows,
        "sensitivity_checks": {
            "multiplier_stationarity_residual": mult["residual"],
            "active_constraints_used": mult["active"],
            "post_optimal_reoptimization_vs_multipliers_max_relative_difference":
                _agreement(rows, post, resolution),
            "post_optimal_relative_step": sensitivity.POST_OPTIMAL_STEP,
        },
        "tornado": torn,
        "sweeps": {"net_power": sweep, "break_even_maps": maps},
        "uncertainty": mc,
        "optimum_per_sample": per_sample,
        # the geometric duct at the optimum (one of the fans' ducts), for its figure
        "duct": (duct_export.duct_data(case, outcome) if case.duct["model"] == "geometric"
                 else None),
        "timings_s": timings,
        "_outcome": outcome,
    })
    return head


def energy_kwh(value):
    """J to kWh (display)."""
    return np.asarray(value, float) / 3.6e6
