"""Many drops at once: release, flights, impacts, until settled or K impacts.

A drop is a rigid body released above the floor ``y = 0``, level or
inclined (``Release.floor_angle``). Everything is computed in floor
coordinates: x along the floor, y along its normal, so heights, peaks and
rebound ratios are measured normal to the floor. On a floor inclined by
``alpha`` (positive: the floor falls towards +x) gravity has the normal
component ``g cos(alpha)`` and the along-floor component ``g sin(alpha)``,
pointing to +x; flights stay parabolas and the impact is unchanged in
form. Each drop runs
through up to ``impacts`` impacts; between them the flight is exact
(:mod:`sim.flight`; its end found by :mod:`sim.search`, its peaks by
:mod:`sim.peaks`) and each impact is Routh's method (:mod:`sim.impact`).
All drops advance together as arrays, in chunks to bound memory; nothing
loops over drops in Python, and the result of a drop does not depend on
which other drops share its chunk.

When a drop ends early
----------------------
``settled``
    Its mechanical energy above the lowest resting energy ``m g d_min`` has
    fallen below ``settle_fraction`` (default 1e-4) of what it was at
    release: the remaining hops are under a ten-thousandth of the drop.
``contact``
    An impact left the contact point with no separating speed
    (restitution 0): sustained contact began. The body now pivots or
    slides on the floor, which an impulse model does not describe; it is
    not at rest, and its last peaks are its state at that impact.
``could_vault``
    Sustained contact began as for ``contact``, but the body may still
    leave the floor: its centre moves away from the floor (normal velocity
    above :data:`CONTACT_SPEED`, the noise floor that rounding leaves) and
    its kinetic energy is more than :data:`VAULT_SHARE` (a tenth) of its
    energy above rest at release. Such a body pivots upward about the
    struck point with energy enough to lift its centre by a tenth of the
    drop, and may vault over that point into a new flight that this model
    does not follow: its answer is incomplete, not "at rest". (The
    potential energy of a tilted pose does not count: it can only bring
    the body down.)
``failed``
    The contact search did not converge in its step budget (not seen in
    the benchmark population; counted by the tests).

On an inclined floor "energy above rest" is the kinetic energy plus the
normal part of the potential, ``m g cos(alpha) (y - d_min)``: the floor has
no lowest place downhill, so the along-floor potential has no rest level
and is left out of these tests (a body sliding downhill fast never
counts as settled).
"""
from __future__ import annotations

from dataclasses import dataclass, field, fields

import numpy as np

from ._memory import keep_freed_memory
from .flight import GRAVITY, floor_gravity
from .geometry import contact_offset_at, corner_offset, curvature_bound, depth, depth_range
from .impact import (ENERGY_CREATING, LAWS, check_restitution_table, impulse_matrix, law_codes, routh_impact,
                     speed_restitution, table_restitution)
from .limits import FINITE, FLOOR_ANGLE, FRICTION, REFERENCE_SPEED, RESTITUTION, SPEED_EXPONENT
from .materials import MODULUS
from .pair_contact import (COMPLIANT_STEPS, DEFAULT_CONTACT_MODULUS, LOWEST_RESTITUTION, STEPS_PER_DURATION,
                           duration_scale, overlapping_pairs, resolve_pairs)
from .peaks import flight_peaks
from .search import next_contact
from .shapes import Shape

#: Why each drop stopped, by the code stored in ``DropResult.status`` (see
#: the module notes; codes are kept when names are added).
STATUS = ("impacts", "settled", "contact", "failed", "could_vault")
RAN_ALL, SETTLED, CONTACT, FAILED, COULD_VAULT = range(5)

#: Separating speed of the contact point below which contact is sustained. [m/s]
CONTACT_SPEED = 1e-9
#: A body entering sustained contact with its centre moving away from the
#: floor could still vault when its kinetic energy exceeds this share of its
#: energy above rest at release (status ``could_vault``): enough to lift
#: the centre by a tenth of the drop, a hop a user would see. [-]
VAULT_SHARE = 0.1

REFERENCES = ("centre", "bottom", "top")
#: The contact models of :func:`simulate`; the first is the default.
#: ``two-ends`` is the impulse engine with near-flat landings resolved as
#: both ends at once (:mod:`sim.pair_contact`): continuous through flat.
#: ``impulse`` keeps one point at a time everywhere (results of versions
#: before two-ends was the default; faster where many drops land near
#: flat, docs/physics.md section 7.1).
MODELS = ("two-ends", "impulse", "compliant")
#: What each model does, in a user's words (the commands' help, the study
#: schema and the report's study table all say it so).
MODEL_WORDS = {
    "two-ends": "one point per impact by Routh's method, except landings near flat, where both ends touch within "
                "one contact duration, resolved together by the compliant two-contact impact (continuous through "
                "flat)",
    "impulse": "one point per impact by Routh's method, near flat too (as before two-ends became the default)",
    "compliant": "every impact integrated through the contact: Hertz force, calibrated damping, regularised "
                 "friction",
}
#: Where the models that need it take ``E*`` from.
MODULUS_WORDS = "two-ends and compliant take E* from the materials, default hard gelatin on steel"


