"""Run the optimization of a case and read its optimum: the figures the designer asked for.

:func:`optimize` runs SLSQP on :func:`mdao.system.build_problem`, checks that it converged (the
driver's own flag *and* the constraints at the returned point), and collects per-segment
results, active constraints and the break-even fan efficiency. :func:`evaluate` does the same
at the case's start point without optimizing.
"""
import time
from dataclasses import dataclass, field

import numpy as np

from mdao.studies.breakeven import break_even_efficiency
from mdao.system import build_problem

#: Relative closeness to a bound that counts as active.
ACTIVE_TOL = 1e-4
#: Feasibility tolerance of the equality constraint, relative to the pressure scale.
BALANCE_TOL = 1e-6


@dataclass
class Outcome:
    """Result of :func:`optimize` or :func:`evaluate` (SI units)."""

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

    def to_json(self):
        """The ``results.json`` content."""
        return {
            "converged": self.converged, "message": self.message,
            "iterations": self.iterations, "model_evaluations": self.model_evaluations,
            "derivative_evaluations": self.derivative_evaluations,
            "wall_time_s": self.wall_time_s, "slot_ratio": self.slot_ratio,
            "slot_height_m": self.values["slot_height"],
            "mission_energy_saving_J": self.mission_energy_saving_J,
            "wing_active_constraints": self.wing_active_constraints,
            "segments": self.segments,
        }


OUTPUTS = ("momentum_coefficient", "fan_pressure_rise", "required_pressure_rise", "jet_velocity",
           "volume_flow", "mass_flow", "jet_mach", "fan_efficiency", "fan_shaft_power", "section_drag",
           "clean_section_drag", "drag_saving", "propulsion_power_saving", "fan_electric_power",
           "net_power_saving", "energy_saving", "dynamic_pressure", "density")


def _read(prob, case):
    vals = {k: np.array(prob.get_val(k), float) for k in OUTPUTS}
    if case.fan["model"] == "map":
        for k in ("fan_speed", "flow_coefficient", "tip_mach"):
            vals[k] = np.array(prob.get_val(k), float)
    if case.duct["model"] == "geometric":
        vals["jet_loss_factor"] = np.array(prob.get_val("jet_loss_factor"), float)
        vals["diffusion_half_angle"] = np.array(prob.get_val("diffusion_half_angle"), float)
    vals["slot_ratio"] = float(prob.get_val("slot_ratio")[0])
    vals["slot_height"] = float(prob.get_val("slot_height")[0])
    vals["mission_energy_saving"] = float(prob.get_val("mission_energy_saving")[0])
    return vals


def _near(value, bound, scale):
    return abs(value - bound) <= ACTIVE_TOL * max(abs(scale), 1e-300)


def active_constraints(case, vals):
    """Per segment, and for the wing, the names of constraints and bounds that bind."""
    lo, hi = case.airfoil["momentum_coefficient_range"]
    per = []
    for i, seg in enumerate(case.segments):
        act = []
        if seg["blowing"]:
            c = vals["momentum_coefficient"][i]
            dp = vals["fan_pressure_rise"][i]
            if _near(c, lo, hi):
                act.append("momentum_coefficient >= calibrated minimum")
            if _near(c, hi, hi):
                act.append("momentum_coefficient <= calibrated maximum")
            if _near(dp, case.fan["min_pressure_rise"], case.fan["min_pressure_rise"]):
                act.append("fan_pressure_rise >= minimum")
            if _near(dp, case.fan["max_pressure_rise"], case.fan["max_pressure_rise"]):
                act.append("fan_pressure_rise <= maximum")
            if _near(vals["jet_mach"][i], case.slot["max_jet_mach"], case.slot["max_jet_mach"]):
                act.append("jet_mach <= limit")
            if case.fan["model"] == "map":
                flo, fhi = case.fan["flow_coefficient_range"]
                if _near(vals["fan_speed"][i], case.fan["max_speed"], case.fan["max_speed"]):
                    act.append("fan_speed <= max_speed")
                if _near(vals["flow_coefficient"][i], flo, fhi):
                    act.append("flow_coefficient >= map minimum (stall side)")
                if _near(vals["flow_coefficient"][i], fhi, fhi):
                    act.append("flow_coefficient <= map maximum")
        per.append(act)
    wing = []
    bounds = case.slot["ratio_bounds"]
    if bounds is not None and bounds[1] > bounds[0]:
        if _near(vals["slot_ratio"], bounds[0], bounds[1]):
            wing.append("slot_ratio >= lower bound")
        if _near(vals["slot_ratio"], bounds[1], bounds[1]):
            wing.append("slot_ratio <= upper bound")
        if case.slot["min_height"] > 0 and _near(vals["slot_height"], case.slot["min_height"],
                                                 case.slot["min_height"]):
            wing.append("slot_height >= min_height")
    if case.duct["model"] == "geometric":
        limit = case.duct["max_diffusion_half_angle"]
        if np.max(vals["diffusion_half_angle"]) >= limit * (1 - ACTIVE_TOL):
            wing.append("diffusion_half_angle <= limit")
    return per, wing


