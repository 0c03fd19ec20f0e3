"""Tests of the calibration from designer runs (mdao.studies.calibration, mdao.report.calibration).

Outside references: the NIST Statistical Reference Datasets' certified values for the Longley
regression; statsmodels OLS (test-only) for every fit statistic on the demo runs; the ISA table of
ICAO Doc 7488 / U.S. Standard Atmosphere 1976 for the viscosity behind the Reynolds number.
"""
import importlib.util
import json
import os
import warnings
from pathlib import Path

import numpy as np
import pytest

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

from mdao.case.fragment import FragmentError

from mdao.report.calibration import format_summary
from mdao.studies.calibration import (CAUTION, CalibrationError, CalibrationWarning, calibrate,
                                      calibrate_file, fragment_text, least_squares, load_fragment,
                                      read_runs)
from mdao.studies.calibration.runs import derived

ROOT = Path(__file__).resolve().parents[1]
DEMO_CSV = ROOT / "cases" / "data" / "demo_runs.csv"


def _demo_module():
    spec = importlib.util.spec_from_file_location("make_demo_runs",
                                                  ROOT / "cases" / "data" / "make_demo_runs.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


DEMO = _demo_module()


# ---------------------------------------------------------------- least-squares core: NIST Longley
# NIST StRD, linear least squares, Longley (higher difficulty), certified values,
# https://www.itl.nist.gov/div898/strd/lls/data/Longley.shtml. Typed in from memory and checked
# digit by digit against the copy in statsmodels' own test suite
# (statsmodels/regression/tests/results/results_regression.py, class Longley).
LONGLEY_PARAMS = [-3482258.63459582, 15.0618722713733, -0.358191792925910e-01,
                  -2.02022980381683, -1.03322686717359, -0.511041056535807e-01,
                  1829.15146461355]
LONGLEY_STDERR = [890420.383607373, 84.9149257747669, 0.334910077722432e-01,
                  0.488399681651699, 0.214274163161675, 0.226073200069370,
                  455.478499142212]
LONGLEY_RESIDUAL_SD = 304.854073561965
LONGLEY_R2 = 0.995479004577296


def test_longley_certified_values():
    """NIST StRD Longley: coefficients to 1e-7 relative, standard errors to 1e-6 relative."""
    from statsmodels.datasets import longley

    data = longley.load_pandas()
    x = np.column_stack([np.ones(len(data.exog)), data.exog.to_numpy(float)])
    fit = least_squares(x, data.endog.to_numpy(float))
    np.testing.assert_allclose(fit["params"], LONGLEY_PARAMS, rtol=1e-7, atol=0)
    np.testing.assert_allclose(fit["stderr"], LONGLEY_STDERR, rtol=1e-6, atol=0)
    assert fit["residual_std"] == pytest.approx(LONGLEY_RESIDUAL_SD, rel=1e-7)
    assert fit["r2"] == pytest.approx(LONGLEY_R2, rel=1e-9)
    assert fit["r2_kind"] == "centred"
    assert fit["dof"] == 9


def test_least_squares_rejects_rank_deficiency():
    x = np.column_stack([np.ones(6), np.arange(6.0), 2 * np.arange(6.0)])
    with pytest.raises(CalibrationError, match="rank-deficient"):
        least_squares(x, np.arange(6.0))


# ---------------------------------------------------------------- statsmodels on the demo runs
def _design_matrices(runs):
    d = derived(runs)
    on = d["jet_on"]
    cmu, r = d["momentum_coefficient"], d["slot_ratio"]
    return {
        "duct": (np.column_stack([d["jet_dynamic_pressure"], -d["dynamic_pressure"]])[on],
                 runs["fan_pressure_rise"][on]),
        "drag": (np.column_stack([np.ones_like(cmu), r, cmu, r * cmu]),
                 runs["drag_coefficient"]),
        "lift": (np.column_stack([np.ones_like(cmu), cmu]), runs["lift_coefficient"]),
    }


@pytest.mark.parametrize("fit_name", ["duct", "drag", "lift"])
def test_fit_statistics_match_statsmodels(fit_name):
    """Each demo fit against statsmodels OLS: params, bse, rsquared (centred with a constant,
    uncentred without, as statsmodels does), conf_int, residual std, studentized residuals."""
    import statsmodels.api as sm

    runs = read_runs(DEMO_CSV)
    result = calibrate(runs)
    fit = result["fits"][fit_name]
    x, y = _design_matrices(runs)[fit_name]
    ols = sm.OLS(y, x).fit()
    names = fit["covariance"]["parameters"]
    params = np.array([fit["parameters"][n]["value"] for n in names])
    bse = np.array([fit["parameters"][n]["stderr"] for n in names])
    ci = np.array([fit["parameters"][n]["ci95"] for n in names])
    np.testing.assert_allclose(params, ols.params, rtol=1e-10)
    np.testing.assert_allclose(bse, ols.bse, rtol=1e-9)
    np.testing.assert_allclose(ci, ols.conf_int(alpha=0.05), rtol=1e-9)
    np.testing.assert_allclose(fit["covariance"]["matrix"], ols.cov_params(), rtol=1e-8,
                               atol=1e-14 * np.abs(ols.cov_params()).max())
    assert fit["r2"] == pytest.approx(ols.rsquared, rel=1e-12)
    assert fit["residual_std"] == pytest.approx(np.sqrt(ols.scale), rel=1e-10)
    assert fit["dof"] == ols.df_resid
    influence = ols.get_influence()
    np.testing.assert_allclose(fit["studentized_external"],
                               influence.resid_studentized_external, rtol=1e-8)
    # statsmodels' outlier test uses the externally studentized residual too
    np.testing.assert_allclose(fit["studentized_external"], ols.outlier_test()[:, 0], rtol=1e-8)
    flagged = np.flatnonzero(np.abs(influence.resid_studentized_external) > 3)
    assert [o["row"] for o in fit["outliers"]] == (np.asarray(fit["rows"])[flagged]).tolist()


def test_outlier_flagged_with_row_and_kept():
    runs = DEMO.synthetic_runs(np.random.default_rng(DEMO.SEED))
    runs["drag_coefficient"] = runs["drag_coefficient"].copy()
    runs["drag_coefficient"][16] += 0.01  # 20 noise standard deviations: data row 17
    result = calibrate(runs)
    drag = result["fits"]["drag"]
    assert [o["row"] for o in drag["outliers"]] == [17]
    assert drag["outliers"][0]["studentized_external"] > 3
    assert drag["runs"] == len(runs["speed"])  # flagged, not dropped
    assert "row 17" in format_summary(result)


# ---------------------------------------------------------------- recovery and coverage
def test_demo_recovers_the_stated_truth():
    """The demo file (script-generated from TRUTH) gives intervals that contain the truth, with no
    plausibility warning."""
    with warnings.catch_warnings():
        warnings.simplefilter("error", CalibrationWarning)
        result = calibrate(read_runs(DEMO_CSV))
    assert result["warnings"] == []
    assert set(result["constants"]) == set(DEMO.TRUTH)
    for key, truth in DEMO.TRUTH.items():
        low, high = result["constants"][key]["ci95"]
        assert low <= truth <= high, key
    assert result["constants"]["airfoil.slot_drag"].get("fixed") is True


def test_demo_file_is_what_the_script_makes(tmp_path):
    """The committed CSVs are exactly the script's output (so the stated truth is their truth)."""
    paths = DEMO.main(str(tmp_path))
    assert Path(paths[0]).read_bytes() == DEMO_CSV.read_bytes()
    assert Path(paths[1]).read_bytes() == (DEMO_CSV.parent / "demo_runs_lift.csv").read_bytes()


def test_interval_coverage_over_seeded_repetitions():
    """95 % intervals cover the true constants in 90-99 % of 400 seeded repetitions."""
    repeats = 400
    runs = DEMO.synthetic_runs(np.random.default_rng(2024), repeats=repeats)
    hits = {key: 0 for key in DEMO.TRUTH if key != "airfoil.slot_drag"}
    for i in range(repeats):
        result = calibrate({k: (v[i] if v.ndim == 2 else v) for k, v in runs.items()})
        for key in hits:
            low, high = result["constants"][key]["ci95"]
            hits[key] += low <= DEMO.TRUTH[key] <= high
    coverage = {key: count / repeats for key, count in hits.items()}
    assert all(0.90 <= c <= 0.99 for c in coverage.values()), coverage


def test_clean_drag_given_single_slot_ratio():
    """With `drag_coefficient_clean` and one slot height: slot_drag and drag_per_momentum fitted,
    drag_clean the mean of the column."""
    rng = np.random.default_rng(11)
    truth = dict(DEMO.TRUTH, **{"airfoil.slot_drag": 0.021})
    runs = DEMO.synthetic_runs(rng, truth=truth)
    keep = runs["slot_height"] == runs["slot_height"][0]
    runs = {k: v[keep] for k, v in runs.items()}
    clean = truth["airfoil.drag_clean"] + 2e-4 * rng.standard_normal(keep.sum())
    runs["drag_coefficient_clean"] = clean
    result = calibrate(runs)
    c = result["constants"]
    assert "airfoil.slot_drag_per_ratio" not in c
    assert c["airfoil.drag_clean"]["value"] == pytest.approx(clean.mean(), rel=1e-14)
    assert c["airfoil.drag_clean"]["stderr"] == pytest.approx(clean.std(ddof=1)
                                                              / np.sqrt(clean.size), rel=1e-12)
    r_s = runs["slot_height"][0] / runs["chord"][0]
    slope = truth["airfoil.drag_per_momentum"] + truth["airfoil.drag_per_momentum_per_ratio"] * r_s
    penalty = truth["airfoil.slot_drag"] + truth["airfoil.slot_drag_per_ratio"] * r_s
    assert c["airfoil.drag_per_momentum"]["value"] == pytest.approx(slope, abs=4 * c[
        "airfoil.drag_per_momentum"]["stderr"])
    assert c["airfoil.slot_drag"]["value"] == pytest.approx(penalty, abs=4 * c[
        "airfoil.slot_drag"]["stderr"])


# ---------------------------------------------------------------- plausibility warnings
def test_plausibility_warnings_fire_far_off():
    """Rules of thumb (common practice, no source): K_j ~1.3, K_inf ~1, slope ~-1.5, jet-off over
    clean ~3. A section far outside all four warns for each, and still returns a result."""
    truth = dict(DEMO.TRUTH, **{"duct.jet_loss_factor": 3.4, "duct.freestream_assist": 0.05,
                                "airfoil.drag_per_momentum": -6.5,
                                "airfoil.slot_drag_per_ratio": 12.0})
    runs = DEMO.synthetic_runs(np.random.default_rng(5), truth=truth)
    with pytest.warns(CalibrationWarning) as record:
        result = calibrate(runs)
    text = " | ".join(result["warnings"])
    for label in ("jet loss factor K_j", "freestream assist K_inf", "drag per momentum coefficient",
                  "jet-off over clean"):
        assert label in text
    assert len(record) == len(result["warnings"])
    assert result["fits"]["duct"]["warnings"] and result["fits"]["drag"]["warnings"]


# ---------------------------------------------------------------- identifiability
def _runs_subset(keep, runs=None):
    runs = runs or DEMO.synthetic_runs(np.random.default_rng(3))
    return {k: v[keep] for k, v in runs.items()}


def test_freestream_never_varies_is_an_error():
    runs = DEMO.synthetic_runs(np.random.default_rng(3))
    keep = (np.isclose(runs["speed"], 70 / 3.6)) & (runs["altitude"] == 0)
    keep |= np.isclose(runs["speed"], 70 / 3.6) & (runs["mass_flow"] == 0)
    runs["altitude"] = np.zeros_like(runs["altitude"])
    with pytest.raises(CalibrationError, match=r"`speed` \(or `density`/`altitude`\) must vary"):
        calibrate(_runs_subset(keep, runs))


def test_jet_proportional_to_freestream_is_an_error():
    """Same C_mu and slot ratio at every speed: (V_j/V)^2 constant, K_j and K_inf inseparable."""
    runs = DEMO.synthetic_runs(np.random.default_rng(3))
    r_s = runs["slot_height"] / runs["chord"]
    d = derived(runs)
    keep = np.isclose(r_s, r_s[0]) & (np.isclose(d["momentum_coefficient"], 0.06)
                                      | (runs["mass_flow"] == 0))
    assert keep.sum() >= 4
    with pytest.raises(CalibrationError, match="proportional.*must vary independently"):
        calibrate(_runs_subset(keep, runs))


def test_one_slot_ratio_without_clean_drag_is_an_error():
    runs = DEMO.synthetic_runs(np.random.default_rng(3))
    keep = runs["slot_height"] == runs["slot_height"][0]
    with pytest.raises(CalibrationError, match="drag_coefficient_clean.*slot_height"):
        calibrate(_runs_subset(keep, runs))


# ---------------------------------------------------------------- CSV reading
def _write(path, header, rows):
    path.write_text("\n".join([",".join(header)] + [",".join(map(str, r)) for r in rows]) + "\n")
    return path


def _demo_table():
    lines = DEMO_CSV.read_text().splitlines()
    return lines[0].split(","), [line.split(",") for line in lines[1:]]


def test_units_converted_to_si(tmp_path):
    runs = read_runs(DEMO_CSV)
    header, rows = _demo_table()
    assert runs["speed"][0] == pytest.approx(float(rows[0][0]) / 3.6, rel=1e-15)
    assert runs["altitude"][1] == pytest.approx(float(rows[1][1]) * 0.3048, rel=1e-15)
    assert runs["slot_height"][0] == pytest.approx(float(rows[0][4]) * 1e-3, rel=1e-15)
    assert runs["mass_flow"][0] == pytest.approx(float(rows[0][6]) * 1e-3, rel=1e-15)
    # volume flow and density columns give the same result as mass flow and altitude
    d = derived(runs)
    alt = dict(runs, volume_flow=runs["mass_flow"] / d["density"], density=d["density"])
    del alt["mass_flow"]
    d2 = derived(alt)
    np.testing.assert_allclose(d2["momentum_coefficient"], d["momentum_coefficient"], rtol=1e-13)


def test_reynolds_with_density_only_uses_sea_level_viscosity():
    """ISA sea level (ICAO Doc 7488, Sutherland's law): mu = 1.78938e-5 Pa s at 288.15 K."""
    runs = {"speed": [30.0], "density": [1.1], "chord": [0.4], "span": [1.0],
            "slot_height": [0.004], "mass_flow": [0.1], "fan_pressure_rise": [100.0],
            "drag_coefficient": [0.01]}
    d = derived(runs)
    assert d["reynolds"][0] == pytest.approx(1.1 * 30.0 * 0.4 / 1.78938e-5, rel=2e-6)
    assert any("288.15 K" in note for note in d["notes"])


BAD = {
    "missing column": (lambda h, r: ([c for c in h if not c.startswith("chord")],
                                     [x[:2] + x[3:] for x in r]), r"missing column 'chord'"),
    "unknown unit": (lambda h, r: (["speed [knotz]"] + h[1:], r), r"column 'speed'.*knotz"),
    "wrong dimension": (lambda h, r: (h[:4] + ["slot_height [kg]"] + h[5:], r),
                        r"column 'slot_height'.*dimension"),
    "no unit on a dimensional column": (lambda h, r: (["speed"] + h[1:], r),
                                        r"column 'speed'.*no unit"),
    "NaN": (lambda h, r: (h, r[:3] + [r[3][:7] + ["nan"] + r[3][8:]] + r[4:]),
            r"row 4 \(line 5\), column 'drag_coefficient'"),
    "blank": (lambda h, r: (h, r[:5] + [r[5][:5] + [""] + r[5][6:]] + r[6:]),
              r"row 6 \(line 7\), column 'fan_pressure_rise': blank"),
    "non-number": (lambda h, r: (h, [r[0][:2] + ["abc"] + r[0][3:]] + r[1:]),
                   r"row 1 \(line 2\), column 'chord': 'abc'"),
    "duplicate header": (lambda h, r: (h + [h[0]], [x + [x[0]] for x in r]),
                         r"duplicate column 'speed'"),
    "unknown column": (lambda h, r: (h + ["temperature [K]"], [x + ["290"] for x in r]),
                       r"unknown column 'temperature'"),
    "too few runs": (lambda h, r: (h, r[:3]), r"too few runs.*constants \+ 2"),
    "zero speed": (lambda h, r: (h, r[:2] + [["0"] + r[2][1:]] + r[3:]),
                   r"row 3, column 'speed'.*> 0"),
    "short row": (lambda h, r: (h, r[:1] + [r[1][:-1]] + r[2:]), r"row 2 \(line 3\): 8 cells"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_csv_names_column_or_row(tmp_path, case):
    make, pattern = BAD[case]
    header, rows = make(*_demo_table())
    path = _write(tmp_path / "bad.csv", header, rows)
    with pytest.raises(CalibrationError, match=pattern):
        read_runs(path)


def test_negative_density_names_row_and_column(tmp_path):
    header, rows = _demo_table()
    header = ["density [kg/m^3]"] + header[:1] + header[2:]
    rows = [["1.2"] + r[:1] + r[2:] for r in rows]
    rows[6][0] = "-1.2"
    with pytest.raises(CalibrationError, match=r"row 7, column 'density'.*must be > 0"):
        read_runs(_write(tmp_path / "bad.csv", header, rows))


def test_comments_and_blank_lines_are_skipped(tmp_path):
    header, rows = _demo_table()
    text = ("# invented runs\n\n" + ",".join(header) + "\n"
            + "\n".join(",".join(r) for r in rows) + "\n\n")
    (tmp_path / "c.csv").write_text(text)
    np.testing.assert_array_equal(read_runs(tmp_path / "c.csv")["speed"],
                                  read_runs(DEMO_CSV)["speed"])


# ---------------------------------------------------------------- outputs
def test_calibrate_file_outputs_and_toml_round_trip(tmp_path):
    out = tmp_path / "out"
    result = calibrate_file(DEMO_CSV, out)
    names = sorted(os.listdir(out))
    assert names == ["calibration.json", "calibration.toml", "drag_momentum.png",
                     "duct_collapse.png", "residuals.png"]  # and no temporary files left
    assert sorted(os.listdir(tmp_path)) == ["out"]
    for png in names[2:]:
        assert (out / png).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    stored = json.loads((out / "calibration.json").read_text())
    assert stored["constants"] == result["constants"]
    assert len(stored["source"]["sha256"]) == 64
    for key, entry in stored["constants"].items():
        assert set(entry) >= {"value", "stderr", "ci95"}
    text = (out / "calibration.toml").read_text()
    assert text.startswith("# blownwing calibration fragment (generated)")
    data = tomllib.loads(text)
    assert tomllib.loads(fragment_text(result, result["source"])) == data
    for key, entry in result["constants"].items():
        section, name = key.split(".")
        assert data[section][name] == entry["value"]  # exact: repr round-trips floats
    unc = data["uncertainty"]
    assert unc["parameters"] == result["covariance"]["parameters"]
    assert unc["covariance"] == result["covariance"]["matrix"]
    assert unc["stderr"] == [result["constants"][k]["stderr"] for k in unc["parameters"]]
    cov = np.array(unc["covariance"])
    np.testing.assert_array_equal(cov, cov.T)
    i, j = unc["parameters"].index("duct.jet_loss_factor"), unc["parameters"].index(
        "airfoil.drag_per_momentum")
    assert cov[i, j] == 0.0  # separate fits
    assert data["airfoil"]["momentum_coefficient_range"] == result["validity"][
        "momentum_coefficient"]
    assert data["validity"]["speed_range"][0].endswith(" m/s")

    fragment = load_fragment(out / "calibration.toml")
    assert fragment["constants"] == {k: v["value"] for k, v in result["constants"].items()}
    assert fragment["stderr"] == {k: v["stderr"] for k, v in result["constants"].items()}
    assert fragment["covariance"]["matrix"] == result["covariance"]["matrix"]
    assert fragment["validity"]["speed_range"] == result["validity"]["speed"]
    assert fragment["validity"]["slot_ratio_range"] == result["validity"]["slot_ratio"]


def test_calibrate_file_without_plots(tmp_path):
    calibrate_file(DEMO_CSV, tmp_path, plots=False)
    assert sorted(os.listdir(tmp_path)) == ["calibration.json", "calibration.toml"]


def test_load_fragment_rejects_inconsistent_uncertainty(tmp_path):
    result = calibrate(read_runs(DEMO_CSV))
    text = fragment_text(result).replace('parameters = ["duct.jet_loss_factor", ',
                                         'parameters = [')
    (tmp_path / "f.toml").write_text(text)
    with pytest.raises(FragmentError, match="uncertainty.parameters"):
        load_fragment(tmp_path / "f.toml")


def test_summary_table():
    result = calibrate(read_runs(DEMO_CSV))
    text = format_summary(result)
    lines = text.splitlines()
    assert lines[-1] == CAUTION
    # each fitted constant's row: the fit's value and standard error, and the 95 % interval
    # value -/+ t(0.975, dof of its fit) * stderr (Student's t quantile from scipy)
    from scipy import stats
    fitted = 0
    for fit in result["fits"].values():
        t = stats.t.ppf(0.975, fit["dof"])
        for key, entry in fit["parameters"].items():
            if key not in result["constants"] or entry.get("fixed"):
                continue        # the lift fit's intercept is not a model constant
            row = next(line for line in lines if line.split()[:1] == [key])
            value, stderr, low, high = (float(x) for x in
                                        row.replace("[", " ").replace(",", " ")
                                        .replace("]", " ").split()[1:5])
            assert value == pytest.approx(entry["value"], rel=1e-4)
            assert stderr == pytest.approx(entry["stderr"], rel=1e-2)
            assert low == pytest.approx(entry["value"] - t * entry["stderr"], rel=1e-4)
            assert high == pytest.approx(entry["value"] + t * entry["stderr"], rel=1e-4)
            fitted += 1
    assert fitted == sum(not e.get("fixed") for e in result["constants"].values()) >= 6
    # each fit's row: runs, degrees of freedom and R^2 as computed
    for name, fit in result["fits"].items():
        row = next(line for line in lines if line.split()[:1] == [name]).split()
        assert (int(row[1]), int(row[2])) == (fit["runs"], fit["dof"])
        assert float(row[3]) == pytest.approx(fit["r2"], abs=6e-6)


# ---------------------------------------------------------------- energy balance (first law)
# Drela, M. "Power balance in aerodynamic flows", AIAA Journal 47(7), 2009 (from memory): in
# steady flight a section cannot return more net thrust power -D V than its fans put into the air,
# Q dP_fan; over q S V: C_D + Q dP_fan / (q S V) >= 0.
#: A section whose drag per momentum coefficient (-1, no slot-ratio term) keeps the balance over
#: the demo's test matrix.
PHYSICAL_TRUTH = dict(DEMO.TRUTH, **{"airfoil.drag_per_momentum": -1.0,
                                     "airfoil.drag_per_momentum_per_ratio": 0.0})


def _hand_margin(drag, mass_flow, fan_rise, density, speed, chord, span):
    """C_D + Q dP / (q S V) with Q = m_dot / rho, q = rho V^2 / 2, S = chord span."""
    return drag + (mass_flow / density) * fan_rise / (0.5 * density * speed ** 2 * chord * span
                                                      * speed)


def test_energy_balance_flags_the_run_that_breaks_it():
    """One run's drag made negative enough is flagged by its row, with the hand margin, and kept."""
    runs = DEMO.synthetic_runs(np.random.default_rng(17), truth=PHYSICAL_TRUTH)
    runs["density"] = derived(runs)["density"]  # a density column the hand calculation reads
    clean = calibrate(runs)["energy_balance"]
    assert clean["broken_runs"] == [] and clean["warnings"] == []
    assert clean["fitted_model"]["worst"]["margin"] > 0
    i = 13                                      # data row 14: 110 km/h, C_mu 0.03
    assert runs["mass_flow"][i] > 0
    runs["drag_coefficient"] = runs["drag_coefficient"].copy()
    runs["drag_coefficient"][i] = -0.2
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CalibrationWarning)
        result = calibrate(runs)
    balance = result["energy_balance"]
    hand = _hand_margin(-0.2, *(runs[k][i] for k in ("mass_flow", "fan_pressure_rise", "density",
                                                      "speed", "chord", "span")))
    assert hand < 0
    assert [b["row"] for b in balance["broken_runs"]] == [i + 1]
    assert balance["broken_runs"][0]["margin"] == pytest.approx(hand, rel=1e-12)
    assert balance["broken_runs"][0]["drag_coefficient"] == -0.2
    assert result["fits"]["drag"]["runs"] == len(runs["speed"])  # flagged, not dropped
    assert balance["thrust_power_ceiling"] == 1.0
    text = format_summary(result)
    assert f"WARNING: 1 of {int(np.count_nonzero(runs['mass_flow']))} jet-on runs" in text
    assert f"row {i + 1} ({hand:.3g})" in text


def test_demo_truth_keeps_the_energy_balance():
    """Every noise-free jet-on run of the demo's test matrix, made from the stated TRUTH, keeps
    the balance with a margin of at least 0.002 (checked with the calibration's own margin)."""
    from mdao.studies.calibration.energy import run_margins

    runs = DEMO.synthetic_runs(np.random.default_rng(0), noise={k: 0.0 for k in DEMO.NOISE})
    d = derived(runs)
    margin, _ = run_margins(runs, d)
    on = np.asarray(d["jet_on"], bool)
    assert on.sum() == 48
    assert margin[on].min() >= 0.002
    # the section still reduces drag with blowing: the slope is negative at every slot ratio
    slope = (DEMO.TRUTH["airfoil.drag_per_momentum"]
             + DEMO.TRUTH["airfoil.drag_per_momentum_per_ratio"] * runs["slot_height"] / DEMO.CHORD)
    assert np.all(slope < 0)


def test_energy_balance_of_the_demo_runs(tmp_path):
    """Every demo run against the hand calculation from the CSV's own cells (units converted by
    hand; density from the ISA troposphere, ICAO Doc 7488: geopotential H = r0 z / (r0 + z),
    r0 = 6356766 m, T = 288.15 - 0.0065 H, p = 101325 (T/288.15)^(g0/(R L)), rho = p/(R T),
    R = 287.05287, g0 = 9.80665); no demo run breaks the balance."""
    from mdao.studies.calibration.energy import run_margins

    header, rows = _demo_table()
    col = {name.split(" [")[0]: np.array([float(r[k]) for r in rows])
           for k, name in enumerate(header)}
    geometric = col["altitude"] * 0.3048
    temperature = 288.15 - 0.0065 * 6356766.0 * geometric / (6356766.0 + geometric)
    pressure = 101325.0 * (temperature / 288.15) ** (9.80665 / (287.05287 * 0.0065))
    density = pressure / (287.05287 * temperature)
    hand = _hand_margin(col["drag_coefficient"], col["mass_flow"] * 1e-3, col["fan_pressure_rise"],
                        density, col["speed"] / 3.6, col["chord"], col["span"])
    on = col["mass_flow"] > 0
    runs = read_runs(DEMO_CSV)
    margin, _ = run_margins(runs, derived(runs))
    np.testing.assert_allclose(margin[on], hand[on], rtol=1e-9)
    assert hand[on].min() > 0

    result = calibrate_file(DEMO_CSV, tmp_path, plots=False)
    assert result["energy_balance"]["broken_runs"] == []
    assert result["energy_balance"]["warnings"] == []
    stored = json.loads((tmp_path / "calibration.json").read_text())
    assert stored["energy_balance"] == result["energy_balance"]
    assert result["energy_balance"]["jet_on_runs"] == int(np.count_nonzero(on))
    assert "jet-on runs return more net thrust power" not in format_summary(result)


def test_fitted_model_energy_check_on_the_demo():
    """The fitted model's margin c (a_j C^1.5 - a_r C^0.5) + C_D (c = 1) evaluated directly with
    the physics functions: positive over the calibrated range on a finer grid, the reported worst
    point's margin is the direct value there, and the broken share is that of the check's own
    grid (zero)."""
    from mdao.physics.airfoil import drag_coefficient
    from mdao.physics.duct import lumped_coefficients

    result = calibrate(read_runs(DEMO_CSV))
    c = {k: v["value"] for k, v in result["constants"].items()}

    def margin(cmu, r_s):
        a_j, a_r = lumped_coefficients(c["duct.jet_loss_factor"], c["duct.freestream_assist"], r_s)
        cd = drag_coefficient(cmu, r_s, c["airfoil.drag_clean"], c["airfoil.slot_drag"],
                              c["airfoil.slot_drag_per_ratio"], c["airfoil.drag_per_momentum"],
                              c["airfoil.drag_per_momentum_per_ratio"])
        return a_j * cmu ** 1.5 - a_r * cmu ** 0.5 + cd

    low, high = result["validity"]["momentum_coefficient"]
    r_low, r_high = result["validity"]["slot_ratio"]
    fine = margin(np.linspace(low, high, 1001)[:, None], np.linspace(r_low, r_high, 9)[None, :])
    fitted = result["energy_balance"]["fitted_model"]
    worst = fitted["worst"]
    warned = [w for w in result["energy_balance"]["warnings"] if "fitted model" in w]
    # the demo's fitted model keeps the balance over the whole calibrated range
    assert fine.min() > 0
    assert worst["margin"] > 0 and fitted["broken_share"] == 0.0 and not warned
    assert low <= worst["momentum_coefficient"] <= high
    assert r_low <= worst["slot_ratio"] <= r_high
    assert worst["margin"] == pytest.approx(
        float(margin(worst["momentum_coefficient"], worst["slot_ratio"])), rel=1e-12)
    # the finer grid holds the check's grid: its minimum is no larger, and close (slope |dm/dC|
    # below 2 here, spacing 9e-4)
    assert fine.min() - 1e-15 <= worst["margin"] <= fine.min() + 2e-3
    assert fitted["slot_ratios"][0] == r_low and fitted["slot_ratios"][-1] == r_high
    own = margin(np.linspace(low, high, fitted["momentum_coefficient_points"])[:, None],
                 np.array(fitted["slot_ratios"])[None, :])
    assert fitted["broken_share"] == pytest.approx(np.mean(own < 0), abs=1e-12)
