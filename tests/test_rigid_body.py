"""Tests of calckit.physics.rigid_body and calckit.physics.mounts: a rigid body on mounts in six DOF.

Outside references: the decoupled closed forms of a body on mounts in the plane of its
centre of gravity (C. M. Harris and A. G. Piersol, Harris' Shock and Vibration Handbook,
5th ed., ch. 30, the uncoupled natural frequencies of a rigid body on resilient supports,
from memory); scipy.linalg.eigh of a K and M built here independently (each spring's
energy written with the scalar triple product, not the module's T^T k T); numpy.cross
for the moment of the unbalance; scipy.integrate.solve_ivp of the six equations for the
steady state; Newton's equilibrium of forces and moments for the static loads.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.integrate
import scipy.linalg
import sympy as sp

from calckit.errors import ModelError
from calckit.physics.mounts import (
    MountedBody,
    Unbalance,
    describe_mode,
    energy_shares,
    mount_forces,
    point_motion,
    steady_amplitudes,
)
from calckit.physics.rigid_body import Mount, RigidBody

t = sp.Symbol("t", real=True)
G = 9.80665


def _independent_matrices(mass, cg, inertia, mounts):
    """M, K, C built here: each spring along a unit direction d at arm r stretches by d.x + theta.(r x d)."""
    M = np.zeros((6, 6))
    M[:3, :3] = mass * np.eye(3)
    M[3:, 3:] = inertia
    K, C = np.zeros((6, 6)), np.zeros((6, 6))
    for position, axes, (ka, ks1, ks2), (ca, cs1, cs2) in mounts:
        r = np.asarray(position, float) - np.asarray(cg, float)
        R = np.asarray(axes, float)
        for d, k, c in ((R[:, 0], ks1, cs1), (R[:, 1], ks2, cs2), (R[:, 2], ka, ca)):
            g = np.concatenate([d, np.cross(r, d)])
            K += k * np.outer(g, g)
            C += c * np.outer(g, g)
    return M, K, C


def _rect(a, b, z):
    return [(-a, -b, z), (a, -b, z), (a, b, z), (-a, b, z)]


def _model(
    positions, stiffness, damping=(0, 0, 0), *, mass=1000, cg=(0, 0, 0), inertia=(300, 500, 600), axis="z"
):
    body = RigidBody(mass, cg, inertia)
    mounts = [Mount(f"M{i}", p, stiffness, damping, axis=axis) for i, p in enumerate(positions, start=1)]
    return body, MountedBody(body, mounts)


# ---------------------------------------------------------------------------
# the decoupled symmetric case against its closed forms


def test_decoupled_frequencies_match_the_closed_forms():
    """Four mounts in the CG's plane, symmetric, principal axes along x, y, z: six uncoupled modes."""
    ka, ks = 1.2e6, 4.0e5
    a, b = 0.9, 0.5
    m, Jx, Jy, Jz = 1000.0, 300.0, 500.0, 600.0
    _, mb = _model(_rect(a, b, 0), (ka, ks), mass=m, inertia=(Jx, Jy, Jz))
    w, phi = mb.modes()
    n = 4
    # Harris' Shock and Vibration Handbook, 5th ed., ch. 30 (uncoupled modes), from memory:
    expected = {
        "bounce": np.sqrt(n * ka / m),  # sqrt(sum k_z / m)
        "sway along x": np.sqrt(n * ks / m),
        "sway along y": np.sqrt(n * ks / m),
        "roll (about x)": np.sqrt(n * ka * b**2 / Jx),  # sqrt(sum k_z y_i^2 / I_x)
        "pitch (about y)": np.sqrt(n * ka * a**2 / Jy),  # sqrt(sum k_z x_i^2 / I_y)
        "yaw (about z)": np.sqrt(n * ks * (a**2 + b**2) / Jz),  # sqrt(sum k_s (x_i^2 + y_i^2) / I_z)
    }
    assert np.allclose(np.sort(w), np.sort(list(expected.values())), rtol=1e-10)
    M = np.array(mb.M.tolist(), dtype=float)
    for j in range(6):
        words = describe_mode(phi[:, j], M)
        assert words.startswith("mostly ") and "(100 %)" in words, words
        name = words[len("mostly ") : -len(" (100 %)")]
        if name.startswith("sway"):
            assert np.isclose(w[j], expected["sway along x"], rtol=1e-10)
        else:
            assert np.isclose(w[j], expected[name], rtol=1e-10), (name, w[j], expected[name])


