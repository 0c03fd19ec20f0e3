"""Blowing-system mass component (wraps :mod:`mdao.physics.mass`) and helpers to place it beside
:class:`mdao.system.BlownWingGroup` in an aircraft model.

The component takes the rated shaft power of all fans as an input: the aircraft model makes it a
design variable and holds ``power_headroom >= 0`` in every blowing segment (see
:func:`mdao.physics.mass.power_headroom`). Its output ``blowing_system_mass`` [kg] is what the
aircraft's mass build-up charges.
"""
import numpy as np
from mdao import om

from mdao.components.common import (HOST_GIVES, NUM_NODES, analysis_errors, checks_host_inputs,
                                    unset_start)
from mdao.components.common import add_parameter_inputs, blowing_flags, broadcast, column
from mdao.parameters import MASS_PARAMETERS
from mdao.physics import mass as phys

MASS_CITE = """@book{raymer2018,
  author = {Raymer, Daniel P.}, title = {Aircraft Design: A Conceptual Approach},
  edition = {6th}, publisher = {AIAA}, year = {2018}, note = {weight build-up, chapter 15}
}"""

#: Inputs that are not case parameters: the rating (a design variable of the host) and a
#: further wetted area.
_HOST_INPUTS = (("rated_shaft_power", "W", 500.0, "rated shaft power of all fans"),
                ("extra_wetted_area", "m**2", 0.0, "further duct wetted area (plenums, channels)"))
#: Case parameters of the mass model (declared in :mod:`mdao.parameters`).
_MASS_INPUTS = ("fan_specific_power", "motor_specific_power", "duct_areal_density",
                "installation_factor", "power_margin")


class BlowingSystemMassComp(om.ExplicitComponent):
    """Installed mass of the fans, motors and ducts, and the rated-power headroom per node.

    Inputs: ``rated_shaft_power`` [W], ``fan_shaft_power`` [W] per node, the specific powers
    [W/kg], ``duct_areal_density`` [kg/m**2], ``installation_factor``, ``power_margin``,
    ``extra_wetted_area`` [m**2]; lumped duct: ``chord`` [m], ``blown_span`` [m],
    ``duct_wetted_ratio``; geometric duct: ``station_position`` [m] and ``station_perimeter`` [m]
    of one fan's transition. Outputs: ``fan_motor_mass`` [kg], ``duct_wetted_area`` [m**2],
    ``duct_mass`` [kg], ``blowing_system_mass`` [kg], ``power_headroom`` [W] per node
    (``rated - margin * shaft``; the rating alone where the fan does not run).
    """

    cite = MASS_CITE

    def initialize(self):
        self.options.declare("num_nodes", **NUM_NODES, desc="segments")
        self.options.declare("duct_model", default="lumped", values=("lumped", "geometric"),
                             desc="lumped: wetted area from the planform; geometric: from the "
                                  "transition stations")
        self.options.declare("fans", types=int, default=1, lower=1, desc="fans along the span")
        self.options.declare("stations", types=int, default=33, lower=2,
                             desc="transition stations (geometric duct)")
        self.options.declare("blowing", default=None, allow_none=True,
                             desc="does the fan run: one bool for every node, or one per node "
                                  "(default: at every node)")
        self.options.declare("examples", types=bool, default=False,
                             desc="start rated_shaft_power, chord and blown_span at example "
                                  "values instead of unset (NaN, refused by name at the first "
                                  "evaluation): demonstrations and tests only")

    def _blowing(self):
        return blowing_flags(self.options["blowing"], self.options["num_nodes"])

    def setup(self):
        n = self.options["num_nodes"]
        examples = self.options["examples"]
        for name, units, value, desc in _HOST_INPUTS:
            if name in HOST_GIVES:
                value = unset_start(value, examples)
            self.add_input(name, val=value, units=units, desc=desc)
        add_parameter_inputs(self, _MASS_INPUTS)
        self.add_input("fan_shaft_power", val=np.zeros(n), units="W", desc="fan shaft power per node")
        if self.options["duct_model"] == "lumped":
            add_parameter_inputs(self, ("chord", "blown_span", "duct_wetted_ratio"),
                                 examples=examples)
        else:
            m = self.options["stations"]
            self.add_input("station_position", val=np.linspace(0.0, 0.3, m), units="m",
                           desc="transition stations from the fan face")
            self.add_input("station_perimeter", val=np.linspace(0.25, 1.0, m), units="m",
                           desc="transition section perimeter")
        self.add_output("fan_motor_mass", val=0.3, units="kg", desc="fans and motors, bare")
        self.add_output("duct_wetted_area", val=1.0, units="m**2", desc="all ducts")
        self.add_output("duct_mass", val=1.0, units="kg", desc="duct walls, bare")
        self.add_output("blowing_system_mass", val=1.0, units="kg", desc="installed system mass")
        self.add_output("power_headroom", val=np.zeros(n), units="W",
                        desc="rated minus margin times shaft power")

    def _area_inputs(self):
        if self.options["duct_model"] == "lumped":
            return ["chord", "blown_span", "duct_wetted_ratio", "extra_wetted_area"]
        return ["station_position", "station_perimeter", "extra_wetted_area"]

    def setup_partials(self):
        n = self.options["num_nodes"]
        rot = ["rated_shaft_power", "fan_specific_power", "motor_specific_power"]
        area = self._area_inputs()
        self.declare_partials("fan_motor_mass", rot)
        self.declare_partials("duct_wetted_area", area)
        self.declare_partials("duct_mass", area + ["duct_areal_density"])
        self.declare_partials("blowing_system_mass",
                              rot + area + ["duct_areal_density", "installation_factor"])
        rows, cols = column(n)
        self.declare_partials("power_headroom", ["rated_shaft_power", "power_margin"],
                              rows=rows, cols=cols)
        on = np.flatnonzero(self._blowing())
        if on.size:
            self.declare_partials("power_headroom", "fan_shaft_power", rows=on, cols=on)

    def _area(self, inputs, derivatives=False):
        """Wetted area and its partials {input: value or array}."""
        extra = inputs["extra_wetted_area"][0]  # not checked here: finite differences step across 0
        if self.options["duct_model"] == "lumped":
            out = phys.lumped_wetted_area(inputs["chord"][0], inputs["blown_span"][0],
                                          inputs["duct_wetted_ratio"][0], derivatives=derivatives)
            if not derivatives:
                return out + extra
            area, d = out
            return area + extra, {"chord": d["chord"], "blown_span": d["blown_span"],
                                  "duct_wetted_ratio": d["wetted_ratio"], "extra_wetted_area": 1.0}
        out = phys.transition_wetted_area(inputs["station_position"], inputs["station_perimeter"],
                                          fans=self.options["fans"], derivatives=derivatives)
        if not derivatives:
            return out + extra
        area, d_x, d_p = out
        return area + extra, {"station_position": d_x, "station_perimeter": d_p,
                              "extra_wetted_area": 1.0}

    def _rotating(self, inputs, derivatives=False):
        return phys.rotating_mass(inputs["rated_shaft_power"][0], inputs["fan_specific_power"][0],
                                  inputs["motor_specific_power"][0], derivatives=derivatives)

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        rot = self._rotating(inputs)
        area = self._area(inputs)
        outputs["fan_motor_mass"] = rot
        outputs["duct_wetted_area"] = area
        outputs["duct_mass"] = inputs["duct_areal_density"] * area
        outputs["blowing_system_mass"] = phys.blowing_system_mass(
            rot, area, inputs["duct_areal_density"][0], inputs["installation_factor"][0])
        on = self._blowing()
        outputs["power_headroom"] = phys.power_headroom(
            inputs["rated_shaft_power"][0], np.where(on, inputs["fan_shaft_power"], 0.0),
            inputs["power_margin"][0])

    @analysis_errors
    def compute_partials(self, inputs, partials):
        n = self.options["num_nodes"]
        rot, d_rot = self._rotating(inputs, derivatives=True)
        area, d_area = self._area(inputs, derivatives=True)
        density = inputs["duct_areal_density"][0]
        _, d_m = phys.blowing_system_mass(rot, area, density, inputs["installation_factor"][0],
                                          derivatives=True)
        for k, v in d_rot.items():
            partials["fan_motor_mass", k] = v
            partials["blowing_system_mass", k] = d_m["rotating"] * v
        for k, v in d_area.items():
            partials["duct_wetted_area", k] = v
            partials["duct_mass", k] = density * np.asarray(v)
            partials["blowing_system_mass", k] = d_m["wetted_area"] * np.asarray(v)
        partials["duct_mass", "duct_areal_density"] = area
        partials["blowing_system_mass", "duct_areal_density"] = d_m["duct_areal_density"]
        partials["blowing_system_mass", "installation_factor"] = d_m["installation_factor"]
        on = self._blowing()
        _, d_h = phys.power_headroom(inputs["rated_shaft_power"][0],
                                     np.where(on, inputs["fan_shaft_power"], 0.0),
                                     inputs["power_margin"][0], derivatives=True)
        partials["power_headroom", "rated_shaft_power"] = broadcast(d_h["rated_shaft_power"], n)
        partials["power_headroom", "power_margin"] = broadcast(d_h["power_margin"], n)
        if on.any():
            partials["power_headroom", "fan_shaft_power"] = broadcast(d_h["fan_shaft_power"], n)[on]


