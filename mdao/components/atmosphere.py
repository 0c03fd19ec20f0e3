"""Standard atmosphere at each operating point (wraps :func:`mdao.physics.atmosphere.isa`)."""
import numpy as np
from mdao import om

from mdao.components.common import NUM_NODES, analysis_errors, checks_host_inputs
from mdao.components.common import add_parameter_inputs
from mdao.physics.atmosphere import isa

ISA_CITE = """@manual{icao7488,
  title = {Manual of the ICAO Standard Atmosphere (extended to 80 kilometres)},
  organization = {International Civil Aviation Organization}, note = {Doc 7488/3}, year = {1993}
}
@techreport{ussa1976,
  title = {U.S. Standard Atmosphere, 1976}, institution = {NOAA, NASA, USAF},
  number = {NOAA-S/T 76-1562}, year = {1976}
}"""

_OUTPUTS = (("temperature", "K", 288.15, "static temperature"),
            ("pressure", "Pa", 101325.0, "static pressure"),
            ("density", "kg/m**3", 1.225, "air density"),
            ("speed_of_sound", "m/s", 340.294, "speed of sound"),
            ("viscosity", "Pa*s", 1.789e-5, "dynamic viscosity (Sutherland)"))


class AtmosphereComp(om.ExplicitComponent):
    """ISA air state at each operating point's geometric altitude (-5 to 20 km)."""

    cite = ISA_CITE

    def initialize(self):
        self.options.declare("num_nodes", **NUM_NODES, desc="operating points")

    def setup(self):
        n = self.options["num_nodes"]
        add_parameter_inputs(self, ("altitude",), n)
        for name, units, value, desc in _OUTPUTS:
            self.add_output(name, val=value * np.ones(n), units=units, desc=desc)

    def setup_partials(self):
        nodes = np.arange(self.options["num_nodes"])
        for name, *_ in _OUTPUTS:
            self.declare_partials(name, "altitude", rows=nodes, cols=nodes)

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        state = isa(inputs["altitude"])
        for name, *_ in _OUTPUTS:
            outputs[name] = getattr(state, name)

    @analysis_errors
    def compute_partials(self, inputs, partials):
        _, d_dz = isa(inputs["altitude"], derivatives=True)
        for name, *_ in _OUTPUTS:
            partials[name, "altitude"] = getattr(d_dz, name)
