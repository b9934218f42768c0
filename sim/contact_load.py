"""What every impact does to the body: contact duration, force,
indentation, pressure, and a breakage screen.

Worked out after the rigid drop from its per-impact record (no cost to
the kernel): at each impact the contact point's normal speed ``v``, the
effective mass ``m* = 1 / K_nn`` there (docs/physics.md section 4, so the
duration depends on the impact angle), the Hertz radius of the struck
point (:mod:`sim.hertz`), and the restitution of that impact (with its
speed law, :func:`sim.impact.speed_restitution`) give the damped Hertz
contact (:mod:`sim.compliant`) whose restitution equals the impact's
(:mod:`sim.damping`). Along the contact normal alone the laws of
:data:`sim.impact.LAW_TABLE` agree, so the calibration is the same for
all; friction is left out of the contact's normal motion (a documented
simplification: the normal impulse of a slipping contact moves the
contact point along the normal as ``K_nn - s mu K_tn``, within ``mu
|K_tn| / K_nn`` of it).

Breakage screen: the impact-breakage master curve of Vogel & Peukert
(Powder Technol. 129:101-110, 2003; the form as recalled, docs/physics.md
section 9)::

    S = 1 - exp(-f_Mat x (W_m,kin - W_m,min)),

for one impact, with ``x`` the body's size across its axis (what a sieve
sees) and ``W_m,kin`` the mass-specific energy the contact has to take
up in compression, ``m* v^2 / (2 m)`` (equal to the usual ``v^2 / 2`` for a
sphere striking head on). ``f_Mat`` [kg/(J m)] and ``W_m,min`` [J/kg] are the
user's material parameters.
"""
from __future__ import annotations

import numpy as np

from .damping import scaled_damping, scaled_outcome
from .compliant import hertz_stiffness, scaled_contacts
from ._vector import sincos
from .geometry import corner_offset, flat_sign
from .hertz import BAND, equivalent_radius, feature_at, hertz_peak_pressure, principal_radii
from .impact import speed_restitution, table_restitution

#: Per-impact outputs of :func:`impact_loads`, with units.
LOAD_FIELDS = {
    "normal_speed": "m/s, normal approach speed of the contact point",
    "tangential_speed": "m/s, sliding speed of the contact point at first touch",
    "energy_lost": "J, kinetic energy lost in the impact",
    "restitution_used": "-, the impact's restitution (after its speed law)",
    "effective_mass": "kg, 1 / K_nn at the contact",
    "contact_time": "s, duration of the compliant contact",
    "peak_force": "N, largest normal force",
    "indentation": "m, largest indentation",
    "peak_pressure": "Pa, Hertz's largest contact pressure at the largest indentation",
    "breakage_probability": "-, Vogel & Peukert master curve, this impact alone",
}


def _per_impact(values, shape):
    return np.broadcast_to(np.asarray(values, dtype=float).reshape(-1, 1) if np.ndim(values) else values, shape)


def impact_state(result):
    """Per impact: struck feature code, profile, the contact point's
    normal and tangential velocity before, ``1 / K_nn``, the restitution
    used and ``(sin, cos)`` of the angle (all ``(drops, impacts)``)."""
    shape = result.time.shape
    profile = tuple(_per_impact(p, shape) for p in result.profile)
    # the kernel's sine and cosine (one tan; sim._vector), once for every use
    sin, cos = sincos(np.nan_to_num(result.theta))
    along, across = flat_sign(sin), flat_sign(cos)
    # the lowest piece's offset, r = (-d', -d) (docs/physics.md section 2)
    r_x, r_y = corner_offset(sin, cos, profile, along, across, True)
    vx, vy, spin = result.vx_before, result.vy_before, result.spin_before
    u_n = vy + spin * r_x
    u_t = vx - spin * r_y
    mass, inertia = _per_impact(result.mass, shape), _per_impact(result.inertia, shape)
    effective_mass = 1.0 / (1.0 / mass + r_x ** 2 / inertia)
    release = result.release
    if release.get("restitution_table") is not None:
        e = table_restitution(u_n, release["restitution_table"])
    else:
        e = speed_restitution(_per_impact(release["restitution"], shape), u_n,
                              _per_impact(release.get("speed_exponent", 0.0), shape),
                              _per_impact(release.get("reference_speed", 1.0), shape))
    feature = feature_at(along, across, profile)
    return feature, profile, u_n, u_t, effective_mass, e, (sin, cos)


