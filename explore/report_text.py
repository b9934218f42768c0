"""Plain-text tables for the terminal, with units in every header."""
from __future__ import annotations

import numpy as np

from hopscape import sim
from hopscape.sim.impact import SLIP_HISTORY


def wrap_degrees(theta):
    """An angle in degrees, wrapped to [-180, 180).

    Parameters
    ----------
    theta : float or array_like
        Angle. [rad]

    Returns
    -------
    float or numpy.ndarray
        The same angle, same shape, in [-180, 180). [deg]
    """
    return (np.degrees(theta) + 180.0) % 360.0 - 180.0


def table(headers, rows):
    """A right-aligned text table with a dashed rule under the header.

    Parameters
    ----------
    headers : sequence
        Column titles (units in brackets, e.g. ``time [ms]``).
    rows : sequence of sequence
        Cells, already formatted or anything ``str`` accepts.

    Returns
    -------
    str
        Lines joined by newlines; columns two spaces apart, each as wide as
        its longest cell.
    """
    cells = [[str(h) for h in headers]] + [[str(c) for c in r] for r in rows]
    widths = [max(len(r[i]) for r in cells) for i in range(len(headers))]
    lines = ["  ".join(c.rjust(w) for c, w in zip(r, widths)) for r in cells]
    lines.insert(1, "  ".join("-" * w for w in widths))
    return "\n".join(lines)


def _ratio_words(ratio):
    """``1.234 x release height``, or what it means when there is no such bounce."""
    return "none (fewer than two visible bounces)" if not np.isfinite(ratio) else f"{ratio:.3f} x release height"


def _energy_bound_text(result):
    """The energy bound of drop 0, and whether its impact law keeps to it."""
    from hopscape.sim.impact import LAW_TABLE
    law = LAW_TABLE[int(result.release["law"][0])]
    if not np.isfinite(result.energy_bound[0]):
        return (f"floor inclined by {np.degrees(float(result.release['floor_angle'][0])):g} deg: heights are "
                "measured normal to the floor, and there is no energy bound (moving downhill the body can gain "
                "energy).")
    text = (f"energy bound: the centre can never rise above {float(result.energy_bound[0]) * 1e3:.2f} mm "
            "(total energy / m g) as long as no impact creates energy; from rest that is the release height, so "
            "only spin or a throw lets the centre beat it, while the lowest point can, because at release it "
            "hangs below the centre.")
    if law.creates_energy:
        text += (f" The {law.name} law can create energy (with slip reversal or stick), so under it the bound "
                 "does not hold.")
    return text


