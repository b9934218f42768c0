"""One compliant contact: Hertz's normal force with damping, integrated
through the contact for many impacts at once.

The normal force on the body while it presses into the floor by the
indentation ``delta`` [m] is (docs/physics.md section 7)::

    F = K delta^(3/2) (1 + chi delta_dot),   K = (4/3) E* sqrt(R*)

(Hertz's law, K. L. Johnson, *Contact Mechanics*, CUP 1985, ch. 4, with
the damping of Hunt & Crossley, J. Appl. Mech. 42:440, 1975). Along the
normal the body moves as the effective mass ``m* = 1 / K_nn`` at the
contact (docs/physics.md section 4): ``m* delta'' = -F``.

Scaled by the undamped Hertz indentation ``delta_0 = (5 m* v^2 / (4 K))^(2/5)``
(v the normal impact speed) and the time ``delta_0 / v``, every contact is
the one problem::

    x'' = -(5/4) x^(3/2) (1 + c x'),   x(0) = 0,  x'(0) = 1,   c = chi v,

so restitution, scaled duration, scaled peak force and scaled largest
indentation are functions of ``c`` alone (tabulated once in
:mod:`sim.damping`). The force never pulls: ``1 + c x' = 0`` is an
invariant line of the equation, so ``1 + c x'`` stays positive from
``x'(0) = 1``, and a heavily damped contact leaves at a speed approaching
``1 / c``.

:func:`integrate_contacts` is the vectorised fixed-step integrator (the
classical fourth-order Runge-Kutta method) over many contacts at once,
each with its own step, for any state and force law: here the state is
the indentation and its rate; a model following a body through its
contacts passes the body's positions and velocities, its equations of
motion with :func:`damped_hertz_force`, and the indentation at the
contact point, and gets the state at separation back.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Undamped scaled contact duration: ``t_c v / delta_0 = 2 x 1.47164``
#: (Johnson 1985, the time of Hertz impact; 2.868 in the usual form is
#: 2.94328 x (15/16)^(2/5)). [-]
HERTZ_SCALED_DURATION = 2.94328


def hertz_stiffness(effective_modulus, effective_radius):
    """``K = (4/3) E* sqrt(R*)`` of ``F = K delta^(3/2)``. [N/m^1.5]"""
    return 4.0 / 3.0 * effective_modulus * np.sqrt(effective_radius)


def damped_hertz_force(indentation, rate, stiffness, damping):
    """``F = K delta^(3/2) (1 + chi delta_dot)``, never pulling (0 out of contact). [N]

    Parameters
    ----------
    indentation : array_like
        ``delta``, positive into the floor. [m]
    rate : array_like
        ``d delta / dt``. [m/s]
    stiffness : array_like
        ``K``. [N/m^1.5]
    damping : array_like
        ``chi``. [s/m]
    """
    pressed = np.maximum(indentation, 0.0)
    return np.maximum(stiffness * pressed * np.sqrt(pressed) * (1.0 + damping * rate), 0.0)


@dataclass(frozen=True)
class ContactRun:
    """What :func:`integrate_contacts` found, per contact.

    ``duration`` [s or scaled], ``rebound`` (the indentation rate at
    separation, negative: leaving), ``largest_indentation``, ``peak_force``
    (the largest of ``force(state)``, between the steps by a parabola
    through three samples), ``state`` (the state
    at separation, by the same interpolation as the time) and, when asked,
    the sampled ``history`` ``(t, indentation, rate, force)``, each of
    shape ``(steps + 1, n)`` (NaN after separation).
    """

    duration: np.ndarray
    rebound: np.ndarray
    largest_indentation: np.ndarray
    peak_force: np.ndarray
    state: np.ndarray
    history: tuple | None = None


def _hermite(u, h, x0, v0, x1, v1):
    """Cubic Hermite interpolant through ``(x0, v0)``, ``(x1, v1)`` over a step
    ``h``, and its slope, at the fraction ``u`` of the step."""
    value = (2 * u**3 - 3 * u**2 + 1) * x0 + (u**3 - 2 * u**2 + u) * h * v0 + (-2 * u**3 + 3 * u**2) * x1 \
        + (u**3 - u**2) * h * v1
    slope = ((6 * u**2 - 6 * u) * x0 + (3 * u**2 - 4 * u + 1) * h * v0 + (-6 * u**2 + 6 * u) * x1
             + (3 * u**2 - 2 * u) * h * v1) / h
    return value, slope


def integrate_contacts(state, derivative, indentation, force, step, max_steps, record=False):
    """Follow many contacts from first touch until the indentation returns
    to 0, all at once.

    The state of each contact is a column of ``state`` (shape ``(m, n)``:
    for one contact along its normal ``m = 2``, indentation and rate; a
    model following a body through a contact carries its positions and
    velocities). Classical fourth-order Runge-Kutta with a fixed step per
    contact; the separation time comes from the cubic Hermite interpolant
    of the indentation over the last step (third order, as accurate as the
    method near the root), and the state there from linear interpolation.
    Contacts still pressed after ``max_steps`` get NaN.

    Parameters
    ----------
    state : array_like, shape (m, n)
        At first touch (indentation 0, pressing in).
    derivative : callable
        ``state -> d state / dt`` (same shape), for all contacts at once.
    indentation : callable
        ``state -> (delta, d delta / dt)``, each ``(n,)``. [m], [m/s]
    force : callable
        ``state -> F`` ``(n,)``, whose largest value is reported. [N]
    step : array_like
        Time step per contact. [s]
    max_steps : int
    record : bool
        Keep the sampled history (memory ``4 x 8 x steps x n`` bytes).
    """
    y = np.array(state, dtype=float, ndmin=2)
    n = y.shape[1]
    h = np.broadcast_to(np.asarray(step, dtype=float), (n,)).copy()
    t = np.zeros(n)
    duration, rebound = np.full(n, np.nan), np.full(n, np.nan)
    largest, peak = np.zeros(n), np.zeros(n)
    final = np.full_like(y, np.nan)
    live = np.ones(n, bool)
    x, v = indentation(y)
    f_before = f_last = force(y)
    samples = [(t.copy(), x.copy(), v.copy(), f_last)] if record else None
    for _ in range(int(max_steps)):
        if not live.any():
            break
        k1 = derivative(y)
        k2 = derivative(y + 0.5 * h * k1)
        k3 = derivative(y + 0.5 * h * k2)
        k4 = derivative(y + h * k3)
        y_new = y + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4)
        x_new, v_new = indentation(y_new)
        leaving = live & (x_new <= 0.0) & (t > 0)
        if leaving.any():
            # the root of the Hermite cubic, by Newton's method from the secant
            i = np.flatnonzero(leaving)
            x0, v0, x1, v1, hh = x[i], v[i], x_new[i], v_new[i], h[i]
            u = x0 / (x0 - x1)
            for _ in range(8):
                value, slope = _hermite(u, hh, x0, v0, x1, v1)
                u = np.clip(u - value / (slope * hh), 0.0, 1.0)
            _, slope = _hermite(u, hh, x0, v0, x1, v1)
            duration[i] = t[i] + u * hh
            rebound[i] = slope
            final[:, i] = y[:, i] + u * (y_new[:, i] - y[:, i])
            live[i] = False
        y = np.where(live, y_new, y)
        x, v = np.where(live, x_new, x), np.where(live, v_new, v)
        t = np.where(live, t + h, t)
        f = force(y)
        largest = np.where(live, np.maximum(largest, x), largest)
        # the peak between samples: the vertex of the parabola through the
        # last three forces where the middle one is the highest (steps are
        # equal), so a sharp early peak is not cut off by the sampling
        bend = 2 * f_last - f_before - f
        with np.errstate(invalid="ignore", divide="ignore"):
            vertex = np.where((f_last >= f_before) & (f_last >= f) & (bend > 0),
                              f_last + (f_before - f) ** 2 / (8 * bend), f_last)
        peak = np.where(live, np.maximum(peak, np.maximum(f, vertex)), peak)
        f_before, f_last = f_last, f
        if record:
            samples.append((np.where(live | leaving, t, np.nan), np.where(live, x, np.nan),
                            np.where(live, v, np.nan), np.where(live, f, np.nan)))
    largest = np.where(np.isnan(duration), np.nan, largest)
    peak = np.where(np.isnan(duration), np.nan, peak)
    history = tuple(np.array(column) for column in zip(*samples)) if record else None
    return ContactRun(duration, rebound, largest, peak, final, history)


def scaled_acceleration(damping):
    """``(x, v) -> x''`` of the scaled damped Hertz contact with ``c = damping``."""
    c = np.asarray(damping, dtype=float)
    return lambda x, v: -1.25 * np.maximum(x, 0.0) ** 1.5 * (1.0 + c * v)


def scaled_force(damping):
    """``(x, v) -> F / (K delta_0^(3/2)) = x^(3/2) (1 + c x')``."""
    c = np.asarray(damping, dtype=float)
    return lambda x, v: np.maximum(np.maximum(x, 0.0) ** 1.5 * (1.0 + c * v), 0.0)


def scaled_step(damping, steps=2000):
    """A step giving about ``steps`` steps per contact: the scaled duration
    grows from 2.94 (undamped) like ``2.6 sqrt(c)`` for heavy damping. [-]"""
    c = np.asarray(damping, dtype=float)
    return (HERTZ_SCALED_DURATION + 2.7 * np.sqrt(c)) / steps


def scaled_contacts(damping, steps=2000, record=False):
    """The scaled contact (module notes) for every ``c = chi v`` in ``damping``.

    Returns a :class:`ContactRun` in scaled units: duration in ``delta_0 /
    v``, rebound in ``v`` (so the restitution is ``-rebound``), indentation
    in ``delta_0``, force in ``K delta_0^(3/2)``.
    """
    c = np.array(damping, dtype=float, ndmin=1)
    acceleration, force = scaled_acceleration(c), scaled_force(c)
    return integrate_contacts(np.stack([np.zeros_like(c), np.ones_like(c)]),
                              lambda y: np.stack([y[1], acceleration(y[0], y[1])]), lambda y: (y[0], y[1]),
                              lambda y: force(y[0], y[1]), scaled_step(c, steps), max_steps=3 * steps, record=record)
