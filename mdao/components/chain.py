"""The whole chain in one component: a thin adapter over :func:`mdao.physics.chain.evaluate`.

:class:`BlownWingGroup` can wire one component per discipline; on 1e5 operating points most of
its cost is OpenMDAO moving arrays between them (see docs/performance.md). ``ChainComp`` takes
values and partials from the NumPy chain, which wires the same physics functions once for every
duct and fan model, in one component (one hop). It is what ``BlownWingGroup(fused=True)`` uses
(the default); a test checks it against the per-discipline group to round-off, values and total
derivatives. Inputs, units and start values come from :mod:`mdao.parameters`.
"""
import numpy as np
from mdao import om

from mdao import parameters as registry
from mdao.components.common import (HOST_GIVES, HOST_INPUTS, analysis_errors, blowing_flags,
                                    chain_on_the_map, checks_host_inputs, column,
                                    declare_chain_options, diagonal, host_air, input_parameters,
                                    per_node_names, unset_start)
from mdao.physics import chain

#: Node inputs that are design variables rather than model parameters: example value, units.
DESIGN_INPUTS = {k: HOST_INPUTS[k] for k in ("momentum_coefficient", "fan_pressure_rise")}
#: Wing-level design input of the fan sized across the mission: example value, units.
RATED_POWER = ("rated_shaft_power",) + HOST_INPUTS["rated_shaft_power"]
#: Example value of the section lift coefficient input (lift tables without the aircraft).
LIFT_START = HOST_INPUTS["lift_coefficient"][0]
#: Units of the outputs, the same names as the per-discipline components'.
OUTPUT_UNITS = {
    "temperature": "K", "pressure": "Pa", "density": "kg/m**3", "speed_of_sound": "m/s",
    "viscosity": "Pa*s", "dynamic_pressure": "Pa", "jet_velocity": "m/s", "mass_flow": "kg/s",
    "volume_flow": "m**3/s", "jet_mach": None, "slot_height": "m", "jet_loss_factor": None,
    "diffusion_half_angle": "rad", "span_wall_half_angle": "rad",
    "thickness_wall_half_angle": "rad", "required_pressure_rise": "Pa", "fan_efficiency": None,
    "air_power": "W", "fan_shaft_power": "W", "fan_speed": "rev/s", "flow_coefficient": None,
    "pressure_coefficient": None, "tip_mach": None, "drag_coefficient": None,
    "section_drag": "N", "clean_section_drag": "N", "drag_saving": "N", "lift_increment": None,
    "propulsion_power_saving": "W", "fan_electric_power": "W", "net_power_saving": "W",
    "energy_margin": "W", "energy_saving": "J", "lift_coefficient": None,
    "jet_head": "Pa", "jet_temperature": "K", "blowing_system_mass": "kg",
    "mass_thrust_penalty": "N", "thrust_saving": "N", "power_headroom": "W",
    "max_lift_coefficient": None, "lift_reserve": None, "fan_thickness_fraction": None,
    "aircraft_clean_drag": "N", "main_thrust_clean": "N", "main_thrust": "N",
    "clean_source_power": "W", "clean_source_energy": "J"}
