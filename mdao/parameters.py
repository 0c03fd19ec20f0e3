"""The model's parameters, each declared once.

Every constant of the physics chain (and of the blowing system's mass) is declared here with its
case key path, its promoted name (the OpenMDAO input name, which is also the argument name of the
NumPy chain), its SI unit, its default, its allowed range, the duct and fan models that use it,
and whether it may be uncertain or calibrated. Everything else reads these declarations: case
loading (the schema of the model tables), the components' input defaults and units, the NumPy
chain, the problem builder, sensitivities, uncertainty and calibration. A new parameter is one
new :class:`Parameter` line here (see DEVELOPERS.md).

This module imports nothing from the package: it sits at the bottom of the layers.
"""
import math
from dataclasses import dataclass

import numpy as np

INF = math.inf

#: Marks a parameter that the case must give (no default).
REQUIRED = "required"


@dataclass(frozen=True)
class Parameter:
    """One model parameter.

    Attributes
    ----------
    key : str
        Case key path, ``"table.key"`` (``"segment.key"`` for per-segment values).
    name : str
        Promoted input name of :class:`mdao.system.BlownWingGroup` and argument name of
        :func:`mdao.physics.chain.evaluate`.
    unit : str or None
        SI unit in OpenMDAO's spelling (None: dimensionless).
    dimension : str
        Dimension that the case reader checks (see :mod:`mdao.units`).
    default : float, list, str or None
        Value when the case omits it; :data:`REQUIRED` when it must be given (by the models that
        use it); None when it is optional and absent means "not used".
    example : float or tuple
        A representative value: the components' input value before a model connects or sets
        it, and the default's stand-in in documentation. Never used for a case's answer.
    low, high : float
        Allowed range.
    low_open, high_open : bool
        Whether the range excludes its ends.
    duct_models, fan_models : tuple of str
        The duct and fan models that use it: both must match, or either with ``either``.
    either : bool
        Used when the duct model or the fan model matches (the fan diameter: the geometric
        duct's transition and the fan map both need it).
    per_segment : bool
        One value per segment (else one for the wing).
    uncertain : bool
        May appear in a case's ``[uncertainty]`` table and in sensitivity studies.
    calibrated : bool
        A calibration fragment may give it.
    lift_table : bool
        May be a table over the section lift coefficient instead of one number
        (:class:`mdao.physics.lift_table.LiftTable`; case form ``{ lift_coefficient = [...],
        value = [...] }``).
    fused_only : bool
        Wired only by the fused chain (:class:`mdao.components.chain.ChainComp`), not by the
        per-discipline group: the fan's fit in the wing and the high-lift requirement.
    aircraft : bool
        Used only when the case describes the aircraft around the wing (an ``[aircraft]``
        table): the aircraft's lift, drag and main-propulsor thrust (:mod:`mdao.physics.aircraft`).
    description : str
        What it is, in the trade's words.
    """

    key: str
    name: str
    unit: str = None
    dimension: str = "dimensionless"
    default: object = REQUIRED
    example: object = None
    low: float = -INF
    high: float = INF
    low_open: bool = False
    high_open: bool = False
    duct_models: tuple = ("lumped", "geometric")
    fan_models: tuple = ("constant", "map")
    either: bool = False
    per_segment: bool = False
    uncertain: bool = True
    calibrated: bool = False
    aircraft: bool = False
    lift_table: bool = False
    fused_only: bool = False
    description: str = ""

    @property
    def table(self):
        """The case table that holds it (``"duct"``; ``"segment"`` for per-segment values)."""
        return self.key.split(".")[0]

    @property
    def field(self):
        """Its key within that table (``"jet_loss_factor"``)."""
        return self.key.split(".", 1)[1]

    @property
    def start_value(self):
        """Value of the component input before it is connected or set."""
        if self.default is not REQUIRED and self.default is not None:
            return self.default
        return self.example

    @property
    def host_gives(self):
        """Whether a host model that embeds the group must give it: the flight condition (every
        per-segment value), every calibration constant, and every parameter the models need
        that has no default. The group starts such an input unset (NaN) and its evaluation
        refuses it by name (:func:`mdao.components.common.checks_host_inputs`), so a forgotten one
        is never silently an example value. A case file still fills the defaults it
        documents. Optional parameters (default None: the fan's fit in the section, the
        high-lift requirement) start at their example, and only the outputs of that check
        read them."""
        return self.default is REQUIRED or self.calibrated or self.per_segment

    def used_by(self, duct_model, fan_model, aircraft=False):
        """Whether a chain with these models (and the aircraft, when ``aircraft``) uses the
        parameter."""
        if self.aircraft and not aircraft:
            return False
        if self.either:
            return duct_model in self.duct_models or fan_model in self.fan_models
        return duct_model in self.duct_models and fan_model in self.fan_models

    def outside(self, value, allowance=0.0):
        """Whether each value lies outside the allowed range (elementwise; the real part of a
        complex step). A closed end is widened by ``allowance`` times max(1, |end|): round-off
        or a finite-difference step at a bound."""
        v = np.real(value)
        low = (v <= self.low) if self.low_open else (
            v < self.low - allowance * max(1.0, abs(self.low)))
        high = (v >= self.high) if self.high_open else (
            v > self.high + allowance * max(1.0, abs(self.high)))
        return low | high

    def allowed(self):
        """The allowed range in words, ``"(0, 1]"``."""
        left = "(" if self.low_open else "["
        right = ")" if self.high_open else "]"
        return f"{left}{self.low:g}, {self.high:g}{right}"


