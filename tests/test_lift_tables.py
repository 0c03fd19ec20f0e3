"""Constants that follow the section lift coefficient: the PCHIP tables, their derivatives, the
case keys, the chain and the optimum.

Reference for the interpolant: SciPy's ``PchipInterpolator`` (Fritsch and Carlson, SIAM J.
Numer. Anal. 17 (1980) 238; Fritsch and Butland, SIAM J. Sci. Stat. Comput. 5 (1984) 300), used
here only as the independent check of the values; the derivative is checked by central
differences.
"""
import copy

import numpy as np
import pytest
from scipy.interpolate import PchipInterpolator

from mdao.case import CaseError, load_case, parse_case, segment_lift
from mdao.components.chain import ChainComp
from mdao.optimum import optimize
from mdao.physics import chain
from mdao.physics.lift_table import LiftTable, interpolate
from mdao.system import BlownWingGroup, build_problem, chain_options, chain_parameters

TABLE = LiftTable((0.3, 0.6, 0.9, 1.3), (-1.1, -1.5, -1.7, -2.4))


def test_values_match_scipy_pchip_inside():
    cl = np.linspace(0.3, 1.3, 57)
    ref = PchipInterpolator(TABLE.lift_coefficient, TABLE.value)(cl)
    np.testing.assert_allclose(interpolate(TABLE, cl), ref, rtol=1e-14, atol=1e-15)
    # through every breakpoint
    np.testing.assert_allclose(interpolate(TABLE, TABLE.lift_coefficient), TABLE.value, rtol=1e-14)


def test_monotone_data_give_a_monotone_curve():
    """No overshoot: the reason for PCHIP over a cubic spline (Fritsch and Carlson 1980)."""
    cl = np.linspace(0.3, 1.3, 2001)
    v = interpolate(TABLE, cl)
    assert np.all(np.diff(v) <= 1e-15)
    assert v.min() >= min(TABLE.value) - 1e-15 and v.max() <= max(TABLE.value) + 1e-15


@pytest.mark.parametrize("cl", [0.1, 0.3001, 0.45, 0.75, 1.1, 1.2999, 1.6])
def test_slope_against_central_differences(cl):
    _, slope = interpolate(TABLE, cl, derivatives=True)
    h = 1e-6
    fd = (interpolate(TABLE, cl + h) - interpolate(TABLE, cl - h)) / (2 * h)
    assert float(slope) == pytest.approx(float(fd), rel=1e-6, abs=1e-9)


def test_linear_extension_beyond_the_ends():
    _, end = interpolate(TABLE, 1.3, derivatives=True)
    assert float(interpolate(TABLE, 1.5)) == pytest.approx(-2.4 + 0.2 * float(end), rel=1e-12)


@pytest.mark.parametrize("x, y", [((0.3,), (1.0,)), ((0.3, 0.3), (1.0, 2.0)),
                                  ((0.3, 0.6), (1.0,)), ((0.3, np.nan), (1.0, 2.0))])
def test_bad_tables_refused(x, y):
    with pytest.raises(ValueError):
        LiftTable(x, y)


# --- case files ----------------------------------------------------------------------------
def _levee(cases_dir):
    import tomllib
    return tomllib.loads((cases_dir / "levee-inspector.toml").read_text())


def test_case_reads_tables(cases_dir):
    case = load_case(cases_dir / "levee-inspector.toml")
    t = case.value("airfoil.drag_per_momentum")
    assert isinstance(t, LiftTable) and t.lift_coefficient == (0.3, 0.7, 1.2)
    assert isinstance(case.value("duct.freestream_assist"), float)


@pytest.mark.parametrize("table, words", [
    ({"lift_coefficient": [0.3, 0.9]}, "exactly the keys"),
    ({"lift_coefficient": [0.3], "value": [-1.0]}, "at least two"),
    ({"lift_coefficient": [0.9, 0.3], "value": [-1.0, -2.0]}, "increase strictly"),
    ({"lift_coefficient": [0.3, 0.9], "value": [-1.0, 0.5]}, "value[1]"),
    ({"lift_coefficient": [0.3, "x"], "value": [-1.0, -2.0]}, "list of numbers"),
])
def test_bad_table_in_case_names_the_key(cases_dir, table, words):
    raw = _levee(cases_dir)
    raw["airfoil"]["drag_per_momentum"] = table
    with pytest.raises(CaseError) as err:
        parse_case(raw, base=cases_dir)
    assert "airfoil.drag_per_momentum" in str(err.value) and words in str(err.value)


def test_segment_outside_a_table_is_refused(cases_dir):
    raw = _levee(cases_dir)
    raw["airfoil"]["drag_per_momentum"] = {"lift_coefficient": [0.3, 0.8],
                                           "value": [-1.3, -1.7]}
    with pytest.raises(CaseError) as err:
        parse_case(raw, base=cases_dir)
    msg = str(err.value)
    assert "'loiter'" in msg and "1.074" in msg and "airfoil.drag_per_momentum" in msg
    assert "0.3 to 0.8" in msg