def models_in_words():
    """Every model in its :data:`MODEL_WORDS`, the default marked, and
    :data:`MODULUS_WORDS` (the commands' help and the study schema)."""
    models = "; ".join(f"{name}{' (the default)' if name == MODELS[0] else ''}: {words}"
                       for name, words in MODEL_WORDS.items())
    return f"{models}; {MODULUS_WORDS}"


@dataclass(frozen=True)
class Release:
    """How a body leaves the hand or the release jig.

    Parameters
    ----------
    height : float or array
        Release height of the reference point above the floor. [m]
    angle : float or array
        Angle from +x to the symmetry axis, counter-clockwise. [rad]
    spin : float or array
        Angular velocity, counter-clockwise positive. [rad/s]
    vx, vy : float or array
        Velocity of the centre at release, along the floor and along its
        normal. [m/s]
    reference : {"centre", "bottom"}
        Whether ``height`` is that of the centre of mass or of the lowest
        point of the body.
    floor_angle : float or array
        Inclination of the floor, :data:`sim.limits.FLOOR_ANGLE`; positive:
        the floor falls towards +x, so gravity's along-floor component
        ``g sin(floor_angle)`` points to +x. ``height`` is then measured
        normal to the floor and ``angle`` from the floor line. [rad]
    """

    height: float | np.ndarray
    angle: float | np.ndarray = 0.0
    spin: float | np.ndarray = 0.0
    vx: float | np.ndarray = 0.0
    vy: float | np.ndarray = 0.0
    reference: str = "centre"
    floor_angle: float | np.ndarray = 0.0

    def __post_init__(self):
        if self.reference not in ("centre", "bottom"):
            raise ValueError(f"release reference must be 'centre' or 'bottom', got {self.reference!r}")
        for name in ("height", "angle", "spin", "vx", "vy"):
            FINITE.check(f"release {name}", getattr(self, name))
        FLOOR_ANGLE.check("release floor_angle", self.floor_angle)

    def centre_height(self, shape: Shape):
        """Height of the centre of mass at release. [m]"""
        height = np.asarray(self.height, dtype=float)
        if self.reference == "bottom":
            return height + shape.depth(self.angle)
        return height


@dataclass(frozen=True)
class Contact:
    """Floor contact: restitution, Coulomb friction and the impact law.

    Parameters
    ----------
    restitution : float or array
        Coefficient of restitution in [0, 1], in the sense of ``law``. [-]
    friction : float or array
        Coulomb friction coefficient, >= 0. [-]
    law : str or sequence of str
        A name of :data:`sim.impact.LAW_TABLE` (``"energetic"``, the
        default, never creates energy).
    speed_exponent : float or array
        ``p`` of restitution as a power law of the normal impact speed,
        ``e = restitution (v_n / reference_speed)^(-p)`` kept within [0, 1]
        (:func:`sim.impact.speed_restitution`); 0, the default, keeps
        ``restitution`` at every speed. [-]
    reference_speed : float or array
        Normal impact speed at which the restitution is ``restitution``. [m/s]
    restitution_table : sequence of (float, float), optional
        Measured ``(normal impact speed [m/s], restitution)`` pairs, speeds
        rising; when given, every impact's restitution is read from it
        (:func:`sim.impact.table_restitution`) instead of ``restitution``
        and its speed law.
    contact_modulus : float or array, optional
        Hertz's effective modulus ``E*`` of body and floor
        (:func:`sim.materials.effective_modulus`), per drop or one for all;
        it sets which landings count as both ends at once and how those
        are resolved (:mod:`sim.pair_contact`; None: hard gelatin on steel,
        :data:`sim.pair_contact.DEFAULT_CONTACT_MODULUS`). [Pa]
    """

    restitution: float | np.ndarray = 0.8
    friction: float | np.ndarray = 0.3
    law: str | tuple = LAWS[0]
    speed_exponent: float | np.ndarray = 0.0
    reference_speed: float | np.ndarray = 1.0
    restitution_table: tuple | None = None
    contact_modulus: float | np.ndarray | None = None

    def __post_init__(self):
        RESTITUTION.check("restitution", self.restitution)
        SPEED_EXPONENT.check("speed_exponent", self.speed_exponent)
        REFERENCE_SPEED.check("reference_speed", self.reference_speed)
        if self.restitution_table is not None:
            check_restitution_table(self.restitution_table)
        FRICTION.check("friction", self.friction)
        if self.contact_modulus is not None:
            MODULUS.check("contact_modulus", self.contact_modulus)
        law_codes(self.law, np.size(self.law) if not isinstance(self.law, str) else 1)


