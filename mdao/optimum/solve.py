"""Run the optimization of a case and read its optimum: the figures the designer asked for.

:func:`optimize` runs SLSQP on :func:`mdao.system.build_problem`, checks that it converged (the
driver's own flag *and* the constraints at the returned point), and collects per-segment
results, active constraints and the break-even fan efficiency. :func:`evaluate_start_point` does the same
at the case's start point without optimizing.
"""
import contextlib
import io
import sys
import time
from dataclasses import dataclass, field

import numpy as np

from openmdao.core.analysis_error import AnalysisError

from mdao import constraints
from mdao.driver import REFUSED_STATUS
from mdao.optimum.breakeven import break_even_efficiency
from mdao.case.loading import lift_tables, segment_reynolds
from mdao.components.mass import mass_values
from mdao.physics import chain
from mdao.physics.lift_table import interpolate
from mdao.system import (build_problem, chain_options, chain_parameters, design_point,
                         start_point)


@dataclass
class Outcome:
    """Result of :func:`optimize` or :func:`evaluate_start_point` (SI units)."""

    converged: bool
    message: str
    iterations: int
    model_evaluations: int
    derivative_evaluations: int
    wall_time_s: float
    slot_ratio: float
    mission_energy_saving_J: float
    segments: list
    wing_active_constraints: list
    values: dict = field(repr=False)
    problem: object = field(repr=False, default=None)
    #: Where segments lie outside the validated ranges (empty: inside everywhere).
    extrapolation: list = field(default_factory=list)
    #: The blowing system as hardware: ``fan_rated_shaft_power_W``, ``sizing_segment``,
    #: ``blowing_system_mass_kg``, ``fan_diameter_m`` and whether the fan was sized in the
    #: optimization (``sized``).
    hardware: dict = field(default_factory=dict)
    #: The optimizer's own stop message, verbatim (for the record; ``message`` says it in words).
    optimizer_message: str = ""

    @property
    def mission_energy_clean_J(self):
        """Source energy of the clean aircraft's main propulsion over the mission [J] (None
        without an ``[aircraft]`` table)."""
        value = self.values.get("mission_clean_energy")
        return None if value is None else float(value)

    @property
    def mission_energy_saving_fraction(self):
        """The mission energy saved over the clean aircraft's mission energy (None without an
        ``[aircraft]`` table)."""
        clean = self.mission_energy_clean_J
        return None if clean is None else float(self.mission_energy_saving_J / clean)

    def to_json(self):
        """The ``results.json`` content."""
        return {
            "converged": self.converged, "message": self.message,
            "optimizer_message": self.optimizer_message,
            "iterations": self.iterations, "model_evaluations": self.model_evaluations,
            "derivative_evaluations": self.derivative_evaluations,
            "wall_time_s": self.wall_time_s, "slot_ratio": self.slot_ratio,
            "slot_height_m": self.values["slot_height"],
            "mission_energy_saving_J": self.mission_energy_saving_J,
            # the aircraft around the wing ([aircraft]); None without it
            "mission_energy_clean_J": self.mission_energy_clean_J,
            "mission_energy_saving_fraction": self.mission_energy_saving_fraction,
            "wing_active_constraints": self.wing_active_constraints,
            # the geometric duct's steepest walls (largest half-angle of each pair, diverging
            # positive); None with the lumped duct
            "wall_half_angles_deg": self.wall_half_angles_deg,
            "extrapolated": bool(self.extrapolation), "extrapolation": self.extrapolation,
            **self.hardware,
            "segments": self.segments,
        }

    @property
    def wall_half_angles_deg(self):
        """``{"span": max, "thickness": max}`` of the transition's wall half-angles [deg]
        (positive diverging), or None without the geometric duct."""
        if "span_wall_half_angle" not in self.values:
            return None
        return {side: float(np.degrees(np.max(self.values[f"{side}_wall_half_angle"])))
                for side in ("span", "thickness")}


