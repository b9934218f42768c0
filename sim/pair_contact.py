"""Both ends of a body on the floor at once: the compliant two-contact impact.

Why
---
An impulse model resolves one contact at a time. A body landing nearly
flat touches with one end and, a few micrometres of travel later, with
the other; when the second contact begins before the first has ended the
two overlap in time and no sequence of single impulses describes them.
Resolved as one impulse at the midpoint (exactly flat) or as an end
impulse followed at once by the other end's, the outcome jumps between a
tilt of 0 and 0.01 deg although the physics does not (docs/physics.md
section 7, "Two ends at once").

What
----
At every impact :func:`overlapping_pairs` finds the drops whose other end
(the corner piece at the other end of the axis, same side across it)
would touch within the first contact's Hertz duration ``t_c``
(:func:`sim.hertz.hertz_duration`, with the struck point's effective mass
``1 / K_nn``, normal speed and radius) at its approach speed, before or
after the single impulse (the larger). :func:`resolve_pairs` follows those
drops through the contact with both ends' compliant contacts: Hertz's force
``K delta^(3/2) (1 + chi delta_dot)`` (Johnson 1985, eq. 4.22; Hunt &
Crossley 1975), ``chi`` calibrated per end on touching to the impact's
restitution (:mod:`sim.damping`), and Coulomb friction regularised as
``-mu F tanh(u_t / v_reg)``. Vectorised over the affected drops: a
fixed-step classical Runge-Kutta method (as :mod:`sim.compliant`), a step
of ``t_c / STEPS_PER_DURATION`` per drop, until no end presses; an end
still approaching then touches after a flight, which the kernel's search
finds as any contact (those contacts no longer overlap). The velocities
then are the impact's outcome. Like every impact of the engine it is
instantaneous: gravity's impulse over the microseconds is left out and
the next flight starts from the pose at first touch (the contact's
micrometres of travel left out), exact again.

The effective modulus ``E*`` is the user's (``Contact.contact_modulus``);
without one the engine uses :data:`DEFAULT_CONTACT_MODULUS`, hard gelatin
on steel (a capsule on a steel chute): it only sets how close to flat
a landing counts as two ends at once, and the outcome within that band.

References
----------
K. L. Johnson, *Contact Mechanics*, CUP 1985, ch. 4 and 11; K. H. Hunt and
F. R. E. Crossley, J. Appl. Mech. 42:440, 1975; Y. Li, X. Chen, Y. H. Tee,
Y. Liu and C. Ong, Am. J. Phys. 92(6):424, 2024 (impulse against Hertzian
models of a bouncing rod).
"""
from __future__ import annotations

import numpy as np

from .geometry import FLAT_TOLERANCE, round_support
from .hertz import equivalent_radius, hertz_duration, principal_radii

#: The default material pair: hard gelatin body on a steel floor
#: (``sim/data/materials.csv``). [-]
DEFAULT_PAIR = ("hard_gelatin", "steel")
#: ``E*`` of :data:`DEFAULT_PAIR` (:func:`sim.materials.effective_modulus`
#: of the table's rows; tests/test_pair_contact.py checks it), written out
#: so that importing the kernel reads no table. [Pa]
DEFAULT_CONTACT_MODULUS = 3.3664366e9
#: Runge-Kutta steps per Hertz duration (tests/test_pair_contact.py
#: checks the outcome against a dense integration). Near flat 25 would do
#: (0.03 rad/s from the reference); the compliant model's sticking
#: contacts need more: ``v_reg`` grows with the step
#: (:func:`friction_regularisation`), and a capsule's rebound at 30 deg
#: moves by 0.5% of the impact speed from 40 to 160 steps. [-]
STEPS_PER_DURATION = 40
#: Hertz durations followed at the full step. A contact still going then
#: (about 1 in 100 pairs: an end touching twice at low restitution) goes
#: on with :data:`COARSER` times the step and ``v_reg`` (stable, less
#: exact) for as many steps again; one still pressed after that keeps its
#: single impulse. The fixed step costs the same for one drop as for all,
#: so the few long contacts would otherwise set the cost of every call. [-]
LONGEST_CONTACT = 3.0
#: Step factor of the long contacts. [-]
COARSER = 4.0
#: ``v_reg`` of the regularised friction, as a share of the impact's
#: normal speed: slip slower than this is treated as partial sticking
#: (more where the step needs it, :func:`friction_regularisation`). [-]
REGULARISATION = 1e-3
#: Lowest restitution the damping is calibrated for
#: (:data:`sim.damping.LARGEST_DAMPING` gives 1e-3). [-]
LOWEST_RESTITUTION = 1e-3
#: Row signs of the two ends (along the axis) in :func:`resolve_pairs`.
_SIDES = np.array([[1.0], [-1.0]])
#: No contact this program meets lasts longer: drops whose other end is
#: further than this times its approach speed skip the exact test. [s]
_LONGEST_DURATION = 1e-2


