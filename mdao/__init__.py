"""blownwing: design optimization of wings with recirculating blown airfoils.

Import name ``mdao``. Layers, from the bottom up: ``mdao.physics`` (plain NumPy values and
derivatives), ``mdao.components`` (thin OpenMDAO adapters), ``mdao.system`` (the wired group and
the problem builder), ``mdao.studies`` (calibration, review studies, scale-out), ``mdao.report``
and ``mdao.cli``.

Results are preliminary design estimates, not airworthiness evidence.
"""

__version__ = "0.1.0"

CAUTION = ("Preliminary design estimates only: not airworthiness evidence. Local regulations, the "
           "certifying authority and licensed engineering practice govern any use in a real design.")
