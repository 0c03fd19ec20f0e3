"""Blown-section drag, its saving against the clean wing, and lift increment (wraps
:mod:`mdao.physics.airfoil`)."""
import numpy as np
from mdao import om

from mdao.components.common import (BLOWING_OPTION, NUM_NODES, analysis_errors,
                                    checks_host_inputs, gated)
from mdao.components.common import add_parameter_inputs
from mdao.physics import airfoil as phys

AIRFOIL_CITE = """@incollection{englar2001,
  author = {Englar, R. J.},
  title = {Circulation control pneumatic aerodynamics: blown force and moment augmentation and
           modification},
  booktitle = {Applications of Circulation Control Technology}, series = {AIAA Progress in
               Astronautics and Aeronautics}, volume = {192}, year = {2001}}"""

#: Wing-level inputs of the drag model, in the order of physics.airfoil.drag_coefficient.
_CONSTANTS = phys.DRAG_INPUTS[1:]


class AirfoilComp(om.ExplicitComponent):
    """Drag coefficient and drag of the blown span at each node, and the saving against clean.

    drag = q c b C_D, clean_drag = q c b C_D,clean, drag_saving = clean_drag - drag (positive when
    blowing helps), lift_increment = (dC_L/dC_mu) C_mu.
    """

    cite = AIRFOIL_CITE

    def initialize(self):
        self.options.declare('num_nodes', **NUM_NODES, desc='operating points')
        self.options.declare('blowing', **BLOWING_OPTION)

    def setup(self):
        n = self.options['num_nodes']
        self.add_input('momentum_coefficient', 0.03 * np.ones(n), units=None, desc='C_mu')
        self.add_input('dynamic_pressure', 1000.0 * np.ones(n), units='Pa', desc='freestream q')
        add_parameter_inputs(self, _CONSTANTS + ('chord', 'blown_span', 'lift_per_momentum'))
        self.add_output('drag_coefficient', 0.0 * np.ones(n), units=None, desc='blown C_D')
        self.add_output('section_drag', 0.0 * np.ones(n), units='N', desc='drag of the blown span')
        self.add_output('clean_section_drag', 0.0 * np.ones(n), units='N', desc='drag if clean')
        self.add_output('drag_saving', 0.0 * np.ones(n), units='N', desc='clean_drag - drag')
        self.add_output('lift_increment', 0.0 * np.ones(n), units=None, desc='lift coefficient gain')

    def setup_partials(self):
        n = self.options['num_nodes']
        nodes, zeros = np.arange(n), np.zeros(n, int)
        for of in ('drag_coefficient', 'section_drag', 'drag_saving'):
            self.declare_partials(of, 'momentum_coefficient', rows=nodes, cols=nodes)
            for wrt in _CONSTANTS:
                if not (of == 'drag_saving' and wrt == 'drag_clean'):   # it cancels exactly
                    self.declare_partials(of, wrt, rows=nodes, cols=zeros)
        for of in ('section_drag', 'drag_saving'):
            self.declare_partials(of, 'dynamic_pressure', rows=nodes, cols=nodes)
            self.declare_partials(of, ['chord', 'blown_span'], rows=nodes, cols=zeros)
        self.declare_partials('clean_section_drag', 'dynamic_pressure', rows=nodes, cols=nodes)
        self.declare_partials('clean_section_drag', ['drag_clean', 'chord', 'blown_span'], rows=nodes,
                              cols=zeros)
        self.declare_partials('lift_increment', 'momentum_coefficient', rows=nodes, cols=nodes)
        self.declare_partials('lift_increment', 'lift_per_momentum', rows=nodes, cols=zeros)

    def _increment(self, inputs, derivatives=False):
        """C_D - C_D,clean (slot penalty, blowing and quadratic terms), free of drag_clean so
        that the saving does not depend on it even by rounding."""
        args = {k: inputs[k][0] for k in _CONSTANTS}
        args['drag_clean'] = 0.0
        return phys.drag_coefficient(gated(self, inputs)[0], **args,
                                     derivatives=derivatives)

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        # straight into the output arrays (no temporaries, no copies); q (c b) as in the chain
        dcd = self._increment(inputs)
        cd0 = inputs['drag_clean'][0]
        area_q = inputs['dynamic_pressure'] * (inputs['chord'][0] * inputs['blown_span'][0])
        cd = np.add(cd0, dcd, out=outputs['drag_coefficient'])
        np.multiply(area_q, cd, out=outputs['section_drag'])
        np.multiply(area_q, cd0, out=outputs['clean_section_drag'])
        saving = np.multiply(area_q, dcd, out=outputs['drag_saving'])
        np.negative(saving, out=saving)
        outputs['lift_increment'] = phys.lift_increment(gated(self, inputs)[0],
                                                        inputs['lift_per_momentum'][0])

    @analysis_errors
    def compute_partials(self, inputs, partials):
        inc, dinc = self._increment(inputs, derivatives=True)
        cmu, gate = gated(self, inputs)
        if 'momentum_coefficient' in dinc:      # no jet where the fan does not run
            dinc['momentum_coefficient'] = dinc['momentum_coefficient'] * gate
        q, c, b = inputs['dynamic_pressure'], inputs['chord'][0], inputs['blown_span'][0]
        cd0 = inputs['drag_clean'][0]
        area_q = q * c * b
        for wrt, value in dinc.items():     # d(C_D)/d(drag_clean) = 1 comes from phys as well
            partials['drag_coefficient', wrt] = value
            partials['section_drag', wrt] = area_q * value
            if wrt != 'drag_clean':
                partials['drag_saving', wrt] = -area_q * value
        for of, coef in (('section_drag', cd0 + inc), ('drag_saving', -inc), ('clean_section_drag', cd0)):
            partials[of, 'dynamic_pressure'] = c * b * coef
            partials[of, 'chord'] = q * b * coef
            partials[of, 'blown_span'] = q * c * coef
        partials['clean_section_drag', 'drag_clean'] = area_q
        partials['lift_increment', 'momentum_coefficient'] = (
            inputs['lift_per_momentum'][0] * np.ones_like(q) * gate)
        partials['lift_increment', 'lift_per_momentum'] = cmu
