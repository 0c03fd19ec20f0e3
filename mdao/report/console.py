"""Tables and result files: what the command line prints and writes."""
from mdao import CAUTION, __version__
from mdao.constraints import FEASIBLE_TOL


#: Jet Mach number above which the incompressible jet's error is stated.
INCOMPRESSIBLE_MACH = 0.3


def _f(value, fmt):
    return "-" if value is None else format(value, fmt)


def segment_table(outcome, case):
    """The per-segment table of an optimum (or of an evaluated start point)."""
    cols = [("segment", 12, "s"), ("C_mu", 8, ".4f"), ("dP fan", 9, ".0f"), ("V_jet", 7, ".1f"),
            ("fan rpm", 9, ".0f"), ("eta_fan", 7, ".3f"), ("fan shaft", 10, ".1f"),
            ("fan electric", 12, ".1f"), ("energy margin", 13, ".1f"), ("net save", 10, ".1f"),
            ("eta_be", 7, ".3f")]
    units = ["", "-", "Pa", "m/s", "rpm", "-", "W", "W", "W", "W", "-"]
    aircraft = getattr(case, "has_aircraft", False)
    if aircraft:     # the aircraft around the wing: its lift coefficient and main thrust
        cols += [("C_L", 6, ".3f"), ("main thrust", 11, ".2f")]
        units += ["-", "N"]
    head = " ".join(f"{c[0]:>{c[1]}}" for c in cols)
    unit_row = " ".join(f"{u:>{c[1]}}" for u, c in zip(units, cols))
    lines = [head, unit_row, "-" * len(head)]
    for s in outcome.segments:
        on = s["blowing"]
        vals = [s["name"], s["momentum_coefficient"] if on else None,
                s["fan_pressure_rise_Pa"] if on else None, s["jet_velocity_m_s"] if on else None,
                s["fan_speed_rpm"], s["fan_efficiency"], s["fan_shaft_power_W"] if on else None,
                s["fan_electric_power_W"] if on else None, s["energy_margin_W"],
                s["net_power_saving_W"],
                s["break_even_fan_efficiency"]]
        if aircraft:
            vals += [s["lift_coefficient"], s["main_thrust_N"]]
        cells = []
        for v, (name, width, fmt) in zip(vals, cols):
            cells.append(f"{v:>{width}}" if fmt == "s" else f"{_f(v, fmt):>{width}}")
        lines.append(" ".join(cells) + ("" if on else "   (blowing off: slot penalty only)"))
    lines.append("energy margin: the fans' air power minus the net thrust power returned "
                 "(thrust_power_ceiling x P_air + D V), >= 0 by the first law")
    lines.append("")
    for s in outcome.segments:
        if s["active_constraints"]:
            lines.append(f"  {s['name']}: active: " + "; ".join(s["active_constraints"]))
        error = s.get("incompressible_jet_error")
        if error is not None and s["jet_mach"] > INCOMPRESSIBLE_MACH:
            lines.append(f"  {s['name']}: jet Mach {s['jet_mach']:.2f}: the incompressible jet "
                         f"head is low by about {100 * error:.1f} % (M^2/4); set [fan] "
                         "compressible = true for the compressible jet and fan work")
        if s["ram_driven"]:
            lines.append(f"  {s['name']}: ram-driven: the jet needs no fan (required rise <= 0)")
        if s["blowing"] and s["energy_margin_W"] is not None \
                and s["energy_margin_W"] < -FEASIBLE_TOL * s["air_power_W"]:
            thrust = -s["section_drag_N"] * s["speed_m_s"]
            ceiling = case.airfoil["thrust_power_ceiling"]
            lines.append(f"  {s['name']}: WARNING: breaks the energy balance: {thrust:.1f} W of "
                         f"net thrust power from {s['air_power_W']:.1f} W of fan air power "
                         f"(ratio {thrust / s['air_power_W']:.2f} > allowed {ceiling:g}); the "
                         "drag model is outside its physical range here")
    if outcome.wing_active_constraints:
        lines.append("  wing: active: " + "; ".join(outcome.wing_active_constraints))
    return "\n".join(lines)