#: Per-segment outputs read back from the problem (besides the constrained quantities).
RESULT_OUTPUTS = ("momentum_coefficient", "fan_pressure_rise", "required_pressure_rise",
                  "jet_velocity", "volume_flow", "mass_flow", "jet_mach", "fan_efficiency",
                  "fan_shaft_power", "section_drag", "clean_section_drag", "drag_saving",
                  "propulsion_power_saving", "fan_electric_power", "net_power_saving",
                  "energy_saving", "dynamic_pressure", "density", "air_power", "energy_margin")
#: Outputs that only some models have.
MODEL_OUTPUTS = {"map": ("fan_speed", "flow_coefficient", "tip_mach"),
                 "geometric": ("jet_loss_factor", "diffusion_half_angle", "span_wall_half_angle",
                               "thickness_wall_half_angle")}
#: Outputs of the aircraft around the wing (cases with an ``[aircraft]`` table).
AIRCRAFT_OUTPUTS = ("lift_coefficient", "aircraft_clean_drag", "main_thrust_clean",
                    "main_thrust", "clean_source_power", "clean_source_energy")


def read_values(prob, case):
    """The optimum's values by promoted name (SI): the result outputs, every constrained
    quantity of the case, and the wing-level ``slot_ratio``, ``slot_height`` and
    ``mission_energy_saving`` as floats."""
    names = list(RESULT_OUTPUTS) + list(MODEL_OUTPUTS.get(case.fan["model"], ()))
    names += list(MODEL_OUTPUTS.get(case.duct["model"], ()))
    if case.has_aircraft:
        names += list(AIRCRAFT_OUTPUTS)
        if case.high_lift.any():
            names += ["max_lift_coefficient"]
        if case.sizes_fan:
            names += ["blowing_system_mass", "mass_thrust_penalty"]
    names += [c.quantity for c in constraints.applicable(case)
              if c.quantity != "pressure_balance" and c.quantity not in names]
    vals = {k: np.array(prob.get_val(k), float) for k in names}
    wing = ("slot_ratio", "slot_height", "mission_energy_saving")
    wing += (("mission_clean_energy",) if case.has_aircraft else ())
    wing += (("rated_shaft_power", "blowing_system_mass") if case.sizes_fan else ())
    wing += (("fan_diameter",) if constraints.fan_diameter_free(case) else ())
    for k in wing:
        vals[k] = float(prob.get_val(k)[0])
    return vals


def active_constraints(case, vals):
    """Per segment, and for the wing, the constraints (in words) that bind."""
    return constraints.active(case, vals)


def feasibility(case, vals):
    """The constraints a returned point breaks, in words (empty: feasible)."""
    bad = constraints.violations(case, vals)
    if not np.all(np.isfinite(vals["net_power_saving"])):
        bad.append("net power is not finite")
    on = case.blowing
    eta = vals["fan_efficiency"][on]
    if not np.all((eta > 0) & (eta <= 1)):
        bad.append("fan efficiency outside (0, 1]: " + ", ".join(f"{e:.3g}" for e in eta))
    shaft = vals["fan_shaft_power"][on]
    if not np.all(np.isfinite(shaft) & (shaft >= 0)):
        bad.append("fan shaft power negative or not finite")
    return bad


