"""The compliant contact against Hertz's closed forms (K. L. Johnson,
*Contact Mechanics*, Cambridge University Press 1985, section 11.4;
docs/physics.md sections 7 and 9), each check integrated independently
with scipy's solve_ivp (dense, tight tolerances) rather than with the
engine's own fixed-step integrator."""
from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from hopscape import sim
from hopscape.sim import compliant, contact_load, damping, hertz
from hopscape.sim.flight import GRAVITY
from hopscape.sim.materials import effective_modulus

STEEL = (200e9, 0.3)  # docs/physics.md section 8 (common practice)
E_STEEL = effective_modulus(*STEEL, *STEEL)
RADIUS, DENSITY = 5e-3, 7850.0
MASS = DENSITY * 4 / 3 * np.pi * RADIUS ** 3
SPEED = np.sqrt(2 * GRAVITY * 0.1)  # from 0.1 m


def dense_contact(mass, stiffness, chi, speed):
    """Independent reference: solve_ivp of m x'' = -K x^1.5 (1 + chi x'),
    duration, separation speed, largest indentation and peak force read
    from a dense sampling of the solution."""
    def rhs(t, y):
        x, v = y
        return [v, -stiffness * max(x, 0.0) ** 1.5 * (1 + chi * v) / mass]

    def leaves(t, y):
        return y[0]
    leaves.terminal, leaves.direction = True, -1
    span = 100 * (mass ** 2 / stiffness ** 2 / speed) ** 0.2
    sol = solve_ivp(rhs, (0, span), [0.0, speed], events=leaves, rtol=1e-11, atol=1e-16 * speed,
                    dense_output=True, first_step=span * 1e-9)
    t_c = sol.t_events[0][0]
    t = np.linspace(0, t_c, 20001)
    x, v = sol.sol(t)
    force = stiffness * np.maximum(x, 0) ** 1.5 * (1 + chi * v)
    return t_c, -sol.y_events[0][0][1], x.max(), force.max()


def test_undamped_sphere_matches_johnson_closed_forms():
    # Johnson 1985, section 11.4: t_c = 2.868 (m^2/(R E*^2 v))^(1/5),
    # delta_max = (15 m v^2 / (16 E* sqrt(R)))^(2/5), F = (4/3) E* sqrt(R) delta^1.5
    stiffness = compliant.hertz_stiffness(E_STEEL, RADIUS)
    t_c, rebound, depth, force = dense_contact(MASS, stiffness, 0.0, SPEED)
    # the published constant 2.868 has four digits: 2e-4 relative
    assert t_c == pytest.approx(hertz.hertz_duration(MASS, SPEED, E_STEEL, RADIUS), rel=2e-4)
    assert depth == pytest.approx(hertz.hertz_indentation(MASS, SPEED, E_STEEL, RADIUS), rel=1e-8)
    assert force == pytest.approx(hertz.hertz_force(depth, E_STEEL, RADIUS), rel=1e-8)
    assert rebound == pytest.approx(SPEED, rel=1e-8)  # elastic: no energy lost


def test_the_documented_steel_ball_value():
    # docs/physics.md section 9 [derived]: steel sphere R = 5 mm from 0.1 m
    # onto steel lasts 32.9 us (recomputed here with Johnson's formula)
    assert hertz.hertz_duration(MASS, SPEED, E_STEEL, RADIUS) * 1e6 == pytest.approx(32.9, abs=0.05)


def test_fixed_step_integrator_matches_dense_reference():
    # the engine's RK4 kernel (scaled) against solve_ivp of the scaled
    # problem; 1e-6: the kernel's 2000 steps per contact
    c = np.array([0.0, 0.3, 2.0, 30.0])
    run = compliant.scaled_contacts(c)
    for i, ci in enumerate(c):
        t_c, rebound, depth, force = dense_contact(1.0, 1.25, ci, 1.0)
        assert run.duration[i] == pytest.approx(t_c, rel=1e-6)
        assert -run.rebound[i] == pytest.approx(rebound, rel=1e-6)
        assert run.largest_indentation[i] == pytest.approx(depth, rel=1e-6)
        # scaled force is F / (K delta_0^1.5); the reference has K = 5/4.
        # 2e-5: a heavily damped contact peaks sharply early, between the
        # kernel's steps (its parabola through three samples: 6.7e-6 at c = 30)
        assert 1.25 * run.peak_force[i] == pytest.approx(force, rel=2e-5)


