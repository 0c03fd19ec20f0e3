"""The whole physics chain in plain NumPy: the one place where the disciplines are wired.

:func:`evaluate` runs atmosphere, jet, duct (lumped or geometric), fan (constant efficiency or
map), airfoil and segment power from operating points to net power. Sweeps, Monte Carlo studies
and break-even searches call it for values on any broadcast shape (segments, grid points or
samples on leading axes); the fused OpenMDAO component
(:class:`mdao.components.chain.ChainComp`, the default of :class:`mdao.system.BlownWingGroup`)
calls it with ``derivatives=True`` for values and forward-mode partials. The per-discipline group
(one component per discipline) is kept as an independent wiring of the same physics functions;
a test compares the two to round-off, values and total derivatives.

Parameter names are the promoted names declared in :mod:`mdao.parameters`, and the defaults of
optional parameters come from there (:attr:`mdao.parameters.Parameter.default`).

References
----------
.. [1] docs/theory.md, sections "Atmosphere" to "Net power" (each discipline and its source);
   the derivatives are forward-mode tangents by the chain rule from the partials each physics
   function returns (Griewank, A. and Walther, A. *Evaluating Derivatives*, 2nd ed., SIAM, 2008,
   ch. 3, forward mode; from memory).
"""
import functools
from dataclasses import dataclass

import numpy as np

from mdao import parameters as registry
from mdao.physics import (aircraft, airfoil, atmosphere, duct, fan, jet, lift_table, mass,
                          power, transition)
from mdao.physics.numeric import asarray, scalar as _item

#: Internal root names of the three fan-map pressure coefficients (stacked on a last axis of
#: length 3 under ``"pressure_coefficients"`` in the returned partials).
_COEFFICIENTS = tuple(("pressure_coefficients", i) for i in range(3))
#: Station fields whose tangents the chain carries, and the wing-level inputs that shape them.
STATION_FIELDS = ("position", "area", "perimeter", "hydraulic_diameter", "half_angle",
                  "span_wall_half_angle", "thickness_wall_half_angle")
#: Wing-level angle outputs of the geometric duct (stations - 1 each): output -> station field.
ANGLE_OUTPUTS = {"diffusion_half_angle": "half_angle",
                 "span_wall_half_angle": "span_wall_half_angle",
                 "thickness_wall_half_angle": "thickness_wall_half_angle"}
STATION_ROOTS = ("fan_diameter", "blown_span", "slot_ratio", "chord", "transition_length",
                 "slot_exponent")


@dataclass(frozen=True)
class ChainOptions:
    """Model choices of the chain (the options of :class:`mdao.system.BlownWingGroup`)."""

    duct_model: str = "lumped"
    fan_model: str = "constant"
    fans: int = 1
    stations: int = 33
    schedule: str = "monotone-area"
    compressible: bool = False
    #: The aircraft around the wing (a case's ``[aircraft]`` table): its lift coefficient,
    #: clean drag, main-propulsor thrust and clean source power.
    aircraft: bool = False
    #: Constants tabulated over the section lift coefficient: ``((name, LiftTable), ...)``
    #: (:mod:`mdao.physics.lift_table`). The lift coefficient is the aircraft's (with
    #: ``aircraft``) or the input ``lift_coefficient`` per point. A constant given explicitly
    #: among the parameters overrides its table (maps and studies that set it to a number).
    lift_tables: tuple = ()
    #: The compressible jet (:func:`mdao.physics.jet.compressible_kinematics`): the jet's head
    #: from the isentropic pressure ratio at the slot and its temperature after the fan. A
    #: case's ``fan.compressible = true`` sets it with ``compressible``.
    compressible_jet: bool = False
    #: The fan sized across the mission (with ``aircraft``): the rated shaft power
    #: ``rated_shaft_power`` [W] is an input, the blowing system's mass
    #: (:mod:`mdao.physics.mass`, the ``[mass]`` constants) flies in every segment, and each
    #: segment reports its ``power_headroom``.
    sized_fan: bool = False
    #: Where the air's state comes from: ``"isa"`` (:func:`mdao.physics.atmosphere.isa` at the
    #: input ``altitude``) or ``"host"`` (the inputs ``temperature``, ``pressure``,
    #: ``density``, ``speed_of_sound`` and ``viscosity`` per point: a non-standard day or the
    #: host's own atmosphere model; no ``altitude``).
    atmosphere: str = "isa"

    def __post_init__(self):
        if self.sized_fan and not self.aircraft:
            raise ValueError("sized_fan: the fan sized across the mission needs the aircraft "
                             "around the wing (aircraft=True): the blowing system's weight "
                             "costs main thrust through the aircraft's lift and drag. Without "
                             "the aircraft, size the fans beside the group with "
                             "mdao.components.mass.add_blowing_system_mass")

    def tabled(self, params=()):
        """Names of the constants this chain takes from lift tables (those not in ``params``)."""
        return tuple(name for name, _ in self.lift_tables if name not in params)


def with_defaults(params, options=ChainOptions()):
    """``params`` completed by the defaults of the optional parameters these models use.

    Parameters that have no default (required, or absent meaning "not used") are not added.
    """
    p = dict(_defaults(options.duct_model, options.fan_model, options.aircraft))
    p.update(params)
    return p


@functools.lru_cache(maxsize=16)
def _defaults(duct_model, fan_model, aircraft):
    """``((name, default), ...)`` of the optional parameters of these models."""
    return tuple((prm.name, prm.default)
                 for prm in registry.chain_parameters(duct_model, fan_model, aircraft=aircraft)
                 if prm.default is not registry.REQUIRED and prm.default is not None)


#: Per-node inputs that a node whose fan does not run ignores (taken as 0 there).
GATED_BY_BLOWING = ("momentum_coefficient", "fan_pressure_rise")


