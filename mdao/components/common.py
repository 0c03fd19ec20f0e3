"""Helpers shared by the components: sparsity patterns, per-node flags, the inputs of
declared model parameters, the inputs a host must give and their checks (unset, out of range),
the inputs a fan-off node ignores, the options of the chain and the errors of ``compute``."""
import functools

import numpy as np
from openmdao.core.analysis_error import AnalysisError

from mdao import parameters as registry
from mdao.physics.chain import GATED_BY_BLOWING


class UnsetInputError(ValueError):
    """An input that a host must give (:data:`HOST_GIVES`), met unset (NaN) in a component's
    ``compute``: neither connected nor set. A plain ``ValueError``, not OpenMDAO's
    ``AnalysisError``: it is a mistake in the model's set-up that no driver step can mend."""


class InputRangeError(AnalysisError, ValueError):
    """An input value outside a model's range, met inside a component's ``compute`` or
    ``compute_partials``: OpenMDAO's ``AnalysisError``, so that a driver or solver may back off
    (a line search takes a shorter step), and still the ``ValueError`` the physics raised, with
    its message."""


def analysis_errors(method):
    """Decorate a component's ``compute`` or ``compute_partials``: a ``ValueError`` from the
    physics (an input value out of range) is raised again as :class:`InputRangeError`, the same
    message, the original chained as its cause."""
    @functools.wraps(method)
    def checked(self, *args, **kwargs):
        try:
            return method(self, *args, **kwargs)
        except (AnalysisError, UnsetInputError):
            raise
        except ValueError as err:
            raise InputRangeError(str(err)) from err
    return checked


#: Inputs of the group that are not model parameters and that a host gives (design inputs, the
#: lift the tables are read at, the sized fan's rated power): name -> (example value, units).
HOST_INPUTS = {"momentum_coefficient": (0.03, None), "fan_pressure_rise": (1000.0, "Pa"),
               "lift_coefficient": (0.5, None), "rated_shaft_power": (500.0, "W")}

#: The air's state a host gives with ``atmosphere="host"``: name -> (units, ISA sea-level
#: example value).
HOST_AIR = {"temperature": ("K", 288.15), "pressure": ("Pa", 101325.0),
            "density": ("kg/m**3", 1.225), "speed_of_sound": ("m/s", 340.294),
            "viscosity": ("Pa*s", 1.7894e-5)}


#: Every input name that a host embedding the group must give (no silent default): the
#: parameters whose :attr:`mdao.parameters.Parameter.host_gives` holds (flight condition,
#: calibration constants, parameters without a default), :data:`HOST_INPUTS` and, with the
#: host's atmosphere, :data:`HOST_AIR`.
HOST_GIVES = frozenset({p.name for p in registry.PARAMETERS if p.host_gives}
                       | set(HOST_INPUTS) | set(HOST_AIR))


def unset_start(value, examples):
    """The start value of an input the host gives: NaN (unset) of the example's shape, or the
    example itself when the ``examples`` option asks for it (demonstrations and tests)."""
    value = np.asarray(value, float)
    return value if examples else np.full(value.shape, np.nan)


def checks_host_inputs(compute):
    """Decorate a component's ``compute``: an input of :data:`HOST_GIVES` that holds NaN (the
    group's unset start value: nobody connected or set it) raises :class:`UnsetInputError`
    naming it, its meaning and unit, and how to give it (14 microseconds per 1e5-node input);
    a model parameter outside its declared range (:mod:`mdao.parameters`, the ranges a case
    file is held to) raises a ``ValueError`` naming it, the value and the range, which
    :func:`analysis_errors` turns into an ``AnalysisError`` a solver's line search can back
    off from."""
    @functools.wraps(compute)
    def checked(self, inputs, outputs, *args, **kwargs):
        names = inputs.keys()
        given = [name for name in names if name in HOST_GIVES or name in RANGES]
        unset = sorted(name for name in given if name in HOST_GIVES
                       and np.isnan(_where_used(self, name, inputs[name])).any())
        if unset:
            raise UnsetInputError(unset_message(self, unset))
        for name in given:
            if name in RANGES:
                _within(name, inputs[name], RANGES[name])
        return compute(self, inputs, outputs, *args, **kwargs)
    return checked


#: Model parameters whose declared range the components hold a host's input to (the altitude's
#: range is the atmosphere's, with its round-off allowance).
RANGES = {p.name: p for p in registry.PARAMETERS if p.name != "altitude"
          and (np.isfinite(p.low) or np.isfinite(p.high))}


#: How far past a closed end of its range an input may lie, relative to max(1, |end|): a
#: finite-difference step or round-off at a bound (a design variable at its upper bound, stepped
#: forward) is not an input out of range.
RANGE_ALLOWANCE = 1e-5


