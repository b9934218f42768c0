"""hopscape: design exploration for rigid elongated bodies dropped onto a floor.

The Python API, the command line's twin. Units as in study files and on the
command line: metres, kilograms, seconds, degrees for angles, rad/s for spin.

=====================================  ====================================================
:func:`load_study`                     a study file, a name in ``studies/`` or YAML text,
                                       with optional changes -> a validated ``Study``
:func:`run_study`                      simulate it (resuming), analyse it, write its report
                                       -> :class:`StudyRun` (``.tables``, ``.table(stage)``)
:func:`simulate_drops`                 a table of drops in the batch contract
                                       -> the per-impact table (``hopscape batch``)
:func:`drop`                           one drop -> :class:`Drop` (``.impacts``,
                                       ``.bounces``, ``.history(times)``)
:data:`DEFAULT_IMPACTS`                impacts followed per drop unless told otherwise
``hopscape.sim``                       the physics: vectorised, SI units, radians
=====================================  ====================================================

``import hopscape`` stays light: it loads none of NumPy, pandas, pydantic
or matplotlib. Each function imports what it needs when it is called, and
``sim``, ``Study`` and ``InputError`` are looked up on first use (a PEP 562
module ``__getattr__``). Bad input raises :class:`InputError` (one line per
problem, naming the field, the allowed range and the value given); the
physics raises ``ValueError`` worded the same way.
"""
from __future__ import annotations

import importlib
import time
import warnings
from dataclasses import dataclass
from pathlib import Path

from .defaults import IMPACTS as DEFAULT_IMPACTS

__all__ = ["DEFAULT_IMPACTS", "Drop", "InputError", "Study", "StudyRun", "drop", "load_study", "run_study",
           "sim", "simulate_drops"]

#: Names looked up on first use: name -> (module, attribute or None for the module itself).
_LAZY = {"sim": (".sim", None), "Study": (".study", "Study"), "InputError": (".errors", "InputError")}


def __getattr__(name):
    """Import ``sim``, ``Study`` and ``InputError`` when first used (PEP 562)."""
    if name not in _LAZY:
        raise AttributeError(f"module 'hopscape' has no attribute {name!r}")
    module_name, attribute = _LAZY[name]
    module = importlib.import_module(module_name, __name__)
    value = module if attribute is None else getattr(module, attribute)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))


# --------------------------------------------------------------------------
# studies
# --------------------------------------------------------------------------

def load_study(source, changes=None):
    """Read and validate a study.

    Parameters
    ----------
    source : str or pathlib.Path
        A study file, a name found as ``studies/NAME.yaml`` (as ``hopscape
        run NAME`` finds it), or the YAML text itself (any string holding a
        line break).
    changes : dict of str to object, optional
        Fields to set before validating, by dotted path in the file's
        sections and the file's units, e.g. ``{"analyses.draws": 8,
        "release.angle.grid.steps": 11}``; a value of None removes the
        field (its default applies).

    Returns
    -------
    Study
        The validated study (frozen; its ``warnings`` list legal but
        suspicious values).

    Raises
    ------
    InputError
        Every mistake at once, one ``file:line:col: field: message`` line
        each (the line numbers are those of the changed text), or a
        missing file.
    """
    from .study import parse_study

    text, filename = _study_text(source)
    if changes:
        text, filename = _changed_text(text, changes), f"{filename} (with changes)"
    return parse_study(text, filename)


def _study_text(source):
    """(YAML text, name for messages) of a study file, a study name or the text itself."""
    if isinstance(source, str) and "\n" in source:
        return source, "<study>"
    from .commands import find_study
    from .study_file import read_study_text

    path = find_study(str(source))
    return read_study_text(path), str(path)


def _changed_text(text, changes):
    """``text`` with the fields of ``changes`` (dotted paths) set, comments and layout kept."""
    import io

    from ruamel.yaml import YAML

    from .errors import InputError

    from ruamel.yaml.error import MarkedYAMLError

    yaml = YAML(typ="rt")
    try:
        data = yaml.load(text)
    except MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        where = f"{mark.line + 1}:{mark.column + 1}: " if mark else ""
        raise InputError(f"{where}YAML syntax error: {exc.problem or exc.context}; fix it before applying "
                         "changes") from None
    if not isinstance(data, dict):
        raise InputError("changes: the study text is not a mapping of sections")
    for path, value in changes.items():
        *sections, key = path.split(".")
        node = data
        for name in sections:
            if not isinstance(node, dict):
                raise InputError(f"changes: {path}: {name} is inside a value, not a section")
            node = node.setdefault(name, {})
        if not isinstance(node, dict):
            raise InputError(f"changes: {path}: {key} is inside a value, not a section")
        if value is None:
            node.pop(key, None)
        else:
            node[key] = value
    buffer = io.StringIO()
    yaml.dump(data, buffer)
    return buffer.getvalue()


