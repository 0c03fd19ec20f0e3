r"""Sweeps for the design review: net power against momentum coefficient, break-even maps.

Every grid is evaluated by vectorized calls of :func:`mdao.physics.chain.evaluate` (grid axes
lead, segments last; large grids in chunks of points to bound the memory), the fan following the
duct requirement. The one exception: the geometric
duct builds its transition from one wing geometry per evaluation, so a map over the slot ratio
with the geometric duct loops over the slot-ratio rows (each row one vectorized call).

* :func:`net_power_sweep`: net power saved per blowing segment over the momentum coefficient, for
  several fan efficiencies (the map's peak efficiency for a fan map), with the feasible region of
  the constraints (calibrated range, fan pressure-rise limits, jet Mach limit, fan speed and map
  flow range) and the optimum.
* :func:`break_even_map`: break-even fan efficiency
  (:func:`mdao.optimum.breakeven.break_even_efficiency`) over two inputs; :func:`review_maps`
  gives the two of the review: slot ratio against the jet loss factor (lumped duct; the geometric
  duct builds that factor from geometry, so its map is over ``duct.extra_loss``, the adder on the
  same factor), and slot penalty against drag per momentum coefficient.
"""
import numpy as np

from mdao import constraints
from mdao.case.loading import segment_lift
from mdao.physics import chain
from mdao.physics.lift_table import LiftTable, interpolate
from mdao.optimum.breakeven import break_even_efficiency
from mdao.studies.sensitivity import WING_GEOMETRY, chunk_rows, design_parameters, promoted
from mdao.system import chain_options, chain_parameters, design_point

#: Fan efficiencies of the sweep when ``[review] fan_efficiencies`` is not given.
DEFAULT_EFFICIENCIES = (0.5, 0.6, 0.7, 0.8, 0.9)
#: Chain outputs the sweep keeps.
KEEP = ("net_power_saving", "required_pressure_rise", "jet_mach", "ram_driven", "fan_speed",
        "flow_coefficient", "energy_margin", "air_power", "main_thrust")


def sweep_efficiencies(case):
    """Fan efficiencies of the sweep (sorted, the case's own included) and the key they set."""
    key = "fan.efficiency" if case.fan["model"] == "constant" else "fan.peak_efficiency"
    given = case.review["fan_efficiencies"]
    effs = set(DEFAULT_EFFICIENCIES if given is None else given)
    effs.add(float(case.value(key)))
    return sorted(effs), key


