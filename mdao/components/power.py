"""Segment power component: net saving at the source, energy per segment and for the mission
(wraps :func:`mdao.physics.power.segment_power`)."""
import numpy as np
from mdao import om

from mdao.components.common import NUM_NODES, analysis_errors, checks_host_inputs
from mdao.components.common import (add_parameter_inputs, blowing_flags, broadcast, column,
                                      diagonal)
from mdao.physics import power

POWER_OUTPUTS = ("propulsion_power_saving", "fan_electric_power", "net_power_saving")
NODE_INPUTS = ("drag_saving", "speed", "fan_shaft_power")
WING_INPUTS = ("chain_efficiency", "motor_efficiency")


class SegmentPowerComp(om.ExplicitComponent):
    """Power saved by the drag saving, fan electrical power, net power and energy per segment."""

    cite = "Net power at the source: docs/theory.md, segment power (this project)."

    def initialize(self):
        self.options.declare("num_nodes", **NUM_NODES, desc="segments")
        self.options.declare("blowing", default=None, allow_none=True,
                             desc="does the fan run: one bool for every node, or one per node "
                                  "(default: at every node)")
        self.options.declare("mission_sums", types=bool, default=True,
                             desc="energy per segment and for the mission (input duration); "
                                  "False inside an ODE, where the host integrates the power")

    def _blowing(self):
        return self._blowing_flags      # checked once, in setup

    def setup(self):
        n = self.options["num_nodes"]
        self._blowing_flags = blowing_flags(self.options["blowing"], n)
        self.add_input("drag_saving", val=np.ones(n), units="N", desc="clean minus blown drag")
        add_parameter_inputs(self, ("speed",), n)
        self.add_input("fan_shaft_power", val=np.zeros(n), units="W", desc="fan shaft power")
        sums = self.options["mission_sums"]
        if sums:
            add_parameter_inputs(self, ("duration",), n)
        add_parameter_inputs(self, WING_INPUTS)
        for name in POWER_OUTPUTS:
            self.add_output(name, val=np.zeros(n), units="W")
        self.add_input("air_power", val=np.zeros(n), units="W", desc="fan power into the air")
        self.add_input("section_drag", val=np.zeros(n), units="N", desc="blown span's drag")
        add_parameter_inputs(self, ("thrust_power_ceiling",))
        self.add_output("energy_margin", val=np.zeros(n), units="W",
                        desc="ceiling x air power + drag x speed (first law: >= 0)")
        if sums:
            self.add_output("energy_saving", val=np.zeros(n), units="J")
            self.add_output("mission_energy_saving", val=0.0, units="J")

    def setup_partials(self):
        n = self.options["num_nodes"]
        _, _, _, d = power.segment_power(1.0, 1.0, 1.0, 0.8, 0.9, derivatives=True)
        self._pairs = sorted(d)
        sums = self.options["mission_sums"]
        for key, wrt in self._pairs:
            rows, cols = column(n) if wrt in WING_INPUTS else diagonal(n)
            self.declare_partials(key, wrt, rows=rows, cols=cols)
            if key == "net_power_saving" and sums:
                self.declare_partials("energy_saving", wrt, rows=rows, cols=cols)
                if wrt in WING_INPUTS:
                    self.declare_partials("mission_energy_saving", wrt)
                else:
                    self.declare_partials("mission_energy_saving", wrt, rows=np.zeros(n, int),
                                          cols=np.arange(n))
        rows, cols = diagonal(n)
        self.declare_partials("energy_margin", ["air_power", "section_drag", "speed"], rows=rows,
                              cols=cols)
        self.declare_partials("energy_margin", "thrust_power_ceiling", rows=rows,
                              cols=np.zeros(n, int))
        if sums:
            self.declare_partials("energy_saving", "duration", rows=rows, cols=cols)
            self.declare_partials("mission_energy_saving", "duration", rows=np.zeros(n, int),
                                  cols=np.arange(n))

    def _physics(self, inputs, derivatives=False):
        return power.segment_power(inputs["drag_saving"], inputs["speed"], inputs["fan_shaft_power"],
                                   inputs["chain_efficiency"], inputs["motor_efficiency"],
                                   blowing=self._blowing(), derivatives=derivatives)

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        prop, fan, net = self._physics(inputs)
        outputs["propulsion_power_saving"] = prop
        outputs["fan_electric_power"] = fan
        outputs["net_power_saving"] = net
        outputs["energy_margin"] = power.energy_margin(*self._margin_inputs(inputs))
        if self.options["mission_sums"]:
            energy = power.segment_energy(net, inputs["duration"])
            outputs["energy_saving"] = energy
            outputs["mission_energy_saving"] = energy.sum()

    @analysis_errors
    def compute_partials(self, inputs, partials):
        n = self.options["num_nodes"]
        *_, net, d = self._physics(inputs, derivatives=True)
        sums = self.options["mission_sums"]
        t = inputs["duration"] if sums else None
        for key, wrt in self._pairs:
            value = broadcast(d[key, wrt], n)
            partials[key, wrt] = value
            if key == "net_power_saving" and sums:
                partials["energy_saving", wrt] = value * t
                total = value * t
                partials["mission_energy_saving", wrt] = (total.sum() if wrt in WING_INPUTS
                                                          else total)
        if sums:
            partials["energy_saving", "duration"] = net
            partials["mission_energy_saving", "duration"] = net
        _, dm = power.energy_margin(*self._margin_inputs(inputs), derivatives=True)
        for wrt, value in dm.items():
            partials["energy_margin", wrt] = broadcast(value, n)

    @staticmethod
    def _margin_inputs(inputs):
        return (inputs["air_power"], inputs["section_drag"], inputs["speed"],
                inputs["thrust_power_ceiling"])
