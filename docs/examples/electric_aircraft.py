"""A battery-electric aircraft with a blown wing, optimized at aircraft level.

Scenario (invented): a 6 m span battery-electric cargo drone that resupplies mountain huts. It
climbs 1200 m, cruises 120 km and keeps a 20-minute reserve loiter. The inboard 4 m of the wing
can be fitted with recirculating blown sections (a fan in the wing sucks near the trailing edge
and blows near the leading edge). Is it worth it once the fans, motors and ducts are carried?

The aircraft model is our own and deliberately small:

- mass build-up: ``takeoff_mass = empty + payload + battery + blowing system`` (an equality
  constraint closed by the optimizer; the take-off mass is a design variable);
- lift equals weight in every segment, which gives the lift coefficient;
- a parabolic clean polar for everything but the blown span:
  ``D_airframe = q S (C_D0 + C_L^2 / (pi e A))``; the blown span's section drag comes from
  :class:`mdao.system.BlownWingGroup` (``drag``; the clean wing's is ``q c b C_D,clean``);
- source power ``((D_airframe + D_section) V + m g climb_rate) / eta_chain + P_fan,electric``;
- battery energy ``sum(P t) / usable_fraction`` and battery mass from its specific energy;
- the cruise duration is the required range over the cruise speed.

``BlownWingGroup`` is added as a subsystem with its promoted names (units on every variable);
:func:`mdao.components.mass.add_blowing_system_mass` adds the system's mass beside it. The
optimizer (SLSQP) minimizes the take-off mass over the take-off mass, the cruise and loiter
speeds, the slot ratio, and per segment the momentum coefficient, the fan pressure rise (with
the equality constraint fan rise = required rise) and the fans' rated shaft power. The same
aircraft with a clean wing is optimized the same way for comparison.

Run: ``python docs/examples/electric_aircraft.py`` (a few seconds). ``main()`` returns the results.
"""
import sys

import numpy as np
import openmdao.api as om

from mdao.components.atmosphere import AtmosphereComp
from mdao.components.mass import add_blowing_system_mass
from mdao.system import BlownWingGroup

GRAVITY = 9.80665  # [m/s**2], standard gravity

#: Mission: per segment altitude [m], speed [m/s] (start value where it is a design variable),
#: climb rate [m/s], range flown at the segment's speed [m] and fixed time [s].
SEGMENTS = {
    "name": ("climb", "cruise", "loiter"),
    "altitude": np.array([600.0, 1200.0, 800.0]),
    "speed": np.array([28.0, 36.0, 28.0]),
    "climb_rate": np.array([2.5, 0.0, 0.0]),
    "segment_range": np.array([0.0, 120e3, 0.0]),
    "hold_time": np.array([480.0, 0.0, 1200.0]),
}
#: Which segments' speed the optimizer chooses (cruise, loiter); the climb speed is given.
FREE_SPEEDS = [1, 2]

#: Aircraft data (invented), name: (value, units).
AIRCRAFT = {
    "empty_mass": (95.0, "kg"),          # structure, main propulsion, systems (no battery)
    "payload_mass": (40.0, "kg"),
    "wing_area": (3.6, "m**2"),          # 6 m span x 0.6 m chord
    "aspect_ratio": (10.0, None),
    "oswald_efficiency": (0.8, None),
    "zero_lift_drag": (0.025, None),     # C_D0 of everything but the blown span, on wing_area
    "battery_specific_energy": (200.0 * 3600.0, "J/kg"),   # 200 Wh/kg at pack level
    "usable_fraction": (0.8, None),
    "chain_efficiency": (0.78, None),    # propeller x gearbox x motor x controller
}
MAX_LIFT_COEFFICIENT = 1.2     # clean wing, with margin to stall

#: Blown wing and its calibration (invented; the section constants of a lumped model).
WING = {
    "chord": (0.6, "m"),
    "blown_span": (4.0, "m"),
    "slot_ratio": (0.01, None),
    "jet_loss_factor": (1.22, None),
    "freestream_assist": (0.90, None),
    "fan_rated_efficiency": (0.70, None),
    "motor_efficiency": (0.92, None),
    "drag_clean": (0.011, None),
    "slot_drag": (0.012, None),
    "slot_drag_per_ratio": (1.0, None),
    "drag_per_momentum": (-1.7, None),
    "drag_per_momentum_per_ratio": (0.0, None),
    "lift_per_momentum": (0.0, None),    # lift increment not credited (conservative)
}
SLOT_RATIO_BOUNDS = (0.004, 0.02)
MIN_SLOT_HEIGHT = 0.002                  # [m]
MOMENTUM_COEFFICIENT_RANGE = (0.005, 0.15)
PRESSURE_RISE_BOUNDS = (80.0, 10e3)      # [Pa]
MAX_JET_MACH = 0.5