def evaluate(params, options=ChainOptions(), blowing=True, derivatives=False, outputs=None,
             wrt=None):
    """Evaluate the chain at broadcast operating points, optionally with partial derivatives.

    Parameters
    ----------
    params : mapping of str to array_like
        Inputs by promoted name (:mod:`mdao.parameters`): ``altitude`` [m], ``speed`` [m/s],
        ``duration`` [s] (optional: without it there is no ``energy_saving``),
        ``momentum_coefficient``, ``slot_ratio``, ``chord`` [m], ``blown_span`` [m],
        ``freestream_assist``, ``jet_loss_factor`` (lumped) or the geometric duct's
        ``suction_ratio``, ``suction_inlet_loss``, ``bend_loss``, ``extra_loss``,
        ``roughness`` [m], ``fan_diameter`` [m], ``transition_length`` [m], ``slot_exponent``;
        ``fan_pressure_rise`` [Pa] (optional: when absent the fan follows the requirement);
        ``fan_rated_efficiency`` (constant fan) or the map's ``pressure_coefficients`` (3,),
        ``peak_efficiency``, ``peak_flow_coefficient``, ``efficiency_falloff``,
        ``fan_diameter``; ``motor_efficiency``, ``chain_efficiency``, ``drag_clean``,
        ``slot_drag``, ``slot_drag_per_ratio``, ``drag_per_momentum``,
        ``drag_per_momentum_per_ratio``, ``drag_quadratic``, ``lift_per_momentum``. Optional
        parameters default to :attr:`mdao.parameters.Parameter.default`. The geometric duct
        needs scalar geometry (one wing).
    options : ChainOptions
        Model choices.
    blowing : bool or array_like of bool
        Whether the fan runs.
    derivatives : bool
        Also return the partial derivatives of every output with respect to every input it
        depends on (forward-mode tangents, elementwise: for an output ``y`` and an input ``x``
        broadcast against it, ``d[y][x][i] = dy[i]/dx[j]`` with ``j`` the element of ``x`` that
        ``y[i]`` sees; a wing-level scalar input thus gives one column). The tangent with respect
        to ``pressure_coefficients`` has a last axis of length 3 (c0, c1, c2). Only pairs that
        are structurally non-zero appear.
    outputs : collection of str, optional
        With ``derivatives``: the outputs whose partials are wanted (default every one).
    wrt : collection of str, optional
        With ``derivatives``: the inputs the partials are taken against (default every one);
        the others are held constant. Tangents are carried for these inputs only, so a short
        list (an optimization's design variables) makes the derivatives far cheaper.

    Returns
    -------
    out : dict of ndarray
        Every intermediate: atmosphere fields, jet state (with ``slot_height`` [m]),
        ``jet_loss_factor``, ``required_pressure_rise`` [Pa], ``ram_driven`` (bool),
        ``fan_pressure_rise`` [Pa], ``fan_efficiency``, ``air_power`` [W] (Q dp, or the
        isentropic work rate), ``fan_shaft_power`` [W], the map's ``fan_speed`` [rev/s],
        ``flow_coefficient``, ``pressure_coefficient`` and ``tip_mach``; the geometric duct's
        ``diffusion_half_angle``, ``span_wall_half_angle`` and ``thickness_wall_half_angle``
        [rad] (stations - 1 each, wing-level: :data:`ANGLE_OUTPUTS`); ``drag_coefficient``,
        ``section_drag`` [N], ``clean_section_drag`` [N], ``drag_saving`` [N],
        ``lift_increment``, ``propulsion_power_saving`` [W], ``fan_electric_power`` [W],
        ``net_power_saving`` [W] and ``energy_saving`` [J] (SI). With ``options.aircraft``
        (and ``aircraft_mass``, ``wing_area``, ``zero_lift_drag``, ``aspect_ratio``,
        ``span_efficiency``, ``climb_rate`` [m/s] among the inputs) also the aircraft's
        ``lift_coefficient``, ``aircraft_clean_drag`` [N], ``main_thrust_clean`` [N] (without
        blowing), ``main_thrust`` [N] (with the blown section), ``clean_source_power`` [W] and,
        with ``duration``, ``clean_source_energy`` [J] (:mod:`mdao.physics.aircraft`).
    partials : dict of dict of ndarray
        Only with ``derivatives``: ``{output: {input: ndarray of the output's shape}}`` (last
        axis 3 for ``pressure_coefficients``; a larger shape where the partial varies along
        an axis the value does not, e.g. a segment's propulsion power saving against sampled
        constants that move only its partials); ``ram_driven`` has none.

    Notes
    -----
    Where the map fan's speed has no solution the values and their partials are NaN; where the
    jet is ram-driven (no fan power) the fan power's partials are zero, as in
    :func:`mdao.physics.fan.shaft_power`.
    """
    if derivatives:
        # one floating-point state for the whole chain rule: entering it at every step costs
        # more than the arithmetic on a few segments (0 * NaN tangents: see _chain)
        with np.errstate(invalid="ignore"):
            return _evaluate(params, options, blowing, True, outputs, wrt)
    return _evaluate(params, options, blowing, False, outputs, wrt)