def drop_report(shape, result, bounces, reference="centre", model=None):
    """Impacts, visible bounces and the energy bound of one drop, as text.

    Parameters
    ----------
    shape : sim.Shape
        The body dropped (its kind and aspect ratio are printed).
    result : sim.DropResult
        The simulated drop(s); drop 0 is reported.
    bounces : sim.Bounces
        ``sim.group_bounces(result, ...)``: impacts merged into visible
        bounces.
    reference : {"centre", "bottom", "top"}, optional
        The point whose rebound ratios are shown.
    model : str, optional
        The contact model that ran (:data:`sim.MODELS`): named in a last
        line, with the impacts on both ends at once.

    Returns
    -------
    str
        The body's mass [mg] and moment of inertia [mg mm^2]; a table of
        impacts (time [ms], angle [deg], the part struck, slip history,
        velocities just after [m/s], spin [rad/s], normal impulse [mN s],
        energy before and after [mJ], flight after [ms], peaks of the
        centre and lowest point [mm], GAIN where an impact created energy);
        a table of bounces (peak heights [mm], ratio [-]); the release
        heights [mm], the energy bound of the centre [mm] and why the
        lowest point can beat its release height; how the drop ended.
    """
    kind = getattr(shape, "kind", "body")
    struck_names = getattr(shape, "struck_names", sim.Shape.struck_names)
    n = int(result.count[0])
    tb, rb, pb = result.energy_before()
    ta, ra, pa = result.energy_after()
    rows = []
    for j in range(n):
        rows.append([
            j + 1, f"{result.time[0, j] * 1e3:.2f}", f"{wrap_degrees(result.theta[0, j]):.1f}",
            struck_names[int(result.end[0, j])], SLIP_HISTORY[result.slip[0, j]],
            f"{result.vx[0, j]:+.3f}", f"{result.vy[0, j]:+.3f}", f"{result.spin[0, j]:+.1f}",
            f"{result.impulse_normal[0, j] * 1e3:.4f}",
            f"{(tb + rb + pb)[0, j] * 1e3:.4f}", f"{(ta + ra + pa)[0, j] * 1e3:.4f}",
            f"{result.flight[0, j] * 1e3:.2f}", f"{result.peak_centre[0, j] * 1e3:.2f}",
            f"{result.peak_bottom[0, j] * 1e3:.2f}",
            "GAIN" if result.energy_gain[0, j] else "",
        ])
    out = [f"{kind}: mass {float(result.mass[0]) * 1e6:.1f} mg, moment of inertia "
           f"{float(result.inertia[0]) * 1e12:.2f} mg mm^2, aspect ratio {float(np.ravel(shape.aspect_ratio)[0]):.2f}",
           "", "Impacts (velocities and spin just after)",
           table(["#", "time [ms]", "angle [deg]", "struck", "slip", "vx [m/s]", "vy [m/s]", "spin [rad/s]",
                  "Jn [mN s]", "E before [mJ]", "E after [mJ]", "flight [ms]", "peak centre [mm]",
                  "peak bottom [mm]", ""], rows)]
    if result.energy_gain[0, :n].any():
        out.append("GAIN: this impact created kinetic energy (Newton's law with slip reversal; "
                   "Stronge 1991). Prefer --law energetic.")
    rel = {r: float(bounces.release_height[r][0]) for r in sim.REFERENCES}
    brows = []
    for b in range(int(bounces.count[0])):
        members = np.flatnonzero(bounces.index[0] == b + 1) + 1
        brows.append([b + 1, ",".join(map(str, members)),
                      *(f"{bounces.height[r][0, b] * 1e3:.2f}" for r in sim.REFERENCES),
                      f"{bounces.ratio[reference][0, b]:.3f}"])
    out += ["", f"Bounces (impacts less than {bounces.merge_within * 1e3:g} ms apart merged)",
            table(["bounce", "impacts", "centre [mm]", "bottom [mm]", "top [mm]", f"ratio ({reference})"], brows)]
    unfinished = np.flatnonzero(bounces.index[0, :n] > bounces.count[0]) + 1
    if unfinished.size and sim.STATUS[int(result.status[0])] == "impacts":
        out.append(f"impact(s) {', '.join(map(str, unfinished))} begin a bounce that the impact limit ({n}) cut "
                   "short before its height was known; raise --impacts to see it")
    status = sim.STATUS[int(result.status[0])]
    out += ["",
            f"release height: centre {rel['centre'] * 1e3:.2f} mm, bottom {rel['bottom'] * 1e3:.2f} mm, "
            f"top {rel['top'] * 1e3:.2f} mm",
            _energy_bound_text(result),
            f"best later bounce ({reference}): {_ratio_words(bounces.best_later(reference)[0])}; "
            f"a later bounce beats the first: {'yes' if bounces.later_beats_first(reference)[0] else 'no'}; "
            f"beats the release height: {'yes' if bounces.beats_release(reference)[0] else 'no'}",
            f"the drop ended after {n} impact(s): " + {"impacts": "the impact limit (--impacts) was reached",
                                                       "settled": "it settled",
                                                       "contact": "sustained contact began (restitution 0): it now "
                                                       "pivots or slides on the floor, which this model does not follow",
                                                       "could_vault": "sustained contact began while its centre still "
                                                       "rose with over a tenth of its energy: it may vault into a new "
                                                       "flight that this model does not follow",
                                                       "failed": "the contact search failed"}[status]]
    if model is not None:
        both = np.flatnonzero(result.end[0, :n] == 0) + 1 if model == "two-ends" else []
        out.append(f"contact model: {model}" + (f"; impact(s) {', '.join(map(str, both))} on both ends at once "
                                                 "(docs/physics.md 7.1)" if len(both) else ""))
    return "\n".join(out)
