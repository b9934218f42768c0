"""Option converters and option groups that several commands share.

Each converter checks one option's value against a declared range (the
study file's, :mod:`hopscape.sim.limits`') and reports it on one line, so
``drop``, ``batch``, ``fit``, ``track``, ``plan`` and ``run`` word a bad
value alike. Kept apart from :mod:`hopscape.cli` so that a command's module
can use them without importing the command line that registers it.
"""
from __future__ import annotations

import argparse

from .errors import shown


def number(kind, allowed=None):
    """An option's converter: a number (``kind`` float or int) in ``allowed``
    (a :class:`hopscape.sim.limits.Interval`; any finite number if None)."""
    from hopscape.sim.limits import FINITE, number_text
    allowed = FINITE if allowed is None else allowed
    words = "a whole number" if kind is int else "a number"

    def convert(text):
        try:
            value = kind(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"must be {words}, got {shown(text)}")
        if not allowed.contains(value):
            raise argparse.ArgumentTypeError(f"must be {allowed.describe()}, got {number_text(value)}")
        return value
    return convert


def finite(name):
    """An option's converter: any finite number."""
    return number(float)


def positive_int(name, low=1, high=None):
    """An option's converter: a whole number in [low, high]."""
    from hopscape.sim.limits import Interval
    return number(int, Interval(low, float("inf") if high is None else high))


def declared_int(name, field):
    """A whole-number option bounded like the study file's ``RunSettings`` field."""
    from .study import RunSettings, declared_range
    allowed = declared_range((RunSettings, field))
    return positive_int(name, int(allowed.low), int(allowed.high))


def merge_window_options(parser):
    """``--merge-ms`` or ``--fps``: which impacts make one visible bounce."""
    window = parser.add_mutually_exclusive_group()
    window.add_argument("--merge-ms", type=finite("--merge-ms"), default=None,
                        help="[ms] impacts closer than this make one visible bounce (default 10: what a camera at "
                             "100 frames per second merges)")
    window.add_argument("--fps", type=finite("--fps"), default=None,
                        help="[1/s] your camera's frame rate, instead of --merge-ms: impacts closer than one frame "
                             "interval make one visible bounce")


def merge_window_of(args):
    """The bounce-grouping window of ``--merge-ms`` or ``--fps`` [s], bounded like the study file's."""
    from .study import bounce_window

    return bounce_window(args.merge_ms, args.fps, names=("--merge-ms", "--fps"))


def law_help():
    """One clause per impact law, from :data:`sim.impact.LAW_TABLE`."""
    from hopscape.sim.impact import LAW_TABLE
    return "; ".join(f"{law.name}: {law.description}" for law in LAW_TABLE)


def model_help():
    """The words of ``--model``: :data:`sim.drop.MODELS`, what each does."""
    from hopscape.sim.drop import models_in_words
    return f"contact model: {models_in_words()}"


def further_dimensions():
    """Dimensions some shape declares besides length and radius (their own options)."""
    from hopscape import sim
    return [name for name in dict.fromkeys(d.name for cls in sim.SHAPES.values() for d in cls.dimensions)
            if name not in ("length", "radius")]


def contact_options(parser):
    """The contact model's options of ``drop`` (the batch table's columns of the same names)."""
    from hopscape.sim.limits import REFERENCE_SPEED, SPEED_EXPONENT
    from .batch_contract import CONTACT_COLUMNS, INPUT_COLUMNS
    for name, allowed in (("speed_exponent", SPEED_EXPONENT), ("reference_speed", REFERENCE_SPEED)):
        words, default = INPUT_COLUMNS[name]
        parser.add_argument(f"--{name.replace('_', '-')}", type=number(float, allowed), default=default,
                            help=f"[{words.partition(', ')[0]}] {words.partition(', ')[2]} (default {default:g})")
    for name, words in CONTACT_COLUMNS.items():
        unit, _, rest = words.partition(", ") if not name.endswith("_material") else ("", "", words)
        parser.add_argument(f"--{name.replace('_', '-')}", default=None,
                            type=None if name.endswith("_material") else finite(name),
                            help=(f"[{unit}] {rest}" if unit else rest).replace("%", "%%"))


def restitution_table(text):
    """An option's converter: ``speed:restitution,speed:restitution,...``
    (at least two pairs, speeds rising) as a tuple of pairs."""
    from hopscape.sim.impact import check_restitution_table
    try:
        pairs = tuple(tuple(float(x) for x in pair.split(":")) for pair in text.split(","))
        return tuple(map(tuple, check_restitution_table(pairs).tolist()))
    except ValueError as exc:
        reason = str(exc) if "restitution_table" in str(exc) else "pairs must read speed:restitution"
        raise argparse.ArgumentTypeError(f"{reason.replace('restitution_table ', '')} (e.g. 0.5:0.9,1:0.8,3:0.6; "
                                         f"got {shown(text)})")


def table_option(parser, rows=""):
    parser.add_argument("--restitution-table", type=restitution_table, default=None,
                        help="measured restitution against normal impact speed, speed:restitution pairs [m/s:-] "
                             "with speeds rising, e.g. 0.5:0.9,1:0.8,3:0.6; linear between them, the end values "
                             "beyond; replaces the restitution" + rows + " and its speed law")
