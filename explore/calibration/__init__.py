"""Calibration from filmed drops: tracks in, restitution and friction out.

The Python side of ``hopscape fit``::

    from hopscape.calibration import read_track, fit_tracks, summary
    from hopscape import sim

    pin = sim.Capsule(length=0.016, radius=0.002, density=7850)
    calibration = fit_tracks([read_track("drop.csv")], pin)
    summary(calibration)["restitution"]

Modules, one concern each: :mod:`.tracks` (the track contract),
:mod:`.flights` (touches and ballistic fits), :mod:`.impacts` (states at
the contact), :mod:`.estimate` (least squares and intervals), :mod:`.fit`
(the steps in order), :mod:`.compare` (model against measurement),
:mod:`.pictures`, :mod:`.export` (compliant-contact parameters, studies),
:mod:`.synthetic` (engine drops filmed), :mod:`.command` (the CLI).
"""
from .export import compliant_parameters, fitted_study
from .fit import Calibration, bounce_table, fit_tracks, summary
from .synthetic import SyntheticDrop, synthetic_track
from .tracks import TRACK_COLUMNS, Track, read_track, track_from_table

__all__ = ["Calibration", "SyntheticDrop", "TRACK_COLUMNS", "Track", "bounce_table", "compliant_parameters",
           "fit_tracks", "fitted_study", "read_track", "summary", "synthetic_track", "track_from_table"]
