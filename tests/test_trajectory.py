"""The blown wing inside a Dymos trajectory (docs/examples/trajectory.py).

Checks: the climb-cruise converges on a small Radau grid with the momentum coefficient as a
control; the trajectory meets its boundary conditions and path constraints; the battery energy
the collocation reports agrees with an independent quadrature of the battery power; the power
accounting across the boundary closes (``P_clean - P_blown = net_power_saving`` per node); the
whole problem's total derivatives at the start point match central finite differences in every
(of, wrt) pair; the example's own components have exact partials.

The lift tables: every input of the blown wing is given by the ODE or the phase (none left to
a start value), its ``lift_coefficient`` is the aircraft's, and the tables cover every C_L the
phase's bounds allow; the optimum momentum coefficient rises with the lift along the flight, is
at every node the pointwise best C_mu of the NumPy chain at the node's flight condition, and
stops following the lift when the tables are held at one lift. ``--figure`` writes a PNG.
"""
import numpy as np
import pytest
from examples import load_example
from partials_check import assert_partials
from totals_check import assert_totals, central_totals, worst_relative

pytest.importorskip("dymos")

tr = load_example("trajectory")


@pytest.fixture(scope="module")
def blown_solution(module_folder):
    return tr.solve(blown=True)


@pytest.fixture(scope="module")
def blown(blown_solution):
    return blown_solution[1]


@pytest.fixture(scope="module")
def clean(module_folder):
    return tr.solve(blown=False)[1]


def distinct(result, name):
    """The values of one timeseries at the distinct nodes."""
    return np.asarray(result[name], float)[tr.distinct_nodes(result["time_s"])]


def test_converges_and_flies_the_mission(blown):
    assert blown["converged"], f"SLSQP did not converge in {blown['iterations']} iterations"
    rng, alt = np.array(blown["range_m"]), np.array(blown["altitude_m"])
    assert rng[0] == pytest.approx(0.0, abs=1e-9)
    assert rng[-1] == pytest.approx(tr.MISSION["range"], rel=1e-9)
    assert alt[0] == pytest.approx(tr.MISSION["initial_altitude"], rel=1e-9)
    assert alt[-1] == pytest.approx(tr.MISSION["final_altitude"], rel=1e-9)
    assert np.all(np.diff(rng) >= 0.0)           # the aircraft flies forward
    lo, hi = tr.SPEED_BOUNDS
    speed = np.array(blown["speed_m_s"])
    assert np.all((speed >= lo - 1e-9) & (speed <= hi + 1e-9))
    assert max(blown["lift_coefficient"]) <= tr.MAX_LIFT_COEFFICIENT + 1e-9
    assert 0.0 < blown["energy_used_J"] < tr.MISSION["initial_energy"]
    assert blown["time_s"][-1] <= tr.DURATION_BOUNDS[1] * (1 + 1e-9)     # the deadline


def test_path_constraints_hold_and_blowing_is_used(blown):
    cmu = np.array(blown["momentum_coefficient"])
    lo, hi = tr.MOMENTUM_COEFFICIENT_RANGE
    assert np.all((cmu >= lo - 1e-9) & (cmu <= hi + 1e-9))
    # the optimizer blows above the calibration's floor: blowing is chosen, not forced
    assert cmu.max() > 2.0 * lo, f"momentum coefficient stayed at its floor ({cmu.max():.4g})"
    # the first law: the span returns no more net thrust power than its fans put into the air
    assert min(blown["energy_margin_W"]) >= -1e-6
    assert max(blown["jet_mach"]) <= tr.MAX_JET_MACH + 1e-9


def test_energy_matches_quadrature_of_the_power(blown):
    """The battery-energy state against the trapezoid rule over the timeseries nodes, and the
    range state against the integral of ``V cos(gamma)``: independent of the collocation's
    quadrature, agreeing to the discretization's accuracy."""
    t = np.array(blown["time_s"])
    power = np.array(blown["battery_power_W"])
    assert np.trapezoid(power, t) == pytest.approx(blown["energy_used_J"], rel=2e-3)
    ground_speed = np.array(blown["speed_m_s"]) * np.cos(blown["flight_path_angle_rad"])
    assert np.trapezoid(ground_speed, t) == pytest.approx(tr.MISSION["range"], rel=2e-3)


def test_power_accounting_across_the_boundary(blown):
    """At every node, the clean span's battery power minus the blown span's equals the group's
    ``net_power_saving`` (the group and the host agree on the chain efficiency)."""
    eta = tr.AIRCRAFT["chain_efficiency"][0]
    speed = np.array(blown["speed_m_s"])
    saving = ((np.array(blown["clean_section_drag_N"]) - np.array(blown["section_drag_N"]))
              * speed / eta - np.array(blown["fan_electric_power_W"]))
    np.testing.assert_allclose(saving, blown["net_power_saving_W"], rtol=1e-10, atol=1e-9)


def test_blowing_saves_energy_against_the_clean_span(blown, clean):
    """The same flight with the span clean (its clean section drag at the same lift, no fan)
    converges and needs more battery energy than the blown optimum."""
    assert clean["converged"]
    assert np.array(clean["range_m"])[-1] == pytest.approx(tr.MISSION["range"], rel=1e-9)
    assert blown["energy_used_J"] < clean["energy_used_J"]


