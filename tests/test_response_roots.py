"""Issue 15, items 6 and 7: total responses whose roots have no closed form; conditions of a
symbolic total response, in one normal form.

Outside references: ``scipy.integrate.solve_ivp`` (DOP853) of the equation as a first-order
system, ``sympy.dsolve`` (general solution with CRootOf roots, its constants fitted here to the
initial values), ``numpy.roots``, and the quadratic formula for the RLC circuit
(``L C lambda^2 + R C lambda + 1 = 0`` has a double root when ``C R^2 = 4 L``; any circuits
text, from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.integrate
import sympy as sp

from calckit.engine import LinearODE
from calckit.engine.roots import normal_conditions

t = sp.Symbol("t", real=True)
R = sp.Rational


def _integrate(coefficients, forcing, initial, times):
    """x(t) of a_n x^(n) + ... + a_0 x = f(t) by scipy.integrate.solve_ivp (DOP853)."""
    a = [float(c) for c in coefficients]
    n = len(a) - 1
    f = sp.lambdify(t, forcing, "numpy")

    def rhs(time, y):
        top = (float(f(time)) - sum(a[n - j] * y[j] for j in range(n))) / a[0]
        return [*y[1:], top]

    sol = scipy.integrate.solve_ivp(
        rhs,
        (0, times[-1]),
        [float(v) for v in initial],
        t_eval=times,
        rtol=1e-12,
        atol=1e-13,
        method="DOP853",
    )
    assert sol.success
    return sol.y[0]


# ---------------------------------------------------------------------------
# item 6: numerical roots when there is no closed form

QUINTIC = [1, 0, 0, 0, 11, -2]  # lambda^5 + 11 lambda - 2: no roots in radicals


def test_quintic_roots_have_no_closed_form():
    """sympy.roots finds none of the roots of lambda^5 + 11 lambda - 2 (so the fallback is needed)."""
    lam = sp.Symbol("lambda")
    assert sum(sp.roots(sp.Poly(lam**5 + 11 * lam - 2, lam)).values()) == 0


def test_quintic_total_response_against_solve_ivp():
    """The total response of x^(5) + 11 x' - 2 x = cos t follows solve_ivp and meets the initial values."""
    initial = [R(1, 10), 0, R(-1, 5), 0, 1]
    res = LinearODE(QUINTIC).response(sp.cos(t), initial, t=t)
    times = np.linspace(0, 3, 31)
    reference = _integrate(QUINTIC, sp.cos(t), initial, times)
    np.testing.assert_allclose(res.evaluate(times), reference, rtol=1e-9, atol=1e-11)
    # the exponents used are the roots numpy.roots finds
    rates = {complex(e.args[0].coeff(t)) for e in res.transient.atoms(sp.exp)}
    numpy_roots = np.roots([float(c) for c in QUINTIC])
    assert len(rates) == 3  # one real root and two complex pairs (their real parts)
    for rate in rates:
        assert np.min(np.abs(numpy_roots.real - rate.real)) < 1e-12
    text = " ".join(step.explanation for step in res.steps if step.kind == "homogeneous")
    assert "computed numerically" in text and "significant digits" in text


def test_quintic_total_response_against_dsolve():
    """sympy.dsolve gives the general solution with CRootOf exponents; fitted to the same initial
    values (at 30 digits), it agrees with the total response."""
    x = sp.Function("x")
    initial = [0, 0, 0, 0, 1]
    eq = x(t).diff(t, 5) + 11 * x(t).diff(t) - 2 * x(t) - sp.cos(t)
    general = sp.dsolve(eq, x(t)).rhs
    constants = sorted(general.free_symbols - {t}, key=lambda s: s.name)
    rows = [sp.N(sp.diff(general, t, j).subs(t, 0), 30) for j in range(5)]
    matrix = sp.Matrix([[sp.re(row.coeff(c)) for c in constants] for row in rows])
    rest = sp.Matrix([sp.re(row.subs({c: 0 for c in constants})) for row in rows])
    values = dict(zip(constants, matrix.LUsolve(sp.Matrix(initial) - rest), strict=True))
    reference = general.subs(values)
    res = LinearODE(QUINTIC).response(sp.cos(t), initial, t=t)
    times = np.linspace(0, 2, 9)
    expected = np.array([float(sp.re(sp.N(reference.subs(t, sp.Float(tt, 30)), 20))) for tt in times])
    np.testing.assert_allclose(res.evaluate(times), expected, rtol=1e-9, atol=1e-12)