def _feasible(case, vals):
    """Check the constraints at a returned point; return a list of violations (empty: ok)."""
    bad = []
    blow = case.blowing
    scale = max(float(np.max(np.abs(vals["required_pressure_rise"][blow]))), 1.0)
    gap = np.abs(vals["fan_pressure_rise"] - vals["required_pressure_rise"])[blow]
    if np.any(gap > BALANCE_TOL * scale + 1e-6):
        bad.append(f"fan pressure rise differs from the requirement by {gap.max():.3g} Pa")
    tol = 1e-6
    if np.any(vals["jet_mach"][blow] > case.slot["max_jet_mach"] * (1 + tol)):
        bad.append("jet Mach limit exceeded")
    if case.fan["model"] == "map":
        flo, fhi = case.fan["flow_coefficient_range"]
        if np.any(vals["fan_speed"][blow] > case.fan["max_speed"] * (1 + tol)):
            bad.append("fan speed limit exceeded")
        phi = vals["flow_coefficient"][blow]
        if np.any(~np.isfinite(phi)) or np.any(phi < flo * (1 - tol)) or np.any(phi > fhi * (1 + tol)):
            bad.append("fan flow coefficient outside the map's range")
    if case.duct["model"] == "geometric":
        if np.max(vals["diffusion_half_angle"]) > case.duct["max_diffusion_half_angle"] * (1 + tol):
            bad.append("transition diffusion half-angle above the limit")
    if vals["slot_height"] < case.slot["min_height"] * (1 - tol):
        bad.append("slot below the minimum height")
    if not np.all(np.isfinite(vals["net_power_saving"])):
        bad.append("non-finite net power")
    return bad


def _segments(case, vals, be):
    rows = []
    per, _ = active_constraints(case, vals)
    for i, seg in enumerate(case.segments):
        on = bool(seg["blowing"])
        row = {
            "name": seg["name"], "blowing": on,
            "altitude_m": seg["altitude"], "speed_m_s": seg["speed"], "duration_s": seg["duration"],
            "momentum_coefficient": float(vals["momentum_coefficient"][i]),
            "fan_pressure_rise_Pa": float(vals["fan_pressure_rise"][i]) if on else 0.0,
            "required_pressure_rise_Pa": float(vals["required_pressure_rise"][i]),
            "ram_driven": bool(on and vals["required_pressure_rise"][i] <= 0),
            "jet_velocity_m_s": float(vals["jet_velocity"][i]),
            "jet_mach": float(vals["jet_mach"][i]),
            "volume_flow_m3_s": float(vals["volume_flow"][i]),
            "fan_speed_rpm": (float(vals["fan_speed"][i]) * 60.0
                              if case.fan["model"] == "map" and on else None),
            "flow_coefficient": (float(vals["flow_coefficient"][i])
                                 if case.fan["model"] == "map" and on else None),
            "fan_efficiency": float(vals["fan_efficiency"][i]) if on else None,
            "fan_shaft_power_W": float(vals["fan_shaft_power"][i]) if on else 0.0,
            "fan_electric_power_W": float(vals["fan_electric_power"][i]),
            "section_drag_N": float(vals["section_drag"][i]),
            "clean_section_drag_N": float(vals["clean_section_drag"][i]),
            "propulsion_power_saving_W": float(vals["propulsion_power_saving"][i]),
            "net_power_saving_W": float(vals["net_power_saving"][i]),
            "energy_saving_J": float(vals["energy_saving"][i]),
            "break_even_fan_efficiency": None if not np.isfinite(be[i]) else float(be[i]),
            "active_constraints": per[i],
        }
        if case.duct["model"] == "geometric":
            row["jet_loss_factor"] = float(vals["jet_loss_factor"][i])
        rows.append(row)
    return rows


def _outcome(case, prob, converged, message, iterations, evals, devals, wall):
    vals = _read(prob, case)
    be = break_even_efficiency(case, slot_ratio=vals["slot_ratio"])
    _, wing = active_constraints(case, vals)
    return Outcome(converged=converged, message=message, iterations=iterations,
                   model_evaluations=evals, derivative_evaluations=devals, wall_time_s=wall,
                   slot_ratio=vals["slot_ratio"],
                   mission_energy_saving_J=vals["mission_energy_saving"],
                   segments=_segments(case, vals, be), wing_active_constraints=wing, values=vals,
                   problem=prob)


def optimize(case, problem=None, warm_start=None):
    """Optimize a case.

    Parameters
    ----------
    case : mdao.case.Case
    problem : om.Problem, optional
        A problem already built by :func:`mdao.system.build_problem` for this case.
    warm_start : Outcome, optional
        Start from this earlier optimum (slot ratio, momentum coefficients, pressure rises),
        e.g. for re-optimizing after a small change of one input.

    Returns
    -------
    Outcome
        ``converged`` is False when the driver failed or the returned point violates a
        constraint (the message says which).
    """
    t0 = time.perf_counter()
    prob = problem if problem is not None else build_problem(case)
    if warm_start is not None:
        for name in ("slot_ratio", "momentum_coefficient", "fan_pressure_rise"):
            prob.set_val(name, warm_start.values[name])
    result = prob.run_driver()
    wall = time.perf_counter() - t0
    vals = _read(prob, case)
    bad = _feasible(case, vals)
    converged = bool(result.success) and not bad
    scipy_result = getattr(prob.driver, "_scipy_optimize_result", None)
    said = getattr(scipy_result, "message", None) or f"exit status {result.exit_status}"
    if result.success and bad:
        message = "optimizer stopped at an infeasible point: " + "; ".join(bad)
    elif not result.success:
        message = f"optimizer did not converge: {said}"
    else:
        message = f"converged: {said}"
    devals = int(getattr(scipy_result, "njev", 0) or 0)
    return _outcome(case, prob, converged, message, int(result.iter_count),
                    int(result.model_evals), devals, wall)


def evaluate(case):
    """Evaluate the case's start point without optimizing (fan rise = the requirement)."""
    t0 = time.perf_counter()
    prob = build_problem(case, driver=False)
    prob.run_model()
    wall = time.perf_counter() - t0
    vals = _read(prob, case)
    bad = _feasible(case, vals)
    msg = "start point evaluated (not optimized)" + (": " + "; ".join(bad) if bad else "")
    return _outcome(case, prob, False, msg, 0, 1, 0, wall)
