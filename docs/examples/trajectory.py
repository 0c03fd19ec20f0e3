"""A blown wing inside a trajectory optimization: climb and cruise of an electric aircraft.

Scenario (invented): a battery-electric survey aircraft of 160 kg leaves a valley strip at
300 m and must be at the start of its survey, 60 km away (ground distance) at 1200 m, within
25 minutes. The inboard 4 m of
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
  ``log_momentum_coefficient`` (``ln C_mu``);
- the ISA at the node's altitude (:class:`mdao.components.atmosphere.AtmosphereComp`), read by
  the aircraft and, as the host's air (``atmosphere="host"``), by the blown wing;
- quasi-steady flight: lift ``L = W cos(gamma)``, ``C_L = L / (q S)``; drag
  ``D = q S (C_D0 + C_L^2 / (pi e A)) + D_section``, where ``C_D0`` leaves the blown span out
  and ``D_section`` is the group's ``section_drag`` (the blown span's drag); thrust
  ``T = D + W sin(gamma)``;
- battery power ``P = T V / eta_chain + P_fan`` with the group's ``fan_electric_power``;
- rates ``d(range)/dt = V cos(gamma)``, ``d(altitude)/dt = V sin(gamma)``,
  ``d(battery_energy)/dt = -P``.

Constants that follow the lift. The blown section's drag model (docs/theory.md, "Airfoil") has
constants calibrated at one lift; here two of them are tables over the section lift
coefficient (:class:`mdao.physics.lift_table.LiftTable`, option ``lift_tables``), read at the
aircraft's ``C_L`` at every node (the blown inboard span is taken to fly at the aircraft's lift
coefficient; the spanwise lift distribution is not modelled):

- ``drag_per_momentum`` grows more negative with the lift: the higher the section's lift, the
  closer its boundary layer is to separating near the trailing edge, and the more drag a given
  jet momentum saves (the trade's qualitative view of boundary-layer blowing; common
  practice, no source);
- ``drag_clean`` rises with the lift, as a section's profile drag does above its low-drag range.

The table values are invented (within the ranges of :mod:`mdao.parameters`), and so are the
survey drone's other constants changed for this example: a saturating gain of blowing
(``drag_quadratic = 8``) and a smaller slot penalty (``slot_drag = 0.004``). With the purely
linear gain of the survey drone (``drag_per_momentum = -1.7``, no quadratic term) the best
momentum coefficient was never an interior optimum: the optimizer blew until the energy balance
(``energy_margin >= 0``) stopped it, at the same C_mu (0.0222) at every node. With the saturating
gain the best C_mu lies where one more unit of C_mu saves as much main-propulsion power as the
fans draw; where blowing saves more drag (higher C_L) that balance lies at a larger C_mu, so the
optimum schedule follows the lift. At every node it is the pointwise best C_mu of the NumPy
chain at the node's flight condition (tests/test_trajectory.py): C_mu enters the flight only
through the battery power at its own node. These tables make the energy balance bind above a C_L
of about 0.55 (the linear credit of a more negative ``drag_per_momentum`` outruns the fans' air
power); there the best C_mu is the balance's root instead, and it falls as the lift rises. The
flight below stays under that.

The lift along the flight. An aircraft whose force coefficients depend only on C_L and C_mu
flies its least-energy flight at one C_L (the speed follows the density): without a deadline
this one holds C_L = 0.80 at every node, and the schedule has nothing to follow. The survey has
a deadline instead: the aircraft must reach the survey point within ``DURATION_BOUNDS[1]``
(25 min, 40 m/s on average). Flying faster than its best-efficiency speed, it climbs to about
2.8 km, where the thin air makes the fast flight cheaper, and descends to 1200 m at the end; the
lift coefficient rises with the climb (0.43 to 0.48) and falls on the descent, and the momentum
coefficient rises and falls with it (0.0219 to 0.0233), with a Spearman rank correlation of
0.99. The deadline bounds the flight time only; nothing constrains the momentum coefficient but
its calibrated range, the jet Mach limit and the energy balance, none of them active. With the
tables held at one lift (:func:`frozen_tables`) the same flight blows at one C_mu throughout.

Path constraints: the momentum coefficient within the calibrated range (the control is
``ln C_mu``: positive also at the segment ends, where the Radau transcription extrapolates a
control), the jet Mach number limit, ``C_L`` below its limit and the blown span's
``energy_margin >= 0`` at every node (the span may not return more net thrust power than its
fans put into the air; docs/theory.md).

The group is built with ``mission_sums=False`` (no per-segment ``duration``; the phase integrates
the powers) and ``atmosphere="host"`` (the ISA comes first in the ODE, so the aircraft's C_L can
be computed before the wing reads its tables); every input it has is given: the air, the speed
and ``lift_coefficient`` from the ODE, the constants as phase parameters, the momentum
coefficient from the control. The group's ``lift_increment`` is not credited (conservative, as
in electric_aircraft.py).

Run: ``python docs/examples/trajectory.py [--figure FILE]`` (a few seconds). :func:`main`
returns the results; ``--figure`` draws the momentum-coefficient schedule and the lift
coefficient against the flight time (matplotlib). The results are preliminary design estimates,
not airworthiness evidence.
"""
import argparse
import os
import sys
import tempfile
import time

