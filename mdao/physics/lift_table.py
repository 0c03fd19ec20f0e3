"""Model constants that follow the section's lift coefficient.

A constant of the airfoil or duct model (the drag per momentum coefficient, the jet loss factor,
...) may be one number or a table over the section lift coefficient. A table is interpolated by
monotone piecewise cubic Hermite interpolation [1]_ (PCHIP, as implemented by
:class:`scipy.interpolate.PchipInterpolator` [2]_): it passes through every given value, has a
continuous slope and makes no overshoot between breakpoints, so a calibrated trend is never
turned into a wiggle the optimizer could exploit. Its slope with respect to the lift coefficient
is the exact derivative of the interpolant (the analytic partial the components declare).

Outside the table the value continues along the end slope (linear extension): the function stays
smooth for an optimizer that steps past an end, but a case whose segment lies outside a table is
refused on load (a table is calibrated data, not a law).

Plain NumPy and SciPy; values and partial derivatives.

References
----------
.. [1] Fritsch, F. N. and Carlson, R. E. "Monotone piecewise cubic interpolation." *SIAM
   Journal on Numerical Analysis* 17, no. 2 (1980): 238-246.
.. [2] SciPy reference, ``scipy.interpolate.PchipInterpolator`` (the derivative estimates of
   Fritsch and Butland, 1984, with one-sided three-point ends).
"""
import functools
import math
from dataclasses import dataclass

import numpy as np

from mdao.physics.numeric import asarray


@dataclass(frozen=True)
class LiftTable:
    """A model constant tabulated over the section lift coefficient.

    Attributes
    ----------
    lift_coefficient : tuple of float
        Breakpoints, strictly increasing, at least two, [-].
    value : tuple of float
        The constant at each breakpoint (its own unit).
    """

    lift_coefficient: tuple
    value: tuple

    def __post_init__(self):
        x = tuple(float(v) for v in self.lift_coefficient)
        y = tuple(float(v) for v in self.value)
        object.__setattr__(self, "lift_coefficient", x)
        object.__setattr__(self, "value", y)
        if len(x) < 2 or len(x) != len(y):
            raise ValueError("a lift table needs at least two breakpoints and one value per "
                             f"breakpoint; got {len(x)} breakpoints and {len(y)} values")
        if not all(math.isfinite(v) for v in x + y):
            raise ValueError("a lift table's breakpoints and values must be finite")
        if any(b <= a for a, b in zip(x, x[1:])):
            raise ValueError(f"a lift table's lift coefficients must increase strictly; got "
                             f"{list(x)}")

    @property
    def range(self):
        """``(lowest, highest)`` lift coefficient of the table."""
        return self.lift_coefficient[0], self.lift_coefficient[-1]

    def contains(self, lift_coefficient, tolerance=1e-9):
        """Whether each lift coefficient lies within the table (ends included)."""
        lo, hi = self.range
        cl = asarray(lift_coefficient)
        return (cl >= lo - tolerance) & (cl <= hi + tolerance)

    def as_dict(self):
        """``{"lift_coefficient": [...], "value": [...]}`` (the case file's form)."""
        return {"lift_coefficient": list(self.lift_coefficient), "value": list(self.value)}


@functools.lru_cache(maxsize=256)
def _pieces(table):
    """The PCHIP interpolant of a table and its derivative."""
    from scipy.interpolate import PchipInterpolator

    spline = PchipInterpolator(np.array(table.lift_coefficient), np.array(table.value),
                               extrapolate=False)
    return spline, spline.derivative()


def interpolate(table, lift_coefficient, derivatives=False):
    """The tabulated constant at the given lift coefficients.

    Parameters
    ----------
    table : LiftTable
        The breakpoints and values.
    lift_coefficient : array_like
        Section lift coefficient C_L, [-].
    derivatives : bool
        Also return d(value)/d(C_L).

    Returns
    -------
    value : ndarray
        The constant, shape of ``lift_coefficient``.
    slope : ndarray
        Its derivative with respect to C_L (only with ``derivatives``).

    Examples
    --------
    >>> t = LiftTable((0.3, 0.6, 0.9), (-2.0, -1.5, -1.2))
    >>> float(interpolate(t, 0.6)), round(float(interpolate(t, 1.0)), 6)
    (-1.5, -1.133333)
    """
    spline, slope_spline = _pieces(table)
    cl = asarray(lift_coefficient)
    if np.iscomplexobj(cl):   # a complex step: the spline at the real part, the step by its slope
        res = interpolate(table, cl.real, derivatives=True)
        value = res[0] + 1j * res[1] * cl.imag
        return (value, res[1]) if derivatives else value
    lo, hi = table.range
    inside = np.clip(cl, lo, hi)
    end_slope = np.where(cl < lo, slope_spline(lo), slope_spline(hi))
    slope = np.where((cl < lo) | (cl > hi), end_slope, slope_spline(inside))
    value = spline(inside) + np.where((cl < lo) | (cl > hi), end_slope * (cl - inside), 0.0)
    if not derivatives:
        return value
    return value, slope
