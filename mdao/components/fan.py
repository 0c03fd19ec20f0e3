"""Fan operating point and shaft power at each node (wraps :mod:`mdao.physics.fan`)."""
import numpy as np
from mdao import om

from mdao.components.common import (BLOWING_OPTION, NUM_NODES, analysis_errors, blowing_flags,
                                    checks_host_inputs, gated, on_the_map)
from mdao.components.common import add_parameter_inputs
from mdao.physics import fan as phys

FAN_CITE = """@book{dixon2014,
  author = {Dixon, S. L. and Hall, C. A.},
  title = {Fluid Mechanics and Thermodynamics of Turbomachinery},
  edition = {7th}, publisher = {Butterworth-Heinemann}, year = {2014}}
@book{eck1973,
  author = {Eck, B.}, title = {Fans: Design and Operation of Centrifugal, Axial-Flow and
  Cross-Flow Fans}, publisher = {Pergamon}, year = {1973}}"""

# Inputs of the map model through which the shaft speed (and so everything after it) varies.
_SPEED_INPUTS = ('volume_flow', 'fan_pressure_rise', 'density', 'fan_diameter',
                 'pressure_coefficients')
_EFFICIENCY_INPUTS = ('peak_efficiency', 'peak_flow_coefficient', 'efficiency_falloff')


