r"""Monte Carlo over the uncertain inputs at the optimal design (fan following the requirement).

Draws: each ``[uncertainty]`` entry of the case (``normal``: mean the case value, ``sd``;
``uniform``: ``low``-``high``), and, when the case reads a calibration, a multivariate normal over
the calibrated constants with the calibration's covariance (mean: the calibrated values). A key in
both takes the ``[uncertainty]`` entry and leaves the calibration's joint normal over the others
(the marginal of a multivariate normal is the normal with the sub-matrix). Samples with any input
outside the range the case file allows (an efficiency above 1, an altitude below 0) are drawn
again, whole rows at a time, so the joint distribution is truncated to the allowed box; the count
is reported. Reproducible: one ``numpy.random.default_rng(seed)`` drawn in a fixed order.

All samples are evaluated in one vectorized call of the NumPy chain (:mod:`mdao.physics.chain`).
Results: the probability that the mission saves energy (:math:`E > 0`; a non-finite sample counts
as not saving), the 5/50/95 % percentiles, the mean and standard deviation, the number of
ram-driven samples (a blowing segment needs no fan) and of samples that break a constraint at the
fixed design, and the share of variance each input explains: the squared Spearman rank
correlation with :math:`E` [1]_ (inputs correlated with each other share credit), alongside the
squared Pearson correlation and the first-order variance
:math:`\sum_i (\partial E/\partial p_i)^2 \sigma_i^2` when derivatives are given.

References
----------
.. [1] Saltelli, A. et al. *Global Sensitivity Analysis: The Primer*. Wiley, 2008, ch. 1.2
   (correlation and rank-correlation measures from a Monte Carlo sample).
"""
import numpy as np
from scipy import stats

from mdao import constraints
from mdao.case import CaseError
from mdao.studies.sensitivity import allowed_range, evaluate_design

MAX_REDRAWS = 200


def uncertain_inputs(case):
    """The uncertain inputs: ``{key: spec}`` with spec ``{"distribution": "normal", "mean",
    "sd"}``, ``{"distribution": "uniform", "low", "high"}`` or ``{"distribution":
    "calibration", "mean", "sd"}`` (joint normal), in the fixed order used for drawing."""
    out = {}
    for key in sorted(case.uncertainty):
        spec = dict(case.uncertainty[key])
        if spec["distribution"] == "normal":
            spec["mean"] = float(case.value(key))
        out[key] = spec
    cal = case.calibration
    if cal:
        names = cal["covariance"]["parameters"]
        cov = np.asarray(cal["covariance"]["matrix"], float)
        for i, key in enumerate(names):
            if key in out or cov[i, i] <= 0:
                continue
            out[key] = {"distribution": "calibration", "mean": float(case.value(key)),
                        "sd": float(np.sqrt(cov[i, i]))}
    return out


def _draw(case, specs, n, rng):
    keys = list(specs)
    x = np.empty((n, len(keys)))
    cal = [k for k in keys if specs[k]["distribution"] == "calibration"]
    for j, key in enumerate(keys):
        s = specs[key]
        if s["distribution"] == "normal":
            x[:, j] = rng.normal(s["mean"], s["sd"], n)
        elif s["distribution"] == "uniform":
            x[:, j] = rng.uniform(s["low"], s["high"], n)
    if cal:
        names = case.calibration["covariance"]["parameters"]
        idx = [names.index(k) for k in cal]
        cov = np.asarray(case.calibration["covariance"]["matrix"], float)[np.ix_(idx, idx)]
        mean = np.array([specs[k]["mean"] for k in cal])
        draws = rng.multivariate_normal(mean, cov, size=n, method="eigh")
        for c, key in enumerate(cal):
            x[:, keys.index(key)] = draws[:, c]
    return x


def draw_samples(case, samples=None, seed=None):
    """Draw the Monte Carlo samples of the uncertain inputs.

    Parameters
    ----------
    case : mdao.case.Case
    samples : int, optional
        Number of samples, >= 10 (default ``[review] samples``).
    seed : int, optional
        Seed of ``numpy.random.default_rng`` (default ``[review] seed``).

    Returns
    -------
    keys : list of str
        Key paths, the columns of ``x``.
    x : ndarray, shape (samples, len(keys))
        Values in SI.
    redrawn : int
        Samples drawn again because an input left its allowed range.

    Raises
    ------
    CaseError
        When there is nothing uncertain, or the allowed range cannot be reached.
    """
    n = case.review["samples"] if samples is None else int(samples)
    if n < 10:
        raise CaseError(f"samples = {n!r}: at least 10 are needed")
    seed = case.review["seed"] if seed is None else int(seed)
    specs = uncertain_inputs(case)
    if not specs:
        raise CaseError("uncertainty: the case has no [uncertainty] table and no calibration "
                        "covariance; nothing to sample")
    keys = list(specs)
    rng = np.random.default_rng(seed)
    x = _draw(case, specs, n, rng)
    lo = np.array([allowed_range(k)[0] for k in keys])
    hi = np.array([allowed_range(k)[1] for k in keys])
    redrawn = 0
    for _ in range(MAX_REDRAWS):
        bad = np.flatnonzero(np.any((x < lo) | (x > hi), axis=1))
        if bad.size == 0:
            break
        redrawn += bad.size
        x[bad] = _draw(case, specs, bad.size, rng)
    else:
        raise CaseError("uncertainty: too many samples fall outside the allowed ranges of "
                        + ", ".join(k for k, l, h in zip(keys, lo, hi)
                                    if np.any((x[:, keys.index(k)] < l) | (x[:, keys.index(k)] > h)))
                        + "; narrow the distributions")
    return keys, x, redrawn


