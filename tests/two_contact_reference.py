"""An independent two-contact compliant reference for a capsule on the floor.

Each end cap presses into the floor with its own contact: Hertz's normal
force ``K delta^(3/2)`` (``K = (4/3) E* sqrt(R)``, K. L. Johnson, *Contact
Mechanics*, CUP 1985, eq. 4.22) with Hunt & Crossley's damping ``(1 + chi
delta_dot)`` (J. Appl. Mech. 42:440, 1975), ``chi`` set when that end
touches from its own approach speed by the calibration of
:mod:`sim.damping` (docs/physics.md section 7), and Coulomb friction
regularised as ``-mu F tanh(u_t / v_reg)``. The rigid capsule moves in
the plane under both contacts and gravity; the whole contact is
integrated densely by SciPy's ``solve_ivp`` (DOP853, tight tolerances),
touching and leaving found as events, until neither end presses and
neither approaches.

Written apart from the engine on purpose: the capsule's geometry is its
own (cap centres at ``+-A (cos theta, sin theta)``, lowest point of a cap
a radius below its centre), and the integrator is SciPy's, so a test that
compares the engine with it compares two codes, not one with itself.
"""
from __future__ import annotations

import numpy as np
from scipy.integrate import solve_ivp

from hopscape.sim.damping import scaled_damping


def capsule_reference(mass, inertia, half_long, radius, theta, vx, vy, spin, restitution, friction,
                      effective_modulus, regularisation=1e-3, gravity=0.0, max_time=1e-2, speed_reg=None):
    """State at separation of a capsule whose lower end touches the floor now.

    ``gravity`` [m/s^2] is 0 by default: the engine's impacts leave out
    gravity's impulse over their microseconds. ``theta`` [rad] puts the capsule's centre at ``y = radius + half_long
    |sin theta|`` (its lowest end just touching). ``regularisation`` is
    ``v_reg`` as a fraction of the first end's approach speed, or
    ``speed_reg`` [m/s] when given.

    Returns a dict: ``vx``, ``vy``, ``spin`` [m/s, rad/s] after, ``duration``
    [s] of the whole contact, ``touches`` (how many times an end touched).
    """
    k_hertz = 4.0 / 3.0 * effective_modulus * np.sqrt(radius)
    c_scaled = float(scaled_damping(restitution))
    sign = (1.0, -1.0)

    def ends(state):
        x, y, th, _, v_y, w = state[:6]
        v_x = state[3]
        out = []
        for k in sign:
            r_x, r_y = k * half_long * np.cos(th), k * half_long * np.sin(th) - radius
            out.append((y + r_y, v_y + w * r_x, v_x - w * r_y, r_x, r_y))
        return out

    y0 = radius + half_long * abs(np.sin(theta))
    state = np.array([0.0, y0, theta, vx, vy, spin])
    approach = -min(e[1] for e in ends(state))
    v_reg = regularisation * approach if speed_reg is None else speed_reg
    chi = [np.nan, np.nan]

    def rhs(_, s):
        fx, fy, torque = 0.0, -mass * gravity, 0.0
        for i, (gap, u_n, u_t, r_x, r_y) in enumerate(ends(s)):
            if gap >= 0 or np.isnan(chi[i]):
                continue
            delta = -gap
            f_n = max(k_hertz * delta ** 1.5 * (1.0 - chi[i] * u_n), 0.0)
            f_t = -friction * f_n * np.tanh(u_t / v_reg)
            fx += f_t
            fy += f_n
            torque += r_x * f_n - r_y * f_t
        return [s[3], s[4], s[5], fx / mass, fy / mass, torque / inertia]

    def gap_event(i):
        def event(_, s):
            return ends(s)[i][0]
        event.terminal = True
        return event

    t, touches = 0.0, 0
    # the ends touching now (gap within a nanometre) start pressed
    for i, end in enumerate(ends(state)):
        if end[0] < 1e-12 and end[1] < 0:
            chi[i] = c_scaled / -end[1]
            touches += 1
    while t < max_time:
        events = [gap_event(0), gap_event(1)]
        for i, event in enumerate(events):
            # a pressed end ends its segment on leaving, a free one on touching
            event.direction = 1.0 if not np.isnan(chi[i]) else -1.0
        sol = solve_ivp(rhs, (t, max_time), state, method="DOP853", rtol=1e-11, atol=1e-15, events=events,
                        max_step=1e-6)
        t, state = sol.t[-1], sol.y[:, -1]
        if sol.status != 1:
            break
        hit = [i for i in range(2) if sol.t_events[i].size]
        for i in hit:
            if np.isnan(chi[i]):  # touching
                chi[i] = c_scaled / max(-ends(state)[i][1], 1e-12)
                touches += 1
            else:  # leaving
                chi[i] = np.nan
        now = ends(state)
        pressed = [not np.isnan(c) for c in chi]
        if not any(pressed) and all(end[1] >= 0 for end in now):
            break
        # an end leaving sits exactly on the floor: nudge past the root
        state = state.copy()
    return {"vx": state[3], "vy": state[4], "spin": state[5], "duration": t, "touches": touches}