import numpy as np
import openmdao.api as om
import dymos as dm

from mdao.components.atmosphere import AtmosphereComp
from mdao.parameters import BY_NAME
from mdao.physics.lift_table import LiftTable
from mdao.system import BlownWingGroup
from mdao.total_coloring import color_totals

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

#: Blown span and its calibration constants given as one number (invented; the constants of
#: the lumped duct and the constant-efficiency fan). Read their units from mdao.parameters.
WING = {
    "chord": 0.6,
    "blown_span": 4.0,
    "slot_ratio": 0.01,
    "jet_loss_factor": 1.22,
    "freestream_assist": 0.90,
    "fan_rated_efficiency": 0.70,
    "motor_efficiency": 0.92,
    "slot_drag": 0.004,
    "slot_drag_per_ratio": 1.0,
    "drag_per_momentum_per_ratio": 0.0,
    "drag_quadratic": 8.0,
    "lift_per_momentum": 0.0,
    "thrust_power_ceiling": 1.0,
}

#: Calibration constants tabulated over the section lift coefficient (invented numbers; the
#: shape is the trend of the module docstring). The breakpoints span every C_L the phase's
#: bounds allow: 0.17 at 60 m/s at sea level on the steepest path to the C_L limit 1.2.
LIFT_TABLES = (
    ("drag_per_momentum", LiftTable((0.1, 0.4, 0.7, 1.0, 1.3), (-0.8, -1.2, -1.7, -2.2, -2.6))),
    ("drag_clean", LiftTable((0.1, 0.4, 0.7, 1.0, 1.3), (0.0095, 0.0100, 0.0112, 0.0135, 0.0175))),
)

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
DURATION_BOUNDS = (600.0, 1500.0)           # [s]; the upper bound is the survey's deadline

#: Transcription of the test and of the script: small, fast.
SEGMENTS = 5
ORDER = 3


# --- aircraft physics: plain numpy, values and partials ------------------------------------------

