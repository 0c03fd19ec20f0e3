"""The wired blown-wing group and the optimization problem built from a case.

:class:`BlownWingGroup` wires atmosphere, jet, transition (geometric duct), duct loss, fan,
airfoil and segment power, one node per segment (or operating point), with promoted names in the
trade's words. :func:`build_problem` turns a validated :class:`mdao.case.Case` into a set-up
``om.Problem`` with design variables, constraints, objective and SLSQP.
"""
from dataclasses import dataclass, fields

import numpy as np
from mdao import om

from mdao import constraints as design_constraints
from mdao import parameters as registry
from mdao.case.loading import lift_tables, segment_lift
from mdao.driver import VectorSLSQPDriver
from mdao.physics import chain
from mdao.physics.atmosphere import isa
from mdao.total_coloring import color_totals

from mdao.components.aircraft import AircraftComp
from mdao.components.airfoil import AirfoilComp
from mdao.components.atmosphere import AtmosphereComp
from mdao.components.chain import ChainComp
from mdao.components.common import (CHAIN_OPTIONS, HOST_GIVES, HOST_INPUTS,
                                    chain_on_the_map, declare_chain_options, host_air,
                                    input_parameters, unset_start)
from mdao.components.duct import DuctLossComp
from mdao.components.fan import FanComp
from mdao.components.jet import JetComp
from mdao.components.power import SegmentPowerComp
from mdao.components.transition import TransitionComp

#: Promoted inputs that more than one component of the per-discipline group takes.
SHARED_INPUTS = ("slot_ratio", "chord", "blown_span", "speed", "fan_diameter")


