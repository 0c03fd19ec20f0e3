"""The design-review report: ``review.md``, ``review.json`` and PNG figures.

:func:`write_review` takes the dict of :func:`mdao.studies.review.run_review`
(:func:`write_review_failure` when its optimization did not converge); :func:`review_summary`
is the text the command line prints. Figures need matplotlib (Agg backend); without it the report
says so and is written without them.
"""
from pathlib import Path

import numpy as np

from mdao.constraints import CONSTRAINTS
from mdao.files import safe_text, write_atomic, write_json
from mdao.parameters import parameter
from mdao.report.console import number, power_unit, watts

KWH = 3.6e6


def review_json(data):
    """The JSON content: every number of the review, arrays as lists, no private fields."""
    out = {k: v for k, v in data.items() if not k.startswith("_")}
    if "uncertainty" in out:
        out["uncertainty"] = {k: v for k, v in out["uncertainty"].items()
                              if k not in ("energy_J", "energy_model_J", "x")}
    if out.get("optimum_per_sample"):
        out["optimum_per_sample"] = {k: v for k, v in out["optimum_per_sample"].items()
                                     if k != "energy_J"}
    if "sweeps" in out:
        sw = dict(out["sweeps"]["net_power"])
        sw["limits"] = sorted(sw["limits"])
        out["sweeps"] = {"net_power": sw, "break_even_maps": out["sweeps"]["break_even_maps"]}
    return out


def write_review(data, out_dir, plots=True):
    """Write review.json, the figures (when matplotlib is importable) and review.md.

    Returns
    -------
    list of Path
        The files written.
    """
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    figures, note = [], None
    if plots:
        try:
            figures = write_figures(data, out_dir)
        except ImportError:
            note = "matplotlib is not installed: no figures (pip install matplotlib)"
    else:
        note = "figures not drawn (--no-plots)"
    content = review_json(data)
    content["figures"] = [f.name for f in figures]
    write_json(out_dir / "review.json", content)
    write_atomic(out_dir / "review.md", review_markdown(data, [f.name for f in figures], note))
    return [out_dir / "review.md", out_dir / "review.json"] + figures


def write_review_failure(data, out_dir):
    """Write ``review.json`` of a review whose optimization did not converge: no optimum
    (``"optimum": null``), the optimizer's message as ``failure``; no review.md. Returns its
    path."""
    path = Path(out_dir) / "review.json"
    write_json(path, {k: v for k, v in data.items() if k != "optimum"}
               | {"optimum": None, "failure": data["optimum"]["message"]})
    return path


def review_summary(data):
    """The console report of ``review``: the case, the optimum's saving, the probability of
    saving and the dominant input."""
    e = data["optimum"]["mission_energy_saving_J"]
    u = data["uncertainty"]
    return "\n".join([
        f"blownwing {data['version']}: {safe_text(data['case']['title'], 300, False)}",
        f"optimum mission energy saved: {e / KWH:.4f} kWh; probability of saving "
        f"{probability_text(u['probability_of_saving'], u['samples'])} over the Monte Carlo "
        f"samples; dominant input {u['dominant_input']}"])


def probability_text(probability, samples, digits=3):
    """An estimated probability with its exact binomial 95 % interval (Clopper, C. J. and
    Pearson, E. S., Biometrika 26(4), 1934, 404-413; :func:`scipy.stats.binomtest`), e.g.
    ``"1.000 (30/30; 95 % interval 0.884 to 1.000)"``."""
    from scipy.stats import binomtest
    n = int(samples)
    k = int(round(probability * n))
    ci = binomtest(k, n).proportion_ci(confidence_level=0.95, method="exact")
    return (f"{k / n:.{digits}f} ({k}/{n}; 95 % interval {ci.low:.{digits}f} to "
            f"{ci.high:.{digits}f})")


# --- markdown -----------------------------------------------------------------------------------
def review_markdown(data, figures=(), note=None):
    """The review.md text."""
    c, o, u = data["case"], data["optimum"], data["uncertainty"]
    e = o["mission_energy_saving_J"]
    lines = [f"# Design review: {_md(c['title'])}", "",
             f"> {data['caution']}", "",
             f"- Tool: blownwing {data['version']}",
             f"- Case: `{_md(c['path'])}`, sha256 `{c['sha256']}`",
             f"- Optimizer: {o['message']}; {o['iterations']} iterations, "
             f"{o['model_evaluations']} model evaluations", ""]
    for text in o.get("extrapolation", []):
        lines += [f"> **WARNING: extrapolated.** {text}", ""]
    lines += ["## Answer", "",
             f"Mission energy saved at the source, at the optimum: **{e / KWH:.4f} kWh**"
             + (" (negative: blowing costs energy on this mission)" if e < 0 else "")
             + ". Probability that the mission saves energy under the stated "
             f"uncertainty: **{probability_text(u['probability_of_saving'], u['samples'])}** (seed "
             f"{u['seed']}); 5/50/95 % percentiles "
             + " / ".join(f"{u['percentiles_J'][k] / KWH:.4f}" for k in ("5", "50", "95"))
             + f" kWh. The input explaining most of the variance: `{u['dominant_input']}`.", ""]
    lines += ["## Optimum per segment", "",
              f"Slot ratio {o['slot_ratio']:.4g} (slot height {o['slot_height_m'] * 1e3:.3g} mm).",
              ""] + _segment_table_md(o)
    lines += ["Binding constraints of the wing as a whole (slot, fan size, duct): "
              + ("; ".join(o["wing_active_constraints"]) or "none") + ".", ""]
    lines += _history_md(data, figures)
    lines += _hardware_md(o) + _high_lift_md(data.get("high_lift_cost"))
    lines += _duct_md(data, figures)
    lines += _sensitivity_md(data) + _sweep_md(data, figures) + _uncertainty_md(data, figures)
    if note:
        lines += [f"*Note: {note}.*", ""]
    lines += ["## Case", "", "Values as read, in SI units (angles in degrees), to six "
              "significant digits; review.json has them unrounded.", "",
              "| key | value | unit |", "|---|---|---|"]
    for r in c["echo"]:
        value, unit = _echo_value(r["value"], r["unit"])
        lines.append(f"| {_md(r['key'])} | {_md(value, 2000)} | {_md(unit)} |")
    lines += ["", "## Timings", "",
              ", ".join(f"{k.replace('_', ' ')} {v:.2f} s" for k, v in data["timings_s"].items()),
              "", f"> {data['caution']}", ""]
    return safe_text("\n".join(lines), 10_000_000)   # no control character from any source


