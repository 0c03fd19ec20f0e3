"""The lumped chain in one component: the fast path for large vectors.

:class:`BlownWingGroup` wires one component per discipline; on 1e5 operating points most of its
cost is OpenMDAO moving arrays between them (see docs/performance.md). ``ChainComp`` evaluates
the same physics functions in one component (one hop), for the lumped duct and the
constant-efficiency fan, and assembles its analytic partials by the chain rule from the partials
each physics function returns. It is what ``BlownWingGroup(fused=True)`` uses; a test checks it
against the per-discipline group to round-off.
"""
import numpy as np
from mdao import om

from mdao.components._sparsity import blowing_flags, column, diagonal
from mdao.physics import airfoil, atmosphere, duct, fan, jet, power

NODE_INPUTS = ("altitude", "speed", "duration", "momentum_coefficient", "fan_pressure_rise")
WING_INPUTS = {"slot_ratio": 0.01, "chord": 0.5, "blown_span": 1.0, "jet_loss_factor": 1.3,
               "freestream_assist": 1.0, "fan_rated_efficiency": 0.7, "motor_efficiency": 0.9,
               "chain_efficiency": 0.8, "drag_clean": 0.012, "slot_drag": 0.02,
               "slot_drag_per_ratio": 0.0, "drag_per_momentum": -1.2,
               "drag_per_momentum_per_ratio": 0.0, "drag_quadratic": 0.0, "lift_per_momentum": 0.0}
UNITS = {"altitude": "m", "speed": "m/s", "duration": "s", "fan_pressure_rise": "Pa",
         "chord": "m", "blown_span": "m"}
#: Outputs with units: the same names as the per-discipline components'.
OUTPUTS = {"temperature": "K", "pressure": "Pa", "density": "kg/m**3", "speed_of_sound": "m/s",
           "viscosity": "Pa*s", "dynamic_pressure": "Pa", "jet_velocity": "m/s",
           "mass_flow": "kg/s", "volume_flow": "m**3/s", "jet_mach": None,
           "required_pressure_rise": "Pa", "fan_efficiency": None, "fan_shaft_power": "W",
           "drag_coefficient": None, "section_drag": "N", "clean_section_drag": "N", "drag_saving": "N",
           "lift_increment": None, "propulsion_power_saving": "W", "fan_electric_power": "W",
           "net_power_saving": "W", "energy_saving": "J"}


def _combine(local, tangents):
    """Chain rule, elementwise: d(out)/d(root) = sum over inputs of d(out)/d(in) d(in)/d(root).

    ``local`` maps an intermediate's name to its partial; ``tangents`` maps each intermediate to
    ``{root: derivative}``.
    """
    out = {}
    for name, d in local.items():
        for root, t in tangents[name].items():
            out[root] = out.get(root, 0.0) + d * t
    return out