class FanComp(om.ExplicitComponent):
    """Fan efficiency and shaft power of all fans; with the map model also speed and coefficients.

    ``volume_flow`` is the total of all ``fans``; each fan passes ``volume_flow / fans`` at the
    common ``fan_pressure_rise``. Where the pressure rise is <= 0 (ram-driven jet) the shaft power
    is zero, never negative (see :func:`mdao.physics.fan.shaft_power`). With the map model, a
    pressure rise the characteristic cannot reach gives NaN speed (see
    :func:`mdao.physics.fan.shaft_speed`). ``pressure`` and ``temperature`` are used only when
    ``compressible``; ``speed_of_sound`` only by the map model; ``density`` by the map model and
    the compressible power (mass flow = density * volume_flow). Each is an input only in the
    modes that use it: in a group every input is one more array moved at each evaluation.
    """

    cite = FAN_CITE

    def initialize(self):
        self.options.declare('num_nodes', **NUM_NODES, desc='operating points')
        self.options.declare('fan_model', default='constant', values=('constant', 'map'),
                             desc="'constant' efficiency, or a quadratic 'map' with efficiency "
                                  "parabola")
        self.options.declare('fans', types=int, default=1, lower=1,
                             desc='number of identical fans sharing the flow')
        self.options.declare('compressible', types=bool, default=False,
                             desc='isentropic compression power instead of Q dp / eta')
        self.options.declare('blowing', **BLOWING_OPTION)

    def _stopped(self):
        """Nodes where the map fan is stopped (option ``blowing`` False), or None."""
        if self.options['fan_model'] != 'map' or self.options['blowing'] is None:
            return None
        off = ~blowing_flags(self.options['blowing'], self.options['num_nodes'])
        return off if off.any() else None

    def setup(self):
        n = self.options['num_nodes']
        ones = np.ones(n)
        self.add_input('fan_pressure_rise', 1000.0 * ones, units='Pa', desc='total-pressure rise')
        self.add_input('volume_flow', 0.05 * ones, units='m**3/s', desc='volume flow of all fans')
        o = self.options
        if self._uses_density():
            self.add_input('density', 1.225 * ones, units='kg/m**3', desc='inlet density')
        if o['compressible']:
            self.add_input('pressure', 101325.0 * ones, units='Pa', desc='inlet total pressure')
            self.add_input('temperature', 288.15 * ones, units='K', desc='inlet total temperature')
        if o['fan_model'] == 'map':
            self.add_input('speed_of_sound', 340.294 * ones, units='m/s', desc='inlet speed of sound')
        self.add_output('fan_efficiency', 0.7 * ones, units=None, desc='fan efficiency')
        self.add_output('fan_shaft_power', 100.0 * ones, units='W', desc='shaft power of all fans')
        self.add_output('air_power', 70.0 * ones, units='W',
                        desc='power the fans put into the air (shaft power at unit efficiency)')
        if self.options['fan_model'] == 'constant':
            add_parameter_inputs(self, ('fan_rated_efficiency',))
            return
        add_parameter_inputs(self, ('fan_diameter', 'pressure_coefficients', 'peak_efficiency',
                                    'peak_flow_coefficient', 'efficiency_falloff'))
        self.add_output('fan_speed', 450.0 * ones, units='rev/s', desc='shaft speed')
        self.add_output('flow_coefficient', 0.2 * ones, units=None, desc='Q_fan / (N D^3)')
        self.add_output('pressure_coefficient', 0.6 * ones, units=None, desc='dp / (rho N^2 D^2)')
        self.add_output('tip_mach', 0.3 * ones, units=None, desc='pi N D / a')

    def _uses_density(self):
        return self.options['fan_model'] == 'map' or self.options['compressible']

    def _power_inputs(self):
        """Inputs of shaft_power besides efficiency and what drives it."""
        names = ['volume_flow', 'fan_pressure_rise']
        if self.options['compressible']:
            names += ['density', 'pressure', 'temperature']
        return names

    def _declare(self, of, wrt):
        n = self.options['num_nodes']
        nodes = np.arange(n)
        if wrt == 'pressure_coefficients':
            self.declare_partials(of, wrt, rows=np.repeat(nodes, 3), cols=np.tile(np.arange(3), n))
        elif wrt in ('fan_diameter', 'fan_rated_efficiency') + _EFFICIENCY_INPUTS:
            self.declare_partials(of, wrt, rows=nodes, cols=np.zeros(n, int))
        else:
            self.declare_partials(of, wrt, rows=nodes, cols=nodes)

    def setup_partials(self):
        for wrt in self._power_inputs():
            self._declare('air_power', wrt)
        if self.options['fan_model'] == 'constant':
            self._declare('fan_efficiency', 'fan_rated_efficiency')
            for wrt in self._power_inputs() + ['fan_rated_efficiency']:
                self._declare('fan_shaft_power', wrt)
            return
        for of in ('fan_speed', 'flow_coefficient', 'pressure_coefficient', 'tip_mach'):
            for wrt in _SPEED_INPUTS:
                self._declare(of, wrt)
        self._declare('tip_mach', 'speed_of_sound')
        for wrt in _SPEED_INPUTS + _EFFICIENCY_INPUTS:
            self._declare('fan_efficiency', wrt)
        for wrt in dict.fromkeys(_SPEED_INPUTS + _EFFICIENCY_INPUTS + tuple(self._power_inputs())):
            self._declare('fan_shaft_power', wrt)

    def _evaluate(self, inputs):
        """Outputs and their partials as dicts {output: {input: array (n,) or (n, 3)}}."""
        n = self.options['num_nodes']
        q, dp = inputs['volume_flow'], gated(self, inputs, 'fan_pressure_rise')[0]
        rho = inputs['density'] if self._uses_density() else None
        out, jac = {}, {}
        if self.options['fan_model'] == 'constant':
            eta = np.full(n, inputs['fan_rated_efficiency'][0])
            out['fan_efficiency'] = eta
            jac['fan_efficiency'] = {'fan_rated_efficiency': np.ones(n)}
            deta = {'fan_rated_efficiency': np.ones(n)}
        else:
            fans, d, a = self.options['fans'], inputs['fan_diameter'][0], inputs['speed_of_sound']
            coef = inputs['pressure_coefficients']
            qf = q / fans
            speed, ds = phys.shaft_speed(qf, dp, rho, d, coef, derivatives=True)
            dspeed = {'volume_flow': ds['volume_flow'] / fans, 'fan_pressure_rise': ds['pressure_rise'],
                      'density': ds['density'], 'fan_diameter': ds['diameter'],
                      'pressure_coefficients': np.column_stack([ds['c0'], ds['c1'], ds['c2']])}
            phi, dphi_ = phys.flow_coefficient_of(qf, speed, d, derivatives=True)
            dphi = _chain(dspeed, dphi_['speed'], {'volume_flow': dphi_['volume_flow'] / fans,
                                                   'fan_diameter': dphi_['diameter']})
            psi, dpsi_ = phys.pressure_coefficient(dp, rho, speed, d, derivatives=True)
            dpsi = _chain(dspeed, dpsi_['speed'], {'fan_pressure_rise': dpsi_['pressure_rise'],
                                                   'density': dpsi_['density'],
                                                   'fan_diameter': dpsi_['diameter']})
            mach, dm_ = phys.tip_mach(speed, d, a, derivatives=True)
            dmach = _chain(dspeed, dm_['speed'], {'fan_diameter': dm_['diameter'],
                                                  'speed_of_sound': dm_['speed_of_sound']})
            eta, de_ = phys.map_efficiency(phi, inputs['peak_efficiency'][0],
                                       inputs['peak_flow_coefficient'][0],
                                       inputs['efficiency_falloff'][0], derivatives=True)
            deta = _chain(dphi, de_['flow_coefficient'], {k: de_[k] for k in _EFFICIENCY_INPUTS})
            out.update(fan_speed=speed, flow_coefficient=phi, pressure_coefficient=psi,
                       tip_mach=mach, fan_efficiency=eta)
            jac.update(fan_speed=dspeed, flow_coefficient=dphi, pressure_coefficient=dpsi,
                       tip_mach=dmach, fan_efficiency=deta)
        if self.options['compressible']:
            power, dp_ = phys.shaft_power_isentropic(rho * q, dp, inputs['pressure'],
                                                     inputs['temperature'], eta, derivatives=True)
            direct = {'volume_flow': dp_['mass_flow'] * rho, 'density': dp_['mass_flow'] * q,
                      'fan_pressure_rise': dp_['pressure_rise'],
                      'pressure': dp_['inlet_pressure'], 'temperature': dp_['inlet_temperature']}
        else:
            power, dp_ = phys.shaft_power(q, dp, eta, derivatives=True)
            direct = {'volume_flow': dp_['volume_flow'], 'fan_pressure_rise': dp_['pressure_rise']}
        out['fan_shaft_power'] = power
        jac['fan_shaft_power'] = _chain(deta, dp_['efficiency'], direct)
        out['air_power'], jac['air_power'] = self._air_power(inputs)
        return out, jac

    def _air_power(self, inputs):
        """Power put into the air: the shaft power at unit efficiency, and its partials."""
        q, dp = inputs['volume_flow'], gated(self, inputs, 'fan_pressure_rise')[0]
        if self.options['compressible']:
            rho = inputs['density']
            air, d = phys.shaft_power_isentropic(rho * q, dp, inputs['pressure'],
                                                 inputs['temperature'], 1.0, derivatives=True)
            return air, {'volume_flow': d['mass_flow'] * rho, 'density': d['mass_flow'] * q,
                         'fan_pressure_rise': d['pressure_rise'],
                         'pressure': d['inlet_pressure'], 'temperature': d['inlet_temperature']}
        air, d = phys.shaft_power(q, dp, 1.0, derivatives=True)
        return air, {'volume_flow': d['volume_flow'], 'fan_pressure_rise': d['pressure_rise']}

    @analysis_errors
    @checks_host_inputs
    def compute(self, inputs, outputs):
        # values only: the partials of _evaluate are compute_partials' business
        q, dp = inputs['volume_flow'], gated(self, inputs, 'fan_pressure_rise')[0]
        rho = inputs['density'] if self._uses_density() else None
        if self.options['fan_model'] == 'constant':
            eta = inputs['fan_rated_efficiency'][0]
        else:
            fans, d = self.options['fans'], inputs['fan_diameter'][0]
            qf = q / fans
            speed = phys.shaft_speed(qf, dp, rho, d, inputs['pressure_coefficients'])
            phi = phys.flow_coefficient_of(qf, speed, d)
            eta = phys.map_efficiency(phi, inputs['peak_efficiency'][0],
                                      inputs['peak_flow_coefficient'][0],
                                      inputs['efficiency_falloff'][0])
            # a fan that runs moves air against a rise (dp is 0 where the fan is off)
            on_the_map(eta, phi, np.real(q * dp) > 0, inputs['peak_flow_coefficient'])
            outputs['fan_speed'] = speed
            outputs['flow_coefficient'] = phi
            outputs['pressure_coefficient'] = phys.pressure_coefficient(dp, rho, speed, d)
            outputs['tip_mach'] = phys.tip_mach(speed, d, inputs['speed_of_sound'])
        outputs['fan_efficiency'] = eta
        off = self._stopped()
        if off is not None:     # a fan that does not run is stopped: no point on its map
            for name in STOPPED:
                outputs[name][off] = 0.0
        if self.options['compressible']:
            mdot, p, t = rho * q, inputs['pressure'], inputs['temperature']
            outputs['fan_shaft_power'] = phys.shaft_power_isentropic(mdot, dp, p, t, eta)
            outputs['air_power'] = phys.shaft_power_isentropic(mdot, dp, p, t, 1.0)
        else:
            outputs['fan_shaft_power'] = phys.shaft_power(q, dp, eta)
            outputs['air_power'] = phys.shaft_power(q, dp, 1.0)

    @analysis_errors
    def compute_partials(self, inputs, partials):
        _, jac = self._evaluate(inputs)
        off = self._stopped()
        _, gate = gated(self, inputs, 'fan_pressure_rise')   # no rise where the fan is off
        for of, row in jac.items():
            for wrt, value in row.items():
                if off is not None and of in STOPPED:
                    value = np.array(np.broadcast_to(value, np.shape(value)), float)
                    value[off] = 0.0
                if wrt == 'fan_pressure_rise':
                    value = value * gate
                partials[of, wrt] = value.ravel()


#: The map fan's operating point, 0 where the fan does not run.
STOPPED = ('fan_speed', 'flow_coefficient', 'pressure_coefficient', 'tip_mach', 'fan_efficiency')


def _chain(d_mid, df_dmid, direct):
    """Total partials of f(mid(x), x): direct[x] + df_dmid * d_mid[x], per input name x."""
    total = {}
    for wrt in dict.fromkeys(list(d_mid) + list(direct)):
        via = 0.0
        if wrt in d_mid:
            scale = df_dmid[:, None] if np.ndim(d_mid[wrt]) == 2 else df_dmid
            # a zero df/dmid (e.g. no power when ram-driven) wins over a NaN speed derivative
            via = np.where(scale == 0, 0.0, d_mid[wrt] * scale)
        total[wrt] = direct.get(wrt, 0.0) + via
    return total
