r"""Tables of blown-airfoil runs (CFD or wind tunnel): read, check, and reduce to model variables.

A run table is a CSV file whose header names each column with its unit in brackets, read by pint
(``speed [km/h]``, ``slot_height [mm]``, ``drag_coefficient [-]``; no bracket for a pure number).
:func:`read_runs` returns the columns in SI; :func:`derived` turns them into the quantities the
calibration fits use:

.. math::
    A_j = h b, \quad Q = \dot m / \rho, \quad V_j = Q / A_j, \quad q = \tfrac12 \rho V^2,
    \quad C_\mu = \frac{\dot m V_j}{q c b}, \quad r_s = \frac{h}{c},
    \quad Re = \frac{\rho V c}{\mu}, \quad P_{air} = Q\,\Delta p_{fan}.

The jet is taken at the freestream density (incompressible jet). The viscosity comes from the ISA
at the ``altitude`` column; when only ``density`` is given it is taken at the sea-level ISA
temperature, 288.15 K (Sutherland's law), and the result says so.

Columns (any order; units are examples, any pint unit of the same dimension is accepted):

==========================  ============  =========================================================
column                      SI unit       meaning
==========================  ============  =========================================================
speed                       m/s           freestream speed (> 0)
density                     kg/m^3        freestream density (> 0); this or ``altitude``
altitude                    m             ISA altitude, -5 to 20 km; sets density when ``density`` is
                                          absent, and the viscosity
chord                       m             chord (> 0)
span                        m             blown span of the model (1 m for a 2-D run) (> 0)
slot_height                 m             injection slot height (> 0)
fan_pressure_rise           Pa            total-pressure rise across the fan
mass_flow                   kg/s          jet mass flow (>= 0; 0 = jet off); this or ``volume_flow``
volume_flow                 m^3/s         jet volume flow at freestream density (>= 0)
drag_coefficient            -             section drag coefficient on chord x span
drag_coefficient_clean      -             optional: clean (unslotted) section's drag, same lift
lift_coefficient            -             optional: section lift coefficient
==========================  ============  =========================================================

References
----------
.. [1] ICAO. *Manual of the ICAO Standard Atmosphere*, Doc 7488/3, 1993 (ISA; Sutherland's law,
   :math:`\mu = 1.458\times10^{-6} T^{1.5} / (T + 110.4)`).
.. [2] Englar, R. J. "Circulation control pneumatic aerodynamics: blown force and moment
   augmentation and modification." AIAA Progress in Astronautics and Aeronautics 192 (2001),
   for the momentum coefficient.
"""

import numpy as np

from mdao.units import read_table

__all__ = ["CalibrationError", "COLUMNS", "read_runs", "check_runs", "derived", "fit_plan",
           "atmosphere_state"]


class CalibrationError(ValueError):
    """A run table or calibration file that cannot be used; the message names the column or the
    row (1-based data row) and what is allowed."""


#: Column name -> (SI unit for pint, required dimensionality as pint reports it, meaning).
COLUMNS = {
    "speed": ("m/s", "[length] / [time]", "freestream speed"),
    "density": ("kg/m^3", "[mass] / [length] ** 3", "freestream density"),
    "altitude": ("m", "[length]", "ISA altitude"),
    "chord": ("m", "[length]", "chord"),
    "span": ("m", "[length]", "blown span"),
    "slot_height": ("m", "[length]", "injection slot height"),
    "fan_pressure_rise": ("Pa", "[mass] / [length] / [time] ** 2", "fan total-pressure rise"),
    "mass_flow": ("kg/s", "[mass] / [time]", "jet mass flow"),
    "volume_flow": ("m^3/s", "[length] ** 3 / [time]", "jet volume flow"),
    "drag_coefficient": ("", "dimensionless", "drag coefficient"),
    "drag_coefficient_clean": ("", "dimensionless", "clean section's drag coefficient"),
    "lift_coefficient": ("", "dimensionless", "lift coefficient"),
}
_ALWAYS = ("speed", "chord", "span", "slot_height", "fan_pressure_rise", "drag_coefficient")
_POSITIVE = ("speed", "density", "chord", "span", "slot_height")
_NON_NEGATIVE = ("mass_flow", "volume_flow")
#: Largest magnitude of each column [SI] that any wind-tunnel or CFD run of a wing section could
#: have (beyond it a value is a typing or unit slip, and one such value can make a fit
#: non-finite): speeds up to 400 m/s (the case's limit), chord and span up to 100 m, densities up
#: to 100 kg/m^3 (a pressurized tunnel runs at a few), pressure rises up to 1 MPa, flows up to
#: 1e4 kg/s or m^3/s, force coefficients up to 100 in magnitude.
LIMITS = {"speed": 400.0, "density": 100.0, "chord": 100.0, "span": 100.0, "slot_height": 10.0,
          "fan_pressure_rise": 1e6, "mass_flow": 1e4, "volume_flow": 1e4,
          "drag_coefficient": 100.0, "drag_coefficient_clean": 100.0, "lift_coefficient": 100.0}