def _within(name, value, prm):
    """Raise a ``ValueError`` if ``value`` (one or more) leaves ``prm``'s allowed range (a
    closed end with :data:`RANGE_ALLOWANCE`)."""
    v = np.real(value)
    lo, hi = (v.flat[0], v.flat[0]) if v.size == 1 else (v.min(), v.max())
    below, above = prm.outside(lo, RANGE_ALLOWANCE), prm.outside(hi, RANGE_ALLOWANCE)
    if below or above:
        bad = lo if below else hi
        where = "" if v.size == 1 else f" at node {int(np.flatnonzero(v == bad)[0])}"
        raise ValueError(f"{name} = {bad:g}{where} is outside its allowed range "
                         f"{prm.allowed()} ({prm.description}; case key {prm.key})")


def _where_used(component, name, value):
    """An input's values where the component uses them: the momentum coefficient and the fan
    pressure rise only at the nodes whose fan runs (option ``blowing``; elsewhere the jet and
    the fan are off whatever they hold)."""
    if (name not in GATED_BY_BLOWING or "blowing" not in component.options
            or component.options["blowing"] is None):
        return value
    return value[blowing_flags(component.options["blowing"], value.shape[0])]


def gated(component, inputs, name="momentum_coefficient"):
    """A per-node input of :data:`GATED_BY_BLOWING` as the physics takes it, and its derivative
    with respect to the input: the input where the fan runs, 0 where it does not (option
    ``blowing``: a node whose fan is off has no jet and no pressure rise, whatever the host
    gives it). Returns ``(value, factor)``, the factor 1.0 when every fan runs, else 1 or 0
    per node."""
    value = inputs[name]
    blowing = component.options["blowing"]
    if blowing is None:
        return value, 1.0
    flags = blowing_flags(blowing, component.options["num_nodes"])
    if flags.all():
        return value, 1.0
    return np.where(flags, value, 0.0), flags.astype(float)


#: The ``blowing`` option of a component that reads the momentum coefficient or the fan rise.
BLOWING_OPTION = dict(default=None, allow_none=True,
                      desc="does the fan run: one bool for every node, or one per node "
                           "(default: at every node); where it does not, the jet and the fan "
                           "are off and the momentum coefficient and fan pressure rise are "
                           "taken as 0")


def unset_meaning(name):
    """``(unit, meaning)`` of an input of :data:`HOST_GIVES`."""
    p = registry.BY_NAME.get(name)
    if p is not None:
        return p.unit, f"{p.description}; case key {p.key}, allowed {p.allowed()}"
    if name in HOST_AIR:
        return HOST_AIR[name][0], f"the air's {name.replace('_', ' ')} (host atmosphere)"
    return HOST_INPUTS[name][1], name.replace("_", " ")


def unset_message(component, names):
    """The error text of unset inputs: each one's name, meaning and unit, and how to give
    them."""
    path = component.pathname.rsplit(".", 1)[0] + "." if "." in component.pathname else ""
    lines = []
    for name in names:
        unit, what = unset_meaning(name)
        lines.append(f"  {name} [{unit or 'dimensionless'}]: {what}")
    return (f"{len(names)} input(s) of {component.pathname or 'the component'} were never "
            f"given (they hold NaN); the host must give each one:\n" + "\n".join(lines)
            + f"\nConnect each to an output of the host model, or set it after setup, e.g. "
            f"prob.set_val('{path}{names[0]}', value, units=...) (the group's path, or the "
            f"name your model promotes it to; in a Dymos ODE a wing-level constant is a phase "
            f"parameter: phase.add_parameter(name, val=..., opt=False, static_target=True)). "
            f"The option examples=True starts every such input at a documented example value "
            f"instead (demonstrations and tests only).")


def on_the_map(efficiency, flow_coefficient, running, peak_flow_coefficient):
    """Refuse a running map fan whose efficiency is zero or below: far off design the map's
    efficiency parabola crosses zero, where the shaft power would change sign (a fan giving
    power back). A ``ValueError`` (an ``AnalysisError`` in ``compute``: a driver or line search
    backs off) naming the node, the efficiency and the flow coefficient."""
    off = running & (np.real(efficiency) <= 0.0)
    if np.any(off):
        i = int(np.flatnonzero(off)[0])
        raise ValueError(
            f"fan map: efficiency {float(np.real(efficiency[i])):.3g} at node {i}, flow "
            f"coefficient {float(np.real(flow_coefficient[i])):.3g} (the map's peak at "
            f"{float(np.real(np.ravel(peak_flow_coefficient)[0])):.3g}): the operating point is "
            f"off the map; bound flow_coefficient within the map's range")


