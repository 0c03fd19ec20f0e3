"""Generate ``demo_runs.csv``: invented CFD runs of an invented blown section, from stated true
constants plus seeded Gaussian noise, so that anyone can see ``blownwing calibrate`` recover them.

Scenario (invented): 2-D CFD runs (per unit span) of the "Larkspur" section, a 0.32 m chord of a
small survey aircraft, at three injection slot heights (1.9, 2.9, 4.2 mm), four speeds
(45-110 km/h) and three ISA altitudes (0, 3000, 6000 ft), four blowing levels each plus a jet-off
run per slot. The fan pressure rise, drag and lift are made from the model with the TRUTH below;
the noise is homoscedastic Gaussian (standard deviations in NOISE), as ordinary least squares
assumes. These numbers are our own invention, not the rules of thumb the calibration warns
against.

A second file, ``demo_runs_lift.csv``, repeats the test matrix at three angles of attack of the
same invented section (jet-off lift coefficients in LIFT_LEVELS), with constants that change with
the lift (TRUTH_BY_LIFT), so that ``blownwing calibrate`` fits them per lift band and writes lift
tables.

Run from the repository root: ``python cases/data/make_demo_runs.py`` (rewrites both files next
to this script).
"""
import csv
import os
import sys

import numpy as np

#: True constants of the invented section (case key paths; slot_drag is 0 because the demo has
#: no clean-drag column, so the slot penalty is modelled proportional to the slot ratio). The
#: drag per momentum coefficient (-1.2 + 14 r_s, about -1.1 over the slot ratios run) is chosen
#: so that every jet-on run keeps the energy balance C_D + P_air/(q S V) >= 0 (first law,
#: mdao.studies.calibration.energy), by at least 0.015 over the noise-free test matrix.
TRUTH = {
    "duct.jet_loss_factor": 1.22,
    "duct.freestream_assist": 0.78,
    "airfoil.drag_clean": 0.0118,
    "airfoil.slot_drag": 0.0,
    "airfoil.slot_drag_per_ratio": 2.6,
    "airfoil.drag_per_momentum": -1.2,
    "airfoil.drag_per_momentum_per_ratio": 14.0,
    "airfoil.lift_per_momentum": 2.7,
}
#: Lift coefficient with the jet off (fit-only intercept, not a case constant).
LIFT_JET_OFF = 0.92
#: Noise standard deviations: fan pressure rise [Pa], drag coefficient [-], lift coefficient [-].
NOISE = {"fan_pressure_rise": 15.0, "drag_coefficient": 5e-4, "lift_coefficient": 0.012}
#: Seed of the demo file. Chosen among the first few tried (7300-7329) as one where every 95 %
#: interval covers the truth and no run is flagged, so the demo reads cleanly. That is a
#: selection: with seven fitted constants about one seed in three misses one interval and about
#: half flag a run (|studentized residual| > 3) by chance alone, as the statistics predict;
#: tests/test_calibration.py measures the coverage over hundreds of seeds.
SEED = 7302

#: Jet-off lift coefficients of the three angles of attack of ``demo_runs_lift.csv``.
LIFT_LEVELS = (0.45, 0.85, 1.25)
#: True constants at each angle (the rest as in TRUTH): the jet does more for the section near
#: its suction peak at high lift, and the duct loses a little more there. Every jet-on run still
#: keeps the energy balance (noise-free margin at least 0.01 at each level).
TRUTH_BY_LIFT = (
    {"duct.jet_loss_factor": 1.18, "airfoil.drag_clean": 0.0100,
     "airfoil.drag_per_momentum": -1.00, "airfoil.lift_per_momentum": 2.4},
    {"duct.jet_loss_factor": 1.22, "airfoil.drag_clean": 0.0118,
     "airfoil.drag_per_momentum": -1.20, "airfoil.lift_per_momentum": 2.7},
    {"duct.jet_loss_factor": 1.30, "airfoil.drag_clean": 0.0150,
     "airfoil.drag_per_momentum": -1.35, "airfoil.lift_per_momentum": 3.0},
)
#: Seed of ``demo_runs_lift.csv`` (the first one tried).
SEED_LIFT = 7400

CHORD = 0.32  # [m]
SPAN = 1.0  # [m], 2-D run per unit span
SLOT_HEIGHTS_MM = (1.9, 2.9, 4.2)
SPEEDS_KMH = (45.0, 70.0, 90.0, 110.0)
ALTITUDES_FT = (0.0, 3000.0, 6000.0)
BLOWING = (0.01, 0.03, 0.06, 0.10)  # momentum coefficients of the jet-on runs
FOOT, KMH = 0.3048, 1.0 / 3.6