class BlownWingGroup(om.Group):
    """Blown wing at ``num_nodes`` operating points: from flight condition to net power saved.

    Inputs (promoted) per node: ``speed`` [m/s], ``momentum_coefficient``, ``fan_pressure_rise``
    [Pa] (not with ``follow_requirement``), ``altitude`` [m] (with the ISA; with
    ``atmosphere="host"`` the air's state instead), ``duration`` [s] (with ``mission_sums``);
    and the wing-level constants declared in :mod:`mdao.parameters` that the chosen models use.
    Every input the host must give starts unset and is refused by name at the first evaluation
    (``examples=True`` starts them at documented examples). Outputs include
    ``required_pressure_rise`` [Pa], ``jet_velocity`` [m/s], ``volume_flow`` [m**3/s],
    ``fan_shaft_power`` [W], ``section_drag`` [N] (the blown span's section drag, not the
    aircraft's), ``net_power_saving`` [W], and with ``mission_sums`` ``energy_saving`` [J] per
    node and ``mission_energy_saving`` [J]. docs/embedding.md, section 5, lists every input,
    output and option.
    """

    def initialize(self):
        declare_chain_options(self.options)
        self.options.declare("fused", types=bool, default=True,
                             desc="one ChainComp (the NumPy chain with its derivatives; the "
                                  "default) instead of one component per discipline (False): "
                                  "the fast path, every model and option; the same names, "
                                  "values and derivatives")

    def setup(self):
        o = self.options
        n = o["num_nodes"]
        if o["lift_tables"] and not o["fused"]:
            raise ValueError("lift_tables: constants tabulated over the lift coefficient are "
                             "evaluated by the fused chain (fused=True, the default); the "
                             "per-discipline group takes one value per constant")
        if o["outputs"] is not None and not o["fused"]:
            raise ValueError("outputs: a chosen set of outputs is declared by the fused chain "
                             "(fused=True, the default)")
        if o["per_node"] and not o["fused"]:
            raise ValueError("per_node: wing-level constants given per node are evaluated by "
                             "the fused chain (fused=True, the default)")
        if o["sized_fan"] and not o["fused"]:
            raise ValueError("sized_fan: the fan sized across the mission is evaluated by the "
                             "fused chain (fused=True, the default)")
        if o["compressible_jet"] and not o["fused"]:
            raise ValueError("compressible_jet: the compressible jet is evaluated by the fused "
                             "chain (fused=True, the default); the per-discipline group's jet "
                             "is incompressible")
        if o["fused"]:
            self.add_subsystem("chain", ChainComp(**{k: o[k] for k in CHAIN_OPTIONS}),
                promotes=["*"])
            return
        if o["atmosphere"] == "isa":    # else the host's air: inputs of the components
            self.add_subsystem("atmosphere", AtmosphereComp(num_nodes=n), promotes=["*"])
        self.add_subsystem("jet", JetComp(num_nodes=n, blowing=o["blowing"]), promotes=["*"])
        if o["duct_model"] == "geometric":
            self.add_subsystem("transition", TransitionComp(
                num_nodes=n, fans=o["fans"], stations=o["stations"], schedule=o["schedule"]),
                promotes=["*"])
        self.add_subsystem("duct", DuctLossComp(num_nodes=n, duct_model=o["duct_model"],
                                                fans=o["fans"], stations=o["stations"],
                                                blowing=o["blowing"]), promotes=["*"])
        fan = FanComp(num_nodes=n, fan_model=o["fan_model"], fans=o["fans"],
                      compressible=o["compressible"], blowing=o["blowing"])
        self.add_subsystem("fan", fan, promotes=["*"])
        if o["follow_requirement"]:     # the fan gives what the duct requires: no free input
            self.connect("required_pressure_rise", "fan_pressure_rise")
        self.add_subsystem("airfoil", AirfoilComp(num_nodes=n, blowing=o["blowing"]),
                           promotes=["*"])
        self.add_subsystem("power", SegmentPowerComp(num_nodes=n, blowing=o["blowing"],
                                                     mission_sums=o["mission_sums"]),
                           promotes=["*"])
        shared = SHARED_INPUTS
        if o["aircraft"]:
            self.add_subsystem("aircraft", AircraftComp(num_nodes=n,
                                                        mission_sums=o["mission_sums"]),
                               promotes=["*"])
            shared = shared + (("duration",) if o["mission_sums"] else ()) + ("chain_efficiency",)

        # one start value for each input the host gives or several components share: unset
        # (NaN) for what the host must give (the first evaluation refuses it by name), else
        # the declared default
        starts = {p.name: (p.unit, np.atleast_1d(p.start_value)
                           * (np.ones(n) if p.per_segment else 1.0))
                  for p in input_parameters(o) if not p.fused_only}
        starts["momentum_coefficient"] = (None,
                                          HOST_INPUTS["momentum_coefficient"][0] * np.ones(n))
        if not o["follow_requirement"]:
            starts["fan_pressure_rise"] = ("Pa", HOST_INPUTS["fan_pressure_rise"][0] * np.ones(n))
        if o["atmosphere"] == "host":
            starts.update({name: (units, start * np.ones(n))
                           for name, (units, start) in host_air(o).items()})
        for name, (units, value) in starts.items():
            if name in HOST_GIVES:
                self.set_input_defaults(name, unset_start(value, o["examples"]), units=units)
            elif name in shared:
                self.set_input_defaults(name, value, units=units)


def group_options(case, fused=None):
    """BlownWingGroup options for a case; ``fused`` (one ChainComp) is the default for every
    duct and fan model."""
    opts = chain_options(case)    # shallow: the lift tables stay LiftTable objects
    return dict({f.name: getattr(opts, f.name) for f in fields(opts)}, num_nodes=len(case.segments),
                blowing=list(case.blowing), fused=True if fused is None else fused)


def applicable_parameters(case):
    """The :class:`mdao.parameters.Parameter` declarations of the chain that the case's models
    use (wing-level and per-segment)."""
    return registry.chain_parameters(case.duct["model"], case.fan["model"],
                                     aircraft=case.has_aircraft)


def parameter_values(case):
    """``{promoted name: SI value}`` of the case's model parameters (per-segment ones as arrays
    over the segments); parameters the case leaves unset (None) are left out, and so are the
    constants it tabulates over the lift coefficient (they travel in :func:`chain_options`;
    without ``[aircraft]`` the segments' ``lift_coefficient`` is then among the values)."""
    out = {}
    tables = lift_tables(case)
    high_lift = bool(case.high_lift.any())
    for p in applicable_parameters(case):
        if p.name in HIGH_LIFT_PARAMETERS and not high_lift:
            continue    # the high-lift requirement's constants, unused without such a segment
        if p.per_segment:
            out[p.name] = np.array([s[p.field] for s in case.segments], float)
            continue
        value = case.value(p.key)
        if value is not None and p.key not in tables:
            out[p.name] = np.asarray(value, float)
    if tables and not case.has_aircraft:
        out["lift_coefficient"] = segment_lift(case)
    if case.sizes_fan:
        for p in registry.MASS_PARAMETERS:
            if p.used_by(case.duct["model"], case.fan["model"]):
                out[p.name] = np.asarray(case.value(p.key), float)
    return out