_GEO = ("geometric",)
_LUMPED = ("lumped",)
_MAP = ("map",)
_CONSTANT = ("constant",)

#: Every model parameter of the blown-wing chain, in case order.
CHAIN_PARAMETERS = (
    Parameter("wing.chord", "chord", "m", "length", example=0.5, low=0, high=100, low_open=True,
              description="chord of the blown section"),
    Parameter("wing.blown_span", "blown_span", "m", "length", example=1.0, low=0, high=100,
              low_open=True,
              description="span with blowing"),
    Parameter("wing.thickness_ratio", "thickness_ratio", default=None, example=0.15, low=0,
              high=0.5, low_open=True, duct_models=_GEO, fan_models=_MAP, either=True,
              uncertain=False,
              fused_only=True,
              description="section thickness over chord where the fan sits (the fan must fit)"),
    Parameter("slot.ratio", "slot_ratio", example=0.01, low=0, high=0.2, low_open=True,
              uncertain=False, description="injection slot height over chord"),
    Parameter("slot.suction_ratio", "suction_ratio", default=REQUIRED, example=0.02, low=0,
              high=0.3, low_open=True, duct_models=_GEO,
              description="suction slot height over chord"),
    Parameter("duct.jet_loss_factor", "jet_loss_factor", example=1.3, low=1.0, high=20.0,
              duct_models=_LUMPED, calibrated=True,
              lift_table=True,
              description="jet loss factor K_j (jet dynamic heads the fan supplies)"),
    Parameter("duct.freestream_assist", "freestream_assist", example=1.0, low=0.0, high=5.0,
              calibrated=True,
              lift_table=True,
              description="freestream assist K_inf (freestream heads recovered)"),
    Parameter("duct.fan_diameter", "fan_diameter", "m", "length", example=0.08, low=0,
              high=10, low_open=True, duct_models=_GEO, fan_models=_MAP, either=True,
              description="fan diameter"),
    Parameter("duct.transition_length", "transition_length", "m", "length", example=0.3, low=0,
              high=100, low_open=True, duct_models=_GEO,
              description="length of the round-to-slot transition"),
    Parameter("duct.slot_exponent", "slot_exponent", default=8.0, low=2.0, high=100.0,
              duct_models=_GEO, description="super-ellipse exponent of the slot end"),
    Parameter("duct.roughness", "roughness", "m", "length", default=1.5e-6, low=0, high=0.01,
              duct_models=_GEO, description="duct wall roughness"),
    Parameter("duct.bend_loss", "bend_loss", default=0.0, low=0, high=10, duct_models=_GEO,
              description="bend loss coefficient on the local velocity"),
    Parameter("duct.suction_inlet_loss", "suction_inlet_loss", default=0.5, low=0, high=10,
              duct_models=_GEO,
              description="suction slot inlet loss coefficient on the slot velocity"),
    Parameter("duct.extra_loss", "extra_loss", default=0.0, low=0, high=10, duct_models=_GEO,
              description="calibration adder to the jet loss factor"),
    Parameter("fan.efficiency", "fan_rated_efficiency", example=0.7, low=0, high=1,
              low_open=True, fan_models=_CONSTANT,
              description="fan efficiency of the constant-efficiency fan"),
    Parameter("fan.motor_efficiency", "motor_efficiency", example=0.9, low=0, high=1,
              low_open=True, description="fan motor and drive efficiency"),
    Parameter("fan.pressure_coefficients", "pressure_coefficients", example=(0.6, 0.5, -1.5),
              fan_models=_MAP, uncertain=False,
              description="c0, c1, c2 of the characteristic psi = c0 + c1 phi + c2 phi^2"),
    Parameter("fan.peak_efficiency", "peak_efficiency", example=0.75, low=0, high=1,
              low_open=True, fan_models=_MAP, description="best efficiency of the fan map"),
    Parameter("fan.peak_flow_coefficient", "peak_flow_coefficient", example=0.6, low=0,
              high=5, low_open=True, fan_models=_MAP,
              description="flow coefficient at the best efficiency"),
    Parameter("fan.efficiency_falloff", "efficiency_falloff", example=0.8, low=0, high=100,
              fan_models=_MAP, description="parabolic fall of efficiency away from the peak"),
    Parameter("airfoil.drag_clean", "drag_clean", example=0.012, low=0, high=1, low_open=True,
              calibrated=True, lift_table=True,
              description="drag coefficient of the clean section"),
    Parameter("airfoil.slot_drag", "slot_drag", default=0.0, low=0, high=1, calibrated=True,
              lift_table=True,
              description="slot drag penalty at zero slot ratio"),
    Parameter("airfoil.slot_drag_per_ratio", "slot_drag_per_ratio", default=0.0, low=0,
              high=100, calibrated=True,
              lift_table=True,
              description="change of the slot drag penalty per unit slot ratio"),
    Parameter("airfoil.drag_per_momentum", "drag_per_momentum", example=-1.2, low=-20, high=0,
              high_open=True, calibrated=True,
              lift_table=True,
              description="drag per momentum coefficient at zero slot ratio (< 0)"),
    Parameter("airfoil.drag_per_momentum_per_ratio", "drag_per_momentum_per_ratio",
              default=0.0, low=-1000, high=1000, calibrated=True,
              lift_table=True,
              description="change of the drag per momentum coefficient per unit slot ratio"),
    Parameter("airfoil.drag_quadratic", "drag_quadratic", default=0.0, low=0, high=100,
              description="drag coefficient per momentum coefficient squared"),
    Parameter("airfoil.lift_per_momentum", "lift_per_momentum", default=0.0, low=-100,
              high=100, calibrated=True,
              lift_table=True,
              description="lift coefficient change per unit momentum coefficient"),
    Parameter("airfoil.max_lift_clean", "max_lift_clean", default=None, example=1.4, low=0,
              high=5, low_open=True, aircraft=True,
              fused_only=True,
              description="maximum lift coefficient of the section without blowing"),
    Parameter("airfoil.thrust_power_ceiling", "thrust_power_ceiling", default=1.0, low=0,
              high=1, low_open=True, uncertain=False,
              description="share of the air power that may return as thrust power"),
    Parameter("propulsion.chain_efficiency", "chain_efficiency", example=0.8, low=0, high=1,
              low_open=True,
              description="thrust power per source power of the main propulsion chain"),
    Parameter("aircraft.mass", "aircraft_mass", "kg", "mass", example=25.0, low=0,
              high=1e6, low_open=True, uncertain=False, aircraft=True,
              description="aircraft mass without the blowing system"),
    Parameter("aircraft.wing_area", "wing_area", "m**2", "area", example=1.6, low=0,
              high=2000, low_open=True, uncertain=False, aircraft=True,
              description="reference wing area of the aircraft"),
    Parameter("aircraft.zero_lift_drag", "zero_lift_drag", example=0.03, low=0, high=1,
              low_open=True, uncertain=False, aircraft=True,
              description="zero-lift drag coefficient C_D0 of the whole aircraft with the "
                          "clean, unslotted wing"),
    Parameter("aircraft.aspect_ratio", "aspect_ratio", example=10.0, low=0, high=100,
              low_open=True, uncertain=False, aircraft=True,
              description="wing aspect ratio b^2/S"),
    Parameter("aircraft.span_efficiency", "span_efficiency", example=0.8, low=0, high=1,
              low_open=True, uncertain=False, aircraft=True,
              description="span efficiency (Oswald) factor e of the drag polar"),
    Parameter("aircraft.high_lift_margin", "high_lift_margin", default=1.69, low=1.0, high=4.0,
              aircraft=True, uncertain=False,
              fused_only=True,
              description="maximum lift coefficient over the lift coefficient flown in a "
                          "high-lift segment (1.69 = 1.3^2: flight at 1.3 times the stall "
                          "speed; common practice, no source)"),
    Parameter("segment.altitude", "altitude", "m", "length", example=0.0, low=-5000, high=20000,
              per_segment=True, description="geometric altitude (the ISA's range, "
                                            "mdao.physics.atmosphere.ALTITUDE_RANGE)"),
    Parameter("segment.speed", "speed", "m/s", "speed", example=40.0, low=0, high=400,
              low_open=True, per_segment=True, description="flight speed"),
    Parameter("segment.duration", "duration", "s", "time", example=3600.0, low=0,
              high=1e6, low_open=True, per_segment=True, description="segment duration"),
    Parameter("segment.climb_rate", "climb_rate", "m/s", "speed", default=0.0, low=-400,
              high=400, per_segment=True, uncertain=False, aircraft=True,
              description="rate of climb (negative: descent)"),
)

