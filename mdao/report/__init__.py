"""What the designer reads: console tables and the design-review report.

- :mod:`mdao.report.console`: the tables that ``optimize``, ``evaluate`` and ``many`` print;
- :mod:`mdao.report.review`: ``review.md``, ``review.json`` and the review's figures;
- :mod:`mdao.report.calibration`: the console text of ``calibrate``.

The report layer formats what the studies return; it computes no physics.
"""