def set_case_values(prob, case, start=True, follow_requirement=False, point=None):
    """Load a case's constants and segments into a set-up problem (SI units), and with
    ``start`` the start point (``point``, default :func:`start_point` of the case)."""
    for name, value in parameter_values(case).items():
        prob.set_val(name, value)
    if start:
        point = start_point(case) if point is None else point
        prob.set_val("slot_ratio", point.slot_ratio)
        prob.set_val("momentum_coefficient", point.momentum_coefficient)
        if not follow_requirement:
            prob.set_val("fan_pressure_rise", point.fan_pressure_rise)
        if point.rated_shaft_power is not None:
            prob.set_val("rated_shaft_power", point.rated_shaft_power)


@dataclass
class StartPoint:
    """Where the optimizer starts.

    Attributes
    ----------
    slot_ratio : float
    momentum_coefficient, fan_pressure_rise : ndarray
        Per segment; [-] and [Pa].
    without_admissible_point : list of str
        Blowing segments where no momentum coefficient of the start grid met every per-segment
        constraint (the optimizer will likely find none either).
    outputs : dict of ndarray
        The NumPy chain at the start, the fan giving the required rise (sizes the optimizer's
        references).
    """

    slot_ratio: float
    momentum_coefficient: np.ndarray
    fan_pressure_rise: np.ndarray
    without_admissible_point: list
    outputs: dict
    #: With the fan sized across the mission: the power margin times the largest shaft power
    #: at the start [W] (else None).
    rated_shaft_power: float = None


#: Momentum coefficients per segment tried for the start point (log-spaced over the range).
START_GRID = 61
#: Slot ratios tried for the start point when the slot ratio is free (evenly over its bounds).
START_RATIOS = 9


def start_point(case):
    """Start values: slot ratio, momentum coefficient per segment and the pressure rise.

    A segment's own ``momentum_coefficient`` is used when given, with the case's slot ratio.
    Otherwise the start is the best point of a grid, with the fan giving the required rise:
    per segment, log-spaced momentum coefficients over the calibrated range, scored by the net
    energy saved among the points that meet every per-segment constraint
    (:mod:`mdao.constraints`); when the slot ratio is free and no segment gives its own start,
    also evenly spaced slot ratios over its bounds (the case's ratio included), the best
    mission total deciding. A segment with no admissible grid point starts at the geometric
    mean of the range. The energy balance splits the admissible momentum coefficients into
    separate branches (a low-blowing one and one where the fan does enough work); a start in
    the best branch keeps the gradient optimizer out of the others' local optima. Non-blowing
    segments get zero; the start pressure rise is the requirement, held within the fan's range.

    Returns
    -------
    StartPoint
    """
    lo, hi = case.airfoil["momentum_coefficient_range"]
    given = np.array([np.nan if s["momentum_coefficient"] is None else s["momentum_coefficient"]
                      for s in case.segments])
    ratios = [case.slot["ratio"]]
    if design_constraints.slot_ratio_free(case) and np.all(np.isnan(given[case.blowing])):
        ratios += list(np.linspace(*case.slot["ratio_bounds"], START_RATIOS))
    grid = np.geomspace(lo, hi, START_GRID)[:, None]
    cons = [c for c in design_constraints.applicable(case, follow_requirement=True)
            if c.per_segment and c.name != "rated power"]   # the rating follows the start
    rated = _start_rating(case)
    durations = np.array([s["duration"] for s in case.segments])
    best = None
    for ratio in ratios:   # a handful of wing geometries, each one vectorized call
        out = chain.evaluate(chain_parameters(case, momentum_coefficient=grid, slot_ratio=ratio,
                                              **rated), chain_options(case), blowing=case.blowing)
        out["momentum_coefficient"] = np.broadcast_to(grid, out["net_power_saving"].shape)
        ok = design_constraints.holds(case, out, cons) & np.isfinite(out["net_power_saving"])
        score = np.where(ok, out["net_power_saving"], -np.inf)
        k = np.argmax(score, axis=0)
        found = np.isfinite(score[k, np.arange(score.shape[1])])
        cmu = np.where(found, grid[k, 0], np.sqrt(lo * hi))
        total = np.sum(np.where(found & case.blowing, score[k, np.arange(score.shape[1])], 0.0)
                       * durations)
        if best is None or total > best[0]:
            best = (total, float(ratio), cmu, found)
    _, ratio, cmu, found = best
    cmu = np.where(np.isnan(given), cmu, given)
    cmu = np.where(case.blowing, cmu, 0.0)
    out = chain.evaluate(chain_parameters(case, momentum_coefficient=cmu, slot_ratio=ratio,
                                          **rated), chain_options(case), blowing=case.blowing)
    rating = None
    if case.sizes_fan:   # rate the fan for the start's largest need, and fly its mass
        rating = _rating_for(case, out)
        out = chain.evaluate(chain_parameters(case, momentum_coefficient=cmu, slot_ratio=ratio,
                                              rated_shaft_power=rating),
                             chain_options(case), blowing=case.blowing)
        out["rated_shaft_power"] = np.full(len(case.segments), rating)   # sizes its constraint
    dp = np.clip(out["required_pressure_rise"], case.fan["min_pressure_rise"],
                 case.fan["max_pressure_rise"])
    lacking = [s["name"] for s, on, ok, g in zip(case.segments, case.blowing, found, given)
               if on and not ok and np.isnan(g)]
    return StartPoint(ratio, cmu, dp, lacking, out, rating)


