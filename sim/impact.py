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

from dataclasses import dataclass
from typing import Callable, NamedTuple

import numpy as np

#: Slip histories, by the code stored per impact.
SLIP_HISTORY = ("slip", "stick", "reversed")
SLIP, STICK, REVERSED = range(3)


class Phases(NamedTuple):
    """What every restitution law starts from: the normal-impulse space of
    one impact (:func:`routh_impact`), each an array. ``u_n(p)`` is
    ``u_n0 + b1 p`` up to ``p_s`` and ``u_s + b2 (p - p_s)`` after, and the
    work ``W(p) = integral of u_n dp``."""

    normal_velocity: np.ndarray  # u_n0, before impact (< 0) [m/s]
    restitution: np.ndarray  # e, in the sense of the law [-]
    slope_1: np.ndarray  # b1 = du_n/dp while slipping as at first [1/kg]
    slope_2: np.ndarray  # b2 = du_n/dp after the slip stopped [1/kg]
    slip_end: np.ndarray  # p_s, where the first slip stops (inf if never) [N s]
    velocity_at_slip_end: np.ndarray  # u_s = u_n(p_s) [m/s]
    work_at_slip_end: np.ndarray  # W(p_s) [J]
    compression_in_phase_1: np.ndarray  # whether u_n reaches 0 before p_s
    compression_end_2: np.ndarray  # p where u_n = 0 on the second phase's line [N s]
    compression_end: np.ndarray  # p_c, where u_n = 0 [N s]
    compression_work: np.ndarray  # W(p_c) [J]


def _energetic_impulse(ph):
    """Stronge's energetic law: ``W(p_f) = (1 - e^2) W(p_c)``. With
    compression ending in phase 1 and restitution too, that is
    ``(1 + e) p_c``; with compression ending in phase 2, ``W = W_c + b2 (p -
    p_c)^2 / 2`` there, so ``p_f = p_c + e sqrt(-2 W_c / b2)``; otherwise
    restitution starts in phase 1 and ends in phase 2 (written without
    cancellation)."""
    e, p_s, u_s, b2, w_c = ph.restitution, ph.slip_end, ph.velocity_at_slip_end, ph.slope_2, ph.compression_work
    p_poisson = (1 + e) * ph.compression_end
    w_target = (1 - e ** 2) * w_c
    p_phase2 = ph.compression_end_2 + e * np.sqrt(np.maximum(-2 * w_c / b2, 0.0))
    excess = np.maximum(w_target - ph.work_at_slip_end, 0.0)
    q = 2 * excess / (u_s + np.sqrt(np.maximum(u_s ** 2 + 2 * b2 * excess, 0.0)))
    return np.where(ph.compression_in_phase_1, np.where(p_poisson <= p_s, p_poisson, p_s + q), p_phase2)


def _poisson_impulse(ph):
    """Poisson's law: ``p_f = (1 + e) p_c``."""
    return (1 + ph.restitution) * ph.compression_end


def _newton_impulse(ph):
    """Newton's law: ``u_n(p_f) = -e u_n0``."""
    u_n0, b1, p_s = ph.normal_velocity, ph.slope_1, ph.slip_end
    u_target = -ph.restitution * u_n0
    p_newton1 = (u_target - u_n0) / b1
    return np.where((b1 > 0) & (p_newton1 <= p_s), p_newton1,
                    p_s + (u_target - ph.velocity_at_slip_end) / ph.slope_2)


@dataclass(frozen=True)
class Law:
    """One restitution law: how an impact's normal impulse ends."""

    name: str  # as users write it (study files, CLI, batch tables)
    code: int  # as stored per drop (int8)
    description: str  # one line, with its reference
    creates_energy: bool  # whether it can create kinetic energy (then flagged)
    terminal_impulse: Callable[[Phases], np.ndarray]  # p_f [N s] from the impact's phases


#: The restitution laws, in the order of their codes; the first is the
#: default. Adding a law: one entry here and its terminal-impulse function.
LAW_TABLE = (
    Law("energetic", 0, "work of restitution = e^2 x work of compression (Stronge, Proc. R. Soc. Lond. A "
        "431:169, 1990); never creates energy", False, _energetic_impulse),
    Law("poisson", 1, "impulse of restitution = e x impulse of compression (Poisson; Stronge, Impact "
        "Mechanics, 2000, ch. 4)", False, _poisson_impulse),
    Law("newton", 2, "separating normal speed = e x approach speed (Newton); creates energy when slip "
        "reverses (Stronge, J. Appl. Mech. 58:1049, 1991)", True, _newton_impulse),
)
if [law.code for law in LAW_TABLE] != list(range(len(LAW_TABLE))):
    raise ValueError("sim.impact.LAW_TABLE: the codes must be 0, 1, 2, ... in table order")

