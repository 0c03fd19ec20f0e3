"""The design constraints, each declared once.

Each :class:`Constraint` names, in words, what keeps a design physical or inside the model's
validity, which quantity it bounds (a promoted output or design variable of
:class:`mdao.system.BlownWingGroup`), the case key paths that give its bounds, and the duct and
fan models it applies to. Everything that needs the constraint set reads it from here: the
problem builder (design-variable bounds, ``add_constraint``, the pressure balance), the
feasibility check of a returned optimum, the active-set report, the multiplier sensitivities,
the sweeps' infeasible bands, the Monte Carlo's sample filtering and the break-even search.

The functions take any ``case`` object with ``value(key)``, ``duct``, ``fan``, ``slot`` and
``blowing`` (:class:`mdao.case.Case`) and a mapping of values by promoted name (segments on the
last axis, any leading axes for samples or grids). Plain NumPy; nothing else of the package.
"""
from dataclasses import dataclass

import numpy as np

#: Relative closeness to a bound that counts as active.
ACTIVE_TOL = 1e-4
#: Relative violation that still counts as feasible.
FEASIBLE_TOL = 1e-6


@dataclass(frozen=True)
class Constraint:
    """One design constraint.

    Attributes
    ----------
    name : str
        The constraint in words, as reports show it.
    quantity : str
        Promoted name of the bounded output or design variable; ``pressure_balance`` is the fan
        pressure rise minus the required pressure rise.
    lower, upper : str, float or None
        Case key paths of the bounds (``"key[0]"`` and ``"key[1]"`` take the ends of a pair),
        or a number.
    equals : float or None
        Value of an equality constraint.
    per_segment : bool
        One value per segment, constrained where the fan runs (else one for the wing, or one per
        transition station).
    design_variable : bool
        A bound on a design variable (the driver holds it) rather than an output constraint.
    duct_models, fan_models : tuple of str
        The models it applies to.
    scale_by : str or None
        A quantity whose largest magnitude over the blowing segments sizes the constraint (the
        optimizer's ``ref``, and the margin of a bound at zero) instead of its bounds.
    condition : str or None
        A further condition on the case: ``"slot ratio free"`` (the slot ratio is a design
        variable), ``"minimum slot height"`` (the case sets one), ``"aircraft"`` (the case
        describes the aircraft around the wing, ``[aircraft]``), ``"high-lift"`` (a segment
        of kind ``"high-lift"``), ``"sized fan"`` (``[aircraft]`` and ``[mass]``: the rated
        power is a design variable), ``"fan diameter free"`` (``duct.fan_diameter_bounds``) or
        ``"fan fit"`` (the fan diameter is free and ``wing.thickness_ratio`` given).
    segments : str
        Where a per-segment constraint applies: ``"blowing"`` (every segment whose fan runs)
        or ``"high-lift"`` (the high-lift segments).
    """

    name: str
    quantity: str
    lower: str = None
    upper: str = None
    equals: float = None
    per_segment: bool = True
    design_variable: bool = False
    duct_models: tuple = ("lumped", "geometric")
    fan_models: tuple = ("constant", "map")
    scale_by: str = None
    condition: str = None
    segments: str = "blowing"


