"""What people read: one vocabulary and one set of units in the console tables, review.md and
``many``; aligned tables for any name; rounded numbers; constraints in words; the optimizer's
own iteration count and a plain sentence (no SLSQP banner) when it stops early."""
import re
from pathlib import Path

import numpy as np
import pytest

from mdao.case import load_case
from mdao.optimum import evaluate_start_point, optimize
from mdao.optimum.solve import optimizer_iterations
from mdao.report.console import many_summary, segment_table, summary
from mdao.report.review import active_set_words, review_markdown
from mdao.studies.review import run_review
from mdao.studies.scaleout import run_many

CASES = Path(__file__).resolve().parents[1] / "cases"
#: An internal name of a vector entry, ``balance[0]``, ``energy_margin[2]``.
INTERNAL = re.compile(r"\w+\[\d+\]")
#: A decimal number in text (sign, digits, point, digits, exponent).
NUMBER = re.compile(r"(?<![\w.])-?(\d+\.?\d*)(?:e[-+]?\d+)?(?![\w.])")
LONG = "survey of the northern ridge, both valleys and back"


def _case(tmp, name, old=None, new=None):
    text = (CASES / name).read_text()
    if old is not None:
        assert text.count(old) == 1, old
        text = text.replace(old, new)
    path = Path(tmp) / f"edited-{name}"
    path.write_text(text)
    return load_case(path)


def _table(text):
    """The segment table's lines: header, unit row, rule, one row per segment."""
    lines = text.split("\n")
    start = next(i for i, line in enumerate(lines) if line.startswith("segment"))
    end = next(i for i in range(start, len(lines)) if not lines[i].strip()
               or lines[i].startswith("shaft power:"))
    return lines[start:end]


def _significant(digits):
    return len(digits.replace(".", "").lstrip("0").rstrip("0")) if "." in digits \
        else len(digits.lstrip("0").rstrip("0") or "0")


@pytest.mark.parametrize("name", ["survey-drone.toml", "coastal-patrol.toml"])
def test_long_segment_name_keeps_the_table_aligned(name, module_folder):
    """Column widths come from the content: with a 51-character segment name every line of
    the table (header, units, rule, rows) has the same width and every column ends at the
    same place in every row."""
    old = 'name = "survey"' if name == "survey-drone.toml" else 'name = "loiter"'
    case = _case(module_folder, name, old, f'name = "{LONG}"')
    outcome = evaluate_start_point(case)
    table = _table(segment_table(outcome, case))
    assert len(table) == 3 + len(case.segments)
    assert len({len(line) for line in table}) == 1, "\n".join(table)
    assert any(line.startswith(LONG + "  ") for line in table)
    # right-aligned columns: a cell's last character sits at a column end of the header
    ends = {m.end() for m in re.finditer(r"\S+(?: \S+)*", table[0])}
    for line in table[3:]:
        cells = [m.end() for m in re.finditer(r"\S+", line[len(LONG):])]
        assert {len(LONG) + c for c in cells} <= ends, line


def test_console_names_powers_and_constraints_in_words(module_folder):
    """Shaft and electric power always named; no internal constraint name; signs stated under
    the table; the energy in kWh (no joules)."""
    case = load_case(CASES / "coastal-patrol.toml")
    outcome = optimize(case)
    assert outcome.converged, outcome.message
    text = summary(outcome, case)
    assert not INTERNAL.search(text), INTERNAL.search(text)
    header = _table(text)[0]
    assert "shaft power" in header and "electric power" in header
    assert "fan power" not in text
    assert "negative: blowing costs energy" in text
    assert "kWh" in text and not re.search(r"\d J\b", text)
    # powers above 10 kW in kW, every power column in the same unit
    units = _table(text)[1].split()
    assert units.count("kW") == 4 and "W" not in units
    assert "binding: energy consistency" in text


@pytest.fixture(scope="module")
def review_md(module_folder):
    """review.md of the coastal patrol (geometric duct: angle limits in the case) at a few
    samples and a coarse map."""
    case = load_case(CASES / "coastal-patrol.toml")
    data = run_review(case, samples=20, map_points=5)
    assert data["converged"]
    return data, review_markdown(data, figures=())