def _segments(case, vals, be):
    rows = []
    reynolds = segment_reynolds(case)
    per, _ = active_constraints(case, vals)
    tables = lift_tables(case)
    fan_diameter = vals.get("fan_diameter", case.duct.get("fan_diameter"))
    fan_diameter = None if fan_diameter is None else float(fan_diameter)
    for i, seg in enumerate(case.segments):
        on = bool(seg["blowing"])

        def jet(name, scale=1.0):
            """A fan or jet quantity: None where the fan does not run (no jet to describe)."""
            return float(vals[name][i]) * scale if on else None

        row = {
            "name": seg["name"], "blowing": on,
            "altitude_m": seg["altitude"], "speed_m_s": seg["speed"], "duration_s": seg["duration"],
            "momentum_coefficient": float(vals["momentum_coefficient"][i]),
            "fan_pressure_rise_Pa": jet("fan_pressure_rise"),
            "required_pressure_rise_Pa": jet("required_pressure_rise"),
            "ram_driven": bool(on and vals["required_pressure_rise"][i] <= 0),
            "jet_velocity_m_s": jet("jet_velocity"),
            "jet_mach": jet("jet_mach"),
            # the incompressible jet head's shortfall, M^2/4 (isentropic series of p0 - p)
            "incompressible_jet_error": (None if not on or case.fan["compressible"]
                                         else float(vals["jet_mach"][i]) ** 2 / 4.0),
            "volume_flow_m3_s": jet("volume_flow"),
            "fan_speed_rpm": jet("fan_speed", 60.0) if case.fan["model"] == "map" else None,
            "flow_coefficient": jet("flow_coefficient") if case.fan["model"] == "map" else None,
            "fan_efficiency": jet("fan_efficiency"),
            "fan_shaft_power_W": jet("fan_shaft_power"),
            "fan_electric_power_W": float(vals["fan_electric_power"][i]),
            "air_power_W": float(vals["air_power"][i]) if on else None,
            "energy_margin_W": float(vals["energy_margin"][i]) if on else None,
            "section_drag_N": float(vals["section_drag"][i]),
            "clean_section_drag_N": float(vals["clean_section_drag"][i]),
            "propulsion_power_saving_W": float(vals["propulsion_power_saving"][i]),
            "net_power_saving_W": float(vals["net_power_saving"][i]),
            "energy_saving_J": float(vals["energy_saving"][i]),
            "break_even_fan_efficiency": None if not np.isfinite(be[i]) else float(be[i]),
            "active_constraints": per[i],
        }
        row["kind"] = seg["kind"]
        row["fan_diameter_m"] = fan_diameter     # the one fan every segment runs on
        if "max_lift_coefficient" in vals:
            row["max_lift_coefficient"] = float(vals["max_lift_coefficient"][i]) if on else None
        row["lift_coefficient"] = seg["lift_coefficient"]   # given, or None (no aircraft)
        row["reynolds_number"] = float(reynolds[i])
        for key, name in (("lift_coefficient", "lift_coefficient"),
                          ("main_thrust_N", "main_thrust"),
                          ("main_thrust_clean_N", "main_thrust_clean")):
            if case.has_aircraft:
                row[key] = float(vals[name][i])
            elif key != "lift_coefficient":
                row[key] = None
        if case.duct["model"] == "geometric":
            row["jet_loss_factor"] = jet("jet_loss_factor")
        if tables:   # the tabulated constants at this segment's lift
            row["constants_at_lift"] = {key: float(interpolate(t, row["lift_coefficient"]))
                                        for key, t in tables.items()}
        rows.append(row)
    return rows


def _outcome(case, prob, converged, message, iterations, evals, devals, wall):
    vals = read_values(prob, case)
    be = break_even_efficiency(case, design=design_point(vals))
    _, wing = active_constraints(case, vals)
    return Outcome(converged=converged, message=message, iterations=iterations,
                   model_evaluations=evals, derivative_evaluations=devals, wall_time_s=wall,
                   slot_ratio=vals["slot_ratio"],
                   mission_energy_saving_J=vals["mission_energy_saving"],
                   segments=_segments(case, vals, be), wing_active_constraints=wing, values=vals,
                   problem=prob, extrapolation=list(case.extrapolation),
                   hardware=hardware(case, vals))


#: Relative closeness of two shaft powers that counts as a tie for the sizing segment.
SIZING_TIE = 1e-6


def hardware(case, vals):
    """The blowing system as hardware at a design: the rated shaft power of all fans [W] (the
    optimized rating when the fan is sized in the optimization, else ``[mass] power_margin``
    times the largest shaft power), the segment that sets it (the largest shaft power; on a
    tie within :data:`SIZING_TIE`, a high-lift segment, whose momentum coefficient the lift
    fixes, before one the rating caps), the installed mass [kg] (:mod:`mdao.physics.mass`)
    and the fan diameter [m] (None for a lumped duct with a constant-efficiency fan)."""
    shaft = np.where(case.blowing, vals["fan_shaft_power"], -np.inf)
    top = shaft.max()
    tied = np.flatnonzero(shaft >= top * (1 - SIZING_TIE))
    preferred = [i for i in tied if case.high_lift[i]] or list(tied)
    sizing = case.segment_names[int(preferred[0])]
    margin = case.mass["power_margin"]
    if case.sizes_fan:
        rated, system = float(vals["rated_shaft_power"]), float(vals["blowing_system_mass"])
    else:
        rated = float(margin * top)
        system = chain.system_mass(dict(chain_parameters(case, **design_point(vals)),
                                        rated_shaft_power=rated, **mass_values(case)),
                                   chain_options(case))
    diameter = vals.get("fan_diameter", case.duct.get("fan_diameter"))
    return {"fan_rated_shaft_power_W": rated, "sizing_segment": sizing,
            "blowing_system_mass_kg": system, "sized": bool(case.sizes_fan),
            "fan_diameter_m": None if diameter is None else float(diameter)}


