"""Restitution and friction from measured bounces: least squares of the
model's impact map against every bounce of every track at once.

A resolved impact gives the state just before and just after one contact
(:mod:`hopscape.calibration.impacts`); the model maps the state before to
the state after by Routh's method (:func:`sim.impact.routh_impact`,
docs/physics.md section 4) for a restitution and a friction, and the
residual is the measured velocity and spin after minus the mapped ones,
each over its standard deviation (the after-flight's fit, plus the
before-flight's fit carried through the map). A merged bounce (several
impacts between two fitted flights) is compared by simulating the model
(:func:`sim.drop.simulate`) from the flight before to the middle of the
flight after; its start state's uncertainty is carried through the
simulated impacts by finite differences.

The sum of squares is worked out on a grid of restitution and friction
first (every bounce for every grid point in one vectorised call), so that
the bootstrap over bounces is one matrix product of resample counts by
per-bounce costs (as the Sobol bootstrap in
``explore/sensitivity/_saltelli.py``); the best grid point then starts
``scipy.optimize.least_squares``, whose Jacobian gives the intervals
(the wider of the Gauss-Newton covariance, scaled by the reduced
chi-square when it is above 1, and the sandwich covariance clustered by
bounce; Student's t).
Friction that no bounce reveals (every impact sticks, so any larger value
fits as well) has a profile that never rises above its 95% level: it is
reported as a lower bound only (docs/physics.md section 10).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import optimize, stats

from hopscape import sim
from hopscape.sim.flight import GRAVITY
from hopscape.sim.impact import LAW_CODE, impulse_matrix, routh_impact

#: Grid of the first search and of the bootstrap. [-]
RESTITUTION_GRID = np.linspace(0.0, 1.0, 101)
FRICTION_GRID = np.linspace(0.0, 2.0, 81)
#: Impacts the model may make across one merged bounce. [-]
MERGED_IMPACTS = 12
#: Resamples of the bootstrap over bounces. [-]
BOOTSTRAP = 200
#: Residuals beyond this many standard deviations count linearly, not
#: squared (Huber's loss): one bounce whose uncertainty the linearised
#: propagation misjudges (an impact at the stick threshold, where the map
#: has a kink) must not pull the fit. [-]
HUBER = 3.0
#: Relative input step for carrying the before-state's variance through the map. [-]
STEP = 1e-6


def impact_map(shape, vx, vy, spin, angle, restitution, friction, law):
    """Velocity and spin just after one impact, from the state just before.

    Parameters
    ----------
    shape : sim.Shape
        One body.
    vx, vy : array_like
        Centre velocity before. [m/s]
    spin : array_like
        Before. [rad/s]
    angle : array_like
        Axis angle at contact. [rad]
    restitution, friction : array_like
        The contact (broadcast against the state). [-]
    law : str
        A name of :data:`sim.impact.LAW_TABLE`.

    Returns
    -------
    vx, vy, spin, slip : numpy.ndarray
        After the impact [m/s, m/s, rad/s] and the slip history code.
    """
    m, inertia = float(shape.mass), float(shape.inertia)
    r_x, r_y = shape.contact_offset(angle)
    k_tt, k_nn, k_tn = impulse_matrix(m, inertia, r_x, r_y)
    u_t, u_n = vx - spin * r_y, vy + spin * r_x
    shape_out = np.broadcast(u_t, restitution, friction).shape
    p_n, p_t, slip = routh_impact(u_t, u_n, k_tt, k_nn, k_tn, restitution, friction,
                                  np.full(shape_out, LAW_CODE[law], np.int8))
    return vx + p_t / m, vy + p_n / m, spin + (r_x * p_n - r_y * p_t) / inertia, slip


def state_at(result, elapsed):
    """Velocity and spin of each simulated drop ``elapsed`` seconds after its release. [m/s, rad/s]"""
    times = result.impacts["time"]
    last = (times <= np.asarray(elapsed, float)[:, None]).sum(axis=1) - 1  # NaN (no impact) compares False
    rows = np.arange(times.shape[0])
    pick = lambda name, start: np.where(last >= 0, result.impacts[name][rows, np.maximum(last, 0)],  # noqa: E731
                                        result.release[start])
    since = elapsed - np.where(last >= 0, times[rows, np.maximum(last, 0)], 0.0)
    return pick("vx", "vx"), pick("vy", "vy") - GRAVITY * since, pick("spin", "spin")


@dataclass
class Units:
    """The bounces the fit compares, as the model sees them."""

    shape: object
    law: str
    resolved: object  # the rows of the resolved impacts (pandas.DataFrame)
    merged: object  # the rows of the merged bounces
    #: the start state's variance carried through the model across each merged
    #: bounce (:func:`merged_variances`); None: carried over one to one
    merged_variance: np.ndarray | None = None

    @property
    def count(self):
        return len(self.resolved) + len(self.merged)


def _resolved_residuals(units, e, mu):
    """Whitened residuals of the resolved impacts: (G, N, 3) for G parameter pairs."""
    b = units.resolved
    if len(b) == 0:
        return np.zeros((e.size, 0, 3))
    inputs = [b[f"{n}_before"].to_numpy() for n in ("vx", "vy", "spin", "angle")]
    variance_in = [b["var_v_before"].to_numpy(), b["var_v_before"].to_numpy(), b["var_spin_before"].to_numpy(),
                   b["var_angle_before"].to_numpy()]
    e, mu = e[:, None], mu[:, None]
    predicted = np.stack(impact_map(units.shape, *inputs, e, mu, units.law)[:3], axis=-1)
    variance = np.stack([b["var_v_after"], b["var_v_after"], b["var_spin_after"]], axis=-1).astype(float)
    for i, var in enumerate(variance_in):
        h = STEP * (np.abs(inputs[i]) + (1.0 if i < 3 else 0.1))
        moved = list(inputs)
        moved[i] = inputs[i] + h
        shifted = np.stack(impact_map(units.shape, *moved, e, mu, units.law)[:3], axis=-1)
        variance = variance + ((shifted - predicted) / h[:, None]) ** 2 * var[:, None]
    observed = np.stack([b[f"{n}_after"].to_numpy() for n in ("vx", "vy", "spin")], axis=-1)
    # the contact time moves the normal velocity before and after alike
    # (gravity) and the angle at contact (spin): one shared input
    h = 1e-7
    moved = [inputs[0], inputs[1] - GRAVITY * h, inputs[2], inputs[3] + inputs[2] * h]
    shifted = np.stack(impact_map(units.shape, *moved, e, mu, units.law)[:3], axis=-1)
    drift = (np.array([0.0, -GRAVITY, 0.0]) - (shifted - predicted) / h) ** 2
    variance = variance + drift * b["var_time"].to_numpy()[:, None]
    return (observed - predicted) / np.sqrt(variance)


#: The start state of a merged bounce: (column, step of the finite difference).
START = (("y", 1e-7), ("angle", 1e-6), ("vx", 1e-6), ("vy", 1e-6), ("spin", 1e-4))


def _merged_run(units, row, e, mu, moved=None, impacts=MERGED_IMPACTS):
    """The model from the flight before a merged bounce, for each parameter
    pair (``moved``: one start value changed by its step, for the derivative)."""
    start = {name: row[f"{name}_start"] + (step if name == moved else 0.0) for name, step in START}
    release = sim.Release(height=start["y"], angle=start["angle"], spin=start["spin"], vx=start["vx"], vy=start["vy"])
    result = sim.simulate(units.shape, release, sim.Contact(e, mu, units.law), impacts=impacts, peaks=("centre",))
    return np.stack(state_at(result, np.full(np.size(e), row["t_ref_after"] - row["t_start"])), axis=-1)


def merged_variances(units, e, mu):
    """Variance of the model's velocity and spin after each merged bounce
    from the uncertainty of its start state, carried through the simulated
    impacts by finite differences at one parameter pair: (M, 3).
    [m^2/s^2, m^2/s^2, rad^2/s^2]"""
    out = np.zeros((len(units.merged), 3))
    e, mu = np.atleast_1d(e), np.atleast_1d(mu)
    for j, (_, row) in enumerate(units.merged.iterrows()):
        base = _merged_run(units, row, e, mu)[0]
        variance_in = {"y": row["var_pos_start"], "angle": row["var_angle_start"], "vx": row["var_v_start"],
                       "vy": row["var_v_start"], "spin": row["var_spin_start"]}
        for name, step in START:
            slope = (_merged_run(units, row, e, mu, moved=name)[0] - base) / step
            out[j] += slope ** 2 * variance_in[name]
    return out


def _merged_residuals(units, e, mu):
    """Whitened residuals of the merged bounces: (G, M, 3)."""
    out = np.zeros((e.size, len(units.merged), 3))
    for j, (_, row) in enumerate(units.merged.iterrows()):
        predicted = _merged_run(units, row, e, mu)
        observed = np.array([row["vx_ref_after"], row["vy_ref_after"], row["spin_ref_after"]])
        variance = np.array([row["var_v_ref_after"], row["var_v_ref_after"], row["var_spin_ref_after"]])
        carried = units.merged_variance[j] if units.merged_variance is not None else np.array(
            [row["var_v_start"], row["var_v_start"], row["var_spin_start"]])
        out[:, j] = (observed - predicted) / np.sqrt(variance + carried)
    return out


def huber(r):
    """Huber's loss, ``r^2`` within :data:`HUBER` standard deviations and
    linear beyond (``scipy.optimize.least_squares``' ``"huber"`` times 2). [-]"""
    a = np.abs(r)
    return np.where(a <= HUBER, r ** 2, 2 * HUBER * a - HUBER ** 2)


def residuals(units, e, mu):
    """Whitened residuals of every bounce for each parameter pair: (G, U, 3)."""
    e, mu = np.atleast_1d(np.asarray(e, float)), np.atleast_1d(np.asarray(mu, float))
    return np.concatenate([_resolved_residuals(units, e, mu), _merged_residuals(units, e, mu)], axis=1)


@dataclass
class Estimate:
    """Fitted restitution and friction with their 95% intervals."""

    restitution: float
    restitution_low: float
    restitution_high: float
    friction: float | None  # None when no bounce reveals it
    friction_low: float
    friction_high: float | None
    restitution_bootstrap: tuple  # (low, high) percentile interval
    friction_bootstrap: tuple
    chi2: float  # weighted sum of squares at the fit [-]
    dof: int  # residuals - parameters [-]
    friction_identifiable: bool
    friction_best: float  # the best-fitting value even when not identifiable [-]
    unit_cost: np.ndarray = field(repr=False)  # per bounce at the fit [-]

    @property
    def reduced_chi2(self):
        return self.chi2 / max(self.dof, 1)


def _lowest_crossing(grid, profile, level):
    """The smallest grid value where ``profile`` is at or below ``level`` (linear between points)."""
    inside = np.flatnonzero(profile <= level)
    i = inside[0]
    if i == 0:
        return float(grid[0])
    a, b = profile[i - 1], profile[i]
    return float(grid[i - 1] + (grid[i] - grid[i - 1]) * (a - level) / (a - b))


def _refined(cost, i, j):
    """Parabolic refinement of grid minima at (i, j) of ``cost`` (..., E, F), along each axis."""
    def axis(c_minus, c_0, c_plus, grid, k):
        curvature = c_minus - 2 * c_0 + c_plus
        shift = np.where(curvature > 0, 0.5 * (c_minus - c_plus) / np.where(curvature > 0, curvature, 1), 0.0)
        step = grid[1] - grid[0]
        return np.clip(grid[k] + np.clip(shift, -1, 1) * step, grid[0], grid[-1])
    n_e, n_f = cost.shape[-2:]
    rows = np.arange(cost.shape[0])
    ie, jf = np.clip(i, 1, n_e - 2), np.clip(j, 1, n_f - 2)
    e = axis(cost[rows, ie - 1, j], cost[rows, ie, j], cost[rows, ie + 1, j], RESTITUTION_GRID, ie)
    f = axis(cost[rows, i, jf - 1], cost[rows, i, jf], cost[rows, i, jf + 1], FRICTION_GRID, jf)
    return np.where((i == 0) | (i == n_e - 1), RESTITUTION_GRID[i], e), np.where((j == 0) | (j == n_f - 1),
                                                                              FRICTION_GRID[j], f)


def _standard_errors(jac, residual, scale, count, dof):
    """Standard errors of the parameters and the t quantile that goes with them.

    The larger of two: the Gauss-Newton covariance ``(J'J)^-1`` scaled by
    the reduced chi-square, and the sandwich (robust) covariance clustered
    by bounce, ``(J'J)^-1 (sum_u J_u' r_u r_u' J_u) (J'J)^-1`` with the
    small-sample factor ``U / (U - p)`` (Huber 1967; White 1980; clustered
    as in Liang & Zeger 1986), which stays honest when a bounce's own
    uncertainty was misjudged. The sandwich's quantile has ``U - p``
    degrees of freedom. [-]
    """
    p = jac.shape[1]
    try:
        bread = np.linalg.inv(jac.T @ jac)
    except np.linalg.LinAlgError:
        return np.full(p, np.inf), 1.96
    model = np.diag(bread) * scale
    per_unit = (jac * residual[:, None]).reshape(count, 3, p).sum(axis=1)  # J_u' r_u, (U, p)
    meat = per_unit.T @ per_unit
    robust = np.diag(bread @ meat @ bread) * count / max(count - p, 1)
    quantile_model, quantile_robust = stats.t.ppf(0.975, dof), stats.t.ppf(0.975, max(count - p, 1))
    use_robust = quantile_robust ** 2 * robust > quantile_model ** 2 * model
    return (np.sqrt(np.where(use_robust, robust, model)).astype(float),
            np.where(use_robust, quantile_robust, quantile_model))


def estimate(units, bootstrap=BOOTSTRAP, seed=0):
    """Least-squares restitution and friction over all bounces, with 95% intervals.

    Parameters
    ----------
    units : Units
    bootstrap : int
        Resamples of the bounces (0: none).
    seed : int
        Seed of the resamples.

    Returns
    -------
    Estimate
    """
    e_grid, f_grid = np.meshgrid(RESTITUTION_GRID, FRICTION_GRID, indexing="ij")
    if len(units.merged):
        # the merged bounces' carried variance, from the derivatives at the best grid point of a
        # first look (the resolved impacts alone when there are any: they cost no simulation)
        first = Units(units.shape, units.law, units.resolved, units.merged.iloc[:0]) if len(units.resolved) else units
        cost = np.nansum(huber(residuals(first, e_grid.ravel(), f_grid.ravel())), axis=(1, 2))
        best = int(np.nanargmin(cost))
        units.merged_variance = merged_variances(units, e_grid.flat[best], f_grid.flat[best])
    grid_residuals = residuals(units, e_grid.ravel(), f_grid.ravel())
    unit_cost = np.nansum(huber(grid_residuals), axis=2)  # (G, U)
    total = unit_cost.sum(axis=1)
    best = int(np.nanargmin(total))
    start = np.array([e_grid.flat[best], f_grid.flat[best]])
    fit = optimize.least_squares(lambda p: residuals(units, p[0], p[1]).ravel(), start,
                                 bounds=([0.0, 0.0], [1.0, FRICTION_GRID[-1] * 2]), x_scale=[0.05, 0.1],
                                 loss="huber", f_scale=HUBER)
    e_hat, mu_hat = (float(v) for v in fit.x)
    n_res = grid_residuals.shape[1] * 3
    chi2 = float(2 * fit.cost)
    dof = max(n_res - 2, 1)
    # the weights come from the frame noise (many frames), so a sum of
    # squares below its degrees of freedom is luck, not a smaller noise
    scale = max(chi2 / dof, 1.0)
    # friction's profile: does any larger friction fit clearly worse?
    profile = total.reshape(e_grid.shape).min(axis=0)
    level = min(chi2, profile.min()) + stats.chi2.ppf(0.95, 1) * scale
    identifiable = bool(np.any(profile[FRICTION_GRID > mu_hat] > level))
    jac = fit.jac if identifiable else fit.jac[:, :1]
    sd, quantile = _standard_errors(jac, fit.fun, scale, units.count, dof)
    e_low, e_high = max(e_hat - quantile[0] * sd[0], 0.0), min(e_hat + quantile[0] * sd[0], 1.0)
    if identifiable:
        f_low, f_high = max(mu_hat - quantile[1] * sd[1], 0.0), mu_hat + quantile[1] * sd[1]
    else:
        f_low, f_high = _lowest_crossing(FRICTION_GRID, profile, level), None
    e_boot, f_boot = (np.nan, np.nan), (np.nan, np.nan)
    if bootstrap and units.count > 1:
        rng = np.random.default_rng(seed)
        counts = np.stack([np.bincount(rng.integers(units.count, size=units.count), minlength=units.count)
                           for _ in range(bootstrap)])
        totals = (counts @ np.nan_to_num(unit_cost.T, nan=0.0)).reshape(bootstrap, *e_grid.shape)
        flat = totals.reshape(bootstrap, -1).argmin(axis=1)
        i, j = np.unravel_index(flat, e_grid.shape)
        e_b, f_b = _refined(totals, i, j)
        e_boot = tuple(float(v) for v in np.percentile(e_b, [2.5, 97.5]))
        f_boot = tuple(float(v) for v in np.percentile(f_b, [2.5, 97.5])) if identifiable else (
            float(np.percentile(f_b, 2.5)), np.nan)
    at_fit = np.nansum(huber(residuals(units, e_hat, mu_hat)[0]), axis=1)
    return Estimate(restitution=e_hat, restitution_low=e_low, restitution_high=e_high,
                    friction=mu_hat if identifiable else None, friction_low=f_low, friction_high=f_high,
                    restitution_bootstrap=e_boot, friction_bootstrap=f_boot, chi2=chi2, dof=dof,
                    friction_identifiable=identifiable, friction_best=mu_hat, unit_cost=at_fit)
