"""What a high-lift requirement costs the rest of the mission.

A fan sized for take-off or approach runs off-design in cruise, and its mass flies everywhere.
:func:`high_lift_cost` re-optimizes the case with its high-lift segments flown as ordinary
segments (no maximum-lift requirement; the fan then sized by what saves energy alone) and
compares the two optima segment by segment.
"""
import numpy as np

__all__ = ["high_lift_cost"]


def high_lift_cost(case, outcome):
    """The optimum with and without the high-lift requirement.

    Parameters
    ----------
    case : mdao.case.Case
        A case with at least one ``kind = "high-lift"`` segment.
    outcome : mdao.optimum.solve.Outcome
        Its optimum (with the requirement).

    Returns
    -------
    dict
        ``high_lift_segments`` (names); ``with_requirement`` and ``without_requirement``, each
        with ``converged``, ``mission_energy_saving_J``, ``other_segments_saving_J`` (the
        segments that are not high-lift), ``fan_rated_shaft_power_W``, ``sizing_segment``,
        ``blowing_system_mass_kg``, ``fan_diameter_m`` and ``segments`` (name, momentum
        coefficient, energy saving [J]); ``cost_J``, what the requirement costs the other
        segments (without minus with; None when the comparison did not converge).
    """
    from mdao.optimum import optimize

    names = [n for n, h in zip(case.segment_names, case.high_lift) if h]
    relaxed = case.replace({f"segment.{n}.kind": "cruise" for n in names})
    relaxed.airfoil["max_lift_clean"] = None    # used only by the requirement
    free = optimize(relaxed)

    def summary(out):
        others = sum(s["energy_saving_J"] for s in out.segments if s["name"] not in names)
        hw = out.hardware
        return {"converged": bool(out.converged),
                "mission_energy_saving_J": float(out.mission_energy_saving_J),
                "other_segments_saving_J": float(others),
                "fan_rated_shaft_power_W": hw.get("fan_rated_shaft_power_W"),
                "sizing_segment": hw.get("sizing_segment"),
                "blowing_system_mass_kg": hw.get("blowing_system_mass_kg"),
                "fan_diameter_m": hw.get("fan_diameter_m"),
                "segments": [{"name": s["name"],
                              "momentum_coefficient": s["momentum_coefficient"],
                              "energy_saving_J": s["energy_saving_J"]} for s in out.segments]}

    with_req, without = summary(outcome), summary(free)
    cost = (without["other_segments_saving_J"] - with_req["other_segments_saving_J"]
            if free.converged else None)
    return {"high_lift_segments": names, "with_requirement": with_req,
            "without_requirement": without,
            "cost_J": None if cost is None or not np.isfinite(cost) else float(cost)}
