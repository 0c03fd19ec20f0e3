"""Tables and result files: what the command line prints and writes."""
from mdao import CAUTION, __version__
from mdao.constraints import FEASIBLE_TOL


#: Jet Mach number above which the incompressible jet's error is stated.
INCOMPRESSIBLE_MACH = 0.3


#: Energy and power for people: kWh, and W up to this magnitude, kW above it.
KWH = 3.6e6
KW_ABOVE = 1e4


def number(value, fmt=".4g"):
    """``value`` formatted with ``fmt``, ``"-"`` for None; a value that rounds to zero reads 0,
    never -0 (an energy margin of -1e-9 W at a binding balance is not a broken one).

    >>> number(-1e-9, ".1f"), number(-0.04, ".1f"), number(-0.06, ".1f"), number(None)
    ('0.0', '0.0', '-0.1', '-')
    """
    if value is None:
        return "-"
    text = format(value, fmt)
    return format(0.0, fmt) if float(text) == 0 else text



def power_unit(values):
    """``(unit, scale, fmt)`` for a group of powers [W] shown together: W with one decimal,
    or kW with two when the largest magnitude reaches :data:`KW_ABOVE` (10 kW)."""
    finite = [abs(v) for v in values if v is not None and v == v]
    if finite and max(finite) >= KW_ABOVE:
        return "kW", 1e-3, ".2f"
    return "W", 1.0, ".1f"


def watts(power_w):
    """A power [W] as text with three significant digits: W below 1 kW, kW from there."""
    if abs(power_w) < 1e3:
        return f"{power_w + 0.0:.3g} W"
    return f"{power_w / 1e3 + 0.0:.3g} kW"


def kwh(energy_j):
    """An energy [J] as kWh text with four significant digits (``"0.1541 kWh"``)."""
    return f"{energy_j / KWH + 0.0:.4g} kWh"


def aligned_table(header, units, rows, left=(0,)):
    """Plain-text table whose column widths come from its content: a header row, a unit row,
    a rule and the rows (lists of cell strings), every line the same width; the columns in
    ``left`` are left-aligned, the others right-aligned."""
    widths = [max(len(str(c)) for c in col) for col in zip(header, units, *rows)]

    def line(cells):
        return "  ".join(f"{c:<{w}}" if k in left else f"{c:>{w}}"
                         for k, (c, w) in enumerate(zip(cells, widths)))

    head = line(header)
    return [head, line(units), "-" * len(head)] + [line(r) for r in rows]


#: What the segment table's columns mean and their signs, printed under it.
TABLE_NOTES = (
    "shaft power: all fans' shaft power; electric power: what their motors draw "
    "(shaft power / motor efficiency)",
    "energy margin: the fans' air power minus the net thrust power returned "
    "(thrust_power_ceiling x P_air + D V); >= 0 by the first law",
    "net saving: propulsion power saved at the source minus the fans' electric power; "
    "negative: blowing costs energy in that segment",
    "break-even eff.: the least fan efficiency at which blowing still saves power in the segment",
)


def segment_table(outcome, case):
    """The per-segment table of an optimum (or of an evaluated start point), its column widths
    from its content, the meaning and sign of its columns under it, then per segment the
    binding constraints and warnings."""
    segs = outcome.segments
    powers = [s[k] for s in segs for k in ("fan_shaft_power_W", "fan_electric_power_W",
                                           "energy_margin_W", "net_power_saving_W")]
    punit, pscale, pfmt = power_unit(powers)

    def power(value):
        return None if value is None else value * pscale

    header = ["segment", "blowing", "C_mu", "fan rise", "jet speed", "fan speed", "fan eff.",
              "shaft power", "electric power", "energy margin", "net saving", "break-even eff."]
    units = ["", "", "-", "Pa", "m/s", "rpm", "-", punit, punit, punit, punit, "-"]
    fmts = [None, None, ".4f", ".0f", ".1f", ".0f", ".3f", pfmt, pfmt, pfmt, pfmt, ".3f"]
    aircraft = getattr(case, "has_aircraft", False)
    if aircraft:     # the aircraft around the wing: its lift coefficient and main thrust
        header += ["C_L", "main thrust"]
        units += ["-", "N"]
        fmts += [".3f", ".1f"]
    rows = []
    for s in segs:
        on = s["blowing"]
        vals = [s["momentum_coefficient"] if on else None,
                s["fan_pressure_rise_Pa"] if on else None, s["jet_velocity_m_s"] if on else None,
                s["fan_speed_rpm"], s["fan_efficiency"],
                power(s["fan_shaft_power_W"]) if on else None,
                power(s["fan_electric_power_W"]) if on else None, power(s["energy_margin_W"]),
                power(s["net_power_saving_W"]), s["break_even_fan_efficiency"]]
        if aircraft:
            vals += [s["lift_coefficient"], s["main_thrust_N"]]
        rows.append([s["name"], "yes" if on else "no"]
                    + [number(v, f) for v, f in zip(vals, fmts[2:])])
    lines = aligned_table(header, units, rows)
    lines += list(TABLE_NOTES)
    lines.append("")
    for s in segs:
        if not s["blowing"]:
            lines.append(f"  {s['name']}: blowing off: the slot's drag penalty only")
        if s["active_constraints"]:
            lines.append(f"  {s['name']}: binding: " + "; ".join(s["active_constraints"]))
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
                         f"net thrust power (the section's drag is negative: net thrust) from "
                         f"{s['air_power_W']:.1f} W of fan air power (ratio "
                         f"{thrust / s['air_power_W']:.2f} > allowed {ceiling:g}); the drag "
                         "model is outside its physical range here")
    if outcome.wing_active_constraints:
        lines.append("  wing: binding: " + "; ".join(outcome.wing_active_constraints))
    return "\n".join(lines)


