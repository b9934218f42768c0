"""``report.html``: the page a person reads first."""
from __future__ import annotations

import datetime as _dt
import html
import os
from pathlib import Path

import numpy as np
import pandas as pd

from hopscape import sim

from .analysis import PICKS_FILE, SAFE_REGIONS_FILE
from .figures import OKABE_ITO
from .maps import energy_bound_holds, energy_note, metric_words
from .answer import answer_lines
from .regions import region_sentences
from .stage_tables import stage_columns
from .robust_map import tolerance_text
from .sensitivity import METHODS
from .study import COLUMN, QUANTITIES, Study
from .files import write_text
from .safety import SAFETY

#: The page, inside the run folder.
REPORT_FILE = "report.html"


_CSS = ("""body{font-family:system-ui,sans-serif;max-width:1100px;margin:2em auto;padding:0 1em;color:#222}
h1{margin-bottom:0}.sub{color:#555;margin-top:.2em}table{border-collapse:collapse;margin:.6em 0}
td,th{border:1px solid #ccc;padding:.25em .6em;text-align:right;vertical-align:top}th{background:#f2f2f2}
.wide{overflow-x:auto}table.picks{font-size:.9em;width:100%}td.words{text-align:left;min-width:16em}
td.l,th.l{text-align:left}.box{border-left:4px solid WARNING;background:#fff8e6;padding:.6em 1em;margin:1em 0}
.note{border-left:4px solid NOTE;background:#eef5fb;padding:.6em 1em;margin:1em 0}
img{max-width:100%;border:1px solid #ddd;margin:.4em 0}figure{margin:1em 0}figcaption{color:#555;font-size:.9em}"""
        .replace("WARNING", OKABE_ITO["orange"]).replace("NOTE", OKABE_ITO["blue"]))


def contact_rows(study):
    """Rows of the study table for the contact model's settings given
    (materials, moduli, the speed law's reference speed, breakage)."""
    from .study import contact_settings
    given = {name: value for name, value in contact_settings(study.body, study.contact).items() if value is not None}
    if study.contact.speed_exponent is not None:
        given["reference_speed"] = study.contact.reference_speed
    units = {"body_modulus": " Pa", "floor_modulus": " Pa", "rim_edge_radius": " m", "breakage_f_mat": " kg/(J m)",
             "breakage_w_min": " J/kg", "reference_speed": " m/s"}
    rows = [(name.replace("_", " "), "fixed", f"{value:g}{units.get(name, '')}" if isinstance(value, float)
             else str(value)) for name, value in given.items()]
    model = study.run.model
    materials = "" if model == "impulse" else f" ({sim.drop.MODULUS_WORDS})"
    return rows + [("contact model", "fixed", f"{model}: {sim.MODEL_WORDS[model]}{materials}")]


def _describe(name, q):
    unit = QUANTITIES[name].unit
    u = "" if unit == "-" else f" {unit}"
    if q.kind == "fixed":
        return "fixed", f"{q.value:g}{u}"
    if q.kind == "grid":
        return "grid", f"{q.grid.low:g} to {q.grid.high:g}{u} in {q.grid.steps} steps"
    if q.kind == "uniform":
        return "uniform", f"{q.uniform.low:g} to {q.uniform.high:g}{u}"
    if q.kind == "log_uniform":
        return "log-uniform", f"{q.log_uniform.low:g} to {q.log_uniform.high:g}{u}"
    return "normal", f"mean {q.normal.mean:g}{u}, sd {q.normal.sd:g}{u} (kept within the allowed range)"


def _table(frame: pd.DataFrame, digits=4, css=None, column_css=None):
    column_css = column_css or {}
    head = "".join(f"<th>{html.escape(str(c))}</th>" for c in frame.columns)
    rows = []
    for _, r in frame.iterrows():
        cells = []
        for name, v in r.items():
            if name in column_css:
                cells.append(f"<td class={column_css[name]}>{html.escape(str(v))}</td>")
            elif isinstance(v, (float, np.floating)):
                text = "" if np.isnan(v) else f"{v:.{digits}g}"
                cells.append(f"<td>{text}</td>")
            else:
                cells.append(f"<td class=l>{html.escape(str(v))}</td>")
        rows.append("<tr>" + "".join(cells) + "</tr>")
    table = f"<table{f' class={css}' if css else ''}><tr>{head}</tr>{''.join(rows)}</table>"
    return f"<div class=wide>{table}</div>"


def _figures(items, folder):
    out = []
    for title, paths, csv in items:
        png = [p for p in paths if str(p).endswith(".png")] or paths
        rel = os.path.relpath(png[0], folder)
        links = " ".join(f'<a href="{html.escape(os.path.relpath(p, folder))}">{Path(p).suffix[1:]}</a>'
                         for p in list(paths) + [csv])
        out.append(f'<figure><img src="{html.escape(rel)}" alt="{html.escape(title)}">'
                   f"<figcaption>{html.escape(title)} - files: {links}</figcaption></figure>")
    return "\n".join(out)


