"""The rig plan as a terminal table, ``plan.csv``, a picture and a section
of ``report.html`` (the same section whether ``hopscape run`` writes the
page or ``hopscape plan`` adds the plan to it later)."""
from __future__ import annotations

import html
import re
from pathlib import Path

import numpy as np
import pandas as pd

from ..files import write_csv, write_text
from ..report_text import table
from ..safety import SAFETY

#: The plan's files, in the folder ``hopscape plan`` writes to (the run folder by default).
PLAN_FILE, PLAN_PICTURE = "plan.csv", "rig-plan.png"

#: Frame rates drawn for comparison: steps of common high-speed cameras (common practice). [1/s]
COMMON_RATES = (1_000, 10_000, 50_000, 100_000, 200_000, 500_000)

_START, _END = "<!-- rig plan -->", "<!-- /rig plan -->"


def _value(value, unit):
    if isinstance(value, (int, np.integer)) or (unit == "-" and float(value).is_integer() and abs(value) >= 2):
        return f"{int(value):,}"
    if not np.isfinite(value):
        return "-"
    return f"{value:,.0f}" if abs(value) >= 1e4 else f"{value:.4g}"


def plan_text(plans):
    """Every condition's plan as text tables, its notes, then the safety caution."""
    out = []
    for plan in plans:
        rows = [[r["section"], r["item"], _value(r["value"], r["unit"]), r["unit"], r["how"]] for r in plan.rows]
        out += [f"Rig plan, {plan.label}", table(["part", "what", "value", "unit", "how"], rows)]
        out += [f"note: {note}" for note in plan.notes] + [""]
    return "\n".join(out + [f"Safety: {SAFETY}"])


def write_plan_csv(plans, path):
    """``plan.csv``: one row per number, the condition in its first column."""
    write_csv(pd.concat([p.table() for p in plans], ignore_index=True), path)
    return Path(path)


