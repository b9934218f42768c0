"""The rig plan of one drop condition: camera, release precision, repeats
and forces, as rows of a table (docs/physics.md section 12).

The condition's drops are the study's own: the swept quantities fixed at
the condition, the distributed ones drawn (part-to-part scatter), and the
release moved by the study's tolerance, as the rig will drop them.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from hopscape import sim
from hopscape.sim.contact_load import impact_loads
from hopscape.sim.hertz import rim_edge_default

from ..contact_inputs import single_settings
from ..contact_report import edge_tension, strength_cautions
from ..metrics import drop_inputs
from ..plan import robust_frame
from .camera import (FIELD_MARGIN, FRAMES_IN_CONTACT, FRAMES_IN_FLIGHT, SENSOR_PIXELS, body_reach,
                         camera_rate, drop_extent, fastest_point_speed, longest_exposure)
from .release import GoalAt, release_tolerances
from .repeats import drops_to_estimate, drops_to_tell_apart
from ..study import Study, contact_settings

#: The precision the repeats are planned for: +-5 percentage points at 95 %.
HALF_WIDTH, CONFIDENCE = 0.05, 0.95


@dataclass
class RigOptions:
    """What the user states about the rig (None: the default)."""

    fov_width: float | None = None   # [m] field of view's width; default: the drop's extent x FIELD_MARGIN
    sensor_pixels: int = SENSOR_PIXELS   # [px] across the sensor
    target: float | None = None      # [-] goal probability to keep; default the study's picks target
    drops: int = 2000                # [-] Monte Carlo drops per evaluation


@dataclass
class RigPlan:
    """One condition's plan: the rows and what its picture draws."""

    label: str                                  # e.g. "pick 1: angle 30 deg, aspect ratio 4"
    rows: list = field(default_factory=list)    # dicts: section, item, value, unit, how
    impact_angle: np.ndarray | None = None      # [deg] per Hertzian impact, axis to floor, 0..90
    contact_time: np.ndarray | None = None      # [s] per Hertzian impact
    flight_bounce: np.ndarray | None = None     # [-] per flight the study counts: the bounce it follows
    flight_time: np.ndarray | None = None       # [s] ... and its length
    camera: object = None                       # camera.CameraRate
    notes: list = field(default_factory=list)

    def add(self, section, item, value, unit, how=""):
        self.rows.append({"section": section, "item": item, "value": value, "unit": unit, "how": how})

    def table(self):
        """The rows as a table, the condition in its first column."""
        return pd.DataFrame(self.rows).assign(condition=self.label)[["condition", "section", "item", "value",
                                                                       "unit", "how"]]


def simulate_condition(study: Study, frame: pd.DataFrame):
    """Simulate the rows of a stage table that start above the floor, as
    the study's run does (:func:`explore.metrics.drop_inputs`, its contact
    model), with every flight peak (the field of view needs the top
    point's).

    Returns
    -------
    sim.DropResult
    """
    rows, shape, release, contact = drop_inputs(study, frame)
    return sim.simulate(shape, release, contact, impacts=study.run.impacts, chunk_size=max(rows.size, 1),
                        model=study.run.model)


def _camera(plan, study, result, loads, options):
    finite = np.isfinite(loads["contact_time"]) if loads is not None else None
    shortest_contact = float(loads["contact_time"][finite].min()) if finite is not None and finite.any() else np.nan
    cam = camera_rate(result, shortest_contact, study.run.merge_window)
    plan.camera = cam
    counted = np.isfinite(result.flight) & (result.flight >= study.run.merge_window) & (result.flight > 0)
    plan.flight_bounce = sim.group_bounces(result, study.run.merge_window).index[counted]
    plan.flight_time = result.flight[counted]
    if finite is not None and finite.any():
        theta = np.degrees(result.theta[finite])
        plan.impact_angle = np.abs((theta + 90.0) % 180.0 - 90.0)   # axis to floor, 0 flat .. 90 upright
        plan.contact_time = loads["contact_time"][finite]
    plan.add("camera", "shortest contact", shortest_contact * 1e6, "us",
             "Hertz contact with calibrated damping" if np.isfinite(shortest_contact) else
             "no materials: give --body-material and --floor-material")
    plan.add("camera", "frame rate to resolve the contact", cam.contact_rate, "1/s",
             f"{FRAMES_IN_CONTACT} frames in the shortest contact (rule of thumb)")
    plan.add("camera", "shortest flight between the study's bounces", cam.shortest_flight * 1e3, "ms",
             f"impacts closer than the study's {study.run.merge_window * 1e3:g} ms make one bounce")
    plan.add("camera", "frame rate to measure the rebound", cam.flight_rate, "1/s",
             f"{FRAMES_IN_FLIGHT} frames in that flight (our choice: a parabola fit with spare points)")
    plan.add("camera", "camera frame rate", cam.rate, "1/s", "the larger of the two")
    plan.add("camera", "bounce-grouping window (one frame)", cam.window * 1e6, "us",
             f"impacts closer than this are one bounce: {cam.mean_bounces:.2g} bounces per drop seen, "
             f"{cam.short_flights:.0%} of their flights under {FRAMES_IN_FLIGHT} frames (too short to fit)")
    width, height = drop_extent(result)
    need_width, need_height = float(np.nanmax(width)), float(np.nanmax(height))
    fov = need_width * FIELD_MARGIN if options.fov_width is None else options.fov_width
    speed = float(np.nanmax(fastest_point_speed(result)))
    plan.add("camera", "field of view needed: width", need_width * 1e3, "mm",
             "travel along the floor over the impacts simulated, plus the body's reach each side")
    plan.add("camera", "field of view needed: height", need_height * 1e3, "mm", "highest point of the body")
    plan.add("camera", "field of view width used", fov * 1e3, "mm",
             "--fov-width" if options.fov_width is not None else f"default: the width needed x {FIELD_MARGIN:g}")
    plan.add("camera", "pixel size in the object plane", fov / options.sensor_pixels * 1e3, "mm",
             f"field width / {options.sensor_pixels} px")
    plan.add("camera", "fastest speed of any point", speed, "m/s", "|v| + |spin| x reach, release and impacts")
    plan.add("camera", "longest exposure (blur under 1 px)", longest_exposure(fov, options.sensor_pixels, speed) * 1e6,
             "us", "pixel / fastest speed")
    if options.fov_width is not None and options.fov_width < need_width:
        plan.notes.append(f"the field of view {fov * 1e3:.0f} mm is narrower than the drop's travel "
                          f"{need_width * 1e3:.0f} mm: some bounces leave the picture")


