"""A blown wing inside a trajectory optimization: climb and cruise of an electric aircraft.

Scenario (invented): a battery-electric survey aircraft of 160 kg leaves a valley strip at
300 m, climbs to 1200 m and flies on to a point 60 km away (ground distance). The inboard 4 m of
its wing is blown (a fan in the wing draws air in near the trailing edge and blows it out behind
the leading edge). Along the flight the optimizer chooses the speed, the flight-path angle and
the momentum coefficient of the blown span; the objective is the least battery energy. Every
number below is invented for this example: none describes a real aircraft.

The trajectory is a Dymos phase (Radau pseudospectral transcription; Falck et al., "dymos:
A Python package for optimal control of multidisciplinary systems", JOSS 6(59), 2021) whose ODE
holds :class:`mdao.system.BlownWingGroup` (the fused chain, the fan following the pressure rise
the duct requires, so no pressure design variable) beside a small aircraft model of our own:

- states: ground ``range`` [m], ``altitude`` [m], ``battery_energy`` [J];
- controls: ``speed`` [m/s] (true airspeed), ``flight_path_angle`` [rad],
  ``momentum_coefficient`` [-];
- quasi-steady flight: lift ``L = W cos(gamma)``, ``C_L = L / (q S)``; drag
  ``D = q S (C_D0 + C_L^2 / (pi e A)) + D_section``, where ``C_D0`` leaves the blown span out
  and ``D_section`` is the group's ``section_drag`` (the blown span's drag); thrust
  ``T = D + W sin(gamma)``;
- battery power ``P = T V / eta_chain + P_fan`` with the group's ``fan_electric_power``;
- rates ``d(range)/dt = V cos(gamma)``, ``d(altitude)/dt = V sin(gamma)``,
  ``d(battery_energy)/dt = -P``.

Path constraints: the momentum coefficient within the calibrated range, the jet Mach number
limit, ``C_L`` below its limit and the blown span's ``energy_margin >= 0`` at every node (the
span may not return more net thrust power than its fans put into the air; docs/theory.md).

The group's per-node ``duration`` input (used only for per-segment energies) is not promoted into
the ODE: the ODE promotes the group's names explicitly, so nothing clashes with the phase's time.
The group's ``lift_increment`` is not credited (conservative, as in electric_aircraft.py).

Run: ``python docs/examples/trajectory.py`` (a few seconds). :func:`main` returns the results.
The results are preliminary design estimates, not airworthiness evidence.
"""
import sys
import time

import numpy as np
import openmdao.api as om
import dymos as dm

from mdao.parameters import BY_NAME
from mdao.system import BlownWingGroup

GRAVITY = 9.80665  # [m/s**2], standard gravity

#: Aircraft (invented), name: (value, units). Scalar inputs of the ODE, phase parameters.
AIRCRAFT = {
    "mass": (160.0, "kg"),
    "wing_area": (4.2, "m**2"),          # 7 m span x 0.6 m chord
    "aspect_ratio": (11.7, None),
    "oswald_efficiency": (0.8, None),
    "zero_lift_drag": (0.022, None),     # C_D0 of everything but the blown span, on wing_area
    "chain_efficiency": (0.78, None),    # propeller x gearbox x motor x controller
}

#: Blown span and its calibration (invented; the constants of the lumped duct and the
#: constant-efficiency fan). Read their units from mdao.parameters.
WING = {
    "chord": 0.6,
    "blown_span": 4.0,
    "slot_ratio": 0.01,
    "jet_loss_factor": 1.22,
    "freestream_assist": 0.90,
    "fan_rated_efficiency": 0.70,
    "motor_efficiency": 0.92,
    "drag_clean": 0.011,
    "slot_drag": 0.012,
    "slot_drag_per_ratio": 1.0,
    "drag_per_momentum": -1.7,
    "drag_per_momentum_per_ratio": 0.0,
    "drag_quadratic": 0.0,
    "lift_per_momentum": 0.0,
    "thrust_power_ceiling": 1.0,
}