def test_totals_at_the_start_point_every_pair():
    """The whole problem (objective, collocation defects, boundary and path constraints) with
    respect to every design variable (states, controls incl. the momentum coefficient, the
    duration), against central finite differences, every (of, wrt) pair. The lift tables'
    slopes enter through the aircraft's C_L, which depends on the speed, the flight-path angle
    and the altitude (the density)."""
    prob = tr.build(blown=True)
    prob.run_model()
    data = central_totals(prob, step=1e-5)
    assert_totals(data, atol=1e-6, rtol=1e-5)
    # Dymos scales a control-rate continuity defect by dt/dtau = duration / 2, and the rates
    # scale as 1 / duration: the defect does not depend on the duration, and its analytic
    # derivative is the difference of two equal terms, zero to round-off (about 1e-14 here at
    # most). A relative error of round-off against a zero is meaningless, so those pairs (and
    # only those, each below 1e-12 in both Jacobians) are left out of the relative measure;
    # assert_totals above has checked them absolutely.
    zero = {key for key, entry in data.items()
            if key[0].split(".")[-1].startswith("defect_control_rates:")
            and key[1].endswith("t_duration")
            and max(np.abs(entry["J_fd"]).max(), np.abs(entry["J_fwd"]).max()) < 1e-12}
    worst = worst_relative({k: v for k, v in data.items() if k not in zero})
    print(f"worst relative totals error at the start point: {worst:.2e} "
          f"({len(data)} pairs, {len(zero)} identically zero left out)")
    assert worst < 1e-6
    wrt = {k[1] for k in data}
    assert any("momentum_coefficient" in name for name in wrt)
    assert any("t_duration" in name for name in wrt)


def test_flight_component_partials():
    n = 4
    rng = np.random.default_rng(7)
    assert_partials(tr.FlightComp(num_nodes=n), {
        "mass": 150.0, "density": rng.uniform(1.0, 1.2, n), "speed": rng.uniform(20, 40, n),
        "flight_path_angle": rng.uniform(-0.05, 0.15, n), "section_drag": rng.uniform(-5, 15, n),
        "fan_electric_power": rng.uniform(0, 300, n), "wing_area": 4.0, "aspect_ratio": 11.0,
        "oswald_efficiency": 0.8, "zero_lift_drag": 0.025, "chain_efficiency": 0.75})


def test_lift_and_momentum_component_partials():
    n = 4
    rng = np.random.default_rng(11)
    assert_partials(tr.LiftComp(num_nodes=n), {
        "mass": 150.0, "density": rng.uniform(0.9, 1.2, n), "speed": rng.uniform(20, 60, n),
        "flight_path_angle": rng.uniform(-0.05, 0.15, n), "wing_area": 4.0})
    assert_partials(tr.MomentumComp(num_nodes=n),
                    {"log_momentum_coefficient": np.log(rng.uniform(0.005, 0.15, n))})


def test_every_input_of_the_wing_is_given_and_the_lift_is_the_aircrafts(blown_solution):
    """No input of the blown wing is left to a start value: each comes from the ODE, a phase
    parameter or a control. Its ``lift_coefficient`` (the tables' argument) is the aircraft's
    C_L of the ODE's lift component, the same C_L the flight reports."""
    prob, result = blown_solution
    ode = "traj.phases.flight.rhs_all"
    wing = prob.model.traj.phases.flight.rhs_all.wing
    inputs = {meta["prom_name"]: name
              for name, meta in wing.list_inputs(out_stream=None, prom_name=True)}
    assert "lift_coefficient" in inputs
    assert not {"drag_per_momentum", "drag_clean"} & set(inputs), "a tabled constant is an input"
    for prom, name in inputs.items():
        source = prob.model.get_source(f"{ode}.wing.{name}")
        assert not source.startswith("_auto_ivc"), f"wing input {prom} is not given ({source})"
    assert (prob.model.get_source(f"{ode}.wing.{inputs['lift_coefficient']}")
            == f"{ode}.lift.lift_coefficient")
    np.testing.assert_allclose(prob.get_val(f"{ode}.wing.lift_coefficient").ravel(),
                               result["lift_coefficient"], rtol=1e-12)


def test_tables_cover_every_lift_the_phase_allows(blown):
    """The lowest C_L the phase's bounds allow (the highest speed, the densest air at the
    altitude's lower bound, the steepest path) and the C_L limit lie within every table, and so
    does every C_L the flight visits (the tables are not extrapolated)."""
    from mdao.physics.atmosphere import isa

    mass, area = tr.AIRCRAFT["mass"][0], tr.AIRCRAFT["wing_area"][0]
    gamma = max(abs(g) for g in tr.FLIGHT_PATH_BOUNDS)
    lowest = tr.lift_coefficient(mass, isa(0.0).density, tr.SPEED_BOUNDS[1], gamma,
                                 area)[0]["lift_coefficient"]
    for name, table in tr.LIFT_TABLES:
        lo, hi = table.range
        assert lo <= lowest and hi >= tr.MAX_LIFT_COEFFICIENT, name
        assert table.contains(blown["lift_coefficient"]).all(), name