#: What the segment table's columns mean and their signs, written under it.
SEGMENT_TABLE_NOTES = (
    "Fan shaft power: all fans' shaft power; fan electric power: what their motors draw (shaft "
    "power / motor efficiency). Section drag: the blown section's drag force; negative: the "
    "section gives net thrust. Energy margin: the fans' air power minus the net thrust power "
    "returned, >= 0 by the first law. Net saving and energy: propulsion power (energy) saved "
    "at the source minus the fans' electric power (energy); negative: blowing costs energy in "
    "that segment. Break-even eff.: the least fan efficiency at which blowing still saves "
    "power there. Binding constraints: the constraints at their limit in that segment "
    "(the pressure balance, an equality, always holds and is not listed)."
)


def _segment_table_md(o):
    """The optimum's per-segment table (powers in W, or kW from 10 kW) and its notes."""
    segs = o["segments"]
    unit, scale, fmt = power_unit([s[k] for s in segs for k in (
        "fan_shaft_power_W", "fan_electric_power_W", "energy_margin_W", "net_power_saving_W")])

    def power(value):
        return number(None if value is None else value * scale, fmt)

    lines = ["| segment | blowing | C_mu [-] | fan rise [Pa] | jet speed [m/s] | jet Mach [-] "
             f"| fan eff. [-] | fan shaft power [{unit}] | fan electric power [{unit}] "
             f"| section drag [N] | energy margin [{unit}] | net saving [{unit}] | energy [kWh] "
             "| break-even eff. [-] | binding constraints |",
             "|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|"]
    for s in segs:
        on = s["blowing"]
        lines.append(
            f"| {_md(s['name'])} | {'yes' if on else 'no'} "
            f"| {number(s['momentum_coefficient'] if on else None)} "
            f"| {number(s['fan_pressure_rise_Pa'] if on else None, '.0f')} "
            f"| {number(s['jet_velocity_m_s'] if on else None, '.1f')} "
            f"| {number(s['jet_mach'] if on else None, '.3f')} | {number(s['fan_efficiency'], '.3f')} "
            f"| {power(s['fan_shaft_power_W'] if on else None)} "
            f"| {power(s['fan_electric_power_W'] if on else None)} "
            f"| {number(s.get('section_drag_N'), '.2f')} | {power(s.get('energy_margin_W'))} "
            f"| {power(s['net_power_saving_W'])} "
            f"| {number(s['energy_saving_J'] / KWH, '.4f')} "
            f"| {number(s['break_even_fan_efficiency'], '.3f')} "
            f"| {'; '.join(s['active_constraints']) or '-'}"
            + (" (ram-driven)" if s["ram_driven"] else "")
            + ("" if on else " (blowing off: the slot's drag penalty only)") + " |")
    return lines + ["", SEGMENT_TABLE_NOTES, ""]


def _per_kwh(value):
    """A derivative of an energy in J per unit as kWh per unit (None stays None)."""
    return None if value is None else value / KWH


#: Constraint in words by the quantity it bounds (:data:`mdao.constraints.CONSTRAINTS`).
_CONSTRAINT_BY_QUANTITY = {c.quantity: c for c in CONSTRAINTS}


def active_set_words(names, segments):
    """The active set the multiplier derivatives used, in words, grouped by constraint.

    Parameters
    ----------
    names : list of str
        ``"quantity[index]"`` as :func:`mdao.studies.sensitivity.multiplier_derivatives`
        returns them: the bounded quantity and the segment (a per-segment constraint), the
        transition station or 0.
    segments : list of str
        Segment names, in case order.

    Returns
    -------
    str
        E.g. ``"the pressure balance (climb, survey); energy consistency (climb, survey)"``;
        ``"no active constraint"`` for an empty set.
    """
    grouped = {}
    for item in names:
        quantity, _, rest = item.partition("[")
        index = int(rest.rstrip("]")) if rest else 0
        c = _CONSTRAINT_BY_QUANTITY.get(quantity)
        name = c.name if c is not None else quantity.replace("_", " ")
        if c is not None and c.per_segment and index < len(segments):
            where = segments[index]
        elif c is not None and c.quantity.endswith("half_angle"):
            where = f"station {index}"
        else:
            where = None
        grouped.setdefault(name, [])
        if where is not None:
            grouped[name].append(where)
    if not grouped:
        return "no active constraint"
    return "; ".join(name + (f" ({', '.join(where)})" if where else "")
                     for name, where in grouped.items())


