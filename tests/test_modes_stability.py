"""Issue 15, items 3-5: unstable models refused, repeated frequencies with commuting damping,
time histories of multi-mass solutions.

Outside references: ``scipy.linalg.eigh(K, M)`` for the generalised eigenproblem and
``scipy.integrate.solve_ivp`` (DOP853) of the full equations ``M x'' + C x' + K x = F``.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.integrate
import scipy.linalg
import sympy as sp

from calckit.errors import ModelError
from calckit.physics.modes import _float_modes
from calckit.physics.multimass import MultiMass

t = sp.Symbol("t", real=True)
R = sp.Rational


def _integrate(model: MultiMass, forcing, x0, v0, times):
    """x(t) of M x'' + C x' + K x = F(t) by scipy.integrate.solve_ivp (DOP853), shape (n, len(times))."""
    mass, damp, stiff = (np.array(mat.tolist(), float) for mat in (model.M, model.C, model.K))
    f = sp.lambdify(t, sp.Matrix(forcing), "numpy")
    n = model.size

    def rhs(time, y):
        force = np.ravel(np.array(f(time), dtype=float))
        acc = np.linalg.solve(mass, force - damp @ y[n:] - stiff @ y[:n])
        return np.concatenate([y[n:], acc])

    y0 = np.concatenate([np.array(x0, float), np.array(v0, float)])
    sol = scipy.integrate.solve_ivp(
        rhs, (0, times[-1]), y0, t_eval=times, rtol=1e-11, atol=1e-12, method="DOP853"
    )
    assert sol.success
    return sol.y[:n]


# ---------------------------------------------------------------------------
# item 3: an indefinite K is unstable, not a rigid-body mode

INDEFINITE_K = [[1, 2, 0], [2, 1, 1], [0, 1, 3]]


def test_indefinite_stiffness_refused_on_the_float_path():
    """scipy.linalg.eigh(K, M) finds a negative eigenvalue; the float path refuses instead of omega = 0."""
    mass = np.eye(3)
    reference = scipy.linalg.eigh(np.array(INDEFINITE_K, float), mass, eigvals_only=True)
    assert reference[0] < -1.0 and reference[1] > 0  # the model really is indefinite
    model = MultiMass(mass.tolist(), None, INDEFINITE_K)
    with pytest.raises(ModelError) as info:
        model.modes()
    assert "negative root omega^2 = " in str(info.value) and "unstable" in str(info.value)
    assert info.value.where == "K"
    # the value printed is the eigenvalue scipy finds, to the digits shown
    shown = float(str(info.value).split("omega^2 = ")[1].split(",")[0])
    assert shown == pytest.approx(reference[0], rel=1e-5)
    with pytest.raises(ModelError):
        _ = model.natural_frequencies


def test_indefinite_stiffness_refused_on_the_exact_path():
    """A 2 x 2 model (exact path) with K = [[1, 2], [2, 1]]: eigh gives -1 and 3; refused."""
    assert scipy.linalg.eigh([[1.0, 2.0], [2.0, 1.0]], eigvals_only=True)[0] == pytest.approx(-1.0)
    with pytest.raises(ModelError, match="negative root omega"):
        MultiMass([[1, 0], [0, 1]], None, [[1, 2], [2, 1]]).modes()


def test_true_rigid_body_mode_kept_on_the_float_path():
    """A free-free chain (K singular, eigh's smallest eigenvalue is rounding noise) keeps omega = 0."""
    m = [[1, 0, 0], [0, 3, 0], [0, 0, 1]]
    k = [[4, -4, 0], [-4, 5, -1], [0, -1, 1]]
    reference = scipy.linalg.eigh(np.array(k, float), np.array(m, float), eigvals_only=True)
    assert abs(reference[0]) < 1e-12 * reference[-1]  # scipy sees a zero eigenvalue
    modes = _float_modes(MultiMass(m, None, k))
    assert modes.frequencies[0] == 0.0
    np.testing.assert_allclose(np.array(modes.frequencies[1:]) ** 2, reference[1:], rtol=1e-12)


