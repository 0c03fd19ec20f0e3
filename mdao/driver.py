"""SLSQP through OpenMDAO's SciPy driver, each kind of constraint handed to SciPy as one vector.

OpenMDAO's :class:`~openmdao.drivers.scipy_optimizer.ScipyOptimizeDriver` gives SciPy one
constraint function (and one gradient function) per scalar: a mission of 48 segments has about
200 scalar constraints, and SLSQP then calls back into Python about 200 times for every value
and every gradient it reads. At 48 segments those calls cost about a quarter of the whole
optimization, more than the analytic gradients themselves (docs/performance.md).
:class:`VectorSLSQPDriver` is that driver with two changes. SciPy receives two constraint
functions, all equalities as one vector and all inequalities as another, read from the same
cached values and gradient rows: SLSQP sees the same constraint rows in the same order, so it
takes the same steps to round-off. And a point the model refuses with OpenMDAO's
``AnalysisError`` during a line search makes the line search step back instead of ending the
run. Everything else (objective, gradients, scaling, total coloring, recording, other errors)
is the parent driver's own code.

SciPy's SLSQP takes vector-valued constraints (``scipy.optimize.minimize``, ``constraints`` as
dicts whose ``fun`` returns an array and ``jac`` a matrix, one row per element).
"""
import numpy as np
from scipy.optimize import OptimizeResult, minimize

from openmdao.core.analysis_error import AnalysisError
from openmdao.core.driver import RecordingDebugging
from openmdao.drivers.scipy_optimizer import ScipyOptimizeDriver

#: Exit status of a run that stopped against points the model refuses: SLSQP asked a gradient
#: at one (its line search had run out of shorter steps), or it stopped right after a line search
#: that backed off from them. SciPy's own statuses are 0 to 9.
REFUSED_STATUS = 10


class _RefusedGradient(Exception):
    """SLSQP asked for a gradient at a point the model refused."""


