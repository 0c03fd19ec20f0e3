"""Plain NumPy physics: values and derivatives, no OpenMDAO import.

Every function is vectorized over operating points; where it takes ``derivatives=True`` it also
returns its partial derivatives, which the components pass to OpenMDAO as analytic partials.
"""