def optimize(case, problem=None, warm_start=None, record=None):
    """Optimize a case.

    Parameters
    ----------
    case : mdao.case.Case
    problem : om.Problem, optional
        A problem already built by :func:`mdao.system.build_problem` for this case.
    warm_start : Outcome, optional
        Start from this earlier optimum (slot ratio, momentum coefficients, pressure rises),
        e.g. for re-optimizing after a small change of one input.
    record : str or Path, optional
        Record the driver's iterations (design variables, objective, constraints) to this file
        with OpenMDAO's SQLite case recorder (read it with ``openmdao.api.CaseReader``); the
        file is complete when this returns.

    Returns
    -------
    Outcome
        ``converged`` is False when the driver failed or the returned point violates a
        constraint (the message says which).
    """
    t0 = time.perf_counter()
    prob = problem if problem is not None else build_problem(case)
    if warm_start is not None:
        for name in ("momentum_coefficient", "fan_pressure_rise"):
            prob.set_val(name, warm_start.values[name])
        for name, value in design_point(warm_start.values).items():
            prob.set_val(name, value)
    recorder = _recorder(prob, record) if record is not None else None
    try:
        result = run_driver_quietly(prob)
    except AnalysisError as err:
        if prob.driver.iter_count:      # not at the start point: the driver's own report
            raise
        raise type(err)(f"{err}; the start is the case's [[segment]] momentum_coefficient and "
                        f"slot.ratio where it gives them (else the start-point search's): give "
                        f"another start, or leave momentum_coefficient out") from err
    finally:
        if recorder is not None:
            recorder.shutdown()
    wall = time.perf_counter() - t0
    vals = read_values(prob, case)
    bad = feasibility(case, vals)
    converged = bool(result.success) and not bad
    scipy_result = getattr(prob.driver, "_scipy_optimize_result", None)
    iterations = optimizer_iterations(prob.driver, result)
    said = getattr(scipy_result, "message", None) or f"exit status {result.exit_status}"
    if result.success and bad:
        message = ("the optimizer stopped at a point that breaks a constraint ("
                   + "; ".join(bad) + "): try another start point or tighten optimize.tolerance")
    elif not result.success:
        message = failure_sentence(getattr(scipy_result, "status", None), case, iterations)
        refused = getattr(prob.driver, "refused", None)
        if refused:
            message += (f"; the model refused {len(refused)} of the points the optimizer "
                        f"tried (the last: {refused[-1]})")
        lacking = start_point(case).without_admissible_point
        if lacking:
            message += ("; in segment(s) " + ", ".join(lacking) + " no momentum coefficient of "
                        "the calibrated range meets every per-segment constraint (energy "
                        "consistency, jet Mach limit, fan limits) at the start slot ratio: "
                        "consider blowing = false there")
    else:
        message = "converged"
    devals = int(getattr(scipy_result, "njev", 0) or 0)
    out = _outcome(case, prob, converged, message, iterations, int(result.model_evals), devals,
                   wall)
    out.optimizer_message = str(said)
    return out


#: Lines ScipyOptimizeDriver prints on its own when SLSQP stops (whatever its ``disp``).
_DRIVER_BANNER = ("Optimization FAILED.", "Optimization Complete", "-" * 35)


