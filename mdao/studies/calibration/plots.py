"""The calibration's figures (PNG): the duct runs collapsed on the fitted relation, drag against the
momentum coefficient with the 95 % confidence band of the mean, and the externally studentized
residuals of each fit (Belsley, Kuh and Welsch, *Regression Diagnostics*, Wiley, 1980, ch. 2).

matplotlib is optional and imported only when plotting (the object-oriented ``Figure`` API, no
pyplot state).
"""
import os

import numpy as np

from mdao.files import write_atomic
from mdao.studies.calibration.fitting import OUTLIER_LIMIT
from mdao.studies.calibration.runs import derived

__all__ = ["PLOTS", "write_plots"]

#: The figures, in the order written.
PLOTS = ("duct_collapse.png", "drag_momentum.png", "residuals.png")


def write_plots(runs, result, out_dir):
    """Write the PNG plots (duct collapse, drag against C_mu with 95 % band, residuals).

    Parameters
    ----------
    runs : dict of str to ndarray
        Checked columns in SI (from :func:`~mdao.studies.calibration.runs.read_runs`).
    result : dict
        From :func:`~mdao.studies.calibration.fitting.calibrate`.
    out_dir : str or path-like
        Existing output folder; each file is written atomically.

    Returns
    -------
    list of str
        The paths written; ``[]`` when matplotlib is not installed.
    """
    try:
        from matplotlib.figure import Figure
    except ImportError:
        return []
    d = derived(runs)
    written = []
    fits = result["fits"]

    def save(fig, name):
        path = os.path.join(out_dir, name)
        write_atomic(path, lambda handle: fig.savefig(handle, format="png", dpi=120))
        written.append(path)

    duct = fits["duct"]
    rows = np.asarray(duct["rows"]) - 1
    q = d["dynamic_pressure"][rows]
    x = d["jet_dynamic_pressure"][rows] / q
    k_j = duct["parameters"]["duct.jet_loss_factor"]["value"]
    k_inf = duct["parameters"]["duct.freestream_assist"]["value"]
    fig = Figure(figsize=(6.4, 4.8))
    ax = fig.add_subplot()
    points = ax.scatter(x, runs["fan_pressure_rise"][rows] / q, c=d["slot_ratio"][rows], s=18)
    fig.colorbar(points, ax=ax, label="slot ratio [-]")
    line = np.linspace(0.0, x.max() * 1.05, 50)
    ax.plot(line, k_j * line - k_inf, "k-",
            label=f"fit: jet loss factor K_j = {k_j:.3g}, "
                  f"freestream assist K_inf = {k_inf:.3g} [-]")
    ax.set_xlabel("jet over freestream dynamic pressure (V_j/V)^2 [-]")
    ax.set_ylabel("fan pressure rise over freestream dynamic pressure dp/q [-]")
    ax.set_title("Duct runs collapsed on the fitted relation")
    ax.legend(fontsize=8)
    ax.grid(alpha=0.3)
    save(fig, "duct_collapse.png")

    drag = fits["drag"]
    names = drag["covariance"]["parameters"]
    beta = np.array([drag["parameters"][n]["value"] for n in names])
    cov = np.asarray(drag["covariance"]["matrix"])
    cmu, ratio = d["momentum_coefficient"], d["slot_ratio"]
    given = "drag_coefficient_clean" in runs
    y = runs["drag_coefficient"] - (runs["drag_coefficient_clean"] if given else 0.0)
    # the 95 % band is thin beside the drag's range: the lower panel shows it about the fit
    fig = Figure(figsize=(6.8, 7.2))
    ax, dev = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": (3, 2)})
    values = np.sort(ratio)
    groups = [values[0]] + [v for a, v in zip(values[:-1], values[1:]) if v > a * (1 + 1e-6)]
    line = np.linspace(0.0, cmu.max() * 1.05, 60)
    for r_s in groups:
        near = np.abs(ratio - r_s) <= 1e-6 * r_s
        color = ax.scatter(cmu[near], y[near], s=18).get_facecolor()[0]
        design = (np.column_stack([np.ones_like(line), np.full_like(line, r_s), line, r_s * line])
                  if len(names) == 4 else np.column_stack([np.ones_like(line), line]))
        mean = design @ beta
        half = drag["t95"] * np.sqrt(np.einsum("ij,jk,ik->i", design, cov, design))
        ax.plot(line, mean, color=color, label=f"slot ratio r_s = {r_s:.2g} [-]: runs and fit")
        ax.fill_between(line, mean - half, mean + half, color=color, alpha=0.25)
        rows_design = (np.column_stack([np.ones(near.sum()), ratio[near], cmu[near],
                                        ratio[near] * cmu[near]])
                       if len(names) == 4 else np.column_stack([np.ones(near.sum()), cmu[near]]))
        dev.fill_between(line, -half, half, color=color, alpha=0.25)
        dev.plot(cmu[near], y[near] - rows_design @ beta, "o", ms=4, color=color)
    dev.fill_between([], [], [], color="0.6", alpha=0.4,
                     label="95 % confidence band of the fitted mean")
    dev.plot([], [], "o", ms=4, color="0.3", label="runs")
    dev.axhline(0.0, color="k", lw=0.8)
    dev.set_xlabel("momentum coefficient C_mu [-]")
    dev.set_ylabel("run or band minus the fit [-]")
    dev.legend(fontsize=8)
    dev.grid(alpha=0.3)
    ax.set_xlabel("momentum coefficient C_mu [-]")
    ax.xaxis.set_tick_params(labelbottom=True)
    ax.set_ylabel("C_D - C_D,clean [-]" if given else "drag coefficient C_D [-]")
    ax.set_title("Drag against momentum coefficient: fit and its 95 % confidence band")
    ax.legend(fontsize=8)
    ax.grid(alpha=0.3)
    fig.tight_layout()
    save(fig, "drag_momentum.png")

    fig = Figure(figsize=(6.4, 2.2 * len(fits) + 1.0))
    for i, (name, fit) in enumerate(fits.items(), start=1):
        ax = fig.add_subplot(len(fits), 1, i)
        student = np.array([np.nan if v is None else v for v in fit["studentized_external"]])
        ax.plot(fit["rows"], student, "o", ms=4, color="#0072B2", label="run")
        for o in fit["outliers"]:
            ax.annotate(f"row {o['row']}", (o["row"], o["studentized_external"] or 0.0))
        ax.axhline(OUTLIER_LIMIT, color="#D55E00", lw=1, ls="--",
                   label=f"flag limit |t| = {OUTLIER_LIMIT:g}")
        ax.axhline(-OUTLIER_LIMIT, color="#D55E00", lw=1, ls="--")
        ax.axhline(0.0, color="k", lw=0.5)
        top = max(1.7 * OUTLIER_LIMIT, 1.1 * np.nanmax(np.abs(student), initial=0.0))
        ax.set_ylim(-top, top)            # room for the legend above the flag limit
        ax.set_xlabel("run (data row of the CSV) [-]")
        ax.set_ylabel(f"{name} fit:\nstudentized residual [-]")
        ax.grid(alpha=0.3)
        ax.legend(fontsize=7, loc="upper right")
    fig.suptitle(f"Externally studentized residuals (|value| > {OUTLIER_LIMIT:g} flagged)")
    fig.tight_layout()
    save(fig, "residuals.png")
    return written