def test_scaled_undamped_duration():
    # 2.94328 = 2 x 1.47164 (Johnson 1985, section 11.4) and 2.868 = 2.94328 (15/16)^(2/5)
    assert compliant.scaled_contacts([0.0]).duration[0] == pytest.approx(compliant.HERTZ_SCALED_DURATION, rel=2e-6)
    assert compliant.HERTZ_SCALED_DURATION * (15 / 16) ** 0.4 == pytest.approx(hertz.HERTZ_DURATION_FACTOR, abs=5e-4)


def _capsule_drop(angle_deg, restitution=1.0):
    capsule = sim.Capsule(length=0.014, radius=0.0035, density=1200.0)
    release = sim.Release(height=0.3, angle=np.radians(angle_deg))
    return capsule, sim.simulate(capsule, release, sim.Contact(restitution, 0.0), impacts=1)


def test_head_on_capsule_end_is_the_sphere_case_with_its_mass():
    # upright capsule: the cap strikes under the centre, r_x = 0, so
    # m* = 1/K_nn = m and the cap radius is Hertz's radius; Johnson's sphere
    # formulas with the capsule's mass (1e-5: the table's RK4 value of 2.94328)
    capsule, result = _capsule_drop(90.0)
    loads = contact_load.impact_loads(result, E_STEEL)
    v = np.sqrt(2 * GRAVITY * (0.3 - 0.007 - 0.0035))
    assert loads["normal_speed"][0, 0] == pytest.approx(v, rel=1e-9)
    assert loads["effective_mass"][0, 0] == pytest.approx(float(capsule.mass), rel=1e-12)
    assert loads["contact_time"][0, 0] == pytest.approx(
        hertz.hertz_duration(capsule.mass, v, E_STEEL, 0.0035), rel=2e-4)
    depth = hertz.hertz_indentation(capsule.mass, v, E_STEEL, 0.0035)
    assert loads["indentation"][0, 0] == pytest.approx(depth, rel=1e-5)
    assert loads["peak_force"][0, 0] == pytest.approx(hertz.hertz_force(depth, E_STEEL, 0.0035), rel=1e-5)
    assert loads["peak_pressure"][0, 0] == pytest.approx(hertz.hertz_peak_pressure(depth, E_STEEL, 0.0035), rel=1e-5)
    assert hertz.FEATURES[loads["feature"][0, 0]] == "cap"


def test_tilted_capsule_duration_follows_its_effective_mass():
    # docs/physics.md section 4: m* = 1 / (1/m + r_x^2 / I) at a tilted
    # cap; Johnson's t_c ~ m*^(2/5) v^(-1/5) with the contact's own v
    capsule, result = _capsule_drop(40.0)
    loads = contact_load.impact_loads(result, E_STEEL)
    r_x, _ = capsule.contact_offset(result.theta[0, 0])
    m_star = 1 / (1 / capsule.mass + r_x ** 2 / capsule.inertia)
    assert loads["effective_mass"][0, 0] == pytest.approx(float(m_star), rel=1e-12)
    assert m_star < 0.6 * capsule.mass  # about half: the angle matters
    v = loads["normal_speed"][0, 0]
    assert loads["contact_time"][0, 0] == pytest.approx(hertz.hertz_duration(m_star, v, E_STEEL, 0.0035), rel=2e-4)


def test_damped_contact_outputs_match_a_dense_integration():
    # a restitution of 0.4: the table's chi in an independent dense
    # integration gives the same duration, force, indentation (1e-4: table
    # interpolation) and restitution (1e-3: the calibration's promise)
    capsule, result = _capsule_drop(90.0, restitution=0.4)
    loads = contact_load.impact_loads(result, E_STEEL)
    v = loads["normal_speed"][0, 0]
    chi = damping.damping_for_restitution(0.4, v)
    stiffness = compliant.hertz_stiffness(E_STEEL, 0.0035)
    t_c, rebound, depth, force = dense_contact(float(capsule.mass), stiffness, chi, v)
    assert rebound / v == pytest.approx(0.4, abs=1e-3)
    assert loads["contact_time"][0, 0] == pytest.approx(t_c, rel=1e-4)
    assert loads["indentation"][0, 0] == pytest.approx(depth, rel=1e-4)
    assert loads["peak_force"][0, 0] == pytest.approx(force, rel=1e-4)