def _model_high(key):
    """The upper end of a model quantity's allowed range (the declarations and the case
    schema), for run tables."""
    from mdao.case.schema import spec_of
    return spec_of(key).high


def fit_plan(runs):
    """Which fits the runs allow and how many constants each has.

    Parameters
    ----------
    runs : dict of str to ndarray
        Columns in SI (as from :func:`read_runs`).

    Returns
    -------
    dict
        ``{'duct': (n_params, n_runs), 'drag': (n_params, n_runs), 'lift': ...}`` (lift only
        with ``lift_coefficient``) and ``'several_slot_ratios'``: bool.
    """
    n = len(runs["speed"])
    ratio = np.asarray(runs["slot_height"], float) / np.asarray(runs["chord"], float)
    several = _distinct_count(ratio) > 1
    flow = runs["mass_flow"] if "mass_flow" in runs else runs["volume_flow"]
    plan = {"duct": (2, int(np.count_nonzero(np.asarray(flow) > 0))),
            "drag": (4 if several else 2, n), "several_slot_ratios": several}
    if "lift_coefficient" in runs:
        plan["lift"] = (2, n)
    return plan


def _distinct_count(values, rtol=1e-6):
    """Number of distinct values, equal within ``rtol`` of the largest magnitude."""
    values = np.sort(np.asarray(values, float))
    if values.size == 0:
        return 0
    scale = max(abs(values[-1]), abs(values[0]), 1e-300)
    return 1 + int(np.count_nonzero(np.diff(values) > rtol * scale))


def check_runs(runs):
    """Check a run dictionary (columns in SI); raise :class:`CalibrationError` when unusable.

    Parameters
    ----------
    runs : dict of str to array_like
        Column name -> values in SI, all of one length.

    Returns
    -------
    dict of str to ndarray
        The same columns as float arrays.

    Raises
    ------
    CalibrationError
        Unknown or missing column; both ``mass_flow`` and ``volume_flow``; unequal lengths;
        non-finite value; non-positive speed, density, chord, span or slot height; negative flow;
        fewer runs than constants + 2 in a fit.
    """
    unknown = sorted(set(runs) - set(COLUMNS))
    if unknown:
        raise CalibrationError(f"unknown column '{unknown[0]}'; allowed columns: "
                               + ", ".join(COLUMNS))
    for name in _ALWAYS:
        if name not in runs:
            raise CalibrationError(f"missing column '{name}' ({COLUMNS[name][2]})")
    if "density" not in runs and "altitude" not in runs:
        raise CalibrationError("missing column 'density' (or 'altitude'): one is required")
    if ("mass_flow" in runs) == ("volume_flow" in runs):
        raise CalibrationError("give exactly one of the columns 'mass_flow' and 'volume_flow'"
                               + (" (both given)" if "mass_flow" in runs else " (neither given)"))
    out = {name: np.atleast_1d(np.asarray(values, dtype=float)) for name, values in runs.items()}
    lengths = {name: v.shape for name, v in out.items()}
    if len(set(lengths.values())) != 1 or len(next(iter(lengths.values()))) != 1:
        raise CalibrationError(f"columns must be 1-D and of one length; got shapes {lengths}")
    for name, values in out.items():
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            raise CalibrationError(f"row {bad[0] + 1}, column '{name}': value {values[bad[0]]} "
                                   "is not a finite number")
    for name in _POSITIVE:
        if name in out:
            bad = np.flatnonzero(out[name] <= 0)
            if bad.size:
                raise CalibrationError(f"row {bad[0] + 1}, column '{name}': {out[name][bad[0]]:g} "
                                       f"{COLUMNS[name][0]}; {COLUMNS[name][2]} must be > 0")
    for name in _NON_NEGATIVE:
        if name in out:
            bad = np.flatnonzero(out[name] < 0)
            if bad.size:
                raise CalibrationError(f"row {bad[0] + 1}, column '{name}': {out[name][bad[0]]:g} "
                                       f"{COLUMNS[name][0]}; must be >= 0 (0 = jet off)")
    for name, limit in LIMITS.items():
        if name in out:
            bad = np.flatnonzero(np.abs(out[name]) > limit)
            if bad.size:
                raise CalibrationError(
                    f"row {bad[0] + 1}, column '{name}': {out[name][bad[0]]:g} "
                    f"{COLUMNS[name][0] or '[-]'} is out of range: allowed magnitudes up to "
                    f"{limit:g} {COLUMNS[name][0] or '[-]'} ({COLUMNS[name][2]})")
    if "altitude" in out:
        from mdao.physics.atmosphere import ALTITUDE_RANGE
        low, high = ALTITUDE_RANGE
        bad = np.flatnonzero((out["altitude"] < low) | (out["altitude"] > high))
        if bad.size:
            raise CalibrationError(f"row {bad[0] + 1}, column 'altitude': {out['altitude'][bad[0]]:g}"
                                   f" m; the ISA is used from {low:g} to {high:g} m")
    variables = derived(out)
    for name in ("momentum_coefficient", "reynolds", "jet_velocity", "air_power"):
        bad = np.flatnonzero(~np.isfinite(variables[name]))
        if bad.size:
            raise CalibrationError(f"row {bad[0] + 1}: the derived {name.replace('_', ' ')} is "
                                   "not finite; check the row's values and units")
    # the model's own ranges (mdao.parameters): a slot ratio or momentum coefficient outside
    # them would be fitted as if the model held there (and, far outside, overflow the fits)
    for name, key in (("slot_ratio", "slot.ratio"),
                      ("momentum_coefficient", "airfoil.momentum_coefficient_range")):
        high = _model_high(key)
        bad = np.flatnonzero(variables[name] > high)
        if bad.size:
            raise CalibrationError(
                f"row {bad[0] + 1}: the derived {name.replace('_', ' ')} "
                f"{variables[name][bad[0]]:.4g} is above the model's {high:g} (from "
                "slot_height over chord, and the flow); check the row's values and units")
    plan = fit_plan(out)
    for fit in ("duct", "drag", "lift"):
        if fit in plan:
            n_params, n_runs = plan[fit]
            if n_runs < n_params + 2:
                what = " with the jet on (mass or volume flow > 0)" if fit == "duct" else ""
                raise CalibrationError(
                    f"too few runs for the {fit} fit: {n_runs} run(s){what}, it has {n_params} "
                    f"constants and needs at least {n_params + 2} (constants + 2)")
    return out


