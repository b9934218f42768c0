"""One rigid-body impact on the floor: Routh's method in normal-impulse space.

The contact-point velocity ``u = (u_t, u_n)`` changes with the contact
impulse ``p = (p_t, p_n)`` as ``du = K dp`` with the symmetric matrix::

    K_tt = 1/m + r_y^2/I,   K_nn = 1/m + r_x^2/I,   K_tn = -r_x r_y / I.

Integrating along the normal impulse ``p = p_n`` with Coulomb friction gives
at most two phases in the plane (slip, then stick or reversed slip), each
linear in ``p``, so compression, restitution and the tangential impulse all
have closed forms. Nothing is stepped.

References
----------
.. [1] W. J. Stronge, *Impact Mechanics*, Cambridge University Press, 2000,
   ch. 4-5.
.. [2] Y. Wang and M. T. Mason, "Two-dimensional rigid-body collisions with
   friction", J. Appl. Mech. 59:635-642, 1992.
.. [3] W. J. Stronge, "Rigid body collisions with friction", Proc. R. Soc.
   Lond. A 431:169-181, 1990; and "Unraveling paradoxical theories for rigid
   body collisions", J. Appl. Mech. 58:1049-1055, 1991 (energy gain of
   Newton's law with slip reversal).
"""
from __future__ import annotations

import numpy as np

#: Impact laws, by the code stored per drop. ``energetic`` is the default:
#: it never creates energy.
LAWS = ("energetic", "poisson", "newton")
LAW_CODE = {name: code for code, name in enumerate(LAWS)}

#: Slip histories, by the code stored per impact.
SLIP_HISTORY = ("slip", "stick", "reversed")
SLIP, STICK, REVERSED = range(3)


def law_codes(law, size):
    """Per-drop law codes from a name or a sequence of names.

    Vectorised: a million drops with one law cost a fill, not a Python loop
    (the loop was some 4 % of the benchmark's time).
    """
    if isinstance(law, str):
        if law not in LAW_CODE:
            raise ValueError(f"law must be one of {', '.join(LAWS)}, got {law!r}")
        return np.full(size, LAW_CODE[law], dtype=np.int8)
    names = np.asarray(law)
    if names.dtype.kind not in "US":
        names = names.astype(object)
    names = np.broadcast_to(names, (size,))
    codes = np.full(size, -1, dtype=np.int8)
    for name, code in LAW_CODE.items():
        codes[names == name] = code
    if np.any(codes < 0):
        unknown = sorted({str(name) for name in names[codes < 0].tolist()})
        raise ValueError(f"law must be one of {', '.join(LAWS)}, got {unknown[0]!r}")
    return codes


def impulse_matrix(mass, inertia, r_x, r_y):
    """Entries ``K_tt, K_nn, K_tn`` of the contact compliance matrix. [1/kg]"""
    return 1.0 / mass + r_y ** 2 / inertia, 1.0 / mass + r_x ** 2 / inertia, -r_x * r_y / inertia