def net_power_sweep(case, outcome, efficiencies=None, points=201, cmu_max=None):
    """Net power saved against momentum coefficient at the optimal slot ratio.

    Parameters
    ----------
    case, outcome
        The case and its optimum.
    efficiencies : sequence of float, optional
        Fan efficiencies in (0, 1] (the map's peak efficiency for a fan map); default
        :func:`sweep_efficiencies`.
    points : int
        Grid points in momentum coefficient, >= 2.
    cmu_max : float, optional
        Upper end of the grid (default 1.2 times the calibrated maximum); the grid starts at
        1/20 of the calibrated minimum.

    Returns
    -------
    dict
        ``momentum_coefficient`` (points,), ``efficiencies`` (k,), ``efficiency_key``,
        ``net_power_W`` (k, points, segments), ``feasible`` (points, segments) bool,
        ``limits`` {name: (points, segments) bool of where each constraint holds},
        ``ram_driven`` (points, segments), ``optimum`` per segment {momentum_coefficient,
        net_power_W}, ``blowing`` (segments,) bool.
    """
    if points < 2:
        raise ValueError(f"points = {points!r}: allowed >= 2")
    default, key = sweep_efficiencies(case)
    effs = np.asarray(default if efficiencies is None else efficiencies, float)
    if np.any((effs <= 0) | (effs > 1)):
        raise ValueError(f"efficiencies = {effs.tolist()!r}: each must be in (0, 1]")
    lo, hi = case.airfoil["momentum_coefficient_range"]
    top = 1.2 * hi if cmu_max is None else float(cmu_max)
    grid = np.linspace(lo / 20.0, top, points)
    name = promoted(case, key)[0]
    p = design_parameters(case, outcome)
    p[name] = effs[:, None, None]
    nseg = len(case.segments)
    size = max(1, chunk_rows(case) // len(effs))
    keep = set(KEEP) | {c.quantity for c in constraints.applicable(case, follow_requirement=True)}
    parts = []
    for a in range(0, points, size):  # chunks of the grid: bounded memory, each vectorized
        p["momentum_coefficient"] = grid[None, a:a + size, None]
        part = chain.evaluate(p, chain_options(case), blowing=True)
        m = len(grid[a:a + size])
        parts.append({k: np.broadcast_to(v, (len(effs), m, nseg)) for k, v in part.items()
                      if k in keep and np.ndim(v) and np.shape(v)[-1] == nseg})
    out = {k: np.concatenate([q[k] for q in parts], axis=1) for k in parts[0]}
    shape = (points, nseg)
    first = {k: v[0] for k, v in out.items()}
    values = {k: np.broadcast_to(v, shape) for k, v in first.items()}
    values["fan_pressure_rise"] = values["required_pressure_rise"]
    values["momentum_coefficient"] = np.broadcast_to(grid[:, None], shape)
    limits = {}
    for con in constraints.applicable(case, follow_requirement=True):
        if con.per_segment:
            with np.errstate(invalid="ignore"):
                limits[con.name] = constraints.margin(con, case, values, blowing=True) >= 0
    feasible = np.logical_and.reduce(list(limits.values()))
    opt = [{"momentum_coefficient": float(outcome.values["momentum_coefficient"][i]),
            "net_power_W": float(outcome.values["net_power_saving"][i])}
           for i in range(nseg)]
    return {"momentum_coefficient": grid, "efficiencies": effs, "efficiency_key": key,
            "efficiency_case": float(case.value(key)),
            "net_power_W": np.broadcast_to(out["net_power_saving"], (len(effs),) + shape),
            "feasible": feasible, "limits": limits,
            "ram_driven": np.broadcast_to(first["ram_driven"], shape), "optimum": opt,
            "blowing": case.blowing}


def break_even_map(case, outcome, x_key, x_values, y_key, y_values):
    """Break-even fan efficiency over a grid of two wing-level inputs, at the optimal slot ratio.

    Parameters
    ----------
    case, outcome
        The case and its optimum (its slot ratio is used unless ``x_key`` or ``y_key`` is
        ``"slot.ratio"``).
    x_key, y_key : str
        Wing-level case key paths (e.g. ``"slot.ratio"``, ``"duct.jet_loss_factor"``).
    x_values, y_values : array_like
        Grid values, 1-D.

    Returns
    -------
    dict
        ``x_key``, ``x`` (nx,), ``y_key``, ``y`` (ny,), ``efficiency`` (ny, nx, segments): the
        break-even fan efficiency, NaN where no efficiency up to 1 breaks even and for segments
        without blowing; ``case_point`` (x, y) of the design;
        ``blank`` (ny, nx, segments) int and ``blank_reasons`` (list of str): why a blowing
        segment's point is NaN, an index into the reasons, -1 where not blank
        (:func:`blank_reasons`).
    """
    x = np.asarray(x_values, float).ravel()
    y = np.asarray(y_values, float).ravel()
    names = {}
    for k in (x_key, y_key):
        name, seg = promoted(case, k)
        if seg is not None:
            raise ValueError(f"key = {k!r}: break-even maps take wing-level inputs, not "
                             "segment inputs")
        names[k] = name
    base = chain_parameters(case, **design_point(outcome.values))
    base.pop("momentum_coefficient", None)
    nseg = len(case.segments)
    geo_x = case.duct["model"] == "geometric" and names[x_key] in WING_GEOMETRY
    geo_y = case.duct["model"] == "geometric" and names[y_key] in WING_GEOMETRY
    if geo_x and geo_y:
        raise ValueError("the geometric duct takes one wing geometry per evaluation: at most one "
                         f"map axis may be a geometry input (got {x_key!r} and {y_key!r})")
    if geo_y:  # put the looped geometry axis on x
        res = break_even_map(case, outcome, y_key, y, x_key, x)
        return {"x_key": x_key, "x": x, "y_key": y_key, "y": y,
                "efficiency": np.swapaxes(res["efficiency"], 0, 1),
                "case_point": res["case_point"][::-1], "blank": np.swapaxes(res["blank"], 0, 1),
                "blank_reasons": res["blank_reasons"]}
    reasons = []
    if geo_x:  # one vectorized call per x column
        cols, whys = [], []
        for xv in x:
            p = dict(base)
            p[names[x_key]] = np.asarray(xv, float)
            p[names[y_key]] = y[:, None]
            cols.append(np.broadcast_to(break_even_efficiency(case, params=p), (len(y), nseg)))
            whys.append(blank_reasons(case, p, cols[-1], reasons))
        eff = np.stack(cols, axis=1)
        blank = np.stack(whys, axis=1)
    else:
        p = dict(base)
        p[names[x_key]] = x[None, :, None]
        rows = max(1, chunk_rows(case) // len(x))   # rows of the map per search: bounded memory
        eff = np.concatenate([
            np.broadcast_to(break_even_efficiency(
                case, params=dict(p, **{names[y_key]: y[j:j + rows, None, None]})),
                (len(y[j:j + rows]), len(x), nseg)) for j in range(0, len(y), rows)])
        blank = np.concatenate([   # row by row: bounded memory
            blank_reasons(case, dict(p, **{names[y_key]: y[j:j + 1, None, None]}),
                          eff[j:j + 1], reasons) for j in range(len(y))])
    eff = np.array(eff, float)
    eff[..., ~case.blowing] = np.nan
    blank[..., ~case.blowing] = -1
    point = tuple(float(outcome.slot_ratio) if k == "slot.ratio" else case_value(case, k)
                  for k in (x_key, y_key))
    return {"x_key": x_key, "x": x, "y_key": y_key, "y": y, "efficiency": eff,
            "case_point": point, "blank": blank, "blank_reasons": reasons}


#: Momentum-coefficient points over the calibrated range on which :func:`blank_reasons` looks.
BLANK_GRID = 41


def blank_reasons(case, params, efficiency, reasons):
    """Why each NaN break-even efficiency is blank, in words for a figure's legend.

    Mirrors the admissibility test of the break-even search
    (:func:`mdao.optimum.breakeven.break_even_efficiency`) on a log grid of the calibrated
    momentum-coefficient range: a point counts where the jet saves propulsion power and every
    per-segment constraint of the search holds. Reasons, first that applies: "no fan efficiency
    up to 1 breaks even" (admissible points exist, each needs more); "blowing saves no
    propulsion power" (the slot penalty outweighs the jet everywhere); "<constraint> broken
    wherever blowing saves power"; "no admissible C_mu: <constraints> together".

    Parameters
    ----------
    case : mdao.case.Case
    params : dict
        Chain parameters with the map's leading axes (as for the search).
    efficiency : ndarray
        The break-even efficiencies of those parameters, [-] (NaN: blank).
    reasons : list of str
        Reasons met so far; new ones are appended (the codes index it).

    Returns
    -------
    ndarray of int
        Shape of ``efficiency``: index into ``reasons``, -1 where not blank.
    """
    from mdao.optimum import breakeven

    eff = np.asarray(efficiency, float)
    code = np.full(eff.shape, -1)
    if not np.any(np.isnan(eff)):
        return code
    p = chain.lift_dependent(dict(params), chain_options(case))
    p.pop("fan_pressure_rise", None)
    lo, hi = case.airfoil["momentum_coefficient_range"]
    grid = np.geomspace(lo, hi, BLANK_GRID)
    pe = {k: (np.asarray(v)[..., None] if k != "pressure_coefficients" else v)
          for k, v in p.items()}
    out = chain.evaluate(dict(pe, momentum_coefficient=grid), chain_options(case), blowing=True)
    saves = out["propulsion_power_saving"] > 0
    out["momentum_coefficient"] = np.broadcast_to(grid, np.shape(saves))
    cons = breakeven._admissible_constraints(case)
    held = {}
    for c in cons:    # None: the chain does not give the constraint's quantity here
        ok = constraints.holds(case, out, [c], tol=1e-12, blowing=True, per_point=True)
        held[c.name] = np.broadcast_to(True if ok is None else ok, saves.shape)
    every = np.logical_and.reduce([saves] + list(held.values()))

    def anywhere(a):    # over the momentum-coefficient grid
        return np.broadcast_to(np.any(a, axis=-1), eff.shape)

    def mark(where, text):
        where = where & np.isnan(eff) & (code < 0)
        if np.any(where):
            if text not in reasons:
                reasons.append(text)
            code[where] = reasons.index(text)

    mark(anywhere(every), "no fan efficiency up to 1 breaks even")
    mark(~anywhere(saves), "blowing saves no propulsion power (the slot penalty outweighs the jet)")
    for c in cons:
        mark(~anywhere(saves & held[c.name]),
             f"no admissible C_mu: {c.name} broken wherever blowing saves power")
    # the rest: the constraints that cut the saving range, named together
    cuts = sum((1 << k) * anywhere(saves & ~held[c.name]).astype(np.int64)
               for k, c in enumerate(cons))
    for bits in np.unique(cuts[np.isnan(eff) & (code < 0)]):
        names = [c.name for k, c in enumerate(cons) if bits >> k & 1]
        mark(cuts == bits, "no admissible C_mu: " + ", ".join(names[:-1]) + " and "
             + names[-1] + " together" if len(names) > 1 else "no admissible C_mu")
    return code


def case_value(case, key):
    """A case constant as one number: a constant tabulated over the lift coefficient is read at
    the first blowing segment's lift (where a map marks the case's point)."""
    value = case.value(key)
    if isinstance(value, LiftTable):
        first = int(np.flatnonzero(case.blowing)[0])
        return float(interpolate(value, segment_lift(case)[first]))
    return float(value)


def review_maps(case, outcome, points=31):
    """The two break-even maps of the review.

    1. Slot ratio (the slot-ratio bounds, else 0.5-2 times the ratio) against the jet loss
       factor (lumped: 1 to max(2.5, 1.6 K_j)) or, for the geometric duct, ``duct.extra_loss``
       (0 to max(0.5, 3 times the case's)).
    2. ``airfoil.slot_drag`` (0 to max(0.03, 3 times the case's)) against
       ``airfoil.drag_per_momentum`` (min(-3, 1.6 beta) to -0.5).

    Returns
    -------
    list of dict
        :func:`break_even_map` results, each with a ``title``.
    """
    if points < 2:
        raise ValueError(f"points = {points!r}: allowed >= 2")
    r = case.slot["ratio"]
    bounds = case.slot["ratio_bounds"]
    rs = np.linspace(*(bounds if constraints.slot_ratio_free(case)
                       else (0.5 * r, min(2 * r, 0.2))), points)
    if case.duct["model"] == "lumped":
        kj = case_value(case, "duct.jet_loss_factor")
        first = break_even_map(case, outcome, "slot.ratio", rs, "duct.jet_loss_factor",
                               np.linspace(1.0, max(2.5, 1.6 * kj), points))
        first["title"] = "Break-even fan efficiency: slot ratio against jet loss factor"
    else:
        ex = case.duct["extra_loss"]
        first = break_even_map(case, outcome, "slot.ratio", rs, "duct.extra_loss",
                               np.linspace(0.0, max(0.5, 3 * ex), points))
        first["title"] = ("Break-even fan efficiency: slot ratio against the duct loss adder "
                          "(geometric duct: the jet loss factor is built from the geometry)")
    sd = case_value(case, "airfoil.slot_drag")
    beta = case_value(case, "airfoil.drag_per_momentum")
    second = break_even_map(case, outcome, "airfoil.slot_drag",
                            np.linspace(0.0, max(0.03, 3 * sd), points),
                            "airfoil.drag_per_momentum",
                            np.linspace(min(-3.0, 1.6 * beta), -0.5, points))
    second["title"] = "Break-even fan efficiency: slot penalty against drag per momentum coefficient"
    return [first, second]