def _history_md(data, figures):
    """How the optimizer got there, from its recorder."""
    h = data.get("optimization_history")
    if not h or not h["cases"]:
        return []
    lines = [f"How the optimizer got there: {h['cases']} model runs of the driver recorded "
             "(OpenMDAO's case recorder); the worst constraint violation at the last one is "
             f"{h['worst_violation'][-1]:.2g} of its constraint's reference value."]
    if "optimization_history.png" in figures:
        lines += ["", "![optimization history](optimization_history.png)"]
    return lines + [""]


def _hardware_md(o):
    """The blowing system as hardware at the optimum."""
    if o.get("fan_rated_shaft_power_W") is None:
        return []
    fan = ("" if o.get("fan_diameter_m") is None
           else f", fan diameter {o['fan_diameter_m'] * 1e3:.1f} mm")
    how = ("sized in the optimization; its mass flies in every segment" if o.get("sized")
           else "estimated after the optimization (no [mass] table: its mass is not flown)")
    return ["## The blowing system", "",
            f"Rated shaft power of all fans {watts(o['fan_rated_shaft_power_W'])}, set by "
            f"the {o['sizing_segment']} segment; installed mass "
            f"{o['blowing_system_mass_kg']:.4g} kg{fan}; {how}.", ""]


def _high_lift_md(cost):
    """What the high-lift requirement costs the other segments."""
    if not cost:
        return []
    w, f = cost["with_requirement"], cost["without_requirement"]
    rows = ["## What the high-lift requirement costs", "",
            f"High-lift segments: {', '.join(cost['high_lift_segments'])}. The same case "
            "re-optimized with them flown as ordinary segments (no maximum-lift requirement; the "
            "fan sized by the saving alone):", "",
            "| | with the requirement | without |", "|---|---|---|",
            f"| mission energy saved [kWh] | {w['mission_energy_saving_J'] / KWH:.4f} | "
            f"{f['mission_energy_saving_J'] / KWH:.4f} |",
            f"| saved in the other segments [kWh] | {w['other_segments_saving_J'] / KWH:.4f} | "
            f"{f['other_segments_saving_J'] / KWH:.4f} |",
            f"| rated shaft power [kW] | {w['fan_rated_shaft_power_W'] / 1e3:.4g} | "
            f"{f['fan_rated_shaft_power_W'] / 1e3:.4g} |",
            f"| set by | {w['sizing_segment']} | {f['sizing_segment']} |",
            f"| blowing system mass [kg] | {w['blowing_system_mass_kg']:.4g} | "
            f"{f['blowing_system_mass_kg']:.4g} |"]
    if w["fan_diameter_m"] is not None:
        rows.append(f"| fan diameter [mm] | {w['fan_diameter_m'] * 1e3:.1f} | "
                    f"{f['fan_diameter_m'] * 1e3:.1f} |")
    rows.append("")
    if cost["cost_J"] is None:
        rows += ["The optimum without the requirement did not converge: no cost is stated.", ""]
    else:
        rows += [f"The requirement costs the other segments {cost['cost_J'] / KWH:.4f} kWh of "
                 "saving (negative: it helps them).", ""]
    return rows


def _duct_md(data, figures):
    """The geometric duct at the optimum (nothing for the lumped duct)."""
    d = data.get("duct")
    if not d:
        return []
    lines = ["## Transition duct", "",
             f"One of the {d['fans']} identical ducts at the optimum: fan circle "
             f"{d['fan_diameter_m'] * 1e3:.4g} mm to a {d['slot_width_m'] * 1e3:.4g} x "
             f"{d['slot_height_m'] * 1e3:.4g} mm slot over {d['length_m'] * 1e3:.4g} mm "
             f"(schedule {d['schedule']}). Steepest walls: span "
             f"{max(d['span_wall_half_angle_deg']):.2f} deg, thickness "
             f"{max(d['thickness_wall_half_angle_deg']):.2f} deg (limit "
             f"{d['max_wall_half_angle_deg']:.3g} deg, positive diverging); equivalent cone "
             f"{max(d['diffusion_half_angle_deg']):.2f} deg (limit "
             f"{d['max_diffusion_half_angle_deg']:.3g} deg). `blownwing duct` writes its "
             "stations and section loops for CAD.", ""]
    if "duct.png" in figures:
        lines += ["![transition duct](duct.png)", ""]
    return lines


