"""Complex step through the physics, the components and the group (issue 16, item 5).

A complex step (Squire and Trapp, SIAM Review 40(1), 1998; Martins, Sturdza and Alonso, ACM
TOMS 29(3), 2003) evaluates f(x + i h) with h = 1e-30: Im f / h is the derivative to machine
precision, with no subtraction error, provided nothing drops the imaginary part on the way. So
the analytic derivatives must agree with it to round-off (relative 1e-10 here, where finite
differences only reach 1e-6), and the real part must be the real evaluation's value.
"""
import warnings

import numpy as np
import openmdao.api as om
import pytest

from mdao.case import load_case
from mdao.components.chain import ChainComp
from mdao.physics import chain, numeric
from mdao.system import build_problem
from partials_check import chain_inputs, component_problem
from test_chain_agreement import BLOWING, COMBOS, FANS, IDS, STATIONS, _schedule, _values
from totals_check import assert_totals, worst_relative

H = 1e-30
#: Geometric duct and map fan for the fused component (values of these tests, inside the
#: declared ranges of mdao.parameters; not of any source).
GEOMETRIC_MAP = {"fan_diameter": 0.08, "suction_ratio": 0.02, "transition_length": 0.3,
                 "slot_exponent": 8.0, "roughness": 5e-6, "bend_loss": 0.2,
                 "suction_inlet_loss": 0.5, "extra_loss": 0.05,
                 "pressure_coefficients": [0.6, 0.5, -1.5], "peak_efficiency": 0.75,
                 "peak_flow_coefficient": 0.6, "efficiency_falloff": 0.8}


@pytest.fixture(autouse=True)
def complex_warnings_are_errors():
    """A ComplexWarning (an imaginary part discarded) fails every test here."""
    with warnings.catch_warnings():
        warnings.simplefilter("error", np.exceptions.ComplexWarning)
        yield


def _chain_options(combo):
    duct_model, fan_model, compressible, _, aircraft = combo
    return chain.ChainOptions(duct_model=duct_model, fan_model=fan_model, fans=FANS,
                              stations=STATIONS, schedule=_schedule(duct_model, compressible),
                              compressible=compressible, aircraft=aircraft,
                              compressible_jet=compressible)


def test_numeric_helpers_carry_the_step():
    x = np.array([-2.0, 3.0]) + 1j * H
    np.testing.assert_array_equal(numeric.abs(x).real, [2.0, 3.0])
    np.testing.assert_array_equal(numeric.abs(x).imag / H, [-1.0, 1.0])    # d|x|/dx = sign x
    y, xx = 0.3, 2.0
    angle = numeric.arctan2(y + 1j * H, xx)
    assert angle.real == np.arctan2(y, xx)
    assert angle.imag / H == pytest.approx(xx / (xx * xx + y * y), rel=1e-15)  # d/dy atan(y/x)
    assert numeric.asarray(np.array([1, 2])).dtype == np.float64
    assert numeric.asarray([1.0 + 2j]).dtype == np.complex128
    real = np.ones(3)
    assert numeric.asarray(real) is real                     # no copy on the hot path
    assert numeric.scalar(np.array([2.0 + 3j])) == 2.0 + 3j
    assert isinstance(numeric.scalar(np.array([2.0])), float)


def test_one_output_by_complex_step_equals_the_analytic_partial():
    """net_power_saving against the momentum coefficient (lumped duct, constant fan): Im / h of
    the complex evaluation is the analytic partial, the real part the real value."""
    values = chain_inputs(1, chain_efficiency=0.8, motor_efficiency=0.9)
    opts = chain.ChainOptions()
    out, d = chain.evaluate(values, opts, derivatives=True)
    perturbed = dict(values, momentum_coefficient=values["momentum_coefficient"] + 1j * H)
    with warnings.catch_warnings():
        warnings.simplefilter("error")       # no warning of any kind on the complex path
        result = chain.evaluate(perturbed, opts)["net_power_saving"]
    assert np.iscomplexobj(result)
    np.testing.assert_allclose(result.real, out["net_power_saving"], rtol=1e-15, atol=0.0)
    analytic = d["net_power_saving"]["momentum_coefficient"]
    assert np.all(np.abs(analytic) > 1.0)    # a real slope, not a zero that agrees trivially
    np.testing.assert_allclose(result.imag / H, analytic, rtol=1e-12, atol=0.0)