def test_decoupled_bounce_by_vector_undetermined_coefficients_against_dsolve():
    """The bounce row of the decoupled model, derived by the engine, against sympy.dsolve of m z'' + k z = F cos(w t)."""
    _, mb = _model(_rect(1, 1, 0), (10**6, 10**5), mass=1000, inertia=(500, 500, 800))
    F = [0, 0, 400 * sp.cos(20 * t), 0, 0, 0]
    der = mb.multimass().particular(F, t=t)
    z = sp.Function("z")
    sol = sp.dsolve(1000 * z(t).diff(t, 2) + 4 * 10**6 * z(t) - 400 * sp.cos(20 * t), z(t)).rhs
    steady = sol.subs({s: 0 for s in sol.free_symbols - {t}})  # sympy.dsolve: the forced part alone
    assert sp.simplify(der.solution[2] - steady) == 0
    assert all(der.solution[i] == 0 for i in (0, 1, 3, 4, 5))


# ---------------------------------------------------------------------------
# coupled cases against scipy.linalg.eigh of matrices built here

COUPLED = [
    # name, positions, stiffness (axial, shear1, shear2), cg, inertia, axis
    ("six mounts below an offset CG", [(-1.1, -0.6, 0), (0, -0.6, 0), (1.1, -0.6, 0), (-1.1, 0.6, 0), (0, 0.6, 0),
                                       (1.1, 0.6, 0)], (1.8e6, 9e5, 7e5), (0.12, 0.04, 0.55),
     [[620, 0, -35], [0, 1450, 0], [-35, 0, 1600]], "z"),
    ("four mounts, sideways axes", _rect(0.8, 0.5, -0.3), (2e6, 5e5, 3e5), (0.1, -0.05, 0.2), (400, 700, 800), "y"),
]  # fmt: skip


@pytest.mark.parametrize("case", COUPLED, ids=[c[0] for c in COUPLED])
def test_coupled_modes_against_scipy_eigh(case):
    """Natural frequencies and mode shapes against scipy.linalg.eigh(K, M) of independently built matrices."""
    _, positions, stiffness, cg, inertia, axis = case
    body, mb = _model(positions, stiffness, cg=cg, inertia=inertia, axis=axis, mass=2500)
    mount = mb.mounts[0]
    axes = np.array(mount.axes.tolist(), dtype=float)
    M, K, _ = _independent_matrices(2500, cg, np.array(body.inertia.tolist(), float),
                                    [(p, axes, stiffness, (0, 0, 0)) for p in positions])  # fmt: skip
    assert np.allclose(np.array(mb.K.tolist(), dtype=float), K, rtol=1e-12, atol=1e-6)
    w2, vecs = scipy.linalg.eigh(K, M)  # scipy.linalg.eigh, the generalised symmetric problem
    w, phi = mb.modes()
    assert np.allclose(w, np.sqrt(w2), rtol=1e-9)
    for j in range(6):  # the same shapes up to sign, mass-normalised both
        assert np.allclose(np.abs(phi[:, j] @ M @ vecs[:, j]), 1.0, atol=1e-6)