def chain_on_the_map(fan_model, out, params):
    """The check the chain component makes of an evaluated chain (``out``, from ``params``): a
    running map fan on its map (:func:`on_the_map`); none for another fan model. Raises the
    same ``ValueError``."""
    if fan_model == "map":
        on_the_map(out["fan_efficiency"], out["flow_coefficient"],
                   np.real(out["air_power"]) > 0, params["peak_flow_coefficient"])


#: Wing-level constants that may be given one value per node (option ``per_node``): the
#: efficiencies, the share of air power that may return as thrust power, and the constants that
#: may be tabulated over the lift coefficient. Each acts at its own node only (no wing-level
#: output, such as the slot height or the fan's size, reads it).
PER_NODE_ALLOWED = tuple(p.name for p in registry.PARAMETERS if p.lift_table) + (
    "chain_efficiency", "motor_efficiency", "fan_rated_efficiency", "thrust_power_ceiling")


def input_parameters(options):
    """The declared parameters that a blown-wing chain with these options (:data:`CHAIN_OPTIONS`)
    takes as inputs: those its duct and fan models (and the aircraft) use, less the constants
    its lift tables give, ``duration`` without the mission sums and ``altitude`` with the
    host's atmosphere. One selection for the fused chain and the per-discipline group."""
    tabled = {name for name, _ in options["lift_tables"]}
    return [p for p in registry.chain_parameters(options["duct_model"], options["fan_model"],
                                                 aircraft=options["aircraft"])
            if p.name not in tabled
            and (options["mission_sums"] or p.name != "duration")
            and (options["atmosphere"] == "isa" or p.name != "altitude")]


def per_node_names(options):
    """The ``per_node`` option checked: names of :data:`PER_NODE_ALLOWED` that the chosen models
    use and that no lift table gives."""
    names = tuple(options["per_node"])
    wrong = sorted(set(names) - set(PER_NODE_ALLOWED))
    if wrong:
        raise ValueError(f"per_node: {wrong} may not vary per node; allowed: "
                         f"{sorted(PER_NODE_ALLOWED)}")
    used = {p.name for p in registry.chain_parameters(options["duct_model"],
                                                      options["fan_model"],
                                                      aircraft=options["aircraft"])}
    unused = sorted(set(names) - used)
    if unused:
        raise ValueError(f"per_node: {unused} are not inputs with duct_model="
                         f"{options['duct_model']!r} and fan_model={options['fan_model']!r}")
    tabled = sorted(set(names) & {name for name, _ in options["lift_tables"]})
    if tabled:
        raise ValueError(f"per_node: {tabled} already come from lift tables (per node)")
    return names


def _python_int(meta, value):
    """An integer option's value as a Python int (a NumPy integer accepted)."""
    return int(value)


#: Keyword arguments of ``options.declare`` for ``num_nodes``: a Python int or a NumPy integer
#: (``np.int64(11)``, as a host's arithmetic gives), stored as a Python int.
NUM_NODES = dict(types=(int, np.integer), set_function=_python_int, default=1, lower=1)


def diagonal(n):
    """rows, cols of an (n x n) diagonal block: node i depends on node i of the input."""
    nodes = np.arange(n)
    return nodes, nodes


def column(n):
    """rows, cols of an (n x 1) block: every node depends on one wing-level (scalar) input."""
    return np.arange(n), np.zeros(n, int)


def full(n, m):
    """rows, cols of a dense (n x m) block, row-major."""
    return np.repeat(np.arange(n), m), np.tile(np.arange(m), n)


def broadcast(value, n):
    """A partial returned by the physics (array or scalar) as n values for rows/cols."""
    return np.broadcast_to(np.asarray(value, float), (n,))


def blowing_flags(flags, n):
    """The ``blowing`` option as n booleans: None (the fan runs at every node), one bool or a
    one-entry sequence (the same at every node), or n entries."""
    flags = np.ones(n, bool) if flags is None else np.asarray(flags, bool)
    if flags.shape in ((), (1,)):
        flags = np.full(n, flags.reshape(-1)[0])
    if flags.shape != (n,):
        raise ValueError(f"blowing must be one bool or have num_nodes={n} entries, got shape "
                         f"{flags.shape}")
    return flags


def add_parameter_inputs(component, names, num_nodes=1, examples=True):
    """Add the inputs of declared model parameters (:mod:`mdao.parameters`) to a component:
    the declared unit, start value and description; per-segment parameters get one value per
    node. One declaration serves every component, so defaults cannot disagree. With
    ``examples=False`` an input the host must give (:data:`HOST_GIVES`) starts unset (NaN)."""
    for name in names:
        p = registry.BY_NAME[name]
        value = np.asarray(p.start_value, float)
        if p.per_segment:
            value = value * np.ones(num_nodes)
        if name in HOST_GIVES:
            value = unset_start(value, examples)
        component.add_input(name, val=value, units=p.unit, desc=p.description)