def _sensitivity_md(data):
    chk = data["sensitivity_checks"]
    rows = sorted(data["sensitivities"], key=lambda r: -abs(r["elasticity"] or 0.0))
    lines = ["## Sensitivities", "",
             "dE/dp: mission energy saving per unit of the input at the fixed design (slot ratio "
             "and momentum coefficients held, fan pressure rise following the duct requirement), "
             "from OpenMDAO total derivatives. dE*/dp: how the optimum itself moves, from "
             "central differences of warm-started re-optimizations (relative step "
             f"{chk['post_optimal_relative_step']:g}) and, as a check, from the Lagrange "
             "multipliers of the active constraints. Elasticity: (dE/dp) p / E. Sorted by "
             "|elasticity|. Derivatives in kWh per unit of the input (unit column); positive: "
             "raising the input saves more energy.", "",
             "| input | value | unit | dE/dp [kWh/unit] | dE*/dp re-optimized [kWh/unit] "
             "| dE*/dp multipliers [kWh/unit] | elasticity [-] |", "|---|---|---|---|---|---|---|"]
    for r in rows:
        lines.append(f"| `{r['parameter']}` | {r['value']:.6g} | {r['unit']} | "
                     f"{number(_per_kwh(r['derivative_J_per_unit']), '.4g')} | "
                     f"{number(_per_kwh(r['post_optimal_derivative_J_per_unit']), '.4g')} | "
                     f"{number(_per_kwh(r['post_optimal_derivative_multipliers_J_per_unit']), '.4g')} | "
                     f"{number(r['elasticity'], '.4f')} |")
    lines += ["",
              f"Checks: the two post-optimal estimates differ by at most "
              f"{chk['post_optimal_reoptimization_vs_multipliers_max_relative_difference']:.2e} "
              f"(relative); multiplier stationarity residual "
              f"{chk['multiplier_stationarity_residual']:.2e}; the multipliers are those of "
              "the active constraints: "
              + active_set_words(chk["active_constraints_used"],
                                 [s["name"] for s in data["optimum"]["segments"]])
              + ". Where no binding constraint depends on an input, both kinds of derivative "
              "agree (envelope theorem).", ""]
    lines += ["### Tornado", "",
              "Mission energy at the fixed design, re-evaluated with each input at the low and "
              "high end of its spread (stated uncertainty, calibrated standard error or default "
              "band).", "", "![tornado](tornado.png)", "",
              "| input | low | high | unit | basis | E at low [kWh] | E at high [kWh] |",
              "|---|---|---|---|---|---|---|"]
    unit = {r["parameter"]: r["unit"] for r in data["sensitivities"]}
    notes = []
    for r in data["tornado"]:
        ends = []
        for end in ("low", "high"):
            mark = ""
            if r[f"broken_{end}"]:
                notes.append(f"`{r['parameter']}` at its {end} end breaks "
                             f"{', '.join(r[f'broken_{end}'])}"
                             + (f"; the fitted model alone credits "
                                f"{r[f'energy_model_{end}_J'] / KWH:.4f} kWh"
                                if r[f"energy_model_{end}_J"] != r[f"energy_{end}_J"] else ""))
                mark = f" [{len(notes)}]"
            ends.append(f"{r[f'energy_{end}_J'] / KWH:.4f}{mark}")
        lines.append(f"| `{r['parameter']}` | {r['low']:.5g} | {r['high']:.5g} | "
                     f"{unit.get(r['parameter'], '-')} | {r['basis']} | {ends[0]} | {ends[1]} |")
    if notes:
        lines += ["", "At the fixed design some ends break a constraint the optimum holds (the "
                  "saving is held within the energy balance, docs/theory.md; other constraints "
                  "are only named):", ""] + [f"- [{k}] {note}"
                                             for k, note in enumerate(notes, 1)]
    lines.append("")
    return lines


def _sweep_md(data, figures):
    sw = data["sweeps"]["net_power"]
    lines = ["## Sweeps", "",
             f"Net power saved against momentum coefficient at the optimal slot ratio, for fan "
             f"efficiencies ({sw['efficiency_key']}) "
             + ", ".join(f"{e:g}" for e in sw["efficiencies"])
             + "; the fan follows the duct requirement. Shaded: a constraint is broken ("
             + "; ".join(sorted(sw["limits"])) + " must hold). Star: the optimum.", ""]
    if "net_power.png" in figures:
        lines += ["![net power](net_power.png)", ""]
    for i, m in enumerate(data["sweeps"]["break_even_maps"]):
        eff = np.asarray(m["efficiency"], float)
        lines += [f"### {m['title']}", "",
                  f"Axes `{m['x_key']}` and `{m['y_key']}`; the design point "
                  f"({m['case_point'][0]:.5g}, {m['case_point'][1]:.5g}) is marked. "
                  f"Break-even efficiency over the map: {np.nanmin(eff):.3f} to "
                  f"{np.nanmax(eff):.3f} where reachable; blank where no fan efficiency up to 1 "
                  "breaks even.", ""]
        if break_even_figure_name(m) in figures:
            lines += [f"![break-even map {i + 1}]({break_even_figure_name(m)})", ""]
    return lines


