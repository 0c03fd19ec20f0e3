"""The design-review report: ``review.md``, ``review.json`` and PNG figures.

:func:`write_review` takes the dict of :func:`mdao.studies.review.run_review`
(:func:`write_review_failure` when its optimization did not converge); :func:`review_summary`
is the text the command line prints. Figures need matplotlib (Agg backend); without it the report
says so and is written without them.
"""
from pathlib import Path

import numpy as np

from mdao.files import safe_text, write_atomic, write_json
from mdao.parameters import parameter

KWH = 3.6e6


def review_json(data):
    """The JSON content: every number of the review, arrays as lists, no private fields."""
    out = {k: v for k, v in data.items() if not k.startswith("_")}
    if "uncertainty" in out:
        out["uncertainty"] = {k: v for k, v in out["uncertainty"].items()
                              if k not in ("energy_J", "x")}
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
        f"{u['probability_of_saving']:.3f} over {u['samples']} samples; dominant input "
        f"{u['dominant_input']}"])


# --- markdown -----------------------------------------------------------------------------------
def _g(v, fmt=".4g"):
    return "-" if v is None else format(v + 0.0, fmt)  # + 0.0: no negative zero


def review_markdown(data, figures=(), note=None):
    """The review.md text."""
    c, o, u = data["case"], data["optimum"], data["uncertainty"]
    e = o["mission_energy_saving_J"]
    lines = [f"# Design review: {_md(c['title'])}", "",
             f"> {data['caution']}", "",
             f"- Tool: blownwing {data['version']}",
             f"- Case: `{_md(c['path'])}`, sha256 `{c['sha256']}`",
             f"- Optimizer: {o['message']} ({o['iterations']} iterations)", ""]
    for text in o.get("extrapolation", []):
        lines += [f"> **WARNING: extrapolated.** {text}", ""]
    lines += ["## Answer", "",
             f"Mission energy saved at the source, at the optimum: **{e / KWH:.4f} kWh** "
             f"({e:.6g} J). Probability that the mission saves energy under the stated "
             f"uncertainty: **{u['probability_of_saving']:.3f}** ({u['samples']} samples, seed "
             f"{u['seed']}); 5/50/95 % percentiles "
             + " / ".join(f"{u['percentiles_J'][k] / KWH:.4f}" for k in ("5", "50", "95"))
             + f" kWh. The input explaining most of the variance: `{u['dominant_input']}`.", ""]
    lines += ["## Optimum per segment", "",
              f"Slot ratio {o['slot_ratio']:.5f} (slot height {o['slot_height_m'] * 1e3:.2f} mm).",
              "",
              "| segment | blowing | C_mu [-] | fan rise [Pa] | jet speed [m/s] | jet Mach [-] "
              "| fan eff. [-] | fan shaft power [W] | fan electric power [W] | energy margin [W] "
              "| net saving [W] | energy [kWh] | break-even eff. [-] | binding constraints |",
              "|---|---|---|---|---|---|---|---|---|---|---|---|---|---|"]
    for s in o["segments"]:
        on = s["blowing"]
        lines.append(
            f"| {_md(s['name'])} | {'yes' if on else 'no'} "
            f"| {_g(s['momentum_coefficient'] if on else None)} "
            f"| {_g(s['fan_pressure_rise_Pa'] if on else None, '.0f')} "
            f"| {_g(s['jet_velocity_m_s'] if on else None, '.1f')} "
            f"| {_g(s['jet_mach'] if on else None, '.3f')} | {_g(s['fan_efficiency'], '.3f')} "
            f"| {_g(s['fan_shaft_power_W'] if on else None, '.1f')} "
            f"| {_g(s['fan_electric_power_W'], '.1f')} | {_g(s.get('energy_margin_W'), '.1f')} "
            f"| {_g(s['net_power_saving_W'], '.1f')} "
            f"| {s['energy_saving_J'] / KWH:.4f} | {_g(s['break_even_fan_efficiency'], '.3f')} "
            f"| {'; '.join(s['active_constraints']) or '-'}"
            + (" (ram-driven)" if s["ram_driven"] else "") + " |")
    lines += ["", "Binding constraints of the wing: "
              + ("; ".join(o["wing_active_constraints"]) or "none") + ".", ""]
    lines += _hardware_md(o) + _high_lift_md(data.get("high_lift_cost"))
    lines += _duct_md(data, figures)
    lines += _sensitivity_md(data) + _sweep_md(data, figures) + _uncertainty_md(data, figures)
    if note:
        lines += [f"*Note: {note}.*", ""]
    lines += ["## Case (SI units)", "", "| key | value | unit |", "|---|---|---|"]
    lines += [f"| {_md(r['key'])} | {_md(_echo_value(r['value']), 2000)} | {_md(r['unit'])} |"
              for r in c["echo"]]
    lines += ["", "## Timings", "",
              ", ".join(f"{k.replace('_', ' ')} {v:.2f} s" for k, v in data["timings_s"].items()),
              "", f"> {data['caution']}", ""]
    return safe_text("\n".join(lines), 10_000_000)   # no control character from any source


