"""The rig plan (``hopscape plan``): what a drop rig must achieve at a drop condition.

camera.py (frame rates, exposure, field of view), release.py (release
tolerances that keep the goal), repeats.py (drops to estimate and to tell
two conditions apart), plan.py (the plan's rows), conditions.py (which drop
condition: a pick or ``--at``), output.py (table, CSV, picture, report
section), command.py (the command). docs/physics.md section 12.
"""