# ---------------------------------------------------------------------------
# item 4: repeated frequencies with damping that commutes (C M^-1 K = K M^-1 C)

# three equal masses on a symmetric ring of springs (omega^2 = 1, 4, 4), grounded dampers and
# one damper between masses 1 and 2: C commutes with K but is not alpha M + beta K
RING_M = [[1, 0, 0], [0, 1, 0], [0, 0, 1]]
RING_K = [[3, -1, -1], [-1, 3, -1], [-1, -1, 3]]
RING_C = [[R(2, 10), R(-1, 10), 0], [R(-1, 10), R(2, 10), 0], [0, 0, R(1, 10)]]


def _householder(v) -> sp.Matrix:
    """A rational orthogonal matrix I - 2 v v^T / (v^T v)."""
    v = sp.Matrix(v)
    return sp.eye(len(v)) - 2 * v * v.T / (v.T * v)[0, 0]


def _six_mass():
    """A coupled 6-mass model: the ring and a 3-mass chain mixed by a rational orthogonal matrix.

    Its frequency equation has an irreducible cubic factor (the chain), so the modes are in floats,
    and the double frequency omega^2 = 4 of the ring.
    """
    chain_k = sp.Matrix([[2, -1, 0], [-1, 2, -1], [0, -1, 1]])
    h = _householder([1, 1, 0, 1, 0, 1])
    k = h * sp.diag(sp.Matrix(RING_K), chain_k) * h.T
    c = h * sp.diag(sp.Matrix(RING_C), R(1, 20) * sp.eye(3) + R(1, 50) * chain_k) * h.T
    return sp.eye(6).tolist(), c.tolist(), k.tolist()


def _commute(m, c, k) -> float:
    """|| C M^-1 K - K M^-1 C || relative to || C || || K ||, in numpy floats."""
    m, c, k = (np.array(sp.Matrix(x).tolist(), float) for x in (m, c, k))
    lhs = c @ np.linalg.solve(m, k)
    return float(np.linalg.norm(lhs - lhs.T) / (np.linalg.norm(c) * np.linalg.norm(k)))


@pytest.mark.parametrize("which", ["ring, exact", "ring, floats", "six masses, floats"])
def test_repeated_frequencies_with_commuting_damping(which):
    """The modes uncouple C: frequencies agree with scipy.linalg.eigh(K, M), Phi^T M Phi = I,
    Phi^T K Phi = diag(omega^2) and Phi^T C Phi diagonal (checked here in numpy)."""
    m, c, k = (RING_M, RING_C, RING_K) if which.startswith("ring") else _six_mass()
    assert _commute(m, c, k) < 1e-14  # Caughey and O'Kelly's condition holds
    model = MultiMass(m, c, k)
    modes = _float_modes(model) if which == "ring, floats" else model.modes()
    assert modes.exact == (which == "ring, exact")
    mass, damp, stiff = (np.array(sp.Matrix(x).tolist(), float) for x in (m, c, k))
    reference = scipy.linalg.eigh(stiff, mass, eigvals_only=True)
    assert np.min(np.diff(reference)) < 1e-9  # a repeated frequency
    omegas = np.array([float(w) for w in modes.frequencies])
    np.testing.assert_allclose(omegas**2, reference, rtol=1e-10, atol=1e-12)
    phi = np.array(sp.Matrix(modes.shapes).evalf().tolist() if modes.exact else modes.shapes, float)
    np.testing.assert_allclose(phi.T @ mass @ phi, np.eye(len(m)), atol=1e-10)
    np.testing.assert_allclose(phi.T @ stiff @ phi, np.diag(reference), atol=1e-10)
    modal_c = phi.T @ damp @ phi
    assert np.max(np.abs(modal_c - np.diag(np.diag(modal_c)))) < 1e-10
    # the repeated pair has distinct damping, so no basis of that eigenspace would do by chance
    pair = [i for i in range(len(m) - 1) if abs(reference[i + 1] - reference[i]) < 1e-9][0]
    assert abs(modal_c[pair, pair] - modal_c[pair + 1, pair + 1]) > 0.05