class VectorSLSQPDriver(ScipyOptimizeDriver):
    """OpenMDAO's SciPy driver whose SLSQP reads the constraints as two vectors.

    Options, settings and results are the parent's (``optimizer``, ``maxiter``, ``tol``,
    ``disp``, ``opt_settings``; ``fail`` and ``_scipy_optimize_result`` afterwards); it does not
    print the parent's "Optimization Complete"/"FAILED" banner (the result says so). Another
    optimizer than ``"SLSQP"`` runs the parent's code unchanged. Linear constraints are read
    with the nonlinear ones, from the same gradient (SLSQP does not treat them apart).

    A point the model refuses with OpenMDAO's ``AnalysisError`` (an input out of the model's
    range, such as a fan map run off its map) during SLSQP's line search is reported to SLSQP
    as worse than the last point the model evaluated (its objective plus
    :attr:`REFUSED_PENALTY` times its magnitude, its constraint values), so that the line
    search takes a shorter step, as OpenMDAO's other drivers back off; the parent stops the
    whole optimization with the error instead. :attr:`refused` lists each refused point's
    message. A run that ends on a refused point, or whose SLSQP asks a gradient at one, is left
    at the last point the model evaluated, run again, and reported as not converged (status
    :data:`REFUSED_STATUS` in the latter case); so is a run whose SLSQP reports convergence
    right after a line search that backed off from refused points (held there by the model's
    range, not by the problem's constraints). An ``AnalysisError`` at the start point, and any
    other error, stops the run as before.
    """

    #: How much worse than the last evaluated point a refused one is reported, relative to
    #: that point's objective magnitude (at least 1, in the driver's scaled objective).
    REFUSED_PENALTY = 1e3

    def __init__(self, **kwargs):
        super().__init__(**kwargs)
        self.refused = []               # each refused point's message, of the last run
        self._good = None               # (x, objective) of the last point the model evaluated
        self._on_refused = False        # the model's state is that of a refused point
        self._gradients = 0             # gradients computed in the run
        self._refused_after = 0         # the gradient count at the last refusal

    def run(self):
        """Optimize with SLSQP. Returns the failure flag (True: not converged)."""
        if self.options["optimizer"] != "SLSQP":
            return super().run()
        self.result.reset()
        prob = self._problem()
        model = prob.model
        self.iter_count = 0
        self._total_jac = None
        self._total_jac_linear = None
        self._desvar_array_cache = None
        self._lincongrad_cache = None
        self._check_for_missing_objective()
        self._check_for_invalid_desvar_values()

        with RecordingDebugging(self._get_name(), self.iter_count, self):   # initial run
            with model._relevance.nonlinear_active("iter"):
                try:
                    self._run_solve_nonlinear()
                except AnalysisError as err:    # no point to back off to: say where it was
                    raise type(err)(f"at the optimizer's start point: {err}") from err
            self.iter_count += 1
        self._con_cache = self.get_constraint_values()
        self._dvlist = list(self._designvars)
        x_init, bounds = self._start_and_bounds()
        constraints = self._vector_constraints()
        self.opt_settings.setdefault("maxiter", self.options["maxiter"])
        self.opt_settings["disp"] = self.options["disp"]
        prob.get_total_coloring(self._coloring_info, run_model=False)
        self.refused = []
        self._good = (x_init.copy(), next(iter(self.get_objective_values().values())))
        self._on_refused = False
        self._gradients = 0
        try:
            result = minimize(self._objfunc, x_init, method="SLSQP", jac=self._gradfunc,
                              bounds=bounds, constraints=constraints, tol=self.options["tol"],
                              options=self.opt_settings)
        except _RefusedGradient:
            result = OptimizeResult(
                x=self._good[0], success=False, status=REFUSED_STATUS,
                nit=max(0, self._gradients - 1),      # the first gradient is at the start
                message="the model refused the point SLSQP asked a gradient at")
        except Exception:
            if self._exc_info is None:      # not one of the callbacks' stored exceptions
                raise
        if self._exc_info is not None:
            self._reraise()
        if self._on_refused:                # leave the problem at a point the model evaluated
            self._objfunc(self._good[0])
            result.success = False
        if result.success and self.refused and self._refused_after >= self._gradients - 1:
            # its last line search backed off from refused points: the model's range, not the
            # problem's constraints, holds the point where it is
            result.success = False
            result.status = REFUSED_STATUS
            result.message = ("SLSQP stopped against points the model refuses (its last line "
                              "search backed off from them)")
        self._scipy_optimize_result = result
        self.fail = not result.success
        return self.fail

    def _objfunc(self, x_new):
        """The parent's objective (it runs the model); a point the model refuses with an
        ``AnalysisError`` is reported as worse than the last evaluated one (see the class)."""
        f = super()._objfunc(x_new)
        info = self._exc_info
        if info is None:
            self._good = (np.array(x_new, float), f)
            self._on_refused = False
            return f
        if not issubclass(info[0], AnalysisError):
            return f                        # stored: raised at SciPy's next call
        self._exc_info = None
        self.refused.append(str(info[1]))
        self._refused_after = self._gradients      # in the line search after that gradient
        self._on_refused = True
        f_good = float(np.ravel(self._good[1])[0])
        return f_good + self.REFUSED_PENALTY * max(1.0, abs(f_good))

    def _gradfunc(self, x_new):
        """The parent's gradient, refused at a point the model refused."""
        if self._on_refused:
            raise _RefusedGradient()
        self._gradients += 1
        return super()._gradfunc(x_new)

    def _start_and_bounds(self):
        """The start point and SLSQP's bounds (``(lower, upper)`` per scalar, None where
        infinite), in the driver's scaled space, design variables in the driver's order."""
        values = self.get_design_var_values()
        scaled = self._autoscaler.get_bounds_scaling("design_var")
        x, lower, upper = [], [], []
        for name, meta in self._designvars.items():
            size = meta["global_size"] if meta["distributed"] else meta["size"]
            x.append(np.broadcast_to(values[name], size))
            for side, limits, default in ((lower, scaled[name].lower, -np.inf),
                                          (upper, scaled[name].upper, np.inf)):
                side.append(np.broadcast_to(default if limits is None else limits, size))
        x, lower, upper = (np.concatenate(a).astype(float) for a in (x, lower, upper))
        if x.size == 0:
            raise RuntimeError("Problem has no design variables.")
        bounds = [(None if np.isneginf(lo) else lo, None if np.isposinf(hi) else hi)
                  for lo, hi in zip(lower.tolist(), upper.tolist())]
        return x, bounds

    def _vector_constraints(self):
        """SciPy's constraint dicts: at most one ``"eq"`` and one ``"ineq"``, each a vector over
        every scalar constraint of its kind, in the parent's order (by constraint, then by
        element; an element bounded on both sides gives its lower row, then its upper row).
        SciPy holds an inequality satisfied where it is >= 0: ``value - lower`` and
        ``upper - value``."""
        scaled = self._autoscaler.get_bounds_scaling("constraint")
        self._obj_and_nlcons = list(self._objs) + list(self._cons)
        eq_rows, eq_shift = [], []
        rows, signs, shifts = [], [], []
        start = 0
        for name, meta in self._cons.items():
            if meta["indices"] is not None:
                meta["size"] = meta["indices"].indexed_src_size
            size = meta["global_size"] if meta["distributed"] else meta["size"]
            here = np.arange(start, start + size)
            start += size
            b = scaled[name]
            if meta["equals"] is not None:
                eq_rows.append(here)
                eq_shift.append(np.broadcast_to(b.equals, size))
                continue
            lower = np.broadcast_to(-np.inf if b.lower is None else b.lower, size)
            upper = np.broadcast_to(np.inf if b.upper is None else b.upper, size)
            lower_kept, upper_kept = np.isfinite(lower), np.isfinite(upper)
            # per element: the lower row first, then the upper row (the parent's order)
            both = np.stack([lower_kept, upper_kept], axis=1).ravel()
            rows.append(np.repeat(here, 2)[both])
            signs.append(np.tile([1.0, -1.0], size)[both])
            shifts.append(np.stack([-lower, upper], axis=1).ravel()[both])
        names = list(self._cons)
        constraints = []

        def values():
            if self._exc_info is not None:      # a callback's stored exception: raise it now
                self._reraise()
            cache = self._con_cache
            return np.concatenate([np.ravel(cache[n]) for n in names])

        def gradient():
            if self._exc_info is not None:
                self._reraise()
            if self._grad_cache is None:        # SLSQP asked for no objective gradient yet
                self._gradfunc(None)
            return self._grad_cache

        if eq_rows:
            eq_rows, eq_shift = np.concatenate(eq_rows), np.concatenate(eq_shift)
            constraints.append({"type": "eq",
                                "fun": lambda x: values()[eq_rows] - eq_shift,
                                "jac": lambda x: gradient()[1 + eq_rows]})
        if rows:
            rows, signs, shifts = (np.concatenate(a) for a in (rows, signs, shifts))
            constraints.append({"type": "ineq",
                                "fun": lambda x: signs * values()[rows] + shifts,
                                "jac": lambda x: signs[:, None] * gradient()[1 + rows]})
        return constraints
