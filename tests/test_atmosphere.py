"""ISA atmosphere: physics against ICAO/US 1976 values and two libraries; component partials."""
import ambiance
import numpy as np
import pytest
from fluids.atmosphere import ATMOSPHERE_1976
from partials_check import assert_partials

from mdao.components.atmosphere import AtmosphereComp
from mdao.physics.atmosphere import CP, GAMMA, GAS_CONSTANT, Atmosphere, isa

# Standard atmosphere table (ICAO Doc 7488 / U.S. Standard Atmosphere 1976), z geometric [m]:
# T [K], p [Pa], rho [kg/m3], a [m/s], mu [Pa s]
TABLE = np.array([
    [0, 288.150, 101325.00, 1.22500, 340.294, 1.78938e-5],
    [1000, 281.651, 89876.29, 1.11166, 336.435, 1.75785e-5],
    [5000, 255.676, 54048.29, 0.73643, 320.546, 1.62825e-5],
    [11000, 216.774, 22699.96, 0.36480, 295.154, 1.42229e-5],
    [20000, 216.650, 5529.31, 0.08891, 295.070, 1.42161e-5],
])
#: The whole range, from the standard's lower limit (ISO 2533:1975/Add 2:1997: -5000 m).
GRID = np.linspace(-5000.0, 20000.0, 251)


def test_gas_constants_against_their_definitions():
    """The specific gas constant from the U.S. Standard Atmosphere 1976's universal gas constant
    R* = 8.31432 J/(mol K) and molar mass M0 = 0.0289644 kg/mol (7e-7 relative above ICAO's
    287.05287, which the module uses); cp = gamma R / (gamma - 1) for a calorically perfect gas."""
    assert GAS_CONSTANT == pytest.approx(8.31432 / 0.0289644, rel=1e-6)
    assert CP == pytest.approx(GAMMA * GAS_CONSTANT / (GAMMA - 1.0), rel=1e-14)


def test_reference_table():
    """ICAO Doc 7488 / U.S. Standard Atmosphere 1976 table, all 5 rows and all fields (altitude
    in, 5 state fields out).

    Worst relative error measured: 3.9e-6 (density at 20 km, the table's last printed digit).
    The table's pressures follow the 1976 gas constant R*/M0 (7e-7 relative above ICAO's
    287.05287, which this module uses): 1e-6 relative at 11-20 km, below the 5e-6 asserted.
    """
    state = isa(TABLE[:, 0])
    for column, field in enumerate(Atmosphere._fields, start=1):
        np.testing.assert_allclose(getattr(state, field), TABLE[:, column], rtol=5e-6, atol=0,
                                   err_msg=field)


def test_fluids_atmosphere_1976():
    """fluids.atmosphere.ATMOSPHERE_1976 on 251 altitudes, -5 to 20 km.

    Temperature and viscosity agree to 2e-16; pressure to 2.0e-6 and density to 1.4e-6 (fluids uses
    R = 8314.32/28.9644 against ICAO's 287.05287 here); speed of sound to 3.6e-7.
    """
    ref = [ATMOSPHERE_1976(float(z)) for z in GRID]
    state = isa(GRID)
    for field, name, rtol in (("temperature", "T", 1e-14), ("viscosity", "mu", 1e-14),
                              ("pressure", "P", 2.5e-6), ("density", "rho", 2e-6),
                              ("speed_of_sound", "v_sonic", 5e-7)):
        np.testing.assert_allclose(getattr(state, field), [getattr(r, name) for r in ref],
                                   rtol=rtol, atol=0, err_msg=field)


def test_ambiance():
    """ambiance.Atmosphere on 251 altitudes, -5 to 20 km (below sea level too): T, a, mu to
    1e-14; p and rho within 1.8e-6 relative (measured 1.77e-6)."""
    ref = ambiance.Atmosphere(GRID)
    state = isa(GRID)
    for field, name, rtol in (("temperature", "temperature", 1e-14),
                              ("speed_of_sound", "speed_of_sound", 1e-14),
                              ("viscosity", "dynamic_viscosity", 1e-14),
                              ("pressure", "pressure", 2e-6), ("density", "density", 2e-6)):
        np.testing.assert_allclose(getattr(state, field), getattr(ref, name), rtol=rtol, atol=0,
                                   err_msg=field)


def test_geopotential_matters():
    """Tropopause at 11 km geopotential = 11 019 m geometric: still lapsing at 11 000 m."""
    assert isa(11000.0).temperature > 216.65 + 0.1
    assert isa(11100.0).temperature == pytest.approx(216.65, rel=1e-14)


def test_derivatives_central_fd():
    z = np.array([-5000.0, -1234.0, 0.0, 500.0, 4321.0, 10990.0, 11050.0, 15000.0, 19990.0])
    _, d = isa(z, derivatives=True)
    h = 1e-2
    plus, minus = isa(z + h), isa(np.maximum(z - h, -5000.0))
    step = z + h - np.maximum(z - h, -5000.0)
    for field in Atmosphere._fields:
        fd = (getattr(plus, field) - getattr(minus, field)) / step
        np.testing.assert_allclose(getattr(d, field), fd, rtol=1e-6,
                                   atol=1e-9 * np.abs(getattr(d, field)).max(), err_msg=field)


def test_derivative_signs():
    _, d = isa(np.array([100.0, 15000.0]), derivatives=True)
    assert np.all(d.pressure < 0) and np.all(d.density < 0)
    assert d.temperature[0] < 0 and d.temperature[1] == 0


@pytest.mark.parametrize("bad", [-5000.5, 20000.5, np.nan, [100.0, 3e4]])
def test_out_of_range(bad):
    with pytest.raises(ValueError, match=r"altitude.*-5000 to 20000"):
        isa(bad)


def test_shape_kept():
    assert isa(np.zeros((2, 3))).density.shape == (2, 3)


def test_component_partials():
    rng = np.random.default_rng(7)
    prob = assert_partials(AtmosphereComp(num_nodes=5),
                           {"altitude": rng.uniform(-5000.0, 20000.0, 5)})
    np.testing.assert_allclose(prob.get_val("density"), isa(prob.get_val("altitude")).density)


def test_component_defaults():
    import openmdao.api as om
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("atm", AtmosphereComp(), promotes=["*"])
    prob.setup()
    prob.run_model()
    assert prob.get_val("density")[0] == pytest.approx(1.225, rel=1e-5)
    assert prob.get_val("pressure", units="kPa")[0] == pytest.approx(101.325)
