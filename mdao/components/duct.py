"""Duct loss component: the fan pressure rise the jet requires (wraps :mod:`mdao.physics.duct`).

``duct_model="lumped"`` takes the jet loss factor as an input; ``duct_model="geometric"`` builds it at
each node from the transition stations, friction and form losses.
"""
import numpy as np
from mdao import om

from mdao.components.common import (BLOWING_OPTION, NUM_NODES, analysis_errors,
                                    checks_host_inputs, gated)
from mdao.components.common import add_parameter_inputs, broadcast, column, diagonal, full
from mdao.physics import duct, jet

SCALARS = ("slot_ratio", "suction_ratio", "suction_inlet_loss", "bend_loss", "extra_loss",
           "roughness")
STATION_INPUTS = {"position": "station_position", "area": "station_area",
                  "perimeter": "station_perimeter"}


class DuctLossComp(om.ExplicitComponent):
    """Required fan pressure rise (and, in geometric mode, the jet loss factor) at each node."""

    cite = ("Idelchik, Handbook of Hydraulic Resistance (1996); Crane TP-410 (2009); "
            "Churchill, Chem. Eng. 84(24) (1977) 91.")

    def initialize(self):
        self.options.declare("num_nodes", **NUM_NODES, desc="operating points")
        self.options.declare("blowing", **BLOWING_OPTION)
        self.options.declare("duct_model", default="lumped", values=("lumped", "geometric"),
                             desc="lumped: K_j given; geometric: K_j from the duct's geometry")
        self.options.declare("fans", types=int, default=1, lower=1, desc="number of fans")
        self.options.declare("stations", types=int, default=33, lower=3,
                             desc="transition stations (geometric)")

    def setup(self):
        n = self.options["num_nodes"]
        m = self.options["stations"]
        add_parameter_inputs(self, ("freestream_assist",))
        # the jet's head from C_mu (linear in it: a finite derivative at C_mu = 0)
        self.add_input("momentum_coefficient", val=0.03 * np.ones(n), desc="momentum coefficient")
        self.add_input("dynamic_pressure", val=1000.0 * np.ones(n), units="Pa")
        if self.options["duct_model"] == "lumped":
            add_parameter_inputs(self, ("jet_loss_factor", "slot_ratio"))
        else:
            self.add_input("density", val=1.225 * np.ones(n), units="kg/m**3")
            self.add_input("volume_flow", val=0.12 * np.ones(n), units="m**3/s",
                           desc="jet volume flow, all fans")
            self.add_input("viscosity", val=1.79e-5 * np.ones(n), units="Pa*s")
            add_parameter_inputs(self, SCALARS)
            x = np.linspace(0.0, 0.3, m)
            self.add_input("station_position", val=x, units="m")
            self.add_input("station_area", val=np.linspace(0.005, 0.0025, m), units="m**2")
            self.add_input("station_perimeter", val=np.linspace(0.25, 1.0, m), units="m")
            self.add_output("jet_loss_factor", val=1.3 * np.ones(n), desc="K_j at each node")
        self.add_output("required_pressure_rise", val=1000.0 * np.ones(n), units="Pa")

    def setup_partials(self):
        n = self.options["num_nodes"]
        m = self.options["stations"]
        of = "required_pressure_rise"
        for wrt in ("momentum_coefficient", "dynamic_pressure"):
            self.declare_partials(of, wrt, rows=diagonal(n)[0], cols=diagonal(n)[1])
        self.declare_partials(of, "freestream_assist", rows=column(n)[0], cols=column(n)[1])
        if self.options["duct_model"] == "lumped":
            for wrt in ("jet_loss_factor", "slot_ratio"):
                self.declare_partials(of, wrt, rows=column(n)[0], cols=column(n)[1])
            return
        rows_d, cols_d = diagonal(n)
        rows_c, cols_c = column(n)
        rows_f, cols_f = full(n, m)
        for target in ("jet_loss_factor", of):
            for wrt in ("volume_flow", "density", "viscosity"):
                self.declare_partials(target, wrt, rows=rows_d, cols=cols_d)
            for wrt in SCALARS:
                self.declare_partials(target, wrt, rows=rows_c, cols=cols_c)
            for wrt in STATION_INPUTS.values():
                self.declare_partials(target, wrt, rows=rows_f, cols=cols_f)

    def _loss_factor(self, inputs, derivatives=False):
        fans = self.options["fans"]
        return duct.geometric_jet_loss_factor(
            inputs["slot_ratio"][0], inputs["suction_ratio"][0], inputs["suction_inlet_loss"][0],
            inputs["bend_loss"][0], inputs["extra_loss"][0], inputs["roughness"][0],
            inputs["volume_flow"] / fans, inputs["density"], inputs["viscosity"],
            inputs["station_position"], inputs["station_area"], inputs["station_perimeter"],
            derivatives=derivatives)

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        if self.options["duct_model"] == "lumped":
            kj = inputs["jet_loss_factor"]
        else:
            kj = self._loss_factor(inputs)
            outputs["jet_loss_factor"] = kj
        head = jet.jet_dynamic_head(gated(self, inputs)[0], inputs["slot_ratio"],
                                    inputs["dynamic_pressure"])
        outputs["required_pressure_rise"] = duct.required_pressure_rise_from_head(
            kj, inputs["freestream_assist"], head, inputs["dynamic_pressure"])

    @analysis_errors
    def compute_partials(self, inputs, partials):
        n = self.options["num_nodes"]
        of = "required_pressure_rise"
        lumped = self.options["duct_model"] == "lumped"
        kj, dk = (inputs["jet_loss_factor"], None) if lumped else self._loss_factor(inputs, True)
        cmu, gate = gated(self, inputs)
        head, dh = jet.jet_dynamic_head(cmu, inputs["slot_ratio"], inputs["dynamic_pressure"],
                                        derivatives=True)
        _, d = duct.required_pressure_rise_from_head(kj, inputs["freestream_assist"], head,
                                                     inputs["dynamic_pressure"], derivatives=True)
        along = broadcast(d["jet_head"], n)           # d(required)/d(head) = K_j
        partials[of, "momentum_coefficient"] = (along * broadcast(dh["momentum_coefficient"], n)
                                                * gate)
        partials[of, "dynamic_pressure"] = (broadcast(d["dynamic_pressure"], n)
                                            + along * broadcast(dh["dynamic_pressure"], n))
        partials[of, "freestream_assist"] = broadcast(d["freestream_assist"], n)
        through_slot = along * broadcast(dh["slot_ratio"], n)
        if lumped:
            partials[of, "jet_loss_factor"] = broadcast(d["jet_loss_factor"], n)
            partials[of, "slot_ratio"] = through_slot
            return
        head = broadcast(d["jet_loss_factor"], n)     # d(required)/d(K_j) = the jet's head
        fans = self.options["fans"]
        for name in ("volume_flow", "density", "viscosity") + SCALARS:
            scale = 1.0 / fans if name == "volume_flow" else 1.0
            partials["jet_loss_factor", name] = broadcast(dk[name], n) * scale
            partials[of, name] = head * broadcast(dk[name], n) * scale
        partials[of, "slot_ratio"] = head * broadcast(dk["slot_ratio"], n) + through_slot
        for key, name in STATION_INPUTS.items():
            partials["jet_loss_factor", name] = dk[key].ravel()
            partials[of, name] = (head[:, None] * dk[key]).ravel()
