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
``-mu F tanh(u_t / v_reg)``, capped at what stops the slip within a step
(:func:`stopping_rate`; the damping force is capped so along the normal).
Vectorised over the affected drops: a
fixed-step classical Runge-Kutta method (as :mod:`sim.compliant`), a step
of ``t_c / STEPS_PER_DURATION`` per drop (``COMPLIANT_STEPS`` in the
compliant model), until no end presses; an end still approaching then
touches after a flight, which the kernel's search finds as any contact
(those contacts no longer overlap). The velocities
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
from .hertz import HERTZ_DURATION_FACTOR, equivalent_radius, hertz_duration, principal_radii, rim_edge_default

#: The default material pair: hard gelatin body on a steel floor
#: (``sim/data/materials.csv``). [-]
DEFAULT_PAIR = ("hard_gelatin", "steel")
#: ``E*`` of :data:`DEFAULT_PAIR` (:func:`sim.materials.effective_modulus`
#: of the table's rows; tests/test_pair_contact.py checks it), written out
#: so that importing the kernel reads no table. [Pa]
DEFAULT_CONTACT_MODULUS = 3.3664366e9
#: Runge-Kutta steps per Hertz duration (tests/test_pair_contact.py
#: checks the outcome against a dense integration). On the 3,556 pairs of
#: 200,000 benchmark drops, against 400 steps: the velocities after (vx,
#: vy and spin times the lever, as a share of the impact speed) within
#: 0.5% for half the pairs, 1.9% for 90%, 4.2% for 99% (48 steps: 0.2%,
#: 0.8%, 1.7%); a pair's cost is its steps. [-]
STEPS_PER_DURATION = 24
#: Friction's cap, as a share of the force that stops an end's slip
#: within one step (:func:`stopping_rate`), and the damping force's along
#: the normal: below the classical Runge-Kutta method's stability limit of
#: 2.78 for a damper. [-]
SLIP_STOP = 2.5
#: Steps per Hertz duration of the compliant model (every impact through
#: :func:`resolve_pairs`), the second opinion: its first impact within
#: 1e-4 of the impact speed of 200 steps for half the 552 drops of
#: docs/compare_models.py, 1.5% for 99% (24 steps: 1.5e-3 and 4%). [-]
COMPLIANT_STEPS = 48
#: Hertz durations followed at the full step. A contact still going then
#: (about 1 in 100 pairs: an end touching twice at low restitution) goes
#: on with :data:`COARSER` times the step (and the friction cap's rate
#: over it: stable, less exact) for as many steps again; one still pressed after that keeps its
#: single impulse. The fixed step costs the same for one drop as for all,
#: so the few long contacts would otherwise set the cost of every call. [-]
LONGEST_CONTACT = 3.0
#: Step factor of the long contacts. [-]
COARSER = 4.0
#: ``v_reg`` of the regularised friction, as a share of the impact's
#: normal speed: slip slower than this is treated as partial sticking
#: (the step stays stable through :func:`stopping_rate`). [-]
REGULARISATION = 1e-3
#: Lowest restitution the damping is calibrated for
#: (:data:`sim.damping.LARGEST_DAMPING` gives 1e-3). [-]
LOWEST_RESTITUTION = 1e-3

#: Row signs of the two ends (along the axis) in :func:`resolve_pairs`.
_SIDES = np.array([[1.0], [-1.0]])
#: Slip and spin speeds, as a share of the normal speed, below which a
#: flat landing counts as symmetric (:func:`overlapping_pairs`). [-]
_SYMMETRIC = 1e-9


def _radius(theta, profile):
    """Hertz's equivalent radius of the end pieces at ``theta`` (a body
    exactly flat has line contact there; its ends' radius is the limit). [m]"""
    s, c = np.sin(theta), np.cos(theta)
    s = np.where(np.abs(s) < 1e-6, 1e-6, s)
    c = np.where(np.abs(c) < 1e-6, 1e-6, c)
    return equivalent_radius(*principal_radii(theta, profile, sines=(s, c)))


