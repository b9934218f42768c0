"""One calibration: tracks and a body in, fitted contact and per-bounce
table out (the Python API behind ``hopscape fit``).

``fit_tracks`` runs the steps of the package in order: flights of each
track (:mod:`.flights`), bounces at the contact times (:mod:`.impacts`),
restitution and friction over all bounces of all tracks (:mod:`.estimate`),
the model's own view of each bounce at the fitted values, and the gravity
check pooled over the tracks.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from hopscape import sim
from hopscape.sim.flight import GRAVITY
from hopscape.sim.impact import SLIP_HISTORY

from ..errors import InputError
from .estimate import BOOTSTRAP, MERGED_IMPACTS, Units, estimate, impact_map
from .flights import GRAVITY_WARNING, MIN_FLIGHT_FRAMES, find_flights, gravity_warning
from .impacts import describe_bounces, find_bounces

#: Two ends of an elongated body strike 1-4 ms apart; a body that stays
#: longer between fitted flights is rocking or sliding, which an impulse
#: model follows poorly: such a stretch is not fitted. [s]
LONGEST_MERGED = 0.02


@dataclass
class Calibration:
    """What a fit found.

    Attributes
    ----------
    shape : sim.Shape
    law : str
    estimate : hopscape.calibration.estimate.Estimate
    bounces : pandas.DataFrame
        One row per bounce of every track (``track`` its index), with the
        measured and the model's values (:func:`fit_tracks`).
    tracks : list of hopscape.calibration.tracks.Track
    flights : list of hopscape.calibration.flights.Flights
    gravity, gravity_sd : float
        Gravity fitted freely, pooled over the tracks. [m/s^2]
    warnings : list of str
    """

    shape: object
    law: str
    estimate: object
    bounces: pd.DataFrame
    tracks: list
    flights: list
    gravity: float
    gravity_sd: float
    warnings: list = field(default_factory=list)


def _model_view(shape, law, bounces, e, mu):
    """The model's apparent restitution and slip for each resolved impact,
    and for each merged bounce its own impacts and the frame rate that
    would resolve them."""
    out = pd.DataFrame(index=bounces.index, columns=["model_restitution", "model_slip", "model_impacts",
                                                     "fps_to_resolve"], dtype=object)
    for i, row in bounces.iterrows():
        if row["resolved"]:
            vx, vy, spin, slip = impact_map(shape, row["vx_before"], row["vy_before"], row["spin_before"],
                                            row["angle_before"], e, mu, law)
            r_x, r_y = shape.contact_offset(row["angle_before"])
            out.loc[i] = [float(-(vy + spin * r_x) / row["u_n_before"]), SLIP_HISTORY[int(slip)], 1, np.nan]
            continue
        release = sim.Release(height=row["y_start"], angle=row["angle_start"], spin=row["spin_start"],
                              vx=row["vx_start"], vy=row["vy_start"])
        result = sim.simulate(shape, release, sim.Contact(e, mu, law), impacts=MERGED_IMPACTS, peaks=("centre",))
        times = result.impacts["time"][0] + row["t_start"]
        inside = times[(times > row["t_ref_before"]) & (times < row["t_ref_after"])]
        flights = np.diff(inside)
        fps = MIN_FLIGHT_FRAMES / flights.min() if flights.size else np.nan
        out.loc[i] = [np.nan, "", int(inside.size), float(fps)]
    return out


def fit_tracks(tracks, shape, law="energetic", bootstrap=BOOTSTRAP, seed=0):
    """Calibrate restitution and friction from filmed drops.

    Parameters
    ----------
    tracks : sequence of hopscape.calibration.tracks.Track
        One or more tracks of the same body on the same floor.
    shape : sim.Shape
        The body (one).
    law : str
        Impact law (:data:`sim.impact.LAW_TABLE`).
    bootstrap : int
        Resamples over bounces for the bootstrap interval (0: none).
    seed : int
        Seed of the bootstrap.

    Returns
    -------
    Calibration

    Raises
    ------
    InputError
        A track without impacts or fittable flights, or no bounce to fit.
    """
    if law not in sim.LAWS:
        raise InputError(f"law must be one of {', '.join(sim.LAWS)}, got {law!r}")
    warnings, tables, all_flights = [], [], []
    for number, track in enumerate(tracks):
        flights = find_flights(track, shape)
        all_flights.append(flights)
        warning = gravity_warning(flights, track.name)
        if warning:
            warnings.append(warning)
        if track.length is not None:
            seen = float(np.median(track.length))
            if abs(seen / float(shape.overall_length) - 1) > 0.1:
                warnings.append(f"{track.name}: the clicked ends are {seen * 1e3:.4g} mm apart, the body is "
                                f"{float(shape.overall_length) * 1e3:.4g} mm long: check --scale and the body's size")
        table = describe_bounces(find_bounces(track, flights, shape), shape)
        table.insert(0, "track", number)
        tables.append(table)
    bounces = pd.concat(tables, ignore_index=True)
    long = ~bounces["resolved"] & (bounces["time_after"] - bounces["time"] > LONGEST_MERGED)
    bounces["used"] = ~long
    if long.any():
        warnings.append(f"{int(long.sum())} bounce(s) kept the body at the floor for over "
                        f"{LONGEST_MERGED * 1e3:g} ms between fitted flights (rocking or sliding): not fitted")
    used = bounces[bounces["used"]]
    if used.empty:
        raise InputError(f"{', '.join(t.name for t in tracks)}: no bounce to fit between two fitted flights")
    units = Units(shape, law, used[used["resolved"]], used[~used["resolved"]])
    result = estimate(units, bootstrap=bootstrap, seed=seed)
    mu = result.friction if result.friction is not None else result.friction_best
    bounces = pd.concat([bounces, _model_view(shape, law, bounces, result.restitution, mu)], axis=1)
    weights = np.array([1 / f.gravity_sd ** 2 for f in all_flights])
    gravity = float(np.sum(weights * [f.gravity for f in all_flights]) / weights.sum())
    if len(tracks) > 1 and abs(gravity / GRAVITY - 1) > GRAVITY_WARNING:
        warnings.append(f"gravity pooled over the tracks is {gravity:.4g} m/s^2, {gravity / GRAVITY - 1:+.1%} off "
                        "standard gravity")
    if not 0.001 < result.restitution < 0.999:
        warnings.append(f"restitution fitted at the edge of its range ({result.restitution:.3g}): check the body's "
                        "size and shape options and the track's scale")
    if result.reduced_chi2 > 4:
        warnings.append(f"the model misses the measured bounces by {np.sqrt(result.reduced_chi2):.2g} times their "
                        "uncertainty (reduced chi-square {:.3g}): another law, a tilted camera or floor, or a body "
                        "that is not rigid?".format(result.reduced_chi2))
    return Calibration(shape=shape, law=law, estimate=result, bounces=bounces, tracks=list(tracks),
                       flights=all_flights, gravity=gravity, gravity_sd=float(1 / np.sqrt(weights.sum())),
                       warnings=warnings)


#: Per-bounce values written to ``impacts.csv`` and the JSON, with units.
BOUNCE_COLUMNS = {
    "track": "-", "flight": "- (the fitted flight before)", "resolved": "- (one impact; else merged)",
    "used": "- (in the fit)", "time": "s", "time_after": "s", "impact_angle": "deg, axis to floor",
    "restitution_apparent": "-", "restitution_apparent_sd": "-", "model_restitution": "-",
    "u_n_before": "m/s", "u_n_after": "m/s", "u_t_before": "m/s", "u_t_after": "m/s", "slip": "-",
    "model_slip": "-", "model_impacts": "-", "fps_to_resolve": "1/s",
    "translational_before": "J", "rotational_before": "J", "potential_before": "J",
    "translational_after": "J", "rotational_after": "J", "potential_after": "J",
}


def bounce_table(calibration):
    """The per-bounce table a user reads (``impacts.csv``): :data:`BOUNCE_COLUMNS`."""
    return calibration.bounces[list(BOUNCE_COLUMNS)].copy()


def _plain(value):
    if isinstance(value, (np.floating, float)):
        return None if not np.isfinite(value) else float(value)
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, np.bool_):
        return bool(value)
    return value


def summary(calibration):
    """The fit as one JSON-ready object (the names other programs read)."""
    est = calibration.estimate
    table = bounce_table(calibration)
    return {
        "law": calibration.law,
        "restitution": est.restitution, "restitution_low": est.restitution_low,
        "restitution_high": est.restitution_high,
        "restitution_bootstrap_low": _plain(est.restitution_bootstrap[0]),
        "restitution_bootstrap_high": _plain(est.restitution_bootstrap[1]),
        "friction": est.friction, "friction_low": est.friction_low, "friction_high": est.friction_high,
        "friction_identifiable": est.friction_identifiable,
        "friction_bootstrap_low": _plain(est.friction_bootstrap[0]),
        "friction_bootstrap_high": _plain(est.friction_bootstrap[1]),
        "reduced_chi2": est.reduced_chi2,
        "gravity": calibration.gravity, "gravity_sd": calibration.gravity_sd,
        "gravity_per_track": [f.gravity for f in calibration.flights],
        "frame_noise_m": [f.position_noise for f in calibration.flights],
        "frame_noise_deg": [float(np.degrees(f.angle_noise)) for f in calibration.flights],
        "tracks": [t.name for t in calibration.tracks],
        "impacts": [{k: _plain(v) for k, v in row.items()} for row in table.to_dict(orient="records")],
        "warnings": list(calibration.warnings),
    }
