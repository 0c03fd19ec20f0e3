"""Transition-duct stations from the fan to the injection slot (wraps
:func:`mdao.physics.transition.stations`). Wing-level: one duct per fan, all fans alike."""
import numpy as np
from mdao import om

from mdao.components.common import NUM_NODES, analysis_errors, checks_host_inputs
from mdao.components.common import add_parameter_inputs
from mdao.physics.transition import BETWEEN, SCHEDULES, stations

TRANSITION_CITE = """@book{rennels2012,
  author = {Rennels, Donald C. and Hudson, Hobart M.}, title = {Pipe Flow: A Practical and
  Comprehensive Guide}, publisher = {Wiley}, year = {2012}
}
@misc{lame1818, author = {Lam\\'e, Gabriel}, title = {Examen des diff\\'erentes m\\'ethodes employ\\'ees
  pour r\\'esoudre les probl\\`emes de g\\'eom\\'etrie}, year = {1818}, note = {super-ellipse}
}"""

#: Wing-level inputs (declared in :mod:`mdao.parameters`).
INPUTS = ("slot_ratio", "chord", "blown_span", "fan_diameter", "transition_length",
          "slot_exponent")
# station outputs: name, field of TransitionStations, units, description
_OUTPUTS = (("station_position", "position", "m", "distance from the fan face"),
            ("station_area", "area", "m**2", "section area"),
            ("station_perimeter", "perimeter", "m", "section perimeter"),
            ("station_hydraulic_diameter", "hydraulic_diameter", "m", "hydraulic diameter 4A/P"),
            ("diffusion_half_angle", "half_angle", "rad",
             "equivalent cone half-angle between stations (positive when diffusing)"),
            ("span_wall_half_angle", "span_wall_half_angle", "rad",
             "half-angle of the spanwise side walls between stations (positive diverging)"),
            ("thickness_wall_half_angle", "thickness_wall_half_angle", "rad",
             "half-angle of the thickness-wise walls between stations (positive diverging)"))


class TransitionComp(om.ExplicitComponent):
    """Sections of the supply duct from each fan's circle to its share of the injection slot."""

    cite = TRANSITION_CITE

    def initialize(self):
        self.options.declare("num_nodes", **NUM_NODES,
                             desc="operating points (accepted; the duct is wing-level)")
        self.options.declare("fans", types=int, default=1, lower=1, desc="fans along the blown span")
        self.options.declare("stations", types=int, default=33, lower=3, desc="stations along the duct")
        self.options.declare("schedule", default="monotone-area", values=SCHEDULES,
                             desc="section schedule along the duct")

    def setup(self):
        m = self.options["stations"]
        add_parameter_inputs(self, INPUTS)
        for name, field, units, desc in _OUTPUTS:
            size = m - 1 if field in BETWEEN else m
            self.add_output(name, val=np.ones(size), units=units, desc=desc)

    def _dependencies(self):
        """Inputs each output depends on: the position on the length only, the sections on all
        but the length; with the monotone-area schedule the areas (hence the equivalent cone's
        angles) not on the slot exponent (the outlet area is w h whatever the exponent); the
        walls' angles on every input (the semi-axes move with the exponent), except with linear
        semi-axes, where the slot's semi-width does not depend on its height nor its
        semi-height on its width."""
        names = list(INPUTS)
        sections = [k for k in names if k != "transition_length"]
        area_wrt = sections
        span_wrt = thickness_wrt = names
        if self.options["schedule"] == "monotone-area":
            area_wrt = [k for k in sections if k != "slot_exponent"]
        else:
            span_wrt = [k for k in names if k not in ("slot_ratio", "chord")]
            thickness_wrt = [k for k in names if k != "blown_span"]
        return {"station_position": ["transition_length"], "station_area": area_wrt,
                "station_perimeter": sections, "station_hydraulic_diameter": sections,
                "diffusion_half_angle": area_wrt + ["transition_length"],
                "span_wall_half_angle": span_wrt, "thickness_wall_half_angle": thickness_wrt}

    def setup_partials(self):
        # dense columns against the scalar inputs
        for name, wrt in self._dependencies().items():
            self.declare_partials(name, wrt)

    def _geometry(self, inputs):
        fans = self.options["fans"]
        return dict(fan_diameter=inputs["fan_diameter"][0],
                    slot_width=inputs["blown_span"][0] / fans,
                    slot_height=inputs["slot_ratio"][0] * inputs["chord"][0],
                    length=inputs["transition_length"][0],
                    slot_exponent=inputs["slot_exponent"][0],
                    schedule=self.options["schedule"], count=self.options["stations"])

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        result = stations(**self._geometry(inputs))
        for name, field, *_ in _OUTPUTS:
            outputs[name] = getattr(result, field)

    @analysis_errors
    def compute_partials(self, inputs, partials):
        _, d = stations(**self._geometry(inputs), derivatives=True)
        fans = self.options["fans"]
        chord, slot_ratio = inputs["chord"][0], inputs["slot_ratio"][0]
        chain = {"fan_diameter": lambda f: d[f, "fan_diameter"],
                 "slot_exponent": lambda f: d[f, "slot_exponent"],
                 "transition_length": lambda f: d[f, "length"],
                 "blown_span": lambda f: d[f, "slot_width"] / fans,
                 "slot_ratio": lambda f: d[f, "slot_height"] * chord,
                 "chord": lambda f: d[f, "slot_height"] * slot_ratio}
        fields = {name: field for name, field, *_ in _OUTPUTS}
        for name, wrt in self._dependencies().items():
            for k in wrt:
                partials[name, k] = chain[k](fields[name])
