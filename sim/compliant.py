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
each with its own step, written for any acceleration law so that a model
following the body through its contacts can reuse it.
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
    (the largest of ``force(x, v)``), and, when asked, the sampled
    ``history`` ``(t, x, v, force)`` of shape ``(steps + 1, n)`` (NaN after
    separation).
    """

    duration: np.ndarray
    rebound: np.ndarray
    largest_indentation: np.ndarray
    peak_force: np.ndarray
    history: tuple | None = None


def integrate_contacts(speed, acceleration, force, step, max_steps, record=False):
    """Follow many contacts from first touch (``x = 0``, ``x' = speed``)
    until the indentation returns to 0, all at once.

    Classical fourth-order Runge-Kutta with a fixed step per contact; the
    separation time and speed come from the cubic Hermite interpolant of
    the last step (third order, matching the method's accuracy near the
    root). Contacts still pressed after ``max_steps`` get NaN.

    Parameters
    ----------
    speed : array_like
        Indentation rate at first touch, > 0. [m/s]
    acceleration : callable
        ``(x, v) -> x''`` for all contacts (arrays of shape ``(n,)``).
    force : callable
        ``(x, v) -> F``, whose largest value is reported.
    step : array_like
        Time step per contact. [s]
    max_steps : int
    record : bool
        Keep the sampled history (memory ``4 x 8 x steps x n`` bytes).
    """
    v = np.array(speed, dtype=float, ndmin=1)
    n = v.size
    h = np.broadcast_to(np.asarray(step, dtype=float), (n,)).copy()
    x = np.zeros(n)
    t = np.zeros(n)
    duration = np.full(n, np.nan)
    rebound = np.full(n, np.nan)
    largest = np.zeros(n)
    peak = np.zeros(n)
    live = np.ones(n, bool)
    samples = [] if record else None
    if record:
        samples.append((t.copy(), x.copy(), v.copy(), force(x, v)))
    for _ in range(int(max_steps)):
        if not live.any():
            break
        k1x, k1v = v, acceleration(x, v)
        k2x, k2v = v + 0.5 * h * k1v, acceleration(x + 0.5 * h * k1x, v + 0.5 * h * k1v)
        k3x, k3v = v + 0.5 * h * k2v, acceleration(x + 0.5 * h * k2x, v + 0.5 * h * k2v)
        k4x, k4v = v + h * k3v, acceleration(x + h * k3x, v + h * k3v)
        x_new = x + h / 6 * (k1x + 2 * k2x + 2 * k3x + k4x)
        v_new = v + h / 6 * (k1v + 2 * k2v + 2 * k3v + k4v)
        leaving = live & (x_new <= 0.0) & (t > 0)
        if leaving.any():
            # separation inside this step: root of the Hermite cubic through
            # (x, v) and (x_new, v_new), by a few Newton steps from the secant
            i = np.flatnonzero(leaving)
            x0, v0, x1, v1, hh = x[i], v[i], x_new[i], v_new[i], h[i]
            u = x0 / (x0 - x1)
            for _ in range(8):
                h00, h10, h01, h11 = 2 * u**3 - 3 * u**2 + 1, u**3 - 2 * u**2 + u, -2 * u**3 + 3 * u**2, u**3 - u**2
                value = h00 * x0 + h10 * hh * v0 + h01 * x1 + h11 * hh * v1
                slope = ((6 * u**2 - 6 * u) * x0 + (3 * u**2 - 4 * u + 1) * hh * v0
                         + (-6 * u**2 + 6 * u) * x1 + (3 * u**2 - 2 * u) * hh * v1) / hh
                u = np.clip(u - value / (slope * hh), 0.0, 1.0)
            slope = ((6 * u**2 - 6 * u) * x0 + (3 * u**2 - 4 * u + 1) * hh * v0
                     + (-6 * u**2 + 6 * u) * x1 + (3 * u**2 - 2 * u) * hh * v1) / hh
            duration[i] = t[i] + u * hh
            rebound[i] = slope
            live[i] = False
        moving = live
        x = np.where(moving, x_new, x)
        v = np.where(moving, v_new, v)
        t = np.where(moving, t + h, t)
        largest = np.where(moving, np.maximum(largest, x), largest)
        peak = np.where(moving, np.maximum(peak, force(x, v)), peak)
        if record:
            samples.append((np.where(moving | leaving, t, np.nan), np.where(moving, x, np.nan),
                            np.where(moving, v, np.nan), np.where(moving, force(x, v), np.nan)))
    largest = np.where(np.isnan(duration), np.nan, largest)
    peak = np.where(np.isnan(duration), np.nan, peak)
    history = tuple(np.array(column) for column in zip(*samples)) if record else None
    return ContactRun(duration, rebound, largest, peak, history)


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
    return integrate_contacts(np.ones_like(c), scaled_acceleration(c), scaled_force(c), scaled_step(c, steps),
                              max_steps=3 * steps, record=record)