def _evaluate(params, options, blowing, d, outputs, wrt):
    """:func:`evaluate`, with ``d`` for ``derivatives``."""
    p = with_defaults(params, options)
    out = {}
    tan = {}
    # A node whose fan does not run has no jet and no fan pressure rise, whatever momentum
    # coefficient and rise it is given: the chain takes 0 there, and the tangents with respect
    # to those inputs are 0 there.
    on = np.asarray(blowing, bool)
    seed = {}
    if not on.all():
        for name in GATED_BY_BLOWING:
            if name in p:
                p = dict(p, **{name: np.where(on, p[name], 0.0)})
                seed[name] = on.astype(float)
    if d:
        for name in p:
            if wrt is None or name in wrt:
                tan[name] = {name: seed.get(name, 1.0)}
        if wrt is None or "pressure_coefficients" in wrt:
            for root in _COEFFICIENTS:
                tan[root] = {root: 1.0}

    # Atmosphere and jet.
    if options.atmosphere == "host":    # the host's air: inputs, their tangents seeded above
        atm = atmosphere.Atmosphere(*(asarray(p[f]) if f in p else None    # unused by the models
                                      for f in atmosphere.Atmosphere._fields))
    elif d:
        atm, datm = atmosphere.isa(p["altitude"], derivatives=True)
        for field in atm._fields:
            tan[field] = _chain({"altitude": getattr(datm, field)}, tan)
        out.update(atm._asdict())
    else:
        atm = atmosphere.isa(p["altitude"])
        out.update(atm._asdict())
    if options.compressible_jet:
        js = _compressible_jet(p, options, atm, out, tan if d else None)
    else:
        jet_args = (p["momentum_coefficient"], p["slot_ratio"], p["speed"], atm.density,
                    p["chord"], p["blown_span"], atm.speed_of_sound)
        if d:
            js, djs = jet.kinematics(*jet_args, derivatives=True)
            for field in js._fields:
                tan[field] = _chain({k: djs[field, k] for k in jet.KINEMATICS_INPUTS
                                     if (field, k) in djs}, tan)
        else:
            js = jet.kinematics(*jet_args)
    out.update(js._asdict())

    # The fan's diameter over the section's thickness (the fan must fit in the wing).
    if "thickness_ratio" in p and "fan_diameter" in p:
        thickness = asarray(p["thickness_ratio"]) * asarray(p["chord"])
        ratio = np.atleast_1d(asarray(p["fan_diameter"]) / thickness)
        out["fan_thickness_fraction"] = ratio
        if d:
            tan["fan_thickness_fraction"] = _chain({
                "fan_diameter": ratio / asarray(p["fan_diameter"]),
                "thickness_ratio": -ratio / asarray(p["thickness_ratio"]),
                "chord": -ratio / asarray(p["chord"])}, tan)

    # The section's lift coefficient and the constants that follow it.
    fc = _lift(p, params, options, js.dynamic_pressure, out, tan if d else None)

    # Duct: the jet loss factor and the pressure rise the jet requires.
    if options.duct_model == "lumped":
        kj = asarray(p["jet_loss_factor"])
    else:
        kj = _geometric_loss_factor(p, options, atm, js, tan if d else None)
        st = duct_stations(p, options)
        for name, field in ANGLE_OUTPUTS.items():
            out[name] = getattr(st, field)
    out["jet_loss_factor"] = kj
    if options.compressible_jet:
        res = duct.required_pressure_rise_from_head(kj, p["freestream_assist"], out["jet_head"],
                                                    js.dynamic_pressure, derivatives=d)
    else:   # on the jet's head, linear in C_mu: a finite derivative at C_mu = 0
        res_head = jet.jet_dynamic_head(p["momentum_coefficient"], p["slot_ratio"],
                                        js.dynamic_pressure, derivatives=d)
        head = _step(tan, "jet_head", res_head, d)
        res = duct.required_pressure_rise_from_head(kj, p["freestream_assist"], head,
                                                    js.dynamic_pressure, derivatives=d)
    req = _step(tan, "required_pressure_rise", res, d)
    out["required_pressure_rise"] = req
    out["ram_driven"] = duct.ram_driven(req)
    if "fan_pressure_rise" in p:
        dp = asarray(p["fan_pressure_rise"])
    else:
        dp = req
        if d:
            tan["fan_pressure_rise"] = tan["required_pressure_rise"]
    out["fan_pressure_rise"] = dp

    # Fan: efficiency (and the map's operating point), air power and shaft power.
    if options.fan_model == "constant":
        eta_shaft = asarray(p["fan_rated_efficiency"])   # the scalar divides faster
        if d:
            eta = eta_shaft + 0 * js.volume_flow
        else:                               # values: a read-only broadcast view, no array
            shape = np.shape(js.volume_flow)
            eta = np.broadcast_to(eta_shaft, shape if eta_shaft.ndim == 0 else
                                  np.broadcast_shapes(eta_shaft.shape, shape))
        if d:
            tan["fan_efficiency"] = _chain({"fan_rated_efficiency": 1.0}, tan)
    else:
        eta = eta_shaft = _fan_map(p, options, atm, js, dp, out, tan if d else None)
        if not on.all():    # a fan that does not run is stopped: no operating point on its map
            eta = eta_shaft = _stopped(on, eta, out, tan if d else None)
    out["fan_efficiency"] = eta
    if options.compressible:
        res = fan.shaft_power_isentropic(js.mass_flow, dp, atm.pressure, atm.temperature, 1.0,
                                         derivatives=d)
        names = {"mass_flow": "mass_flow", "pressure_rise": "fan_pressure_rise",
                 "inlet_pressure": "pressure", "inlet_temperature": "temperature"}
    else:
        res = fan.shaft_power(js.volume_flow, dp, 1.0, derivatives=d)
        names = {"volume_flow": "volume_flow", "pressure_rise": "fan_pressure_rise"}
    ideal = _step(tan, "air_power", res, d, names)
    out["air_power"] = ideal
    on = np.real(ideal) > 0
    with np.errstate(divide="ignore", invalid="ignore"):
        if d:
            out["fan_shaft_power"] = np.where(on, ideal / eta, 0.0)
        else:   # the same without the branch; a NaN or inf (map fan) where off is zeroed
            shaft = ideal / eta_shaft
            out["fan_shaft_power"] = (shaft if np.isfinite(shaft).all()
                                      else np.where(on, shaft, 0.0))
        if d:
            tan["fan_shaft_power"] = _chain({
                "air_power": np.where(on, 1.0 / eta, 0.0),
                "fan_efficiency": np.where(on, -out["fan_shaft_power"] / eta, 0.0)}, tan)

    # Airfoil: drag of the blown span against the clean section's. The saving comes from the
    # blown increment (slot penalty plus blowing) alone, so that it does not depend on the
    # clean drag even by round-off.
    res = airfoil.drag_coefficient(p["momentum_coefficient"], p["slot_ratio"], 0.0,
                                   *(p[k] for k in airfoil.DRAG_INPUTS[3:]), derivatives=d)
    inc = res[0] if d else res
    cd0 = asarray(p["drag_clean"])
    area = asarray(p["chord"]) * asarray(p["blown_span"])
    q_area = js.dynamic_pressure * area
    out["drag_coefficient"] = cd0 + inc
    out["section_drag"] = q_area * out["drag_coefficient"]
    out["clean_section_drag"] = q_area * cd0
    saving = q_area * inc
    saving *= -1.0                          # -(q S) dC_D, exactly, without a temporary
    out["drag_saving"] = saving
    out["lift_increment"] = airfoil.lift_increment(p["momentum_coefficient"],
                                                   p["lift_per_momentum"])
    if d:
        _airfoil_tangents(p, js.dynamic_pressure, area, out["drag_coefficient"], inc, res[1],
                          tan)

    # Segment power and energy.
    if options.sized_fan:
        # the blowing system's weight costs main thrust in every segment
        out["thrust_saving"] = out["drag_saving"] - out["mass_thrust_penalty"]
        if d:
            tan["thrust_saving"] = _chain({"drag_saving": 1.0, "mass_thrust_penalty": -1.0}, tan)
        saving_name = "thrust_saving"
    else:
        saving_name = "drag_saving"
    res = power.segment_power(out[saving_name], p["speed"], out["fan_shaft_power"],
                              p["chain_efficiency"], p["motor_efficiency"], blowing=blowing,
                              derivatives=d)
    for i, name in enumerate(("propulsion_power_saving", "fan_electric_power",
                              "net_power_saving")):
        out[name] = res[i]
        if d:
            tan[name] = _chain({(saving_name if k == "drag_saving" else k): v
                                for (o, k), v in res[3].items() if o == name}, tan)
    if options.sized_fan:
        res = mass.power_headroom(p["rated_shaft_power"], out["fan_shaft_power"],
                                  p["power_margin"], derivatives=d)
        out["power_headroom"] = _step(tan, "power_headroom", res, d,
                                      {"rated_shaft_power": "rated_shaft_power",
                                       "fan_shaft_power": "fan_shaft_power",
                                       "power_margin": "power_margin"})
    if options.aircraft and "max_lift_clean" in p:
        _high_lift(p, out, tan if d else None)
    # The first law: no more net thrust power than the fans put into the air.
    res = power.energy_margin(out["air_power"], out["section_drag"], p["speed"],
                              p["thrust_power_ceiling"], derivatives=d)
    out["energy_margin"] = _step(tan, "energy_margin", res, d)
    if "duration" in p:
        out["energy_saving"] = power.segment_energy(out["net_power_saving"], p["duration"])
        if d:
            tan["energy_saving"] = _chain({"net_power_saving": p["duration"],
                                           "duration": out["net_power_saving"]}, tan)
    if options.aircraft:
        _aircraft(p, out, tan if d else None)
    if not d:
        return out
    return out, _partials(out, tan, outputs)


