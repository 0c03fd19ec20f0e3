r"""The energy balance (first law) of the runs and of the fitted model.

In steady flight, seen from the undisturbed air, the air receives the fans' air power
:math:`P_{air} = Q\,\Delta p_{fan}` and the work :math:`D V` of the section's drag, and keeps it as
kinetic energy of the wake and jet and as heat, neither of which can be negative [1]_. So a blown
section cannot return more net thrust power than its fans put into the air; over
:math:`q S V` (:math:`q = \rho V^2/2`, :math:`S` = chord x span) the margin is

.. math::
    m = C_D + c\,\frac{P_{air}}{q S V} \ge 0 ,

with :math:`c = 1` here: the physical limit (a case's ``airfoil.thrust_power_ceiling`` is a
designer's demand, which run data do not know). The margin is
:func:`mdao.physics.power.energy_margin`, applied to the non-dimensional powers (speed 1).

Two checks:

- each jet-on run, with its measured drag coefficient and air power (negative when the fan
  windmills, :math:`\Delta p_{fan} < 0`: it then takes power out of the air, and the first law
  counts it so). A run that breaks the balance is flagged by its 1-based data row and kept in the
  fit, like an outlier: a measurement or a run set-up to look at, not a datum to drop silently.
- the fitted lumped model, :math:`m = c\,(a_j C_\mu^{3/2} - a_r C_\mu^{1/2}) + C_D(C_\mu, r_s)`
  [2]_, on a grid over the calibrated momentum-coefficient range and slot ratios across the
  calibrated slot-ratio range. Where it is negative the model credits more thrust than the
  fans can pay for; the optimizer's "energy consistency" constraint (:mod:`mdao.constraints`)
  keeps designs away from that part of the range.

References
----------
.. [1] Drela, M. "Power balance in aerodynamic flows." AIAA Journal 47(7) (2009) 1761-1771 (the
   power balance: shaft power and drag power equal the wake's kinetic energy flux plus viscous
   dissipation, both non-negative) (from memory).
.. [2] docs/theory.md, sections "Net power" and "What keeps the answer physical: the energy
   balance" (the lumped model's non-dimensional air power and the balance in that form).
"""
import numpy as np

from mdao.parameters import CHAIN_PARAMETERS
from mdao.physics.airfoil import drag_coefficient
from mdao.physics.duct import lumped_coefficients
from mdao.physics.power import energy_margin

__all__ = ["PHYSICAL_CEILING", "GRID_MOMENTUM", "GRID_SLOT", "run_margins", "model_margin",
           "energy_balance"]

#: Share of the air power that may return as thrust power in these checks: the physical limit.
PHYSICAL_CEILING = 1.0
#: Momentum coefficients of the fitted-model grid (evenly spaced, both ends included).
GRID_MOMENTUM = 101
#: Slot ratios of the fitted-model grid (evenly spaced, both ends included; one when the runs
#: have a single slot ratio).
GRID_SLOT = 5

_CONDITION = ("C_D + P_air/(q S V) >= 0, P_air = Q dP_fan, c = 1 (first law; Drela, AIAA Journal "
              "47(7), 2009)")


def run_margins(runs, d):
    """Energy-balance margin of each run, :math:`C_D + P_{air}/(q S V)`, [-].

    Parameters
    ----------
    runs : dict of str to ndarray
        Checked columns in SI (``speed``, ``chord``, ``span``, ``drag_coefficient``).
    d : dict
        :func:`mdao.studies.calibration.runs.derived` of the runs (``air_power``,
        ``dynamic_pressure``).

    Returns
    -------
    margin, air_power_coefficient : ndarray
        The margin and :math:`P_{air}/(q S V)`, [-], one per run (jet-off runs: the drag
        coefficient and 0).
    """
    power_scale = (d["dynamic_pressure"] * runs["chord"] * runs["span"] * runs["speed"])
    air = d["air_power"] / power_scale
    return energy_margin(air, runs["drag_coefficient"], 1.0, PHYSICAL_CEILING), air


def _model_value(constants, key):
    """A constant of the fitted model: fitted, else the parameter's default (mdao.parameters)."""
    if key in constants:
        return constants[key]
    parameter = next(p for p in CHAIN_PARAMETERS if p.key == key)
    return parameter.default