def test_table_needs_a_lift(cases_dir):
    raw = _levee(cases_dir)
    del raw["aircraft"]
    with pytest.raises(CaseError, match="has no lift coefficient"):
        parse_case(raw, base=cases_dir)
    for seg, cl in zip(raw["segment"], (0.4, 1.0)):
        seg["lift_coefficient"] = cl
    case = parse_case(raw, base=cases_dir)
    np.testing.assert_array_equal(segment_lift(case), [0.4, 1.0])
    assert "lift_coefficient" in chain_parameters(case)


def test_uncertainty_on_a_table_is_refused(cases_dir):
    raw = _levee(cases_dir)
    raw["uncertainty"]["airfoil.drag_per_momentum"] = {"distribution": "normal", "sd": 0.1}
    with pytest.raises(CaseError, match="is a lift table"):
        parse_case(raw, base=cases_dir)


# --- the chain --------------------------------------------------------------------------------
def _explicit(case):
    """The case's parameters with every table read by hand at each segment's lift."""
    p = chain_parameters(case)
    cl = segment_lift(case)
    ref = PchipInterpolator
    for name, table in chain_options(case).lift_tables:
        p[name] = ref(table.lift_coefficient, table.value)(cl)
    return p


def test_chain_reads_tables_at_the_segment_lift(cases_dir):
    """The tabled chain equals the chain given the constants by hand at each segment's lift."""
    case = load_case(cases_dir / "levee-inspector.toml")
    params = chain_parameters(case, momentum_coefficient=np.array([0.02, 0.03]))
    opts = chain_options(case)
    tabled = chain.evaluate(params, opts)
    by_hand = chain.evaluate(dict(_explicit(case), momentum_coefficient=params[
        "momentum_coefficient"]), chain.ChainOptions(aircraft=True))
    for name in ("net_power_saving", "section_drag", "required_pressure_rise", "energy_margin"):
        np.testing.assert_allclose(tabled[name], by_hand[name], rtol=1e-13, err_msg=name)


def test_chain_tangents_through_the_lift(cases_dir):
    """d(net power)/d(speed) includes the tables' slope through C_L: against central
    differences of the NumPy chain."""
    case = load_case(cases_dir / "levee-inspector.toml")
    params = chain_parameters(case, momentum_coefficient=np.array([0.02, 0.03]),
                              fan_pressure_rise=np.array([300.0, 150.0]))
    opts = chain_options(case)
    _, d = chain.evaluate(params, opts, derivatives=True)
    for wrt in ("speed", "altitude"):
        h = 1e-6 * np.maximum(np.abs(params[wrt]), 1.0)
        up = chain.evaluate(dict(params, **{wrt: params[wrt] + h}), opts)
        dn = chain.evaluate(dict(params, **{wrt: params[wrt] - h}), opts)
        for of in ("net_power_saving", "section_drag", "energy_margin"):
            fd = (up[of] - dn[of]) / (2 * h)
            np.testing.assert_allclose(d[of][wrt], fd, rtol=2e-6, atol=1e-8,
                                       err_msg=f"{of} wrt {wrt}")


@pytest.mark.parametrize("aircraft", [False, True])
def test_fused_component_partials_with_tables(aircraft):
    from partials_check import assert_partials
    tables = (("drag_per_momentum", TABLE),
              ("jet_loss_factor", LiftTable((0.2, 0.8, 1.4), (1.2, 1.25, 1.4))),
              ("drag_clean", LiftTable((0.2, 1.4), (0.009, 0.016))),
              ("lift_per_momentum", LiftTable((0.2, 0.8, 1.4), (3.0, 4.0, 4.5))))
    from partials_check import chain_inputs
    n = 4
    inputs = chain_inputs(5, speed=(18.0, 30.0), momentum=(0.01, 0.05), rise=(200.0, 900.0),
                          aircraft=aircraft, drop=[name for name, _ in tables])
    if not aircraft:
        inputs["lift_coefficient"] = np.random.default_rng(6).uniform(0.3, 1.2, n)
    comp = ChainComp(num_nodes=n, examples=True, lift_tables=tables,
                     aircraft=aircraft)
    prob = assert_partials(comp, inputs)
    names = {m["prom_name"] for _, m in comp.list_inputs(out_stream=None, prom_name=True)}
    assert not names & {name for name, _ in tables}      # tabled: no scalar input
    assert ("lift_coefficient" in names) is (not aircraft)
    assert prob is not None


def test_per_discipline_group_refuses_tables():
    import openmdao.api as om
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("w", BlownWingGroup(fused=False, lift_tables=(
        ("drag_per_momentum", TABLE),)))
    with pytest.raises(ValueError, match="fused chain"):
        prob.setup()


def test_totals_of_the_tabled_problem(cases_dir):
    from totals_check import assert_totals, central_totals
    prob = build_problem(load_case(cases_dir / "levee-inspector.toml"))
    prob.run_model()
    data = central_totals(prob, step=1e-6)
    assert_totals(data, atol=1e-6, rtol=1e-5)