def _compressible_jet(p, options, atm, out, tan):
    """The compressible jet's state (returned), head and temperature (into ``out``), with their
    tangents into ``tan`` when given. The fan efficiency that heats the jet is the constant
    fan's, or the map's peak efficiency (its efficiency at the operating point would need the
    jet's flow first)."""
    heating = "fan_rated_efficiency" if options.fan_model == "constant" else "peak_efficiency"
    names = dict(zip(jet.COMPRESSIBLE_INPUTS, jet.COMPRESSIBLE_INPUTS))
    names["heating_efficiency"] = heating
    args = (p["momentum_coefficient"], p["slot_ratio"], p["speed"], atm.density, atm.pressure,
            atm.temperature, p["chord"], p["blown_span"], p[heating])
    res = jet.compressible_kinematics(*args, derivatives=tan is not None)
    cj = res[0] if tan is not None else res
    out["jet_head"] = cj.jet_head
    out["jet_temperature"] = cj.jet_temperature
    if tan is not None:
        fields = cj.state._fields + ("jet_head", "jet_temperature")
        for field in fields:
            tan[field] = _chain({names[k]: v for (f, k), v in res[1].items() if f == field},
                                tan)
    return cj.state


def _lift(p, params, options, dynamic_pressure, out, tan):
    """The aircraft's flight condition into ``out`` (with ``options.aircraft``) and the tabled
    constants into ``p``, with their tangents into ``tan`` when given. Returns the flight
    condition (None without the aircraft)."""
    d = tan is not None
    fc = None
    if options.aircraft:
        res = aircraft.flight_condition(*(p[k] for k in aircraft.FLIGHT_INPUTS[:6]),
                                        dynamic_pressure, p["speed"], derivatives=d)
        fc = res[0] if d else res
        out.update(fc._asdict())
        if d:
            for field in fc._fields:
                tan[field] = _chain({k: v for (o, k), v in res[1].items() if o == field}, tan)
        if options.sized_fan:
            fc = _sized_flight(p, options, dynamic_pressure, out, tan)
    tabled = [(name, table) for name, table in options.lift_tables if name not in params]
    if not tabled:
        return fc
    if fc is not None:
        cl = fc.lift_coefficient
    elif "lift_coefficient" in p:
        cl = asarray(p["lift_coefficient"])
    else:
        raise ValueError("lift tables need the section lift coefficient: give the input "
                         "lift_coefficient or describe the aircraft (option aircraft)")
    for name, table in tabled:
        res = lift_table.interpolate(table, cl, derivatives=d)
        p[name] = res[0] if d else res
        _within_range(name, p[name], table, cl)
        if d:
            tan[name] = _chain({"lift_coefficient": res[1]}, tan)
    return fc