def _radius(theta, profile):
    """Hertz's equivalent radius of the end pieces at ``theta`` (a body
    exactly flat has line contact there; its ends' radius is the limit). [m]"""
    s, c = np.sin(theta), np.cos(theta)
    s = np.where(np.abs(s) < 1e-6, 1e-6, s)
    c = np.where(np.abs(c) < 1e-6, 1e-6, c)
    return equivalent_radius(*principal_radii(theta, profile, sines=(s, c)))


def overlapping_pairs(live, along, r_x, u_n, vy_after, spin_after, modulus):
    """Indices (into ``live``) of the impacts whose other end touches
    within the first contact's Hertz duration (module notes).

    ``along`` the struck pieces' side along the axis (0: both ends
    already), ``r_x`` [m] the struck offset, ``u_n`` [m/s] its normal
    speed before, ``vy_after`` [m/s], ``spin_after`` [rad/s] the single
    impulse's outcome, ``modulus`` ``E*`` [Pa].
    """
    half_long = live.half_long
    s, c = np.sin(live.theta), np.cos(live.theta)
    side = np.where(along == 0, 1.0, along)
    # the other end: along flipped, so 2 A |sin| higher and 2 A cos along further
    gap = 2.0 * half_long * np.abs(s) * (along != 0)
    r_other = r_x + 2.0 * half_long * c * side
    approach = -np.minimum(live.vy + live.spin * r_other, vy_after + spin_after * r_other)
    near = np.flatnonzero((half_long > 0) & (approach > 0) & (gap <= approach * _LONGEST_DURATION))
    if near.size == 0:
        return near
    profile = tuple(p[near] for p in live.profile)
    mass, inertia = live.mass[near], live.inertia[near]
    k_nn = 1.0 / mass + r_x[near] ** 2 / inertia
    duration = hertz_duration(1.0 / k_nn, np.abs(u_n[near]), modulus, _radius(live.theta[near], profile))
    return near[gap[near] <= approach[near] * duration]


def friction_regularisation(speed, friction, mass, inertia, profile, theta, stiffness, modulus, radius, k_nn,
                            step):
    """``v_reg`` of the regularised friction [m/s]: :data:`REGULARISATION`
    of the normal impact speed ``speed`` [m/s], or more where the explicit
    step would be unstable.

    Slipping slower than ``v_reg`` the friction force is ``mu F u_t /
    v_reg``: a damper of rate up to ``lambda = sum mu F K_tt / v_reg`` on
    the slip (``K_tt`` of :func:`sim.impact.impulse_matrix`). The classical
    Runge-Kutta method is stable for ``lambda h`` up to 2.78, so ``v_reg``
    is at least ``2 mu F_max K_tt h / 2``, with ``F_max`` the undamped
    Hertz peak force of one end taking the whole impact
    (:func:`sim.hertz.hertz_indentation`; two ends share it) and both ends'
    ``K_tt`` bounded by the larger end's lever.
    """
    from .hertz import hertz_indentation
    peak = stiffness * hertz_indentation(1.0 / k_nn, speed, modulus, radius) ** 1.5
    lever = profile[0] * np.abs(np.sin(theta)) + profile[1] + np.maximum(profile[2], profile[3])
    k_tt = 1.0 / mass + lever ** 2 / inertia
    return np.maximum(REGULARISATION * speed, friction * peak * k_tt * step)