def host_air(options):
    """The fields of :data:`HOST_AIR` the chosen models read (``atmosphere="host"``): density
    and speed of sound always, viscosity for the geometric duct's friction, pressure and
    temperature for the compressible fan or jet."""
    names = ["density", "speed_of_sound"]
    if options["duct_model"] == "geometric":
        names.append("viscosity")
    if options["compressible"] or options["compressible_jet"]:
        names += ["pressure", "temperature"]
    return {name: HOST_AIR[name] for name in HOST_AIR if name in names}


#: Options of the whole chain, shared by :class:`mdao.components.chain.ChainComp` and
#: :class:`mdao.system.BlownWingGroup`: name -> keyword arguments of ``options.declare``.
CHAIN_OPTIONS = {
    "num_nodes": dict(NUM_NODES, desc="segments or operating points"),
    "duct_model": dict(default="lumped", values=("lumped", "geometric"),
                       desc="lumped: K_j given; geometric: K_j from the duct's geometry"),
    "fan_model": dict(default="constant", values=("constant", "map"),
                      desc="constant efficiency, or a fan map"),
    "fans": dict(types=int, default=1, lower=1, desc="fans along the span"),
    "stations": dict(types=int, default=33, lower=3, desc="transition stations (geometric duct)"),
    "schedule": dict(default="monotone-area", values=("monotone-area", "linear"),
                     desc="section schedule along the transition (geometric duct)"),
    "compressible": dict(types=bool, default=False,
                         desc="isentropic compression power instead of Q dp / eta"),
    "compressible_jet": dict(types=bool, default=False,
                             desc="compressible jet: its head from the isentropic pressure ratio "
                                  "at the slot, its temperature after the fan (fused chain)"),
    "sized_fan": dict(types=bool, default=False,
                      desc="the fan sized across the mission (with aircraft): input "
                           "rated_shaft_power, the blowing system's mass flies in every segment"),
    "aircraft": dict(types=bool, default=False,
                     desc="the aircraft around the wing (a case's [aircraft] table): lift "
                          "coefficient, main thrust, clean mission energy"),
    "lift_tables": dict(types=tuple, default=(),
                        desc="constants tabulated over the section lift coefficient: "
                             "((name, mdao.physics.lift_table.LiftTable), ...); without the "
                             "aircraft the lift coefficient is an input per node"),
    "per_node": dict(types=tuple, default=(),
                     desc="wing-level constants given one value per node instead (a host's "
                          "per-node propeller or motor efficiency): any of PER_NODE_ALLOWED "
                          "(fused chain)"),
    "blowing": BLOWING_OPTION,
    "atmosphere": dict(default="isa", values=("isa", "host"),
                       desc="isa: the standard atmosphere at the input altitude; host: the "
                            "air's temperature, pressure, density, speed_of_sound and "
                            "viscosity are inputs per node (a non-standard day or the host's "
                            "own model), no altitude"),
    "mission_sums": dict(types=bool, default=True,
                         desc="energies per segment and for the mission from the input "
                              "duration (energy_saving, mission_energy_saving and, with the "
                              "aircraft, clean_source_energy, mission_clean_energy); False "
                              "inside an ODE, where the host integrates the powers: no "
                              "duration input, no energy output"),
    "outputs": dict(types=tuple, default=None, allow_none=True,
                    desc="fused chain: the outputs declared (default every one); a host that "
                         "reads a few of them on many nodes keeps OpenMDAO's vectors small"),
    "partials_of": dict(types=tuple, default=None, allow_none=True,
                        desc="fused chain: the outputs whose partials are declared (default "
                             "every output); set to what a problem differentiates (its "
                             "responses) for a cheaper gradient"),
    "partials_wrt": dict(types=tuple, default=None, allow_none=True,
                         desc="fused chain: the inputs the partials are declared against "
                              "(default every input; the others are held constant in "
                              "derivatives); set to a problem's design variables for a cheaper "
                              "gradient"),
    "examples": dict(types=bool, default=False,
                     desc="start every input a host must give (flight condition, calibration "
                          "constants, design inputs; mdao.components.common.HOST_GIVES) at "
                          "its documented example value instead of unset (NaN, refused by "
                          "name at the first evaluation): for demonstrations and tests only, "
                          "since a forgotten input then runs at the example silently"),
    "follow_requirement": dict(types=bool, default=False,
                               desc="the fan gives the required pressure rise (fixed-design "
                                    "studies) instead of taking fan_pressure_rise as an input"),
}


def declare_chain_options(options):
    """Declare :data:`CHAIN_OPTIONS` on a component's or group's options."""
    for name, kwargs in CHAIN_OPTIONS.items():
        options.declare(name, **kwargs)