#: What each output is (its ``desc``; the interface table of docs/embedding.md).
OUTPUT_MEANINGS = {
    "temperature": "ISA air temperature at the node's altitude",
    "pressure": "ISA static pressure",
    "density": "ISA air density",
    "speed_of_sound": "ISA speed of sound",
    "viscosity": "ISA dynamic viscosity (Sutherland)",
    "dynamic_pressure": "freestream dynamic pressure rho V^2 / 2",
    "jet_velocity": "jet velocity at the injection slot",
    "mass_flow": "jet mass flow, all fans",
    "volume_flow": "jet volume flow, all fans",
    "jet_mach": "jet Mach number at the slot",
    "slot_height": "injection slot height, slot ratio x chord (wing)",
    "jet_loss_factor": "K_j: the jet's head plus every duct loss, on the jet velocity",
    "diffusion_half_angle": "equivalent-cone half-angle of each transition interval (wing)",
    "span_wall_half_angle": "spanwise walls' divergence half-angle per interval (wing)",
    "thickness_wall_half_angle": "thickness-wise walls' divergence half-angle per interval "
                                 "(wing)",
    "required_pressure_rise": "fan total-pressure rise the jet requires (<= 0: ram-driven)",
    "fan_efficiency": "fan efficiency at the operating point",
    "air_power": "power the fans put into the air, Q dp (or the isentropic work rate)",
    "fan_shaft_power": "shaft power of all fans",
    "fan_speed": "fan shaft speed (map fan)",
    "flow_coefficient": "fan flow coefficient Q / (N D^3) (map fan)",
    "pressure_coefficient": "fan pressure coefficient dp / (rho N^2 D^2) (map fan)",
    "tip_mach": "fan blade tip Mach number (map fan)",
    "drag_coefficient": "blown section's drag coefficient on chord x blown span",
    "section_drag": "blown span's section drag force (negative: net thrust); not the "
                    "aircraft's drag",
    "clean_section_drag": "the same span's drag unblown (clean section)",
    "drag_saving": "clean minus blown section drag",
    "lift_increment": "section lift coefficient gained by blowing",
    "propulsion_power_saving": "main-propulsion power saved at the source by the drag saving",
    "fan_electric_power": "electric power the fans' motors draw (shaft power / motor "
                          "efficiency)",
    "net_power_saving": "propulsion power saved minus fan electric power (negative: blowing "
                        "costs power)",
    "energy_margin": "fans' air power minus the net thrust power returned (first law: >= 0)",
    "energy_saving": "net energy saved in the segment (net power x duration)",
    "lift_coefficient": "the aircraft's lift coefficient (aircraft)",
    "jet_head": "jet total-to-static head (compressible jet)",
    "jet_temperature": "jet static temperature after the fan (compressible jet)",
    "blowing_system_mass": "installed mass of fans, motors and ducts (sized fan, wing)",
    "mass_thrust_penalty": "main thrust the system's weight costs (sized fan)",
    "thrust_saving": "drag saving less the weight's thrust penalty (sized fan)",
    "power_headroom": "rated shaft power minus margin x shaft power (sized fan, >= 0)",
    "max_lift_coefficient": "section maximum lift coefficient with blowing",
    "lift_reserve": "maximum lift over the high-lift requirement (>= 0)",
    "fan_thickness_fraction": "fan diameter over the section's thickness (wing)",
    "aircraft_clean_drag": "the clean aircraft's drag (aircraft)",
    "main_thrust_clean": "main-propulsor thrust without blowing (aircraft)",
    "main_thrust": "main-propulsor thrust with the blown section (aircraft)",
    "clean_source_power": "the clean aircraft's main-propulsion power at the source (aircraft)",
    "clean_source_energy": "the same over the segment's duration (aircraft)",
    "mission_energy_saving": "net energy saved over all nodes (wing)",
    "mission_clean_energy": "the clean aircraft's source energy over all nodes (aircraft, wing)",
    "station_position": "transition station positions along the duct (stations)",
    "station_area": "transition station flow areas (stations)",
    "station_perimeter": "transition station wetted perimeters (stations)",
    "station_hydraulic_diameter": "transition station hydraulic diameters (stations)",
}
#: Station outputs of the geometric duct: output name -> (station field, units).
STATION_OUTPUTS = {"station_position": ("position", "m"), "station_area": ("area", "m**2"),
                   "station_perimeter": ("perimeter", "m"),
                   "station_hydraulic_diameter": ("hydraulic_diameter", "m")}
#: Outputs that are one value (or one array) for the wing, not one per node.
WING_OUTPUTS = ("slot_height", "diffusion_half_angle", "span_wall_half_angle",
                "thickness_wall_half_angle", "blowing_system_mass",
                "fan_thickness_fraction")


