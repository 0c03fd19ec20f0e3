"""The model's parameters and constraints are declared once, and everything reads them.

These tests check the declarations against the places that use them: the case schema, the
components' inputs, the problem builder and the names the project refuses.
"""
from pathlib import Path

import numpy as np
import pytest
from openmdao.api import ExecComp, Group, Problem

from mdao import constraints, parameters
from mdao.case import CaseError, load_case, parse_case
from mdao.case.schema import SCHEMA, SEGMENT
from mdao.system import BlownWingGroup, build_problem, moved_by_design

ROOT = Path(__file__).resolve().parents[1]
OLD_DRAG_KEY = "_".join(("thrust", "leverage"))   # refused; spelt in parts so that it appears
                                                  # nowhere in the project's text


def _raw(case_path):
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib
    return tomllib.loads(Path(case_path).read_text())


def test_every_parameter_is_a_case_key_with_its_declared_range():
    for p in parameters.PARAMETERS:
        spec = SEGMENT[p.field] if p.per_segment else SCHEMA[p.table][p.field]
        if spec.type in ("number", "quantity"):
            assert (spec.low, spec.high, spec.low_open, spec.high_open) == \
                (p.low, p.high, p.low_open, p.high_open), p.key
            assert spec.dimension == p.dimension, p.key


@pytest.mark.parametrize("examples", [False, True])
def test_one_default_per_parameter_in_every_component(cases_dir, examples):
    """Each input that a declared parameter feeds has the declared unit and starts at the
    declared value in both the per-discipline group and the fused chain, for every model; in
    the group, one the host must give starts unset (NaN) unless the examples option asks for
    the example (a per-discipline component alone keeps the example)."""
    for duct in ("lumped", "geometric"):
        for fan in ("constant", "map"):
            for fused in (False, True):
                prob = Problem(reports=False)
                prob.model.add_subsystem("wing", BlownWingGroup(
                    num_nodes=3, duct_model=duct, fan_model=fan, fused=fused,
                    examples=examples), promotes=["*"])
                prob.setup()
                prob.final_setup()
                meta = prob.model.get_io_metadata(iotypes="input", metadata_keys=["units", "val"],
                                                  return_rel_names=False)
                seen = set()
                for path, m in meta.items():
                    name = path.rsplit(".", 1)[-1]
                    if name not in parameters.BY_NAME:
                        continue
                    p = parameters.BY_NAME[name]
                    assert m["units"] == p.unit, (path, m["units"], p.unit)
                    example = np.ravel(np.asarray(p.start_value, float))[:1]
                    expected = example
                    if p.host_gives and not examples:
                        expected = np.full_like(expected, np.nan)
                    np.testing.assert_array_equal(prob.get_val(name).ravel()[:1], expected,
                                                  err_msg=path)
                    np.testing.assert_array_equal(np.asarray(m["val"]).ravel()[:1],
                                                  expected if fused else example, err_msg=path)
                    seen.add(name)
                used = {p.name for p in parameters.chain_parameters(duct, fan)
                        if fused or not p.fused_only}
                assert used <= seen, (duct, fan, fused, used - seen)


def test_case_defaults_come_from_the_declarations(cases_dir):
    case = load_case(cases_dir / "coastal-patrol.toml")
    raw = _raw(cases_dir / "coastal-patrol.toml")
    for p in parameters.chain_parameters("geometric", "map", per_segment=False):
        if p.field not in raw.get(p.table, {}) and p.default not in (parameters.REQUIRED, None):
            assert case.value(p.key) == p.default, p.key


def test_old_drag_key_is_refused_with_the_new_name(cases_dir):
    raw = _raw(cases_dir / "survey-drone.toml")
    raw["airfoil"][OLD_DRAG_KEY] = raw["airfoil"].pop("drag_per_momentum")
    with pytest.raises(CaseError, match="airfoil.drag_per_momentum"):
        parse_case(raw, base=cases_dir)


def test_old_drag_name_appears_nowhere():
    """Not in the package, tests, docs, cases or benchmarks (nor in any spelling with a
    space)."""
    hits = []
    for path in ROOT.rglob("*"):
        if any(part in (".git", ".ci-venv", "build") or part.endswith(".egg-info")
               for part in path.parts) or not path.is_file():
            continue
        if path.suffix not in (".py", ".md", ".toml", ".csv", ".txt", ".cfg"):
            continue
        text = path.read_text(encoding="utf-8", errors="ignore").lower()
        if OLD_DRAG_KEY in text or OLD_DRAG_KEY.replace("_", " ") in text:
            hits.append(str(path.relative_to(ROOT)))
    assert hits == []


def test_fan_speed_connects_to_an_rpm_input():
    """An aircraft model that wants shaft speed in rpm connects to the fan's output."""
    prob = Problem(reports=False)
    model = prob.model
    model.add_subsystem("wing", BlownWingGroup(num_nodes=2, duct_model="geometric",
                                               fan_model="map", fused=False, examples=True))
    model.add_subsystem("host", ExecComp("y = x", x={"units": "rpm", "shape": 2},
                                         y={"units": "rpm", "shape": 2}))
    model.connect("wing.fan_speed", "host.x")
    prob.setup()
    prob.run_model()
    rev_s = prob.get_val("wing.fan_speed", units="rev/s")
    np.testing.assert_allclose(prob.get_val("host.y"), 60.0 * rev_s, rtol=1e-14)