def _smallest_radius(profile):
    """A lower bound of :func:`_radius` at any angle, ``a b^2 / max(a, b)^2``
    (from :func:`sim.hertz.principal_radii`: the support lies between the
    ellipse's semi-axes ``a`` and ``b``, so ``rho_1 >= a^2 b^2 / max^3`` and
    ``rho_2 >= b^2 / max``), less a thousandth for rounding. [m]"""
    _, _, round_long, round_wide = profile
    sharp = (round_long == 0) & (round_wide == 0)
    edge = rim_edge_default(profile)
    a, b = np.where(sharp, edge, round_long), np.where(sharp, edge, round_wide)
    return 0.999 * a * b ** 2 / np.maximum(a, b) ** 2


def duration_scale(mass, modulus, profile):
    """The largest ``m^2 / (R E*^2)`` of the drops [kg^2 / (m Pa^2)]: with the
    whole mass and the smallest end radius (:func:`_smallest_radius`), no
    drop's Hertz duration at normal speed ``v`` exceeds
    ``2.868 (scale / v)^(1/5)`` (t_c grows with ``m*^(2/5) R*^(-1/5)``).
    Computed once per chunk, so that every impact's first test of
    :func:`overlapping_pairs` is a few operations per drop."""
    if np.size(mass) == 0:
        return 0.0
    return float(np.max(mass ** 2 / (_smallest_radius(profile) * modulus ** 2)))


def overlapping_pairs(live, along, r_x, u_n, vy_after, spin_after, scale=None):
    """Indices (into ``live``) of the impacts whose other end touches
    within the first contact's Hertz duration (module notes).

    ``along`` the struck pieces' side along the axis (0: both ends
    already), ``r_x`` [m] the struck offset, ``u_n`` [m/s] its normal
    speed before, ``vy_after`` [m/s], ``spin_after`` [rad/s] the single
    impulse's outcome; ``live.modulus`` is each drop's ``E*`` [Pa];
    ``scale`` :func:`duration_scale` of the chunk (None: of these drops).

    A landing exactly flat without slip or spin (``vx`` and the ends'
    speed from spin within :data:`_SYMMETRIC` of the normal speed) is no
    pair: by symmetry both ends carry equal forces, nothing slips or turns,
    and the contact is the single calibrated one under the middle that
    the kernel has already applied (every grid study's drops released flat
    without spin land so, bounce after bounce).
    """
    half_long = live.half_long
    s, c = np.sin(live.theta), np.cos(live.theta)
    side = np.where(along == 0, 1.0, along)
    # the other end: along flipped, so 2 A |sin| higher and 2 A cos along further
    gap = 2.0 * half_long * np.abs(s) * (along != 0)
    r_other = r_x + 2.0 * half_long * c * side
    approach = -np.minimum(live.vy + live.spin * r_other, vy_after + spin_after * r_other)
    symmetric = (along == 0) & (np.maximum(np.abs(live.vx), np.abs(live.spin) * half_long)
                                 <= _SYMMETRIC * np.abs(u_n))
    # the exact test only where a bound allows it (duration_scale)
    if scale is None:
        scale = duration_scale(live.mass, live.modulus, live.profile)
    longest = HERTZ_DURATION_FACTOR * (scale / np.abs(u_n)) ** 0.2
    near = np.flatnonzero((half_long > 0) & (approach > 0) & (gap <= approach * longest) & ~symmetric)
    if near.size == 0:
        return near
    profile = tuple(p[near] for p in live.profile)
    mass, inertia = live.mass[near], live.inertia[near]
    k_nn = 1.0 / mass + r_x[near] ** 2 / inertia
    duration = hertz_duration(1.0 / k_nn, np.abs(u_n[near]), live.modulus[near], _radius(live.theta[near], profile))
    return near[gap[near] <= approach[near] * duration]