#: Law names, by the code stored per drop (``energetic``, the default,
#: never creates energy).
LAWS = tuple(law.name for law in LAW_TABLE)
LAW_CODE = {law.name: law.code for law in LAW_TABLE}
#: The laws that can create kinetic energy (their impacts are flagged).
ENERGY_CREATING = tuple(law.name for law in LAW_TABLE if law.creates_energy)


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


def speed_restitution(restitution, normal_speed, exponent, reference_speed):
    """Restitution as a power law of the normal impact speed,
    ``e = e_ref (v_n / v_ref)^(-p)``, kept within [0, 1]. [-]

    Measured tablet restitution falls roughly with the fourth root of the
    impact speed (p ~ 1/4; Bharadwaj, Smith & Hancock, Int. J. Pharm.
    402:50-56, 2010; docs/physics.md section 9). ``exponent`` 0 gives
    ``e_ref`` at every speed, bit for bit.

    Parameters
    ----------
    restitution : array_like
        ``e_ref``, the restitution at ``reference_speed``. [-]
    normal_speed : array_like
        Normal approach speed of the contact point, ``|u_n|``. [m/s]
    exponent : array_like
        ``p`` (:data:`sim.limits.SPEED_EXPONENT`). [-]
    reference_speed : array_like
        ``v_ref`` > 0. [m/s]
    """
    e = np.asarray(restitution, dtype=float)
    p = np.asarray(exponent, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        scaled = e * (np.abs(normal_speed) / reference_speed) ** (-p)
    return np.where(p == 0, e, np.minimum(np.nan_to_num(scaled, nan=1.0, posinf=1.0), 1.0))


def table_restitution(normal_speed, table):
    """Restitution read from a measured table of ``(normal impact speed
    [m/s], restitution [-])`` pairs: linear between the points, the end
    values beyond them (no extrapolation of a measurement). [-]"""
    speeds, values = np.asarray(table, dtype=float).T
    return np.interp(np.abs(normal_speed), speeds, values)


def check_restitution_table(table):
    """``table`` as an ``(n, 2)`` float array; ValueError unless it holds at
    least two ``(speed > 0, restitution in [0, 1])`` pairs with rising speeds."""
    from .limits import REFERENCE_SPEED, RESTITUTION
    pairs = np.asarray(table, dtype=float)
    if pairs.ndim != 2 or pairs.shape[1] != 2 or len(pairs) < 2:
        raise ValueError("restitution_table must hold at least two (normal speed [m/s], restitution) pairs")
    REFERENCE_SPEED.check("restitution_table speed", pairs[:, 0])
    RESTITUTION.check("restitution_table restitution", pairs[:, 1])
    if np.any(np.diff(pairs[:, 0]) <= 0):
        raise ValueError("restitution_table speeds must rise from pair to pair")
    return pairs


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
        Codes from :data:`LAW_CODE` (the laws of :data:`LAW_TABLE`).

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

        phases = Phases(normal_velocity=u_n0, restitution=e, slope_1=b1, slope_2=b2, slip_end=p_s,
                        velocity_at_slip_end=u_s, work_at_slip_end=w_s, compression_in_phase_1=in_phase1,
                        compression_end_2=p_c2, compression_end=p_c, compression_work=w_c)
        # only the laws that occur are worked out (one, in most calls)
        codes = np.asarray(law)
        present = [each for each in LAW_TABLE if bool(np.any(codes == each.code))]
        if len(present) == 1:
            p_f = present[0].terminal_impulse(phases)
        else:
            # each drop its own law (a code outside the table gives NaN)
            p_f = np.full(np.shape(p_c), np.nan)
            for each in present:
                p_f = np.where(codes == each.code, each.terminal_impulse(phases), p_f)
        p_t = -s * mu * np.minimum(p_f, p_s) + np.where(p_f > p_s, dpt2 * (p_f - p_s), 0.0)

    reached_phase2 = (p_f > p_s) & (mu > 0)
    slip_history = np.where(reached_phase2 & (p_s > 0), np.where(sticks, STICK, REVERSED),
                            np.where(reached_phase2 & sticks, STICK, SLIP)).astype(np.int8)
    return p_f, p_t, slip_history