def _within_range(name, value, table, cl):
    """Refuse a tabulated constant that the table's linear extrapolation (a lift coefficient
    beyond its breakpoints) carried outside the constant's allowed range."""
    prm = registry.BY_NAME[name]
    v = np.real(value)
    bad = prm.outside(v)
    if np.any(bad):
        i = int(np.flatnonzero(np.broadcast_to(bad, np.shape(v)))[0])
        c = float(np.real(np.broadcast_to(cl, np.shape(v)).flat[i]))
        lo, hi = table.range
        raise ValueError(f"{name}: its lift table read at lift coefficient {c:g} (outside the "
                         f"table's {lo:g} to {hi:g}, extrapolated) gives "
                         f"{float(np.asarray(v).flat[i]):g}, outside the allowed "
                         f"{prm.allowed()}; keep the lift coefficient within the table or "
                         f"extend the table")


def _system_mass(p, options, out, tan):
    """The blowing system's installed mass [kg] (wing-level) into ``out`` and ``tan``."""
    d = tan is not None
    res_rot = mass.rotating_mass(p["rated_shaft_power"], p["fan_specific_power"],
                                 p["motor_specific_power"], derivatives=d)
    rotating = res_rot[0] if d else res_rot
    if options.duct_model == "lumped":
        res_wet = mass.lumped_wetted_area(p["chord"], p["blown_span"], p["duct_wetted_ratio"],
                                          derivatives=d)
        wetted = res_wet[0] if d else res_wet
    else:
        geo = _geometry(p)
        st = _stations(*geo, options.fans, options.schedule, options.stations)
        res_wet = mass.transition_wetted_area(st.position, st.perimeter, options.fans,
                                              derivatives=d)
        wetted = res_wet[0] if d else res_wet
    res = mass.blowing_system_mass(rotating, wetted, p["duct_areal_density"],
                                   p["installation_factor"], derivatives=d)
    value = np.atleast_1d(res[0] if d else res)
    out["blowing_system_mass"] = value
    if not d:
        return value
    tan["rotating_mass"] = _chain({"rated_shaft_power": res_rot[1]["rated_shaft_power"],
                                   "fan_specific_power": res_rot[1]["fan_specific_power"],
                                   "motor_specific_power": res_rot[1]["motor_specific_power"]},
                                  tan)
    if options.duct_model == "lumped":
        tan["wetted_area"] = _chain({"chord": res_wet[1]["chord"],
                                     "blown_span": res_wet[1]["blown_span"],
                                     "duct_wetted_ratio": res_wet[1]["wetted_ratio"]}, tan)
    else:
        sd = _station_tangents(*geo, options.fans, options.schedule, options.stations)
        grads = {"position": res_wet[1], "perimeter": res_wet[2]}
        wet = {}
        for field in ("position", "perimeter"):
            for k, t in sd[field].items():
                if k in tan:
                    wet[k] = wet.get(k, 0.0) + np.sum(grads[field] * t, axis=-1)
        tan["wetted_area"] = _chain(wet, tan)
    tan["blowing_system_mass"] = {k: np.atleast_1d(v) for k, v in _chain({
        "rotating_mass": res[1]["rotating"], "wetted_area": res[1]["wetted_area"],
        "duct_areal_density": res[1]["duct_areal_density"],
        "installation_factor": res[1]["installation_factor"]}, tan).items()}
    return value


def system_mass(params, options=ChainOptions()):
    """The blowing system's installed mass [kg] for ``params`` (the chain's parameters with
    ``rated_shaft_power`` [W] and the ``[mass]`` constants): fans and motors from the rating,
    ducts from their wetted area (:mod:`mdao.physics.mass`), as the sized fan flies it."""
    return float(_system_mass(with_defaults(params, options), options, {}, None)[0])


def _sized_flight(p, options, dynamic_pressure, out, tan):
    """With the blowing system's mass: the flight condition the aircraft flies (returned; its
    lift coefficient into ``out``, read by the lift tables and the high-lift requirement), and
    the main thrust the mass costs, ``mass_thrust_penalty`` (the clean aircraft's drag and
    thrust stay those without the system, the baseline of every saving)."""
    d = tan is not None
    system = _system_mass(p, options, out, tan)
    flight_mass = asarray(p["aircraft_mass"]) + system
    args = [flight_mass] + [p[k] for k in aircraft.FLIGHT_INPUTS[1:6]]
    res = aircraft.flight_condition(*args, dynamic_pressure, p["speed"], derivatives=d)
    fc = res[0] if d else res
    res_t = aircraft.added_mass_thrust(p["aircraft_mass"], system, p["wing_area"],
                                       p["aspect_ratio"], p["span_efficiency"], p["climb_rate"],
                                       dynamic_pressure, p["speed"], derivatives=d)
    out["lift_coefficient"] = fc.lift_coefficient
    out["mass_thrust_penalty"] = res_t[0] if d else res_t
    if d:
        tan["flight_mass"] = _chain({"aircraft_mass": 1.0, "blowing_system_mass": 1.0}, tan)
        tan["lift_coefficient"] = _chain(
            {("flight_mass" if k == "aircraft_mass" else k): v
             for (o, k), v in res[1].items() if o == "lift_coefficient"}, tan)
        tan["mass_thrust_penalty"] = _chain(
            {("blowing_system_mass" if k == "added_mass" else k): v
             for k, v in res_t[1].items()}, tan)
    return fc


