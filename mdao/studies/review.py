"""The design review: optimum, sensitivities, sweeps, break-even maps, Monte Carlo, report.

:func:`run_review` computes everything and returns one dict (the content of ``review.json``
plus a few arrays for the figures); :func:`mdao.report_review.write_review` writes
``review.md``, ``review.json`` and the PNG figures; :func:`run_review_cli` is
``blownwing review CASE [--out DIR] [--samples N] [--no-plots] [--optimum-per-sample]``.
"""
import hashlib
import sys
import time
from pathlib import Path

import numpy as np

from mdao import CAUTION, __version__
from mdao.studies import sensitivity, sweeps, uncertainty

EXIT_OK, EXIT_NOT_CONVERGED = 0, 3


class Progress:
    """Step lines and a small text bar on a stream (stderr by default); silent when disabled."""

    def __init__(self, enabled=True, stream=None, width=30):
        self.enabled = enabled
        self.stream = stream if stream is not None else sys.stderr
        self.width = width
        self._t0 = None
        self._name = None

    def start(self, name):
        """Begin a step: print its name."""
        self._name, self._t0 = name, time.perf_counter()
        if self.enabled:
            self.stream.write(f"review: {name} ...\n")
            self.stream.flush()

    def bar(self, done, total):
        """Redraw the bar of the current step (on a terminal; elsewhere only the end)."""
        if not self.enabled:
            return
        tty = getattr(self.stream, "isatty", lambda: False)()
        if tty or done == total:
            filled = int(self.width * done / max(total, 1))
            self.stream.write(f"\r  [{'#' * filled}{'.' * (self.width - filled)}] "
                              f"{done}/{total}" + ("\n" if done == total else ""))
            self.stream.flush()

    def stop(self):
        """End the step: print its wall time; returns it [s]."""
        wall = time.perf_counter() - self._t0
        if self.enabled:
            self.stream.write(f"review: {self._name} done in {wall:.2f} s\n")
            self.stream.flush()
        return wall


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
                         "unit": sensitivity.unit_of(f"{section}.{key}")})
    for seg in case.segments:
        for key in SEGMENT:
            if key != "name" and seg[key] is not None:
                rows.append({"key": f"segment.{seg['name']}.{key}", "value": _plain(seg[key]),
                             "unit": sensitivity.unit_of(f"segment.x.{key}")
                             if key in ("altitude", "speed", "duration") else "-"})
    return rows


def _plain(value):
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
        rows.append({"parameter": key, "unit": sensitivity.unit_of(key), "value": v,
                     "derivative": d, "post_optimal_derivative": po,
                     "post_optimal_derivative_multipliers": (mult["derivatives"].get(key)
                                                             if mult else None),
                     "elasticity": sensitivity.elasticity(d, v, e),
                     "post_optimal_elasticity": sensitivity.elasticity(po, v, e),
                     "post_optimal_scheme": post[key]["scheme"] if post else None,
                     "post_optimal_converged": post[key]["converged"] if post else None})
    return rows


def _agreement(rows, scale):
    """Largest difference between post-optimal derivatives by re-optimization and by
    multipliers, relative to max(|derivative|, scale)."""
    worst = 0.0
    for r in rows:
        a, b = r["post_optimal_derivative"], r["post_optimal_derivative_multipliers"]
        if a is None or b is None:
            continue
        ref = max(abs(a), abs(b))
        if ref == 0:
            continue
        worst = max(worst, abs(a - b) / max(ref, scale))
    return worst