#: Per-impact fields of a result, each an array (drops, impacts); NaN after
#: a drop's last impact. Units beside each.
IMPACT_FIELDS = {
    "time": "s since release",
    "x": "m, centre at impact",
    "y": "m, centre at impact",
    "theta": "rad, at impact",
    "vx": "m/s, just after", "vy": "m/s, just after", "spin": "rad/s, just after",
    "impulse_normal": "N s", "impulse_tangential": "N s",
    "flight": "s, flight after this impact",
    "peak_centre": "m, highest centre in the flight after",
    "peak_bottom": "m, highest lowest point in the flight after",
    "peak_top": "m, highest top point in the flight after",
}
#: Derived on demand (``DropResult`` properties): velocities just before
#: each impact, from the previous state and the exact flight in between.
BEFORE_FIELDS = {"vx_before": "m/s", "vy_before": "m/s", "spin_before": "rad/s"}
IMPACT_CODES = {
    "end": "+1 the end the axis points to, -1 the other, 0 middle (flat or round)",
    "slip": "0 slip, 1 stick, 2 reversed (sim.impact.SLIP_HISTORY)",
    "energy_gain": f"True where the impact created kinetic energy (possible under: {', '.join(ENERGY_CREATING)})",
}


@dataclass
class DropResult:
    """Everything a batch of drops produced.

    Per-drop arrays have shape ``(n,)``; per-impact arrays ``(n, impacts)``.
    Energies are derived on demand from the stored velocities.
    """

    mass: np.ndarray
    inertia: np.ndarray
    profile: tuple
    release: dict
    status: np.ndarray
    count: np.ndarray
    impacts: dict = field(repr=False)

    @property
    def size(self):
        return self.status.size

    def __getattr__(self, name):
        impacts = self.__dict__.get("impacts", {})
        if name in impacts:
            return impacts[name]
        raise AttributeError(name)

    # gravity in floor coordinates (sim.flight.floor_gravity) ------------
    @property
    def gravity_normal(self):
        """Gravity's component into the floor, ``g cos(floor_angle)``, per drop. [m/s^2]"""
        return floor_gravity(self.release["floor_angle"])[0]

    @property
    def gravity_along(self):
        """Gravity's component along the floor towards +x, ``g sin(floor_angle)``, per drop. [m/s^2]"""
        return floor_gravity(self.release["floor_angle"])[1]

    # velocities just before each impact: the flight keeps the spin, vy
    # falls by g_n * flight and vx grows by g_t * flight (the very
    # expressions the kernel used, so the values are bit for bit those it
    # saw)
    def _before(self, name, release_name):
        after = self.impacts[name]
        first = np.broadcast_to(self.release[release_name], (after.shape[0],))[:, None]
        return np.concatenate([first, after[:, :-1]], axis=1)

    def _flights_before(self):
        """Length of the flight that ends at each impact. [s]"""
        return np.concatenate([self.impacts["time"][:, :1], self.impacts["flight"][:, :-1]], axis=1)

    @property
    def vx_before(self):
        """Velocity of the centre along the floor just before each impact. [m/s]"""
        previous = self._before("vx", "vx")
        along = self.gravity_along
        if not np.any(along):
            return previous
        return previous + along[:, None] * self._flights_before()

    @property
    def spin_before(self):
        """Spin just before each impact. [rad/s]"""
        return self._before("spin", "spin")

    @property
    def vy_before(self):
        """Velocity of the centre normal to the floor just before each impact. [m/s]"""
        previous = self._before("vy", "vy")
        return previous - self.gravity_normal[:, None] * self._flights_before()

    # energies ---------------------------------------------------------
    def _energy(self, vx, vy, spin, y, x):
        m, inertia = self.mass[:, None], self.inertia[:, None]
        potential = m * self.gravity_normal[:, None] * y
        along = self.gravity_along
        if np.any(along):
            # downhill (+x for a positive floor angle) the potential falls
            potential = potential - m * along[:, None] * x
        return (0.5 * m * (vx ** 2 + vy ** 2), 0.5 * inertia * spin ** 2, potential)

    def energy_before(self):
        """Translational, rotational, potential energy just before each
        impact; the potential ``m g_n y - m g_t x`` in floor coordinates
        (zero at the release point's foot on the floor). [J]"""
        i = self.impacts
        return self._energy(self.vx_before, self.vy_before, self.spin_before, i["y"], i["x"])

    def energy_after(self):
        """Translational, rotational, potential energy just after each impact
        (potential as in :meth:`energy_before`). [J]"""
        i = self.impacts
        return self._energy(i["vx"], i["vy"], i["spin"], i["y"], i["x"])

    @property
    def release_energy(self):
        """Total mechanical energy at release, the floor under the release
        point as zero of potential. [J]"""
        r = self.release
        return (0.5 * self.mass * (r["vx"] ** 2 + r["vy"] ** 2) + 0.5 * self.inertia * r["spin"] ** 2
                + self.mass * self.gravity_normal * r["y"])

    @property
    def energy_bound(self):
        """Highest the centre could ever rise: total energy / (m g). [m]

        NaN on an inclined floor: there the body can gain energy by moving
        downhill (the along-floor potential has no floor), so no height
        normal to the floor bounds it."""
        bound = self.release_energy / (self.mass * self.gravity_normal)
        along = self.gravity_along
        return np.where(along == 0, bound, np.nan) if np.any(along) else bound

    def release_height(self, reference="centre"):
        """Release height of the centre, lowest point or top point. [m]"""
        d = depth(self.release["theta"], *self.profile)
        return self.release["y"] + {"centre": 0.0, "bottom": -1.0, "top": 1.0}[reference] * d

    def peak(self, reference="centre"):
        """Highest height of the reference point in the flight after each impact. [m]"""
        return self.impacts[f"peak_{reference}"]


