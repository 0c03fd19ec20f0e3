"""The aircraft around the wing: a thin adapter over :mod:`mdao.physics.aircraft`.

Lift coefficient, clean drag and main-propulsor thrust without blowing (T0), the thrust with the
blown section (T0 minus the drag saving), the clean aircraft's source power and energy per
segment and the mission's clean source energy.
"""
import numpy as np
from mdao import om

from mdao.components.common import NUM_NODES, analysis_errors, checks_host_inputs
from mdao.components.common import add_parameter_inputs, broadcast, column, diagonal
from mdao.physics import aircraft

#: Wing-level (scalar) inputs.
WING_INPUTS = ("aircraft_mass", "wing_area", "zero_lift_drag", "aspect_ratio", "span_efficiency",
               "chain_efficiency")
#: Outputs of :func:`mdao.physics.aircraft.flight_condition` and their units.
FLIGHT_OUTPUTS = {"lift_coefficient": None, "aircraft_clean_drag": "N", "main_thrust_clean": "N"}


class AircraftComp(om.ExplicitComponent):
    """The aircraft's lift coefficient, clean drag, main thrust and clean source energy."""

    cite = ("Raymer, Aircraft Design: A Conceptual Approach (drag polar); Anderson, Aircraft "
            "Performance and Design (1999) (steady climb); docs/theory.md.")

    def initialize(self):
        self.options.declare("num_nodes", **NUM_NODES, desc="segments")
        self.options.declare("mission_sums", types=bool, default=True,
                             desc="the clean aircraft's source energy per segment and for the "
                                  "mission (input duration); False inside an ODE")

    def setup(self):
        n = self.options["num_nodes"]
        sums = self.options["mission_sums"]
        add_parameter_inputs(self, aircraft.FLIGHT_INPUTS[:5])
        add_parameter_inputs(self, ("climb_rate", "speed") + (("duration",) if sums else ()), n)
        add_parameter_inputs(self, ("chain_efficiency",))
        self.add_input("dynamic_pressure", val=np.ones(n), units="Pa",
                       desc="freestream dynamic pressure")
        self.add_input("drag_saving", val=np.zeros(n), units="N",
                       desc="clean minus blown section drag")
        for name, units in FLIGHT_OUTPUTS.items():
            self.add_output(name, val=np.ones(n), units=units)
        self.add_output("main_thrust", val=np.ones(n), units="N",
                        desc="main-propulsor thrust with the blown section")
        self.add_output("clean_source_power", val=np.ones(n), units="W")
        if sums:
            self.add_output("clean_source_energy", val=np.ones(n), units="J")
            self.add_output("mission_clean_energy", val=0.0, units="J")

    def setup_partials(self):
        n = self.options["num_nodes"]
        rows, cols = diagonal(n)
        crow, ccol = column(n)

        def declare(of, wrt):
            if wrt in WING_INPUTS:
                self.declare_partials(of, wrt, rows=crow, cols=ccol)
            else:
                self.declare_partials(of, wrt, rows=rows, cols=cols)

        _, d = aircraft.flight_condition(*np.ones(5), 0.1, 1.0, 1.0, derivatives=True)
        self._pairs = sorted(d)
        for of, wrt in self._pairs:
            declare(of, wrt)
        declare("main_thrust", "drag_saving")
        for wrt in aircraft.FLIGHT_INPUTS:
            if ("main_thrust_clean", wrt) in d:
                declare("main_thrust", wrt)
        self._power_wrt = sorted({w for (o, w) in d if o == "main_thrust_clean"}
                                 | {"speed", "chain_efficiency"})
        sums = self.options["mission_sums"]
        for wrt in self._power_wrt:
            declare("clean_source_power", wrt)
            if not sums:
                continue
            declare("clean_source_energy", wrt)
            if wrt in WING_INPUTS:
                self.declare_partials("mission_clean_energy", wrt)
            else:
                self.declare_partials("mission_clean_energy", wrt, rows=np.zeros(n, int),
                                      cols=np.arange(n))
        if sums:
            declare("clean_source_energy", "duration")
            self.declare_partials("mission_clean_energy", "duration", rows=np.zeros(n, int),
                                  cols=np.arange(n))

    def _flight(self, inputs, derivatives=False):
        args = [inputs[k] for k in aircraft.FLIGHT_INPUTS]
        return aircraft.flight_condition(*args, derivatives=derivatives)

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        fc = self._flight(inputs)
        for name in FLIGHT_OUTPUTS:
            outputs[name] = getattr(fc, name)
        outputs["main_thrust"] = aircraft.main_thrust(fc.main_thrust_clean, inputs["drag_saving"])
        power = aircraft.clean_source_power(fc.main_thrust_clean, inputs["speed"],
                                            inputs["chain_efficiency"])
        outputs["clean_source_power"] = power
        if self.options["mission_sums"]:
            outputs["clean_source_energy"] = power * inputs["duration"]
            outputs["mission_clean_energy"] = np.sum(power * inputs["duration"])

    @analysis_errors
    def compute_partials(self, inputs, partials):
        n = self.options["num_nodes"]
        fc, d = self._flight(inputs, derivatives=True)
        for key in self._pairs:
            partials[key] = broadcast(d[key], n)
        for wrt in aircraft.FLIGHT_INPUTS:
            if ("main_thrust_clean", wrt) in d:
                partials["main_thrust", wrt] = broadcast(d["main_thrust_clean", wrt], n)
        partials["main_thrust", "drag_saving"] = -np.ones(n)
        power, dp = aircraft.clean_source_power(fc.main_thrust_clean, inputs["speed"],
                                                inputs["chain_efficiency"], derivatives=True)
        sums = self.options["mission_sums"]
        t = inputs["duration"] if sums else None
        for wrt in self._power_wrt:
            total = 0.0
            if ("main_thrust_clean", wrt) in d:
                total = dp["main_thrust_clean"] * d["main_thrust_clean", wrt]
            if wrt in dp and wrt != "main_thrust_clean":
                total = total + dp[wrt]
            total = broadcast(total, n)
            partials["clean_source_power", wrt] = total
            if sums:
                partials["clean_source_energy", wrt] = total * t
                partials["mission_clean_energy", wrt] = ((total * t).sum() if wrt in WING_INPUTS
                                                        else total * t)
        if sums:
            partials["clean_source_energy", "duration"] = power
            partials["mission_clean_energy", "duration"] = power