def _hardware_md(o):
    """The blowing system as hardware at the optimum."""
    if o.get("fan_rated_shaft_power_W") is None:
        return []
    fan = ("" if o.get("fan_diameter_m") is None
           else f", fan diameter {o['fan_diameter_m'] * 1e3:.1f} mm")
    how = ("sized in the optimization; its mass flies in every segment" if o.get("sized")
           else "estimated after the optimization (no [mass] table: its mass is not flown)")
    return ["## The blowing system", "",
            f"Rated shaft power of all fans {o['fan_rated_shaft_power_W'] / 1e3:.4g} kW, set by "
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
             "|elasticity|.", "",
             "| input | value | unit | dE/dp [J/unit] | dE*/dp re-optimized | dE*/dp multipliers "
             "| elasticity [-] |", "|---|---|---|---|---|---|---|"]
    for r in rows:
        lines.append(f"| `{r['parameter']}` | {r['value']:.6g} | {r['unit']} | "
                     f"{_g(r['derivative'], '.5g')} | {_g(r['post_optimal_derivative'], '.5g')} | "
                     f"{_g(r['post_optimal_derivative_multipliers'], '.5g')} | "
                     f"{_g(r['elasticity'], '.4f')} |")
    lines += ["",
              f"Checks: the two post-optimal estimates differ by at most "
              f"{chk['post_optimal_reoptimization_vs_multipliers_max_relative_difference']:.2e} "
              f"(relative); multiplier stationarity residual "
              f"{chk['multiplier_stationarity_residual']:.2e}; active set used: "
              + ", ".join(chk["active_constraints_used"]) + ". Where no binding constraint "
              "depends on an input, both kinds of derivative agree (envelope theorem).", ""]
    lines += ["### Tornado", "",
              "Mission energy at the fixed design, re-evaluated with each input at the low and "
              "high end of its spread (stated uncertainty, calibrated standard error or default "
              "band).", "", "![tornado](tornado.png)", "",
              "| input | low | high | basis | E at low [kWh] | E at high [kWh] |",
              "|---|---|---|---|---|---|"]
    for r in data["tornado"]:
        lines.append(f"| `{r['parameter']}` | {r['low']:.5g} | {r['high']:.5g} | {r['basis']} | "
                     f"{r['energy_low_J'] / KWH:.4f} | {r['energy_high_J'] / KWH:.4f} |")
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
        if f"break_even_{i + 1}.png" in figures:
            lines += [f"![break-even map {i + 1}](break_even_{i + 1}.png)", ""]
    return lines