#: Blowing-system mass data (see mdao.physics.mass; values from memory, docs/embedding.md).
MASS = {
    "fan_specific_power": (2500.0, "W/kg"),
    "motor_specific_power": (5000.0, "W/kg"),
    "duct_areal_density": (0.8, "kg/m**2"),
    "installation_factor": (1.2, None),
    "power_margin": (1.25, None),
    "duct_wetted_ratio": (1.5, None),
}


# --- aircraft physics: plain numpy, values and partials ------------------------------------------

def flight(takeoff_mass, density, speed, climb_rate, section_drag, fan_electric_power,
           wing_area, aspect_ratio, oswald_efficiency, zero_lift_drag, chain_efficiency):
    """Lift coefficient, airframe drag [N] and source power [W] per segment, with partials.

    ``C_L = m g / (q S)``, ``D = q S (C_D0 + C_L^2 / (pi e A))``,
    ``P = ((D + D_section) V + m g climb_rate) / eta_chain + P_fan``.
    Returns ``(outputs, partials)`` with ``partials[output, input]``.
    """
    q = 0.5 * density * speed ** 2
    weight = takeoff_mass * GRAVITY
    k = 1.0 / (np.pi * oswald_efficiency * aspect_ratio)
    cl = weight / (q * wing_area)
    d0 = q * wing_area * zero_lift_drag
    di = q * wing_area * k * cl ** 2
    drag = d0 + di
    thrust_power = (drag + section_drag) * speed + weight * climb_rate
    power = thrust_power / chain_efficiency + fan_electric_power
    d = {
        ("lift_coefficient", "takeoff_mass"): GRAVITY / (q * wing_area),
        ("lift_coefficient", "density"): -cl / density,
        ("lift_coefficient", "speed"): -2.0 * cl / speed,
        ("lift_coefficient", "wing_area"): -cl / wing_area,
        ("airframe_drag", "takeoff_mass"): 2.0 * di / takeoff_mass,
        ("airframe_drag", "density"): (d0 - di) / density,
        ("airframe_drag", "speed"): 2.0 * (d0 - di) / speed,
        ("airframe_drag", "wing_area"): (d0 - di) / wing_area,
        ("airframe_drag", "aspect_ratio"): -di / aspect_ratio,
        ("airframe_drag", "oswald_efficiency"): -di / oswald_efficiency,
        ("airframe_drag", "zero_lift_drag"): q * wing_area,
    }
    for (of, wrt), value in list(d.items()):
        if of == "airframe_drag":
            d["source_power", wrt] = value * speed / chain_efficiency
    d["source_power", "takeoff_mass"] = (d["source_power", "takeoff_mass"]
                                         + GRAVITY * climb_rate / chain_efficiency)
    d["source_power", "speed"] = ((drag + section_drag) / chain_efficiency
                                  + d["source_power", "speed"])
    d["source_power", "climb_rate"] = weight / chain_efficiency
    d["source_power", "section_drag"] = speed / chain_efficiency
    d["source_power", "fan_electric_power"] = 1.0
    d["source_power", "chain_efficiency"] = -thrust_power / chain_efficiency ** 2
    return {"lift_coefficient": cl, "airframe_drag": drag, "source_power": power}, d