@pytest.mark.parametrize("name", ["survey-drone.toml", "coastal-patrol.toml"])
def test_problem_carries_exactly_the_declared_constraints(cases_dir, name):
    case = load_case(cases_dir / name)
    prob = build_problem(case)
    cons = prob.model.get_constraints()
    dvs = prob.model.get_design_vars()
    # a fixed duct's angles are not given to the optimizer (the optimum's check reads them)
    declared = [c for c in constraints.applicable(case) if moved_by_design(c, case)]
    want_cons = {c.quantity for c in declared if not c.design_variable}
    want_dvs = {c.quantity for c in declared if c.design_variable}
    assert {k.rsplit(".", 1)[-1] for k in cons} == want_cons
    assert {k.rsplit(".", 1)[-1] for k in dvs} == want_dvs
    for c in declared:
        lower, upper = constraints.bounds(c, case)
        meta = (dvs if c.design_variable else cons)[c.quantity]
        scale = meta["scaler"] if meta["scaler"] is not None else 1.0
        adder = meta["adder"] if meta["adder"] is not None else 0.0
        if c.equals is not None:
            assert meta["equals"] == pytest.approx((c.equals + adder) * scale)
            continue
        if lower is not None:
            assert meta["lower"] == pytest.approx((lower + adder) * scale), c.name
        if upper is not None:
            assert meta["upper"] == pytest.approx((upper + adder) * scale), c.name


def test_every_constraint_bound_is_a_case_key():
    for c in constraints.CONSTRAINTS:
        for spec in (c.lower, c.upper):
            if spec is None or isinstance(spec, float):
                continue
            key = spec[:-3] if spec.endswith("]") else spec
            table, field = key.split(".")
            assert field in SCHEMA[table], (c.name, key)


def test_margins_sign_and_activity(cases_dir):
    """A jet Mach number exactly at the limit is active, above it broken, below it slack; a
    non-blowing segment is not constrained."""
    case = load_case(cases_dir / "coastal-patrol.toml")
    limit = case.slot["max_jet_mach"]
    n = len(case.segments)
    jet = constraints.BY_NAME["jet Mach limit"]
    mach = np.full(n, 0.5 * limit)
    mach[0] = limit
    mach[1] = 1.1 * limit
    m = constraints.margin(jet, case, {"jet_mach": mach})
    assert m[0] == 0.0 and m[1] == pytest.approx(-0.1) and m[2] == pytest.approx(0.5)
    off = np.flatnonzero(~case.blowing)
    assert off.size and np.all(np.isnan(m[off]))



def test_per_point_margins_do_not_depend_on_the_other_points(cases_dir):
    """The energy consistency's bound is 0, so its margin is divided by the air power: by
    default the largest over the points given (one design's segments, as the optimizer scales
    it), with ``per_point`` each point's own. A point 1e-11 W short of the balance with 1 W of
    air power holds within 1e-12 beside a point of 1 MW by default, not per point; per point,
    its margin is the same alone and beside the other (what a search over candidate points
    needs)."""
    case = load_case(cases_dir / "coastal-patrol.toml")
    energy = constraints.BY_NAME["energy consistency"]
    both = {"energy_margin": np.array([-1e-11, 5.0]), "air_power": np.array([1.0, 1e6])}
    alone = {k: v[:1] for k, v in both.items()}
    batch = constraints.margin(energy, case, both, blowing=True)
    assert batch[0] == pytest.approx(-1e-17)
    m_both = constraints.margin(energy, case, both, blowing=True, per_point=True)
    m_alone = constraints.margin(energy, case, alone, blowing=True, per_point=True)
    assert m_both[0] == m_alone[0] == pytest.approx(-1e-11)
    assert m_both[1] == pytest.approx(5e-6)
    assert constraints.holds(case, both, [energy], tol=1e-12, blowing=True)[0]
    assert not constraints.holds(case, both, [energy], tol=1e-12, blowing=True,
                                 per_point=True)[0]

def test_case_file_page_lists_every_parameter_and_setting():
    """docs/case-files.md has a row for every declared parameter and every setting."""
    text = (ROOT / "docs" / "case-files.md").read_text(encoding="utf-8")
    missing = [p.key for p in parameters.PARAMETERS if f"| `{p.field}` |" not in text]
    for table, entries in SCHEMA.items():
        missing += [f"{table}.{k}" for k in entries if f"| `{k}` |" not in text]
    assert missing == []


def test_a_parameter_the_models_do_not_use_is_refused(cases_dir):
    """The lumped duct's wetted-area ratio in a geometric-duct case would be ignored: refused,
    naming the key and the models."""
    raw = _raw(cases_dir / "coastal-patrol.toml")
    raw.setdefault("mass", {})["duct_wetted_ratio"] = 2.0
    with pytest.raises(CaseError, match=r"mass\.duct_wetted_ratio is given but not used with "
                                        r"duct\.model = \"geometric\""):
        parse_case(raw, base=cases_dir)


def test_fan_map_whose_efficiency_leaves_zero_to_one_is_refused(cases_dir):
    """A map whose efficiency parabola falls below zero inside its own flow range (a steep
    falloff) would price negative fan power: refused on load, naming the keys."""
    raw = _raw(cases_dir / "coastal-patrol.toml")
    raw["fan"]["efficiency_falloff"] = 12.0
    # by hand: eta = 0.78 (1 - 12 (phi/0.36 - 1)^2) is -1.56 at phi 0.18 and -1.827 at 0.55
    with pytest.raises(CaseError, match=r"fan map: the efficiency falls to -1\.83 at flow "
                                        r"coefficient 0\.55"):
        parse_case(raw, base=cases_dir)