def _plural(count, word):
    return f"{count} {word}" + ("" if count == 1 else "s")


def run_line(outcome, optimized=True):
    """What the optimizer did, in words: ``optimizer: converged; 5 iterations, ...``."""
    evals = _plural(outcome.model_evaluations, "model evaluation")
    if not optimized:
        return f"{outcome.message}; {evals}, {outcome.wall_time_s:.2f} s"
    return (f"optimizer: {outcome.message}; {_plural(outcome.iterations, 'iteration')}, "
            f"{evals}, {outcome.wall_time_s:.2f} s")


def summary(outcome, case, optimized=True):
    """The whole console report of ``optimize`` or ``evaluate``."""
    e = outcome.mission_energy_saving_J
    lines = [f"blownwing {__version__}: {case.title}"]
    lines += [f"WARNING: extrapolated: {text}" for text in outcome.extrapolation]
    lines += [
             ("optimum" if optimized else "start point (not optimized)")
             + f": slot ratio {outcome.slot_ratio:.4g} (slot height "
             f"{outcome.values['slot_height'] * 1e3:.3g} mm)", "",
             segment_table(outcome, case), "",
             f"mission energy saved at the source: {kwh(e)}"
             + _clean_share(outcome)
             + ("" if e >= 0 else "  -> blowing costs energy on this mission (negative saving)"),
             *_no_aircraft(outcome),
             *_hardware(outcome, case, optimized),
             run_line(outcome, optimized),
             "", CAUTION]
    return "\n".join(lines)


def _hardware(outcome, case, optimized=True):
    """The blowing system as hardware: rated power, the segment that sets it, mass, fan (at the
    optimum, or at the start point ``evaluate`` shows)."""
    hw = getattr(outcome, "hardware", None)
    if not hw:
        return []
    if optimized:
        how = ("sized in the optimization, its mass flown in every segment" if hw["sized"] else
               "estimated after the optimization (no [mass] table: its mass is not flown)")
    else:
        how = ("the start point's rating (the optimization sizes it), its mass flown in every "
               "segment" if hw["sized"] else
               "estimated at the start point (no [mass] table: its mass is not flown)")
    fan = ("" if hw["fan_diameter_m"] is None
           else f", fan diameter {hw['fan_diameter_m'] * 1e3:.1f} mm")
    lines = [f"blowing system: rated shaft power {watts(hw['fan_rated_shaft_power_W'])} "
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
    return (f", {100 * fraction:.3g} % of the clean aircraft's "
            f"{kwh(outcome.mission_energy_clean_J)}")


#: Relative closeness to the best saving that counts as reaching the same optimum (multistart).
SAME_OPTIMUM = 1e-3


def many_summary(data):
    """The console report of ``many``: converged count, wall time and what the savings say.

    For a Monte Carlo run (one optimum per sample) the mean and the 5, 50 and 95 % percentiles
    of the optimum's mission energy saving; for a multistart run (one optimum per random start,
    where percentiles mean nothing) the best optimum and its start, how many converged starts
    reach it (within :data:`SAME_OPTIMUM`, relative) and the worst converged optimum. Energies
    in kWh.

    Parameters
    ----------
    data : dict
        The result of :func:`mdao.studies.scaleout.run_many`.
    """
    summary = data["summary"]
    kind = data.get("kind", "monte-carlo")
    what = "starts" if kind == "multistart" else "samples"
    lines = [f"blownwing many ({kind}): {data['title']}: {summary['converged']} of "
             f"{summary['optimizations']} {what} converged in {data['wall_time_s']:.1f} s"]
    failed = summary["optimizations"] - summary["converged"]
    if failed:
        why = [f"{n} {words}" for n, words in (
            (summary["refused"], "refused by the model before the optimizer moved"),
            (summary["not_converged"], "stopped without converging")) if n]
        lines.append(f"  {failed} did not converge: {', '.join(why)} (the message of each "
                     "result in many.json says why)")
    s = summary.get("mission_energy_saving_J")
    if s is None:
        lines.append("  no optimization converged: no saving to report")
        return "\n".join(lines)
    if kind == "multistart":
        best = s["max"]
        reached = sum(1 for r in data.get("results", ()) if r["converged"]
                      and abs(r["mission_energy_saving_J"] - best) <= SAME_OPTIMUM * abs(best))
        lines.append(f"  best optimum: mission energy saving {kwh(best)} (start "
                     f"{s['best_index']}), reached by {reached} of {summary['converged']} "
                     "converged starts")
        lower = summary["converged"] - reached
        if lower:
            lines.append(f"  {lower} converged start{'s' if lower > 1 else ''} stopped lower, "
                         f"down to {kwh(s['min'])} (spread {kwh(best - s['min'])}): the problem "
                         "has more than one local optimum")
    else:
        lines.append(f"  optimum's mission energy saving: mean {kwh(s['mean'])}, percentiles "
                     f"5 / 50 / 95 %: {s['p05'] / KWH + 0.0:.4g} / {s['median'] / KWH + 0.0:.4g} / "
                     f"{s['p95'] / KWH + 0.0:.4g} kWh (largest: sample {s['best_index']})")
    if s["min"] < 0:
        lines.append("  negative saving: blowing costs energy")
    return "\n".join(lines)