@dataclass(frozen=True)
class StudyRun:
    """A finished study run: its tables and, when analysed, its outputs.

    Attributes
    ----------
    study : Study
        The study that ran.
    folder : pathlib.Path
        The run folder (``study.yaml``, ``results/part-*.parquet``, maps,
        ``report.html``), as ``hopscape run`` writes it.
    tables : dict of str to pandas.DataFrame
        One table per stage (``grid``, ``robust``, ``sobol`` or ``morris``),
        one row per drop: a ``stage`` column, the sampled inputs with their
        unit in the column name (``angle_deg``, ``height_m``) and the metric
        columns (``value``, ``event``, ``ratio_1`` .. ; see
        ``hopscape.metrics``).
    report : pathlib.Path or None
        ``report.html``, when the run was analysed.
    ranking : pandas.DataFrame or None
        The sensitivity ranking (rank 1 first), when the study asks for one.
    picks : pandas.DataFrame or None
        The recommended drop conditions, when the study asks for them.
    """

    study: object
    folder: Path
    tables: dict
    report: Path | None = None
    ranking: object = None
    picks: object = None

    def table(self, stage=None):
        """One stage's table, or every stage's in one.

        Parameters
        ----------
        stage : str, optional
            ``grid``, ``robust``, ``sobol`` or ``morris`` (those the study
            ran); None combines every stage, told apart by the ``stage``
            column (columns a stage lacks are empty there).

        Returns
        -------
        pandas.DataFrame
            One row per drop.

        Raises
        ------
        InputError
            For a stage this study did not run.
        """
        import pandas as pd

        from .errors import InputError

        if stage is None:
            return pd.concat(list(self.tables.values()), ignore_index=True)
        if stage not in self.tables:
            raise InputError(f"stage must be one of {', '.join(self.tables)} (the stages of study "
                             f"'{self.study.name}'), got {stage!r}")
        return self.tables[stage]


def run_study(study, folder=None, *, fresh=False, jobs=None, backend=None, scheduler=None, analyse=True,
              progress=False):
    """Run a study as ``hopscape run`` does: simulate, analyse, report.

    Finished chunks in ``folder`` are kept and not simulated again; a folder
    holding another version of the study is refused (``fresh=True`` starts
    over). The tables depend only on the study and its seed, never on the
    jobs, backend or interruptions.

    Parameters
    ----------
    study : Study or str or pathlib.Path
        A validated study (:func:`load_study`), or what :func:`load_study`
        reads.
    folder : str or pathlib.Path, optional
        The run folder; default ``runs/<study name>``.
    fresh : bool, optional
        Discard what an earlier run wrote in ``folder`` first.
    jobs : int, optional
        Worker processes; default the study's ``run.jobs``.
    backend : {"loky", "threading", "sequential", "dask"}, optional
        Default the study's ``run.backend``.
    scheduler : str, optional
        Address of a running Dask scheduler (``tcp://HOST:8786``, or a
        ``dask_jobqueue`` cluster's ``scheduler_address``); implies the
        ``dask`` backend. The run folder must be on a disk its workers can
        write.
    analyse : bool, optional
        Also draw the maps, rank the quantities, pick conditions and write
        ``report.html`` (False: the tables only).
    progress : bool, optional
        Show a progress bar with drops per second.

    Returns
    -------
    StudyRun
        The tables per stage, and the report, ranking and picks.

    Raises
    ------
    InputError
        For a folder holding another study's results, or ``jobs`` < 1.
    """
    from .errors import InputError
    from .files import folder_lock

    source_text = ""                # a validated study is recorded as such in the folder's study.yaml
    if not hasattr(study, "fingerprint"):
        source_text = _study_text(study)[0]
        study = load_study(study)
    if jobs is not None and jobs < 1:
        raise InputError(f"jobs must be >= 1, got {jobs}")
    folder = Path("runs") / study.name if folder is None else Path(folder)
    with folder_lock(folder):   # held through the analysis and the report too
        return _run_and_report(study, folder, source_text, fresh, jobs, backend, scheduler, analyse, progress)


