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
import importlib

#: Where each public name lives; imported on first use (PEP 562), so that
#: registering ``hopscape fit`` on the command line loads no SciPy.
_WHERE = {"compliant_parameters": ".export", "fitted_study": ".export", "Calibration": ".fit",
          "bounce_table": ".fit", "fit_tracks": ".fit", "summary": ".fit", "SyntheticDrop": ".synthetic",
          "synthetic_track": ".synthetic", "TRACK_COLUMNS": ".tracks", "Track": ".tracks",
          "read_track": ".tracks", "track_from_table": ".tracks"}

__all__ = sorted(_WHERE)


def __getattr__(name):
    if name not in _WHERE:
        raise AttributeError(f"module 'hopscape.calibration' has no attribute {name!r}")
    value = getattr(importlib.import_module(_WHERE[name], __name__), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(_WHERE))