def run_review(case, samples=None, optimum_per_sample=False, scheduler=None, workers=None,
               progress=None, map_points=None):
    """Run the whole design review of a case.

    Parameters
    ----------
    case : mdao.case.Case
    samples : int, optional
        Monte Carlo samples (default ``[review] samples``).
    optimum_per_sample : bool
        Also re-optimize every sample (:func:`mdao.studies.uncertainty.optimum_per_sample`).
    scheduler, workers
        Passed to the scale-out for ``optimum_per_sample``.
    progress : Progress, optional
        Where to report steps (default: silent).
    map_points : int, optional
        Grid points per axis of the break-even maps (default 31; 21 for the geometric duct,
        whose loss factor is built at every point).

    Returns
    -------
    dict
        The review (see docs/review.md); ``converged`` False (and nothing else computed) when
        the optimization failed.
    """
    from mdao.optimum import optimize

    prog = progress if progress is not None else Progress(enabled=False)
    timings = {}
    head = {"tool": "blownwing", "version": __version__, "caution": CAUTION,
            "case": {"path": str(case.path) if case.path else None, "title": case.title,
                     "sha256": hashlib.sha256(case.text.encode("utf-8")).hexdigest(),
                     "echo": case_echo(case)}}
    prog.start("optimizing the case")
    outcome = optimize(case)
    timings["optimize"] = prog.stop()
    opt = outcome.to_json()
    head["optimum"] = opt
    head["converged"] = outcome.converged
    if not outcome.converged:
        head["timings_s"] = timings
        return head

    keys = sensitivity.sensitivity_keys(case)
    prog.start(f"fixed-design derivatives of {len(keys)} inputs (OpenMDAO totals)")
    fixed = sensitivity.fixed_design_derivatives(case, outcome, keys)
    timings["fixed_design_derivatives"] = prog.stop()
    prog.start(f"post-optimal derivatives: {2 * len(keys)} warm-started re-optimizations")
    post = sensitivity.post_optimal_derivatives(case, outcome, keys, progress=prog.bar)
    timings["post_optimal_derivatives"] = prog.stop()
    prog.start("post-optimal derivatives from the multipliers")
    mult = sensitivity.multiplier_derivatives(case, outcome, keys)
    timings["multiplier_derivatives"] = prog.stop()
    rows = sensitivity_table(case, outcome, fixed, post, mult)
    scale = abs(outcome.mission_energy_saving_J) * 1e-9
    prog.start("tornado (each input at the ends of its spread)")
    torn = sensitivity.tornado(case, outcome, keys)
    timings["tornado"] = prog.stop()

    prog.start("net power sweeps")
    sweep = sweeps.net_power_sweep(case, outcome)
    timings["net_power_sweep"] = prog.stop()
    points = map_points or (31 if case.duct["model"] == "lumped" else 21)
    prog.start(f"break-even maps ({points} x {points} points each)")
    maps = sweeps.review_maps(case, outcome, points=points)
    timings["break_even_maps"] = prog.stop()

    n = case.review["samples"] if samples is None else int(samples)
    prog.start(f"Monte Carlo, {n} samples")
    mc = uncertainty.monte_carlo(case, outcome, samples=n, derivatives=fixed)
    timings["monte_carlo"] = prog.stop()
    per_sample = None
    if optimum_per_sample:
        prog.start(f"re-optimizing each of {n} samples")
        per_sample = uncertainty.optimum_per_sample(case, mc["keys"], mc["x"],
                                                    scheduler=scheduler, workers=workers,
                                                    progress=prog.enabled)
        timings["optimum_per_sample"] = prog.stop()

    head.update({
        "sensitivities": rows,
        "sensitivity_checks": {
            "multiplier_stationarity_residual": mult["residual"],
            "active_constraints_used": mult["active"],
            "post_optimal_reoptimization_vs_multipliers_max_relative_difference":
                _agreement(rows, scale),
            "post_optimal_relative_step": sensitivity.POST_OPTIMAL_STEP,
        },
        "tornado": torn,
        "sweeps": {"net_power": sweep, "break_even_maps": maps},
        "uncertainty": mc,
        "optimum_per_sample": per_sample,
        "timings_s": timings,
        "_outcome": outcome,
    })
    return head


def run_review_cli(args):
    """``blownwing review``: run the review and write the report; returns the exit code.

    0: written; 3: the optimization did not converge (said so on stderr; review.json records
    the failure and no optimum). Bad input raises :class:`mdao.case.CaseError` (exit 2).
    """
    from mdao.case import CaseError, load_case
    from mdao.report_review import write_review

    case = load_case(args.case)
    if args.samples is not None and args.samples < 10:
        raise CaseError(f"--samples = {args.samples!r}: at least 10 are needed")
    prog = Progress(enabled=True)
    data = run_review(case, samples=args.samples, optimum_per_sample=args.optimum_per_sample,
                      scheduler=args.scheduler, workers=args.workers, progress=prog)
    out = Path(args.out)
    if not data["converged"]:
        o = data["optimum"]
        print(f"blownwing: {case.title}\nNOT CONVERGED: {o['message']} after {o['iterations']} "
              "iterations. No review is written as an optimum; check the bounds, the start point "
              "or [optimize] max_iterations.", file=sys.stderr)
        from mdao.files import write_json
        write_json(out / "review.json", {k: v for k, v in data.items() if k != "optimum"}
                   | {"optimum": None, "failure": o["message"]})
        return EXIT_NOT_CONVERGED
    prog.start("writing the report")
    files = write_review(data, out, plots=not args.no_plots)
    prog.stop()
    e = data["optimum"]["mission_energy_saving_J"]
    u = data["uncertainty"]
    print(f"blownwing {__version__}: {case.title}")
    print(f"optimum mission energy saved: {e / 3.6e6:.4f} kWh; probability of saving "
          f"{u['probability_of_saving']:.3f} over {u['samples']} samples; dominant input "
          f"{u['dominant_input']}")
    for f in files:
        print(f"wrote {f}")
    print(CAUTION)
    return EXIT_OK


def energy_kwh(value):
    """J to kWh (display)."""
    return np.asarray(value, float) / 3.6e6