def _run_and_report(study, folder, source_text, fresh, jobs, backend, scheduler, analyse, progress):
    """The body of :func:`run_study`, with the run folder held."""
    from .runner import run_study as run_stages

    outcome = run_stages(study, folder, source_text, fresh=fresh, jobs=jobs, backend=backend, scheduler=scheduler,
                         progress=progress)
    if not analyse:
        return StudyRun(study, outcome.folder, outcome.tables)
    from .analysis import analyse as analyse_run
    from .report import write_report

    art = analyse_run(outcome)
    seconds = {step: outcome.seconds[step] for step in ("sampling", "simulation", "loading")}
    seconds.update(analysis=art.seconds.get("analysis", 0.0), plotting=art.seconds.get("plotting", 0.0))
    started = time.perf_counter()
    report = write_report(outcome, art, seconds)
    seconds["report"] = time.perf_counter() - started
    return StudyRun(study, outcome.folder, outcome.tables, report, art.ranking, art.picks)


# --------------------------------------------------------------------------
# drops
# --------------------------------------------------------------------------

def _warn_each(lines):
    for line in lines:
        warnings.warn(line, UserWarning, stacklevel=4)


def simulate_drops(frame, impacts=DEFAULT_IMPACTS, law="energetic", merge_ms=None, camera_fps=None):
    """Simulate a table of drops, as ``hopscape batch`` does.

    Parameters
    ----------
    frame : pandas.DataFrame or dict of columns
        One row per drop in the batch contract (README, "Batch tables"):
        ``shape``, ``length`` [m], ``radius`` [m], ``density`` [kg/m^3],
        ``height`` [m, of the centre of mass], ``angle`` [deg], ``spin``
        [rad/s], ``vx``, ``vy`` [m/s], ``restitution``, ``friction`` [-],
        ``law``, ``floor_angle`` [deg]; see ``hopscape.batch.INPUT_COLUMNS``.
    impacts : int, optional
        Impacts followed per drop (default :data:`DEFAULT_IMPACTS`).
    law : {"energetic", "poisson", "newton"}, optional
        Impact law of rows whose ``law`` is empty or missing.
    merge_ms : float, optional
        Impacts closer than this are one visible bounce [ms]; default 10
        (what a camera at 100 frames per second merges).
    camera_fps : float, optional
        Instead of ``merge_ms``: your camera's frame rate [1/s]; impacts
        closer than one frame interval are one visible bounce.

    Returns
    -------
    pandas.DataFrame
        One row per drop and impact (``hopscape.batch.OUTPUT_COLUMNS``:
        ``drop``, ``impact``, ``time`` [s], ``angle`` [deg], ``peak_centre``
        [m], ..., ``status``, ``error``). A row that cannot be simulated
        appears once with the reason in ``error``; it never stops the
        others. Implausible values (units mixed up) are reported as
        ``UserWarning``.

    Raises
    ------
    InputError
        For a missing required column, an unknown ``law`` or a bounce
        window out of range.
    """
    import pandas as pd

    from .batch import run_batch

    return run_batch(pd.DataFrame(frame), impacts=impacts, law=law, merge_within=_bounce_window(merge_ms, camera_fps),
                     warn=_warn_each)


def _bounce_window(merge_ms, camera_fps):
    """Impacts closer than this are one visible bounce [s]: ``merge_ms`` [ms] or one frame of ``camera_fps``."""
    from .study import bounce_window

    return bounce_window(merge_ms, camera_fps)