# --- the optimum follows the lift ---------------------------------------------------------------
def test_cruise_and_loiter_blow_differently_only_with_tables(cases_dir):
    """With the lift tables the transit (C_L 0.36) and the loiter (C_L 1.07) optimize to
    momentum coefficients 28 % apart; with every table replaced by one number (its value at the
    transit's lift) they come within 3 % (the lumped model is non-dimensional; what remains is
    the loiter's fan held at its minimum pressure rise). Every blowing segment keeps the energy
    balance."""
    case = load_case(cases_dir / "levee-inspector.toml")
    out = optimize(case)
    assert out.converged, out.message
    cmu = out.values["momentum_coefficient"]
    assert abs(cmu[0] - cmu[1]) > 0.2 * max(cmu)
    for seg in out.segments:
        assert seg["energy_margin_W"] >= -1e-6 * seg["air_power_W"], seg["name"]
        assert set(seg["constants_at_lift"]) == {"duct.jet_loss_factor", "airfoil.drag_clean",
                                                 "airfoil.drag_per_momentum"}
    cl = segment_lift(case)
    flat = case.replace({key: float(interpolate(case.value(key), cl[0]))
                         for key in ("duct.jet_loss_factor", "airfoil.drag_clean",
                                     "airfoil.drag_per_momentum")})
    same = optimize(flat)
    assert same.converged, same.message
    c = same.values["momentum_coefficient"]
    assert abs(c[0] - c[1]) < 0.05 * max(c)


# --- calibration per lift band ----------------------------------------------------------------
def _demo():
    import importlib.util
    from pathlib import Path
    root = Path(__file__).resolve().parents[1]
    spec = importlib.util.spec_from_file_location("make_demo_runs",
                                                  root / "cases" / "data" / "make_demo_runs.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module, root / "cases" / "data"


def test_calibration_in_lift_bands_recovers_the_truth():
    """Three angles of attack with constants that change with the lift (the demo's stated
    truth): three bands, one per angle, each table value within 4 standard errors of the truth
    at that angle, and the fixed slot penalty kept as one number."""
    from mdao.studies.calibration import calibrate, read_runs
    demo, data = _demo()
    result = calibrate(read_runs(data / "demo_runs_lift.csv"))
    tables, bands = result["lift_tables"], result["lift_bands"]
    assert len(bands) == 3 and [b["runs"] for b in bands] == [51, 51, 51]
    assert "airfoil.slot_drag" not in tables
    for key, t in tables.items():
        assert np.all(np.diff(t["lift_coefficient"]) > 0)
        for k, change in enumerate(demo.TRUTH_BY_LIFT):
            truth = dict(demo.TRUTH, **change)[key]
            assert abs(t["value"][k] - truth) <= 4 * t["stderr"][k] + 1e-12, (key, k)
    # the band means sit near each angle's jet-off lift plus the mean blowing lift
    for b, level in zip(bands, demo.LIFT_LEVELS):
        assert level < b["lift_coefficient"] < level + 0.25


def test_one_angle_gives_no_bands():
    from mdao.studies.calibration import calibrate, read_runs
    _, data = _demo()
    result = calibrate(read_runs(data / "demo_runs.csv"))
    assert "lift_tables" not in result
    assert any("unblown lift coefficient spreads over" in n for n in result["notes"])
    one = calibrate(read_runs(data / "demo_runs_lift.csv"), lift_bands=1)
    assert "lift_tables" not in one


def test_banded_fragment_drives_a_case(tmp_path, cases_dir):
    """The fragment written from the banded fit reads back as lift tables; a case on it
    optimizes, and a segment whose lift leaves the tables is refused."""
    import tomllib
    from mdao.studies.calibration import calibrate_file
    _, data = _demo()
    calibrate_file(data / "demo_runs_lift.csv", tmp_path / "cal", plots=False)
    raw = tomllib.loads((cases_dir / "levee-inspector.toml").read_text())
    for key in ("jet_loss_factor", "freestream_assist"):
        raw["duct"].pop(key, None)
    for key in ("drag_clean", "slot_drag", "slot_drag_per_ratio", "drag_per_momentum",
                "drag_per_momentum_per_ratio", "momentum_coefficient_range"):
        raw["airfoil"].pop(key, None)
    raw.pop("uncertainty")
    raw["calibration"] = {"file": str(tmp_path / "cal" / "calibration.toml")}
    raw["aircraft"]["mass"] = "30 kg"            # transit C_L inside the tables (>= 0.56)
    raw["segment"][0]["speed"] = "22 m/s"
    raw["segment"][1]["speed"] = "17 m/s"
    case = parse_case(copy.deepcopy(raw), base=tmp_path)
    assert isinstance(case.value("airfoil.drag_per_momentum"), LiftTable)
    out = optimize(case)
    assert out.converged, out.message
    raw["segment"][0]["speed"] = "30 m/s"
    with pytest.raises(CaseError, match="outside the lift table"):
        parse_case(raw, base=tmp_path)