def _uncertainty_md(data, figures):
    u = data["uncertainty"]
    lines = ["## Uncertainty", "",
             f"Monte Carlo at the optimal design, the fan following the requirement: "
             f"{u['samples']} samples, seed {u['seed']}.", "",
             "| input | distribution | parameters | unit |", "|---|---|---|---|"]
    unit = {r["parameter"]: r["unit"] for r in data.get("sensitivities", ())}
    for k, s in u["inputs"].items():
        par = ", ".join(f"{p} {s[p]:.5g}" for p in ("mean", "sd", "low", "high") if p in s)
        lines.append(f"| `{k}` | {s['distribution']} | {par} | {unit.get(k, '-')} |")
    p = u["percentiles_J"]
    m = u["model_as_fitted"]
    mp = m["percentiles_J"]
    lines += ["",
              f"- Probability of saving energy: "
              f"**{probability_text(u['probability_of_saving'], u['samples'])}**",
              f"- Percentiles 5 / 50 / 95 %: {p['5'] / KWH:.4f} / {p['50'] / KWH:.4f} / "
              f"{p['95'] / KWH:.4f} kWh",
              f"- Mean {number(u['mean_J'] and u['mean_J'] / KWH, '.4f')} kWh, standard deviation "
              f"{number(u['sd_J'] and u['sd_J'] / KWH, '.4f')} kWh (first-order estimate of the "
              "fitted model's, from the derivatives: "
              f"{number(u['first_order_sd_J'] and u['first_order_sd_J'] / KWH, '.4f')} kWh)",
              f"- Ram-driven samples (a blowing segment needs no fan): {u['ram_driven_samples']}; "
              f"samples breaking a constraint at the fixed design: "
              f"{u['constraint_violating_samples']}; non-finite: {u['nonfinite_samples']}; "
              f"drawn again for leaving the allowed range: {u['redrawn_samples']}",
              f"- Each sample's saving is held within the energy balance: in "
              f"{u['beyond_balance_samples']} samples the drag model, at the fixed design, "
              "credits more net thrust power than the fans put into the air, and that excess is "
              "not counted (docs/theory.md). Without that limit (the model as fitted): "
              f"probability of saving {probability_text(m['probability_of_saving'], u['samples'])}"
              f"; percentiles {mp['5'] / KWH:.4f} / {mp['50'] / KWH:.4f} / "
              f"{mp['95'] / KWH:.4f} kWh; mean {number(m['mean_J'] and m['mean_J'] / KWH, '.4f')} "
              f"kWh, standard deviation {number(m['sd_J'] and m['sd_J'] / KWH, '.4f')} kWh", "",
              "| input | share of rank variance | Spearman rho^2 | Pearson r^2 |",
              "|---|---|---|---|"]
    for s in u["variance_shares"]:
        lines.append(f"| `{s['parameter']}` | {s['rank_share']:.3f} | "
                     f"{s['spearman_squared']:.3f} | {s['pearson_squared']:.3f} |")
    lines.append("")
    if "uncertainty.png" in figures:
        lines += ["![distribution of the mission energy saving](uncertainty.png)", ""]
    ps = data.get("optimum_per_sample")
    if ps:
        q = ps["percentiles_J"]
        lines += ["### Optimum per sample", "",
                  f"Every sample re-optimized: {ps['converged']} of {ps['samples']} converged; "
                  f"probability of saving "
                  f"{probability_text(ps['probability_of_saving'], ps['samples'])} "
                  f"(non-converged count "
                  f"as not saving); percentiles {q['5'] / KWH:.4f} / {q['50'] / KWH:.4f} / "
                  f"{q['95'] / KWH:.4f} kWh.", ""]
    return lines


# --- figures ------------------------------------------------------------------------------------
def write_figures(data, out_dir):
    """Draw the PNG figures; returns their paths. Raises ImportError without matplotlib."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    out_dir = Path(out_dir)
    files = []

    def save(fig, name):   # atomically: a killed run never leaves a 0-byte or partial PNG
        try:
            write_atomic(out_dir / name, lambda handle: fig.savefig(handle, format="png", dpi=110))
        finally:
            plt.close(fig)
        files.append(out_dir / name)

    for name, fig in review_figures(data, plt):
        save(fig, name)
    if data.get("duct"):
        from mdao.studies.duct_export import draw_duct

        files.append(draw_duct(data["duct"], out_dir / "duct.png", title=data["case"]["title"]))
    return files


def review_figures(data, plt):
    """The review's matplotlib figures (the duct's aside): ``(file name, Figure)`` pairs, drawn
    one at a time (the caller closes each)."""
    for name, draw in (("optimization_history.png", _fig_history),
                       ("tornado.png", _fig_tornado), ("net_power.png", _fig_sweep),
                       ("uncertainty.png", _fig_uncertainty)):
        fig = draw(plt, data)
        if fig is not None:
            yield name, fig
    for m in data["sweeps"]["break_even_maps"]:
        yield break_even_figure_name(m), _fig_map(plt, data, m)


def break_even_figure_name(m):
    """File name of a break-even map from its two axes, e.g.
    ``break_even_slot_ratio_vs_jet_loss_factor.png`` (the last word of each key path)."""
    def word(key):
        return "slot_ratio" if key == "slot.ratio" else key.rsplit(".", 1)[-1]
    return f"break_even_{word(m['x_key'])}_vs_{word(m['y_key'])}.png"


def _label(text):
    """User text (a title, a segment name) for a figure: one line, control characters escaped,
    dollar signs literal (not matplotlib mathtext)."""
    return safe_text(text, 120, newlines=False).replace("$", r"\$")


def _md(text, limit=300):
    """User text for review.md: one line, control characters escaped, table bars escaped."""
    return safe_text(text, limit, newlines=False).replace("|", "\\|")


#: Colour-blind-safe colours (Okabe and Ito, "Color Universal Design", 2008): for hatch edges
#: and markers that must stay apart.
_SAFE = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00", "#F0E442", "#000000")
_HATCHES = ("////", "...", "xxx", "\\\\\\\\", "++", "--", "oo", "||")


def _words(key):
    """An input's description and unit for a figure, e.g. ``survey: flight speed [m/s]``."""
    try:
        p = parameter(key)
    except KeyError:
        return f"{key} [-]"
    parts = key.split(".")
    where = f"{parts[1]}: " if parts[0] == "segment" and len(parts) == 3 else ""
    return _label(f"{where}{p.description} [{p.unit or '-'}]")


