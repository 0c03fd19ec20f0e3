"""Total-derivative checks over every (of, wrt) pair.

OpenMDAO 3.45.1's ``assert_check_totals`` compares only the first pair of a ``check_totals``
result (its loop over the pairs ends in ``break``), so a wrong derivative in any later pair
passes it. :func:`assert_totals` compares them all, element by element, and
:func:`worst_relative` gives the largest relative error for reports.
"""
import numpy as np


def _analytic(entry):
    """The analytic Jacobians of one pair (forward and/or reverse)."""
    return [np.asarray(entry[mode]) for mode in ("J_fwd", "J_rev") if mode in entry]


def assert_totals(data, atol, rtol):
    """Every pair of a ``check_totals`` result: ``|analytic - fd| <= atol + rtol |fd|`` at
    every element, for each analytic Jacobian computed (forward and reverse).

    Raises
    ------
    AssertionError
        Naming every failing pair with its worst element, or when the data holds no pair or a
        pair without an analytic Jacobian.
    """
    assert data, "check_totals returned no pair"
    failures = []
    for (of, wrt), entry in data.items():
        fd = np.asarray(entry["J_fd"])
        analytic = _analytic(entry)
        assert analytic, f"({of}, {wrt}): no analytic Jacobian"
        for jac in analytic:
            assert jac.shape == fd.shape, f"({of}, {wrt}): shape {jac.shape} vs {fd.shape}"
            excess = np.abs(jac - fd) - (atol + rtol * np.abs(fd))
            if excess.size and excess.max() > 0:
                i = np.unravel_index(np.argmax(excess), excess.shape)
                failures.append(f"({of}, {wrt})[{', '.join(map(str, i))}]: analytic "
                                f"{jac[i]!r}, fd {fd[i]!r}")
    assert not failures, "totals differ from finite differences:\n" + "\n".join(failures)


def worst_relative(data):
    """Largest |analytic - fd| / max(|fd|, |analytic|) over every pair of a check_totals result
    (each pair scaled by its own largest entry)."""
    worst = 0.0
    for entry in data.values():
        fd = np.asarray(entry["J_fd"])
        for jac in _analytic(entry):
            scale = max(np.abs(fd).max(initial=0.0), np.abs(jac).max(initial=0.0))
            if scale > 0:
                worst = max(worst, np.abs(jac - fd).max() / scale)
    return worst


def central_totals(prob, step=1e-6):
    """``prob.check_totals`` against central finite differences with a relative step (scaled
    by the average of the values), silent: the data :func:`assert_totals` and
    :func:`worst_relative` read. The problem has been run."""
    return prob.check_totals(out_stream=None, method="fd", form="central", step=step,
                             step_calc="rel_avg")
