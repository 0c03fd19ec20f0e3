"""Break-even fan efficiency: the least fan efficiency at which the best point still saves power.

For a segment at a given slot ratio, with the fan supplying exactly the required pressure rise,
the net saving is :math:`P_{prop}(C_\\mu) - P_{ideal}(C_\\mu)/(\\eta_{fan}\\eta_{motor})`, where
:math:`P_{ideal}` is the fan power at unit efficiency. It is positive for some admissible
:math:`C_\\mu` exactly when :math:`\\eta_{fan} > \\min_{C_\\mu} P_{ideal}/(\\eta_{motor}
P_{prop})` over the points where :math:`P_{prop} > 0`. Admissible points lie in the calibrated
momentum-coefficient range, need at least the fan's minimum pressure rise (the fan is not idle)
and at most its maximum, and keep the jet Mach number within its limit. A fan map's own
efficiency curve and speed limits do not enter: the answer is the efficiency the fan must reach.

The lumped model has the closed form of :func:`mdao.physics.power.break_even_lumped`; other
models are searched on a grid and refined by golden sections, vectorized over segments (and any
other leading axes).
"""
import numpy as np

from mdao import constraints
from mdao.physics import atmosphere, chain, duct, power
from mdao.physics import airfoil
from mdao.physics.airfoil import drag_per_momentum_at, slot_drag_at
from mdao.system import (POINTS_PER_EVALUATION, chain_options, chain_parameters,
                         rows_per_evaluation)

#: Constraints a break-even point need not meet: the rating (the answer is about the fan's
#: efficiency, whatever its size) and the high-lift requirement (a high-lift segment blows for
#: lift, not to save; its break-even efficiency is not reported).
NOT_FOR_BREAK_EVEN = ("rated power", "high-lift requirement")
GRID = 81
GOLDEN_STEPS = 45  # the bracket shrinks to 1e-9 of one grid step
#: Operating points (times the geometric duct's stations) per chain evaluation of the search's
#: grid: a map of many points evaluates its grid in parts along the grid, so that the
#: temporaries stay small.
GRID_BUDGET = POINTS_PER_EVALUATION


def admissible_range(case, params):
    """Lower and upper momentum coefficient per point for the break-even search (lumped bounds).

    Lower: the calibrated minimum, raised to where the required rise reaches the fan's minimum
    (lumped model only; other models filter on the evaluated rise). Upper: the calibrated maximum,
    lowered to the jet Mach limit and to the fan's maximum pressure rise (lumped). The bounds are
    those of the declared constraints (:mod:`mdao.constraints`), solved for the momentum
    coefficient.
    """
    lo, hi = constraints.bounds(constraints.BY_NAME["calibrated momentum coefficient range"], case)
    _, max_jet_mach = constraints.bounds(constraints.BY_NAME["jet Mach limit"], case)
    min_rise, max_rise = constraints.bounds(constraints.BY_NAME["fan pressure rise limits"], case)
    atm = atmosphere.isa(params["altitude"])
    q = 0.5 * atm.density * params["speed"] ** 2
    r = params["slot_ratio"]
    mach_cap = 2 * r * (max_jet_mach * atm.speed_of_sound / params["speed"]) ** 2
    low = np.full(np.shape(q), lo)
    high = np.minimum(hi, mach_cap)
    if case.duct["model"] == "lumped":
        kj, ki = params["jet_loss_factor"], params["freestream_assist"]
        low = np.maximum(low, 2 * r * (ki + min_rise / q) / kj)
        high = np.minimum(high, 2 * r * (ki + max_rise / q) / kj)
    return low, high


def _admissible_constraints(case):
    """The constraints a break-even point must meet: all per-segment ones but the fan map's own
    limits (the answer is the efficiency the fan must reach, whatever fan gives it)."""
    return [c for c in constraints.applicable(case, follow_requirement=True)
            if c.per_segment and c.name not in constraints.FAN_MAP_LIMITS + NOT_FOR_BREAK_EVEN]