def impact_loads(result, effective_modulus, edge_radius=None, breakage=None):
    """The per-impact outputs of :data:`LOAD_FIELDS` for a rigid drop result.

    Parameters
    ----------
    result : sim.DropResult
    effective_modulus : float or array
        ``E*`` per drop (:func:`sim.materials.effective_modulus`); NaN
        gives NaN contact outputs (no materials given). [Pa]
    edge_radius : float or array, optional
        Edge radius of sharp rims per drop (default
        :func:`sim.hertz.rim_edge_default`). [m]
    breakage : tuple of array_like, optional
        ``(f_mat, w_min)`` per drop for the breakage screen [kg/(J m)],
        [J/kg]; without it the probability is NaN.

    Returns
    -------
    dict of numpy.ndarray
        Each ``(drops, impacts)``, NaN after a drop's last impact, for
        line and face contacts (not Hertzian: :mod:`sim.hertz`) and for
        impacts whose restitution is below the calibrated range
        (:data:`sim.damping.LARGEST_DAMPING`; sustained contact).
    """
    shape = result.time.shape
    feature, profile, u_n, u_t, m_eff, e, sines = impact_state(result)
    exists = np.arange(shape[1])[None, :] < result.count[:, None]
    speed = np.where(exists, -u_n, np.nan)
    modulus = _per_impact(effective_modulus, shape)
    edge = None if edge_radius is None else _per_impact(edge_radius, shape)
    rho_1, rho_2 = principal_radii(None, profile, edge, sines)
    radius = np.where(feature < BAND, equivalent_radius(rho_1, rho_2), np.nan)
    stiffness = hertz_stiffness(modulus, radius)
    with np.errstate(invalid="ignore", divide="ignore"):
        scale = (5 * m_eff * speed ** 2 / (4 * stiffness)) ** 0.4  # undamped largest indentation
        wanted = exists & np.isfinite(stiffness)
        if wanted.any():
            c = scaled_damping(np.where(wanted, e, np.nan))
            _, duration, depth, force = scaled_outcome(c)
        else:  # no materials: the table is not even built
            duration = depth = force = np.full(shape, np.nan)
        indentation = depth * scale
        ke_before = sum(result.energy_before()[:2])
        ke_after = sum(result.energy_after()[:2])
        out = {
            "normal_speed": speed,
            "tangential_speed": np.where(exists, np.abs(u_t), np.nan),
            "energy_lost": np.where(exists, ke_before - ke_after, np.nan),
            "restitution_used": np.where(exists, e, np.nan),
            "effective_mass": np.where(exists, m_eff, np.nan),
            "contact_time": duration * scale / speed,
            "peak_force": force * stiffness * scale ** 1.5,
            "indentation": indentation,
            "peak_pressure": hertz_peak_pressure(indentation, modulus, radius),
        }
        if breakage is None:
            out["breakage_probability"] = np.full(shape, np.nan)
        else:
            f_mat, w_min = (_per_impact(v, shape) for v in breakage)
            size = 2 * (profile[1] + profile[3])
            specific = 0.5 * m_eff * speed ** 2 / _per_impact(result.mass, shape)
            out["breakage_probability"] = 1 - np.exp(-f_mat * size * np.maximum(specific - w_min, 0.0))
    out["feature"] = np.where(exists, feature, -1).astype(np.int8)
    return out


def force_histories(result, drop, effective_modulus, edge_radius=None, samples=2000):
    """Normal force against time through each impact of one drop, for
    pictures: a list of ``(time since first touch [s], force [N])``, one per
    impact (empty arrays where the impact has no contact outputs)."""
    loads = impact_loads(result, effective_modulus, edge_radius)
    count = int(result.count[drop])
    time_scale = loads["contact_time"][drop, :count]
    ok = np.isfinite(time_scale)
    e = loads["restitution_used"][drop, :count]
    curves = [(np.zeros(0), np.zeros(0))] * count
    if not ok.any():
        return curves
    c = scaled_damping(e[ok])
    run = scaled_contacts(c, steps=samples, record=True)
    t, _, _, f = run.history
    for column, i in enumerate(np.flatnonzero(ok)):
        keep = np.isfinite(f[:, column])
        # scaled time and force -> seconds and newtons: the run's own scales
        seconds = t[keep, column] / run.duration[column] * time_scale[i]
        newtons = f[keep, column] / run.peak_force[column] * loads["peak_force"][drop, i]
        curves[i] = (seconds, newtons)
    return curves