class _NodeComp(om.ExplicitComponent):
    """Adapter for a numpy function of per-node and scalar inputs (sparse partials)."""

    #: (name, units, default, per node?) inputs; (name, units) outputs; the numpy function.
    inputs = ()
    outputs = ()
    function = None

    def initialize(self):
        self.options.declare("num_nodes", types=int, default=1, lower=1, desc="segments")

    def setup(self):
        n = self.options["num_nodes"]
        for name, units, value, node in self.inputs:
            self.add_input(name, val=value * np.ones(n) if node else value, units=units)
        for name, units in self.outputs:
            self.add_output(name, val=np.ones(n), units=units)

    def _call(self, inputs):
        args = {name: (inputs[name] if node else inputs[name][0])
                for name, _, _, node in self.inputs}
        return type(self).function(**args)

    def setup_partials(self):
        n = self.options["num_nodes"]
        node = {name: nd for name, _, _, nd in self.inputs}
        _, d = self._call({name: np.ones(n) for name, *_ in self.inputs})
        self._pairs = sorted(d)
        for of, wrt in self._pairs:
            cols = np.arange(n) if node[wrt] else np.zeros(n, int)
            self.declare_partials(of, wrt, rows=np.arange(n), cols=cols)

    def compute(self, inputs, outputs):
        values, _ = self._call(inputs)
        for name, _ in self.outputs:
            outputs[name] = values[name]

    def compute_partials(self, inputs, partials):
        n = self.options["num_nodes"]
        _, d = self._call(inputs)
        for key in self._pairs:
            partials[key] = np.broadcast_to(d[key], (n,))


class FlightComp(_NodeComp):
    """Lift coefficient, airframe drag and source power per segment (:func:`flight`)."""

    inputs = (("takeoff_mass", "kg", 150.0, False), ("density", "kg/m**3", 1.2, True),
              ("speed", "m/s", 30.0, True), ("climb_rate", "m/s", 0.0, True),
              ("section_drag", "N", 10.0, True), ("fan_electric_power", "W", 0.0, True),
              ("wing_area", "m**2", 3.6, False), ("aspect_ratio", None, 10.0, False),
              ("oswald_efficiency", None, 0.8, False), ("zero_lift_drag", None, 0.025, False),
              ("chain_efficiency", None, 0.78, False))
    outputs = (("lift_coefficient", None), ("airframe_drag", "N"), ("source_power", "W"))
    function = staticmethod(flight)


def segment_time(speed, segment_range, hold_time):
    """Segment duration [s]: the range flown at the segment's speed plus a fixed time."""
    return {"duration": segment_range / speed + hold_time}, {
        ("duration", "speed"): -segment_range / speed ** 2,
        ("duration", "segment_range"): 1.0 / speed,
        ("duration", "hold_time"): np.ones_like(speed)}


class MissionComp(_NodeComp):
    """Duration of each segment (:func:`segment_time`)."""

    inputs = (("speed", "m/s", 30.0, True), ("segment_range", "m", 0.0, True),
              ("hold_time", "s", 600.0, True))
    outputs = (("duration", "s"),)
    function = staticmethod(segment_time)


def section_clean_drag(density, speed, chord, blown_span, drag_clean):
    """Drag of the unblown section over the same span [N]: ``q c b C_D,clean``."""
    q = 0.5 * density * speed ** 2
    drag = q * chord * blown_span * drag_clean
    out = "section_drag"
    return {out: drag}, {(out, "density"): drag / density, (out, "speed"): 2 * drag / speed,
                         (out, "chord"): drag / chord, (out, "blown_span"): drag / blown_span,
                         (out, "drag_clean"): q * chord * blown_span}


class CleanSectionComp(_NodeComp):
    """Clean-wing drag of the span that the blown variant blows (:func:`section_clean_drag`)."""

    inputs = (("density", "kg/m**3", 1.2, True), ("speed", "m/s", 30.0, True),
              ("chord", "m", 0.6, False), ("blown_span", "m", 4.0, False),
              ("drag_clean", None, 0.011, False))
    outputs = (("section_drag", "N"),)
    function = staticmethod(section_clean_drag)