class ChainComp(om.ExplicitComponent):
    """Whole blown-wing chain at ``num_nodes`` points in one component (any duct and fan)."""

    cite = ("ICAO Doc 7488 (1993); Englar, AIAA PA&A 192 (2001); Idelchik, Handbook of "
            "Hydraulic Resistance (1996); Crane TP-410 (2009); Churchill, Chem. Eng. 84(24) "
            "(1977) 91; Dixon & Hall (2014); Eck (1973); docs/theory.md (this project).")

    def initialize(self):
        declare_chain_options(self.options)

    def _chain_options(self):
        o = self.options
        return chain.ChainOptions(duct_model=o["duct_model"], fan_model=o["fan_model"],
                                  fans=o["fans"], stations=o["stations"], schedule=o["schedule"],
                                  compressible=o["compressible"], aircraft=o["aircraft"],
                                  lift_tables=tuple(o["lift_tables"]),
                                  compressible_jet=o["compressible_jet"],
                                  sized_fan=o["sized_fan"], atmosphere=o["atmosphere"])

    def setup(self):
        o = self.options
        n = o["num_nodes"]
        self._chain_opts = self._chain_options()
        self._chain_blowing = blowing_flags(o["blowing"], n)
        tabled = self._chain_opts.tabled()
        params = input_parameters(o)
        if o["sized_fan"]:   # the blowing system's mass from the rated power (issue: sizing)
            params += [p for p in registry.MASS_PARAMETERS
                       if p.used_by(o["duct_model"], o["fan_model"])]
        per_node = per_node_names(o)
        self._chain_node = [p.name for p in params if p.per_segment or p.name in per_node]
        self._chain_wing = [p.name for p in params if p.name not in self._chain_node]

        def initial(name, example):
            """An input's value before the host gives it: unset (NaN) for what the host must
            give, unless the examples option asks for the example values."""
            return unset_start(example, o["examples"]) if name in HOST_GIVES else example

        probe = {}      # the example values: the derivative pattern is found at them
        for p in params:
            val = np.asarray(p.start_value, float)
            probe[p.name] = val * np.ones(n) if p.name in self._chain_node else np.atleast_1d(val)
            self.add_input(p.name, val=initial(p.name, probe[p.name]), units=p.unit,
                           desc=p.description)
        if tabled and not o["aircraft"]:    # the lift the tables are read at, per node
            self._chain_node.append("lift_coefficient")
            probe["lift_coefficient"] = LIFT_START * np.ones(n)
            self.add_input("lift_coefficient", val=initial("lift_coefficient",
                                                         probe["lift_coefficient"]),
                           desc="section lift coefficient (the lift tables' argument)")
        if o["sized_fan"]:
            name, start, units = RATED_POWER
            self._chain_wing.append(name)
            probe[name] = np.atleast_1d(start)
            self.add_input(name, val=initial(name, probe[name]), units=units,
                           desc="rated shaft power of all fans together")
        for name, (start, units) in DESIGN_INPUTS.items():
            if name == "fan_pressure_rise" and o["follow_requirement"]:
                continue
            self._chain_node.append(name)
            probe[name] = start * np.ones(n)
            self.add_input(name, val=initial(name, probe[name]), units=units)
        if o["atmosphere"] == "host":       # the host's air, per node, in place of the ISA
            for name, (units, start) in host_air(o).items():
                self._chain_node.append(name)
                probe[name] = start * np.ones(n)
                self.add_input(name, val=initial(name, probe[name]), units=units,
                               desc=f"air {name} (host)")
        self._chain_probe = probe

        out = chain.evaluate(probe, self._chain_opts, blowing=self._chain_blowing)
        unknown = set(out) - set(OUTPUT_UNITS) - set(probe) - {"ram_driven", "fan_pressure_rise"}
        if unknown:     # a new output of the chain needs its unit here
            raise RuntimeError(f"ChainComp: no unit declared for {sorted(unknown)}")
        self._chain_outputs = [k for k in OUTPUT_UNITS if k in out and k not in probe]
        wanted = self._declared_outputs(o)
        self._declared_totals = {k: v for k, v in self._all_mission_totals().items()
                                 if k in wanted}
        self._chain_outputs = [k for k in self._chain_outputs if k in wanted]
        for name in self._chain_outputs:
            shape = np.shape(out[name]) if name in WING_OUTPUTS else (n,)
            self.add_output(name, val=np.ones(shape), units=OUTPUT_UNITS[name],
                            desc=OUTPUT_MEANINGS[name])
        self._chain_stations = (o["duct_model"] == "geometric"
                                and any(name in wanted for name in STATION_OUTPUTS))
        if self._chain_stations:
            for name, (field, units) in STATION_OUTPUTS.items():
                self.add_output(name, val=np.ones(o["stations"]), units=units,
                                desc=OUTPUT_MEANINGS[name])
        for total in self._mission_totals():
            self.add_output(total, val=0.0, units="J", desc=OUTPUT_MEANINGS[total])

    def _declared_outputs(self, o):
        """The ``outputs`` option checked against the chain's outputs for these models: the
        set to declare (every one by default)."""
        everything = set(self._chain_outputs) | set(self._all_mission_totals())
        if o["duct_model"] == "geometric":
            everything |= set(STATION_OUTPUTS)
        if o["outputs"] is None:
            return everything
        unknown = sorted(set(o["outputs"]) - everything)
        if unknown:
            raise ValueError(f"outputs: {unknown} are not outputs of this chain; allowed: "
                             f"{sorted(everything)}")
        return set(o["outputs"])

    def _params(self, inputs):
        return {k: inputs[k] for k in self._chain_node + self._chain_wing}

    def _declare(self, of, wrt, size):
        """One pair: node-wise output against a node input (diagonal), a wing scalar (column)
        or the pressure coefficients (n x 3); a wing-level output of ``size`` against a wing
        scalar (column)."""
        n = self.options["num_nodes"]
        if of in WING_OUTPUTS or of in STATION_OUTPUTS:
            rows, cols = np.arange(size), np.zeros(size, int)
        elif wrt in self._chain_node:
            rows, cols = diagonal(n)
        elif wrt == "pressure_coefficients":
            rows, cols = np.repeat(np.arange(n), 3), np.tile(np.arange(3), n)
        else:
            rows, cols = column(n)
        self.declare_partials(of, wrt, rows=rows, cols=cols)

    def _partials_scope(self):
        """The outputs and inputs whose partials are declared (options ``partials_of`` and
        ``partials_wrt``; None: all), each checked against the component's own names."""
        o = self.options
        outputs = (self._chain_outputs + list(self._mission_totals())
                   + (list(STATION_OUTPUTS) if self._chain_stations else []))
        scope = []
        for option, names in (("partials_of", outputs), ("partials_wrt", list(self._chain_probe))):
            chosen = o[option]
            if chosen is None:
                scope.append(set(names))
                continue
            unknown = sorted(set(chosen) - set(names))
            if unknown:
                raise ValueError(f"{option}: {unknown} are not among this chain's "
                                 f"{'outputs' if option == 'partials_of' else 'inputs'}; "
                                 f"allowed: {sorted(names)}")
            scope.append(set(chosen))
        return scope

    def setup_partials(self):
        n = self.options["num_nodes"]
        of_scope, self._chain_wrt = self._partials_scope()
        # The pattern is structural: which inputs each output's tangent holds at all.
        out, partials = chain.evaluate(self._chain_probe, self._chain_opts,
                                       blowing=self._chain_blowing, derivatives=True,
                                       wrt=self._chain_wrt)
        self._chain_pairs = [(of, wrt) for of in self._chain_outputs if of in of_scope
                             for wrt in partials.get(of, {}) if wrt in self._chain_wrt]
        for of, wrt in self._chain_pairs:
            if of in WING_OUTPUTS and wrt in self._chain_node:
                raise RuntimeError(f"{of} is wing-level but depends on node input {wrt}")
            self._declare(of, wrt, np.size(out[of]))
        self._chain_station_pairs = []
        if self._chain_stations:
            _, st_tan = chain.duct_stations(self._chain_probe, self._chain_opts, derivatives=True)
            for name, (field, _) in STATION_OUTPUTS.items():
                for wrt in st_tan[field]:
                    if name in of_scope and wrt in self._chain_wrt:
                        self._chain_station_pairs.append((name, field, wrt))
                        self._declare(name, wrt, self.options["stations"])
        self._chain_totals = {
            total: [wrt for wrt in partials.get(of, {}) if wrt in self._chain_wrt]
            for total, of in self._mission_totals().items() if total in of_scope}
        # the outputs whose partials compute_partials reads (the rest are not computed)
        self._chain_wanted = ({of for of, _ in self._chain_pairs}
                              | {self._mission_totals()[t] for t in self._chain_totals})
        for total, wrts in self._chain_totals.items():
            for wrt in wrts:
                if wrt in self._chain_node:
                    self.declare_partials(total, wrt, rows=np.zeros(n, int), cols=np.arange(n))
                else:
                    self.declare_partials(total, wrt)

    def _all_mission_totals(self):
        """Wing-level sums over the segments these options give: ``{sum: per-node output}``."""
        if not self.options["mission_sums"]:
            return {}
        totals = {"mission_energy_saving": "energy_saving"}
        if self.options["aircraft"]:
            totals["mission_clean_energy"] = "clean_source_energy"
        return totals

    def _mission_totals(self):
        """The declared wing-level sums (option ``outputs``): ``{sum: per-node output}``."""
        return self._declared_totals

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        # In strips of nodes (the chain is elementwise over them): a strip's intermediates stay
        # in cache and in memory the allocator hands back at once, where the whole vector's
        # would be fresh pages at every evaluation; each strip goes straight into the outputs.
        # A wing-level output (its value already of the output's shape) is the same in every
        # strip.
        strip = 16000                           # nodes per evaluation: 125 kB per array
        wing = {k: inputs[k] for k in self._chain_wing}
        node = {k: inputs[k] for k in self._chain_node}
        totals = dict.fromkeys(self._mission_totals(), 0.0)
        for start in range(0, self.options["num_nodes"], strip):
            nodes = slice(start, start + strip)
            params = dict(wing, **{k: v[nodes] for k, v in node.items()})
            out = chain.evaluate(params, self._chain_opts, blowing=self._chain_blowing[nodes])
            chain_on_the_map(self.options["fan_model"], out, params)
            for name in self._chain_outputs:
                view, value = outputs[name], out[name]
                if np.shape(value) != view.shape:
                    view[nodes] = value
                elif start == 0:
                    outputs[name] = value
            for total, of in self._mission_totals().items():
                totals[total] += np.sum(out[of])
        for total, value in totals.items():
            outputs[total] = value
        if self._chain_stations:
            st = chain.duct_stations(self._params(inputs), self._chain_opts)
            for name, (field, _) in STATION_OUTPUTS.items():
                outputs[name] = getattr(st, field)

    @analysis_errors
    def compute_partials(self, inputs, partials):
        _, d = chain.evaluate(self._params(inputs), self._chain_opts, blowing=self._chain_blowing,
                              derivatives=True, outputs=self._chain_wanted, wrt=self._chain_wrt)
        for of, wrt in self._chain_pairs:
            partials[of, wrt] = d[of][wrt].ravel()
        if self._chain_station_pairs:
            _, st_tan = chain.duct_stations(self._params(inputs), self._chain_opts,
                                            derivatives=True)
            for name, field, wrt in self._chain_station_pairs:
                partials[name, wrt] = st_tan[field][wrt]
        for total, wrts in self._chain_totals.items():
            of = self._mission_totals()[total]
            for wrt in wrts:
                t = d[of][wrt]
                partials[total, wrt] = t if wrt in self._chain_node else t.sum(axis=0)