#: The constraint set, in report order.
CONSTRAINTS = (
    Constraint("slot ratio bounds", "slot_ratio", lower="slot.ratio_bounds[0]",
               upper="slot.ratio_bounds[1]", per_segment=False, design_variable=True,
               condition="slot ratio free"),
    Constraint("calibrated momentum coefficient range", "momentum_coefficient",
               lower="airfoil.momentum_coefficient_range[0]",
               upper="airfoil.momentum_coefficient_range[1]", design_variable=True),
    Constraint("fan pressure rise limits", "fan_pressure_rise", lower="fan.min_pressure_rise",
               upper="fan.max_pressure_rise", design_variable=True,
               scale_by="required_pressure_rise"),
    Constraint("pressure balance", "pressure_balance", equals=0.0,
               scale_by="required_pressure_rise"),
    Constraint("energy consistency", "energy_margin", lower=0.0, scale_by="air_power"),
    Constraint("jet Mach limit", "jet_mach", upper="slot.max_jet_mach"),
    Constraint("fan speed limit", "fan_speed", upper="fan.max_speed", fan_models=("map",)),
    Constraint("fan map flow range", "flow_coefficient", lower="fan.flow_coefficient_range[0]",
               upper="fan.flow_coefficient_range[1]", fan_models=("map",)),
    Constraint("transition diffusion limit", "diffusion_half_angle",
               upper="duct.max_diffusion_half_angle", per_segment=False,
               duct_models=("geometric",)),
    # the wall divergence limit, on each pair of walls; converging walls are not bounded (they
    # accelerate the flow along them: docs/theory.md, "Wall divergence")
    Constraint("span wall divergence limit", "span_wall_half_angle",
               upper="duct.max_wall_half_angle", per_segment=False, duct_models=("geometric",)),
    Constraint("thickness wall divergence limit", "thickness_wall_half_angle",
               upper="duct.max_wall_half_angle", per_segment=False, duct_models=("geometric",)),
    Constraint("minimum slot height", "slot_height", lower="slot.min_height", per_segment=False,
               condition="minimum slot height"),
    Constraint("main thrust floor", "main_thrust", lower="aircraft.min_main_thrust",
               condition="aircraft"),
    Constraint("high-lift requirement", "lift_reserve", lower=0.0, condition="high-lift",
               segments="high-lift"),
    Constraint("rated power bounds", "rated_shaft_power", lower=0.0, per_segment=False,
               design_variable=True, condition="sized fan"),
    Constraint("rated power", "power_headroom", lower=0.0, scale_by="rated_shaft_power",
               condition="sized fan"),
    Constraint("fan diameter bounds", "fan_diameter", lower="duct.fan_diameter_bounds[0]",
               upper="duct.fan_diameter_bounds[1]", per_segment=False, design_variable=True,
               condition="fan diameter free"),
    Constraint("fan fit in the wing", "fan_thickness_fraction",
               upper="duct.max_fan_thickness_fraction", per_segment=False, condition="fan fit"),
)

#: Constraint by name.
BY_NAME = {c.name: c for c in CONSTRAINTS}
#: Constraints of the fan map itself, which a break-even efficiency does not assume.
FAN_MAP_LIMITS = ("fan speed limit", "fan map flow range")


def slot_ratio_free(case):
    """Whether the slot ratio is a design variable (bounds given and apart:
    :attr:`mdao.case.Case.design_keys`)."""
    return "slot.ratio" in case.design_keys


def fan_diameter_free(case):
    """Whether the fan diameter is a design variable (``duct.fan_diameter_bounds`` given and
    apart: :attr:`mdao.case.Case.design_keys`)."""
    return "duct.fan_diameter" in case.design_keys


def segment_mask(constraint, case, blowing=None):
    """Per segment: does a per-segment constraint apply (its fan runs, and for
    ``segments="high-lift"`` the segment is a high-lift one)?"""
    mask = case.blowing if blowing is None else blowing
    if constraint.segments == "high-lift":
        kinds = np.array([s.get("kind", "cruise") == "high-lift" for s in case.segments])
        mask = np.asarray(mask, bool) & kinds
    return mask


def _condition_holds(constraint, case):
    if constraint.condition is None:
        return True
    if constraint.condition == "slot ratio free":
        return slot_ratio_free(case)
    if constraint.condition == "minimum slot height":  # a fixed slot is checked on loading
        return case.slot["min_height"] > 0 and slot_ratio_free(case)
    if constraint.condition == "aircraft":
        return bool(getattr(case, "has_aircraft", False))
    if constraint.condition == "high-lift":
        return bool(np.any(segment_mask(constraint, case)))
    if constraint.condition == "sized fan":
        return bool(getattr(case, "sizes_fan", False))
    if constraint.condition == "fan diameter free":
        return fan_diameter_free(case)
    if constraint.condition == "fan fit":
        return fan_diameter_free(case) and case.value("wing.thickness_ratio") is not None
    raise ValueError(f"unknown constraint condition {constraint.condition!r}")


def applicable(case, follow_requirement=False):
    """The constraints that apply to a case (its models and conditions).

    With ``follow_requirement`` the fan pressure rise is the requirement itself: the pressure
    balance holds by construction and the pressure-rise limits bound an output.
    """
    out = []
    for c in CONSTRAINTS:
        if case.duct["model"] not in c.duct_models or case.fan["model"] not in c.fan_models:
            continue
        if not _condition_holds(c, case):
            continue
        if follow_requirement and c.quantity == "pressure_balance":
            continue
        out.append(c)
    return out