def test_optimum_momentum_coefficient_rises_with_the_lift(blown):
    """Along the flight the optimum C_mu rises and falls with C_L.

    Physics: with the energy balance slack (checked first), the best C_mu is where the
    main-propulsion power one more unit of C_mu saves, ``-(beta + 2 k_2 C_mu) q S V /
    eta_chain``, equals the fans' extra power, which grows with C_mu; ``beta`` (the tabled
    ``drag_per_momentum``) falls strictly with C_L over the table, so that point is a strictly
    increasing function of C_L, and the rank correlation of the exact optimum is 1. The
    collocation's controls (quadratic per segment, continuous across segments) may swap the
    ranks of nodes whose C_L differ by less than their error, as at the top of the climb, where
    two nodes' C_L differ by 3e-5 (each adjacent swap lowers the correlation of 16 nodes by
    0.003). 0.9 leaves room for several such swaps and still asks for a clearly monotone
    relation (for 16 unrelated values a rank correlation of 0.9 or more has a chance below
    1e-5). The slope of the least-squares line must be positive. (How far C_mu moves is checked
    against the NumPy chain's pointwise optimum, below.)"""
    margin = distinct(blown, "energy_margin_W")
    assert margin.min() > 10.0, "the energy balance binds: the schedule is then its root"
    s = blown["schedule"]
    print(f"C_L {s['lift_range']}, C_mu {s['momentum_range']}, rank correlation "
          f"{s['rank_correlation']:.4f}, slope {s['slope']:.4f}")
    assert s["rank_correlation"] > 0.9
    assert s["slope"] > 0.0


def test_schedule_is_the_pointwise_best_momentum_coefficient(blown_solution):
    """At every node the trajectory's C_mu equals, within 1 %, the C_mu that maximizes the net
    power saving of the NumPy chain (mdao.physics.chain, independent of the ODE) at the node's
    speed, air and lift coefficient, among the admissible values (calibrated range, jet Mach
    limit, energy balance), found on a grid of step 1e-5 (0.05 % of the values). C_mu enters
    the flight only through the battery power at its node, so the trajectory's optimum must be
    the pointwise one, up to the control's discretization."""
    from mdao.physics import chain
    from mdao.physics.atmosphere import isa

    prob, result = blown_solution
    idx = tr.distinct_nodes(result["time_s"])
    density = np.asarray(prob.get_val("traj.flight.timeseries.density"), float).ravel()[idx]
    lo, hi = tr.MOMENTUM_COEFFICIENT_RANGE
    grid = np.arange(lo, 0.08, 1e-5)[:, None]
    params = dict(tr.WING, speed=distinct(result, "speed_m_s"), density=density,
                  speed_of_sound=isa(distinct(result, "altitude_m")).speed_of_sound,
                  lift_coefficient=distinct(result, "lift_coefficient"),
                  momentum_coefficient=grid, chain_efficiency=tr.AIRCRAFT["chain_efficiency"][0])
    opts = chain.ChainOptions(lift_tables=tr.LIFT_TABLES, atmosphere="host")
    out = chain.evaluate(params, opts)
    admissible = (out["energy_margin"] >= 0.0) & (out["jet_mach"] <= tr.MAX_JET_MACH)
    best = grid[np.argmax(np.where(admissible, out["net_power_saving"], -np.inf), axis=0), 0]
    assert best.max() < grid[-1, 0] - 1e-3, "the grid does not reach past the optimum"
    np.testing.assert_allclose(distinct(result, "momentum_coefficient"), best, rtol=0.01)


def test_tables_held_at_one_lift_give_one_momentum_coefficient(blown):
    """The same flight with the tables held at the flight's mean C_L (the same constants, no
    dependence on the lift): the schedule no longer follows the lift. Every constant is then
    the same at every node and the pointwise optimum depends on nothing else (the model is
    non-dimensional in C_mu), so what spread remains is the solver's; below a tenth of the
    tabled flight's."""
    cl = distinct(blown, "lift_coefficient")
    _, frozen = tr.solve(blown=True, lift_tables=tr.frozen_tables(float(cl.mean())))
    assert frozen["converged"]
    spread = np.ptp(distinct(frozen, "momentum_coefficient"))
    tabled = np.ptp(distinct(blown, "momentum_coefficient"))
    print(f"C_mu spread: tables held {spread:.2e}, tabled {tabled:.2e}")
    assert spread < 0.1 * tabled


def test_figure_option_writes_a_png(tmp_path):
    """``--figure FILE`` on the script's command line: both optima converge (exit status 0)
    and a PNG of more than a few kilobytes is written in place, no temporary file left."""
    pytest.importorskip("matplotlib")
    folder = tmp_path / "figures"       # its own folder: OpenMDAO writes into tmp_path
    folder.mkdir()
    path = folder / "schedule.png"
    assert tr.cli(["--figure", str(path)]) == 0
    data = path.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    assert len(data) > 20_000
    assert [p.name for p in folder.iterdir()] == ["schedule.png"]