def test_review_md_constraints_in_words_and_one_statement(review_md):
    """No internal name (``energy_margin[0]``) anywhere in review.md; the multipliers' active
    set is stated in words with segment names, and the pressure balance's absence from the
    binding lists is explained."""
    data, text = review_md
    assert not INTERNAL.search(text), INTERNAL.search(text)
    assert data["sensitivity_checks"]["active_constraints_used"]   # there is an active set
    checks = next(line for line in text.split("\n") if line.startswith("Checks:"))
    assert "active constraints: " in checks and "pressure balance (climb" in checks
    assert "always holds and is not listed" in text
    assert "Binding constraints: none" not in text


def test_review_md_units_and_signs(review_md):
    """Powers named shaft or electric with their unit, energies in kWh (derivatives in kWh per
    unit), the signs stated under the segment table."""
    data, text = review_md
    assert "fan shaft power [kW]" in text and "fan electric power [kW]" in text
    assert "dE/dp [kWh/unit]" in text and "[J/unit]" not in text
    assert "negative: the section gives net thrust" in text
    assert "negative: blowing costs energy in that segment" in text
    # the table's drag column is the reported section drag
    drag = [s["section_drag_N"] for s in data["optimum"]["segments"]]
    row = next(line for line in text.split("\n") if line.startswith("| cruise |"))
    assert f"| {drag[1]:.2f} |" in row


def test_case_echo_rounded_and_angles_in_degrees(review_md):
    """The case echo has no number with more than six significant digits (the raw values have
    up to 17: ``0.061086523819801536 rad``, ``7920.000000000001 s``), and angles in degrees."""
    data, text = review_md
    echo = text[text.index("## Case"):text.index("## Timings")]
    raw = [r for r in data["case"]["echo"] if isinstance(r["value"], float)]
    assert any(len(repr(r["value"]).replace(".", "").lstrip("0-")) > 6 for r in raw) \
        or any(r["unit"] == "rad" for r in raw)    # the echo has something to round
    for match in NUMBER.finditer(echo):
        assert _significant(match.group(1)) <= 6, match.group(0)
    assert "| rad |" not in echo
    limit = next(r for r in data["case"]["echo"] if r["key"] == "duct.max_wall_half_angle")
    assert f"| duct.max_wall_half_angle | {np.degrees(limit['value']):.6g} | deg |" in echo


def test_survey_echo_duration_rounded(module_folder):
    """``duration = "2.2 h"`` is 7920.000000000001 s in SI: echoed as 7920."""
    case = load_case(CASES / "survey-drone.toml")
    from mdao.studies.review import case_echo
    rows = {r["key"]: r for r in case_echo(case)}
    assert rows["segment.survey.duration"]["value"] != 7920    # the raw value is not round
    from mdao.report.review import _echo_value
    assert _echo_value(rows["segment.survey.duration"]["value"], "s") == ("7920", "s")
    assert _echo_value(0.061086523819801536, "rad") == ("3.5", "deg")
    assert _echo_value([0.004, 0.02], "-") == ("[0.004, 0.02]", "-")


def test_active_set_words():
    names = ["fan_pressure_rise[1]", "pressure_balance[0]", "pressure_balance[2]",
             "energy_margin[0]", "span_wall_half_angle[3]", "slot_ratio[0]"]
    assert active_set_words(names, ["climb", "survey", "transit"]) == (
        "fan pressure rise limits (survey); pressure balance (climb, transit); energy "
        "consistency (climb); span wall divergence limit (station 3); slot ratio bounds")
    assert active_set_words([], ["climb"]) == "no active constraint"


