"""Damping of the compliant contact, calibrated to a restitution.

The scaled damped Hertz contact (:mod:`sim.compliant`) depends on the one
number ``c = chi v`` (damping times normal impact speed), so its
restitution ``e(c)``, duration, largest indentation and peak force are
tabulated once, by integrating it for a grid of ``c``, and every impact's
damping is read off by interpolation: ``chi = c(e) / v``. Vectorised: a
million impacts cost a few interpolations.

Published closed forms for ``chi`` miss the target restitution at low
``e`` (docs/physics.md section 7; ``tests/test_damping.py`` compares them):

- Hunt & Crossley, J. Appl. Mech. 42:440-445, 1975:
  ``chi = 3 (1 - e) / (2 v)`` (from ``e = 1 - (2/3) chi v``, small damping);
- Lankarani & Nikravesh, J. Mech. Des. 112:369-376, 1990:
  ``chi = 3 (1 - e^2) / (4 v)`` (energy balance, small damping);
- Flores, Machado, Silva & Martins, Multibody Syst. Dyn. 25:357-375, 2011:
  ``chi = 8 (1 - e) / (5 e v)`` (the closest of the three at low ``e``).

The formulas are as recalled (from memory); the test checks what they give.
The engine uses the numerical calibration: it hits the target by
construction (within 1e-3, tested), where the best closed form misses by
0.03 at e = 0.1 and the oldest by 0.4.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np

from .compliant import scaled_contacts

#: Largest scaled damping tabulated; restitution below :data:`LOWEST_RESTITUTION`
#: (about ``1 / c`` there) gives NaN: the body barely leaves and the contact
#: is sustained rather than an impact. [-]
LARGEST_DAMPING = 1000.0
#: Grid points of the table, uniform in ``log(1 + c)``.
TABLE_POINTS = 400
#: The table as shipped: :func:`integrate_contact_table` takes about half
#: a second, which every worker process would otherwise pay at its first
#: near-flat landing. ``python -m hopscape.sim.damping`` writes it again;
#: tests/test_damping.py checks that it is what the integration gives.
TABLE_FILE = Path(__file__).with_name("data") / "contact_table.csv"
_COLUMNS = ("log_damping", "restitution", "duration", "indentation", "peak_force")


def hunt_crossley(restitution, speed):
    """``chi = 3 (1 - e) / (2 v)`` (Hunt & Crossley 1975). [s/m]"""
    return 1.5 * (1 - np.asarray(restitution)) / speed


def lankarani_nikravesh(restitution, speed):
    """``chi = 3 (1 - e^2) / (4 v)`` (Lankarani & Nikravesh 1990). [s/m]"""
    return 0.75 * (1 - np.square(restitution)) / speed


def flores(restitution, speed):
    """``chi = 8 (1 - e) / (5 e v)`` (Flores et al. 2011). [s/m]"""
    e = np.asarray(restitution, dtype=float)
    return 1.6 * (1 - e) / (e * speed)


CLOSED_FORMS = {"hunt_crossley": hunt_crossley, "lankarani_nikravesh": lankarani_nikravesh, "flores": flores}


@dataclass(frozen=True)
class ContactTable:
    """The scaled contact against ``u = log(1 + c)``: restitution,
    duration, largest indentation, peak force (scaled as in
    :func:`sim.compliant.scaled_contacts`)."""

    log_damping: np.ndarray
    restitution: np.ndarray
    duration: np.ndarray
    indentation: np.ndarray
    peak_force: np.ndarray

    @property
    def lowest_restitution(self):
        return float(self.restitution[-1])


def integrate_contact_table():
    """The table, by integrating the scaled contact for every grid point."""
    u = np.linspace(0.0, np.log1p(LARGEST_DAMPING), TABLE_POINTS)
    run = scaled_contacts(np.expm1(u))
    restitution = -run.rebound
    # undamped, the contact conserves energy: exactly 1 (the integration
    # gives 1 - 7e-11), so that e = 1 calibrates to no damping at all
    restitution[0] = 1.0
    return ContactTable(u, restitution, run.duration, run.largest_indentation, run.peak_force)


def write_contact_table(path=TABLE_FILE):
    """Write :func:`integrate_contact_table` to ``path`` (CSV, full precision)."""
    table = integrate_contact_table()
    columns = np.stack([getattr(table, name) for name in _COLUMNS], axis=1)
    header = ("scaled damped Hertz contact (hopscape.sim.damping); written by python -m hopscape.sim.damping\n"
              + ",".join(_COLUMNS))
    np.savetxt(path, columns, delimiter=",", fmt="%.17g", header=header)


@lru_cache(maxsize=1)
def contact_table():
    """The shipped table (:data:`TABLE_FILE`), read once per process."""
    columns = np.loadtxt(TABLE_FILE, delimiter=",", ndmin=2)
    return ContactTable(*columns.T.copy())


@lru_cache(maxsize=1)
def _forward():
    table = contact_table()
    from scipy.interpolate import PchipInterpolator  # loaded on first use: most drops name no materials

    # the four columns in one interpolant: one interval search per point
    return PchipInterpolator(table.log_damping, np.stack([table.restitution, table.duration, table.indentation,
                                                          table.peak_force], axis=-1), extrapolate=False)


def scaled_damping(restitution):
    """``c = chi v`` that gives the restitution ``e`` (NaN below
    :attr:`ContactTable.lowest_restitution`, 0 at ``e = 1``). [-]

    Linear in ``log(1 + c)`` between the table's points (``e`` falls
    strictly with ``c``): within 5e-5 of the restitution the integration
    gives between them, and no SciPy on the kernel's path.
    """
    table = contact_table()
    e = np.minimum(np.asarray(restitution, dtype=float), 1.0)
    u = np.interp(e, table.restitution[::-1], table.log_damping[::-1], left=np.nan)
    return np.expm1(u)


def damping_for_restitution(restitution, speed):
    """Calibrated ``chi`` [s/m] of ``F = K delta^1.5 (1 + chi delta_dot)`` for
    the restitution ``e`` [-] at the normal impact speed ``speed`` [m/s]."""
    return scaled_damping(restitution) / np.asarray(speed, dtype=float)


def scaled_outcome(damping):
    """Scaled restitution, duration, largest indentation and peak force at
    ``c = chi v`` (``damping``), read from the table."""
    values = _forward()(np.log1p(np.asarray(damping, dtype=float)))
    return tuple(values[..., i] for i in range(4))


if __name__ == "__main__":
    write_contact_table()