def plan_picture(plans, path, study_name):
    """Two panels: contact duration against impact angle, and the flights
    the study counts against their bounce, each with its frame-rate lines.

    A contact above a rate's line gets at least five frames at that rate, a
    flight above it at least ten; each plan's own rate is drawn bold.
    Returns the path.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ..figures import OKABE_ITO, save_figure
    from .camera import FRAMES_IN_CONTACT, FRAMES_IN_FLIGHT

    colours = [OKABE_ITO[k] for k in ("blue", "orange", "green", "purple", "sky")]
    fig, (ax, right) = plt.subplots(1, 2, figsize=(13, 5.4), width_ratios=(3, 2), constrained_layout=True)
    drawn = [p for p in plans if p.contact_time is not None and p.contact_time.size]
    for i, plan in enumerate(drawn):
        ax.scatter(plan.impact_angle, plan.contact_time * 1e6, s=5, alpha=0.35, lw=0,
                   color=colours[i % len(colours)], label=f"{plan.label} ({plan.contact_time.size:,} impacts)")
    if drawn:
        low = min(float(np.min(p.contact_time)) for p in drawn) * 1e6
        high = max(float(np.max(p.contact_time)) for p in drawn) * 1e6
        bottom = min(low, FRAMES_IN_CONTACT / max(p.camera.rate for p in drawn) * 1e6) * 0.8
        ax.set_ylim(bottom, high * 1.15)
        _rate_lines(ax, FRAMES_IN_CONTACT, 1e6, bottom, high * 1.15, 91)
        for i, plan in enumerate(drawn):
            duration = FRAMES_IN_CONTACT / plan.camera.rate * 1e6
            ax.axhline(duration, color=colours[i % len(colours)], lw=1.8,
                       label=f"{plan.label.split(':')[0]}'s camera, {plan.camera.rate:,.0f} frames/s: "
                             f"{FRAMES_IN_CONTACT} frames in {duration:.0f} us")
        ax.legend(fontsize=7, loc="upper left", frameon=False)
    else:
        ax.text(45, 0.5, "no contact durations: give the body's and the floor's materials\n"
                "(--body-material, --floor-material)", ha="center", va="center", fontsize=10)
        ax.set_ylim(0, 1)
    ax.set_xlim(0, 100)
    ax.set_xticks(range(0, 91, 15))
    ax.set_xlabel("impact angle: body axis to the floor at the impact [deg] (0 lying flat, 90 upright)")
    ax.set_ylabel("contact duration [us]")
    ax.grid(alpha=0.3)
    ax.set_title(f"does the camera resolve every contact? ({FRAMES_IN_CONTACT} frames above a rate's line)",
                 fontsize=9.5, loc="left")
    flights = [p for p in plans if p.flight_time is not None and p.flight_time.size]
    for i, plan in enumerate(flights):
        jitter = (np.random.default_rng(0).random(plan.flight_bounce.size) - 0.5) * 0.5   # only spreads the dots
        right.scatter(plan.flight_bounce + jitter + 0.1 * i, plan.flight_time * 1e3, s=5, alpha=0.35, lw=0,
                      color=colours[i % len(colours)])
    if flights:
        low = min(min(float(np.min(p.flight_time)) for p in flights),
                  FRAMES_IN_FLIGHT / max(p.camera.rate for p in flights)) * 1e3
        high = max(float(np.max(p.flight_time)) for p in flights) * 1e3
        right.set_yscale("log")
        right.set_ylim(low * 0.5, high * 1.5)
        _rate_lines(right, FRAMES_IN_FLIGHT, 1e3, low * 0.5, high * 1.5, None)
        for i, plan in enumerate(flights):
            right.axhline(FRAMES_IN_FLIGHT / plan.camera.rate * 1e3, color=colours[i % len(colours)], lw=1.8)
    right.set_xlabel("bounce the flight follows, as the study groups impacts [-]")
    right.set_ylabel("flight between bounces [ms]")
    right.grid(alpha=0.3, which="both")
    right.set_title(f"can the rebound be measured? ({FRAMES_IN_FLIGHT} frames above a rate's line)", fontsize=9.5,
                    loc="left")
    fig.suptitle(f"{study_name}: the frame rate the rig's camera needs (bold: the plan's camera)", fontsize=11)
    return save_figure(fig, path)[0]


def _rate_lines(ax, frames, scale, low, high, text_x):
    """Dotted lines of :data:`COMMON_RATES` at ``frames / rate`` (x ``scale``), labelled."""
    for rate in COMMON_RATES:
        duration = frames / rate * scale
        if low < duration < high:
            ax.axhline(duration, color="0.55", lw=0.8, ls=":")
            ax.text(text_x if text_x is not None else 1.0, duration, f"{rate:,.0f} /s", fontsize=7, va="bottom",
                    ha="left" if text_x is not None else "right", color="0.35",
                    transform=ax.transData if text_x is not None else ax.get_yaxis_transform())


def section_html(folder):
    """The rig plan's section of ``report.html`` from the plan files in ``folder``.

    Without a plan yet, one sentence saying how to make it; the safety
    caution either way.
    """
    folder = Path(folder)
    csv = folder / PLAN_FILE
    parts = [_START, "<h2 id=rig-plan>Rig plan</h2>"]
    if not csv.is_file():
        parts.append("<p>No rig plan yet: <code>hopscape plan STUDY</code> writes the camera, release precision, "
                     "repeats and forces the rig needs at the picks into this section.</p>")
    else:
        picks = folder / "picks.csv"
        if picks.is_file() and picks.stat().st_mtime > csv.stat().st_mtime:
            parts.append("<div class=box><b>Out of date.</b> This plan was made before the run's latest picks; "
                         "make it again with <code>hopscape plan STUDY</code>.</div>")
        frame = pd.read_csv(csv, keep_default_na=False)
        frame["value"] = [_value(float(v) if v != "" else np.nan, u) for v, u in zip(frame["value"], frame["unit"])]
        parts.append("<p>What the rig must achieve at the condition(s) below: the camera (frame rate, exposure, "
                     "field of view; bounces grouped by one frame interval, as that camera sees them), how precise "
                     "the release must be to keep the goal's probability at the target, how many drops measure it, "
                     f'and the largest contact forces. All numbers: <a href="{PLAN_FILE}">{PLAN_FILE}</a>.</p>')
        for condition, rows in frame.groupby("condition", sort=False):
            body = "".join("<tr>" + "".join(f"<td class=l>{html.escape(str(r[c]))}</td>" if c != "value" else
                                             f"<td>{html.escape(str(r[c]))}</td>"
                                             for c in ("section", "item", "value", "unit", "how")) + "</tr>"
                           for _, r in rows.iterrows())
            parts.append(f"<h3>{html.escape(str(condition))}</h3><div class=wide><table><tr><th>part</th><th>what"
                         f"</th><th>value</th><th>unit</th><th>how</th></tr>{body}</table></div>")
        if (folder / PLAN_PICTURE).is_file():
            parts.append(f'<figure><img src="{PLAN_PICTURE}" alt="contact durations and flights against frame rates">'
                         "<figcaption>Left: contact duration of every Hertzian impact at the condition(s), against "
                         "the impact angle, with the frame rates that give five frames in a contact. Right: the "
                         "flights between the bounces the study counts, with the rates that give ten frames in a "
                         "flight.</figcaption>"
                         "</figure>")
    parts += [f"<div class=box><b>Safety.</b> {html.escape(SAFETY)}</div>", _END]
    return "\n".join(parts)


def update_report(folder):
    """Put the current plan into ``report.html`` in ``folder``, if the page exists.

    Returns
    -------
    pathlib.Path or None
        The page, or None where there is none (no run in that folder).
    """
    page = Path(folder) / "report.html"
    if not page.is_file():
        return None
    text = page.read_text(encoding="utf-8")
    section = section_html(folder)
    pattern = re.compile(re.escape(_START) + ".*?" + re.escape(_END), re.S)
    text = pattern.sub(lambda _: section, text) if pattern.search(text) else text.replace(
        "</body>", section + "\n</body>")
    write_text(page, text)
    return page