#: Parameters of the blowing system's mass (:mod:`mdao.components.mass`).
MASS_PARAMETERS = (
    Parameter("mass.fan_specific_power", "fan_specific_power", "W/kg", "specific_power",
              default=2500.0, low=0, high=1e5, low_open=True,
              description="fan shaft power per fan mass"),
    Parameter("mass.motor_specific_power", "motor_specific_power", "W/kg", "specific_power",
              default=5000.0, low=0, high=1e5, low_open=True,
              description="motor shaft power per motor mass"),
    Parameter("mass.duct_areal_density", "duct_areal_density", "kg/m**2", "areal_density",
              default=1.2, low=0, high=100, description="duct wall mass per wetted area"),
    Parameter("mass.installation_factor", "installation_factor", default=1.2, low=1, high=3,
              description="installed over bare mass"),
    Parameter("mass.power_margin", "power_margin", default=1.25, low=1, high=3,
              description="rated shaft power over the largest need"),
    Parameter("mass.duct_wetted_ratio", "duct_wetted_ratio", default=1.5, low=0, high=10,
              duct_models=_LUMPED,
              description="duct wetted area over the blown planform (lumped duct)"),
)

PARAMETERS = CHAIN_PARAMETERS + MASS_PARAMETERS

#: Parameter by case key path.
BY_KEY = {p.key: p for p in PARAMETERS}
#: Parameter by promoted name.
BY_NAME = {p.name: p for p in PARAMETERS}