def summary(outcome, case, optimized=True):
    """The whole console report of ``optimize`` or ``evaluate``."""
    e = outcome.mission_energy_saving_J
    lines = [f"blownwing {__version__}: {case.title}"]
    lines += [f"WARNING: extrapolated: {text}" for text in outcome.extrapolation]
    lines += [
             ("optimum" if optimized else "start point (not optimized)")
             + f": slot ratio {outcome.slot_ratio:.5f} (slot height "
             f"{outcome.values['slot_height'] * 1e3:.2f} mm)", "",
             segment_table(outcome, case), "",
             f"mission energy saved at the source: {e / 3.6e6:.4f} kWh ({e:.4g} J)"
             + _clean_share(outcome)
             + ("" if e >= 0 else "  -> blowing costs energy on this mission"),
             *_no_aircraft(outcome),
             *_hardware(outcome, case),
             f"{outcome.message}; {outcome.iterations} iterations, "
             f"{outcome.model_evaluations} model evaluations, {outcome.wall_time_s:.2f} s",
             "", CAUTION]
    return "\n".join(lines)


def _hardware(outcome, case):
    """The blowing system as hardware: rated power, the segment that sets it, mass, fan."""
    hw = getattr(outcome, "hardware", None)
    if not hw:
        return []
    how = ("sized in the optimization, its mass flown in every segment" if hw["sized"] else
           "estimated after the optimization (no [mass] table: its mass is not flown)")
    fan = ("" if hw["fan_diameter_m"] is None
           else f", fan diameter {hw['fan_diameter_m'] * 1e3:.1f} mm")
    lines = [f"blowing system: rated shaft power {hw['fan_rated_shaft_power_W'] / 1e3:.3g} kW "
             f"({case.mass['power_margin']:g} x the {hw['sizing_segment']} segment's need), "
             f"installed mass {hw['blowing_system_mass_kg']:.3g} kg{fan}; {how}"]
    if case.high_lift.any():
        lines.append("high-lift segments (" + ", ".join(
            n for n, h in zip(case.segment_names, case.high_lift) if h)
            + ") blow for lift: no break-even efficiency is given for them")
    return lines


def _no_aircraft(outcome):
    """Say so when the case has no ``[aircraft]`` table (nothing checked the saving against
    the aircraft)."""
    if getattr(outcome, "mission_energy_saving_fraction", None) is not None:
        return []
    return ["no [aircraft] table: the saving is not checked against the aircraft's drag and "
            "thrust (no thrust bookkeeping was done)"]


def _clean_share(outcome):
    """The saving as a share of the clean aircraft's mission energy (with ``[aircraft]``)."""
    fraction = getattr(outcome, "mission_energy_saving_fraction", None)
    if fraction is None:
        return ""
    return (f", {100 * fraction:.2f} % of the clean aircraft's "
            f"{outcome.mission_energy_clean_J / 3.6e6:.4f} kWh")


def many_summary(data):
    """The console report of ``many``: converged count, wall time and the saving's spread.

    Parameters
    ----------
    data : dict
        The result of :func:`mdao.studies.scaleout.run_many`.
    """
    summary = data["summary"]
    lines = [f"blownwing many: {data['title']}: {summary['converged']}/"
             f"{summary['optimizations']} converged in {data['wall_time_s']:.1f} s"]
    if "mission_energy_saving_J" in summary:
        s = summary["mission_energy_saving_J"]
        lines.append(f"  mission energy saving [MJ]: mean {s['mean'] / 1e6:.4g}, "
                     f"5 % {s['p05'] / 1e6:.4g}, 95 % {s['p95'] / 1e6:.4g} "
                     f"(best: sample {s['best_index']})")
    return "\n".join(lines)