def start_refusal(case, point=None):
    """Why the model refuses the optimizer's start, in the words of the error its first run
    raises, or None where it accepts it: the chain evaluated at the start as the problem runs it
    (the fan giving the start's pressure rise, a sized fan its start rating), with the check the
    chain component adds (a running map fan on its map). ``point``: default
    :func:`start_point` of the case."""
    point = start_point(case) if point is None else point
    rated = {} if point.rated_shaft_power is None else {
        "rated_shaft_power": point.rated_shaft_power}
    params = chain_parameters(case, momentum_coefficient=point.momentum_coefficient,
                              slot_ratio=point.slot_ratio,
                              fan_pressure_rise=point.fan_pressure_rise, **rated)
    try:
        out = chain.evaluate(params, chain_options(case), blowing=case.blowing)
        chain_on_the_map(case.fan["model"], out, params)
    except ValueError as err:
        return str(err)
    return None


def _start_rating(case):
    """``{"rated_shaft_power": W}`` for the start grid of a sized fan: the rating of a fan that
    blows the start of the calibrated range's geometric mean in every segment (the grid's own
    rating is set after it), or ``{}``."""
    if not case.sizes_fan:
        return {}
    lo, hi = case.airfoil["momentum_coefficient_range"]
    cmu = np.where(case.blowing, np.sqrt(lo * hi), 0.0)
    out = chain.evaluate(chain_parameters(case, momentum_coefficient=cmu, rated_shaft_power=0.0),
                         chain_options(case), blowing=case.blowing)
    return {"rated_shaft_power": _rating_for(case, out)}


def _rating_for(case, out):
    """A start's fan rating [W]: the power margin times the largest shaft power of the
    blowing segments whose fan runs on its map (efficiency above zero; off its map the values
    chain's shaft power may be negative and means nothing). Where no segment needs power there
    (ram-driven jets, or every fan off its map), the margin times the clean section's drag power
    of the first segment instead: a rating must be positive, and it also scales the design
    variable."""
    on_map = (np.real(out["fan_efficiency"]) > 0) & case.blowing
    need = float(np.max(np.where(on_map, out["fan_shaft_power"], 0.0), initial=0.0))
    return float(case.mass["power_margin"] * (need if need > 0 else _power_scale(case)))


#: Constants of the high-lift requirement (used only with a high-lift segment).
HIGH_LIFT_PARAMETERS = ("max_lift_clean", "high_lift_margin")

#: Wing-level design variables besides the per-segment ones: the slot ratio, the rated shaft
#: power of a sized fan and a free fan diameter.
WING_DESIGN = ("slot_ratio", "rated_shaft_power", "fan_diameter")