def lift_coefficient(mass, density, speed, flight_path_angle, wing_area):
    """The aircraft's lift coefficient in quasi-steady flight, with partials.

    ``C_L = m g cos(gamma) / (q S)``, ``q = rho V^2 / 2`` (lift balances the weight's normal
    component; Anderson, *Aircraft Performance and Design*, 1999, ch. 5, from memory).

    Parameters
    ----------
    mass : float
        Aircraft mass [kg].
    density, speed, flight_path_angle : array
        Air density [kg/m**3], true airspeed [m/s], flight-path angle [rad].
    wing_area : float
        Reference area [m**2].

    Returns
    -------
    outputs : dict
        ``lift_coefficient`` [-].
    partials : dict
        ``partials["lift_coefficient", input]``, per node.
    """
    q = 0.5 * density * speed ** 2
    cl = mass * GRAVITY * np.cos(flight_path_angle) / (q * wing_area)
    return {"lift_coefficient": cl}, {
        ("lift_coefficient", "mass"): cl / mass,
        ("lift_coefficient", "density"): -cl / density,
        ("lift_coefficient", "speed"): -2.0 * cl / speed,
        ("lift_coefficient", "flight_path_angle"): -cl * np.tan(flight_path_angle),
        ("lift_coefficient", "wing_area"): -cl / wing_area,
    }


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
        ``drag`` [N], ``thrust`` [N], ``battery_power`` [W], ``range_rate`` [m/s],
        ``altitude_rate`` [m/s], ``energy_rate`` [W].
    partials : dict
        ``partials[output, input]``, per node (arrays) or broadcastable scalars.
    """
    weight = mass * GRAVITY
    q = 0.5 * density * speed ** 2
    cos, sin = np.cos(flight_path_angle), np.sin(flight_path_angle)
    k = 1.0 / (np.pi * oswald_efficiency * aspect_ratio)
    lift = weight * cos
    d0 = q * wing_area * zero_lift_drag
    di = k * lift ** 2 / (q * wing_area)
    drag = d0 + di + section_drag
    thrust = drag + weight * sin
    power = thrust * speed / chain_efficiency + fan_electric_power
    out = {"drag": drag, "thrust": thrust, "battery_power": power,
           "range_rate": speed * cos, "altitude_rate": speed * sin, "energy_rate": -power}

    tan = np.tan(flight_path_angle)
    d = {
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


class _NodeComp(om.ExplicitComponent):
    """Thin adapter of a NumPy function ``FUNCTION(**inputs) -> (outputs, partials)``: per-node
    and scalar inputs, sparse (diagonal) partials."""

    FUNCTION = None
    #: (name, units, start value, one per node?)
    INPUTS = ()
    #: (name, units)
    OUTPUTS = ()

    def initialize(self):
        self.options.declare("num_nodes", types=(int, np.integer), default=1, lower=1)

    def setup(self):
        n = int(self.options["num_nodes"])
        for name, units, value, per_node in self.INPUTS:
            self.add_input(name, val=value * np.ones(n) if per_node else value, units=units)
        for name, units in self.OUTPUTS:
            self.add_output(name, val=np.ones(n), units=units)

    def _evaluate(self, inputs):
        return type(self).FUNCTION(**{name: inputs[name] if per_node else inputs[name][0]
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


class LiftComp(_NodeComp):
    """Thin adapter of :func:`lift_coefficient`."""

    FUNCTION = staticmethod(lift_coefficient)
    INPUTS = (("mass", "kg", 160.0, False), ("density", "kg/m**3", 1.2, True),
              ("speed", "m/s", 30.0, True), ("flight_path_angle", "rad", 0.0, True),
              ("wing_area", "m**2", 4.2, False))
    OUTPUTS = (("lift_coefficient", None),)


def momentum_from_log(log_momentum_coefficient):
    """``C_mu = exp(x)``, with its derivative: the phase's control is ``x = ln C_mu``, so the
    momentum coefficient stays positive also where the Radau transcription extrapolates a
    control (each segment's last node)."""
    cmu = np.exp(log_momentum_coefficient)
    return ({"momentum_coefficient": cmu},
            {("momentum_coefficient", "log_momentum_coefficient"): cmu})


class MomentumComp(_NodeComp):
    """Thin adapter of :func:`momentum_from_log`."""

    FUNCTION = staticmethod(momentum_from_log)
    INPUTS = (("log_momentum_coefficient", None, np.log(0.03), True),)
    OUTPUTS = (("momentum_coefficient", None),)


class FlightComp(_NodeComp):
    """Thin adapter of :func:`flight`."""

    FUNCTION = staticmethod(flight)
    INPUTS = (("mass", "kg", 160.0, False), ("density", "kg/m**3", 1.2, True),
              ("speed", "m/s", 30.0, True), ("flight_path_angle", "rad", 0.0, True),
              ("section_drag", "N", 10.0, True), ("fan_electric_power", "W", 0.0, True),
              ("wing_area", "m**2", 4.2, False), ("aspect_ratio", None, 11.7, False),
              ("oswald_efficiency", None, 0.8, False), ("zero_lift_drag", None, 0.022, False),
              ("chain_efficiency", None, 0.78, False))
    OUTPUTS = (("drag", "N"), ("thrust", "N"), ("battery_power", "W"), ("range_rate", "m/s"),
               ("altitude_rate", "m/s"), ("energy_rate", "W"))


#: The blown wing's names the ODE promotes (explicitly, every input the group has): the flight
#: condition and the air from the ODE, the lift the tables are read at, the constants.
WING_INPUTS = (["speed", "density", "speed_of_sound", "lift_coefficient",
                "momentum_coefficient", "chain_efficiency"] + list(WING))
WING_OUTPUTS = ["section_drag", "clean_section_drag", "fan_electric_power", "fan_shaft_power",
                "energy_margin", "jet_mach", "required_pressure_rise", "net_power_saving"]


class ClimbCruiseODE(om.Group):
    """The ODE of the phase: the air, the aircraft's lift coefficient, the blown wing (or the
    clean wing) and the aircraft's flight."""

    def initialize(self):
        self.options.declare("num_nodes", types=(int, np.integer))
        self.options.declare("blown", types=bool, default=True,
                             desc="False: the same span unblown (its clean section drag, no fan)")
        self.options.declare("lift_tables", types=tuple, default=LIFT_TABLES,
                             desc="((name, LiftTable), ...): the constants tabulated over C_L")

    def setup(self):
        n = int(self.options["num_nodes"])
        self.add_subsystem("atmosphere", AtmosphereComp(num_nodes=n), promotes_inputs=["altitude"],
                           promotes_outputs=["density", "speed_of_sound"])
        self.add_subsystem("lift", LiftComp(num_nodes=n), promotes=["*"])
        if self.options["blown"]:
            self.add_subsystem("momentum", MomentumComp(num_nodes=n), promotes=["*"])
        wing = BlownWingGroup(num_nodes=n, fused=True, follow_requirement=True,
                              atmosphere="host", mission_sums=False,
                              lift_tables=self.options["lift_tables"])
        if self.options["blown"]:
            self.add_subsystem("wing", wing, promotes_inputs=WING_INPUTS,
                               promotes_outputs=WING_OUTPUTS)
        else:
            # the same group's clean section drag (same air, same clean coefficient at the
            # same lift); no fan runs, so the flight sees no fan power
            self.add_subsystem("wing", wing, promotes_inputs=WING_INPUTS,
                               promotes_outputs=[("clean_section_drag", "section_drag")])
            self.set_input_defaults("fan_electric_power", np.zeros(n), units="W")
        self.add_subsystem("flight", FlightComp(num_nodes=n), promotes=["*"])


def build(blown=True, segments=SEGMENTS, order=ORDER, lift_tables=LIFT_TABLES):
    """The set-up ``om.Problem`` of the trajectory with its start point, SLSQP as driver.

    Parameters
    ----------
    blown : bool
        With the blown span (momentum coefficient a control) or the same span clean.
    segments, order : int
        Radau transcription: number of segments and polynomial order.
    lift_tables : tuple
        ``((name, LiftTable), ...)``, the constants tabulated over the lift coefficient
        (default :data:`LIFT_TABLES`; :func:`frozen_tables` for the same constants held at
        one lift).
    """
    prob = om.Problem(reports=False)
    traj = prob.model.add_subsystem("traj", dm.Trajectory())
    phase = dm.Phase(ode_class=ClimbCruiseODE,
                     ode_init_kwargs={"blown": blown, "lift_tables": lift_tables},
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
        # the control is ln(C_mu); the range holds at the collocation nodes by the control's
        # bounds and at every node (also the extrapolated segment ends) by a path constraint
        phase.add_control("log_momentum_coefficient", targets=["log_momentum_coefficient"],
                          lower=np.log(lo), upper=np.log(hi), ref=1.0)
        phase.add_path_constraint("momentum_coefficient", lower=lo, upper=hi, ref=hi)
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
    prob.setup()
    start(prob, blown)
    prob.final_setup()
    color_totals(prob)      # the total Jacobian's coloring from the declared partials, in memory
    return prob


def start(prob, blown=True):
    """The start point: a rough guess within the deadline. States straight from the start to
    the end; the controls piecewise linear through a start, a middle and an end value (not
    constant, so the derivative check in the tests is taken where every control has a rate):
    speed 40, 43, 40 m/s, flight-path angle 0.03, 0.0, 0.015 rad, momentum coefficient 0.025,
    0.03, 0.02."""
    phase = prob.model.traj.phases.flight
    duration = 1450.0
    kink = [0.0, 0.5 * duration, duration]       # [s]
    phase.set_time_val(initial=0.0, duration=duration, units="s")
    phase.set_state_val("range", [0.0, MISSION["range"]], units="m")
    phase.set_state_val("altitude", [MISSION["initial_altitude"], MISSION["final_altitude"]],
                        units="m")
    e0 = MISSION["initial_energy"]
    phase.set_state_val("battery_energy", [e0, 0.8 * e0], units="J")
    phase.set_control_val("speed", [40.0, 43.0, 40.0], kink, units="m/s")
    phase.set_control_val("flight_path_angle", [0.03, 0.0, 0.015], kink, units="rad")
    if blown:
        phase.set_control_val("log_momentum_coefficient", np.log([0.025, 0.03, 0.02]), kink)


def distinct_nodes(time_s):
    """Indices of the timeseries nodes at distinct times (a segment's last node and the next
    segment's first are one instant: keep the first)."""
    t = np.asarray(time_s, float)
    keep = np.ones(t.size, bool)
    keep[1:] = np.diff(t) > 1e-9 * max(abs(t[-1]), 1.0)
    return np.flatnonzero(keep)


def schedule_measures(result):
    """How the momentum coefficient follows the lift coefficient along the flight.

    Over the distinct nodes: Spearman's rank correlation of C_mu with C_L (scipy.stats), and the
    slope ``dC_mu/dC_L`` [-] and intercept of the least-squares line of C_mu on C_L.

    Parameters
    ----------
    result : dict
        One entry of :func:`solve`'s results, with the momentum coefficient.

    Returns
    -------
    dict
        ``rank_correlation``, ``slope``, ``intercept``, ``lift_range`` (min, max C_L),
        ``momentum_range`` (min, max C_mu).
    """
    from scipy.stats import spearmanr

    idx = distinct_nodes(result["time_s"])
    cl = np.asarray(result["lift_coefficient"], float)[idx]
    cmu = np.asarray(result["momentum_coefficient"], float)[idx]
    slope, intercept = np.polyfit(cl, cmu, 1)
    return {"rank_correlation": float(spearmanr(cl, cmu).statistic), "slope": float(slope),
            "intercept": float(intercept), "lift_range": (float(cl.min()), float(cl.max())),
            "momentum_range": (float(cmu.min()), float(cmu.max()))}


def frozen_tables(lift_coefficient, tables=LIFT_TABLES):
    """The tables held at their values at one lift coefficient (flat tables over the same
    range): the same constants, no dependence on the lift."""
    from mdao.physics.lift_table import interpolate

    return tuple((name, LiftTable(t.lift_coefficient,
                                  (float(interpolate(t, lift_coefficient)),) * len(t.value)))
                 for name, t in tables)


def solve(blown=True, segments=SEGMENTS, order=ORDER, lift_tables=LIFT_TABLES):
    """Optimize the trajectory; return the problem and a dict of figures (SI units)."""
    prob = build(blown, segments, order, lift_tables)
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
        out["schedule"] = schedule_measures(out)
    return prob, out


def main(verbose=True, figure=None):
    """Optimize the flight with the blown span and with the same span clean.

    Parameters
    ----------
    verbose : bool
        Print :func:`report`.
    figure : str or path, optional
        Draw the momentum-coefficient schedule and the lift coefficient into this PNG file
        (:func:`draw_schedule`).
    """
    _, blown = solve(blown=True)
    _, clean = solve(blown=False)
    results = {"blown": blown, "clean": clean,
               "energy_change_J": blown["energy_used_J"] - clean["energy_used_J"]}
    if verbose:
        print(report(results))
    if figure is not None:
        draw_schedule(results, figure)
        if verbose:
            print(f"figure written: {figure}")
    return results


def report(results):
    """A short text summary of both optima and the blown flight's schedule."""
    b, c = results["blown"], results["clean"]
    lines = ["Electric aircraft, 60 km climb-cruise from 300 m to 1200 m within "
             f"{DURATION_BOUNDS[1]:.0f} s, least battery energy (preliminary design estimate)",
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
    lines.append(f"smallest energy margin: {min(b['energy_margin_W']):.3g} W")
    lines.append(f"energy change with blowing: {results['energy_change_J'] / 3.6e6:+.4f} kWh")
    lines += ["", "Blown span along the flight (distinct nodes):",
              f"{'t [s]':>8s}{'h [m]':>8s}{'V [m/s]':>9s}{'C_L':>8s}{'C_mu':>9s}"]
    for i in distinct_nodes(b["time_s"]):
        lines.append(f"{b['time_s'][i]:8.0f}{b['altitude_m'][i]:8.0f}{b['speed_m_s'][i]:9.2f}"
                     f"{b['lift_coefficient'][i]:8.4f}{b['momentum_coefficient'][i]:9.5f}")
    s = b["schedule"]
    lines.append(f"C_mu on C_L: Spearman rank correlation {s['rank_correlation']:+.3f}, "
                 f"least-squares slope dC_mu/dC_L {s['slope']:+.4f}")
    return "\n".join(lines)


def draw_schedule(results, path):
    """Draw C_L and C_mu of the blown flight against the flight time into a PNG file.

    Two stacked panels sharing the time axis; the file is written atomically (a temporary file
    in the same folder, then ``os.replace``). Needs matplotlib.

    Parameters
    ----------
    results : dict
        :func:`main`'s results (the ``"blown"`` entry is drawn).
    path : str or path
        The PNG file to write.
    """
    from matplotlib.figure import Figure   # no pyplot: no global state, no display needed

    b = results["blown"]
    idx = distinct_nodes(b["time_s"])
    t = np.asarray(b["time_s"])[idx] / 60.0
    cl = np.asarray(b["lift_coefficient"])[idx]
    cmu = np.asarray(b["momentum_coefficient"])[idx]
    s = b["schedule"]
    fig = Figure(figsize=(7.0, 5.6), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True)
    top.plot(t, cl, "o-", color="tab:blue")
    top.set_ylabel("aircraft lift coefficient $C_L$ [-]")
    top.grid(True, alpha=0.3)
    bottom.plot(t, cmu, "s-", color="tab:red")
    bottom.set_ylabel(r"momentum coefficient $C_\mu$ [-]")
    bottom.set_xlabel("flight time [min]")
    bottom.grid(True, alpha=0.3)
    bottom.text(0.98, 0.04, f"Spearman rank correlation with $C_L$: "
                            f"{s['rank_correlation']:+.3f}\n"
                            rf"least-squares slope $dC_\mu/dC_L$: {s['slope']:+.4f}",
                transform=bottom.transAxes, ha="right", va="bottom", fontsize=9,
                bbox=dict(facecolor="white", edgecolor="0.8", alpha=0.9))
    fig.suptitle("Optimum blowing schedule and lift along the climb-cruise\n"
                 "(invented aircraft; preliminary design estimate, not airworthiness evidence)",
                 fontsize=10)
    path = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(suffix=".png", prefix=".tmp-", dir=folder)
    try:
        with os.fdopen(fd, "wb") as f:
            fig.savefig(f, format="png", dpi=120)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)    # mkstemp's 0600 -> an ordinary file's mode
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.remove(tmp)
        raise


def cli(argv=None):
    """The command line: optimize, print the report, optionally draw the figure; exit status 0
    when both optima converged."""
    parser = argparse.ArgumentParser(description="Climb-cruise of an invented electric "
                                                 "aircraft with a blown span (Dymos).")
    parser.add_argument("--figure", metavar="FILE",
                        help="write C_L and C_mu against flight time to this PNG file")
    args = parser.parse_args(argv)
    res = main(figure=args.figure)
    return 0 if res["blown"]["converged"] and res["clean"]["converged"] else 1


if __name__ == "__main__":
    sys.exit(cli())
