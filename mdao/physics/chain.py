"""The whole physics chain in plain NumPy: one call from operating points to net power.

This is the direct path that sweeps, Monte Carlo studies and break-even searches use: every
input broadcasts (segments, grid points or samples on any leading axes), and it runs the same
functions as the OpenMDAO components, so the two cannot drift apart (a test compares them).

Parameter names are the promoted input names of :class:`mdao.system.BlownWingGroup`.
"""
import functools
from dataclasses import dataclass

import numpy as np

from mdao.physics import airfoil, atmosphere, duct, fan, jet, power, transition

#: Defaults for optional parameters (the same as the components' defaults).
DEFAULTS = {
    "slot_drag": 0.0, "slot_drag_per_ratio": 0.0, "drag_per_momentum_per_ratio": 0.0,
    "drag_quadratic": 0.0, "lift_per_momentum": 0.0, "duration": 0.0, "extra_loss": 0.0,
    "suction_inlet_loss": 0.0, "bend_loss": 0.0, "roughness": 0.0,
}


@dataclass(frozen=True)
class ChainOptions:
    """Model choices of the chain (the options of :class:`mdao.system.BlownWingGroup`)."""

    duct_model: str = "lumped"
    fan_model: str = "constant"
    fans: int = 1
    stations: int = 33
    schedule: str = "monotone-area"
    compressible: bool = False