#: The flight (invented).
MISSION = {
    "range": 60e3,                 # [m] ground distance to fly
    "initial_altitude": 300.0,     # [m]
    "final_altitude": 1200.0,      # [m]
    "initial_energy": 10.0 * 3.6e6,  # [J] battery energy at the start (10 kWh usable)
}
SPEED_BOUNDS = (20.0, 60.0)                 # [m/s]
FLIGHT_PATH_BOUNDS = (-0.05, 0.15)          # [rad]
MOMENTUM_COEFFICIENT_RANGE = (0.005, 0.15)  # the calibration's range
MAX_JET_MACH = 0.5
MAX_LIFT_COEFFICIENT = 1.2
DURATION_BOUNDS = (600.0, 6000.0)           # [s]

#: Transcription of the test and of the script: small, fast.
SEGMENTS = 5
ORDER = 3


# --- aircraft physics: plain numpy, values and partials ------------------------------------------

def flight(mass, density, speed, flight_path_angle, section_drag, fan_electric_power,
           wing_area, aspect_ratio, oswald_efficiency, zero_lift_drag, chain_efficiency):
    """Quasi-steady point-mass flight of the aircraft at each node, with partials.

    Lift balances the weight's normal component, ``L = m g cos(gamma)``; drag is a parabolic
    polar of everything but the blown span plus that span's section drag,
    ``D = q S (C_D0 + C_L^2 / (pi e A)) + D_section``; thrust ``T = D + m g sin(gamma)``;
    battery power ``P = T V / eta_chain + P_fan``. (Point-mass performance relations, e.g.
    Anderson, *Aircraft Performance and Design*, 1999, ch. 5-6, from memory.)

    Parameters
    ----------
    mass : float
        Aircraft mass [kg].
    density, speed, flight_path_angle : array
        Air density [kg/m**3], true airspeed [m/s], flight-path angle [rad].
    section_drag, fan_electric_power : array
        Blown span's drag [N] and its fans' electric power [W] (from the blown wing).
    wing_area, aspect_ratio, oswald_efficiency, zero_lift_drag, chain_efficiency : float
        Reference area [m**2], aspect ratio, Oswald factor, zero-lift drag coefficient without
        the blown span, thrust power per battery power of the main propulsion [-].

    Returns
    -------
    outputs : dict
        ``lift_coefficient`` [-], ``drag`` [N], ``thrust`` [N], ``battery_power`` [W],
        ``range_rate`` [m/s], ``altitude_rate`` [m/s], ``energy_rate`` [W].
    partials : dict
        ``partials[output, input]``, per node (arrays) or broadcastable scalars.
    """
    weight = mass * GRAVITY
    q = 0.5 * density * speed ** 2
    cos, sin = np.cos(flight_path_angle), np.sin(flight_path_angle)
    k = 1.0 / (np.pi * oswald_efficiency * aspect_ratio)
    lift = weight * cos
    cl = lift / (q * wing_area)
    d0 = q * wing_area * zero_lift_drag
    di = k * lift ** 2 / (q * wing_area)
    drag = d0 + di + section_drag
    thrust = drag + weight * sin
    power = thrust * speed / chain_efficiency + fan_electric_power
    out = {"lift_coefficient": cl, "drag": drag, "thrust": thrust, "battery_power": power,
           "range_rate": speed * cos, "altitude_rate": speed * sin, "energy_rate": -power}

    tan = np.tan(flight_path_angle)
    d = {
        ("lift_coefficient", "mass"): GRAVITY * cos / (q * wing_area),
        ("lift_coefficient", "density"): -cl / density,
        ("lift_coefficient", "speed"): -2.0 * cl / speed,
        ("lift_coefficient", "flight_path_angle"): -cl * tan,
        ("lift_coefficient", "wing_area"): -cl / wing_area,
        ("drag", "mass"): 2.0 * di / mass,
        ("drag", "density"): (d0 - di) / density,
        ("drag", "speed"): 2.0 * (d0 - di) / speed,
        ("drag", "flight_path_angle"): -2.0 * di * tan,
        ("drag", "section_drag"): np.ones_like(speed),
        ("drag", "wing_area"): (d0 - di) / wing_area,
        ("drag", "aspect_ratio"): -di / aspect_ratio,
        ("drag", "oswald_efficiency"): -di / oswald_efficiency,
        ("drag", "zero_lift_drag"): q * wing_area,
    }
    for (of, wrt), value in list(d.items()):
        if of == "drag":
            d["thrust", wrt] = value
    d["thrust", "mass"] = d["drag", "mass"] + GRAVITY * sin
    d["thrust", "flight_path_angle"] = d["drag", "flight_path_angle"] + weight * cos
    for (of, wrt), value in list(d.items()):
        if of == "thrust":
            d["battery_power", wrt] = value * speed / chain_efficiency
    d["battery_power", "speed"] = (thrust + d["thrust", "speed"] * speed) / chain_efficiency
    d["battery_power", "chain_efficiency"] = -thrust * speed / chain_efficiency ** 2
    d["battery_power", "fan_electric_power"] = np.ones_like(speed)
    for (of, wrt), value in list(d.items()):
        if of == "battery_power":
            d["energy_rate", wrt] = -value
    d["range_rate", "speed"] = cos
    d["range_rate", "flight_path_angle"] = -speed * sin
    d["altitude_rate", "speed"] = sin
    d["altitude_rate", "flight_path_angle"] = speed * cos
    return out, d