def test_rotated_mount_against_independent_matrices():
    """A mount tilted 30 degrees about x: its stiffness in body axes against the triple-product build."""
    c, s = np.cos(np.pi / 6), np.sin(np.pi / 6)
    R = [[1, 0, 0], [0, c, -s], [0, s, c]]  # columns: shear x, shear (tilted), axial (tilted)
    positions = _rect(0.7, 0.4, -0.2)
    body = RigidBody(900, (0, 0, 0), (200, 300, 350))
    mounts = [Mount(f"M{i}", p, (1.5e6, 4e5, 2e5), axis=R) for i, p in enumerate(positions, start=1)]
    mb = MountedBody(body, mounts)
    _, K, _ = _independent_matrices(900, (0, 0, 0), np.diag([200, 300, 350]),
                                    [(p, R, (1.5e6, 4e5, 2e5), (0, 0, 0)) for p in positions])  # fmt: skip
    assert np.allclose(np.array(mb.K.tolist(), dtype=float), K, rtol=1e-9, atol=1e-3)


def test_describe_mode_names_coupling():
    """A shape with energy split between roll and sway is called coupled, with its shares (summing to 100 %)."""
    M = np.diag([1000.0, 1000.0, 1000.0, 250.0, 400.0, 500.0])
    phi = np.array([0, 0.6 / np.sqrt(1000), 0, 0.8 / np.sqrt(250), 0, 0])  # 36 % sway y, 64 % roll
    assert describe_mode(phi, M) == "coupled roll (about x) 64 % and sway along y 36 %"
    assert np.isclose(energy_shares(phi, M).sum(), 1.0)


# ---------------------------------------------------------------------------
# static loads: Newton's equilibrium


def test_static_loads_hold_the_weight_and_balance_its_moment():
    """Sum of mount loads = m g; their moments about the CG balance (statics), with an offset CG."""
    positions = [(-1.1, -0.6, 0), (0, -0.6, 0), (1.1, -0.6, 0), (-1.1, 0.6, 0), (0, 0.6, 0), (1.1, 0.6, 0)]
    body, mb = _model(positions, (1.8e6, 9e5), mass=3200, cg=(0.3, 0.1, 0.0), inertia=(600, 1400, 1600))
    _, loads = mb.static()
    P = np.array([ld.load for ld in loads])
    r = np.array(positions) - np.array([0.3, 0.1, 0.0])
    assert np.isclose(P.sum(), 3200 * G, rtol=1e-10)
    assert np.isclose(P @ r[:, 0], 0, atol=1e-6) and np.isclose(P @ r[:, 1], 0, atol=1e-6)
    # equal stiffness, mounts in the CG's plane: the loads are a plane in (x, y), P = a + b x + c y (rigid body)
    coeffs, *_ = np.linalg.lstsq(np.c_[np.ones(6), r[:, :2]], P, rcond=None)
    assert np.allclose(np.c_[np.ones(6), r[:, :2]] @ coeffs, P)
    assert np.allclose([ld.deflection for ld in loads], P / 1.8e6)


def test_overloaded_mount_is_reported_not_refused():
    """A mount loaded past its rating gives its load beside the rating (the sheet's failed check), no error."""
    body = RigidBody(4000, (0, 0, 0.4), (800, 1500, 1800))
    mounts = [Mount(f"M{i}", p, (1e6, 4e5), rated_load=8000, rated_deflection=0.008)
              for i, p in enumerate(_rect(1, 0.5, 0), start=1)]  # fmt: skip
    _, loads = MountedBody(body, mounts).static()
    assert all(ld.load > ld.rated_load for ld in loads)  # 4000 kg g / 4 = 9.8 kN > 8 kN
    assert np.isclose(loads[0].load, 4000 * G / 4)