def _legend_below(fig, handles, ncol=2, fontsize=8):
    """A figure legend under the axes; returns the height fraction it needs."""
    rows = -(-len(handles) // ncol)
    fig.legend(handles=handles, loc="lower center", ncol=ncol, fontsize=fontsize,
               frameon=False)
    return min(0.45, (0.12 + 0.2 * rows) / fig.get_figheight())


def _num(v):
    """A number for a figure label: 3 significant digits, no exponent below 1e6."""
    return f"{v:.0f}" if 1e3 <= abs(v) < 1e6 else f"{v:.3g}"


def _fig_tornado(plt, data):
    rows = [r for r in data["tornado"] if r["swing_J"] > 0][:15][::-1]
    if not rows:
        return None
    e0 = data["optimum"]["mission_energy_saving_J"] / KWH
    fig, ax = plt.subplots(figsize=(10, 0.45 * len(rows) + 2.8))
    y = np.arange(len(rows))
    lo = np.array([r["energy_low_J"] for r in rows]) / KWH - e0
    hi = np.array([r["energy_high_J"] for r in rows]) / KWH - e0
    ax.barh(y, lo, left=e0, color="#0072B2", label="input at the low end of its spread")
    ax.barh(y, hi, left=e0, color="#E69F00", label="input at the high end of its spread")
    ax.axvline(e0, color="k", lw=1, label=f"optimal design: {e0:.3g} kWh")
    ax.axvline(0.0, color="k", lw=1, ls="--", label="no saving (0 kWh)")
    labels, clipped = [], False
    for r in rows:
        text = f"{_words(r['parameter'])}: {_num(r['low'])} to {_num(r['high'])}"
        if "clipped" in r["basis"]:
            try:
                p = parameter(r["parameter"])
                ends = [e for e, v, b in (("low", r["low"], p.low), ("high", r["high"], p.high))
                        if b is not None and v == b]
            except KeyError:
                ends = []
            text += " *" if not ends else f" ({' and '.join(ends)} end at its bound*)"
            clipped = True
        labels.append(text)
    ax.set_yticks(y)
    ax.set_yticklabels(labels, fontsize=8)
    ax.set_xlabel("mission energy saved at the source [kWh]")
    ax.set_ylabel("input [unit]: low to high end of its spread")
    fig.suptitle("Tornado: mission energy at the optimal design, one input at a time at each "
                 "end of its spread", fontsize=10)
    handles, _ = ax.get_legend_handles_labels()
    bottom = _legend_below(fig, handles, ncol=2)
    if clipped:
        fig.text(0.5, bottom, "* the spread (stated uncertainty or default band) reached the "
                 "input's allowed range and was clipped there: that end is the bound, not a "
                 "likely value", fontsize=7, ha="center", va="bottom")
        bottom += 0.2 / fig.get_figheight()
    fig.tight_layout(rect=(0, bottom, 1, 1))
    return fig


def _spans(mask):
    """Contiguous True runs of a 1-D mask as (start, stop) index pairs."""
    m = np.concatenate([[False], mask, [False]]).astype(int)
    d = np.diff(m)
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1) - 1))


def _edges(mask):
    """Indices ``k`` where a 1-D boolean mask changes between ``k`` and ``k + 1``."""
    m = np.asarray(mask, bool)
    return np.flatnonzero(m[1:] != m[:-1])


