"""Run the optimization of a case and read its optimum.

- :mod:`mdao.optimum.solve`: :func:`optimize` and :func:`evaluate_start_point`, the convergence and
  feasibility checks, the :class:`Outcome` with per-segment results;
- :mod:`mdao.optimum.breakeven`: the break-even fan efficiency of each segment.
"""
from mdao.optimum.breakeven import break_even_efficiency
from mdao.optimum.solve import Outcome, evaluate_start_point, optimize, read_values

__all__ = ["Outcome", "break_even_efficiency", "evaluate_start_point", "optimize", "read_values"]