def evaluate(params, options=ChainOptions(), blowing=True):
    """Evaluate the chain at broadcast operating points.

    Parameters
    ----------
    params : mapping of str to array_like
        Inputs by promoted name: ``altitude`` [m], ``speed`` [m/s], ``momentum_coefficient``,
        ``slot_ratio``, ``chord`` [m], ``blown_span`` [m], ``freestream_assist``,
        ``jet_loss_factor`` (lumped) or the geometric duct's ``suction_ratio``,
        ``suction_inlet_loss``, ``bend_loss``, ``extra_loss``, ``roughness`` [m],
        ``fan_diameter`` [m], ``transition_length`` [m], ``slot_exponent``;
        ``fan_pressure_rise`` [Pa] (optional: when absent the fan follows the requirement);
        ``fan_rated_efficiency`` (constant fan) or the map's ``pressure_coefficients`` (3,),
        ``peak_efficiency``, ``peak_flow_coefficient``, ``efficiency_falloff``,
        ``fan_diameter``; ``motor_efficiency``, ``chain_efficiency``, ``drag_clean``,
        ``slot_drag``, ``slot_drag_per_ratio``, ``drag_per_momentum``,
        ``drag_per_momentum_per_ratio``, ``drag_quadratic``, ``lift_per_momentum``,
        ``duration`` [s]. The geometric duct needs scalar geometry (one wing).
    options : ChainOptions
        Model choices.
    blowing : bool or array_like of bool
        Whether the fan runs.

    Returns
    -------
    dict of ndarray
        Every intermediate: atmosphere fields, jet state, ``jet_loss_factor``,
        ``required_pressure_rise``, ``fan_pressure_rise``, ``ram_driven``, ``fan_efficiency``,
        ``shaft_power``, ``ideal_power`` (shaft power at unit fan efficiency), map outputs,
        ``drag``, ``clean_drag``, ``drag_saving``, ``propulsion_power_saving``,
        ``fan_electric_power``, ``net_power_saving``, ``energy_saving`` (SI).
    """
    p = dict(DEFAULTS)
    p.update(params)
    out = {}
    atm = atmosphere.isa(p["altitude"])
    out.update(atm._asdict())
    js = jet.kinematics(p["momentum_coefficient"], p["slot_ratio"], p["speed"], atm.density,
                        p["chord"], p["blown_span"], atm.speed_of_sound)
    out.update(js._asdict())

    if options.duct_model == "lumped":
        kj = np.asarray(p["jet_loss_factor"], float)
    else:
        geo = {k: _scalar(k, p[k]) for k in ("fan_diameter", "blown_span", "slot_ratio", "chord",
                                             "transition_length", "slot_exponent")}
        st = _stations(geo["fan_diameter"], geo["blown_span"] / options.fans,
                       geo["slot_ratio"] * geo["chord"], geo["transition_length"],
                       geo["slot_exponent"], options.schedule, options.stations)
        # Friction and the transition's form loss depend on the flow only: evaluate them on
        # the flow's own shape (often far smaller than that of the samples), then add the
        # loss coefficients, which may vary per sample.
        shape = np.broadcast(js.volume_flow, atm.density, atm.viscosity).shape
        flow = [np.broadcast_to(v, shape).ravel()
                for v in (js.volume_flow / options.fans, atm.density, atm.viscosity)]
        base = duct.jet_loss_factor(geo["slot_ratio"], 1.0, 0.0, 0.0, 0.0,
                                    _scalar("roughness", p["roughness"]), *flow,
                                    st.position, st.area, st.perimeter).reshape(shape)
        k_in, k_bend = duct.coefficient_losses(geo["slot_ratio"], p["suction_ratio"],
                                               p["suction_inlet_loss"], p["bend_loss"], st.area)
        kj = base + k_in + k_bend + np.asarray(p["extra_loss"], float)
        out["diffusion_half_angle"] = st.half_angle
    out["jet_loss_factor"] = kj
    req = duct.required_pressure_rise(kj, p["freestream_assist"], atm.density, js.jet_velocity,
                                      js.dynamic_pressure)
    out["required_pressure_rise"] = req
    out["ram_driven"] = duct.ram_driven(req)
    dp = np.asarray(p["fan_pressure_rise"], float) if "fan_pressure_rise" in p else req
    out["fan_pressure_rise"] = dp

    if options.fan_model == "constant":
        eta = np.asarray(p["fan_rated_efficiency"], float) + 0 * js.volume_flow
    else:
        coeffs = np.asarray(p["pressure_coefficients"], float)
        q_f = js.volume_flow / options.fans
        with np.errstate(invalid="ignore"):
            n_rev = fan.speed(q_f, np.maximum(dp, 0.0), atm.density, p["fan_diameter"], coeffs)
        phi = fan.flow_coefficient(q_f, n_rev, p["fan_diameter"])
        eta = fan.efficiency(phi, p["peak_efficiency"], p["peak_flow_coefficient"],
                             p["efficiency_falloff"])
        out["fan_speed"] = n_rev
        out["flow_coefficient"] = phi
        out["tip_mach"] = fan.tip_mach(n_rev, p["fan_diameter"], atm.speed_of_sound)
    out["fan_efficiency"] = eta
    if options.compressible:
        ideal = fan.shaft_power_isentropic(js.mass_flow, dp, atm.pressure, atm.temperature, 1.0)
    else:
        ideal = fan.shaft_power(js.volume_flow, dp, 1.0)
    out["air_power"] = ideal
    with np.errstate(divide="ignore", invalid="ignore"):
        out["fan_shaft_power"] = np.where(ideal > 0, ideal / eta, 0.0)

    cd = airfoil.drag_coefficient(p["momentum_coefficient"], p["slot_ratio"], p["drag_clean"],
                                  p["slot_drag"], p["slot_drag_per_ratio"], p["drag_per_momentum"],
                                  p["drag_per_momentum_per_ratio"], p["drag_quadratic"])
    area = np.asarray(p["chord"], float) * np.asarray(p["blown_span"], float)
    out["drag_coefficient"] = cd
    out["section_drag"] = js.dynamic_pressure * area * cd
    out["clean_section_drag"] = js.dynamic_pressure * area * np.asarray(p["drag_clean"], float)
    out["drag_saving"] = out["clean_section_drag"] - out["section_drag"]
    out["lift_increment"] = airfoil.lift_increment(p["momentum_coefficient"],
                                                   p["lift_per_momentum"])
    prop, fan_el, net = power.segment_power(out["drag_saving"], p["speed"], out["fan_shaft_power"],
                                            p["chain_efficiency"], p["motor_efficiency"],
                                            blowing=blowing)
    out["propulsion_power_saving"] = prop
    out["fan_electric_power"] = fan_el
    out["net_power_saving"] = net
    out["energy_saving"] = power.segment_energy(net, p["duration"])
    return out


@functools.lru_cache(maxsize=64)
def _stations(fan_diameter, slot_width, slot_height, length, slot_exponent, schedule, count):
    """Transition stations of one wing geometry, kept: searches re-evaluate the same duct."""
    return transition.stations(fan_diameter, slot_width, slot_height, length, slot_exponent,
                               schedule=schedule, count=count)


def _scalar(name, value):
    """One value for the wing from an array that must not vary (geometric duct)."""
    arr = np.asarray(value, float)
    if arr.size and np.any(arr != arr.flat[0]):
        raise ValueError(f"{name}: the geometric duct takes one value for the wing; got "
                         f"{arr.size} different values")
    return float(arr.flat[0])