class BatteryComp(om.ExplicitComponent):
    """Mission energy at the source, battery energy and battery mass."""

    def initialize(self):
        self.options.declare("num_nodes", types=int, default=1, lower=1, desc="segments")

    def setup(self):
        n = self.options["num_nodes"]
        self.add_input("source_power", val=np.ones(n), units="W")
        self.add_input("duration", val=np.ones(n), units="s")
        self.add_input("battery_specific_energy", val=720e3, units="J/kg")
        self.add_input("usable_fraction", val=0.8)
        self.add_output("mission_source_energy", val=1.0, units="J")
        self.add_output("battery_energy", val=1.0, units="J")
        self.add_output("battery_mass", val=1.0, units="kg")

    def setup_partials(self):
        n = self.options["num_nodes"]
        for of in ("mission_source_energy", "battery_energy", "battery_mass"):
            self.declare_partials(of, ["source_power", "duration"], rows=np.zeros(n, int),
                                  cols=np.arange(n))
        self.declare_partials(["battery_energy", "battery_mass"], "usable_fraction")
        self.declare_partials("battery_mass", "battery_specific_energy")

    def compute(self, inputs, outputs):
        e = np.sum(inputs["source_power"] * inputs["duration"])
        outputs["mission_source_energy"] = e
        outputs["battery_energy"] = e / inputs["usable_fraction"]
        outputs["battery_mass"] = outputs["battery_energy"] / inputs["battery_specific_energy"]

    def compute_partials(self, inputs, partials):
        p, t = inputs["source_power"], inputs["duration"]
        u, s = inputs["usable_fraction"][0], inputs["battery_specific_energy"][0]
        e = np.sum(p * t)
        for wrt, d in (("source_power", t), ("duration", p)):
            partials["mission_source_energy", wrt] = d
            partials["battery_energy", wrt] = d / u
            partials["battery_mass", wrt] = d / (u * s)
        partials["battery_energy", "usable_fraction"] = -e / u ** 2
        partials["battery_mass", "usable_fraction"] = -e / (u ** 2 * s)
        partials["battery_mass", "battery_specific_energy"] = -e / (u * s ** 2)


def build_aircraft(blown=True, net_thrust=True):
    """An ``om.Problem`` of the aircraft, set up with its design variables, constraints, SLSQP.

    Parameters
    ----------
    blown : bool
        With the blown wing (BlownWingGroup and the blowing-system mass) or a clean wing.
    net_thrust : bool
        Let the blown span make net thrust (its drag below zero). False adds ``drag >= 0``: the
        answer then stays where calibration data of drag-reducing blowing usually lie.
    """
    n = len(SEGMENTS["name"])
    prob = om.Problem(reports=False)
    model = prob.model
    model.add_subsystem("mission", MissionComp(num_nodes=n), promotes=["*"])
    if blown:
        # the blown wing: its promoted names (altitude, speed, duration, momentum_coefficient,
        # fan_pressure_rise, chord, ...) join the aircraft's; 'density' and 'section_drag' come out of it
        model.add_subsystem("wing", BlownWingGroup(num_nodes=n), promotes=["*"])
        add_blowing_system_mass(model, num_nodes=n, duct_model="lumped")
        model.add_subsystem("pressure_balance", om.EQConstraintComp(
            "pressure_balance", eq_units="Pa", lhs_name="fan_pressure_rise",
            rhs_name="required_pressure_rise", shape=(n,)), promotes=["*"])
    else:
        model.add_subsystem("atmosphere", AtmosphereComp(num_nodes=n), promotes=["*"])
        model.add_subsystem("section", CleanSectionComp(num_nodes=n), promotes=["*"])
    model.add_subsystem("flight", FlightComp(num_nodes=n),
                        promotes=["*"])
    model.add_subsystem("battery", BatteryComp(num_nodes=n), promotes=["*"])
    parts = ["empty_mass", "payload_mass", "battery_mass"] + (["blowing_system_mass"] if blown else [])
    expr = "mass_closure = takeoff_mass - (" + " + ".join(parts) + ")"
    model.add_subsystem("mass_buildup", om.ExecComp(
        expr, has_diag_partials=False, **{k: {"units": "kg"} for k in parts + ["takeoff_mass",
                                                                             "mass_closure"]}),
        promotes=["*"])

    # shared promoted inputs: one default each, with units
    model.set_input_defaults("speed", SEGMENTS["speed"], units="m/s")
    model.set_input_defaults("chord", WING["chord"][0], units="m")
    model.set_input_defaults("blown_span", WING["blown_span"][0], units="m")
    model.set_input_defaults("chain_efficiency", AIRCRAFT["chain_efficiency"][0])
    model.set_input_defaults("takeoff_mass", 180.0, units="kg")
    if blown:
        model.set_input_defaults("fan_pressure_rise", np.full(n, 500.0), units="Pa")
        model.set_input_defaults("momentum_coefficient", np.full(n, 0.05))

    model.add_objective("takeoff_mass", ref=100.0)
    model.add_design_var("takeoff_mass", lower=50.0, upper=1000.0, ref=100.0, units="kg")
    model.add_design_var("speed", indices=FREE_SPEEDS, lower=15.0, upper=70.0, ref=30.0)
    model.add_constraint("mass_closure", equals=0.0, ref=1.0)
    model.add_constraint("lift_coefficient", upper=MAX_LIFT_COEFFICIENT, ref=1.0)
    if blown:
        model.add_design_var("slot_ratio", lower=SLOT_RATIO_BOUNDS[0], upper=SLOT_RATIO_BOUNDS[1],
                             ref=SLOT_RATIO_BOUNDS[1])
        lo, hi = MOMENTUM_COEFFICIENT_RANGE
        model.add_design_var("momentum_coefficient", lower=lo, upper=hi, ref=hi)
        model.add_design_var("fan_pressure_rise", lower=PRESSURE_RISE_BOUNDS[0],
                             upper=PRESSURE_RISE_BOUNDS[1], ref=1000.0)
        model.add_design_var("rated_shaft_power", lower=0.0, upper=20e3, ref=1000.0, units="W")
        model.add_constraint("pressure_balance", equals=0.0, ref=1000.0)
        model.add_constraint("power_headroom", lower=0.0, ref=1000.0)
        model.add_constraint("jet_mach", upper=MAX_JET_MACH, ref=MAX_JET_MACH)
        model.add_constraint("slot_height", lower=MIN_SLOT_HEIGHT, ref=MIN_SLOT_HEIGHT)
        # the first law: no more net thrust power than the fans put into the air
        model.add_constraint("energy_margin", lower=0.0, ref=100.0)
        if not net_thrust:
            model.add_constraint("section_drag", lower=0.0, ref=10.0)
    prob.driver = om.ScipyOptimizeDriver(optimizer="SLSQP", tol=1e-10, maxiter=300, disp=False)
    prob.setup()
    _set_values(prob, blown)
    return prob