def _percent(p):
    return "" if p != p else f"{100 * p:.0f}"


def picks_table(picks: pd.DataFrame, study: Study) -> pd.DataFrame:
    """The picks as a person reads them: plain headings with units, percentages, ranges.

    Parameters
    ----------
    picks : pandas.DataFrame
        :func:`explore.picks.picks`.
    study : Study
        Its grid quantities name the coordinate columns.

    Returns
    -------
    pandas.DataFrame
        Text columns: rank, one per grid quantity (``angle [deg]``), goal
        met [% of toleranced drops] with its 95 % Wilson interval, margin
        [grid steps], outcome flips [% of toleranced drops], mean value
        under tolerance [-], its mean change against the exact release
        [-], the angle window [deg] where there is one, the share that
        would start inside the floor where any would, and the note.
    """
    out = {"rank": picks["rank"].astype(str)}
    for name in study.gridded():
        unit = QUANTITIES[name].unit
        out[f"{name.replace('_', ' ')} [{unit}]"] = picks[COLUMN[name]].map(lambda v: f"{v:.4g}")
    out["goal met [%]"] = picks["goal_probability"].map(_percent)
    out["95 % interval [%]"] = [f"{_percent(lo)}-{_percent(hi)}" for lo, hi in zip(picks["goal_low"],
                                                                                    picks["goal_high"])]
    out["margin [grid steps]"] = picks["margin_steps"].astype(str)
    out["outcome flips [%]"] = picks["flip_rate"].map(_percent)
    out["mean value [-]"] = picks["mean_value_under_tolerance"].map(lambda v: f"{v:.3g}")
    out["value change [-]"] = picks["mean_change_under_tolerance"].map(lambda v: f"{v:.2g}")
    if "angle_window_low_deg" in picks:
        out["angle window [deg]"] = [("" if lo != lo else f"{lo:g}-{hi:g}") for lo, hi in
                                     zip(picks["angle_window_low_deg"], picks["angle_window_high_deg"])]
    if (picks["inside_floor_fraction"] > 0).any():
        out["inside the floor [%]"] = picks["inside_floor_fraction"].map(_percent)
    out["note"] = picks["note"]
    return pd.DataFrame(out)


def _picks_words(study):
    """The paragraph above the picks table: how they are ranked and what the columns mean."""
    words = "the event" if study.metric.goal == "seek" else "no event"
    chaotic = study.picks_settings.chaotic_flip_rate
    return (f"<p>Cells where {words} happens in at least {study.picks_settings.target:.0%} of toleranced drops come first, "
            "ranked by their margin (grid steps, in every swept quantity, to the nearest cell that misses the "
            "target or to the end of the swept range), then by how often the goal is met. Goal met: share of "
            "toleranced drops that do what the study wants, with its 95 % Wilson interval; outcome flips: share "
            f"whose outcome differs from the same drop released exactly (a cell is chaotic above {chaotic:.0%}); "
            "value change: mean change of the metric's value against the exact release, for reference only. "
            f"All columns are in <a href=\"{PICKS_FILE}\">{PICKS_FILE}</a>.</p>")


def _regions_text(study, regions):
    """The safe regions in sentences, or one sentence when there is none."""
    link = f'<a href="{SAFE_REGIONS_FILE}">{SAFE_REGIONS_FILE}</a>'
    if not len(regions):
        return (f"<p>No cell meets the target {study.picks_settings.target:.0%} under the release tolerance; there is no safe "
                "region to recommend.</p>")
    items = "".join(f"<li>{html.escape(line)}</li>" for line in region_sentences(regions))
    return (f"<p>Connected regions of the grid where the goal is met in at least {study.picks_settings.target:.0%} of "
            f"toleranced drops (every strip of each region: {link}):</p><ul>{items}</ul>")