def _fig_sweep(plt, data):
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch
    from matplotlib.ticker import MaxNLocator

    sw = data["sweeps"]["net_power"]
    blow = np.flatnonzero(np.asarray(sw["blowing"]))
    names = [s["name"] for s in data["optimum"]["segments"]]
    x = np.asarray(sw["momentum_coefficient"])
    power = np.asarray(sw["net_power_W"], float)
    ram = np.asarray(sw["ram_driven"], bool)
    fig, axes = plt.subplots(1, len(blow), figsize=(4.4 * len(blow), 5.2), squeeze=False)
    colors = plt.cm.viridis(np.linspace(0.0, 0.85, len(sw["efficiencies"])))
    # one hatch per constraint broken somewhere in the sweep, the same in every panel
    broken = [n for n in sorted(sw["limits"])
              if not np.all(np.asarray(sw["limits"][n])[:, blow])]
    style = {n: (_HATCHES[k % len(_HATCHES)], _SAFE[k % len(_SAFE)]) for k, n in enumerate(broken)}
    eff_words = _words(sw["efficiency_key"])
    handles, sides = [], set()
    for ax, i in zip(axes[0], blow):
        for k, eff in enumerate(sw["efficiencies"]):
            own = np.isclose(eff, sw["efficiency_case"])
            ax.plot(x, power[k, :, i] / 1e3, color=colors[k], lw=2.4 if own else 1.2)
        for a, b in _spans(~np.asarray(sw["feasible"])[:, i]):
            ax.axvspan(x[a], x[b], color="0.9", zorder=0, lw=0)
        for n in broken:
            hatch, col = style[n]
            for a, b in _spans(~np.asarray(sw["limits"][n])[:, i]):
                ax.axvspan(x[a], x[b], facecolor="none", edgecolor=col, hatch=hatch, lw=0,
                           zorder=0.5, alpha=0.6)
        for k in _edges(ram[:, i]):     # where the required pressure rise crosses zero
            sides.add("smaller" if ram[k, i] else "larger")
            xe = 0.5 * (x[k] + x[k + 1])
            ax.axvline(xe, color="k", lw=1.2, ls="-.", zorder=3)
            ax.plot(np.full(len(sw["efficiencies"]), xe),
                    0.5 * (power[:, k, i] + power[:, k + 1, i]) / 1e3, "o", ms=5, mfc="w",
                    mec="k", zorder=4)
        opt = sw["optimum"][i]
        ax.plot(opt["momentum_coefficient"], opt["net_power_W"] / 1e3, "*", ms=15, color="#D55E00",
                mec="k", zorder=5)
        ax.axhline(0.0, color="k", lw=0.8)
        ax.xaxis.set_major_locator(MaxNLocator(5))
        ax.set_xlabel("momentum coefficient C_mu [-]")
        ax.set_ylabel("net power saved [kW]")
        ax.set_title(_label(names[i]))
        ax.grid(alpha=0.3)
    handles += [Line2D([], [], color=c, lw=2.4 if np.isclose(e, sw["efficiency_case"]) else 1.2,
                       label=f"{eff_words.removesuffix(' [-]')} = {e:.3g}"
                       + (" (the case)" if np.isclose(e, sw["efficiency_case"]) else ""))
                for e, c in zip(sw["efficiencies"], colors)]
    handles.append(Line2D([], [], ls="none", marker="*", ms=12, color="#D55E00", mec="k",
                          label="optimum of the case"))
    if broken:
        handles.append(Patch(facecolor="0.9", label="shaded: a constraint is broken"))
    handles += [Patch(facecolor="0.9", edgecolor=style[n][1], hatch=style[n][0], lw=0,
                      label=f"{n} broken") for n in broken]
    if sides:
        handles.append(Line2D([], [], color="k", ls="-.", marker="o", mfc="w", mec="k",
                              label="ram-driven edge: required pressure rise = 0 (the jet "
                                    f"needs no fan at {' or '.join(sorted(sides))} C_mu)"))
    bottom = _legend_below(fig, handles, ncol=2)
    fig.suptitle("Net power saved against momentum coefficient at the optimal slot ratio "
                 "(the fan gives the required pressure rise)", fontsize=10)
    fig.tight_layout(rect=(0, bottom, 1, 1))
    return fig


def _fig_map(plt, data, m):
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch
    from matplotlib.ticker import MaxNLocator

    eff = np.asarray(m["efficiency"], float)
    blank = np.asarray(m.get("blank", np.full(eff.shape, -1)))
    reasons = list(m.get("blank_reasons", []))
    segs = data["optimum"]["segments"]
    blow = [i for i, s in enumerate(segs) if s["blowing"]]
    fig, axes = plt.subplots(1, len(blow), figsize=(4.6 * len(blow), 5.6), squeeze=False)
    levels = np.linspace(0.0, 1.0, 21)
    xg, yg = np.meshgrid(m["x"], m["y"])
    drawn, case_line = set(), False
    for ax, i in zip(axes[0], blow):
        cs = ax.contourf(m["x"], m["y"], eff[..., i], levels=levels, cmap="cividis")
        for k in np.unique(blank[..., i]):
            if k < 0:
                continue
            ax.contourf(xg, yg, (blank[..., i] == k).astype(float), levels=[0.5, 1.5],
                        colors="none", hatches=[_HATCHES[k % len(_HATCHES)]])
            drawn.add(int(k))
        own = segs[i]["fan_efficiency"]
        if own is not None and np.nanmin(eff[..., i]) < own < np.nanmax(eff[..., i]):
            line = ax.contour(m["x"], m["y"], eff[..., i], levels=[own], colors="#D55E00",
                              linewidths=1.8)
            ax.clabel(line, fmt={own: f"{own:.2f}"}, fontsize=7)
            case_line = True
        ax.plot(*m["case_point"], "o", ms=9, color="w", mec="k", clip_on=False, zorder=5)
        ax.xaxis.set_major_locator(MaxNLocator(4))
        ax.set_xlabel(_axis_label(m["x_key"]), fontsize=8)
        ax.set_ylabel(_axis_label(m["y_key"]), fontsize=8)
        ax.set_title(_label(segs[i]["name"]))
    handles = [Line2D([], [], ls="none", marker="o", ms=9, color="w", mec="k",
                      label="design point of the case")]
    if case_line:
        handles.append(Line2D([], [], color="#D55E00", lw=1.8,
                              label="break-even = the segment's fan efficiency at the optimum "
                                    "(value on the line)"))
    handles += [Patch(facecolor="w", edgecolor="k", hatch=_HATCHES[k % len(_HATCHES)],
                      label=f"hatched: {reasons[k]}") for k in sorted(drawn)]
    bottom = _legend_below(fig, handles, ncol=1 if len(handles) > 4 else 2, fontsize=7)
    fig.suptitle(_label(m["title"]), fontsize=9)
    fig.tight_layout(rect=(0, bottom, 0.92, 1))
    cax = fig.add_axes((0.93, bottom + 0.1, 0.015, 0.75 - bottom))
    fig.colorbar(cs, cax=cax, label="break-even fan efficiency [-]")
    return fig


def _axis_label(key):
    """A model parameter's description and unit, from its declaration (:mod:`mdao.parameters`),
    wrapped to two lines."""
    import textwrap

    try:
        p = parameter(key)
    except KeyError:
        return f"{key} [-]"
    return "\n".join(textwrap.wrap(_label(f"{p.description} ({key}) [{p.unit or '-'}]"), 48))


