"""Speed of the hopscape benchmark drops in pymunk, beside sim.simulate.

Outside source: pymunk 7 (https://www.pymunk.org), the Python binding of the
Chipmunk2D C library, a general-purpose 2D rigid-body engine. It steps time;
hopscape flies exactly between impacts and solves each impact in closed form.

The drops are ``sim.bench.population(n)`` (capsules, cap radius 3.5 mm,
density 1500 kg/m^3, release angle, spin, height, restitution and friction
drawn per drop). In pymunk each drop is one body on its own space:

* shape: ``pymunk.Segment`` of the cylinder length with the cap radius, on a
  body whose mass and moment are hopscape's (the 3D solid's transverse
  moment), floor a static segment on y = 0, gravity ``sim.GRAVITY``, no
  damping, ``collision_slop`` 0;
* restitution: the capsule's elasticity is the drop's restitution and the
  floor's 1.0 (pymunk multiplies the two); pymunk applies it as Newton's
  (kinematic) law on the normal contact velocity, where hopscape uses the
  energetic law;
* friction: likewise the drop's coefficient on the capsule and 1.0 on the
  floor; pymunk bounds the accumulated tangential impulse by mu times the
  normal one (Coulomb at impulse level), the closest it offers to Routh's
  slip/stick integration. The two models differ where slip stops or
  reverses during an impact, so this script compares speed, not answers;
* release: pymunk moves positions with the velocity it starts a step with
  and then adds gravity, i.e. a leapfrog integrator, so the body starts with
  the velocity half a step after release (``vy - g dt / 2``), which makes
  free flight exact;
* a drop ends when pymunk reports the begin of its 3rd floor contact (the
  steps run in chunks of ``CHUNK``, so up to ``CHUNK`` - 1 steps more), or
  after ``TIME_LIMIT`` s of simulated time. ``sim.simulate`` runs the same
  drops with ``impacts=3``, which also finds the flight after the 3rd
  impact, so it does a little more work per drop.

What "converged" means here: halving the time step changes no drop's
highest centre height in its flights after the 1st and 2nd contact (the
flights that end before the run stops) by more than ``TOLERANCE`` = 0.5 mm,
and changes no drop's number of contacts; and since pymunk's error is first
order in the step (each halving halves the change), the error left at the
step itself, about twice the last change, is within the tolerance too.
``--convergence`` runs the drops at dt and dt/2 and prints every change. On
the default 20 drops (seed 1, 50 solver passes) the largest changes were:

    dt 1e-6   -> 5e-7:    0.73 mm (drop 1, flight 2)
    dt 5e-7   -> 2.5e-7:  0.36 mm (drop 1, flight 2)
    dt 2.5e-7 -> 1.25e-7: 0.18 mm (drop 1, flight 2; next drop 0, 0.12 mm)

so the step is 2.5e-7 s (about 0.36 mm of error left); 5e-7 s passes the
halving test alone but keeps about 0.7 mm of error. The contact counts were
the same at every step.

Usage::

    python benchmarks/pymunk_speed.py [--drops 20] [--seed 1] [--time-step 2.5e-7]
                                      [--json] [--convergence]
"""
from __future__ import annotations

import argparse
import json
import math
import sys
import time

import numpy as np
import pymunk

from hopscape import sim
from hopscape.sim import bench

TIME_STEP = 2.5e-7  # [s], converged in the sense of the module notes
TOLERANCE = 0.5e-3  # [m]
IMPACTS = bench.IMPACTS  # 3
TIME_LIMIT = 5.0  # [s] simulated; the population needs under 2 s
#: Solver passes per step. With friction pymunk solves the tangential and the
#: normal impulse of a contact in turn, so one contact needs several passes:
#: going from 10 to 50 moved a peak by 0.07 mm, from 50 to 400 by < 1 nm.
#: Passes only cost anything in the few steps with a contact.
ITERATIONS = 50
CHUNK = 1000  # steps between checks of the contact count
HOPSCAPE_MIN_SECONDS = 0.5  # repeat sim.simulate until this much time is measured


def population(n, seed):
    """Per-drop parameters of the benchmark population as a list of dicts."""
    shape, release, contact = bench.population(n, seed=seed)
    columns = np.broadcast_arrays(shape.length, shape.radius, shape.mass, shape.inertia,
                                  release.centre_height(shape), release.angle, release.spin,
                                  release.vx, release.vy, contact.restitution, contact.friction)
    names = ("length", "radius", "mass", "inertia", "height", "angle", "spin", "vx", "vy",
             "restitution", "friction")
    return [{name: float(col[i]) for name, col in zip(names, columns)} for i in range(n)]