@dataclass(frozen=True)
class Drop:
    """One simulated drop.

    Attributes
    ----------
    shape : hopscape.sim.Shape
        The body.
    result : hopscape.sim.DropResult
        Everything the simulation recorded (SI units, radians).
    merge_within : float
        Impacts closer than this make one visible bounce. [s]
    loads : dict or None
        The contact model's per-impact outputs
        (:func:`hopscape.sim.contact_load.impact_loads`; NaN without materials).
    """

    shape: object
    result: object
    merge_within: float
    loads: object = None

    @property
    def impacts(self):
        """One row per impact, in the batch contract's columns (``time`` [s],
        ``angle`` [deg], ``peak_centre`` [m], ...; README, "Batch tables")."""
        from .batch import impact_table

        return impact_table(self.result, self.merge_within, loads=self.loads)

    @property
    def bounces(self):
        """One row per visible bounce: ``bounce`` (1-based), ``height_centre``,
        ``height_bottom``, ``height_top`` [m, peak of that point after the
        bounce] and ``ratio_centre``, ``ratio_bottom``, ``ratio_top`` [-,
        that height over the point's release height]."""
        import pandas as pd

        from . import sim

        grouped = sim.group_bounces(self.result, self.merge_within)
        count = int(grouped.count[0])
        columns = {"bounce": range(1, count + 1)}
        for kind, values in (("height", grouped.height), ("ratio", grouped.ratio)):
            columns.update({f"{kind}_{point}": values[point][0, :count] for point in sim.REFERENCES})
        return pd.DataFrame(columns)

    @property
    def energy_bound(self):
        """Highest the centre can ever rise: release energy / (m g). [m]"""
        return float(self.result.energy_bound[0])

    def history(self, times):
        """The body's state at the given times, flights evaluated exactly.

        Parameters
        ----------
        times : array_like
            Times since release. [s]

        Returns
        -------
        pandas.DataFrame
            ``time`` [s], ``x``, ``y`` [m, centre], ``angle`` [deg, from +x
            to the axis, not wrapped], ``vx``, ``vy`` [m/s], ``spin``
            [rad/s], ``bottom``, ``top`` [m, heights of the lowest and top
            points], ``translational``, ``rotational``, ``potential``,
            ``total`` [J, energies]; on an inclined floor x runs along the
            floor and heights are normal to it.
        """
        import numpy as np
        import pandas as pd

        from . import sim

        state = sim.history(self.result, 0, times)
        state["angle"] = np.degrees(state.pop("theta"))
        order = ["time", "x", "y", "angle", "vx", "vy", "spin", "bottom", "top", "translational", "rotational",
                 "potential", "total"]
        return pd.DataFrame({name: state[name] for name in order})


