"""blownwing: design optimization of wings with recirculating blown airfoils.

Import name ``mdao``. Layers, from the bottom up (imports point down only):

0. ``mdao.physics`` (plain NumPy values and derivatives), ``mdao.parameters`` and
   ``mdao.constraints`` (each model parameter and each constraint declared once),
   ``mdao.units``, ``mdao.files``;
1. ``mdao.components`` (thin OpenMDAO adapters) and ``mdao.case`` (case files);
2. ``mdao.system`` (the wired group and the problem builder);
3. ``mdao.optimum`` (run the optimizer, read the optimum, break-even efficiency);
4. ``mdao.studies`` (calibration, review studies, scale-out);
5. ``mdao.report`` (console tables, the review report and figures);
6. ``mdao.cli`` (the command line).

See DEVELOPERS.md.

Results are preliminary design estimates, not airworthiness evidence.
"""

__version__ = "0.1.0"

CAUTION = ("Preliminary design estimates only: not airworthiness evidence. Local regulations, the "
           "certifying authority and licensed engineering practice govern any use in a real design.")