def pymunk_drop(drop, time_step, impacts=IMPACTS, record=False):
    """Run one drop in pymunk until its ``impacts``-th floor contact begins.

    Returns ``(contacts, simulated time [s], peaks)``; ``peaks`` (only when
    ``record``) holds the highest centre height of each flight between a
    contact and the next one [m].
    """
    space = pymunk.Space()
    space.gravity = (0.0, -sim.GRAVITY)
    space.damping = 1.0  # no velocity damping
    space.collision_slop = 0.0
    space.iterations = ITERATIONS
    body = pymunk.Body(drop["mass"], drop["inertia"])  # hopscape's 3D moment
    body.position = (0.0, drop["height"])
    body.angle = drop["angle"]
    body.angular_velocity = drop["spin"]
    body.velocity = (drop["vx"], drop["vy"] - 0.5 * sim.GRAVITY * time_step)  # leapfrog start
    half = 0.5 * drop["length"]
    shape = pymunk.Segment(body, (-half, 0.0), (half, 0.0), drop["radius"])
    shape.elasticity = drop["restitution"]
    shape.friction = drop["friction"]
    floor = pymunk.Segment(space.static_body, (-50.0, 0.0), (50.0, 0.0), 0.0)
    floor.elasticity = 1.0
    floor.friction = 1.0
    space.add(body, shape, floor)

    events = []  # (kind, step index)
    steps = [0]
    heights = []

    def begin(arbiter, space, data):
        events.append((True, len(heights) if record else steps[0]))

    def separate(arbiter, space, data):
        events.append((False, len(heights) if record else steps[0]))

    space.on_collision(None, None, begin=begin, separate=separate)
    step = space.step
    limit = int(math.ceil(TIME_LIMIT / time_step))
    done = 0
    while done < limit:
        if record:
            for _ in range(CHUNK):
                step(time_step)
                heights.append(body.position.y)
        else:
            for _ in range(CHUNK):
                step(time_step)
        done += CHUNK
        steps[0] = done
        if sum(kind for kind, _ in events) >= impacts:
            break
    contacts = sum(kind for kind, _ in events)
    peaks = []
    if record:
        left = None
        for kind, index in events:
            if kind and left is not None:
                peaks.append(max(heights[left:index]))
            left = None if kind else index
    return contacts, done * time_step, peaks


def time_pymunk(drops, time_step):
    start = time.perf_counter()
    contacts = [pymunk_drop(d, time_step)[0] for d in drops]
    seconds = time.perf_counter() - start
    return len(drops) / seconds, contacts


def time_hopscape(n, seed):
    shape, release, contact = bench.population(n, seed=seed)
    result = sim.simulate(shape, release, contact, impacts=IMPACTS)  # warm-up
    runs, start = 0, time.perf_counter()
    while True:
        result = sim.simulate(shape, release, contact, impacts=IMPACTS)
        runs += 1
        seconds = time.perf_counter() - start
        if seconds >= HOPSCAPE_MIN_SECONDS:
            break
    return n * runs / seconds, result


def convergence(drops, time_step):
    """Largest change of the flight peaks when the step is halved."""
    worst = (0.0, None, None)
    for i, d in enumerate(drops):
        c1, _, p1 = pymunk_drop(d, time_step, record=True)
        c2, _, p2 = pymunk_drop(d, time_step / 2, record=True)
        if c1 != c2 or len(p1) != len(p2):
            print(f"drop {i}: contacts {c1} vs {c2}, flights {len(p1)} vs {len(p2)}")
            worst = (math.inf, i, None)
            continue
        for k, (a, b) in enumerate(zip(p1, p2)):
            print(f"drop {i:3d} flight {k + 1}: {a * 1e3:9.4f} mm at dt, {b * 1e3:9.4f} mm at dt/2, "
                  f"change {abs(a - b) * 1e3:.4f} mm")
            if abs(a - b) > worst[0]:
                worst = (abs(a - b), i, k + 1)
    change, i, k = worst
    verdict = "converged" if change <= TOLERANCE else "NOT converged"
    print(f"dt {time_step:g} -> {time_step / 2:g}: largest change {change * 1e3:.4f} mm "
          f"(drop {i}, flight {k}); {verdict} at {TOLERANCE * 1e3:g} mm")
    return change <= TOLERANCE


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--drops", "-n", type=int, default=20, help="drops to simulate (default 20)")
    parser.add_argument("--seed", type=int, default=1, help="population seed (default 1)")
    parser.add_argument("--time-step", type=float, default=TIME_STEP, help=f"pymunk step [s] (default {TIME_STEP:g})")
    parser.add_argument("--json", action="store_true", help="print one JSON object only")
    parser.add_argument("--convergence", action="store_true",
                        help="instead of timing, compare the flight peaks at dt and dt/2")
    args = parser.parse_args(argv)
    if args.drops < 1:
        parser.error("--drops must be >= 1")
    if not args.time_step > 0:
        parser.error("--time-step must be > 0")
    drops = population(args.drops, args.seed)
    if args.convergence:
        return 0 if convergence(drops, args.time_step) else 1

    pymunk_rate, contacts = time_pymunk(drops, args.time_step)
    hopscape_rate, result = time_hopscape(args.drops, args.seed)
    short = sum(c < IMPACTS for c in contacts)
    failed = int(np.sum(result.status == sim.STATUS.index("failed")))
    if short:
        print(f"warning: {short} pymunk drops stopped at the {TIME_LIMIT} s bound before "
              f"{IMPACTS} contacts", file=sys.stderr)
    if failed:
        print(f"warning: sim.simulate reported {failed} failed drops", file=sys.stderr)
    if args.json:
        print(json.dumps({"pymunk_drops_per_second": pymunk_rate,
                          "hopscape_drops_per_second": hopscape_rate,
                          "time_step": args.time_step}))
        return 0
    print(f"{args.drops} benchmark drops (seed {args.seed}), {IMPACTS} impacts each")
    print(f"pymunk {pymunk.version} at dt = {args.time_step:g} s: {pymunk_rate:10.3f} drops/s")
    print(f"hopscape sim.simulate:          {hopscape_rate:10.1f} drops/s")
    print(f"ratio hopscape / pymunk:        {hopscape_rate / pymunk_rate:10.0f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