def _force(plan, study, loads):
    if loads is None:
        plan.add("force", "largest peak force", np.nan, "N", "no materials given")
        return
    force, pressure = np.nanmax(loads["peak_force"]), np.nanmax(loads["peak_pressure"])
    plan.add("force", "largest peak force", force, "N", "over the condition's drops and impacts")
    plan.add("force", "largest peak pressure", pressure * 1e-6, "MPa",
             "Hertz, elastic: where the material yields the real pressure is lower; a screen, test real parts")
    from hopscape.sim.materials import material
    sides = []
    for which, name, poisson in (("body", study.body.material, study.body.poisson),
                                 ("floor", study.contact.floor_material, study.contact.floor_poisson)):
        found = material(name) if name else None
        poisson = poisson if poisson is not None else (found.poisson if found else None)
        if poisson is None:
            continue
        tension = float(edge_tension(pressure, poisson))
        plan.add("force", f"tensile stress at the contact edge, {which}", tension * 1e-6, "MPa",
                 "(1 - 2 nu) p0 / 3, Johnson")
        if found is not None and np.isfinite(found.strength):
            plan.add("force", f"{which} material's strength figure", found.strength * 1e-6, "MPa",
                     found.strength_kind)
            sides.append((which, found.strength, found.strength_kind, poisson))
    plan.notes += strength_cautions(pressure, sides)


def rig_plan(study: Study, label, options: RigOptions, runner_up=None) -> RigPlan:
    """The plan at one condition.

    Parameters
    ----------
    study : Study
        The study fixed at the condition (:func:`explore.rig.conditions.at_condition`).
    label : str
        The condition in words.
    options : RigOptions
    runner_up : Study, optional
        The study fixed at the runner-up condition: the repeats that tell
        the two apart.

    Returns
    -------
    RigPlan
    """
    plan = RigPlan(label)
    target = study.picks_settings.target if options.target is None else options.target
    tol = study.tolerance
    goal = GoalAt(study, options.drops)
    # the drops the rig will make: scatter, and the release errors of the study's tolerance
    toleranced = study.model_copy(update={"tolerance": tol.model_copy(update={"draws": options.drops})})
    result = simulate_condition(study, robust_frame(toleranced, goal.grid))
    e_star, edge, _ = single_settings(contact_settings(study.body, study.contact))
    loads = None
    if np.isfinite(e_star) and result.size:
        loads = impact_loads(result, e_star, rim_edge_default(result.profile) if np.isnan(edge) else edge)
    _camera(plan, study, result, loads, options)
    reach = float(np.max(body_reach(result.profile)))
    study_p = goal.probability(tol.angle, tol.height, tol.spin)
    # from here on a bounce is what the camera sees: impacts within one frame interval
    study, runner_up = (None if s is None else s.model_copy(update={"run": s.run.model_copy(
        update={"merge_window": plan.camera.window})}) for s in (study, runner_up))
    goal = GoalAt(study, options.drops)
    for b in release_tolerances(goal, target, reach):
        unit, scale = {"angle": ("deg", 1), "height": ("mm", 1e3), "spin": ("rad/s", 1), "together": ("-", 1)}[b.name]
        item = ("largest share of the three tolerances above, all at once" if b.name == "together" else
                f"largest {b.name} tolerance alone (+-)")
        how = b.words(scale, "" if unit == "-" else unit) or (f"goal {b.p_low:.2%} here, {b.p_high:.2%} at {b.high * scale:.4g}; target {target:.0%}")
        plan.add("release", item, b.low * scale, unit, how)
    p = goal.probability(tol.angle, tol.height, tol.spin)
    plan.add("repeats", "goal probability at the study's tolerance", p, "-",
             f"{options.drops} simulated drops, bounces as the camera sees them (with the study's grouping: "
             f"{study_p:.1%})")
    plan.add("repeats", "drops to estimate it within +-5 points", drops_to_estimate(p, HALF_WIDTH, CONFIDENCE), "-",
             "95 % Wilson interval, at the probability above")
    plan.add("repeats", "drops for +-5 points at any probability", drops_to_estimate(0.5, HALF_WIDTH, CONFIDENCE),
             "-", "worst case p = 0.5")
    if runner_up is not None:
        q = GoalAt(runner_up, options.drops).probability(tol.angle, tol.height, tol.spin)
        plan.add("repeats", "runner-up's goal probability", q, "-", f"{options.drops} simulated drops")
        n = drops_to_tell_apart(p, q)
        plan.add("repeats", "drops per condition to tell them apart", n, "-",
                 "two-sided 5 %, power 80 %, Fleiss with continuity correction" if np.isfinite(n) else
                 "equal in the simulation: no number of drops tells them apart")
    _force(plan, study, loads)
    return plan