def resolve_pairs(mass, inertia, profile, across, state, restitution, friction, modulus):
    """Follow drops through a contact on both ends (module notes).

    Parameters
    ----------
    mass, inertia : numpy.ndarray
        [kg], [kg m^2]
    profile : tuple of numpy.ndarray
        ``(half_long, half_wide, round_long, round_wide)``. [m]
    across : numpy.ndarray
        Side of the pieces across the axis (:func:`sim.search.next_contact`).
    state : numpy.ndarray, shape (6, n)
        ``x, y, theta, vx, vy, spin`` at first touch (the lower end's gap 0). [m, rad, m/s, rad/s]
    restitution, friction : numpy.ndarray
        The impact's restitution and Coulomb coefficient. [-]
    modulus : float
        ``E*``. [Pa]

    Returns
    -------
    state : numpy.ndarray, shape (6, n)
        After the contact (NaN where the step budget ran out).
    duration : numpy.ndarray
        Of the whole contact. [s]
    """
    from .damping import scaled_damping  # SciPy's interpolants: loaded when a pair first occurs
    y = np.array(state, dtype=float)
    rounded = profile[2] != profile[3]

    def pieces(s_state):
        """``(gap, u_n, u_t, r_x, r_y)`` of both ends, each ``(2, n)`` (row 0:
        along = +1, row 1: along = -1): :func:`sim.geometry.corner_offset`
        with the terms that do not depend on the end shared."""
        # as the kernel's contact offset: a body within 1e-12 of flat is flat
        s, c = (v * (np.abs(v) >= FLAT_TOLERANCE) for v in (np.sin(s_state[2]), np.cos(s_state[2])))
        ellipse, ellipse_slope = round_support(s, c, profile[2], profile[3], rounded)
        r_x = -(_SIDES * (profile[0] * c) + (ellipse_slope - profile[1] * s * across))
        r_y = -(_SIDES * (profile[0] * s) + (profile[1] * c * across + ellipse))
        w = s_state[5]
        return s_state[1] + r_y, s_state[4] + w * r_x, s_state[3] - w * r_y, r_x, r_y

    gap, u_n, _, r_x, _ = pieces(y)
    speed = -np.min(u_n, axis=0)
    c_scaled = scaled_damping(restitution)
    radius = _radius(y[2], profile)
    # a body without a straight part (sphere, spheroid) has its two "ends"
    # at one point: each carries half the stiffness
    stiffness = np.where(profile[0] > 0, 1.0, 0.5) * 4.0 / 3.0 * modulus * np.sqrt(radius)
    k_nn = 1.0 / mass + np.min(r_x ** 2, axis=0) / inertia
    t_c = hertz_duration(1.0 / k_nn, speed, modulus, radius)
    step = t_c / STEPS_PER_DURATION
    v_reg = friction_regularisation(speed, friction, mass, inertia, profile, y[2], stiffness, modulus, radius, k_nn,
                                    step)
    # chi per end, set on touching from that end's approach speed
    chi = np.where(gap <= 1e-12, c_scaled / np.maximum(-u_n, 1e-12), np.nan)

    def derivative(s_state):
        # gravity's impulse over microseconds is left out, as in every
        # impact of the engine (its flights carry gravity)
        gap, u_n, u_t, r_x, r_y = pieces(s_state)
        pressed = np.maximum(-gap, 0.0)
        # an end not yet calibrated (touching within this step) takes its speed now
        damping = np.where(np.isnan(chi), c_scaled / np.maximum(-u_n, 1e-12), chi)
        normal = np.maximum(stiffness * pressed * np.sqrt(pressed) * (1.0 - damping * u_n), 0.0)
        tangential = -friction * normal * np.tanh(u_t / v_reg)
        rate = np.empty_like(s_state)
        rate[:3] = s_state[3:]
        rate[3] = (tangential[0] + tangential[1]) / mass
        rate[4] = (normal[0] + normal[1]) / mass
        torque = r_x * normal - r_y * tangential
        rate[5] = (torque[0] + torque[1]) / inertia
        return rate

    n = y.shape[1]
    ids = np.arange(n)
    time = np.zeros(n)
    pressed = np.zeros(n, bool)  # whether an end has pressed yet (first touch may be a nanometre off)
    final = np.full_like(y, np.nan)
    duration = np.full(n, np.nan)
    fine_steps = int(STEPS_PER_DURATION * LONGEST_CONTACT)
    for count in range(2 * fine_steps + 1):
        if count == fine_steps:
            step, v_reg = COARSER * step, COARSER * v_reg
        h = step
        k1 = derivative(y)
        k2 = derivative(y + 0.5 * h * k1)
        k3 = derivative(y + 0.5 * h * k2)
        k4 = derivative(y + h * k3)
        y = y + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4)
        time = time + h
        gap_last, u_last = gap, u_n
        gap, u_n = pieces(y)[:2]
        # touching sets chi from this end's approach speed at the touch
        # (linear within the step); leaving clears it
        touching = np.isnan(chi) & (gap < 0)
        if touching.any():
            with np.errstate(invalid="ignore", divide="ignore"):
                share = np.clip(gap_last / (gap_last - gap), 0.0, 1.0)
            at_touch = u_last + share * (u_n - u_last)
            chi = np.where(touching, c_scaled / np.maximum(-at_touch, 1e-12), chi)
        chi = np.where((gap >= 0) & (u_n >= 0), np.nan, chi)
        free = (gap[0] >= 0) & (gap[1] >= 0)
        pressed = pressed | ~free
        # once no end presses the contact is over: an end still approaching
        # then touches after a flight, which the kernel's search finds (the
        # contacts no longer overlap, so that impact is a single one)
        done = free & pressed
        if done.any():
            final[:, ids[done]] = y[:, done]
            duration[ids[done]] = time[done]
            if done.all():
                break
            # carry on with the drops still in contact only
            keep = np.flatnonzero(~done)
            (y, step, stiffness, c_scaled, v_reg, mass, inertia, friction, across, time, pressed,
             ids) = (a[..., keep] for a in (y, step, stiffness, c_scaled, v_reg, mass, inertia, friction,
                                             across, time, pressed, ids))
            profile = tuple(p[keep] for p in profile)
            rounded = rounded[keep]
            chi, gap, u_n = chi[:, keep], gap[:, keep], u_n[:, keep]
    return final, duration
