"""The calibrated contact for other engines and for studies.

DEM codes and general-purpose physics engines take damping rather than
restitution. From the fitted restitution ``e`` and the measured normal
approach speed ``v`` of the contact point:

- Hertz contact with Hunt-Crossley damping, ``F = k d^1.5 (1 + alpha
  d')``: the damping factor ``alpha`` [s/m] by three published relations,
  Hunt & Crossley (J. Appl. Mech. 42:440, 1975) ``3 (1 - e) / (2 v)``,
  Lankarani & Nikravesh (J. Mech. Des. 112:369, 1990)
  ``3 (1 - e^2) / (4 v)``, and Flores, Machado, Silva & Martins
  (Multibody Syst. Dyn. 25:357, 2011) ``8 (1 - e) / (5 e v)``; the first
  two hold for ``e`` near 1, the third over most of the range; and the
  factor calibrated numerically, which hits ``e`` everywhere (the contact
  model's own, :mod:`hopscape.sim.damping`).
- Linear spring-dashpot: the damping ratio
  ``zeta = -ln(e) / sqrt(pi^2 + ln(e)^2)`` (the free damped oscillator
  over half a period; e.g. Tsuji, Tanaka & Ishida, Powder Technol. 71:239,
  1992, for DEM; the relation recalled from memory).

Each is checked by integrating one normal impact of a point mass with it
(``scipy.integrate.solve_ivp``) and reading the restitution it gives. The
relations hold for one normal contact; for an elongated body the engine's
own contact model decides how they combine.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

from hopscape.sim.damping import CLOSED_FORMS, damping_for_restitution

from ..errors import InputError
from ..files import write_text

#: Damping factors of Hunt-Crossley damping: name -> (alpha(e, v) [s/m], source). The
#: three published closed forms are the contact model's own (:mod:`hopscape.sim.damping`);
#: ``calibrated`` is the factor the contact model uses, found numerically so
#: that one integrated impact gives ``e`` at any restitution (docs/physics.md
#: section 7): the one to hand on.
HUNT_CROSSLEY = {
    "calibrated": (damping_for_restitution, "numerical calibration of the restitution of F = k d^1.5 (1 + alpha "
                   "d') against alpha v (hopscape, docs/physics.md section 7)"),
    "hunt_crossley": (CLOSED_FORMS["hunt_crossley"], "Hunt & Crossley, J. Appl. Mech. 42:440, 1975"),
    "lankarani_nikravesh": (CLOSED_FORMS["lankarani_nikravesh"], "Lankarani & Nikravesh, J. Mech. Des. 112:369, 1990"),
    "flores": (CLOSED_FORMS["flores"], "Flores, Machado, Silva & Martins, Multibody Syst. Dyn. 25:357, 2011"),
}


def damping_ratio(restitution):
    """Linear spring-dashpot damping ratio that gives ``restitution``. [-]"""
    log = np.log(restitution)
    return -log / np.sqrt(np.pi ** 2 + log ** 2)


def hertz_restitution(alpha, speed, stiffness=1e9, mass=1e-3):
    """Restitution of one normal impact under ``F = k d^1.5 (1 + alpha d')``,
    integrated (it depends on ``alpha speed`` only; ``stiffness`` [N/m^1.5]
    and ``mass`` [kg] set the time scale). [-]"""
    def rhs(_, state):
        d, rate = state
        return [rate, -stiffness * max(d, 0.0) ** 1.5 * (1 + alpha * rate) / mass]
    separated = lambda _, state: state[0]  # noqa: E731
    separated.terminal, separated.direction = True, -1
    scale = (mass / stiffness) ** 0.4 * speed ** -0.2  # the Hertz contact time's scale [s]
    sol = solve_ivp(rhs, (0, 50 * scale), [0.0, speed], events=separated, rtol=1e-10, atol=1e-14 * speed,
                    max_step=scale / 50)
    return float(-sol.y_events[0][-1][1] / speed) if sol.t_events[0].size else 0.0


def dashpot_restitution(zeta):
    """Restitution of one normal impact of a linear spring-dashpot with
    damping ratio ``zeta``, integrated until the spring returns to length. [-]"""
    omega = 1.0

    def rhs(_, state):
        return [state[1], -2 * zeta * omega * state[1] - omega ** 2 * state[0]]
    separated = lambda _, state: state[0]  # noqa: E731
    separated.terminal, separated.direction = True, -1
    sol = solve_ivp(rhs, (0, 10 * np.pi), [0.0, 1.0], events=separated, rtol=1e-11, atol=1e-14, max_step=0.01)
    return float(-sol.y_events[0][-1][1]) if sol.t_events[0].size else 0.0


def compliant_parameters(restitution, speed):
    """The compliant-contact parameters of a fitted restitution, each with its source and check.

    Parameters
    ----------
    restitution : float
        Fitted restitution (0 < e <= 1). [-]
    speed : float
        Typical normal approach speed of the contact point. [m/s]

    Returns
    -------
    dict
        ``hertz_damping_factor`` (per relation: ``alpha_s_per_m``,
        ``source``, ``check_restitution``), ``linear_damping_ratio``
        (``zeta``, ``source``, ``check_restitution``), and ``speed_m_s``.
    """
    e = float(np.clip(restitution, 1e-6, 1.0))
    hertz = {name: {"alpha_s_per_m": float(rule(e, speed)), "source": source,
                    "check_restitution": hertz_restitution(float(rule(e, speed)), speed)}
             for name, (rule, source) in HUNT_CROSSLEY.items()}
    zeta = float(damping_ratio(e))
    return {"speed_m_s": float(speed), "restitution": e, "hertz_damping_factor": hertz,
            "linear_damping_ratio": {"zeta": zeta, "check_restitution": dashpot_restitution(zeta),
                                     "source": "damped oscillator over half a period (e.g. Tsuji, Tanaka & Ishida, "
                                               "Powder Technol. 71:239, 1992)"}}


def study_target(study_path, out_path=None, yaml=None):
    """The study's YAML (round trip) and the new file's path; InputError,
    before anything is fitted, when the study cannot take a fitted contact
    or the new file exists."""
    from ruamel.yaml import YAML

    from ..study_file import read_study_text

    study_path = Path(study_path)
    text = read_study_text(study_path)
    out_path = Path(out_path) if out_path else study_path.with_name(f"{study_path.stem}-fitted{study_path.suffix}")
    if out_path.exists():
        raise InputError(f"--into: {out_path} exists; remove or rename it first (nothing was overwritten)")
    try:
        data = (yaml or YAML(typ="rt")).load(text)
    except Exception as exc:  # noqa: BLE001  (any YAML error is the user's file)
        raise InputError(f"{study_path}: not a readable study file ({str(exc).splitlines()[0]})") from None
    if not isinstance(data, dict) or not isinstance(data.get("contact"), dict):
        raise InputError(f"{study_path}: the study has no contact section to fill")
    return data, out_path


def fitted_study(study_path, calibration, out_path=None):
    """Write a copy of a study with the fitted contact, beside it; never overwrite.

    ``contact.restitution`` (and ``contact.friction`` when identifiable)
    become ``{normal: {mean, sd}}`` with ``sd`` from the 95% interval
    (half its width over 1.96), and ``contact.law`` the fitted law. The new
    file is checked as a study before it is kept.

    Returns
    -------
    pathlib.Path
        The new study file (``NAME-fitted.yaml`` unless ``out_path``).
    """
    from ruamel.yaml import YAML

    from ..study_file import load_study, read_study_text

    yaml = YAML(typ="rt")
    data, out_path = study_target(study_path, out_path, yaml)
    est = calibration.estimate
    contact = data["contact"]
    contact["law"] = calibration.law
    sd = max((est.restitution_high - est.restitution_low) / (2 * 1.96), 1e-4)
    contact["restitution"] = {"normal": {"mean": round(float(est.restitution), 4), "sd": round(float(sd), 4)}}
    if est.friction is not None:
        sd = max((est.friction_high - est.friction_low) / (2 * 1.96), 1e-4)
        contact["friction"] = {"normal": {"mean": round(float(est.friction), 4), "sd": round(float(sd), 4)}}
    if "name" in data:
        data["name"] = f"{data['name']}-fitted"
    import io
    buffer = io.StringIO()
    yaml.dump(data, buffer)
    note = (f"# contact fitted by `hopscape fit` from {', '.join(t.name for t in calibration.tracks)}"
            + ("" if est.friction is not None else f"; friction not identifiable (>= {est.friction_low:.3g}), "
               "left as it was") + "\n")
    write_text(out_path, note + buffer.getvalue())
    try:
        load_study(out_path)
    except InputError:
        out_path.unlink(missing_ok=True)
        raise
    return out_path