def model_margin(constants, momentum_coefficient, slot_ratio):
    r"""The fitted lumped model's energy-balance margin, [-].

    .. math:: m = c\,(a_j C_\mu^{3/2} - a_r C_\mu^{1/2}) + C_D(C_\mu, r_s), \quad c = 1

    with :math:`a_j, a_r` from :func:`mdao.physics.duct.lumped_coefficients` and :math:`C_D` from
    :func:`mdao.physics.airfoil.drag_coefficient`.

    Parameters
    ----------
    constants : dict of str to float
        Constant values by case key path (``duct.jet_loss_factor``, ``airfoil.drag_clean``...);
        a constant the calibration did not give takes its default from :mod:`mdao.parameters`
        (``airfoil.drag_quadratic`` 0: the calibrated model is linear in the momentum
        coefficient).
    momentum_coefficient, slot_ratio : array_like
        :math:`C_\mu` and :math:`r_s`, [-], broadcast together.

    Returns
    -------
    ndarray
        The margin, [-]; negative breaks the balance.
    """
    cmu = np.asarray(momentum_coefficient, float)
    ratio = np.asarray(slot_ratio, float)
    jet_head, ram_recovery = lumped_coefficients(constants["duct.jet_loss_factor"],
                                                 constants["duct.freestream_assist"], ratio)
    drag = drag_coefficient(cmu, ratio, **{
        name: _model_value(constants, "airfoil." + name)
        for name in ("drag_clean", "slot_drag", "slot_drag_per_ratio", "drag_per_momentum",
                     "drag_per_momentum_per_ratio", "drag_quadratic")})
    air = jet_head * cmu ** 1.5 - ram_recovery * np.sqrt(cmu)
    return energy_margin(air, drag, 1.0, PHYSICAL_CEILING)


def _fitted_model_check(constants, validity):
    low, high = validity["momentum_coefficient"]
    ratio_low, ratio_high = validity["slot_ratio"]
    cmu = np.linspace(low, high, GRID_MOMENTUM)
    ratios = (np.linspace(ratio_low, ratio_high, GRID_SLOT) if ratio_high > ratio_low
              else np.array([ratio_low]))
    margin = model_margin(constants, cmu[:, None], ratios[None, :])
    i, j = np.unravel_index(np.argmin(margin), margin.shape)
    return {
        "momentum_coefficient_range": [float(low), float(high)],
        "momentum_coefficient_points": int(cmu.size),
        "slot_ratios": ratios.tolist(),
        "worst": {"momentum_coefficient": float(cmu[i]), "slot_ratio": float(ratios[j]),
                  "margin": float(margin[i, j])},
        "broken_share": float(np.count_nonzero(margin < 0) / margin.size),
    }


def energy_balance(runs, d, constants, validity):
    """Both energy-balance checks, JSON-ready.

    Parameters
    ----------
    runs : dict of str to ndarray
        Checked columns in SI.
    d : dict
        :func:`mdao.studies.calibration.runs.derived` of the runs.
    constants : dict
        The calibration's constants (case key path -> ``{'value': ...}``).
    validity : dict
        The ranges covered (``momentum_coefficient``, ``slot_ratio``).

    Returns
    -------
    dict
        ``condition`` (in words), ``thrust_power_ceiling`` (1), ``jet_on_runs``,
        ``broken_runs`` (each ``row`` (1-based), ``margin``, ``drag_coefficient``,
        ``air_power_coefficient`` :math:`P_{air}/(q S V)`), ``fitted_model`` (the grid,
        ``worst`` point ``momentum_coefficient``, ``slot_ratio``, ``margin``, and
        ``broken_share``, the share of grid points with a negative margin) and ``warnings``.
    """
    margin, air = run_margins(runs, d)
    on = np.asarray(d["jet_on"], bool)
    broken = np.flatnonzero(on & (margin < 0))
    broken_runs = [{"row": int(i + 1), "margin": float(margin[i]),
                    "drag_coefficient": float(runs["drag_coefficient"][i]),
                    "air_power_coefficient": float(air[i])} for i in broken]
    fitted = _fitted_model_check({k: v["value"] for k, v in constants.items()}, validity)
    found = []
    if broken_runs:
        worst = min(broken_runs, key=lambda b: b["margin"])
        found.append(
            f"{len(broken_runs)} of {int(on.sum())} jet-on runs return more net thrust power than "
            f"their fans put into the air (C_D + P_air/(q S V) < 0; worst margin "
            f"{worst['margin']:.4g} at row {worst['row']}); kept in the fit: check their drag, "
            "flow and fan pressure rise")
    w = fitted["worst"]
    if w["margin"] < 0:
        found.append(
            f"the fitted model breaks the energy balance on {100 * fitted['broken_share']:.0f} % "
            f"of a {fitted['momentum_coefficient_points']} x {len(fitted['slot_ratios'])} grid "
            f"over the calibrated range (C_mu {fitted['momentum_coefficient_range'][0]:.4g} to "
            f"{fitted['momentum_coefficient_range'][1]:.4g}, slot ratio "
            f"{fitted['slot_ratios'][0]:.4g} to {fitted['slot_ratios'][-1]:.4g}); worst margin "
            f"{w['margin']:.4g} at C_mu {w['momentum_coefficient']:.4g}, slot ratio "
            f"{w['slot_ratio']:.4g}: the optimizer's energy consistency constraint will keep the "
            "design away from that part of the range")
    return {"condition": _CONDITION, "thrust_power_ceiling": PHYSICAL_CEILING,
            "jet_on_runs": int(on.sum()), "broken_runs": broken_runs, "fitted_model": fitted,
            "warnings": found}