def _fig_uncertainty(plt, data):
    from matplotlib.ticker import MaxNLocator

    u = data["uncertainty"]
    e = np.asarray(u.get("energy_J", []), float)
    e = e[np.isfinite(e)] / KWH
    if e.size == 0:
        return None
    n = int(u["samples"])
    fig, ax = plt.subplots(figsize=(8, 4.6))
    bins = int(np.clip(np.ceil(2 * e.size ** (1 / 3)), 10, 60))   # Rice rule
    ax.hist(e, bins=bins, color="#56B4E9", edgecolor="#0072B2", lw=0.5,
            label=f"samples ({e.size} finite of {n})")
    ax.axvline(0.0, color="k", lw=1.5, ls="--", label="no saving (0 kWh)")
    for q, ls in (("5", ":"), ("50", "-"), ("95", ":")):
        ax.axvline(u["percentiles_J"][q] / KWH, color="0.35", ls=ls, lw=1,
                   label=f"{q} % percentile: {u['percentiles_J'][q] / KWH:.3g} kWh")
    nominal = data["optimum"]["mission_energy_saving_J"] / KWH
    ax.axvline(nominal, color="#D55E00", lw=2, label=f"nominal optimum: {nominal:.3g} kWh")
    ax.yaxis.set_major_locator(MaxNLocator(integer=True))
    ax.set_xlabel("mission energy saved at the source [kWh]")
    ax.set_ylabel("samples per bin [count]")
    ax.set_title(f"Monte Carlo at the optimal design, {n} samples\nP(saving > 0) = "
                 f"{probability_text(u['probability_of_saving'], n)}, exact (Clopper-Pearson)",
                 fontsize=9)
    ax.legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    fig.tight_layout()
    return fig


def _fig_history(plt, data):
    """The optimizer's history from its recorder: the objective and the worst constraint
    violation per driver case."""
    h = data.get("optimization_history")
    if not h or not h["cases"]:
        return None
    cases = np.arange(1, h["cases"] + 1)
    energy = h["objective"] == "mission_energy_saving"
    values = np.asarray(h["objective_values"], float) / (KWH if energy else 1.0)
    worst = np.asarray(h["worst_violation"], float)
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(7, 5.2), sharex=True)
    top.plot(cases, values, "o-", color="#0072B2")
    top.set_ylabel("mission energy saved [kWh]" if energy else "segment net power saved [W]")
    top.set_xlabel("driver case (model run) [-]")
    top.tick_params(labelbottom=True)
    top.set_title("Optimization history (OpenMDAO case recorder, one point per model run of "
                  "the driver)", fontsize=9)
    shown = np.where(worst > 0, worst, np.nan)
    bottom.semilogy(cases, shown, "s-", color="#D55E00",
                    label="worst constraint violation / its reference")
    feasible = worst <= 0
    if feasible.any():
        floor = np.nanmin(shown) if np.isfinite(shown).any() else 1e-12
        bottom.plot(cases[feasible], np.full(feasible.sum(), floor), "v", color="#009E73",
                    ls="none", label="every constraint holds (drawn at the axis floor)")
    named = [c for c in h["worst_constraint"] if c]
    if named:
        last = named[-1]
        c = _CONSTRAINT_BY_QUANTITY.get(last)
        bottom.annotate(f"last violated: {c.name if c else last.replace('_', ' ')}",
                        xy=(0.98, 0.92),
                        xycoords="axes fraction", ha="right", va="top", fontsize=8)
    bottom.set_xlabel("driver case (model run) [-]")
    bottom.set_ylabel("worst violation [-]")
    bottom.xaxis.get_major_locator().set_params(integer=True)
    room = _legend_below(fig, bottom.get_legend_handles_labels()[0], ncol=1)
    fig.tight_layout(rect=(0, room, 1, 1))
    return fig


#: Significant digits of the case echo in review.md.
ECHO_DIGITS = 6


def _echo_number(x, scale=1.0):
    """A case number to :data:`ECHO_DIGITS` significant digits (``7920.000000000001`` ->
    ``7920``); integers and booleans as they are."""
    if isinstance(x, bool) or isinstance(x, (int, np.integer)) and scale == 1.0:
        return str(x).lower() if isinstance(x, bool) else str(x)
    if isinstance(x, (int, float, np.floating)):
        return format(float(x) * scale + 0.0, f".{ECHO_DIGITS}g")
    return str(x)


def _echo_value(value, unit=""):
    """A case value and its unit for the echo table: numbers to :data:`ECHO_DIGITS` significant
    digits, angles in degrees (``("3.5", "deg")`` for 0.0610865 rad), a pair as ``[a, b]``, a
    lift table as its pairs ("table over C_L: 0.3: 1.2; ...")."""
    scale = 1.0
    if unit == "rad":
        scale, unit = 180.0 / np.pi, "deg"
    if isinstance(value, dict) and set(value) == {"lift_coefficient", "value"}:
        return "table over C_L: " + "; ".join(
            f"{_echo_number(c)}: {_echo_number(v, scale)}"
            for c, v in zip(value["lift_coefficient"], value["value"])), unit
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_echo_number(v, scale) for v in value) + "]", unit
    return _echo_number(value, scale), unit