def read_runs(path):
    """Read a CSV table of runs into SI columns (:func:`mdao.units.read_table` with
    :data:`COLUMNS`), then check it (:func:`check_runs`).

    Parameters
    ----------
    path : str or path-like
        CSV file; header cells ``name [unit]`` (pint unit) or ``name`` for a pure number.

    Returns
    -------
    dict of str to ndarray
        Column name -> values in SI units (see :data:`COLUMNS`).

    Raises
    ------
    CalibrationError
        Missing, unknown or duplicate column; unit pint does not know or of the wrong dimension;
        blank, non-number or NaN cell; wrong number of cells in a row; values out of range; fewer
        runs than constants + 2.
    """
    return check_runs(read_table(path, COLUMNS, CalibrationError))


def atmosphere_state(altitude):
    """(density [kg/m^3], viscosity [Pa s]) from the ISA at ``altitude`` [m] (-5 to 20 km)."""
    from mdao.physics.atmosphere import isa

    state = isa(np.asarray(altitude, float))
    return np.asarray(state.density, float), np.asarray(state.viscosity, float)


def derived(runs):
    """Model variables of each run.

    Parameters
    ----------
    runs : dict of str to ndarray
        Checked columns in SI (from :func:`read_runs` or :func:`check_runs`).

    Returns
    -------
    dict
        ``density`` [kg/m^3], ``viscosity`` [Pa s], ``dynamic_pressure`` q [Pa],
        ``jet_velocity`` V_j [m/s], ``jet_dynamic_pressure`` rho V_j^2/2 [Pa],
        ``momentum_coefficient`` C_mu [-], ``slot_ratio`` r_s [-], ``reynolds`` [-] on the chord,
        ``volume_flow`` Q [m^3/s], ``air_power`` Q dP_fan [W] (negative when the fan windmills,
        dP_fan < 0), ``jet_on`` (bool), and ``notes`` (list of str).

    Examples
    --------
    >>> d = derived({'speed': [20.0], 'density': [1.225], 'chord': [0.5], 'span': [1.0],
    ...              'slot_height': [0.005], 'mass_flow': [0.245], 'fan_pressure_rise': [0.0],
    ...              'drag_coefficient': [0.0]})
    >>> round(float(d['momentum_coefficient'][0]), 12), round(float(d['jet_velocity'][0]), 9)
    (0.08, 40.0)
    """
    notes = []
    speed, chord, span, height = (np.asarray(runs[k], float)
                                  for k in ("speed", "chord", "span", "slot_height"))
    if "altitude" in runs:
        rho_isa, mu = atmosphere_state(runs["altitude"])
        rho = np.asarray(runs["density"], float) if "density" in runs else rho_isa
    else:
        rho = np.asarray(runs["density"], float)
        mu = np.full_like(rho, atmosphere_state(0.0)[1])
        notes.append("viscosity taken at the sea-level ISA temperature 288.15 K (only density "
                     "given; add an 'altitude' column for the ISA viscosity)")
    volume_flow = (np.asarray(runs["mass_flow"], float) / rho if "mass_flow" in runs
                   else np.asarray(runs["volume_flow"], float))
    jet_velocity = volume_flow / (height * span)
    q = 0.5 * rho * speed ** 2
    jet_q = 0.5 * rho * jet_velocity ** 2
    return {
        "density": rho, "viscosity": mu, "dynamic_pressure": q, "jet_velocity": jet_velocity,
        "jet_dynamic_pressure": jet_q,
        "momentum_coefficient": rho * volume_flow * jet_velocity / (q * chord * span),
        "slot_ratio": height / chord, "reynolds": rho * speed * chord / mu,
        "volume_flow": volume_flow,
        "air_power": volume_flow * np.asarray(runs["fan_pressure_rise"], float),
        "jet_on": volume_flow > 0, "notes": notes,
    }