def _set_values(prob, blown):
    for key in ("altitude", "climb_rate", "segment_range", "hold_time"):
        units = {"altitude": "m", "climb_rate": "m/s", "segment_range": "m", "hold_time": "s"}[key]
        prob.set_val(key, SEGMENTS[key], units=units)
    for name, (value, units) in AIRCRAFT.items():
        prob.set_val(name, value, units=units)
    wing = WING if blown else {k: WING[k] for k in ("chord", "blown_span", "drag_clean")}
    for name, (value, units) in wing.items():
        prob.set_val(name, value, units=units)
    if blown:
        for name, (value, units) in MASS.items():
            prob.set_val(name, value, units=units)
        # start: mid-range blowing, the fan at the pressure rise it requires, rated for it
        # (a first rating for the first run, then 1.5 times the largest shaft power)
        prob.set_val("momentum_coefficient", np.full(len(SEGMENTS["name"]), 0.05))
        prob.set_val("rated_shaft_power", 1000.0, units="W")
        prob.run_model()
        prob.set_val("fan_pressure_rise", np.clip(prob.get_val("required_pressure_rise", units="Pa"),
                                                  *PRESSURE_RISE_BOUNDS), units="Pa")
        prob.run_model()
        prob.set_val("rated_shaft_power", 1.5 * np.max(prob.get_val("fan_shaft_power", units="W")),
                     units="W")


