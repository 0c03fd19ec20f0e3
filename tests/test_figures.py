"""Figures that explain themselves: every figure the package draws (review, calibration, duct)
has descriptive file names (none ends in a bare number) and, on every axes, x and y labels that
carry a unit in brackets ("[-]" for pure numbers); the break-even maps say why a region is blank;
the net-power sweep marks the ram-driven edge; the Monte Carlo title gives an exact binomial
interval (Clopper and Pearson, Biometrika 26 (1934) 404-413, as computed by SciPy).

The figures are caught as they are saved (a wrapper around ``Figure.savefig``), so the files on
disk are the ones checked.
"""
import re
from pathlib import Path

import numpy as np
import pytest

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")
from matplotlib.figure import Figure  # noqa: E402
from scipy.stats import binomtest  # noqa: E402

from mdao.case import load_case  # noqa: E402
from mdao.report.review import break_even_figure_name, write_review  # noqa: E402
from mdao.studies import duct_export  # noqa: E402
from mdao.studies.calibration import calibrate, read_runs  # noqa: E402
from mdao.studies.calibration.plots import write_plots  # noqa: E402
from mdao.studies.review import run_review  # noqa: E402

CASES = Path(__file__).resolve().parents[1] / "cases"
UNIT = re.compile(r"\[[^\]]+\]")          # a unit in brackets, "[-]" for pure numbers
BARE_NUMBER = re.compile(r"\d\.png$")


@pytest.fixture
def saved(monkeypatch):
    """Every Figure saved while the fixture is active, in order."""
    figures = []
    original = Figure.savefig

    def record(self, *args, **kwargs):
        figures.append(self)
        return original(self, *args, **kwargs)

    monkeypatch.setattr(Figure, "savefig", record)
    return figures


def _check_labels(fig, name):
    """Every axes: x and y label non-empty with a unit; a colour bar: its label with a unit."""
    axes = [ax for ax in fig.axes if ax.get_visible()]
    assert axes, name
    for ax in axes:
        if ax.get_label() == "<colorbar>" or getattr(ax, "_colorbar", None) is not None:
            label = ax.get_ylabel() or ax.get_xlabel()
            assert UNIT.search(label), f"{name}: colour bar label {label!r} has no unit"
            continue
        for which, label in (("x", ax.get_xlabel()), ("y", ax.get_ylabel())):
            assert label.strip(), f"{name}: axes {ax.get_title()!r} has no {which} label"
            assert UNIT.search(label), f"{name}: {which} label {label!r} has no unit"


@pytest.fixture(scope="module")
def survey_review(tmp_path_factory):
    """A small review of the survey drone (20 samples, 9 x 9 map points): its data."""
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("OPENMDAO_REPORTS", "0")
        mp.chdir(tmp_path_factory.mktemp("figures"))
        return run_review(load_case(CASES / "survey-drone.toml"), samples=20, map_points=9)


def test_review_figures_names_and_labels(survey_review, saved, tmp_path):
    files = write_review(survey_review, tmp_path)
    pngs = sorted(p.name for p in files if p.suffix == ".png")
    assert pngs == sorted(p.name for p in tmp_path.glob("*.png"))
    assert len(pngs) == len(saved) == 6     # with the optimization history
    for name in pngs:
        assert not BARE_NUMBER.search(name), name
    names = [break_even_figure_name(m) for m in survey_review["sweeps"]["break_even_maps"]]
    assert names == ["break_even_slot_ratio_vs_jet_loss_factor.png",
                     "break_even_slot_drag_vs_drag_per_momentum.png"]
    md = (tmp_path / "review.md").read_text()
    for name in pngs:
        assert f"]({name})" in md, name          # review.md links each figure by its name
    for fig in saved:
        _check_labels(fig, fig.get_suptitle() or fig.axes[0].get_title())


def _legend_texts(fig):
    return [t.get_text() for leg in fig.legends + [ax.get_legend() for ax in fig.axes]
            if leg is not None for t in leg.get_texts()]