class FlightComp(om.ExplicitComponent):
    """Thin adapter of :func:`flight`: per-node and scalar inputs, sparse partials."""

    #: (name, units, start value, one per node?)
    INPUTS = (("mass", "kg", 160.0, False), ("density", "kg/m**3", 1.2, True),
              ("speed", "m/s", 30.0, True), ("flight_path_angle", "rad", 0.0, True),
              ("section_drag", "N", 10.0, True), ("fan_electric_power", "W", 0.0, True),
              ("wing_area", "m**2", 4.2, False), ("aspect_ratio", None, 11.7, False),
              ("oswald_efficiency", None, 0.8, False), ("zero_lift_drag", None, 0.022, False),
              ("chain_efficiency", None, 0.78, False))
    OUTPUTS = (("lift_coefficient", None), ("drag", "N"), ("thrust", "N"),
               ("battery_power", "W"), ("range_rate", "m/s"), ("altitude_rate", "m/s"),
               ("energy_rate", "W"))

    def initialize(self):
        self.options.declare("num_nodes", types=(int, np.integer), default=1, lower=1)

    def setup(self):
        n = int(self.options["num_nodes"])
        for name, units, value, per_node in self.INPUTS:
            self.add_input(name, val=value * np.ones(n) if per_node else value, units=units)
        for name, units in self.OUTPUTS:
            self.add_output(name, val=np.ones(n), units=units)

    def _evaluate(self, inputs):
        return flight(**{name: inputs[name] if per_node else inputs[name][0]
                         for name, _, _, per_node in self.INPUTS})

    def setup_partials(self):
        n = int(self.options["num_nodes"])
        per_node = {name: p for name, _, _, p in self.INPUTS}
        _, d = self._evaluate({name: np.full(n if p else 1, v)
                               for name, _, v, p in self.INPUTS})
        self._pairs = sorted(d)
        rows = np.arange(n)
        for of, wrt in self._pairs:
            cols = rows if per_node[wrt] else np.zeros(n, int)
            self.declare_partials(of, wrt, rows=rows, cols=cols)

    def compute(self, inputs, outputs):
        values, _ = self._evaluate(inputs)
        for name, _ in self.OUTPUTS:
            outputs[name] = values[name]

    def compute_partials(self, inputs, partials):
        n = int(self.options["num_nodes"])
        _, d = self._evaluate(inputs)
        for key in self._pairs:
            partials[key] = np.broadcast_to(d[key], (n,))


#: The blown wing's names the ODE promotes (explicitly: the group's per-node ``duration`` and
#: the per-mission energies stay inside the group, unconnected and unused).
WING_INPUTS = ["altitude", "speed", "momentum_coefficient", "chain_efficiency"] + list(WING)
WING_OUTPUTS = ["density", "section_drag", "clean_section_drag", "fan_electric_power",
                "fan_shaft_power", "energy_margin", "jet_mach", "required_pressure_rise",
                "net_power_saving"]