def violations(case, out):
    """Per sample, does any blowing segment break a constraint at the fixed design
    (:func:`mdao.constraints.broken_at_fixed_design`)?"""
    broken = list(constraints.broken_at_fixed_design(case, out).values())
    n = np.shape(out["mission_energy_saving"])[0]
    return np.logical_or.reduce(broken) if broken else np.zeros(n, bool)


def monte_carlo(case, outcome, samples=None, seed=None, derivatives=None):
    """Monte Carlo of the mission energy saving at the optimal design.

    Parameters
    ----------
    case, outcome
        The case and its optimum.
    samples, seed : int, optional
        Default ``[review] samples`` and ``seed``.
    derivatives : dict, optional
        Fixed-design derivatives ``{key: dE/dp}`` for the first-order variance.

    Returns
    -------
    dict
        ``samples``, ``seed``, ``inputs`` {key: spec}, ``probability_of_saving``,
        ``percentiles_J`` {"5", "50", "95"}, ``mean_J``, ``sd_J``, ``first_order_sd_J``,
        ``ram_driven_samples``, ``constraint_violating_samples``, ``beyond_balance_samples``,
        ``nonfinite_samples``, ``redrawn_samples``, ``variance_shares`` [{parameter,
        rank_share, spearman_squared, pearson_squared}], ``dominant_input``, ``model_as_fitted``
        {``probability_of_saving``, ``percentiles_J``, ``mean_J``, ``sd_J``}; and the arrays
        ``energy_J``, ``energy_model_J`` and ``x`` (dropped from the JSON).

        Each sample's saving is the mission energy saving within the energy balance
        (:func:`mdao.physics.power.energy_within_balance`): the design is held fixed, so a
        sample whose inputs let the drag model credit more net thrust power than the fans put
        into the air (``beyond_balance_samples``) is credited no more than the balance allows.
        ``model_as_fitted`` gives the same figures without that limit, and
        ``first_order_sd_J`` estimates its spread (the derivatives are the fitted model's).
    """
    n = case.review["samples"] if samples is None else int(samples)
    seed = case.review["seed"] if seed is None else int(seed)
    keys, x, redrawn = draw_samples(case, n, seed)
    out = evaluate_design(case, outcome, {k: x[:, j] for j, k in enumerate(keys)})
    e = out["mission_energy_saving_within_balance"]
    e_model = out["mission_energy_saving"]
    finite = np.isfinite(e)
    ram = np.any(out["ram_driven"][:, case.blowing], axis=1)
    shares = []
    for j, key in enumerate(keys):
        xs, es = x[finite, j], e[finite]
        if np.ptp(xs) == 0 or np.ptp(es) == 0:
            rho, r = 0.0, 0.0
        else:
            rho = float(stats.spearmanr(xs, es).statistic)
            r = float(np.corrcoef(xs, es)[0, 1])
        shares.append({"parameter": key, "spearman_squared": rho * rho,
                       "pearson_squared": r * r})
    total = sum(s["spearman_squared"] for s in shares)
    for s in shares:
        s["rank_share"] = s["spearman_squared"] / total if total > 0 else 0.0
    shares.sort(key=lambda s: -s["spearman_squared"])
    specs = uncertain_inputs(case)
    first = None
    if derivatives is not None and all(k in derivatives for k in keys):
        var = 0.0
        sd = {k: (specs[k]["sd"] if "sd" in specs[k]
                  else (specs[k]["high"] - specs[k]["low"]) / np.sqrt(12.0)) for k in keys}
        if case.calibration:
            names = case.calibration["covariance"]["parameters"]
            cov = np.asarray(case.calibration["covariance"]["matrix"], float)
            cal = [k for k in keys if specs[k]["distribution"] == "calibration"]
            g = np.array([derivatives[k] for k in cal])
            idx = [names.index(k) for k in cal]
            var += float(g @ cov[np.ix_(idx, idx)] @ g) if cal else 0.0
            keys_ind = [k for k in keys if k not in cal]
        else:
            keys_ind = keys
        var += sum((derivatives[k] * sd[k]) ** 2 for k in keys_ind)
        first = float(np.sqrt(var))
    return {
        "samples": n, "seed": seed, "inputs": specs,
        **_distribution(e, n),
        "first_order_sd_J": first,
        "ram_driven_samples": int(np.count_nonzero(ram)),
        "constraint_violating_samples": int(np.count_nonzero(violations(case, out))),
        "beyond_balance_samples": int(np.count_nonzero(e < e_model)),
        "nonfinite_samples": int(np.count_nonzero(~finite)),
        "redrawn_samples": int(redrawn),
        "variance_shares": shares,
        "dominant_input": shares[0]["parameter"] if shares else None,
        "model_as_fitted": _distribution(e_model, n),
        "energy_J": e, "energy_model_J": e_model, "x": x, "keys": keys,
    }


def _distribution(e, n):
    """Probability of saving (over all ``n`` samples), 5/50/95 % percentiles, mean and standard
    deviation of the finite savings ``e`` [J]."""
    finite = np.isfinite(e)
    pct = np.percentile(e[finite], [5, 50, 95]) if finite.any() else [np.nan] * 3
    return {"probability_of_saving": float(np.count_nonzero(e > 0) / n),
            "percentiles_J": {"5": float(pct[0]), "50": float(pct[1]), "95": float(pct[2])},
            "mean_J": float(np.mean(e[finite])) if finite.any() else None,
            "sd_J": float(np.std(e[finite], ddof=1)) if finite.sum() > 1 else None}