def _uncertainty_md(data, figures):
    u = data["uncertainty"]
    lines = ["## Uncertainty", "",
             f"Monte Carlo at the optimal design, the fan following the requirement: "
             f"{u['samples']} samples, seed {u['seed']}.", "",
             "| input | distribution | parameters |", "|---|---|---|"]
    for k, s in u["inputs"].items():
        par = ", ".join(f"{p} {s[p]:.5g}" for p in ("mean", "sd", "low", "high") if p in s)
        lines.append(f"| `{k}` | {s['distribution']} | {par} |")
    p = u["percentiles_J"]
    lines += ["",
              f"- Probability of saving energy: **{u['probability_of_saving']:.4f}**",
              f"- Percentiles 5 / 50 / 95 %: {p['5'] / KWH:.4f} / {p['50'] / KWH:.4f} / "
              f"{p['95'] / KWH:.4f} kWh",
              f"- Mean {_g(u['mean_J'] and u['mean_J'] / KWH, '.4f')} kWh, standard deviation "
              f"{_g(u['sd_J'] and u['sd_J'] / KWH, '.4f')} kWh (first-order estimate from the "
              f"derivatives: {_g(u['first_order_sd_J'] and u['first_order_sd_J'] / KWH, '.4f')} kWh)",
              f"- Ram-driven samples (a blowing segment needs no fan): {u['ram_driven_samples']}; "
              f"samples breaking a constraint at the fixed design: "
              f"{u['constraint_violating_samples']}; non-finite: {u['nonfinite_samples']}; "
              f"drawn again for leaving the allowed range: {u['redrawn_samples']}", "",
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
                  f"probability of saving {ps['probability_of_saving']:.4f} (non-converged count "
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

    for name, draw in (("tornado.png", _fig_tornado), ("net_power.png", _fig_sweep),
                       ("uncertainty.png", _fig_uncertainty)):
        fig = draw(plt, data)
        if fig is not None:
            save(fig, name)
    for i, m in enumerate(data["sweeps"]["break_even_maps"]):
        save(_fig_map(plt, data, m), f"break_even_{i + 1}.png")
    if data.get("duct"):
        from mdao.studies.duct_export import draw_duct

        files.append(draw_duct(data["duct"], out_dir / "duct.png", title=data["case"]["title"]))
    return files


def _label(text):
    """User text (a title, a segment name) for a figure: one line, control characters escaped,
    dollar signs literal (not matplotlib mathtext)."""
    return safe_text(text, 120, newlines=False).replace("$", r"\$")


def _md(text, limit=300):
    """User text for review.md: one line, control characters escaped, table bars escaped."""
    return safe_text(text, limit, newlines=False).replace("|", "\\|")


def _fig_tornado(plt, data):
    rows = [r for r in data["tornado"] if r["swing_J"] > 0][:15][::-1]
    if not rows:
        return None
    e0 = data["optimum"]["mission_energy_saving_J"] / KWH
    fig, ax = plt.subplots(figsize=(9, 0.45 * len(rows) + 1.6))
    y = np.arange(len(rows))
    lo = np.array([r["energy_low_J"] for r in rows]) / KWH - e0
    hi = np.array([r["energy_high_J"] for r in rows]) / KWH - e0
    ax.barh(y, lo, left=e0, color="#4c78a8", label="input at its low end")
    ax.barh(y, hi, left=e0, color="#f58518", label="input at its high end")
    ax.axvline(e0, color="k", lw=1)
    ax.axvline(0.0, color="#b22222", lw=1, ls="--", label="no saving")
    ax.set_yticks(y)
    ax.set_yticklabels([f"{r['parameter']}  [{r['low']:.4g}, {r['high']:.4g}]" for r in rows],
                       fontsize=8)
    ax.set_xlabel("mission energy saved at the source [kWh]")
    ax.set_title(f"Tornado at the optimal design (centre: {e0:.3f} kWh)")
    ax.legend(fontsize=8, loc="lower right")
    fig.tight_layout()
    return fig


def _spans(mask):
    """Contiguous True runs of a 1-D mask as (start, stop) index pairs."""
    m = np.concatenate([[False], mask, [False]]).astype(int)
    d = np.diff(m)
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1) - 1))


def _fig_sweep(plt, data):
    sw = data["sweeps"]["net_power"]
    blow = np.flatnonzero(np.asarray(sw["blowing"]))
    names = [s["name"] for s in data["optimum"]["segments"]]
    x = np.asarray(sw["momentum_coefficient"])
    power = np.asarray(sw["net_power_W"], float)
    fig, axes = plt.subplots(1, len(blow), figsize=(4.2 * len(blow), 4), squeeze=False)
    colors = plt.cm.viridis(np.linspace(0.1, 0.85, len(sw["efficiencies"])))
    for ax, i in zip(axes[0], blow):
        for k, eff in enumerate(sw["efficiencies"]):
            own = np.isclose(eff, sw["efficiency_case"])
            ax.plot(x, power[k, :, i] / 1e3, color=colors[k], lw=2.4 if own else 1.2,
                    label=f"{eff:g}" + (" (case)" if own else ""))
        for a, b in _spans(~np.asarray(sw["feasible"])[:, i]):
            ax.axvspan(x[a], x[b], color="0.85", zorder=0)
        opt = sw["optimum"][i]
        ax.plot(opt["momentum_coefficient"], opt["net_power_W"] / 1e3, "*", ms=15, color="#d62728",
                mec="k", label="optimum", zorder=5)
        ax.axhline(0.0, color="k", lw=0.8)
        ax.set_xlabel("momentum coefficient C_mu [-]")
        ax.set_title(_label(names[i]))
        ax.grid(alpha=0.3)
    axes[0][0].set_ylabel("net power saved [kW]")
    axes[0][-1].legend(title=sw["efficiency_key"], fontsize=7, title_fontsize=7)
    fig.suptitle("Net power saved vs momentum coefficient (grey: a constraint is broken)",
                 fontsize=10)
    fig.tight_layout()
    return fig


