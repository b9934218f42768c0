"""The study's answer in a few lines: what to do, where it holds, what matters.

The terminal summary of ``hopscape run`` and the top of ``report.html`` say
the same lines, worded once here.
"""
from __future__ import annotations

from .quantities import COLUMN, QUANTITIES
from .regions import region_sentences
from .sensitivity import METHODS


def _number(value):
    """A grid value as a person reads it (no float noise such as 5.800000000000001)."""
    return f"{float(value):.6g}"


def pick_line(study, pick):
    """``aspect ratio 5.8, release angle 49.5 deg: goal met in 91% ...`` for one row of picks.csv."""
    where = ", ".join(f"{QUANTITIES[name].text.split(' (')[0]} {_number(pick[COLUMN[name]])}"
                      + ("" if QUANTITIES[name].unit == "-" else f" {QUANTITIES[name].unit}")
                      for name in study.gridded() if COLUMN[name] in pick)
    text = (f"{where}: goal met in {pick['goal_probability']:.0%} of toleranced drops (95 % interval "
            f"{pick['goal_low']:.0%}-{pick['goal_high']:.0%}), margin {pick['margin_steps']} grid step(s), "
            f"outcome flips in {pick['flip_rate']:.0%}")
    if "angle_window_low_deg" in pick and pick["angle_window_low_deg"] == pick["angle_window_low_deg"]:
        text += (f"; at this {'aspect ratio' if 'aspect_ratio' in study.gridded() else 'setting'} the angle may "
                 f"range {_number(pick['angle_window_low_deg'])}-{_number(pick['angle_window_high_deg'])} deg")
    if not pick["meets_target"]:
        text += " - below the target: no cell meets it"
    if pick["chaotic"]:
        text += " (chaotic region: small release errors change the outcome)"
    return text


def answer_lines(study, art):
    """(label, text) pairs: the best pick, where the goal holds, what matters most.

    Parameters
    ----------
    study : Study
        The validated study.
    art : explore.analysis.Artefacts
        What the analysis made of the run.

    Returns
    -------
    list of tuple of str
    """
    lines = []
    if art.picks is not None and len(art.picks):
        best = pick_line(study, art.picks.iloc[0])
        surer = art.picks[art.picks["goal_probability"] > art.picks["goal_probability"].iloc[0]]
        if art.picks["meets_target"].iloc[0] and len(surer):
            # the ranking puts room for release errors first; say so where it costs certainty
            best += (f" (ranked first for its margin to the nearest failing cell; pick {int(surer['rank'].iloc[0])} "
                     f"meets the goal more often, {surer['goal_probability'].iloc[0]:.0%}, with less room)")
        lines.append(("best pick", best))
    if art.safe_regions is not None:
        regions = region_sentences(art.safe_regions)
        lines.append(("where the goal holds under tolerance",
                      " ".join(regions) if regions else "nowhere: no cell meets the target under the tolerance"))
    if art.ranking is not None:
        column = METHODS[art.method].ranking_column
        top = art.ranking.sort_values(column, ascending=False).head(3)
        lines.append(("matters most", ", ".join(f"{p} ({column} {v:.2f})"
                                                for p, v in zip(top["parameter"], top[column]))))
    return lines