def _bound(case, spec):
    if spec is None:
        return None
    if isinstance(spec, (int, float)):
        return float(spec)
    if spec.endswith("]"):
        key, index = spec[:-3], int(spec[-2])
        return float(case.value(key)[index])
    return float(case.value(spec))


def bounds(constraint, case):
    """``(lower, upper)`` of a constraint for a case, SI (None where it has none)."""
    if constraint.equals is not None:
        return constraint.equals, constraint.equals
    return _bound(case, constraint.lower), _bound(case, constraint.upper)


def reference(constraint, case, values=None, blowing=None, per_point=False):
    """A value of the constraint's size: the optimizer's ``ref`` for it.

    The largest magnitude of its ``scale_by`` quantity over the blowing segments (from
    ``values``), else the larger bound in magnitude (the fan's maximum pressure rise for the
    pressure balance). With ``per_point``, an array: each point's own magnitude of the
    ``scale_by`` quantity (the bound-based value where that is zero or not finite), so that a
    point's relative margin does not depend on the other points evaluated with it (searches
    over many candidate points).
    """
    if constraint.scale_by and values is not None and constraint.scale_by in values:
        v = np.abs(np.asarray(values[constraint.scale_by], float))
        if per_point:
            with np.errstate(invalid="ignore"):
                return np.where(np.isfinite(v) & (v > 0), v, reference(constraint, case))
        try:
            v = np.where(case.blowing if blowing is None else blowing, v, 0.0)
        except ValueError:  # the last axis is not the segments' (a search grid)
            pass
        v = v[np.isfinite(v)]
        if v.size and v.max() > 0:
            return float(v.max())
    if constraint.quantity == "pressure_balance":
        return float(case.fan["max_pressure_rise"])
    lo, hi = bounds(constraint, case)
    return max(abs(v) for v in (lo, hi) if v is not None) or 1.0


def quantity(constraint, values):
    """The constrained quantity from a mapping of values (the pressure balance computed)."""
    if constraint.quantity == "pressure_balance":
        return (np.asarray(values["fan_pressure_rise"], float)
                - np.asarray(values["required_pressure_rise"], float))
    return np.asarray(values[constraint.quantity], float)


def margin(constraint, case, values, blowing=None, per_point=False):
    """Relative margin of a constraint: >= 0 where it holds, < 0 by how much it is broken.

    Each side is divided by its own bound (where that is zero, and for the pressure balance,
    by :func:`reference`, with ``per_point`` each point's own). Per-segment constraints give NaN where the fan does not run
    (``blowing``, default the case's per segment; ``True`` everywhere for searches whose last
    axis is not the segments); a non-finite quantity gives ``-inf`` (broken). An equality's
    margin is ``-|gap|``.
    """
    x = quantity(constraint, values)
    lo, hi = bounds(constraint, case)
    with np.errstate(invalid="ignore", divide="ignore"):
        if constraint.equals is not None:
            m = -np.abs(x - constraint.equals) / reference(constraint, case, values, blowing,
                                                           per_point)
        else:
            big = reference(constraint, case, values, blowing, per_point)
            m = np.full(x.shape, np.inf)
            if lo is not None:
                m = np.minimum(m, (x - lo) / (abs(lo) or big))
            if hi is not None:
                m = np.minimum(m, (hi - x) / (abs(hi) or big))
        m = np.where(np.isfinite(x), m, -np.inf)
    if constraint.per_segment:
        m = np.where(segment_mask(constraint, case, blowing), m, np.nan)
    return m


def margins(case, values, constraints=None, blowing=None, per_point=False):
    """``{name: relative margin}`` of every applicable constraint whose quantity is in
    ``values`` (see :func:`margin`)."""
    cons = applicable(case) if constraints is None else constraints
    out = {}
    for c in cons:
        need = ("fan_pressure_rise", "required_pressure_rise") \
            if c.quantity == "pressure_balance" else (c.quantity,)
        if all(k in values for k in need):
            out[c.name] = margin(c, case, values, blowing, per_point)
    return out