def _high_lift(p, out, tan):
    """The section's maximum lift with blowing and its reserve over the lift a high-lift
    segment needs: ``max_lift_clean + lift_per_momentum C_mu - high_lift_margin C_L``."""
    cmu = asarray(p["momentum_coefficient"])
    out["max_lift_coefficient"] = (asarray(p["max_lift_clean"])
                                   + asarray(p["lift_per_momentum"]) * cmu)
    out["lift_reserve"] = (out["max_lift_coefficient"]
                           - asarray(p["high_lift_margin"]) * out["lift_coefficient"])
    if tan is None:
        return
    tan["max_lift_coefficient"] = _chain({"max_lift_clean": 1.0,
                                          "lift_per_momentum": cmu,
                                          "momentum_coefficient": p["lift_per_momentum"]}, tan)
    tan["lift_reserve"] = _chain({"max_lift_coefficient": 1.0,
                                  "high_lift_margin": -out["lift_coefficient"],
                                  "lift_coefficient": -asarray(p["high_lift_margin"])},
                                 tan)


def lift_dependent(params, options=ChainOptions()):
    """``params`` completed by the defaults and with the tabled constants evaluated at each
    point's lift coefficient (values only): for closed forms that take the constants as numbers
    (the break-even search)."""
    p = with_defaults(params, options)
    if options.tabled(params):
        rho = (p["density"] if options.atmosphere == "host"
               else atmosphere.isa(p["altitude"]).density)
        q = jet.dynamic_pressure(rho, p["speed"])
        _lift(p, params, options, q, {}, None)
    return p


def _aircraft(p, out, tan):
    """The aircraft's thrust and source power into ``out`` (and their tangents into ``tan`` when
    given); the clean aircraft's flight condition is already there (:func:`_lift`). The main
    thrust with blowing is the clean aircraft's less the thrust saving (the section's drag
    saving, less what the blowing system's weight costs when the fan is sized)."""
    d = tan is not None
    saving = out["thrust_saving"] if "thrust_saving" in out else out["drag_saving"]
    clean = out["main_thrust_clean"]
    out["main_thrust"] = aircraft.main_thrust(clean, saving)
    res_p = aircraft.clean_source_power(clean, p["speed"], p["chain_efficiency"],
                                        derivatives=d)
    out["clean_source_power"] = res_p[0] if d else res_p
    if "duration" in p:
        out["clean_source_energy"] = out["clean_source_power"] * asarray(p["duration"])
    if not d:
        return
    tan["main_thrust"] = _chain({"main_thrust_clean": 1.0,
                                 ("thrust_saving" if "thrust_saving" in out else "drag_saving"):
                                 -1.0}, tan)
    _step(tan, "clean_source_power", res_p, True)
    if "duration" in p:
        tan["clean_source_energy"] = _chain({"clean_source_power": p["duration"],
                                             "duration": out["clean_source_power"]}, tan)


def duct_stations(params, options=ChainOptions(), derivatives=False):
    """Transition stations of the wing's geometric duct (one duct per fan, all alike).

    Parameters
    ----------
    params : mapping
        As for :func:`evaluate`; uses ``fan_diameter``, ``blown_span``, ``slot_ratio``,
        ``chord``, ``transition_length`` and ``slot_exponent`` (each one value for the wing).
    options : ChainOptions
        ``fans``, ``stations`` and ``schedule`` are used.
    derivatives : bool
        Also return ``{field: {input: ndarray (stations,) or (stations - 1,)}}`` for the fields
        of :data:`STATION_FIELDS` and the inputs each depends on structurally.

    Returns
    -------
    mdao.physics.transition.TransitionStations
        Kept between calls with the same geometry (searches re-evaluate the same duct); do not
        modify its arrays.
    """
    geo = _geometry(with_defaults(params, options))
    st = _stations(*geo, options.fans, options.schedule, options.stations)
    if not derivatives:
        return st
    return st, _station_tangents(*geo, options.fans, options.schedule, options.stations)


def _geometry(p):
    return tuple(_scalar(k, p[k]) for k in STATION_ROOTS)


@functools.lru_cache(maxsize=64)
def _stations(fan_diameter, blown_span, slot_ratio, chord, length, slot_exponent, fans, schedule,
              count):
    """Transition stations of one wing geometry, kept: searches re-evaluate the same duct."""
    return transition.stations(fan_diameter, blown_span / fans, slot_ratio * chord, length,
                               slot_exponent, schedule=schedule, count=count)


def station_dependencies(schedule):
    """Inputs each station field depends on: the position on the length only, the sections on
    all but the length; with the monotone-area schedule the areas (hence the equivalent cone's
    angles) not on the slot exponent (the outlet area is w h whatever the exponent); the walls'
    angles on every input (the semi-axes move with the exponent), except with linear semi-axes,
    where the slot's semi-width does not depend on its height nor its semi-height on its width."""
    sections = [k for k in STATION_ROOTS if k != "transition_length"]
    area = sections if schedule != "monotone-area" else [k for k in sections
                                                         if k != "slot_exponent"]
    span = thickness = sections + ["transition_length"]
    if schedule == "linear":
        span = [k for k in span if k not in ("slot_ratio", "chord")]
        thickness = [k for k in thickness if k != "blown_span"]
    return {"position": ["transition_length"], "area": area, "perimeter": sections,
            "hydraulic_diameter": sections, "half_angle": area + ["transition_length"],
            "span_wall_half_angle": span, "thickness_wall_half_angle": thickness}


