r"""Arrays that keep a complex-step perturbation.

The complex step [1]_ [2]_ differentiates a real function by evaluating it at
:math:`x + i h` with a tiny :math:`h` (1e-30 or so): :math:`f'(x) = \mathrm{Im} f(x + i h) / h`
to machine precision, with no subtraction error. It works through any chain of analytic
operations, provided nothing on the way drops the imaginary part. The physics functions
therefore take their inputs through :func:`asarray` (float, or complex when the input is
complex, in place of ``np.asarray(x, float)``), compare and branch on real parts, and use
:func:`abs` and :func:`arctan2` below, whose imaginary parts carry the derivative (NumPy's
``abs`` of a complex number is its modulus, and ``arctan2`` takes no complex argument).

With real inputs every function here returns exactly what NumPy returns, at no extra cost.

References
----------
.. [1] Squire, W. and Trapp, G. "Using complex variables to estimate derivatives of real
   functions." *SIAM Review* 40(1), 1998, 110-112.
.. [2] Martins, J. R. R. A., Sturdza, P. and Alonso, J. J. "The complex-step derivative
   approximation." *ACM Transactions on Mathematical Software* 29(3), 2003, 245-262
   (the definitions of ``abs`` and the branch rules used here).
"""
import numpy as np

__all__ = ["asarray", "dtype", "abs", "arctan2", "scalar"]


def asarray(value):
    """``value`` as a float64 array, or as complex128 when it is complex.

    Replaces ``np.asarray(value, float)``, which discards an imaginary part (with a
    ``ComplexWarning``). A float64 or complex128 array is returned as is (no copy).
    """
    arr = np.asarray(value)
    if arr.dtype == np.float64 or arr.dtype == np.complex128:
        return arr
    return arr.astype(np.complex128 if np.iscomplexobj(arr) else np.float64)


def dtype(*values):
    """``complex128`` when any of ``values`` is complex, else ``float64``: the dtype of new
    arrays (``np.zeros(shape, dtype(x, y))``) that receive values computed from them."""
    return np.complex128 if any(np.iscomplexobj(v) for v in values) else np.float64


def abs(x):   # noqa: A001 - the complex-step counterpart of the builtin's name
    """``|x|`` by the sign of the real part: ``x`` itself where ``Re x >= 0``, ``-x`` elsewhere.

    For a real ``x`` this is ``np.abs(x)``; for a complex step it keeps ``Im x`` with the sign
    of the derivative of ``|x|`` (``np.abs`` would return the modulus) [2]_.
    """
    if not np.iscomplexobj(x):
        return np.abs(x)
    return np.where(np.real(x) < 0.0, -x, x)


def arctan2(y, x):
    """``np.arctan2(y, x)`` that carries a complex step: the angle of the real parts plus
    ``i`` times its first-order change, ``(x Im y - y Im x) / (x^2 + y^2)`` (real parts)."""
    if not (np.iscomplexobj(y) or np.iscomplexobj(x)):
        return np.arctan2(y, x)
    yr, xr = np.real(y), np.real(x)
    return np.arctan2(yr, xr) + 1j * (xr * np.imag(y) - yr * np.imag(x)) / (xr * xr + yr * yr)


def scalar(value):
    """The one element of ``value`` as a Python float, or complex when it is complex (in place
    of ``float(value)``, which discards the imaginary part)."""
    item = np.asarray(value).reshape(-1)[0].item()
    return item if isinstance(item, complex) else float(item)