def _broadcast(shape, release, contact):
    centre_y = release.centre_height(shape)
    # gravity's components before broadcasting: a level floor given once
    # costs no cosine per drop
    gravity, gravity_along = floor_gravity(release.floor_angle)
    arrays = np.broadcast_arrays(
        shape.mass, shape.inertia, *shape.profile, centre_y, release.angle, release.spin,
        release.vx, release.vy, contact.restitution, contact.friction, release.floor_angle, gravity,
        gravity_along, np.sqrt(GRAVITY / gravity), contact.speed_exponent, contact.reference_speed,
        DEFAULT_CONTACT_MODULUS if contact.contact_modulus is None else contact.contact_modulus)
    n = arrays[0].size
    # views, not copies: a scalar broadcast to a million drops costs nothing
    arrays = [np.asarray(a, dtype=float).reshape(n) for a in arrays]
    laws = law_codes(contact.law, n)
    return arrays, laws


#: Drops simulated together by default. Larger chunks spread the kernels'
#: fixed cost per NumPy call (which dominates the contact search's and the
#: polishes' last steps, when few bodies are left) over more drops: 65,536
#: runs the benchmark population about 6% faster than 32,768. The working
#: memory, measured with ``tracemalloc`` on the benchmark population, peaks
#: at about 600 bytes per drop in flight (some 40 MB per chunk), so that
#: 10^6 drops with their 3-impact result stay under 500 MB.
CHUNK_SIZE = 65536