def routh_impact(tangential_velocity, normal_velocity, k_tt, k_nn, k_tn,
                 restitution, friction, law):
    """Normal and tangential impulse of one impact, by Routh's method.

    Parameters
    ----------
    tangential_velocity, normal_velocity : array_like
        Contact-point velocity before impact; ``normal_velocity < 0``. [m/s]
    k_tt, k_nn, k_tn : array_like
        Contact compliance matrix (:func:`impulse_matrix`). [1/kg]
    restitution : array_like
        Coefficient of restitution in [0, 1], in the sense of ``law``. [-]
    friction : array_like
        Coulomb friction coefficient >= 0. [-]
    law : array_like of int
        Codes from :data:`LAW_CODE`: energetic (Stronge), Poisson (kinetic)
        or Newton (kinematic) restitution.

    Returns
    -------
    normal_impulse, tangential_impulse : numpy.ndarray
        Impulse on the body at the contact. [N s]
    slip_history : numpy.ndarray of int8
        :data:`SLIP` (one slip direction throughout, or frictionless),
        :data:`STICK` (slip stopped and the contact stuck) or
        :data:`REVERSED` (slip stopped and reversed).

    Notes
    -----
    Phase 1 slips with ``s = sign(u_t0)``: ``du_t/dp = K_tn - s mu K_tt``,
    ``du_n/dp = K_nn - s mu K_tn``. If ``u_t`` reaches zero at ``p_s``, the
    contact sticks when ``mu >= |K_tn|/K_tt`` (then
    ``du_n/dp = det K / K_tt``), otherwise slip reverses to
    ``s = sign(K_tn)``. In both phases ``du_n/dp > 0`` after ``p_s`` because
    ``K`` is positive definite, so compression always ends.
    """
    u_t0 = np.asarray(tangential_velocity, dtype=float)
    u_n0 = np.asarray(normal_velocity, dtype=float)
    mu = np.asarray(friction, dtype=float)
    e = np.asarray(restitution, dtype=float)
    with np.errstate(all="ignore"):
        s = np.sign(u_t0)
        a1 = k_tn - s * mu * k_tt
        b1 = k_nn - s * mu * k_tn
        slip_stops = (s != 0) & (s * a1 < 0)
        p_s = np.where(s == 0, 0.0, np.where(slip_stops, -u_t0 / a1, np.inf))
        sticks = mu * k_tt >= np.abs(k_tn)
        s2 = np.sign(k_tn)
        b2 = np.where(sticks, (k_tt * k_nn - k_tn ** 2) / k_tt, k_nn - s2 * mu * k_tn)
        dpt2 = np.where(sticks, -k_tn / k_tt, -s2 * mu)

        # u_n and the work W = int u_n dp at the end of phase 1
        u_s = u_n0 + b1 * p_s
        w_s = u_n0 * p_s + 0.5 * b1 * p_s ** 2

        # end of compression (u_n = 0)
        p_c1 = -u_n0 / b1
        in_phase1 = (b1 > 0) & (p_c1 <= p_s)
        p_c2 = p_s - u_s / b2
        p_c = np.where(in_phase1, p_c1, p_c2)
        w_c = np.where(in_phase1, 0.5 * u_n0 * p_c1, w_s - u_s ** 2 / (2 * b2))

        # Poisson: p_f = (1 + e) p_c
        p_poisson = (1 + e) * p_c
        # only the laws that occur are worked out (one, in most calls)
        law = np.asarray(law)
        present = [bool(np.any(law == LAW_CODE[name])) for name in LAWS]
        finals = {}

        if present[LAW_CODE["newton"]]:
            # Newton: u_n(p_f) = -e u_n0
            u_target = -e * u_n0
            p_newton1 = (u_target - u_n0) / b1
            finals["newton"] = np.where((b1 > 0) & (p_newton1 <= p_s), p_newton1, p_s + (u_target - u_s) / b2)

        if present[LAW_CODE["energetic"]]:
            # Energetic: W(p_f) = (1 - e^2) W(p_c). With compression ending
            # in phase 1 and restitution too, that is (1 + e) p_c; with
            # compression ending in phase 2, W = W_c + b2 (p - p_c)^2 / 2
            # there, so p_f = p_c + e sqrt(-2 W_c / b2); otherwise
            # restitution starts in phase 1 and ends in phase 2 (written
            # without cancellation).
            w_target = (1 - e ** 2) * w_c
            p_phase2 = p_c2 + e * np.sqrt(np.maximum(-2 * w_c / b2, 0.0))
            excess = np.maximum(w_target - w_s, 0.0)
            q = 2 * excess / (u_s + np.sqrt(np.maximum(u_s ** 2 + 2 * b2 * excess, 0.0)))
            finals["energetic"] = np.where(in_phase1, np.where(p_poisson <= p_s, p_poisson, p_s + q), p_phase2)
        finals["poisson"] = p_poisson

        if sum(present) == 1:
            p_f = finals[LAWS[present.index(True)]]
        else:
            p_f = np.select([law == LAW_CODE["energetic"], law == LAW_CODE["poisson"]],
                            [finals.get("energetic", p_poisson), p_poisson], finals.get("newton", p_poisson))
        p_t = -s * mu * np.minimum(p_f, p_s) + np.where(p_f > p_s, dpt2 * (p_f - p_s), 0.0)

    reached_phase2 = (p_f > p_s) & (mu > 0)
    slip_history = np.where(reached_phase2 & (p_s > 0), np.where(sticks, STICK, REVERSED),
                            np.where(reached_phase2 & sticks, STICK, SLIP)).astype(np.int8)
    return p_f, p_t, slip_history