@pytest.mark.parametrize("combo", COMBOS, ids=IDS)
def test_every_partial_of_the_chain_by_complex_step(combo):
    """Every input of every model, stepped in turn (all nodes at once: the chain is elementwise
    over them; the fan map's coefficients one by one), against the analytic partials of every
    output; and the values are the real evaluation's."""
    values = _values(combo[0], combo[1], combo[3], aircraft=combo[4])
    opts = _chain_options(combo)
    blowing = np.array(BLOWING)
    out, d = chain.evaluate(values, opts, blowing=blowing, derivatives=True)
    failures = []
    for name, value in values.items():
        value = np.asarray(value, float)
        steps = range(value.size) if name == "pressure_coefficients" else [None]
        for k in steps:
            x = value.astype(complex)
            if k is None:
                x += 1j * H
            else:
                x[k] += 1j * H
            stepped = chain.evaluate(dict(values, **{name: x}), opts, blowing=blowing)
            for of, val in stepped.items():
                if of == "ram_driven":
                    continue
                # complex arithmetic rounds a little differently: round-off of the output's size
                np.testing.assert_allclose(np.real(val), out[of], rtol=1e-12,
                                           atol=1e-12 * np.abs(out[of]).max(),
                                           err_msg=f"{of} with {name} stepped")
                cs = np.imag(val) / H
                an = d.get(of, {}).get(name)
                if an is None:                  # structurally zero
                    an = np.zeros_like(cs)
                elif k is not None:
                    an = np.asarray(an)[..., k]
                an, cs = np.broadcast_arrays(an, cs)
                # a structurally zero partial comes out as round-off in both: floor at 1e-12 of
                # the output's size per unit of the input's
                floor = 1e-12 * np.abs(out[of]).max() / np.abs(value).max()
                err = np.abs(an - cs) - (1e-10 * np.abs(cs).max() + floor)
                if not np.all(err <= 0):
                    i = np.unravel_index(np.argmax(np.nan_to_num(err, nan=np.inf)), err.shape)
                    failures.append(f"d {of} / d {name}[{k}] at {i}: analytic {an[i]!r}, "
                                    f"complex step {cs[i]!r}")
    assert not failures, "\n".join(failures)


def _assert_partials_cs(prob, rtol=1e-10):
    """Every pair of check_partials(method="cs"), element by element: |analytic - cs| <=
    rtol times the pair's largest entry (each pair on its own scale)."""
    data = prob.check_partials(out_stream=None, method="cs")["c"]
    assert data
    failures, worst = [], 0.0
    for (of, wrt), pair in data.items():
        jac, cs = np.asarray(pair["J_fwd"]), np.asarray(pair["J_fd"])
        scale = max(np.abs(jac).max(initial=0.0), np.abs(cs).max(initial=0.0))
        if scale == 0.0:
            continue
        err = np.abs(jac - cs).max() / scale
        worst = max(worst, err)
        if not err <= rtol:
            failures.append(f"{of} wrt {wrt}: relative {err:.2e}")
    assert not failures, "\n".join(failures)
    return worst, len(data)


@pytest.mark.parametrize("models", [("lumped", "constant"), ("geometric", "map")])
def test_fused_component_partials_by_complex_step(models):
    duct_model, fan_model = models
    drop = () if duct_model == "lumped" else ("jet_loss_factor", "fan_rated_efficiency")
    inputs = chain_inputs(4, aircraft=True, drop=drop, chain_efficiency=0.8,
                          motor_efficiency=0.9)
    if duct_model == "geometric":
        inputs.update(GEOMETRIC_MAP)
    comp = ChainComp(num_nodes=4, duct_model=duct_model, fan_model=fan_model, fans=FANS,
                     stations=STATIONS, aircraft=True)
    prob = component_problem(comp, inputs)
    assert np.all(prob.get_val("net_power_saving") != 0.0)
    worst, pairs = _assert_partials_cs(prob)
    assert pairs > 50


@pytest.mark.parametrize("name", ["survey-drone", "coastal-patrol"])
def test_group_totals_by_complex_step(cases_dir, name):
    """The optimization problem of a case set up with complex vectors: every total derivative
    (every pair, element by element) against the complex step through the whole group."""
    prob = build_problem(load_case(cases_dir / f"{name}.toml"), complex_step=True)
    prob.run_model()
    data = prob.check_totals(out_stream=None, method="cs")
    assert any(np.abs(np.asarray(e["J_fd"])).max() > 0 for e in data.values())
    assert_totals(data, atol=1e-8, rtol=1e-9)
    assert worst_relative(data) < 1e-12


def test_mission_energy_against_pressure_rise_is_not_lost(cases_dir):
    """The issue's symptom: the complex-step total of the mission energy saving against a
    segment's fan pressure rise came out 0 (the step discarded); it is the analytic one."""
    prob = build_problem(load_case(cases_dir / "survey-drone.toml"), complex_step=True)
    prob.run_model()
    data = prob.check_totals(of=["mission_energy_saving"], wrt=["fan_pressure_rise"],
                             out_stream=None, method="cs")
    entry = data["mission_energy_saving", "fan_pressure_rise"]
    cs = np.asarray(entry["J_fd"])
    analytic = np.asarray(entry["J_fwd"] if "J_fwd" in entry else entry["J_rev"])
    assert np.abs(cs).max() > 1.0
    np.testing.assert_allclose(cs, analytic, rtol=1e-12, atol=0.0)