def design_point(values):
    """``{name: value}`` of the wing-level design variables found in ``values`` (an optimum's
    values, :func:`mdao.optimum.solve.read_values`), for the chain's parameters."""
    return {k: np.asarray(values[k], float) for k in WING_DESIGN if k in values}


def chain_options(case):
    """The :class:`mdao.physics.chain.ChainOptions` of a case."""
    return chain.ChainOptions(duct_model=case.duct["model"], fan_model=case.fan["model"],
                              fans=case.duct["fans"], stations=case.duct["stations"],
                              schedule=case.duct["schedule"],
                              compressible=case.fan["compressible"],
                              compressible_jet=case.fan["compressible"],
                              aircraft=case.has_aircraft, sized_fan=case.sizes_fan,
                              lift_tables=tuple((registry.BY_KEY[key].name, table)
                                                for key, table in lift_tables(case).items()))


#: Operating points, times the geometric duct's stations, per chain evaluation of a study that
#: evaluates many points in parts (bounded memory of the temporaries).
POINTS_PER_EVALUATION = 2 ** 18


def rows_per_evaluation(case, points_per_row, budget=POINTS_PER_EVALUATION):
    """Rows of ``points_per_row`` operating points each to evaluate in one chain call: about
    ``budget`` points times the geometric duct's stations (it evaluates its friction along
    every station), at least one row."""
    stations = case.duct["stations"] if case.duct["model"] == "geometric" else 1
    return max(1, budget // (int(points_per_row) * stations))


def chain_parameters(case, **overrides):
    """Inputs of :func:`mdao.physics.chain.evaluate` for a case (per-segment arrays)."""
    params = parameter_values(case)
    params.update(overrides)
    return params


def build_problem(case, follow_requirement=False, driver=True, fused=None, coloring=True,
                  complex_step=False):
    """A set-up problem for a case: design variables, constraints, objective and SLSQP.

    Design variables: the slot ratio (when ``slot.ratio_bounds`` are given and differ), and per
    blowing segment the fan pressure rise (bounds: the fan's minimum and maximum) and the
    momentum coefficient (bounds: the calibrated range). Constraints: fan pressure rise equals
    the requirement; jet Mach limit; fan speed and flow-coefficient range (map fan); diffusion
    half-angle (geometric duct); minimum slot height (when the slot ratio varies). Objective:
    mission energy saved (maximized) or one segment's net power.

    Parameters
    ----------
    case : mdao.case.Case
    follow_requirement : bool
        Wire the required pressure rise to the fan (fixed-design studies; then there is no
        pressure design variable nor equality constraint).
    driver : bool
        Attach the SLSQP driver and the design variables, constraints and objective.
    fused : bool, optional
        Use the one-component chain (any model); default True. False wires one component per
        discipline (same names, values and derivatives).
    coloring : bool
        With the driver: color the total Jacobian from the declared partials
        (:mod:`mdao.total_coloring`), so that a gradient costs a few linear solves whatever the
        number of segments. False keeps one solve per design variable (and lets the model
        approximate its totals instead, ``approx_totals``, after which set up again).
    complex_step : bool
        Set up with complex vectors (``force_alloc_complex``), so that ``check_totals`` and
        ``check_partials`` can take ``method="cs"`` (the physics keeps a complex step).
    """
    opts = group_options(case, fused)
    opts["follow_requirement"] = follow_requirement
    fused_only = [what for what, used in (
        ("lift tables", bool(opts["lift_tables"])), ("the compressible jet", opts["compressible_jet"]),
        ("a sized fan", opts["sized_fan"]), ("high-lift segments", bool(case.high_lift.any())),
        ("the fan's fit in the wing", case.value("wing.thickness_ratio") is not None))
        if used]
    if fused_only and not opts["fused"]:
        raise ValueError(f"fused=False: the per-discipline group does not wire "
                         f"{', '.join(fused_only)}; use the fused chain (the default)")
    prob = om.Problem(reports=False)
    wing = prob.model.add_subsystem("wing", BlownWingGroup(**opts), promotes=["*"])
    blow = np.flatnonzero(case.blowing)
    point = start_point(case)
    if driver:
        of, wrt = _add_optimization(prob, case, blow, follow_requirement, point)
        # the gradient needs the partials of the responses against the design variables only
        wing.options["partials_of"] = tuple(of)
        wing.options["partials_wrt"] = tuple(wrt)
    prob.setup(force_alloc_complex=complex_step)
    set_case_values(prob, case, follow_requirement=follow_requirement, point=point)
    prob.final_setup()
    if driver and coloring:
        color_totals(prob)   # one linear solve per color, not per design variable
    return prob


def _add_optimization(prob, case, blow, follow, point):
    """Design variables, constraints (from :mod:`mdao.constraints`), objective and SLSQP,
    scaled at the start ``point``. Returns the chain's outputs the driver differentiates and
    the design variables (two lists of promoted names)."""
    model = prob.model
    of, wrt = [], []
    for con in design_constraints.applicable(case, follow_requirement=follow):
        if not moved_by_design(con, case):
            continue   # a fixed duct's angle: the feasibility check of the optimum reads it
        lower, upper = design_constraints.bounds(con, case)
        ref = design_constraints.reference(con, case, point.outputs)
        indices = (np.flatnonzero(design_constraints.segment_mask(con, case))
                   if con.per_segment else None)
        if con.quantity == "fan_pressure_rise" and follow:  # the fan gives what is required
            model.add_constraint("required_pressure_rise", lower=lower, upper=upper,
                                 indices=indices, ref=ref)
            of.append("required_pressure_rise")
        elif con.design_variable:
            wrt.append(con.quantity)
            if con.quantity == "fan_pressure_rise":
                model.set_input_defaults(con.quantity, point.fan_pressure_rise, units="Pa")
            if con.quantity == "rated_shaft_power":   # sized at the start point's largest need
                ref = point.rated_shaft_power
            model.add_design_var(con.quantity, lower=lower, upper=upper, indices=indices,
                                 ref=ref)
        elif con.quantity == "pressure_balance":
            model.add_subsystem("pressure_balance", om.EQConstraintComp(
                "pressure_balance", eq_units="Pa", lhs_name="fan_pressure_rise",
                rhs_name="required_pressure_rise", shape=(len(case.segments),),
                normalize=False, use_mult=False),
                promotes_inputs=["fan_pressure_rise", "required_pressure_rise"],
                promotes_outputs=["pressure_balance"])
            model.add_constraint(con.quantity, equals=con.equals, indices=indices, ref=ref)
            of.append("required_pressure_rise")
        else:
            model.add_constraint(con.quantity, lower=lower, upper=upper, indices=indices,
                                 ref=ref)
            of.append(con.quantity)
    segment = case.objective_segment
    if segment is None:
        model.add_objective("mission_energy_saving", ref=-_energy_scale(case))
        of.append("mission_energy_saving")
    else:
        model.add_objective("net_power_saving", index=case.segment_names.index(segment),
                            ref=-_power_scale(case))
        of.append("net_power_saving")
    prob.driver = VectorSLSQPDriver(optimizer="SLSQP", maxiter=case.optimize["max_iterations"],
                                    tol=case.optimize["tolerance"], disp=False)
    return of, wrt


def moved_by_design(constraint, case):
    """Whether a transition angle's constraint depends on a design variable (the slot ratio or
    the fan diameter, when free); other constraints always do. With linear semi-axes the side
    walls do not move with the slot ratio: the optimizer is not given a constraint it cannot
    move, and the optimum's feasibility check still holds the duct to it."""
    field = chain.ANGLE_OUTPUTS.get(constraint.quantity)
    if field is None or case.duct["model"] != "geometric":
        return True
    free = {"slot_ratio"} if design_constraints.slot_ratio_free(case) else set()
    if design_constraints.fan_diameter_free(case):
        free.add("fan_diameter")
    return bool(free & set(chain.station_dependencies(case.duct["schedule"])[field]))


def _power_scale(case):
    """A power of the right size for scaling: the clean-wing drag power of the first segment."""
    seg = case.segments[0]
    rho = isa(seg["altitude"]).density
    cd0 = case.airfoil["drag_clean"]
    cd0 = float(np.mean(cd0.value)) if hasattr(cd0, "value") else cd0   # a lift table
    return float(0.5 * rho * seg["speed"] ** 3 * case.wing["chord"] * case.wing["blown_span"]
                 * cd0 / case.propulsion["chain_efficiency"])


def _energy_scale(case):
    return _power_scale(case) * sum(s["duration"] for s in case.segments)