@functools.lru_cache(maxsize=64)
def _station_tangents(fan_diameter, blown_span, slot_ratio, chord, length, slot_exponent, fans,
                      schedule, count):
    """Station fields' partials by wing input, through slot width b/fans and height r_s c."""
    _, ds = transition.stations(fan_diameter, blown_span / fans, slot_ratio * chord, length,
                                slot_exponent, schedule=schedule, count=count, derivatives=True)
    via = {"fan_diameter": ("fan_diameter", 1.0), "blown_span": ("slot_width", 1.0 / fans),
           "slot_ratio": ("slot_height", chord), "chord": ("slot_height", slot_ratio),
           "transition_length": ("length", 1.0), "slot_exponent": ("slot_exponent", 1.0)}
    return {field: {k: ds[field, via[k][0]] * via[k][1] for k in roots}
            for field, roots in station_dependencies(schedule).items()}


def _geometric_loss_factor(p, options, atm, js, tan):
    """Geometric jet loss factor; its tangent into ``tan`` when given."""
    geo = _geometry(p)
    st = _stations(*geo, options.fans, options.schedule, options.stations)
    r_s = geo[STATION_ROOTS.index("slot_ratio")]
    # Friction and the transition's form loss depend on the flow only: evaluate them on the
    # flow's own shape (often far smaller than that of the samples), then add the loss
    # coefficients, which may vary per sample.
    shape = np.broadcast(js.volume_flow, atm.density, atm.viscosity).shape
    flow = [np.broadcast_to(v, shape).ravel()
            for v in (js.volume_flow / options.fans, atm.density, atm.viscosity)]
    res = duct.geometric_jet_loss_factor(r_s, 1.0, 0.0, 0.0, 0.0, _scalar("roughness", p["roughness"]),
                               *flow, st.position, st.area, st.perimeter,
                               derivatives=tan is not None)
    base = (res[0] if tan is not None else res).reshape(shape)
    k_in, k_bend = duct.coefficient_losses(r_s, p["suction_ratio"], p["suction_inlet_loss"],
                                           p["bend_loss"], st.area)
    kj = base + k_in + k_bend + asarray(p["extra_loss"])
    if tan is None:
        return kj
    db = {k: v.reshape(shape + v.shape[1:]) for k, v in res[1].items()}
    sd = _station_tangents(*geo, options.fans, options.schedule, options.stations)
    for name, field in ANGLE_OUTPUTS.items():
        tan[name] = _chain(sd[field], tan)
    terms = [_chain({"volume_flow": db["volume_flow"] / options.fans, "density": db["density"],
                     "viscosity": db["viscosity"]}, tan),
             _chain({"roughness": db["roughness"], "extra_loss": 1.0}, tan)]
    # Through the stations: friction and form loss (on every station), bend loss (on the ends).
    # k_in = K_in (r_s/r_suc)^2 and k_bend = K_bend (A_slot/A_fan)^2 (coefficient_losses).
    a_fan, a_slot = st.area[0], st.area[-1]
    ratio_in = r_s / asarray(p["suction_ratio"])
    terms.append(_chain({"slot_ratio": 2.0 * k_in / r_s,
                         "suction_ratio": -2.0 * k_in / asarray(p["suction_ratio"]),
                         "suction_inlet_loss": ratio_in ** 2, "bend_loss": (a_slot / a_fan) ** 2},
                        tan))
    station = {}
    for field in ("position", "area", "perimeter"):
        for k, t in sd[field].items():
            if k in tan:     # a wing input the derivatives are taken against
                station[k] = station.get(k, 0.0) + db[field] @ t
    for k, t in sd["area"].items():
        if k in tan:
            station[k] = station[k] + 2.0 * k_bend * (t[-1] / a_slot - t[0] / a_fan)
    terms.append(_chain(station, tan))
    tan["jet_loss_factor"] = _add(*terms)
    return kj


def _fan_map(p, options, atm, js, dp, out, tan):
    """The map fan's operating point into ``out`` (and tangents); returns its efficiency."""
    coeffs = asarray(p["pressure_coefficients"])
    diameter = p["fan_diameter"]
    q_f = js.volume_flow / options.fans
    d = tan is not None
    with np.errstate(invalid="ignore"):
        res = fan.shaft_speed(q_f, np.where(np.real(dp) < 0, 0.0, dp), atm.density, diameter, coeffs, derivatives=d)
    n_rev = res[0] if d else res
    res_phi = fan.flow_coefficient_of(q_f, n_rev, diameter, derivatives=d)
    phi = res_phi[0] if d else res_phi
    res_eta = fan.map_efficiency(phi, p["peak_efficiency"], p["peak_flow_coefficient"],
                             p["efficiency_falloff"], derivatives=d)
    res_tip = fan.tip_mach(n_rev, diameter, atm.speed_of_sound, derivatives=d)
    res_psi = fan.pressure_coefficient(dp, atm.density, n_rev, diameter, derivatives=d)
    out["fan_speed"] = n_rev
    out["flow_coefficient"] = phi
    out["pressure_coefficient"] = res_psi[0] if d else res_psi
    out["tip_mach"] = res_tip[0] if d else res_tip
    if not d:
        return res_eta
    ds = res[1]
    with np.errstate(invalid="ignore"):
        tan["fan_speed"] = _chain({
            "volume_flow": ds["volume_flow"] / options.fans,
            "fan_pressure_rise": np.where(dp > 0, ds["pressure_rise"], 0.0),
            "density": ds["density"], "fan_diameter": ds["diameter"],
            _COEFFICIENTS[0]: ds["c0"], _COEFFICIENTS[1]: ds["c1"], _COEFFICIENTS[2]: ds["c2"]},
            tan)
    dphi = res_phi[1]
    tan["flow_coefficient"] = _chain({"volume_flow": dphi["volume_flow"] / options.fans,
                                      "fan_speed": dphi["speed"],
                                      "fan_diameter": dphi["diameter"]}, tan)
    _step(tan, "pressure_coefficient", res_psi, True,
          {"pressure_rise": "fan_pressure_rise", "density": "density", "speed": "fan_speed",
           "diameter": "fan_diameter"})
    _step(tan, "tip_mach", res_tip, True,
          {"speed": "fan_speed", "diameter": "fan_diameter", "speed_of_sound": "speed_of_sound"})
    return _step(tan, "fan_efficiency", res_eta, True)