#: Case keys renamed since earlier versions: old key path -> new key path. A case that uses an
#: old key is refused with a message that names the new one.
RENAMED = {
    "airfoil." + "_".join(("thrust", "leverage")): "airfoil.drag_per_momentum",
    "airfoil." + "_".join(("thrust", "leverage", "per", "ratio")):
        "airfoil.drag_per_momentum_per_ratio",
}


def parameter(key_or_name):
    """The :class:`Parameter` of a case key path (``"duct.jet_loss_factor"``), a per-segment
    key path (``"segment.NAME.speed"``) or a promoted name (``"jet_loss_factor"``)."""
    if key_or_name in BY_KEY:
        return BY_KEY[key_or_name]
    if key_or_name in BY_NAME:
        return BY_NAME[key_or_name]
    parts = key_or_name.split(".")
    if len(parts) == 3 and parts[0] == "segment" and f"segment.{parts[2]}" in BY_KEY:
        return BY_KEY[f"segment.{parts[2]}"]
    raise KeyError(f"{key_or_name!r} is not a model parameter")


def chain_parameters(duct_model, fan_model, per_segment=None, aircraft=False):
    """The chain's parameters that these models use (optionally only wing-level or only
    per-segment ones); with ``aircraft`` also those of the aircraft around the wing."""
    return tuple(p for p in CHAIN_PARAMETERS if p.used_by(duct_model, fan_model, aircraft)
                 and (per_segment is None or p.per_segment == per_segment))


def start_values(names):
    """``{name: start value}`` for component inputs (see :attr:`Parameter.start_value`)."""
    return {n: BY_NAME[n].start_value for n in names}