def solve(blown=True, net_thrust=True):
    """Optimize one variant; return its problem and a dict of the figures (SI units)."""
    prob = build_aircraft(blown, net_thrust)
    result = prob.run_driver()
    get = lambda name, units=None: np.asarray(prob.get_val(name, units=units), float)
    out = {
        "converged": bool(result.success),
        "iterations": int(result.iter_count),
        "takeoff_mass_kg": float(get("takeoff_mass", "kg")[0]),
        "battery_mass_kg": float(get("battery_mass", "kg")[0]),
        "battery_energy_J": float(get("battery_energy", "J")[0]),
        "mission_source_energy_J": float(get("mission_source_energy", "J")[0]),
        "mass_closure_kg": float(get("mass_closure", "kg")[0]),
        "speed_m_s": get("speed", "m/s").tolist(),
        "duration_s": get("duration", "s").tolist(),
        "lift_coefficient": get("lift_coefficient").tolist(),
        "source_power_W": get("source_power", "W").tolist(),
        "section_drag_N": get("section_drag", "N").tolist(),
    }
    if blown:
        out.update({
            "blowing_system_mass_kg": float(get("blowing_system_mass", "kg")[0]),
            "fan_motor_mass_kg": float(get("fan_motor_mass", "kg")[0]),
            "duct_mass_kg": float(get("duct_mass", "kg")[0]),
            "rated_shaft_power_W": float(get("rated_shaft_power", "W")[0]),
            "slot_ratio": float(get("slot_ratio")[0]),
            "momentum_coefficient": get("momentum_coefficient").tolist(),
            "fan_pressure_rise_Pa": get("fan_pressure_rise", "Pa").tolist(),
            "required_pressure_rise_Pa": get("required_pressure_rise", "Pa").tolist(),
            "fan_electric_power_W": get("fan_electric_power", "W").tolist(),
            "net_power_saving_W": get("net_power_saving", "W").tolist(),
            "mission_energy_saving_J": float(get("mission_energy_saving", "J")[0]),
            # thrust-equivalent power of the drag saved per fan shaft power: above 1 the
            # calibration makes the blown span a better propulsor than an ideal propeller
            "saving_per_shaft_power": (get("drag_saving", "N") * get("speed", "m/s")
                                       / get("fan_shaft_power", "W")).tolist(),
            "energy_margin_W": get("energy_margin", "W").tolist(),
        })
    return prob, out


def main(verbose=True):
    """Optimize the aircraft with the blown wing and with a clean wing; return both results."""
    _, blown = solve(blown=True)
    _, held = solve(blown=True, net_thrust=False)
    _, clean = solve(blown=False)
    results = {"blown": blown, "blown_no_net_thrust": held, "clean": clean,
               "takeoff_mass_change_kg": blown["takeoff_mass_kg"] - clean["takeoff_mass_kg"],
               "takeoff_mass_change_no_net_thrust_kg": (held["takeoff_mass_kg"]
                                                        - clean["takeoff_mass_kg"])}
    if verbose:
        print(report(results))
    return results


def report(results):
    """A short text comparison of the optima."""
    cols = [("clean wing", results["clean"]), ("blown", results["blown"]),
            ("blown, D>=0", results["blown_no_net_thrust"])]
    names = SEGMENTS["name"]

    def row(label, fn, fmt):
        return f"{label:28s}" + "".join(f"{format(fn(r), fmt):>14s}" for _, r in cols)

    lines = ["Battery-electric cargo drone, lightest take-off mass for the required mission",
             f"{'':28s}" + "".join(f"{c:>14s}" for c, _ in cols),
             row("converged", lambda r: str(r["converged"]), "s"),
             row("take-off mass [kg]", lambda r: r["takeoff_mass_kg"], ".2f"),
             row("battery mass [kg]", lambda r: r["battery_mass_kg"], ".2f"),
             row("blowing system mass [kg]", lambda r: r.get("blowing_system_mass_kg", 0.0), ".2f"),
             row("battery energy [kWh]", lambda r: r["battery_energy_J"] / 3.6e6, ".3f"),
             row("slot ratio", lambda r: r.get("slot_ratio", float("nan")), ".4f"),
             row("rated fan power [W]", lambda r: r.get("rated_shaft_power_W", 0.0), ".0f")]
    for i, name in enumerate(names):
        lines.append(row(f"{name} speed [m/s]", lambda r: r["speed_m_s"][i], ".2f"))
        lines.append(row(f"{name} C_mu", lambda r: (r["momentum_coefficient"][i]
                                                   if "momentum_coefficient" in r else float("nan")),
                         ".4f"))
    lines.append(f"take-off mass change with blowing: {results['takeoff_mass_change_kg']:+.2f} kg "
                 f"({results['takeoff_mass_change_no_net_thrust_kg']:+.2f} kg with the blown span "
                 "held at zero net thrust)")
    margin = min(results["blown"]["energy_margin_W"])
    lines.append(f"smallest energy margin of the blown optimum: {margin:.3g} W (>= 0: no more net "
                 "thrust power than the fans put into the air)")
    return "\n".join(lines)


if __name__ == "__main__":
    res = main()
    ok = all(res[k]["converged"] for k in ("blown", "blown_no_net_thrust", "clean"))
    sys.exit(0 if ok else 1)