def run_driver_quietly(prob):
    """``prob.run_driver()`` without the banner OpenMDAO's ScipyOptimizeDriver prints on
    stdout when SLSQP stops ("Optimization FAILED.", SciPy's message, a dashed line), which it
    prints whatever the driver's ``disp`` option: the outcome's ``message`` says what happened
    in words instead. Any other output of the run is passed on unchanged.

    Returns
    -------
    openmdao.core.driver.DriverResult
    """
    buffer = io.StringIO()
    try:
        with contextlib.redirect_stdout(buffer):
            result = prob.run_driver()
    finally:
        said = getattr(getattr(prob.driver, "_scipy_optimize_result", None), "message", None)
        kept = [line for line in buffer.getvalue().splitlines(keepends=True)
                if line.rstrip("\n") not in _DRIVER_BANNER + (said,)]
        if kept:
            sys.stdout.write("".join(kept))
    return result


def optimizer_iterations(driver, result=None):
    """The optimizer's own iteration count: SciPy's ``nit`` (SLSQP's major iterations).

    OpenMDAO's ``iter_count`` (also ``DriverResult.iter_count``) counts the driver's model
    runs, the initial run and every objective evaluation of the line searches included, not
    the optimizer's iterations: with ``maxiter = 2`` SLSQP stops at ``nit = 2`` after 4 model
    runs. Falls back to ``iter_count`` for a driver without a SciPy result.
    """
    nit = getattr(getattr(driver, "_scipy_optimize_result", None), "nit", None)
    if nit is not None:
        return int(nit)
    return int(getattr(result, "iter_count", getattr(driver, "iter_count", 0)))


#: SLSQP stops that are not convergence, by SciPy's exit status (scipy.optimize's SLSQP exit
#: modes): what happened and what to try, in words.
_SLSQP_STOPS = {
    2: ("the problem has more equality constraints than design variables",
        "check which segments blow and which values the case holds fixed"),
    4: ("the optimizer found no step that keeps every constraint (the linearized constraints "
        "contradict each other at its last point)",
        "try another start point ([[segment]] momentum_coefficient, slot.ratio) or wider bounds"),
    8: ("the optimizer's line search could not improve the design any further",
        "loosen optimize.tolerance or try another start point"),
}


def failure_sentence(status, case, iterations):
    """One plain sentence, what happened and what to try, for an SLSQP stop that is not
    convergence; ``status`` is SciPy's exit status (None: unknown)."""
    if status == 9:
        return (f"the optimizer stopped at its iteration limit (optimize.max_iterations = "
                f"{case.optimize['max_iterations']}) before converging: raise "
                "optimize.max_iterations or loosen optimize.tolerance")
    if status == REFUSED_STATUS:
        return (f"the optimizer stopped against points the model cannot evaluate (outside its "
                f"range, such as a fan map run off its map), after {iterations} iterations: "
                f"check the fan's flow-coefficient range and the case's bounds, or try another "
                f"start point")
    if status in _SLSQP_STOPS:
        what, remedy = _SLSQP_STOPS[status]
        return f"{what}, after {iterations} iterations: {remedy}"
    if status in (3, 5, 6, 7):
        return (f"the optimizer's internal least-squares step failed (a singular or "
                f"rank-deficient subproblem) after {iterations} iterations: try another start "
                "point or loosen optimize.tolerance")
    return (f"the optimizer stopped without converging after {iterations} iterations (exit "
            f"status {status}): try another start point or raise optimize.max_iterations")


def _recorder(prob, path):
    """Attach OpenMDAO's SQLite case recorder to the driver: every driver case with its design
    variables, objective and constraints (no other variables, no viewer data)."""
    from openmdao.recorders.sqlite_recorder import SqliteRecorder
    recorder = SqliteRecorder(str(path), record_viewer_data=False)
    prob.driver.add_recorder(recorder)
    options = prob.driver.recording_options
    for key in ("record_desvars", "record_objectives", "record_constraints"):
        options[key] = True
    options["includes"] = []
    prob.final_setup()      # sets the recorder up on the built problem
    return recorder


def evaluate_start_point(case):
    """Evaluate the case's start point without optimizing (fan rise = the requirement)."""
    t0 = time.perf_counter()
    prob = build_problem(case, driver=False)
    prob.run_model()
    wall = time.perf_counter() - t0
    vals = read_values(prob, case)
    bad = feasibility(case, vals)
    msg = "start point evaluated (not optimized)" + (": " + "; ".join(bad) if bad else "")
    return _outcome(case, prob, False, msg, 0, 1, 0, wall)