def test_cg_outside_the_footprint_is_a_warning():
    """A CG beyond the mounts in plan: a warning note (and mounts in tension), not a crash."""
    body, mb = _model(_rect(0.5, 0.5, 0), (1e6, 3e5), mass=800, cg=(0.8, 0, 0), inertia=(200, 200, 300))
    fp = mb.footprint()
    assert not fp.inside and np.isclose(fp.distance, 0.3)
    assert fp.note == (
        "Warning: the centre of gravity (x = 0.8 m, y = 0 m in plan) lies 300 mm outside the footprint of the "
        "mounts (their convex hull in plan). Some mounts are unloaded or pulled: the static loads below say "
        "which; a mount in tension must be rated for it, or the mounts moved."
    )
    _, loads = mb.static()
    assert any(ld.in_tension for ld in loads)
    assert mb.footprint().inside is False
    _, inside = _model(_rect(0.5, 0.5, 0), (1e6, 3e5), cg=(0.2, 0.1, 0))
    assert inside.footprint().inside


# ---------------------------------------------------------------------------
# the unbalance and the forced response against solve_ivp


def test_unbalance_moment_against_numpy_cross():
    """Q = (F, r x F) of the unbalance against numpy.cross, at both parts of the turning force."""
    body = RigidBody(2000, (0.1, 0.2, 0.5), (400, 600, 700))
    ub = Unbalance((1.0, 0.0, 0.8), 0.002, 150, "x")
    Qc, Qs = ub.generalized(body)
    r = np.array([0.9, -0.2, 0.3])
    F0 = 0.002 * 150**2
    for Q, F in ((Qc, [0, F0, 0]), (Qs, [0, 0, F0])):
        Q = np.array(Q.tolist(), dtype=float).ravel()
        assert np.allclose(Q[:3], F) and np.allclose(Q[3:], np.cross(r, F))


def test_forced_response_against_solve_ivp():
    """The steady state under an unbalance, derived by the engine, against scipy.integrate.solve_ivp."""
    positions = [(-1.1, -0.6, 0), (0, -0.6, 0), (1.1, -0.6, 0), (-1.1, 0.6, 0), (0, 0.6, 0), (1.1, 0.6, 0)]
    inertia = [[620, 0, -35], [0, 1450, 0], [-35, 0, 1600]]
    cg = (0.12, 0.04, 0.55)
    body = RigidBody(3200, cg, inertia)
    mounts = [Mount(f"M{i}", p, (1.8e6, 9e5), (2200, 1100)) for i, p in enumerate(positions, start=1)]
    mb = MountedBody(body, mounts)
    speed = 155  # rad/s
    ub = Unbalance((0.9, 0.0, 0.75), 0.0006, speed, "x")
    der = mb.multimass().particular(ub.forcing(body, t), t=t)
    assert der.verified
    M, K, C = _independent_matrices(3200, cg, np.array(inertia, float),
                                    [(p, np.eye(3), (1.8e6, 9e5, 9e5), (2200, 1100, 1100)) for p in positions])  # fmt: skip
    Qc = np.array(ub.generalized(body)[0].tolist(), dtype=float).ravel()
    Qs = np.array(ub.generalized(body)[1].tolist(), dtype=float).ravel()
    q0 = np.array([float(e.subs(t, 0)) for e in der.solution])
    v0 = np.array([float(e.diff(t).subs(t, 0)) for e in der.solution])
    Minv = np.linalg.inv(M)

    def rhs(time, s):
        q, v = s[:6], s[6:]
        return np.concatenate(
            [v, Minv @ (Qc * np.cos(speed * time) + Qs * np.sin(speed * time) - C @ v - K @ q)]
        )

    times = np.linspace(0, 0.5, 801)
    ivp = scipy.integrate.solve_ivp(
        rhs, (0, 0.5), np.concatenate([q0, v0]), t_eval=times, rtol=1e-10, atol=1e-14
    )
    derived = np.array([sp.lambdify(t, e, "numpy")(times) * np.ones_like(times) for e in der.solution])
    assert np.max(np.abs(ivp.y[:6] - derived)) <= 1e-4 * np.max(np.abs(derived))
    # the amplitudes a checker reads: a flange point and the mounts' forces, from the integrated motion
    X = steady_amplitudes(der.solution, t, ub.speed)
    flange = (1.6, 0.0, 0.75)
    rP = np.array(flange) - np.array(cg)
    xP = ivp.y[:3] + np.cross(ivp.y[3:6].T, rP).T  # x_P = x + theta x r_P
    assert np.allclose(point_motion(body, X, flange), np.max(np.abs(xP[:, 400:]), axis=1), rtol=2e-3)
    r1 = np.array(positions[0]) - np.array(cg)
    u = ivp.y[:3] + np.cross(ivp.y[3:6].T, r1).T
    du = ivp.y[6:9] + np.cross(ivp.y[9:12].T, r1).T
    f1 = np.diag([9e5, 9e5, 1.8e6]) @ u + np.diag([1100, 1100, 2200]) @ du
    assert np.allclose(mount_forces(mb, X, speed)[0], np.max(np.abs(f1[:, 400:]), axis=1), rtol=2e-3)