def drop(shape="capsule", *, radius=0.0035, length=0.014, aspect_ratio=None, density=1200.0, height=0.3,
         height_of="centre", angle=30.0, spin=0.0, vx=0.0, vy=0.0, floor_angle=0.0, restitution=0.8,
         friction=0.3, law="energetic", impacts=DEFAULT_IMPACTS, merge_ms=None, camera_fps=None,
         speed_exponent=0.0, reference_speed=1.0, restitution_table=None, body_material=None, floor_material=None,
         body_modulus=None,
         body_poisson=None, floor_modulus=None, floor_poisson=None, rim_edge_radius=None, breakage_f_mat=None,
         breakage_w_min=None, model="two-ends", **dimensions):
    """Simulate one drop, as ``hopscape drop`` does (same defaults).

    Parameters
    ----------
    shape : str or hopscape.sim.Shape, optional
        ``capsule``, ``sphere``, ``spheroid``, ``cylinder``,
        ``rounded_tablet`` (``hopscape.sim.SHAPES``), or a body already
        made (then ``radius``, ``length``, ``aspect_ratio``, ``density``
        and ``dimensions`` are not used).
    radius : float, optional
        Capsule: cap radius; spheroid: equatorial radius; others: radius. [m]
    length : float, optional
        Capsule: the cylindrical part; spheroid, cylinder, rounded_tablet:
        the full length along the axis; sphere: not used. [m]
    aspect_ratio : float, optional
        Overall length / diameter, instead of ``length``. [-]
    density : float, optional
        [kg/m^3]
    height : float, optional
        Release height of the point ``height_of``. [m]
    height_of : {"centre", "bottom"}, optional
        The centre of mass or the lowest point.
    angle : float, optional
        From horizontal to the axis, counter-clockwise. [deg]
    spin : float, optional
        Counter-clockwise positive. [rad/s]
    vx, vy : float, optional
        Velocity of the centre at release. [m/s]
    floor_angle : float, optional
        Floor inclination, positive where the floor falls towards +x; then
        ``height``, ``angle``, ``vx`` and ``vy`` are in floor coordinates,
        heights normal to the floor. [deg]
    restitution : float, optional
        [-], in [0, 1].
    friction : float, optional
        Coulomb friction coefficient [-], >= 0.
    law : {"energetic", "poisson", "newton"}, optional
        The restitution law.
    impacts : int, optional
        Impacts to follow (default :data:`DEFAULT_IMPACTS`).
    merge_ms : float, optional
        Impacts closer than this make one visible bounce [ms]; default 10.
    camera_fps : float, optional
        Instead of ``merge_ms``: your camera's frame rate [1/s].
    speed_exponent, reference_speed : float, optional
        Restitution ``restitution (v_n / reference_speed)^-speed_exponent``
        [-], [m/s] (default: the same at every speed).
    restitution_table : sequence of (float, float), optional
        Measured ``(normal impact speed [m/s], restitution)`` pairs, speeds
        rising, instead of ``restitution`` and its speed law.
    body_material, floor_material : str, optional
        Names of ``hopscape.sim.materials.materials()``; with both sides
        given (by name or by modulus and Poisson's ratio) ``.impacts`` has
        the contact model's columns (contact_time, peak_force, ...; README,
        "Batch tables").
    body_modulus, floor_modulus : float, optional
        Young's modulus, overriding the material's. [Pa]
    body_poisson, floor_poisson : float, optional
        Poisson's ratio, overriding the material's. [-]
    rim_edge_radius : float, optional
        Edge radius of a flat-ended cylinder's sharp rim. [m]
    breakage_f_mat, breakage_w_min : float, optional
        Vogel & Peukert's breakage parameters. [kg/(J m)], [J/kg]
    model : {"two-ends", "impulse", "compliant"}, optional
        The contact model (``hopscape.sim.MODEL_WORDS``); two-ends and
        compliant take ``E*`` from the materials (default hard gelatin on
        steel).
    **dimensions : float
        Further dimensions a shape declares, e.g. ``edge`` [m] of a
        rounded tablet.

    Returns
    -------
    Drop
        ``.impacts`` and ``.bounces`` as tables, ``.history(times)``.

    Raises
    ------
    ValueError
        For a value outside its allowed range (the message names it, the
        range and the value), or a body that starts inside the floor.
    InputError
        For a bounce window out of range.
    """
    import numpy as np

    from . import sim
    from .quantities import QUANTITIES, radians_within_one_turn

    window = _bounce_window(merge_ms, camera_fps)
    floor_angle = QUANTITIES["floor_angle"].allowed.check("floor_angle", floor_angle)

    if isinstance(shape, str):
        if aspect_ratio is not None:
            if shape not in sim.SHAPES:
                raise ValueError(f"shape must be one of {', '.join(sim.SHAPES)}, got {shape!r}")
            shape = sim.SHAPES[shape].from_aspect_ratio(aspect_ratio, 2 * radius, density)
        else:
            shape = sim.make_shape(shape, length=length, radius=radius, density=density, **dimensions)
    release = sim.Release(height=height, angle=radians_within_one_turn(angle), spin=spin, vx=vx, vy=vy,
                          reference=height_of,
                          floor_angle=np.radians(floor_angle))
    from .contact_inputs import single_settings
    from .sim.contact_load import impact_loads
    from .sim.hertz import rim_edge_default

    e_star, edge, breakage = single_settings(dict(
        body_material=body_material, floor_material=floor_material, body_modulus=body_modulus,
        body_poisson=body_poisson, floor_modulus=floor_modulus, floor_poisson=floor_poisson,
        rim_edge_radius=rim_edge_radius, breakage_f_mat=breakage_f_mat, breakage_w_min=breakage_w_min))
    contact = sim.Contact(restitution, friction, law, speed_exponent=speed_exponent, reference_speed=reference_speed,
                          restitution_table=None if restitution_table is None else tuple(map(tuple, restitution_table)),
                          contact_modulus=None if np.isnan(e_star) else float(e_star))
    result = sim.simulate(shape, release, contact, impacts=impacts, model=model)
    loads = impact_loads(result, e_star, rim_edge_default(shape.profile) if np.isnan(edge) else edge,
                         None if np.isnan(breakage[0]) else breakage)
    return Drop(shape, result, window, loads)