#: The map fan's operating point, 0 where the fan is stopped (a fan-off node).
_MAP_POINT = ("fan_speed", "flow_coefficient", "pressure_coefficient", "tip_mach",
              "fan_efficiency")


def _stopped(on, eta, out, tan):
    """The map fan's operating point (``out``, ``tan`` and the efficiency ``eta``, returned)
    zeroed where the fan does not run (``on`` False): speed, coefficients, tip Mach number and
    efficiency 0 and their partials 0, where the map has no operating point at zero flow and
    zero pressure rise (the values would be 0/0)."""
    for name in _MAP_POINT[:-1]:
        out[name] = np.where(on, out[name], 0.0)
    if tan is not None:
        for name in _MAP_POINT:
            tan[name] = {k: np.where(on, v, 0.0) for k, v in tan[name].items()}
    return np.where(on, eta, 0.0)


def _airfoil_tangents(p, q, area, cd, inc, dinc, tan):
    """Tangents of the drag outputs from the partials ``dinc`` of the blown increment ``inc``
    (C_D - C_D,clean)."""
    tan["blown_increment"] = _chain({k: dinc[k] for k in airfoil.DRAG_INPUTS if k != "drag_clean"},
                                    tan)
    tan["drag_coefficient"] = _add(tan["blown_increment"], _chain({"drag_clean": 1.0}, tan))
    tan["area"] = _chain({"chord": p["blown_span"], "blown_span": p["chord"]}, tan)
    cd0 = asarray(p["drag_clean"])
    tan["section_drag"] = _chain({"dynamic_pressure": area * cd, "area": q * cd,
                                  "drag_coefficient": q * area}, tan)
    tan["clean_section_drag"] = _chain({"dynamic_pressure": area * cd0, "area": q * cd0,
                                        "drag_clean": q * area}, tan)
    tan["drag_saving"] = _chain({"dynamic_pressure": -area * inc, "area": -q * inc,
                                 "blown_increment": -q * area}, tan)
    tan["lift_increment"] = _chain({"momentum_coefficient": p["lift_per_momentum"],
                                    "lift_per_momentum": p["momentum_coefficient"]}, tan)


def _step(tan, name, result, derivatives, names=None):
    """Value of a physics call; with ``derivatives`` its tangent ``tan[name]`` by the chain
    rule, the call's partials keyed by argument name (renamed to quantities by ``names``)."""
    if not derivatives:
        return result
    value, partials = result
    local = {(names or {}).get(k, k): v for k, v in partials.items()
             if names is None or k in names}
    tan[name] = _chain(local, tan)
    return value


def _chain(local, tan):
    """Chain rule, elementwise: d(out)/d(root) = sum over quantities x of d(out)/dx dx/d(root).

    ``local`` maps a quantity to the partial of the output; ``tan`` maps each quantity to its
    tangents ``{root: derivative}``. Quantities without tangents (constants) are skipped. A
    zero partial wins over a NaN tangent: no fan power where the fan does not run, whatever
    the (undefined) speed of a fan map there.
    """
    out = {}
    for name, dx in local.items():      # (invalid operations ignored once, in evaluate)
        tx = tan.get(name)
        if not tx:
            continue
        scalar = type(dx) is float     # a Python number: a seed or a fixed factor
        for root, t in tx.items():
            if scalar or type(t) is float:
                term = dx * t     # a seed or fixed factor times the other: no 0 * NaN
            else:
                term = np.where(dx == 0, 0.0, dx * t)
            out[root] = out[root] + term if root in out else term
    return out


def _add(*tangents):
    """Sum of tangent dictionaries."""
    out = {}
    for t in tangents:
        for root, v in t.items():
            out[root] = out[root] + v if root in out else v
    return out


def _partials(out, tan, names=None):
    """``{output: {input: tangent broadcast to the output}}`` (or to a larger shape where the
    partials vary along an axis the value does not); the pressure coefficients stacked on a
    last axis. ``names``: only these outputs (default all)."""
    result = {}
    for name, value in out.items():
        if name == "ram_driven" or name not in tan or (names is not None and name not in names):
            continue
        row = {}
        coeffs = {}
        vshape = np.shape(value)
        for root, t in tan[name].items():
            t = np.asarray(t, float)
            if root in _COEFFICIENTS:
                coeffs[root[1]] = t
            elif t.shape == vshape:
                row[root] = t
            else:
                row[root] = np.broadcast_to(t, np.broadcast_shapes(vshape, t.shape))
        if coeffs:
            shape = np.broadcast_shapes(np.shape(value), *(t.shape for t in coeffs.values()))
            row["pressure_coefficients"] = np.stack(
                [np.broadcast_to(coeffs.get(i, np.zeros(())), shape) for i in range(3)],
                axis=-1)
        result[name] = row
    return result


def _scalar(name, value):
    """One value for the wing from an array that must not vary (geometric duct)."""
    arr = asarray(value)
    if arr.size and np.any(arr != arr.flat[0]):
        raise ValueError(f"{name}: the geometric duct takes one value for the wing; got "
                         f"{arr.size} different values")
    return _item(arr.flat[0])       # complex under a complex step
