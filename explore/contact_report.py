"""What ``hopscape drop`` shows of the contact model: a table of every
impact's contact (duration, force, indentation, pressure, speeds, energy
lost, breakage screen), its cautions, and a picture of the force through
each impact (docs/physics.md section 9)."""
from __future__ import annotations

import numpy as np

from hopscape.sim.hertz import FEATURES, RIM

from .report_text import table

NO_MATERIALS = ("contact duration and force: give --body-material and --floor-material (or --body-modulus, "
                "--body-poisson, --floor-modulus, --floor-poisson) to see them")


def _cell(value, scale, digits):
    return "-" if not np.isfinite(value) else f"{value * scale:.{digits}f}"


def edge_tension(peak_pressure, poisson):
    """Hertz's largest tensile stress, radial at the edge of the contact
    circle: ``(1 - 2 nu) p0 / 3`` (Johnson 1985, section 4.2, eq. 4.24 as
    recalled); where brittle solids start ring and cone cracks. [Pa]"""
    return (1 - 2 * np.asarray(poisson)) * np.asarray(peak_pressure) / 3


def strength_cautions(pressure, sides):
    """One caution per side whose Hertz edge tension exceeds its strength figure.

    Both solids carry the same contact pressure; each is stretched at the
    edge of the contact circle by ``(1 - 2 nu) p0 / 3`` with its own
    Poisson's ratio, so a glass plate under a steel part can crack where
    the part does not.

    Parameters
    ----------
    pressure : array_like
        Peak contact pressures. [Pa]
    sides : sequence of (str, float or None, str, float or None)
        ``(which, strength [Pa], strength kind, poisson [-])`` per solid,
        e.g. ``("body", 2e6, "tensile", 0.3)``; a missing figure is skipped.

    Returns
    -------
    list of str
    """
    pressure = np.asarray(pressure, dtype=float)
    if not np.any(np.isfinite(pressure)):
        return []
    out = []
    for which, strength, kind, poisson in sides:
        if strength is None or not np.isfinite(strength) or poisson is None:
            continue
        worst = float(edge_tension(np.nanmax(pressure), poisson))
        if worst > strength:
            out.append(f"caution: Hertz's tensile stress at the contact edge in the {which}, (1 - 2 nu) p0 / 3 = "
                       f"{worst / 1e6:.1f} MPa, exceeds the {which} material's strength figure {strength / 1e6:.1f} "
                       f"MPa ({kind}): chipping or ring cracks at the contact are possible. A screen only: test "
                       "real parts, and guard the drop zone (fragments fly).")
    return out


def contact_text(result, loads, sharp_rim=False, sides=(), drop=0):
    """The contact table of one drop and its notes, as text.

    Parameters
    ----------
    result : sim.DropResult
    loads : dict
        :func:`sim.contact_load.impact_loads` of ``result``.
    sharp_rim : bool
        Whether the body's rim is sharp (a flat-ended cylinder): then a rim
        impact's numbers are a guide only.
    sides : sequence, optional
        The body's and the floor's strength figures, as in
        :func:`strength_cautions`.
    """
    n = int(result.count[drop])
    rows = []
    for j in range(n):
        value = {name: loads[name][drop, j] for name in loads}
        rows.append([j + 1, FEATURES[int(value["feature"])], f"{value['normal_speed']:.3f}",
                     f"{value['tangential_speed']:.3f}", f"{value['restitution_used']:.3f}",
                     _cell(value["contact_time"], 1e6, 1), _cell(value["peak_force"], 1, 2),
                     _cell(value["indentation"], 1e6, 2), _cell(value["peak_pressure"], 1e-6, 1),
                     _cell(value["energy_lost"], 1e3, 4), _cell(value["breakage_probability"], 1, 4)])
    out = ["Contact of each impact (Hertz with calibrated damping; '-': line or face contact, not Hertzian, "
           "or no rebound)",
           table(["#", "struck", "vn [m/s]", "vt [m/s]", "e [-]", "duration [us]", "peak force [N]",
                  "indentation [um]", "peak pressure [MPa]", "E lost [mJ]", "breakage [-]"], rows)]
    features = loads["feature"][drop, :n]
    if sharp_rim and np.any(features == RIM):
        out.append("note: a flat-ended cylinder's rim is a sharp edge, not a Hertzian contact; its numbers use the "
                   "edge radius given (--rim-edge-radius, default 5% of the smaller of radius and half length) and "
                   "are a guide only.")
    out += strength_cautions(loads["peak_pressure"][drop, :n], sides)
    return "\n".join(out)


def force_picture(curves, path, title):
    """Normal force against time since first touch, one line per impact.

    ``curves``: :func:`sim.contact_load.force_histories`. Returns the path."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from .figures import OKABE_ITO, save_figure

    colours = list(OKABE_ITO.values())
    fig, ax = plt.subplots(figsize=(8, 4.5), constrained_layout=True)
    drawn = 0
    for j, (seconds, newtons) in enumerate(curves):
        if seconds.size:
            ax.plot(seconds * 1e6, newtons, color=colours[j % len(colours)], lw=1.6, label=f"impact {j + 1}")
            drawn += 1
    if not drawn:
        ax.text(0.5, 0.5, "no Hertzian impact (line or face contacts only)", ha="center", va="center",
                transform=ax.transAxes)
    ax.set_xlabel("time since first touch [us]")
    ax.set_ylabel("normal contact force [N]")
    ax.set_title(title)
    ax.grid(alpha=0.3)
    if drawn:
        ax.legend(fontsize=8, ncol=2)
    return save_figure(fig, path)[0]