class ClimbCruiseODE(om.Group):
    """The ODE of the phase: the blown wing (or the clean wing) and the aircraft's flight."""

    def initialize(self):
        self.options.declare("num_nodes", types=(int, np.integer))
        self.options.declare("blown", types=bool, default=True,
                             desc="False: the same span unblown (its clean section drag, no fan)")

    def setup(self):
        n = int(self.options["num_nodes"])
        wing = BlownWingGroup(num_nodes=n, fused=True, follow_requirement=True)
        if self.options["blown"]:
            self.add_subsystem("wing", wing, promotes_inputs=WING_INPUTS,
                               promotes_outputs=WING_OUTPUTS)
        else:
            # the same group's clean section drag (same atmosphere, same clean coefficient);
            # no fan runs, so the flight sees no fan power
            self.add_subsystem("wing", wing, promotes_inputs=WING_INPUTS,
                               promotes_outputs=["density",
                                                 ("clean_section_drag", "section_drag")])
            self.set_input_defaults("fan_electric_power", np.zeros(n), units="W")
        self.add_subsystem("flight", FlightComp(num_nodes=n), promotes=["*"])


def build(blown=True, segments=SEGMENTS, order=ORDER):
    """The set-up ``om.Problem`` of the trajectory with its start point, SLSQP as driver.

    Parameters
    ----------
    blown : bool
        With the blown span (momentum coefficient a control) or the same span clean.
    segments, order : int
        Radau transcription: number of segments and polynomial order.
    """
    prob = om.Problem(reports=False)
    traj = prob.model.add_subsystem("traj", dm.Trajectory())
    phase = dm.Phase(ode_class=ClimbCruiseODE, ode_init_kwargs={"blown": blown},
                     transcription=dm.Radau(num_segments=segments, order=order))
    traj.add_phase("flight", phase)

    phase.set_time_options(fix_initial=True, duration_bounds=DURATION_BOUNDS, duration_ref=1e3,
                           units="s")
    phase.add_state("range", units="m", rate_source="range_rate", fix_initial=True,
                    fix_final=True, ref=1e4, defect_ref=1e4)
    phase.add_state("altitude", units="m", rate_source="altitude_rate", targets=["altitude"],
                    fix_initial=True, fix_final=True, lower=0.0, ref=1e3, defect_ref=1e3)
    phase.add_state("battery_energy", units="J", rate_source="energy_rate", fix_initial=True,
                    ref=1e7, defect_ref=1e7)
    phase.add_control("speed", units="m/s", targets=["speed"], lower=SPEED_BOUNDS[0],
                      upper=SPEED_BOUNDS[1], ref=30.0)
    phase.add_control("flight_path_angle", units="rad", targets=["flight_path_angle"],
                      lower=FLIGHT_PATH_BOUNDS[0], upper=FLIGHT_PATH_BOUNDS[1], ref=0.1)
    for name, (value, units) in AIRCRAFT.items():
        phase.add_parameter(name, val=value, units=units, opt=False, static_target=True,
                            targets=[name])
    for name, value in WING.items():
        phase.add_parameter(name, val=value, units=BY_NAME[name].unit, opt=False,
                            static_target=True, targets=[name])
    phase.add_path_constraint("lift_coefficient", upper=MAX_LIFT_COEFFICIENT)
    phase.add_timeseries_output(["battery_power", "section_drag", "drag", "density"])
    if blown:
        lo, hi = MOMENTUM_COEFFICIENT_RANGE
        phase.add_control("momentum_coefficient", targets=["momentum_coefficient"], lower=lo,
                          upper=hi, ref=hi)
        # the first law at every node, and the jet within its Mach limit
        phase.add_path_constraint("energy_margin", lower=0.0, ref=100.0)
        phase.add_path_constraint("jet_mach", upper=MAX_JET_MACH, ref=MAX_JET_MACH)
        phase.add_timeseries_output(["fan_electric_power", "clean_section_drag",
                                     "net_power_saving"])
    else:
        phase.add_parameter("momentum_coefficient", val=0.0, opt=False, static_target=False,
                            targets=["momentum_coefficient"])
    # least battery energy used: the most energy left at the end
    phase.add_objective("battery_energy", loc="final", ref=-1e6)

    prob.driver = om.ScipyOptimizeDriver(optimizer="SLSQP", tol=1e-8, maxiter=200, disp=False)
    prob.driver.declare_coloring(show_summary=False)
    prob.setup()
    start(prob, blown)
    return prob