def _air_power_per_saving(case, params, cmu):
    """P_ideal / (eta_motor P_prop) at momentum coefficients ``cmu``; +inf where inadmissible."""
    out = chain.evaluate(dict(params, momentum_coefficient=cmu), chain_options(case), blowing=True)
    prop = out["propulsion_power_saving"]
    out["momentum_coefficient"] = np.broadcast_to(cmu, np.shape(prop))
    ok = (prop > 0) & constraints.holds(case, out, _admissible_constraints(case), tol=1e-12,
                                        blowing=True, per_point=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = out["air_power"] / (params["motor_efficiency"] * prop)
    return np.where(ok, r, np.inf)


def break_even_efficiency(case, slot_ratio=None, params=None, design=None):
    """Break-even fan efficiency of each segment; NaN where no efficiency up to 1 breaks even.

    Parameters
    ----------
    case : mdao.case.Case
    slot_ratio : float, optional
        Slot ratio to use (default: the case's).
    params : dict, optional
        Chain parameters (default: the case's); any may carry extra leading axes for maps.
    design : dict, optional
        Wing-level design values of an optimum (:func:`mdao.system.design_point`) that replace
        the case's (the slot ratio, a sized fan's rating, a free fan diameter).

    Returns
    -------
    ndarray
        Per segment (and leading axes of ``params``); NaN for non-blowing segments too.
    """
    p = chain_parameters(case, **(design or {})) if params is None else dict(params)
    # constants tabulated over the lift as numbers at each segment's lift (the closed forms
    # take numbers; the segment's lift does not move in this search)
    p = chain.lift_dependent(p, chain_options(case))
    if slot_ratio is not None:
        p["slot_ratio"] = np.asarray(slot_ratio, float)
    p.pop("fan_pressure_rise", None)
    lo, hi = admissible_range(case, p)
    shape = np.broadcast(lo, hi, *[np.asarray(v) for k, v in p.items()
                                    if k != "pressure_coefficients"]).shape
    lo, hi = np.broadcast_to(lo, shape), np.broadcast_to(hi, shape)
    if case.duct["model"] == "lumped" and case.fan["model"] == "constant" and not case.fan["compressible"]:
        jet_head, ram_recovery = duct.lumped_coefficients(
            p["jet_loss_factor"], p["freestream_assist"], p["slot_ratio"])
        slot_drag = slot_drag_at(p["slot_ratio"], p["slot_drag"], p["slot_drag_per_ratio"])
        beta = drag_per_momentum_at(p["slot_ratio"], p["drag_per_momentum"],
                                    p["drag_per_momentum_per_ratio"])
        eff, cmu = power.break_even_lumped(jet_head, ram_recovery, slot_drag, beta, lo, hi,
                                           argmin=True)
        eff = eff * p["chain_efficiency"] / p["motor_efficiency"]
        # The closed form knows nothing of the energy balance: where its best point breaks
        # it (or a quadratic drag term is given), search the admissible points instead. The
        # balance in its non-dimensional form (powers over q S V, speed 1).
        with np.errstate(invalid="ignore"):
            margin = power.energy_margin(
                jet_head * cmu ** 1.5 - ram_recovery * cmu ** 0.5,
                airfoil.drag_coefficient(cmu, p["slot_ratio"], *(p[k] for k in airfoil.DRAG_INPUTS[2:])),
                1.0, p["thrust_power_ceiling"])
        if np.any(np.asarray(p["drag_quadratic"]) != 0):
            eff = _search(case, p, lo, hi)
        elif np.any(margin < 0):
            eff = np.where(margin < 0, _search(case, p, lo, hi), eff)
    else:
        eff = _search(case, p, lo, hi)
    eff = np.broadcast_to(np.asarray(eff, float), shape).copy()
    eff[(eff > 1.0) | ~np.isfinite(eff) | (hi <= lo)] = np.nan
    if params is None:
        eff[..., ~case.blowing] = np.nan
        eff[..., case.high_lift] = np.nan
    return eff


def _grid_ratios(case, p, grid):
    """:func:`_air_power_per_saving` on a grid of momentum coefficients along the last axis, in
    parts of at most :data:`GRID_BUDGET` points along it (each point elementwise: the same values
    as in one call)."""
    column = np.broadcast_shapes(grid.shape[:-1] + (1,), *(
        np.shape(v) for k, v in p.items() if k != "pressure_coefficients"))
    step = rows_per_evaluation(case, np.prod(column), GRID_BUDGET)
    if step >= grid.shape[-1]:
        return _air_power_per_saving(case, p, grid)
    return np.concatenate([_air_power_per_saving(case, p, grid[..., i:i + step])
                           for i in range(0, grid.shape[-1], step)], axis=-1)


def _search(case, p, lo, hi):
    """Grid then vectorized golden-section search of min ratio over [lo, hi] (log scale).

    The ratio is +inf where a point is inadmissible, so it need not be unimodal in the bracket:
    the search keeps the best point it has evaluated (the grid's to begin with) and returns its
    value if no later point beats it; where both interior points are inadmissible it keeps the
    part of the bracket that holds that best point."""
    t = np.linspace(0.0, 1.0, GRID)
    llo, lhi = np.log(lo)[..., None], np.log(np.maximum(hi, lo))[..., None]
    grid = np.exp(llo + (lhi - llo) * t)
    pe = {k: (np.asarray(v)[..., None] if k != "pressure_coefficients" else v)
          for k, v in p.items()}
    vals = _grid_ratios(case, pe, grid)
    k = np.argmin(vals, axis=-1)
    a = np.take_along_axis(grid, np.maximum(k - 1, 0)[..., None], -1)[..., 0]
    b = np.take_along_axis(grid, np.minimum(k + 1, GRID - 1)[..., None], -1)[..., 0]
    x_best = np.take_along_axis(grid, k[..., None], -1)[..., 0]
    best = np.take_along_axis(vals, k[..., None], -1)[..., 0]
    # golden sections (Kiefer 1953): each step keeps one interior point and its value, so it
    # evaluates the chain once, at the new interior point of each bracket
    g = (np.sqrt(5.0) - 1.0) / 2.0
    c, d = b - g * (b - a), a + g * (b - a)
    fc, fd = _air_power_per_saving(case, p, c), _air_power_per_saving(case, p, d)
    x_best, best = _better(x_best, best, c, fc)
    x_best, best = _better(x_best, best, d, fd)
    for _ in range(GOLDEN_STEPS):
        # the least value lies in [a, d] where f(c) < f(d), else in [c, b]; where both points
        # are inadmissible, in the part that holds the best point so far
        left = np.where(np.isinf(fc) & np.isinf(fd), x_best <= d, fc < fd)
        a, b = np.where(left, a, c), np.where(left, d, b)
        kept, f_kept = np.where(left, c, d), np.where(left, fc, fd)
        new = np.where(left, b - g * (b - a), a + g * (b - a))
        f_new = _air_power_per_saving(case, p, new)
        c, fc = np.where(left, new, kept), np.where(left, f_new, f_kept)
        d, fd = np.where(left, kept, new), np.where(left, f_kept, f_new)
        x_best, best = _better(x_best, best, new, f_new)
    mid = 0.5 * (a + b)
    return np.minimum(best, _air_power_per_saving(case, p, mid))


def _better(x_best, best, x, f):
    """Elementwise, the better of the best point so far (``x_best``, value ``best``) and ``x``
    (value ``f``)."""
    take = f < best
    return np.where(take, x, x_best), np.where(take, f, best)