def simulate(shape: Shape, release: Release, contact: Contact, impacts: int = 3,
             settle_fraction: float = 1e-4, chunk_size: int = CHUNK_SIZE, peaks=REFERENCES,
             model: str = MODELS[0]) -> DropResult:
    """Drop every body and follow it through up to ``impacts`` impacts.

    Parameters
    ----------
    shape, release, contact
        Scalars or arrays; they broadcast against each other, one drop per
        element.
    impacts : int
        Impacts to follow per drop (K >= 1).
    settle_fraction : float
        A drop ends as ``settled`` when its energy above rest falls below
        this fraction of its energy above rest at release. [-]
    chunk_size : int
        Drops simulated together; bounds the working memory (at most about
        600 bytes per drop in flight, :data:`CHUNK_SIZE`), not the result.
    peaks : sequence of {"centre", "bottom", "top"}
        The lowest and top points whose flight-peak searches are run; for a
        point not named its ``peak_*`` is NaN after every flight. The
        centre's peak is exact and free, so it is always given, and a drop
        that ends in sustained contact gets the heights where it lies. The
        searches are most of the flight peaks' cost, so a study that reads
        one point asks for that one only.
    model : {"two-ends", "impulse", "compliant"}
        ``two-ends`` (the default): every impact by Routh's method
        (:mod:`sim.impact`), one point at a time, except that where the
        other end would touch within the first end's contact duration
        (landings near flat) both ends are resolved together by the
        compliant two-contact impact (:mod:`sim.pair_contact`), so results
        are continuous through flat. ``impulse``: Routh's method at every
        impact, near flat too. ``compliant``: every impact integrated
        through the contact with Hertz's force, the calibrated damping and
        regularised Coulomb friction at the body's ends (the same
        :func:`sim.pair_contact.resolve_pairs`; flights stay exact); the
        restitution is each end's contact's, whatever the ``law``.

    Raises
    ------
    ValueError
        For a body that would start touching or inside the floor, and for
        values out of range.
    """
    if int(impacts) < 1:
        raise ValueError(f"impacts must be >= 1, got {impacts}")
    if model not in MODELS:
        raise ValueError(f"model must be one of {', '.join(MODELS)}, got {model!r}")
    if chunk_size < 1:
        raise ValueError(f"chunk_size must be >= 1, got {chunk_size}")
    unknown = set(peaks) - set(REFERENCES)
    if unknown:
        raise ValueError(f"peaks must name points among {', '.join(REFERENCES)}, got {sorted(unknown)[0]!r}")
    points = tuple(point for point in ("bottom", "top") if point in peaks)
    keep_freed_memory()
    arrays, laws = _broadcast(shape, release, contact)
    (mass, inertia, hl, hw, rl, rw, y0, th0, om0, vx0, vy0, e, mu, floor_angle, g_n, g_t, stretch,
     exponent, reference_speed, modulus) = arrays
    # an angle of many turns is that angle within one turn (fmod is exact);
    # angles within a turn are left untouched, bit for bit
    many_turns = np.abs(th0) > 2 * np.pi
    if many_turns.any():
        th0 = np.where(many_turns, np.fmod(th0, 2 * np.pi), th0)
    gap0 = y0 - depth(th0, hl, hw, rl, rw)
    if np.any(gap0 <= 0):
        i = int(np.argmax(gap0 <= 0))
        where = f" for drop {i}" if gap0.size > 1 else ""
        raise ValueError(f"release height puts the body touching or inside the floor{where}: its lowest point "
                         f"would be at {gap0[i]:.6g} m; raise the centre by more than {-gap0[i]:.6g} m or give the "
                         "height of the lowest point")
    n = mass.size
    k = int(impacts)
    out = {name: np.full((n, k), np.nan) for name in IMPACT_FIELDS}
    out["end"] = np.zeros((n, k), np.int8)
    out["slip"] = np.zeros((n, k), np.int8)
    out["energy_gain"] = np.zeros((n, k), bool)
    status = np.full(n, RAN_ALL, np.int8)
    count = np.zeros(n, np.int16)
    for start in range(0, n, chunk_size):
        sl = slice(start, min(n, start + chunk_size))
        _run_chunk(sl, k, settle_fraction, mass[sl], inertia[sl], (hl[sl], hw[sl], rl[sl], rw[sl]),
                   y0[sl], th0[sl], om0[sl], vx0[sl], vy0[sl], e[sl], mu[sl], laws[sl],
                   (g_n[sl], g_t[sl], stretch[sl]), {name: a[sl] for name, a in out.items()}, status[sl],
                   count[sl], points, (exponent[sl], reference_speed[sl]), contact.restitution_table,
                   modulus[sl], model)
    release_state = {"y": y0, "theta": th0, "spin": om0, "vx": vx0, "vy": vy0,
                     "restitution": e, "friction": mu, "law": laws, "floor_angle": floor_angle,
                     "speed_exponent": exponent, "reference_speed": reference_speed,
                     "restitution_table": contact.restitution_table}
    return DropResult(mass, inertia, (hl, hw, rl, rw), release_state, status, count, out)


@dataclass
class _Flying:
    """The drops of a chunk still in the air, one array per field (each
    drop at the same place in every array), and what they carry."""

    index: np.ndarray  # place in the chunk
    time: np.ndarray  # since release [s]
    x: np.ndarray  # centre [m]
    y: np.ndarray  # centre [m]
    vx: np.ndarray  # [m/s]
    vy: np.ndarray  # [m/s]
    theta: np.ndarray  # [rad]
    spin: np.ndarray  # [rad/s]
    mass: np.ndarray  # [kg]
    inertia: np.ndarray  # [kg m^2]
    half_long: np.ndarray  # profile [m]
    half_wide: np.ndarray
    round_long: np.ndarray
    round_wide: np.ndarray
    restitution: np.ndarray  # [-]
    friction: np.ndarray  # [-]
    law: np.ndarray  # sim.impact.LAW_CODE
    speed_exponent: np.ndarray  # p of sim.impact.speed_restitution [-]
    reference_speed: np.ndarray  # [m/s]
    modulus: np.ndarray  # E* of the contact model [Pa]
    curvature_bound: np.ndarray  # sim.geometry.curvature_bound [m]
    d_low: np.ndarray  # sim.geometry.depth_range [m]
    d_high: np.ndarray
    gravity: np.ndarray  # into the floor, g cos(floor angle) [m/s^2]
    gravity_along: np.ndarray  # along the floor to +x, g sin(floor angle) [m/s^2]
    stretch: np.ndarray  # sqrt(g / gravity): time in flight per time of a level floor's flight [-]
    rest_energy: np.ndarray  # lowest resting energy m g_n d_low [J]
    excess_at_release: np.ndarray  # energy above rest at release [J]
    impacting: np.ndarray  # strikes again after the next flight (False: settled, flight only)
    impact: np.ndarray  # its next impact's number (0-based): drops parked for a pair rejoin with their own

    @property
    def profile(self):
        return self.half_long, self.half_wide, self.round_long, self.round_wide

    def level(self, tilted):
        """Normal velocity and spin of the same flight on a level floor
        under ``g``, in that flight's time (see :func:`_run_chunk`; as they
        are where no drop is tilted). [m/s], [rad/s]"""
        if not tilted:
            return self.vy, self.spin
        return self.vy * self.stretch, self.spin * self.stretch

    def take(self, where):
        """The drops at the places ``where`` (indices into these arrays)."""
        return _Flying(*(getattr(self, f.name).take(where) for f in fields(self)))

    @staticmethod
    def joined(parts):
        """The drops of several sets as one."""
        return _Flying(*(np.concatenate([getattr(part, f.name) for part in parts]) for f in fields(_Flying)))