@pytest.mark.parametrize("kind", ["multistart", "monte-carlo"])
def test_many_in_kwh_and_by_kind(kind, module_folder):
    """``many`` reports kWh, never MJ; a multistart run gives the best optimum and how many
    starts reach it (no percentiles), a Monte Carlo run its percentiles."""
    case = load_case(CASES / "survey-drone.toml")
    data = run_many(case, kind, samples=3 if kind == "multistart" else 10, seed=7)
    text = many_summary(data)
    assert "kWh" in text and "MJ" not in text
    best = data["summary"]["mission_energy_saving_J"]["max"]
    if kind == "multistart":
        assert "%" not in text
        assert f"best optimum: mission energy saving {best / 3.6e6:.4g} kWh" in text
        assert re.search(r"reached by \d+ of \d+ converged starts", text)
    else:
        assert "percentiles 5 / 50 / 95 %" in text



@pytest.mark.parametrize("worst", [2.0e6, -1.0e6])
def test_many_says_why_runs_did_not_converge_and_explains_only_a_negative_saving(worst):
    """Of five runs, one the model refused (no saving), one stopped without converging and
    three converged: the report counts the two apart, and says what a negative saving means
    only when a converged run has one."""
    from mdao.studies.scaleout import summarize
    results = [{"index": i, "converged": ok, "mission_energy_saving_J": e, "message": ""}
               for i, (ok, e) in enumerate([(False, None), (False, 1.0e6), (True, 3.6e6),
                                            (True, 3.6e6), (True, worst)])]
    summary = summarize(results)
    assert (summary["refused"], summary["not_converged"], summary["converged"]) == (1, 1, 3)
    text = many_summary({"kind": "multistart", "title": "t", "wall_time_s": 1.0,
                         "summary": summary, "results": results})
    assert ("2 did not converge: 1 refused by the model before the optimizer moved, 1 stopped "
            "without converging") in text
    assert ("negative saving" in text) == (worst < 0)

def test_iteration_limit_reports_real_iterations_and_a_plain_sentence(module_folder, capsys):
    """``max_iterations = 2`` gives at most 2 iterations (SciPy's ``nit``, not OpenMDAO's count
    of model runs), says what happened and what to try in one sentence, and prints no SLSQP
    banner."""
    case = _case(module_folder, "survey-drone.toml", 'objective = "mission-energy"',
                 'objective = "mission-energy"\nmax_iterations = 2')
    outcome = optimize(case)
    out = capsys.readouterr().out
    assert not outcome.converged
    assert 1 <= outcome.iterations <= 2
    assert outcome.iterations == outcome.problem.driver._scipy_optimize_result.nit
    assert outcome.model_evaluations > outcome.iterations   # what was reported before
    assert outcome.message == ("the optimizer stopped at its iteration limit "
                               "(optimize.max_iterations = 2) before converging: raise "
                               "optimize.max_iterations or loosen optimize.tolerance")
    assert outcome.optimizer_message == "Iteration limit reached"
    assert "Optimization FAILED" not in out and "Iteration limit reached" not in out


def test_converged_iterations_are_scipy_nit(module_folder, capsys):
    case = load_case(CASES / "survey-drone.toml")
    outcome = optimize(case)
    assert outcome.converged and outcome.message == "converged"
    nit = outcome.problem.driver._scipy_optimize_result.nit
    assert outcome.iterations == nit == optimizer_iterations(outcome.problem.driver)
    assert outcome.iterations < outcome.problem.driver.iter_count   # OpenMDAO counts model runs
    text = summary(outcome, case)
    assert f"optimizer: converged; {nit} iterations" in text
    assert "Optimization" not in capsys.readouterr().out


def test_probabilities_carry_their_exact_interval(review_md):
    """Every estimated probability in review.md and on the console comes with its exact
    binomial 95 % interval (Clopper and Pearson 1934, from SciPy), never as a bare number."""
    from scipy.stats import binomtest
    from mdao.report.review import review_summary
    data, md = review_md
    u = data["uncertainty"]
    k, n = round(u["probability_of_saving"] * u["samples"]), u["samples"]
    ci = binomtest(k, n).proportion_ci(method="exact")
    said = f"{k}/{n}; 95 % interval {ci.low:.3f} to {ci.high:.3f}"
    assert md.count(said) >= 2                       # the answer and the uncertainty section
    assert said in review_summary(data)
    assert not re.search(r"[Pp]robability[^\n(]*\*\*\d\.\d+\*\*", md)