def start(prob, blown=True):
    """The start point: a straight climb-cruise at 30 m/s and mid-range blowing."""
    phase = prob.model.traj.phases.flight
    phase.set_time_val(initial=0.0, duration=2100.0, units="s")
    phase.set_state_val("range", [0.0, MISSION["range"]], units="m")
    phase.set_state_val("altitude", [MISSION["initial_altitude"], MISSION["final_altitude"]],
                        units="m")
    e0 = MISSION["initial_energy"]
    phase.set_state_val("battery_energy", [e0, 0.8 * e0], units="J")
    phase.set_control_val("speed", [30.0, 30.0], units="m/s")
    phase.set_control_val("flight_path_angle", [0.02, 0.02], units="rad")
    if blown:
        phase.set_control_val("momentum_coefficient", [0.03, 0.03])


def solve(blown=True, segments=SEGMENTS, order=ORDER):
    """Optimize the trajectory; return the problem and a dict of figures (SI units)."""
    prob = build(blown, segments, order)
    t0 = time.perf_counter()
    result = prob.run_driver()
    seconds = time.perf_counter() - t0
    get = lambda name, units=None: np.asarray(
        prob.get_val(f"traj.flight.timeseries.{name}", units=units), float).ravel()
    energy = get("battery_energy", "J")
    out = {
        "converged": bool(result.success),
        "iterations": int(result.iter_count),
        "seconds": seconds,
        "energy_used_J": float(energy[0] - energy[-1]),
        "time_s": get("time", "s").tolist(),
        "range_m": get("range", "m").tolist(),
        "altitude_m": get("altitude", "m").tolist(),
        "speed_m_s": get("speed", "m/s").tolist(),
        "flight_path_angle_rad": get("flight_path_angle", "rad").tolist(),
        "lift_coefficient": get("lift_coefficient").tolist(),
        "battery_power_W": get("battery_power", "W").tolist(),
        "section_drag_N": get("section_drag", "N").tolist(),
    }
    if blown:
        out.update({
            "momentum_coefficient": get("momentum_coefficient").tolist(),
            "fan_electric_power_W": get("fan_electric_power", "W").tolist(),
            "clean_section_drag_N": get("clean_section_drag", "N").tolist(),
            "net_power_saving_W": get("net_power_saving", "W").tolist(),
            "energy_margin_W": get("energy_margin", "W").tolist(),
            "jet_mach": get("jet_mach").tolist(),
        })
    return prob, out


def main(verbose=True):
    """Optimize the flight with the blown span and with the same span clean."""
    _, blown = solve(blown=True)
    _, clean = solve(blown=False)
    results = {"blown": blown, "clean": clean,
               "energy_change_J": blown["energy_used_J"] - clean["energy_used_J"]}
    if verbose:
        print(report(results))
    return results


def report(results):
    """A short text summary of both optima."""
    b, c = results["blown"], results["clean"]
    lines = ["Electric aircraft, 60 km climb-cruise from 300 m to 1200 m, least battery energy",
             f"{'':30s}{'clean span':>14s}{'blown span':>14s}"]
    for label, fn, fmt in (
            ("converged", lambda r: str(r["converged"]), "s"),
            ("SLSQP iterations", lambda r: r["iterations"], "d"),
            ("wall time [s]", lambda r: r["seconds"], ".2f"),
            ("battery energy used [kWh]", lambda r: r["energy_used_J"] / 3.6e6, ".4f"),
            ("flight time [s]", lambda r: r["time_s"][-1], ".0f"),
            ("speed min / max [m/s]", lambda r: f"{min(r['speed_m_s']):.1f}/"
                                                f"{max(r['speed_m_s']):.1f}", "s")):
        lines.append(f"{label:30s}{format(fn(c), fmt):>14s}{format(fn(b), fmt):>14s}")
    cmu = np.asarray(b["momentum_coefficient"])
    lines.append(f"momentum coefficient along the flight: {cmu.min():.4f} to {cmu.max():.4f}")
    lines.append(f"smallest energy margin: {min(b['energy_margin_W']):.3g} W")
    lines.append(f"energy change with blowing: {results['energy_change_J'] / 3.6e6:+.4f} kWh")
    return "\n".join(lines)


if __name__ == "__main__":
    res = main()
    sys.exit(0 if res["blown"]["converged"] and res["clean"]["converged"] else 1)