def test_higher_order_with_repeated_closed_factor_against_solve_ivp():
    """Order 8: (lambda^5 + 11 lambda - 2)(lambda + 1)^2 lambda: exact multiplicities, numerical quintic."""
    lam = sp.Symbol("lambda")
    poly = sp.Poly(sp.expand((lam**5 + 11 * lam - 2) * (lam + 1) ** 2 * lam), lam)
    coefficients = poly.all_coeffs()
    initial = [R(1, 20), 0, 0, R(1, 10), 0, 0, 0, R(-1, 2)]
    forcing = sp.exp(-t)  # resonant with the double root -1
    res = LinearODE(coefficients).response(forcing, initial, t=t)
    assert res.verified
    times = np.linspace(0, 2.5, 26)
    np.testing.assert_allclose(
        res.evaluate(times), _integrate(coefficients, forcing, initial, times), rtol=1e-8, atol=1e-10
    )


# ---------------------------------------------------------------------------
# item 7: conditions of a symbolic total response


def test_rlc_total_response_records_distinct_roots_condition():
    """[1, R/L, 1/(L C)]: the solution divides by sqrt(C R^2 - 4 L); the condition says so."""
    r, ell, cap = sp.symbols("R L C", positive=True)
    res = LinearODE([1, r / ell, 1 / (ell * cap)]).response(1, [0, 0], t=t)
    assert sp.Ne(cap * r**2 - 4 * ell, 0) in res.conditions
    # quadratic formula: a double root exactly where the condition fails, and there the form breaks down
    lam = sp.Symbol("lambda")
    double = sp.solve(sp.discriminant(ell * cap * lam**2 + r * cap * lam + 1, lam), r)
    assert double == [2 * sp.sqrt(ell / cap)]
    at_critical = res.solution.subs({r: 2, ell: 1, cap: 1}).subs(t, 1)
    assert at_critical.has(sp.zoo, sp.nan) or not sp.N(at_critical).is_finite
    # away from it the solution matches sympy.dsolve
    q = sp.Function("q")
    values = {r: 3, ell: 1, cap: 1}
    eq = q(t).diff(t, 2) + 3 * q(t).diff(t) + q(t) - 1
    ref = sp.dsolve(eq, q(t), ics={q(0): 0, q(t).diff(t).subs(t, 0): 0}).rhs
    for tt in (R(1, 2), 2):
        assert abs(sp.N(res.solution.subs(values).subs(t, tt) - ref.subs(t, tt), 30)) < 1e-25


def test_particular_conditions_normal_form():
    """x'' = t cos(k t): the solution divides by k (sympy.solve on its denominator finds k = 0 only);
    the condition is k != 0 once, not a power of k."""
    k = sp.Symbol("k")
    der = LinearODE([1, 0, 0]).particular(t * sp.cos(k * t), t=t)
    assert der.conditions == (sp.Ne(k, 0),)
    denominator = sp.fraction(sp.together(der.solution))[1]
    assert sp.solve(denominator, k) == [0]
    der = LinearODE([1, 0, 0, 0]).particular(sp.exp(k * t) * t, t=t)
    assert der.conditions == (sp.Ne(k, 0),)


def test_normal_conditions():
    """Numeric factors, powers and signs stripped, products split, duplicates removed (common practice,
    no source: a product is non-zero exactly when each factor is)."""
    k, m, c, w = sp.symbols("k m c omega")
    got = normal_conditions(
        [sp.Ne(-12 * k**2, 0), sp.Ne(-16 * k, 0), sp.Ne(m * (1 - k) ** 2, 0), sp.Ne(k - 1, 0), sp.true]
    )
    assert got == (sp.Ne(k, 0), sp.Ne(m, 0), sp.Ne(k - 1, 0))
    kept = sp.Ne((k - m * w**2) ** 2 + c**2 * w**2, 0)
    assert normal_conditions([kept]) == (kept,)
    positive = sp.Symbol("p", positive=True)
    assert normal_conditions([sp.Ne(3 * positive, 0)]) == ()


@pytest.mark.parametrize("coefficients", [[1, 2, 5], [2, 0, 0, 8]])
def test_numeric_models_have_no_conditions(coefficients):
    """Numbers only: nothing to record."""
    assert (
        LinearODE(coefficients).response(sp.cos(3 * t), [1] + [0] * (len(coefficients) - 2), t=t).conditions
        == ()
    )