def _strike(live, along, across, restitution_table=None, model=MODELS[0], defer=False, pair_scale=None):
    """Every live drop's impact at its contact (``along``, ``across``: the
    touching corners, :func:`sim.search.next_contact`).

    Returns the impact's record (:data:`IMPACT_FIELDS` taken at the
    impact, and the flags), the normal speed at which the struck point
    separates, the kinetic energy after, and the drops (indices into
    ``live``) whose near-flat pair is left to the caller (``defer``; their
    record is the single impulse's, to be thrown away), else none.
    ``pair_scale``: :func:`sim.pair_contact.duration_scale` of the chunk.

    A function of its own so that its temporaries are freed before the
    next flight's search and peaks: they would otherwise hold some 200
    bytes per drop through them.
    """
    # contact offset: mean over touching corners (flat landing: the middle)
    r_x, r_y = contact_offset_at(live.theta, live.profile, along, across)
    m_i, in_i = live.mass, live.inertia
    v_x, v_y, w = live.vx, live.vy, live.spin
    k_tt, k_nn, k_tn = impulse_matrix(m_i, in_i, r_x, r_y)
    u_t = v_x - w * r_y
    u_n = v_y + w * r_x
    restitution = live.restitution
    if restitution_table is not None:
        restitution = table_restitution(u_n, restitution_table)
    elif np.any(live.speed_exponent):
        restitution = speed_restitution(restitution, u_n, live.speed_exponent, live.reference_speed)
    p_n, p_t, slip = routh_impact(u_t, u_n, k_tt, k_nn, k_tn, restitution, live.friction, live.law)
    v_x2 = v_x + p_t / m_i
    v_y2 = v_y + p_n / m_i
    w2 = w + (r_x * p_n - r_y * p_t) / in_i
    ke_before = 0.5 * m_i * (v_x ** 2 + v_y ** 2) + 0.5 * in_i * w ** 2
    ke_after = 0.5 * m_i * (v_x2 ** 2 + v_y2 ** 2) + 0.5 * in_i * w2 ** 2
    record = {"time": live.time, "x": live.x, "y": live.y, "theta": live.theta,
              "vx": v_x2, "vy": v_y2, "spin": w2, "impulse_normal": p_n, "impulse_tangential": p_t,
              "slip": slip, "energy_gain": ke_after > ke_before * (1 + 1e-12),
              # a piece with along = +1 lies A sin(theta) BELOW the centre:
              # it is the end at -L/2 on the axis
              "end": np.where(np.abs(along) < 0.5, 0, -np.sign(along)).astype(np.int8)}
    separating = v_y2 + w2 * r_x
    if model == "compliant":
        _strike_both_ends(live, np.arange(live.mass.size), across, restitution, record, separating, ke_after,
                          both=False)
    elif model == "two-ends":
        pairs = overlapping_pairs(live, along, r_x, u_n, v_y2, w2, pair_scale)
        if pairs.size:
            if defer:
                return record, separating, ke_after, pairs
            _strike_both_ends(live, pairs, across, restitution, record, separating, ke_after)
    return record, separating, ke_after, _NO_DROPS


_NO_DROPS = np.zeros(0, np.intp)
#: Relative kinetic-energy gain above which a two-contact integration
#: counts as failed (:func:`_strike_both_ends`). [-]
PAIR_ENERGY_ERROR = 1e-4