def test_line_and_face_contacts_get_no_hertz_outputs():
    # a capsule landing exactly flat touches along its band (not Hertzian)
    _, result = _capsule_drop(0.0)
    loads = contact_load.impact_loads(result, E_STEEL)
    assert hertz.FEATURES[loads["feature"][0, 0]] == "band"
    assert np.isnan(loads["contact_time"][0, 0]) and np.isnan(loads["peak_force"][0, 0])
    assert loads["normal_speed"][0, 0] > 0


def test_no_materials_give_nan_contact_outputs():
    _, result = _capsule_drop(60.0)
    loads = contact_load.impact_loads(result, np.nan)
    assert np.isnan(loads["contact_time"][0, 0]) and np.isfinite(loads["normal_speed"][0, 0])


def _tilted_capsule_contact(modulus):
    """A frictionless elastic cap contact of a capsule at 40 deg falling at
    2 m/s, followed with the body's own state (height, angle, their rates)."""
    capsule = sim.Capsule(length=0.014, radius=0.0035, density=1200.0)
    m, inertia, half = float(capsule.mass), float(capsule.inertia), 0.007
    theta0, speed = np.radians(40.0), 2.0
    stiffness = compliant.hertz_stiffness(modulus, 0.0035)

    def depth(theta):  # docs/physics.md section 2, lower cap: d and d'
        return half * np.sin(theta) + 0.0035, half * np.cos(theta)

    def indentation(y):
        d, d_prime = depth(y[1])
        return d - y[0], d_prime * y[3] - y[2]

    def force(y):
        return compliant.damped_hertz_force(*indentation(y), stiffness, 0.0)

    def derivative(y):
        f = force(y)
        return np.stack([y[2], y[3], f / m, -depth(y[1])[1] * f / inertia])  # torque r_x F, r_x = -d'

    r_x = -depth(theta0)[1]
    m_star = 1 / (1 / m + r_x ** 2 / inertia)
    t_c = hertz.hertz_duration(m_star, speed, modulus, 0.0035)
    run = compliant.integrate_contacts(np.array([[depth(theta0)[0]], [theta0], [-speed], [0.0]]), derivative,
                                       indentation, force, t_c / 2000, 6000)
    # rigid, frictionless, e = 1 (docs/physics.md section 4): p = 2 m* v
    p = 2 * m_star * speed
    rigid = (-speed + p / m, r_x * p / inertia)
    return run, rigid, t_c, (m, inertia, speed)


@pytest.mark.slow  # two contacts of 2000 steps each (~1.3 s)
def test_integrator_follows_a_tilted_capsule_to_the_rigid_answer():
    # Routh's method (Stronge 2000) is the stiff limit of the compliant
    # contact: without friction and with e = 1 every law gives u_n' = -u_n
    run, rigid, t_c, (m, inertia, speed) = _tilted_capsule_contact(E_STEEL)
    stiff, stiff_rigid, _, _ = _tilted_capsule_contact(100 * E_STEEL)
    vy, omega = run.state[2, 0], run.state[3, 0]
    # the angle turns by 0.0024 rad during the contact: 1e-3 of the speed off
    assert vy == pytest.approx(rigid[0], abs=1e-3 * speed)
    assert omega == pytest.approx(rigid[1], rel=1e-4)
    # and the miss shrinks as the contact stiffens (a hundredfold modulus)
    assert abs(stiff.state[2, 0] - rigid[0]) < 0.2 * abs(vy - rigid[0])
    # energy is conserved by the elastic contact (to the integrator's accuracy)
    assert 0.5 * m * vy ** 2 + 0.5 * inertia * omega ** 2 == pytest.approx(0.5 * m * speed ** 2, rel=1e-8)
    # and it lasts Johnson's time with the effective mass (sections 4 and 7)
    assert run.duration[0] == pytest.approx(t_c, rel=1e-3)