def stopping_rate(mass, inertia, lever, step):
    """:data:`SLIP_STOP` ``/ (2 K h)`` of each end [1/(kg s)], ``K = 1/m +
    lever^2/I`` (:func:`sim.impact.impulse_matrix`): ``1 / (2 K h)`` is the
    force per unit of speed that stops an end's speed along one direction
    within one step ``h``, with both ends pushing. ``lever`` is the end's
    offset across that direction: ``r_y`` for the slip (``K_tt``), ``r_x``
    for the normal speed (``K_nn``).

    Slipping slower than ``v_reg`` the regularised friction ``mu F u_t /
    v_reg`` is a stiff damper on the slip, of rate ``mu F K_tt / v_reg``;
    an explicit step is unstable once that rate times the step passes 2.78
    (the classical Runge-Kutta method). Capping each end's friction force
    at ``|u_t|`` times this rate keeps the rate at most ``2.5 / h`` whatever
    ``v_reg``: the slip then stops within a step or two, which is sticking
    as far as the step can tell, and ``v_reg`` stays
    :data:`REGULARISATION` of the impact speed instead of growing with the
    step (as it had to without the cap: at 40 steps that gave 1.5% of the
    impact speed for half the benchmark pairs). The damping force along the
    normal is capped the same way: an end that touches again at a crawl
    gets ``chi = c / v`` far beyond what the step can follow.
    """
    return SLIP_STOP / (2.0 * (1.0 / mass + lever ** 2 / inertia) * step)