def write_report(outcome, art, seconds) -> Path:
    """Write ``report.html``, the page a person reads first, into the run folder.

    Parameters
    ----------
    outcome : explore.runner.RunOutcome
        The run: its study, folder and stage tables.
    art : explore.analysis.Artefacts
        What :func:`explore.analysis.analyse` made of it; the sensitivity
        section is worded by the declaration of the method that ran
        (``art.method``).
    seconds : dict of str to float
        Time of each step, shown at the end. [s]

    Returns
    -------
    pathlib.Path
        The page (:data:`REPORT_FILE` in the run folder).
    """
    study: Study = outcome.study
    folder = Path(outcome.folder)
    value_words, event_words = metric_words(study)
    parts = [f"<!doctype html><html><head><meta charset=utf-8><title>{html.escape(study.name)}</title>"
             f"<style>{_CSS}</style></head><body>",
             f"<h1>{html.escape(study.name)}</h1><p class=sub>{html.escape(study.description)}</p>",
             f"<p class=sub>hopscape study report, {_dt.datetime.now():%Y-%m-%d %H:%M}</p>"]
    if art.headline:
        parts.append(f"<div class=box><b>{html.escape(art.headline)}</b></div>")
    answer = answer_lines(study, art)
    if answer:   # the answer first; the evidence follows
        items = "".join(f"<li><b>{html.escape(label)}:</b> {html.escape(text)}</li>" for label, text in answer)
        parts.append(f"<div class=box id=answer><b>In short</b> (details in "
                     f'<a href="#picks">Recommended drop conditions</a>)<ul>{items}</ul></div>')
    parts.append(f"<div class=box><b>Safety.</b> {html.escape(SAFETY)}</div>")
    # summary
    rows = [("body shape", "", study.body.shape), ("impact law", "", study.contact.law),
            ("release height measured to", "", study.release.height_of)]
    rows += contact_rows(study)
    for name, q in study.quantities().items():
        kind, text = _describe(name, q)
        rows.append((QUANTITIES[name].text, kind, text))
    summary = pd.DataFrame(rows, columns=["quantity", "how", "values"])
    tolerated = "robust" in outcome.tables and len(outcome.tables["robust"]) > 0
    bound = ("" if not energy_bound_holds(study) else
             " Impacts only take energy away, so without spin or a throw the centre's rebound ratio is at most 1;")
    parts += ["<h2>Study</h2>", _table(summary),
              f"<p>Metric: <b>{html.escape(value_words)}</b>; event: {html.escape(event_words)}; goal: "
              f"{'seek it' if study.metric.goal == 'seek' else 'avoid it'}. Up to {study.run.impacts} impacts per drop; "
              f"impacts less than {study.run.merge_window * 1e3:g} ms apart count as one visible bounce."
              + (f" Release tolerance: {html.escape(tolerance_text(study))}." if tolerated else "") + "</p>",
              f"<div class=note><b>Which heights can beat the release height, and why.</b> "
              f"{html.escape(energy_note(study))}{html.escape(bound)} the lowest point starts below the centre when "
              "the body is tilted and can end a later bounce higher relative to its own start. A later bounce can "
              "beat the first when the first impact turns falling speed into spin and a later impact at the other "
              "end turns that spin back into lift.</div>"]
    if art.maps:
        parts += ["<h2>Regime maps</h2>", _figures(art.maps, folder)]
    if art.curves:
        parts += ["<h2>Curves</h2>", _figures(art.curves, folder)]
    if art.robustness:
        parts += ["<h2>Robustness to release errors</h2>", _figures(art.robustness, folder)]
    if art.safe_regions is not None:
        parts += ["<h3>Where the goal holds under the tolerance</h3>",
                  _regions_text(study, art.safe_regions)]
    if art.ranking is not None:
        method = METHODS[art.method]
        parts += [f"<h2>Which quantities matter ({html.escape(method.title)})</h2>", _table(art.ranking),
                  f"<p>{html.escape(method.words)}</p>"]
        for chart in art.ranking_charts:
            parts.append(f'<figure><img src="{html.escape(os.path.relpath(chart, folder))}" '
                         f'alt="{html.escape(Path(chart).stem)}"></figure>')
        for extra in method.tables:
            if extra.key in art.sensitivity_tables:
                parts.append(f"<p>{html.escape(extra.words)}</p>")
    if art.picks is not None:
        parts += ["<h2 id=picks>Recommended drop conditions</h2>", _picks_words(study),
                  _table(picks_table(art.picks, study), css="picks", column_css={"note": "words"})]
        chaotic = art.picks[art.picks["chaotic"]]
        if len(chaotic):
            parts.append(f"<div class=box><b>Warning.</b> {len(chaotic)} of these picks sit in a chaotic region: "
                         "release errors often change the outcome. Prefer a calmer pick or a tighter rig.</div>")
    from .rig.output import section_html
    parts.append(section_html(folder))   # the rig plan, once `hopscape plan` has made one
    # counts
    counts = []
    for stage in outcome.tables:
        table = stage_columns(outcome.tables, stage, ["status", "energy_gain"])
        status = table["status"].astype(str).value_counts()
        counts.append({"stage": stage, "drops": len(table), **{f"ended: {k}": int(v) for k, v in status.items()},
                       "energy-gaining impacts": int(table["energy_gain"].sum())})
    parts += ["<h2>Counts and run time</h2>", _table(pd.DataFrame(counts).fillna(0))]
    if any(row["energy-gaining impacts"] for row in counts):
        parts.append(f"<div class=box>Some drops had an impact that created energy: the {study.contact.law} law "
                     "can, with stick as well as with slip reversal (Stronge, J. Appl. Mech. 58:1049, 1991). Their "
                     "results are not physical; use a law that never creates energy.</div>")
    for note in art.notes:
        parts.append(f"<p>{html.escape(note)}</p>")
    split = ", ".join(f"{k} {v:.2f} s" for k, v in seconds.items())
    parts.append(f"<p>Time: {html.escape(split)}. Drops simulated in this call: {outcome.simulated:,} of "
                 f"{outcome.total:,} (the rest were already on disk).</p></body></html>")
    path = folder / REPORT_FILE
    write_text(path, "\n".join(parts))
    return path