def add_blowing_system_mass(model, case=None, name="blowing_mass", **options):
    """Add a :class:`BlowingSystemMassComp` beside a BlownWingGroup, promoted with ``*``.

    Parameters
    ----------
    model : om.Group
        The group that also holds the (promoted) BlownWingGroup.
    case : mdao.case.Case, optional
        Take ``num_nodes``, ``duct_model``, ``fans``, ``stations`` and ``blowing`` from it.
    name : str
        Subsystem name.
    **options
        Component options (override the case's).

    Returns
    -------
    BlowingSystemMassComp
        The added component. Call :func:`set_mass_values` after ``setup``.
    """
    opts = {}
    if case is not None and getattr(case, "sizes_fan", False):
        raise ValueError("the case sizes the fan in the group ([aircraft] and [mass]): the "
                         "group itself outputs blowing_system_mass and power_headroom from its "
                         "rated_shaft_power; add no separate mass component")
    if case is not None:
        opts = dict(num_nodes=len(case.segments), duct_model=case.duct["model"],
                    fans=case.duct["fans"], stations=case.duct["stations"],
                    blowing=list(case.blowing))
    opts.update(options)
    comp = BlowingSystemMassComp(**opts)
    model.add_subsystem(name, comp, promotes=["*"])
    return comp


def mass_values(case):
    """``{input name: SI value}`` of the case's ``[mass]`` table for the component."""
    return {p.name: float(case.value(p.key)) for p in MASS_PARAMETERS
            if p.used_by(case.duct["model"], case.fan["model"])}


def set_mass_values(prob, case, prefix=""):
    """Set the case's ``[mass]`` values on a set-up problem (``prefix``: promoted path)."""
    for name, value in mass_values(case).items():
        prob.set_val(prefix + name, value)