def holds(case, values, constraints=None, tol=FEASIBLE_TOL, per_segment_only=False,
          blowing=None, per_point=False):
    """Where every constraint holds within ``tol``: a boolean array over the leading axes and
    segments (wing-level constraints broadcast over the segments; ``blowing`` and
    ``per_point`` as in :func:`margin`)."""
    cons = applicable(case) if constraints is None else constraints
    if per_segment_only:
        cons = [c for c in cons if c.per_segment]
    ok = None
    for name, m in margins(case, values, cons, blowing, per_point).items():
        c = BY_NAME[name]
        with np.errstate(invalid="ignore"):
            good = np.isnan(m) | (m >= -tol)
        if not c.per_segment:
            good = np.all(good, axis=-1, keepdims=True) if good.ndim else good
        ok = good if ok is None else ok & good
    return ok


def broken_at_fixed_design(case, values):
    """Per constraint, per sample: does some blowing segment break it at a fixed design?

    The case's per-segment constraints with the fan giving the required pressure rise; a
    ram-driven segment (no fan work needed) is counted apart, not as below the fan's minimum
    pressure rise.

    Returns
    -------
    dict
        ``{constraint name: bool ndarray over the samples}`` (``values`` with a leading sample
        axis, segments last), the constraints whose quantity the values give.
    """
    broken = {}
    for c in applicable(case, follow_requirement=True):
        if not c.per_segment:
            continue
        ok = holds(case, values, [c])
        if ok is None:
            continue
        if c.quantity == "fan_pressure_rise":
            ok = ok | (np.asarray(values["required_pressure_rise"]) <= 0)
        broken[c.name] = ~np.all(ok, axis=-1)
    return broken


def violations(case, values, tol=FEASIBLE_TOL, follow_requirement=False):
    """Words for each broken constraint at one design (empty: feasible)."""
    out = []
    for name, m in margins(case, values, applicable(case, follow_requirement)).items():
        c = BY_NAME[name]
        broken = np.nan_to_num(m, nan=np.inf) < -tol
        if not np.any(broken):
            continue
        lo, hi = bounds(c, case)
        x = quantity(c, values)
        if c.per_segment:
            where = [i for i in np.flatnonzero(broken)]
            worst = x[where]
            out.append(f"{name} broken in segment(s) {', '.join(str(i) for i in where)} "
                       f"(value {', '.join(f'{v:.4g}' for v in worst)}; "
                       f"allowed {_allowed(lo, hi)})")
        else:
            out.append(f"{name} broken (worst {float(np.max(np.abs(x[broken]))):.4g}; "
                       f"allowed {_allowed(lo, hi)})")
    return out


def _allowed(lo, hi):
    if lo is not None and lo == hi:
        return f"= {lo:.4g}"
    if lo is None:
        return f"<= {hi:.4g}"
    if hi is None:
        return f">= {lo:.4g}"
    return f"{lo:.4g} to {hi:.4g}"


def active(case, values, tol=ACTIVE_TOL, follow_requirement=False):
    """Binding constraints: ``(per_segment, wing)`` where ``per_segment[i]`` lists the names
    that bind in segment ``i`` and ``wing`` those of the wing (equalities are left out: they
    always bind)."""
    nseg = len(case.blowing)
    per, wing = [[] for _ in range(nseg)], []
    for name, m in margins(case, values, applicable(case, follow_requirement)).items():
        c = BY_NAME[name]
        if c.equals is not None:
            continue
        with np.errstate(invalid="ignore"):
            near = np.abs(m) <= tol
        if c.per_segment:
            for i in np.flatnonzero(near):
                per[i].append(name)
        elif np.any(near):
            wing.append(name)
    return per, wing


def active_rows(case, values, tol=ACTIVE_TOL):
    """Active constraints as ``(constraint, index)`` pairs, equalities included: index is the
    segment (per-segment constraints), the transition station (the diffusion and wall
    divergence limits) or 0."""
    rows = []
    for c in applicable(case):
        m = margin(c, case, values)
        with np.errstate(invalid="ignore"):
            near = (np.abs(m) <= tol) if c.equals is None else np.isfinite(m)
        for i in np.flatnonzero(np.atleast_1d(near)):
            rows.append((c, int(i)))
    return rows