# ---------------------------------------------------------------------------
# bad input: messages pinned

BAD = [
    (
        "non-symmetric inertia",
        lambda: RigidBody(1000, (0, 0, 0), [[300, 10, 0], [0, 400, 0], [0, 0, 500]]),
        "inertia: the inertia tensor is not symmetric: J[1,2] = 10 but J[2,1] = 0. Enter each product of inertia "
        "once and mirror it: J_xy = J_yx, J_xz = J_zx, J_yz = J_zy.",
    ),
    (
        "singular inertia",
        lambda: RigidBody(1000, (0, 0, 0), [[300, 300, 0], [300, 300, 0], [0, 0, 500]]),
        "inertia: the inertia tensor is not positive definite (principal moments 0, 500, 600 kg m^2): a "
        "rigid body has three positive principal moments of inertia. Check the moments and the products of inertia "
        "(their signs, and that they are about the centre of gravity); a singular tensor means a body without "
        "extent in some direction.",
    ),
    (
        "impossible inertia",
        lambda: RigidBody(1000, (0, 0, 0), (100, 100, 500)),
        "inertia: the principal moments 100, 100, 500 kg m^2 break the triangle rule J_1 + J_2 >= J_3 that every "
        "real body's moments obey. Check the moments of inertia; one of them is too large for the others.",
    ),
    (
        "mounts on one line",
        lambda: _model([(-1, 0, 0), (0, 0, 0), (1, 0, 0)], (1e6, 3e5)),
        "mounts: the mounts cannot hold the body: K is singular, and the body is free to move in roll (about x) "
        "with no mount resisting it. Give the mounts shear stiffness as well as axial, and place at least three "
        "of them not on one line.",
    ),
    (
        "no shear stiffness",
        lambda: _model(_rect(1, 0.5, 0), (1e6, 0)),
        "mounts: the mounts cannot hold the body: K is singular, and the body is free to move in sway along x "
        "with no mount resisting it. Give the mounts shear stiffness as well as axial, and place at least three "
        "of them not on one line.",
    ),
    (
        "unknown axis",
        lambda: Mount("M1", (0, 0, 0), (1e6, 1e5), axis="w"),
        'mount M1, axis: the axis \'w\' is not one of x, y, z. Name the mount\'s axial direction "x", "y" or '
        '"z", or give a 3 x 3 rotation matrix.',
    ),
    (
        "negative stiffness",
        lambda: Mount("M2", (0, 0, 0), (1e6, -1e5)),
        "mount M2, stiffness: the first shear stiffness is -100000. Give a stiffness of zero or more.",
    ),
    (
        "two mounts of one name",
        lambda: MountedBody(RigidBody(10, (0, 0, 0), (1, 1, 1)), [Mount("A", (0, 0, 0), (1, 1))] * 2),
        "mounts: the mount name(s) A appear twice. Name every mount once.",
    ),
]


@pytest.mark.parametrize(("label", "call", "message"), BAD, ids=[b[0] for b in BAD])
def test_bad_input_pinned(label, call, message):
    """Each refusal is a ModelError with its what, where and do."""
    with pytest.raises(ModelError) as info:
        call()
    assert str(info.value) == message