def resolve_pairs(mass, inertia, profile, across, state, restitution, friction, modulus,
                  steps=STEPS_PER_DURATION):
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
    modulus : numpy.ndarray or float
        ``E*``. [Pa]
    steps : int
        Runge-Kutta steps per Hertz duration (:data:`STEPS_PER_DURATION`,
        :data:`COMPLIANT_STEPS`).

    Returns
    -------
    state : numpy.ndarray, shape (6, n)
        After the contact (NaN where the step budget ran out).
    duration : numpy.ndarray
        Of the whole contact. [s]
    """
    from .damping import scaled_damping
    y = np.array(state, dtype=float)
    half_long, half_wide, round_long, round_wide = profile
    rounded = round_long != round_wide
    wide = half_wide * across

    def pieces(s_state, flat_tolerance=False):
        """``(gap, u_n, u_t, r_x, r_y)`` of both ends, each ``(2, n)`` (row 0:
        along = +1, row 1: along = -1): :func:`sim.geometry.corner_offset`
        with the terms that do not depend on the end shared. It runs four
        times a step, so every operation counts: the contact's cost is that
        of its numpy calls, whatever the number of drops."""
        s, c = np.sin(s_state[2]), np.cos(s_state[2])
        if flat_tolerance:
            # as the kernel's contact offset: a body within 1e-12 of flat is
            # flat (inside the contact the difference is 1e-18 m of gap)
            s, c = (v * (np.abs(v) >= FLAT_TOLERANCE) for v in (s, c))
        ellipse, ellipse_slope = round_support(s, c, round_long, round_wide, rounded)
        r_x = wide * s - _SIDES * (half_long * c)
        r_y = -(wide * c + ellipse) - _SIDES * (half_long * s)
        if rounded.any():
            r_x = r_x - ellipse_slope
        w = s_state[5]
        return s_state[1] + r_y, s_state[4] + w * r_x, s_state[3] - w * r_y, r_x, r_y

    gap, u_n, _, r_x, r_y = pieces(y, flat_tolerance=True)
    speed = -np.min(u_n, axis=0)
    c_scaled = scaled_damping(restitution)
    radius = _radius(y[2], profile)
    # a body without a straight part (sphere, spheroid) has its two "ends"
    # at one point: each carries half the stiffness
    stiffness = np.where(half_long > 0, 1.0, 0.5) * 4.0 / 3.0 * modulus * np.sqrt(radius)
    k_nn = 1.0 / mass + np.min(r_x ** 2, axis=0) / inertia
    t_c = hertz_duration(1.0 / k_nn, speed, modulus, radius)
    step = t_c / steps
    v_reg = REGULARISATION * speed
    stop_rate = stopping_rate(mass, inertia, r_y, step)
    press_rate = stopping_rate(mass, inertia, r_x, step)
    # chi per end, set on touching from that end's approach speed
    chi = np.where(gap <= 1e-12, c_scaled / np.maximum(-u_n, 1e-12), np.nan)
    inverse_mass, inverse_inertia, slowing = 1.0 / mass, 1.0 / inertia, -friction

    def damping_now(u_n):
        # an end not yet calibrated (touching within this step) takes its speed now
        return np.where(np.isnan(chi), c_scaled / np.maximum(-u_n, 1e-12), chi)

    def derivative(s_state, damping, at=None):
        # gravity's impulse over microseconds is left out, as in every
        # impact of the engine (its flights carry gravity)
        gap, u_n, u_t, r_x, r_y = pieces(s_state) if at is None else at
        pressed = np.maximum(-gap, 0.0)
        elastic = stiffness * pressed * np.sqrt(pressed)
        limit = np.abs(u_n) * press_rate
        normal = np.maximum(elastic + np.clip(-elastic * damping * u_n, -limit, limit), 0.0)
        tangential = slowing * normal * np.tanh(u_t * inverse_v_reg)
        limit = np.abs(u_t) * stop_rate
        tangential = np.clip(tangential, -limit, limit)
        torque = r_x * normal - r_y * tangential
        rate = np.empty_like(s_state)
        rate[:3] = s_state[3:]
        rate[3] = (tangential[0] + tangential[1]) * inverse_mass
        rate[4] = (normal[0] + normal[1]) * inverse_mass
        rate[5] = (torque[0] + torque[1]) * inverse_inertia
        return rate

    n = y.shape[1]
    ids = np.arange(n)
    time = np.zeros(n)
    pressed = np.zeros(n, bool)  # whether an end has pressed yet (first touch may be a nanometre off)
    final = np.full_like(y, np.nan)
    duration = np.full(n, np.nan)
    fine_steps = int(steps * LONGEST_CONTACT)
    inverse_v_reg = 1.0 / v_reg
    at = pieces(y)
    half_step, sixth_step = 0.5 * step, step / 6.0
    for count in range(2 * fine_steps + 1):
        if count == fine_steps:
            step, half_step, sixth_step = COARSER * step, COARSER * half_step, COARSER * sixth_step
            stop_rate, press_rate = stop_rate / COARSER, press_rate / COARSER
        damping = damping_now(at[1])
        k1 = derivative(y, damping, at)
        k2 = derivative(y + half_step * k1, damping)
        k3 = derivative(y + half_step * k2, damping)
        k4 = derivative(y + step * k3, damping)
        y = y + sixth_step * (k1 + 2.0 * (k2 + k3) + k4)
        time = time + step
        gap_last, u_last = gap, u_n
        at = pieces(y)
        gap, u_n = at[0], at[1]
        # touching sets chi from this end's approach speed at the touch
        # (linear within the step); leaving clears it
        touching = np.isnan(chi) & (gap < 0)
        if touching.any():
            with np.errstate(invalid="ignore", divide="ignore"):
                share = np.clip(gap_last / (gap_last - gap), 0.0, 1.0)
            at_touch = u_last + share * (u_n - u_last)
            chi = np.where(touching, c_scaled / np.maximum(-at_touch, 1e-12), chi)
        apart = gap >= 0
        chi = np.where(apart & (u_n >= 0), np.nan, chi)
        free = apart[0] & apart[1]
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
            (y, step, half_step, sixth_step, stiffness, c_scaled, inverse_v_reg, inverse_mass, inverse_inertia,
             slowing, wide, time, pressed, ids, rounded, half_long, round_long, round_wide) = (
                a[..., keep] for a in (y, step, half_step, sixth_step, stiffness, c_scaled, inverse_v_reg,
                                       inverse_mass, inverse_inertia, slowing, wide, time, pressed, ids, rounded,
                                       half_long, round_long, round_wide))
            chi, gap, u_n, stop_rate, press_rate = (chi[:, keep], gap[:, keep], u_n[:, keep], stop_rate[:, keep],
                                                    press_rate[:, keep])
            at = tuple(a[:, keep] for a in at)
    return final, duration