class ChainComp(om.ExplicitComponent):
    """Whole lumped chain at ``num_nodes`` points in one component (fast path)."""

    cite = ("ICAO Doc 7488 (1993); Englar, AIAA PA&A 192 (2001); Dixon & Hall (2014); "
            "docs/theory.md (this project).")

    def initialize(self):
        self.options.declare("num_nodes", types=int, default=1, lower=1)
        self.options.declare("compressible", types=bool, default=False)
        self.options.declare("blowing", default=None, allow_none=True)
        self.options.declare("follow_requirement", types=bool, default=False)

    def setup(self):
        n = self.options["num_nodes"]
        defaults = {"altitude": 0.0, "speed": 40.0, "duration": 3600.0,
                    "momentum_coefficient": 0.03, "fan_pressure_rise": 1000.0}
        self._probe = {}
        for name in self._node_inputs():
            self._probe[name] = defaults[name] * np.ones(n)
            self.add_input(name, val=self._probe[name], units=UNITS.get(name))
        for name, val in WING_INPUTS.items():
            self._probe[name] = np.array([val])
            self.add_input(name, val=val, units=UNITS.get(name))
        for name, units in OUTPUTS.items():
            self.add_output(name, val=np.ones(n), units=units)
        self.add_output("slot_height", val=0.005, units="m")
        self.add_output("mission_energy_saving", val=0.0, units="J")

    def _node_inputs(self):
        skip = ("fan_pressure_rise",) if self.options["follow_requirement"] else ()
        return [k for k in NODE_INPUTS if k not in skip]

    def _blowing(self):
        return blowing_flags(self.options["blowing"], self.options["num_nodes"])

    def setup_partials(self):
        n = self.options["num_nodes"]
        rows_d, cols_d = diagonal(n)
        rows_c, cols_c = column(n)
        # The pattern is structural: which roots each output's tangent holds at all.
        _, tan = self._evaluate(self._probe, derivatives=True)
        self._pairs = []
        for of in OUTPUTS:
            for wrt in tan[of]:
                if wrt in WING_INPUTS:
                    self.declare_partials(of, wrt, rows=rows_c, cols=cols_c)
                else:
                    self.declare_partials(of, wrt, rows=rows_d, cols=cols_d)
                self._pairs.append((of, wrt))
        for wrt in tan["energy_saving"]:
            if wrt in WING_INPUTS:
                self.declare_partials("mission_energy_saving", wrt)
            else:
                self.declare_partials("mission_energy_saving", wrt, rows=np.zeros(n, int),
                                      cols=np.arange(n))
        self.declare_partials("slot_height", ["slot_ratio", "chord"])

    def _evaluate(self, inputs, derivatives):
        """Values of every output and, with ``derivatives``, their tangents by root input."""
        o = self.options
        x = {k: inputs[k] for k in self._node_inputs()}
        w = {k: inputs[k][0] for k in WING_INPUTS}
        tan = {k: {k: 1.0} for k in list(x) + list(w)}
        val = {}

        def step(names, values, partials, inputs_of):
            for i, name in enumerate(names):
                val[name] = values[i]
                if derivatives:
                    tan[name] = _combine({k: partials[i][k] for k in inputs_of if k in partials[i]},
                                         tan)

        if derivatives:
            atm, datm = atmosphere.isa(x["altitude"], derivatives=True)
        else:
            atm, datm = atmosphere.isa(x["altitude"]), None
        for field in atm._fields:
            val[field] = getattr(atm, field)
            if derivatives:
                tan[field] = {"altitude": getattr(datm, field)}

        jet_in = {"momentum_coefficient": x["momentum_coefficient"], "slot_ratio": w["slot_ratio"],
                  "speed": x["speed"], "density": val["density"], "chord": w["chord"],
                  "blown_span": w["blown_span"], "speed_of_sound": val["speed_of_sound"]}
        res = jet.kinematics(*jet_in.values(), derivatives=derivatives)
        state, djet = res if derivatives else (res, None)
        for field in state._fields:
            val[field] = getattr(state, field)
            if derivatives:
                tan[field] = _combine({k: djet[field, k] for k in jet_in if (field, k) in djet},
                                      tan)

        req_in = ("jet_loss_factor", "freestream_assist", "density", "jet_velocity",
                  "dynamic_pressure")
        args = [w.get(k, val.get(k)) for k in req_in]
        res = duct.required_pressure_rise(*args, derivatives=derivatives)
        step(["required_pressure_rise"], [res[0] if derivatives else res],
             [res[1] if derivatives else None], req_in)
        if o["follow_requirement"]:
            val["fan_pressure_rise"] = val["required_pressure_rise"]
            if derivatives:
                tan["fan_pressure_rise"] = tan["required_pressure_rise"]
        else:
            val["fan_pressure_rise"] = x["fan_pressure_rise"]

        eta = w["fan_rated_efficiency"] + 0.0 * val["volume_flow"]
        val["fan_efficiency"] = eta
        if derivatives:
            tan["fan_efficiency"] = {"fan_rated_efficiency": np.ones_like(eta)}
        if o["compressible"]:
            names = ("mass_flow", "fan_pressure_rise", "pressure", "temperature", "fan_efficiency")
            res = fan.shaft_power_isentropic(*(val[k] for k in names), derivatives=derivatives)
            keys = ("mass_flow", "pressure_rise", "inlet_pressure", "inlet_temperature",
                    "efficiency")
        else:
            names = ("volume_flow", "fan_pressure_rise", "fan_efficiency")
            res = fan.shaft_power(*(val[k] for k in names), derivatives=derivatives)
            keys = ("volume_flow", "pressure_rise", "efficiency")
        if derivatives:
            res = (res[0], {n_: res[1][k] for n_, k in zip(names, keys)})
        step(["fan_shaft_power"], [res[0] if derivatives else res],
             [res[1] if derivatives else None], names)

        # The blown increment (slot penalty plus blowing) alone, so that the drag saving does
        # not depend on the clean drag even by round-off.
        cd_in = ("momentum_coefficient", "slot_ratio", "slot_drag", "slot_drag_per_ratio",
                 "drag_per_momentum", "drag_per_momentum_per_ratio", "drag_quadratic")
        args = [x.get(k, w.get(k)) for k in cd_in]
        res = airfoil.drag_coefficient(args[0], args[1], 0.0, *args[2:], derivatives=derivatives)
        step(["blown_increment"], [res[0] if derivatives else res],
             [res[1] if derivatives else None], cd_in)
        area = w["chord"] * w["blown_span"]
        q = val["dynamic_pressure"]
        inc = val["blown_increment"]
        val["drag_coefficient"] = w["drag_clean"] + inc
        val["section_drag"] = q * area * val["drag_coefficient"]
        val["clean_section_drag"] = q * area * w["drag_clean"]
        val["drag_saving"] = -q * area * inc
        lift = airfoil.lift_increment(x["momentum_coefficient"], w["lift_per_momentum"])
        val["lift_increment"] = lift + 0.0 * q
        if derivatives:
            cd = val["drag_coefficient"]
            tan["area"] = {"chord": w["blown_span"], "blown_span": w["chord"]}
            tan["drag_coefficient"] = _combine({"blown_increment": 1.0, "drag_clean": 1.0}, tan)
            tan["section_drag"] = _combine({"dynamic_pressure": area * cd, "area": q * cd,
                                    "drag_coefficient": q * area}, tan)
            tan["clean_section_drag"] = _combine({"dynamic_pressure": area * w["drag_clean"],
                                          "area": q * w["drag_clean"], "drag_clean": q * area},
                                         tan)
            tan["drag_saving"] = _combine({"dynamic_pressure": -area * inc, "area": -q * inc,
                                           "blown_increment": -q * area}, tan)
            tan["lift_increment"] = {"momentum_coefficient": w["lift_per_momentum"] + 0.0 * q,
                                     "lift_per_momentum": x["momentum_coefficient"] + 0.0 * q}

        p_in = ("drag_saving", "speed", "fan_shaft_power", "chain_efficiency", "motor_efficiency")
        args = [val.get(k, x.get(k, w.get(k))) for k in p_in]
        res = power.segment_power(*args, blowing=self._blowing(), derivatives=derivatives)
        names = ("propulsion_power_saving", "fan_electric_power", "net_power_saving")
        for i, (key, name) in enumerate(zip(names, names)):
            val[name] = res[i]
            if derivatives:
                d = res[3]
                tan[name] = _combine({k: d[key, k] for k in p_in if (key, k) in d}, tan)
        val["energy_saving"] = val["net_power_saving"] * x["duration"]
        if derivatives:
            tan["energy_saving"] = _combine({"net_power_saving": x["duration"],
                                             "duration": val["net_power_saving"]}, tan)
        return val, tan

    def compute(self, inputs, outputs):
        val, _ = self._evaluate(inputs, derivatives=False)
        for name in OUTPUTS:
            outputs[name] = val[name]
        outputs["slot_height"] = inputs["slot_ratio"] * inputs["chord"]
        outputs["mission_energy_saving"] = np.sum(val["energy_saving"])

    def compute_partials(self, inputs, partials):
        n = self.options["num_nodes"]
        _, tan = self._evaluate(inputs, derivatives=True)
        for of, wrt in self._pairs:
            t = tan[of][wrt]
            partials[of, wrt] = t if np.shape(t) == (n,) else np.full(n, t)
        for wrt, t in tan["energy_saving"].items():
            t = np.broadcast_to(t, (n,))
            partials["mission_energy_saving", wrt] = t.sum() if wrt in WING_INPUTS else t
        partials["slot_height", "slot_ratio"] = inputs["chord"]
        partials["slot_height", "chord"] = inputs["slot_ratio"]