def test_maps_explain_blank_regions_and_sweep_marks_the_ram_driven_edge(survey_review, saved,
                                                                         tmp_path):
    write_review(survey_review, tmp_path)
    by_title = {fig.get_suptitle(): fig for fig in saved}
    for m in survey_review["sweeps"]["break_even_maps"]:
        eff, blank = np.asarray(m["efficiency"]), np.asarray(m["blank"])
        blowing = [s["blowing"] for s in survey_review["optimum"]["segments"]]
        # every blank point of a blowing segment has a reason, and no drawn point has one
        assert np.array_equal(np.isnan(eff[..., blowing]), blank[..., blowing] >= 0)
        texts = _legend_texts(by_title[m["title"]])
        for k in np.unique(blank[blank >= 0]):
            assert f"hatched: {m['blank_reasons'][k]}" in texts
    sw = survey_review["sweeps"]["net_power"]
    ram = np.asarray(sw["ram_driven"])[:, np.asarray(sw["blowing"])]
    assert np.any(ram[1:] != ram[:-1]), "the survey sweep crosses the ram-driven edge"
    sweep = next(f for t, f in by_title.items() if t.startswith("Net power"))
    texts = _legend_texts(sweep)
    assert any(t.startswith("ram-driven edge") for t in texts)
    for name in sw["limits"]:
        if not np.all(np.asarray(sw["limits"][name])[:, np.asarray(sw["blowing"])]):
            assert f"{name} broken" in texts, name


def test_uncertainty_title_gives_the_exact_binomial_interval(survey_review, saved, tmp_path):
    write_review(survey_review, tmp_path)
    u = survey_review["uncertainty"]
    k, n = round(u["probability_of_saving"] * u["samples"]), u["samples"]
    ci = binomtest(k, n).proportion_ci(method="exact")
    fig = next(f for f in saved if f.axes[0].get_title().startswith("Monte Carlo"))
    title = fig.axes[0].get_title()
    assert f"{k}/{n}" in title and f"{ci.low:.3f} to {ci.high:.3f}" in title
    ticks = fig.axes[0].get_yticks()
    assert np.allclose(ticks, np.round(ticks)), ticks      # whole sample counts


def test_tornado_labels_in_words_and_clipped_end_said(survey_review, saved, tmp_path):
    write_review(survey_review, tmp_path)
    fig = next(f for f in saved if f.get_suptitle().startswith("Tornado"))
    labels = [t.get_text() for t in fig.axes[0].get_yticklabels()]
    assert all(UNIT.search(t) for t in labels), labels
    assert not any("fan.motor_efficiency" in t for t in labels)
    motor = [r for r in survey_review["tornado"] if r["parameter"] == "fan.motor_efficiency"]
    assert motor and motor[0]["high"] == 1.0 and "clipped" in motor[0]["basis"]
    assert any(t.startswith("fan motor and drive efficiency [-]") and "high end at its bound"
               in t for t in labels), labels


def test_calibration_figures_labels(saved, tmp_path):
    runs = read_runs(CASES / "data" / "demo_runs.csv")
    written = write_plots(runs, calibrate(runs), tmp_path)
    assert len(written) == len(saved) == 3
    for path, fig in zip(written, saved):
        assert not BARE_NUMBER.search(Path(path).name)
        _check_labels(fig, Path(path).name)
    drag = saved[1]
    legend = _legend_texts(drag)
    assert "95 % confidence band of the fitted mean" in legend
    assert not any(re.search(r"\d\.\d{5,}", t) for t in legend), legend   # rounded


def test_duct_figure_labels(saved, tmp_path, monkeypatch):
    monkeypatch.setenv("OPENMDAO_REPORTS", "0")
    monkeypatch.chdir(tmp_path)
    case = load_case(CASES / "coastal-patrol.toml")
    data = duct_export.duct_export(case, start=True).data
    duct_export.draw_duct(data, tmp_path / "duct.png", title=case.title)
    assert len(saved) == 1
    _check_labels(saved[0], "duct.png")
