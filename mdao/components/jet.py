"""Jet kinematics component (wraps :func:`mdao.physics.jet.kinematics`)."""
import numpy as np
from mdao import om

from mdao.components.common import (BLOWING_OPTION, NUM_NODES, add_parameter_inputs,
                                    analysis_errors, broadcast, checks_host_inputs, column,
                                    diagonal, gated)
from mdao.physics import jet

NODE_INPUTS = ("momentum_coefficient", "speed", "density", "speed_of_sound")
WING_INPUTS = ("slot_ratio", "chord", "blown_span")


class JetComp(om.ExplicitComponent):
    """Dynamic pressure, jet velocity, mass and volume flow and jet Mach number at each node."""

    cite = "Englar, R. J. Circulation control pneumatic aerodynamics. AIAA PA&A 192 (2001)."

    def initialize(self):
        self.options.declare("num_nodes", **NUM_NODES, desc="operating points")
        self.options.declare("blowing", **BLOWING_OPTION)

    def setup(self):
        n = self.options["num_nodes"]
        self.add_input("momentum_coefficient", val=0.03 * np.ones(n), desc="momentum coefficient")
        add_parameter_inputs(self, ("speed",), n)
        self.add_input("density", val=1.225 * np.ones(n), units="kg/m**3", desc="air density")
        self.add_input("speed_of_sound", val=340.294 * np.ones(n), units="m/s")
        add_parameter_inputs(self, WING_INPUTS)
        self.add_output("dynamic_pressure", val=1000.0 * np.ones(n), units="Pa")
        self.add_output("jet_velocity", val=50.0 * np.ones(n), units="m/s")
        self.add_output("mass_flow", val=0.3 * np.ones(n), units="kg/s")
        self.add_output("volume_flow", val=0.25 * np.ones(n), units="m**3/s")
        self.add_output("jet_mach", val=0.15 * np.ones(n))
        self.add_output("slot_height", val=0.005, units="m")

    def setup_partials(self):
        n = self.options["num_nodes"]
        self._pairs = []
        for (of, wrt) in _dependencies():
            if of == "slot_height":
                self.declare_partials(of, wrt)
            elif wrt in WING_INPUTS:
                rows, cols = column(n)
                self.declare_partials(of, wrt, rows=rows, cols=cols)
            else:
                rows, cols = diagonal(n)
                self.declare_partials(of, wrt, rows=rows, cols=cols)
            self._pairs.append((of, wrt))

    def _physics(self, inputs, derivatives=False):
        cmu, _ = gated(self, inputs)
        return jet.kinematics(cmu, inputs["slot_ratio"][0],
                              inputs["speed"], inputs["density"], inputs["chord"][0],
                              inputs["blown_span"][0], inputs["speed_of_sound"],
                              derivatives=derivatives)

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        state = self._physics(inputs)
        for name, value in state._asdict().items():
            outputs[name] = value

    @analysis_errors
    def compute_partials(self, inputs, partials):
        n = self.options["num_nodes"]
        _, d = self._physics(inputs, derivatives=True)
        _, gate = gated(self, inputs)
        for of, wrt in self._pairs:
            partials[of, wrt] = d[of, wrt] if of == "slot_height" else broadcast(d[of, wrt], n)
            if wrt == "momentum_coefficient":
                partials[of, wrt] *= gate


def _dependencies():
    """(output, input) pairs with a non-zero partial, from a probe of the physics."""
    _, d = jet.kinematics(0.03, 0.01, 40.0, 1.2, 0.5, 1.0, 340.0, derivatives=True)
    return sorted(d)