@pytest.mark.parametrize("which", ["ring", "six masses"])
def test_repeated_frequencies_response_against_solve_ivp(which):
    """The total response by modal superposition follows scipy.integrate.solve_ivp of the full equations."""
    m, c, k = (RING_M, RING_C, RING_K) if which == "ring" else _six_mass()
    model = MultiMass(m, c, k)
    n = model.size
    forcing = [sp.cos(3 * t)] + [0] * (n - 2) + [1] if which == "ring" else [1] + [0] * (n - 1)
    x0 = [R(1, 100) * (i + 1) for i in range(n)]
    v0 = [R(-1, 50) * (-1) ** i for i in range(n)]
    res = model.response(forcing, x0, v0, t=t)
    times = np.linspace(0, 10, 51)
    np.testing.assert_allclose(res.evaluate(times), _integrate(model, forcing, x0, v0, times), atol=1e-8)


# ---------------------------------------------------------------------------
# item 5: Derivation.evaluate and Response.evaluate of a multi-mass model


def test_evaluate_shapes_and_values_against_solve_ivp():
    """(n, len(t)) from both evaluate methods, equal to solve_ivp; (n,) at one time; (n, *shape) in general."""
    m = [[2, 0, 0], [0, 1, 0], [0, 0, 1]]
    k = [[30, -10, 0], [-10, 20, -10], [0, -10, 10]]
    c = (R(1, 10) * sp.Matrix(m) + R(1, 100) * sp.Matrix(k)).tolist()
    model = MultiMass(m, c, k)
    forcing = [5 * sp.cos(3 * t), 0, sp.exp(-t)]
    x0, v0 = [R(1, 100), 0, R(-1, 100)], [0, R(1, 20), 0]
    res = model.response(forcing, x0, v0, t=t)
    times = np.linspace(0, 6, 31)
    ours = res.evaluate(times)
    assert ours.shape == (3, 31)
    np.testing.assert_allclose(ours, _integrate(model, forcing, x0, v0, times), atol=1e-8)
    # the steady state alone is the response from the steady state's own initial values
    steady = model.particular(forcing, t=t)
    xs0 = [float(e) for e in steady.solution.subs(t, 0)]
    vs0 = [float(e) for e in steady.solution.diff(t).subs(t, 0)]
    np.testing.assert_allclose(steady.evaluate(times), _integrate(model, forcing, xs0, vs0, times), atol=1e-8)
    np.testing.assert_allclose(res.evaluate(times, part="steady_state"), steady.evaluate(times), atol=1e-14)
    assert res.evaluate(1.5).shape == (3,)
    assert res.evaluate(np.zeros((2, 4))).shape == (3, 2, 4)


def test_evaluate_symbolic_model_with_values():
    """A symbolic model evaluates with values by name; compared with solve_ivp at those values."""
    kk = sp.Symbol("k", positive=True)
    model = MultiMass([[1, 0], [0, 1]], None, [[2 * kk, -kk], [-kk, 2 * kk]])
    der = model.particular([sp.cos(t), 0], t=t)
    times = np.linspace(0, 4, 21)
    ours = der.evaluate(times, k=3)
    assert ours.shape == (2, 21)
    numeric = MultiMass([[1, 0], [0, 1]], None, [[6, -3], [-3, 6]])
    sol = der.solution.subs(kk, 3)
    x0 = [float(e) for e in sol.subs(t, 0)]
    v0 = [float(e) for e in sol.diff(t).subs(t, 0)]
    np.testing.assert_allclose(ours, _integrate(numeric, [sp.cos(t), 0], x0, v0, times), atol=1e-8)