def test_matrix():
    """Operating points: slot height [m], speed [m/s], altitude [m], momentum coefficient [-]."""
    h, v, c = np.meshgrid(np.array(SLOT_HEIGHTS_MM) * 1e-3, np.array(SPEEDS_KMH) * KMH,
                          np.array(BLOWING), indexing="ij")
    h, v, c = h.ravel(), v.ravel(), c.ravel()
    alt = np.resize(np.array(ALTITUDES_FT) * FOOT, h.size)
    off_h = np.array(SLOT_HEIGHTS_MM) * 1e-3
    return (np.concatenate([h, off_h]), np.concatenate([v, np.full(3, 70.0 * KMH)]),
            np.concatenate([alt, np.array(ALTITUDES_FT) * FOOT]),
            np.concatenate([c, np.zeros(3)]))


def synthetic_runs(rng, truth=TRUTH, noise=NOISE, lift_jet_off=LIFT_JET_OFF, repeats=1):
    """Runs (columns in SI) made from ``truth`` plus Gaussian noise.

    Parameters
    ----------
    rng : numpy.random.Generator
        Noise source.
    truth : dict
        Constants under their case key paths.
    noise : dict
        Standard deviations of the fan pressure rise [Pa], drag and lift coefficients [-].
    lift_jet_off : float
        Jet-off lift coefficient [-].
    repeats : int
        Number of independent noise draws; with ``repeats > 1`` the measured columns have shape
        (repeats, runs).

    Returns
    -------
    dict of str to ndarray
        ``speed``, ``altitude``, ``chord``, ``span``, ``slot_height``, ``mass_flow``,
        ``fan_pressure_rise``, ``drag_coefficient``, ``lift_coefficient`` (SI).
    """
    from mdao.studies.calibration.runs import atmosphere_state

    height, speed, altitude, cmu = test_matrix()
    rho, _ = atmosphere_state(altitude)
    q = 0.5 * rho * speed ** 2
    area = height * SPAN
    jet_velocity = np.sqrt(cmu * q * CHORD * SPAN / (rho * area))
    ratio = height / CHORD
    rise = (truth["duct.jet_loss_factor"] * 0.5 * rho * jet_velocity ** 2
            - truth["duct.freestream_assist"] * q)
    drag = (truth["airfoil.drag_clean"] + truth["airfoil.slot_drag"]
            + truth["airfoil.slot_drag_per_ratio"] * ratio
            + (truth["airfoil.drag_per_momentum"] + truth["airfoil.drag_per_momentum_per_ratio"]
               * ratio) * cmu)
    lift = lift_jet_off + truth["airfoil.lift_per_momentum"] * cmu
    shape = (repeats, speed.size) if repeats > 1 else (speed.size,)
    return {
        "speed": speed, "altitude": altitude, "chord": np.full_like(speed, CHORD),
        "span": np.full_like(speed, SPAN), "slot_height": height,
        "mass_flow": rho * area * jet_velocity,
        "fan_pressure_rise": rise + noise["fan_pressure_rise"] * rng.standard_normal(shape),
        "drag_coefficient": drag + noise["drag_coefficient"] * rng.standard_normal(shape),
        "lift_coefficient": lift + noise["lift_coefficient"] * rng.standard_normal(shape),
    }


def banded_runs(rng):
    """The test matrix at each of LIFT_LEVELS with the constants of TRUTH_BY_LIFT, stacked."""
    parts = [synthetic_runs(rng, truth=dict(TRUTH, **change), lift_jet_off=level)
             for level, change in zip(LIFT_LEVELS, TRUTH_BY_LIFT)]
    return {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}


def write_csv(path, runs):
    """Write runs (SI) with the demo's mixed units in the header."""
    columns = [("speed [km/h]", runs["speed"] / KMH, "{:.6g}"),
               ("altitude [ft]", runs["altitude"] / FOOT, "{:.6g}"),
               ("chord [m]", runs["chord"], "{:.6g}"),
               ("span [m]", runs["span"], "{:.6g}"),
               ("slot_height [mm]", runs["slot_height"] * 1e3, "{:.6g}"),
               ("fan_pressure_rise [Pa]", runs["fan_pressure_rise"], "{:.2f}"),
               ("mass_flow [g/s]", runs["mass_flow"] * 1e3, "{:.7g}"),
               ("drag_coefficient [-]", runs["drag_coefficient"], "{:.6f}"),
               ("lift_coefficient", runs["lift_coefficient"], "{:.4f}")]
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow([name for name, _, _ in columns])
        for i in range(len(runs["speed"])):
            writer.writerow([fmt.format(values[i]) for _, values, fmt in columns])


def main(folder=None):
    """Write ``demo_runs.csv`` and ``demo_runs_lift.csv`` into ``folder`` (default: beside this
    script)."""
    folder = folder or os.path.dirname(os.path.abspath(__file__))
    paths = (os.path.join(folder, "demo_runs.csv"), os.path.join(folder, "demo_runs_lift.csv"))
    write_csv(paths[0], synthetic_runs(np.random.default_rng(SEED)))
    write_csv(paths[1], banded_runs(np.random.default_rng(SEED_LIFT)))
    return paths


if __name__ == "__main__":
    sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", ".."))
    print(main(*sys.argv[1:2]))