def _strike_both_ends(live, pairs, across, restitution, record, separating, ke_after, both=True):
    """Replace the single impulse of the drops ``pairs`` (indices into
    ``live``) by the compliant contact of both ends
    (:mod:`sim.pair_contact`), in ``record``, ``separating``, ``ke_after``
    (the body's velocities after it). ``both``: the impacts are pairs
    (their end code becomes 0); False for the compliant model, where every
    impact goes this way and keeps the end that struck first."""
    restitution = np.broadcast_to(restitution, live.mass.shape)
    # below the damping table's lowest restitution the contact is
    # sustained, not an impact: the single impulse stays
    pairs = pairs[restitution[pairs] >= LOWEST_RESTITUTION]
    mass, inertia = live.mass[pairs], live.inertia[pairs]
    profile = tuple(p[pairs] for p in live.profile)
    before = np.stack([live.x[pairs], live.y[pairs], live.theta[pairs], live.vx[pairs], live.vy[pairs],
                       live.spin[pairs]])
    after, duration = resolve_pairs(mass, inertia, profile, across[pairs], before,
                                    restitution[pairs], live.friction[pairs], live.modulus[pairs],
                                    steps=STEPS_PER_DURATION if both else COMPLIANT_STEPS)
    # a contact that outlasts the budget keeps its single impulse, and so
    # does one whose integration gained energy: damping and friction only
    # take it away, so a gain beyond the method's error (RK4 at this step
    # keeps an undamped contact's energy within 1e-6) is a failed step
    ke_pair = 0.5 * mass * (after[3] ** 2 + after[4] ** 2) + 0.5 * inertia * after[5] ** 2
    ke_before = 0.5 * mass * (before[3] ** 2 + before[4] ** 2) + 0.5 * inertia * before[5] ** 2
    done = ~np.isnan(duration) & (ke_pair <= ke_before * (1 + PAIR_ENERGY_ERROR))
    pairs, after, before, mass, inertia = pairs[done], after[:, done], before[:, done], mass[done], inertia[done]
    profile = tuple(p[done] for p in profile)
    # the impact stays instantaneous, as every other in the engine: the
    # contact's few microseconds of travel (micrometres) are left out, so
    # the next flight starts from the pose at first touch
    vx, vy, spin = after[3:]
    record["vx"][pairs], record["vy"][pairs], record["spin"][pairs] = vx, vy, spin
    record["impulse_normal"][pairs] = mass * (vy - before[4])
    record["impulse_tangential"][pairs] = mass * (vx - before[3])
    if both:
        record["end"][pairs] = 0
    record["energy_gain"][pairs] = False
    ke_after[pairs] = ke_pair[done]
    # the body leaves the floor when either end separates (an end still
    # approaching is a few micrometres up: the search finds it next)
    s, c = np.sin(before[2]), np.cos(before[2])
    ends = [corner_offset(s, c, profile, side, across[pairs], profile[2] != profile[3])[0] for side in (1.0, -1.0)]
    separating[pairs] = np.maximum(vy + spin * ends[0], vy + spin * ends[1])


