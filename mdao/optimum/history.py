"""The optimizer's history, read back from OpenMDAO's SQLite case recorder.

:func:`mdao.optimum.solve.optimize` records the driver's cases when given a file
(``record=``); :func:`optimization_history` turns such a file into the objective and the worst
constraint violation per driver case, which the review draws and the command line's
``--record`` leaves for the designer's own reading (``openmdao.api.CaseReader``).
"""
import numpy as np


def optimization_history(path):
    """Objective and worst constraint violation of every recorded driver case.

    Parameters
    ----------
    path : str or Path
        A file written by OpenMDAO's ``SqliteRecorder`` on the driver (design variables,
        objective and constraints recorded).

    Returns
    -------
    dict
        ``objective`` (name), ``objective_values`` (list, the objective's own units: J for the
        mission energy saved, W for one segment's net power), ``worst_violation`` (list: per
        case, the largest amount by which a constraint misses its bound, divided by the
        constraint's scaling reference ``ref``, so 0 means feasible and 0.01 means one percent
        of the constraint's reference value), ``worst_constraint`` (list: the constraint's name,
        None when all hold) and ``cases`` (the number of driver cases).
    """
    from openmdao.recorders.case_reader import CaseReader

    reader = CaseReader(str(path))
    meta = reader.problem_metadata["variables"]
    names = reader.list_cases("driver", recurse=False, out_stream=None)
    objective, values, worst, which = None, [], [], []
    for name in names:
        case = reader.get_case(name)
        objectives = case.get_objectives(scaled=False)
        objective = next(iter(objectives))
        values.append(float(np.ravel(objectives[objective])[0]))
        largest, named = 0.0, None
        for con, value in case.get_constraints(scaled=False).items():
            m = meta[con]
            v = np.ravel(np.asarray(value, float))
            miss = np.zeros_like(v)
            if m.get("equals") is not None:
                miss = np.abs(v - m["equals"])
            else:
                if m.get("lower") is not None and m["lower"] > -1e29:
                    miss = np.maximum(miss, m["lower"] - v)
                if m.get("upper") is not None and m["upper"] < 1e29:
                    miss = np.maximum(miss, v - m["upper"])
            ref = abs(m["ref"]) if m.get("ref") not in (None, 0) else 1.0
            amount = float(np.max(miss, initial=0.0)) / ref
            if amount > largest:
                largest, named = amount, con
        worst.append(largest)
        which.append(named)
    return {"objective": objective, "objective_values": values, "worst_violation": worst,
            "worst_constraint": which, "cases": len(names)}
