r"""Round-off at a natural bound: a value a few ulps past a bound is the bound.

A host model's arithmetic lands on a bound with round-off: a descent integrated to sea level
ends at an altitude of -2.27e-13 m, a momentum coefficient driven to its lower bound of 0 comes
out as -2e-17. Such values are taken as the bound; a value further out than a tolerance that is
clearly round-off (a stated absolute tolerance, orders of magnitude above the round-off of the
quantity's scale and below any meaningful difference) is still refused by the caller's check,
with its message.

The bound replaces only the real part, so a complex-step perturbation (imaginary part) passes
through unchanged.
"""
import numpy as np

__all__ = ["snap"]


def snap(value, lower=None, upper=None, tolerance=0.0):
    """``value`` with the entries within ``tolerance`` outside ``[lower, upper]`` set onto the
    bound.

    Parameters
    ----------
    value : ndarray
        Values, float or complex (real parts compared).
    lower, upper : float or None
        The bounds (None: no bound on that side).
    tolerance : float
        Largest distance past a bound taken as round-off, in the value's unit, >= 0.

    Returns
    -------
    value : ndarray
        ``value`` itself when no entry is within the tolerance outside a bound; otherwise a new
        array of the same dtype. Entries further out, and NaN, are left as they are (for the
        caller's range check to refuse).

    Examples
    --------
    >>> snap(np.array([-2e-17, 0.5]), lower=0.0, tolerance=1e-12).tolist()
    [0.0, 0.5]
    >>> snap(np.array([-1e-6]), lower=0.0, tolerance=1e-12).tolist()
    [-1e-06]
    """
    real = np.real(value)
    for bound, past in ((lower, lambda r, b: (r < b) & (r >= b - tolerance)),
                        (upper, lambda r, b: (r > b) & (r <= b + tolerance))):
        if bound is None:
            continue
        near = past(real, bound)
        if np.any(near):
            # value + (bound - Re value): exact on the real part (Sterbenz), Im value kept
            value = np.where(near, value + (bound - real), value)
            real = np.real(value)
    return value