def _run_chunk(sl, k, settle_fraction, mass, inertia, profile, y0, th0, om0, vx0, vy0,
               e, mu, laws, gravity, out, status, count, points=("bottom", "top"), speed_law=None,
               restitution_table=None, modulus=DEFAULT_CONTACT_MODULUS, model=MODELS[0]):
    """Simulate one chunk, writing into the views ``out``, ``status``, ``count``.

    The drops still in the air are kept as compact arrays (``live``), and
    are gathered only when some drop leaves: in most chunks none does
    before its last impact, so nothing is gathered at all.

    ``speed_law`` is ``(speed_exponent, reference_speed)`` per drop
    (:class:`Contact`; None: restitution independent of speed).
    ``gravity`` is ``(g_n, g_t, stretch)`` per drop (:class:`_Flying`). On
    an inclined floor the flight normal to the floor, ``y + vy t - g_n
    t^2 / 2`` with ``theta + omega t``, is exactly the flight of a level
    floor under ``g`` in the time ``s = t / stretch`` (``stretch = sqrt(g /
    g_n)``) with normal speed ``vy stretch`` and spin ``omega stretch``: the
    contact search and the flight peaks, which see only the normal motion
    and the angle, run unchanged on that flight (their proofs hold as
    written) and its times are stretched back. A level floor has stretch 1
    exactly, and a chunk without a tilted drop skips the stretching.
    """
    n = mass.size
    g_n, g_t, stretch = gravity
    tilted = bool(np.any(g_t != 0))
    d_low, d_high = depth_range(*profile)
    rest_energy = mass * g_n * d_low
    if speed_law is None:
        speed_law = (np.zeros(n), np.ones(n))
    live = _Flying(
        index=np.arange(n), time=np.zeros(n), x=np.zeros(n), y=y0.copy(), vx=vx0.copy(), vy=vy0.copy(),
        theta=th0.copy(), spin=om0.copy(), mass=mass, inertia=inertia, half_long=profile[0],
        half_wide=profile[1], round_long=profile[2], round_wide=profile[3], restitution=e, friction=mu,
        law=laws, speed_exponent=speed_law[0], reference_speed=speed_law[1],
        modulus=np.broadcast_to(modulus, (n,)),
        curvature_bound=curvature_bound(*profile), d_low=d_low, d_high=d_high,
        gravity=g_n, gravity_along=g_t, stretch=stretch, rest_energy=rest_energy,
        excess_at_release=(0.5 * mass * (vx0 ** 2 + vy0 ** 2) + 0.5 * inertia * om0 ** 2 + mass * g_n * y0
                           - rest_energy),
        impacting=np.ones(n, bool), impact=np.zeros(n, np.intp))

    def keep(drops, mask):
        return drops.take(np.flatnonzero(mask))

    def put(name, drops, value, behind=0):
        if not uniform:
            out[name][drops.index, drops.impact - behind] = value
        elif drops.index.size:
            # all at one impact; every drop of the chunk still live: a plain column write
            column = int(drops.impact[0]) - behind
            if drops.index.size == n:
                out[name][:, column] = value
            else:
                out[name][drops.index, column] = value

    # Drops whose impact is a near-flat pair (sim.pair_contact) wait
    # ("parked") until every other drop of the chunk is done or parked too;
    # then all of them are struck together, their pairs in one integration,
    # and they fly on, each from its own impact. The integration costs the
    # same for one drop as for hundreds, so a chunk pays it about once
    # rather than at every impact.
    parked = []
    pair_scale = duration_scale(mass, live.modulus, profile) if model == "two-ends" else None
    # every drop at one impact: true until parked drops rejoin (any subset
    # of the live drops keeps it)
    uniform = True
    while True:
        if live.index.size == 0:
            if not parked:
                break
            live = _Flying.joined([drops for drops, _, _ in parked])
            along = np.concatenate([a for _, a, _ in parked])
            across = np.concatenate([a for _, _, a in parked])
            parked, deferring = [], False
            uniform = bool(np.all(live.impact == live.impact[0]))
        else:
            deferring = model == "two-ends"
            # after the last impact only the flight's length is wanted
            level_vy, level_spin = live.level(tilted)
            tau_level, along, across = next_contact(live.y, level_vy, live.theta, level_spin, live.profile,
                                                    live.curvature_bound, live.d_high,
                                                    strikes=bool(np.any(live.impact < k)))
            del level_vy, level_spin
            tau = tau_level * live.stretch if tilted else tau_level
            failed = np.isnan(tau)
            any_failed = bool(failed.any())
            shown = (live.impact > 0) & ~failed
            if shown.any():
                # the flight after the impact before, and its peaks
                every = bool(shown.all())
                flown = live if every else keep(live, shown)
                tau_ok = tau if every else tau[shown]
                put("flight", flown, tau_ok, behind=1)
                level_vy, level_spin = flown.level(tilted)
                c, b, tp = flight_peaks(flown.y, level_vy, flown.theta, level_spin,
                                        tau_level if every else tau_level[shown], flown.profile,
                                        flown.d_low, flown.d_high, points=points)
                del level_vy, level_spin
                put("peak_centre", flown, c, behind=1)
                put("peak_bottom", flown, b, behind=1)
                put("peak_top", flown, tp, behind=1)
            if any_failed:
                status[live.index[failed]] = FAILED
            go = ~failed & live.impacting & (live.impact < k)
            del tau_level
            if not go.all():
                live = keep(live, go)
                if live.index.size == 0:
                    continue
                tau, along, across = tau[go], along[go], across[go]
            # advance to the contact
            live.time += tau
            live.x += live.vx * tau
            live.y += live.vy * tau - 0.5 * live.gravity * tau ** 2
            live.vy -= live.gravity * tau
            if tilted:
                live.x += 0.5 * live.gravity_along * tau ** 2
                live.vx += live.gravity_along * tau
            live.theta += live.spin * tau
            del tau
        record, separating, ke_after, pairs = _strike(live, along, across, restitution_table, model, deferring,
                                                      pair_scale)
        if pairs.size:
            parked.append((live.take(pairs), along[pairs], across[pairs]))
            flying = np.ones(live.index.size, bool)
            flying[pairs] = False
            live = keep(live, flying)
            record = {name: value[flying] for name, value in record.items()}
            separating, ke_after = separating[flying], ke_after[flying]
        del along, across
        for name, value in record.items():
            put(name, live, value)
        count[live.index] = live.impact + 1
        live.vx, live.vy, live.spin = record["vx"], record["vy"], record["spin"]
        del record
        # does it fly on?
        in_contact = separating <= CONTACT_SPEED
        above_rest = ke_after + live.mass * live.gravity * live.y - live.rest_energy
        settled = ~in_contact & (above_rest < settle_fraction * live.excess_at_release)
        live.impacting = ~(in_contact | settled)
        del separating
        if settled.any():
            status[live.index[settled]] = SETTLED
        if in_contact.any():
            # the centre still moving off the floor with a good share of
            # the drop's energy: it may vault over the struck point (the
            # centre's speed above the contact speed, which rounding alone
            # leaves it: a sphere's centre moves as its contact point does)
            could_vault = (live.vy > CONTACT_SPEED) & (ke_after > VAULT_SHARE * live.excess_at_release)
            still = keep(live, in_contact)
            ids, at = still.index, still.impact
            status[ids] = np.where(could_vault[in_contact], COULD_VAULT, CONTACT)
            out["flight"][ids, at] = 0.0
            out["peak_centre"][ids, at] = still.y
            out["peak_bottom"][ids, at] = 0.0
            out["peak_top"][ids, at] = still.y + depth(still.theta, *still.profile)
            live = keep(live, ~in_contact)
        live.impact += 1
        del above_rest, ke_after