def _fig_map(plt, data, m):
    eff = np.asarray(m["efficiency"], float)
    segs = data["optimum"]["segments"]
    blow = [i for i, s in enumerate(segs) if s["blowing"]]
    fig, axes = plt.subplots(1, len(blow), figsize=(4.4 * len(blow), 4.3), squeeze=False,
                             constrained_layout=True)
    levels = np.linspace(0.0, 1.0, 21)
    for ax, i in zip(axes[0], blow):
        cs = ax.contourf(m["x"], m["y"], eff[..., i], levels=levels, cmap="RdYlGn_r")
        own = segs[i]["fan_efficiency"]
        if own is not None and np.nanmin(eff[..., i]) < own < np.nanmax(eff[..., i]):
            line = ax.contour(m["x"], m["y"], eff[..., i], levels=[own], colors="k",
                              linewidths=1.5)
            ax.clabel(line, fmt={own: f"case fan {own:.2f}"}, fontsize=7)
        ax.plot(*m["case_point"], "o", ms=9, color="w", mec="k", label="design point",
                clip_on=False, zorder=5)
        ax.set_title(_label(segs[i]["name"]))
    axes[0][0].legend(fontsize=7, loc="upper right")
    axes[0][0].set_ylabel(_axis_label(m["y_key"]))
    fig.supxlabel(_axis_label(m["x_key"]), fontsize=10)
    fig.colorbar(cs, ax=list(axes[0]), label="break-even fan efficiency [-]")
    fig.suptitle(m["title"], fontsize=9)
    return fig


def _axis_label(key):
    """A model parameter's description and unit, from its declaration (:mod:`mdao.parameters`)."""
    try:
        p = parameter(key)
    except KeyError:
        return f"{key} [-]"
    return f"{p.description} ({key}) [{p.unit or '-'}]"


def _fig_uncertainty(plt, data):
    u = data["uncertainty"]
    e = np.asarray(u.get("energy_J", []), float)
    e = e[np.isfinite(e)] / KWH
    if e.size == 0:
        return None
    fig, ax = plt.subplots(figsize=(7.5, 4))
    ax.hist(e, bins=60, color="#4c78a8", alpha=0.85)
    ax.axvline(0.0, color="#b22222", lw=1.5, ls="--", label="no saving")
    for k, ls in (("5", ":"), ("50", "-"), ("95", ":")):
        ax.axvline(u["percentiles_J"][k] / KWH, color="k", ls=ls, lw=1,
                   label=f"{k} % percentile")
    ax.axvline(data["optimum"]["mission_energy_saving_J"] / KWH, color="#d62728", lw=2,
               label="nominal optimum")
    ax.set_xlabel("mission energy saved at the source [kWh]")
    ax.set_ylabel("samples")
    ax.set_title(f"Monte Carlo ({u['samples']} samples): P(saving) = "
                 f"{u['probability_of_saving']:.3f}")
    ax.legend(fontsize=8)
    fig.tight_layout()
    return fig


def _echo_value(value):
    """A case value for the echo table; a lift table as its pairs, "C_L 0.3: 1.2; ..."."""
    if isinstance(value, dict) and set(value) == {"lift_coefficient", "value"}:
        return "table over C_L: " + "; ".join(
            f"{c:g}: {v:g}" for c, v in zip(value["lift_coefficient"], value["value"]))
    return value
