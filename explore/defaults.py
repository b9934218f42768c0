"""Defaults every command and the Python API share, declared once.

This module imports nothing, so that ``import hopscape`` and the command
line's argument parser stay light.
"""

#: Impacts followed per drop unless a study (``run.impacts``), an
#: ``--impacts`` option or a call says otherwise. [-]
#: Why 8: on every example study, following 8 impacts decides the study's
#: event the same as following 24 in at least 99.4 % of drops (6 impacts:
#: 98.4 % on ``quick``, whose long pins strike end over end), at about a
#: quarter of the cost of 24. The benchmark population keeps its own fixed
#: 3 (``hopscape.sim.bench.IMPACTS``), a measuring setting, not an answer.
IMPACTS = 8
