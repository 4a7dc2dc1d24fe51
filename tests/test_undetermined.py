"""The derivation engine: particular solutions by undetermined coefficients.

Every answer is checked by back-substitution done here with ``sympy.diff`` and
``sympy.simplify`` (independent of the engine's own check), and a selection is
compared with ``sympy.dsolve`` (hint ``nth_linear_constant_coeff_undetermined_coefficients``):
the difference of two particular solutions must satisfy the homogeneous equation.
"""

from __future__ import annotations

from dataclasses import FrozenInstanceError
from fractions import Fraction

import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import calckit as ck
from calckit.engine import steps as S

t = sp.Symbol("t", real=True)
m, c, k, A, r, w, a, P, tau = sp.symbols("m c k A r omega a P tau", positive=True)


def residual(coeffs, x, f):
    """L[x] - f, simplified by sympy alone (the outside check)."""
    n = len(coeffs) - 1
    lhs = sum(cf * sp.diff(x, t, n - i) for i, cf in enumerate(coeffs))
    return sp.simplify(sp.expand(lhs - f))


# A named corpus: (name, coefficients highest first, forcing, expected x_p or None).
# Expected closed forms are worked by hand in the comment beside each case.
CORPUS = [
    # x'' + x = cos 2t -> A(1-4) = 1, A = -1/3 (no resonance)
    ("harmonic off resonance", [1, 0, 1], sp.cos(2 * t), -sp.cos(2 * t) / 3),
    # x'' + 4x = cos 2t: 2i is a simple root; x_p = t sin(2t)/4 (Boyce & DiPrima 11th ed.,
    # sec. 3.5, the modification rule, from memory)
    ("undamped harmonic resonance", [1, 0, 4], sp.cos(2 * t), t * sp.sin(2 * t) / 4),
    # m x'' + k x = cos(sqrt(k/m) t): forcing at the natural frequency, c = 0
    ("undamped resonance, symbolic", [m, 0, k], sp.cos(sp.sqrt(k / m) * t), None),
    # x' - x = e^t: 1 is a simple root -> t e^t
    ("exponential at a simple root", [1, -1], sp.exp(t), t * sp.exp(t)),
    # x'' + 2x' + x = e^-t: -1 is a double root -> t^2 e^-t / 2
    ("exponential at a double root", [1, 2, 1], sp.exp(-t), t**2 * sp.exp(-t) / 2),
    # k = 0: m x'' + c x' = F0 -> x_p = F0 t / c
    ("no spring, constant force", [m, c, 0], P, P * t / c),
    # c = k = 0: x'' = t^2 + 3 -> t^4/12 + 3 t^2/2
    ("no spring, no damper", [1, 0, 0], t**2 + 3, t**4 / 12 + 3 * t**2 / 2),
    ("third order", [1, 1, 4, 4], sp.exp(-t) + sp.sin(2 * t), None),
    ("fourth order, double complex root", [1, 0, 2, 0, 1], sp.cos(t), None),
    ("fourth order, zero root of multiplicity 2", [1, 0, 1, 0, 0], t + 1, None),
    ("t^n e^at sin bt product", [1, 2, 5], t**2 * sp.exp(-t) * sp.sin(2 * t), None),
    ("product of harmonics", [1, 3, 2], sp.sin(2 * t) * sp.cos(3 * t) + sp.cos(t) ** 2, None),
    ("hyperbolic", [1, 0, -4], sp.cosh(2 * t) + sp.sinh(t), None),
    ("symbolic harmonic", [m, c, k], A * sp.cos(r * t), None),
    ("symbolic product", [m, c, k], t * sp.exp(-t) * sp.sin(w * t), None),
    ("symbolic decay", [m, c, k], P * sp.exp(-t / tau), None),
    ("30-term sum", [2, sp.Rational(3, 10), 50], sum(sp.cos(i * t) / i for i in range(1, 31)), None),
    ("mixed issue example", [m, c, k], A * sp.cos(w * t) + a * t**2 + P * sp.exp(-t / tau), None),
    # Square roots of rationals: the multiplicity test must know sqrt(3)**2 = 3, sqrt(12) = 2 sqrt(3)
    # and sqrt(6) = sqrt(2) sqrt(3), or it misses the resonance (then the check by substitution fails).
    # x'' + 3x = cos(sqrt(3) t): x_p = t sin(sqrt(3) t) / (2 sqrt(3)), the modification rule by hand
    ("resonance at sqrt(3)", [1, 0, 3], sp.cos(sp.sqrt(3) * t), t * sp.sin(sp.sqrt(3) * t) / (2 * sp.sqrt(3))),
    # (D^2 + 3)^2 x = cos(sqrt(3) t): double root; x_p = -t^2 cos(sqrt(3) t) / 24 (worked by hand:
    # t^2 (A cos + B sin) substituted, 8 (sqrt 3)^2 A = -1 ... gives A = -1/24, B = 0)
    ("double resonance at sqrt(3)", [1, 0, 6, 0, 9], sp.cos(sp.sqrt(3) * t), -t**2 * sp.cos(sp.sqrt(3) * t) / 24),
    # x'' + 6x forced at sqrt(2) sqrt(3) = sqrt(6): resonance only if the relation is known
    ("resonance at sqrt(2) sqrt(3)", [1, 0, 6], sp.sin(sp.sqrt(2) * sp.sqrt(3) * t) + sp.cos(sp.sqrt(6) * t), None),
    ("surds in the coefficients", [2, sp.sqrt(3), 5], sp.cos(sp.sqrt(12) * t) / sp.sqrt(3), None),
    ("reciprocal surd resonance", [3, 0, 1], sp.cos(t / sp.sqrt(3)) + t * sp.sin(3 ** sp.Rational(-1, 2) * t), None),
]


@pytest.mark.parametrize("name, coeffs, f, expected", CORPUS, ids=[case[0] for case in CORPUS])
def test_corpus_back_substitution(name, coeffs, f, expected):
    """Every corpus case satisfies the equation (checked by sympy.simplify) and is verified."""
    der = ck.LinearODE(coeffs).particular(f, t=t)
    assert der.verified
    assert residual(coeffs, der.solution, f) == 0, f"reproduce: ck.LinearODE({coeffs}).particular({f}, t=t)"
    if expected is not None:
        assert sp.simplify(der.solution - expected) == 0


def test_corpus_float_input_is_exact():
    """2.5 is taken as 5/2, so the resonance at sqrt(k/m) = 2 is found exactly."""
    der = ck.LinearODE([2.5, 0, 10.0]).particular(1.5 * sp.cos(2 * t), t=t)
    (res,) = der.steps_of("resonance")
    assert res.multiplicity == 1
    # x_p = F t sin(wt) / (2 m w) for m x'' + k x = F cos(wt) at w = sqrt(k/m)
    # (Rao, Mechanical Vibrations, 5th ed., eq. (3.17), from memory): 1.5 t sin 2t / 10
    assert sp.simplify(der.solution - sp.Rational(3, 20) * t * sp.sin(2 * t)) == 0


def test_fraction_input():
    """Fractions are taken exactly."""
    der = ck.LinearODE([Fraction(1, 2), 0, 2]).particular(sp.Integer(1), t=t)
    assert der.solution == sp.Rational(1, 2)


# --- agreement with sympy.dsolve --------------------------------------------------------

DSOLVE_CASES = [
    ([1, 2, 5], sp.cos(3 * t) + t),
    ([1, 0, 4], sp.cos(2 * t)),
    ([1, 2, 1], t * sp.exp(-t)),
    ([1, 1, 4, 4], sp.exp(-t) + sp.sin(2 * t)),
    ([1, 3, 2], t**2 * sp.exp(-t) * sp.sin(2 * t)),
    ([1, 0, 0], t**2),
]


@pytest.mark.parametrize("coeffs, f", DSOLVE_CASES)
def test_agrees_with_dsolve(coeffs, f):
    """x_p(calckit) - x_p(dsolve) solves the homogeneous equation (sympy.dsolve, hint
    nth_linear_constant_coeff_undetermined_coefficients)."""
    x = sp.Function("x")
    n = len(coeffs) - 1
    ode = sum(cf * x(t).diff(t, n - i) for i, cf in enumerate(coeffs)) - f
    ref = sp.dsolve(ode, x(t), hint="nth_linear_constant_coeff_undetermined_coefficients").rhs
    ref_p = ref.subs({s: 0 for s in ref.free_symbols if s.name.startswith("C")})
    ours = ck.LinearODE(coeffs).particular(f, t=t).solution
    assert residual(coeffs, ours - ref_p, 0) == 0


# --- textbook closed forms for A cos(rt) -------------------------------------------------


def test_harmonic_closed_form():
    """x_p = D0 cos rt + D1 sin rt with D0 = A (k - m r^2)/((k - m r^2)^2 + (c r)^2) and
    D1 = A c r/(...) (Thomson & Dahleh, Theory of Vibration with Applications, 5th ed.,
    sec. 3.1, from memory)."""
    der = ck.Oscillator(m, c, k).particular(A * sp.cos(r * t), t=t)
    den = (k - m * r**2) ** 2 + (c * r) ** 2
    d0 = A * (k - m * r**2) / den
    d1 = A * c * r / den
    assert sp.simplify(der.solution - (d0 * sp.cos(r * t) + d1 * sp.sin(r * t))) == 0
    (solved,) = der.steps_of("solved-coefficients")
    (cos_unknown, sin_unknown), values = der.steps_of("trial-form")[0].unknowns, dict(solved.values)
    assert sp.simplify(values[sin_unknown] - d1) == 0 and sp.simplify(values[cos_unknown] - d0) == 0
    # with symbols of unknown sign, the condition under which it holds is recorded, not assumed
    mm, cc, kk, rr = sp.symbols("m c k r")
    der = ck.Oscillator(mm, cc, kk).particular(A * sp.cos(rr * t), t=t)
    den = (kk - mm * rr**2) ** 2 + (cc * rr) ** 2
    assert any(sp.simplify(cond.lhs - den) == 0 for cond in der.conditions if isinstance(cond, sp.Ne))


def test_undamped_response_in_phase_with_force():
    """With c = 0 the sine coefficient D1 is 0: the response is in phase (or antiphase) with
    the force (Thomson & Dahleh, 5th ed., sec. 3.1, from memory)."""
    der = ck.Oscillator(m, 0, k).particular(A * sp.cos(r * t), t=t)
    assert sp.simplify(der.solution - A * sp.cos(r * t) / (k - m * r**2)) == 0
    assert not der.solution.has(sp.sin)


# --- steps kept as data -------------------------------------------------------------------


def test_steps_in_hand_calculation_order():
    """The steps come in the order an engineer writes them."""
    der = ck.Oscillator(2, 4, 50).particular(3 * sp.cos(2 * t), t=t)
    kinds = [step.kind for step in der.steps]
    assert kinds == [
        "equation",
        "forcing-split",
        "characteristic",
        "resonance",
        "trial-form",
        "derivatives",
        "substitution",
        "coefficient-equations",
        "solved-coefficients",
        "particular-solution",
        "verification",
    ]
    for step in der.steps:
        assert step.explanation.endswith(".")
        with pytest.raises(FrozenInstanceError):
            step.title = "changed"  # type: ignore[misc]


def test_resonance_step_explains_factor_t():
    der = ck.LinearODE([1, 0, 4]).particular(sp.cos(2 * t), t=t)
    (res,) = der.steps_of("resonance")
    assert res.multiplicity == 1
    assert "simple root" in res.explanation and "multiplied by $t$" in res.explanation
    (trial,) = der.steps_of("trial-form")
    assert trial.trial.has(t * sp.cos(2 * t))


def test_coefficient_equations_are_the_cos_sin_system():
    """For A cos(rt) on m, c, k: (k - m r^2) A + c r B = A0 and -c r A + (k - m r^2) B = 0."""
    der = ck.Oscillator(m, c, k).particular(P * sp.cos(r * t), t=t)
    (eqs,) = der.steps_of("coefficient-equations")
    assert len(eqs.equations) == 2
    unknown_a, unknown_b = sp.symbols("A B")
    first, second = eqs.equations
    assert sp.expand(first.lhs.coeff(unknown_a) - (k - m * r**2)) == 0
    assert sp.expand(first.lhs.coeff(unknown_b) - c * r) == 0
    assert first.rhs == P and second.rhs == 0


def test_unknowns_avoid_user_symbols():
    """The user's A is an amplitude; the unknown coefficients take other letters."""
    der = ck.Oscillator(1, 1, 1).particular(A * sp.cos(t), t=t)
    (trial,) = der.steps_of("trial-form")
    assert A not in trial.unknowns and A in der.solution.free_symbols


def test_groups_independent():
    """A 64-harmonic sum is 64 small systems of two equations each."""
    f = sum(sp.cos(i * t) / i for i in range(1, 65))
    der = ck.Oscillator(2, sp.Rational(3, 10), 50).particular(f, t=t)
    systems = der.steps_of("coefficient-equations")
    assert len(systems) == 64 and all(len(s.equations) == 2 for s in systems)
    assert der.verified


def test_symbolic_leading_coefficient_condition():
    der = ck.Oscillator(sp.Symbol("m"), 1, 1).particular(sp.Integer(1), t=t)
    assert sp.Ne(sp.Symbol("m"), 0) in der.conditions


def test_step_types_are_exported():
    assert issubclass(S.TrialFormStep, S.Step)


# --- property test ----------------------------------------------------------------------

small = st.integers(min_value=-3, max_value=3)


@st.composite
def operators(draw):
    """Random operators built from chosen roots (including repeated and zero roots)."""
    roots = draw(st.lists(st.integers(min_value=-2, max_value=2), min_size=1, max_size=3))
    lam = sp.Symbol("lam")
    pairs = draw(st.lists(st.tuples(st.integers(-1, 0), st.integers(1, 2)), max_size=1))
    poly = sp.Integer(1)
    for root in roots:
        poly *= lam - root
    for re_, im_ in pairs:
        poly *= (lam - re_) ** 2 + im_**2
    return [int(cf) for cf in sp.Poly(sp.expand(poly), lam).all_coeffs()]


@st.composite
def forcings(draw):
    terms = draw(
        st.lists(
            st.tuples(
                small, st.integers(0, 2), st.integers(-2, 2), st.integers(0, 2), st.sampled_from("cs1")
            ),
            min_size=1,
            max_size=3,
        )
    )
    total = sp.S.Zero
    for coef, n, decay, freq, kind in terms:
        trig = {"c": sp.cos(freq * t), "s": sp.sin(freq * t), "1": 1}[kind]
        total += coef * t**n * sp.exp(decay * t) * trig
    return total


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(operators(), forcings())
def test_property_random_operator_and_forcing(coeffs, f):
    """Random quasi-polynomial forcings on random operators: back-substitution holds."""
    der = ck.LinearODE(coeffs).particular(f, t=t)
    assert der.verified
    assert residual(coeffs, der.solution, f) == 0, f"reproduce: ck.LinearODE({coeffs}).particular({f}, t=t)"


def test_fractional_exponent_symbolic_first_order():
    """x' + c x = e^{-t/2}: A (c - 1/2) = 1, so x_p = e^{-t/2} / (c - 1/2) (worked by hand)."""
    cs = sp.Symbol("c")
    der = ck.LinearODE([1, cs]).particular(sp.exp(-t / 2), t=t)
    assert der.verified and residual([1, cs], der.solution, sp.exp(-t / 2)) == 0
    assert sp.simplify(der.solution - sp.exp(-t / 2) / (cs - sp.Rational(1, 2))) == 0


def test_fractional_exponent_symbolic_oscillator():
    """m x'' + c x' + k x = e^{-t/2}: A (m/4 - c/2 + k) = 1 (worked by hand)."""
    der = ck.Oscillator(m, c, k).particular(sp.exp(-t / 2), t=t)
    assert der.verified and residual([m, c, k], der.solution, sp.exp(-t / 2)) == 0
    assert sp.simplify(der.solution - sp.exp(-t / 2) / (m / 4 - c / 2 + k)) == 0


fractions = st.sampled_from(
    [sp.Rational(-1, 2), sp.Rational(-1, 3), sp.Rational(1, 4), sp.Rational(3, 2), 0, -1]
)


@st.composite
def symbolic_operators(draw):
    """Orders 1 to 3 with symbolic and fractional coefficients (leading one non-zero)."""
    order = draw(st.integers(1, 3))
    pool = st.sampled_from([m, c, k, sp.Rational(1, 2), sp.Rational(-3, 4), sp.Rational(5, 3), 1, 0])
    lead = draw(st.sampled_from([1, m, sp.Rational(2, 3)]))
    return [lead] + [draw(pool) for _ in range(order)]


@st.composite
def fractional_forcings(draw):
    """Quasi-polynomial terms with fractional decays and frequencies and fractional coefficients."""
    terms = draw(
        st.lists(
            st.tuples(
                fractions,
                st.integers(0, 1),
                fractions,
                st.sampled_from([0, sp.Rational(1, 2), 2]),
                st.sampled_from("cs1"),
            ),
            min_size=1,
            max_size=2,
        )
    )
    total = sp.S.Zero
    for coef, n, decay, freq, kind in terms:
        trig = {"c": sp.cos(freq * t), "s": sp.sin(freq * t), "1": 1}[kind]
        total += (coef or 1) * t**n * sp.exp(decay * t) * trig
    return total


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(symbolic_operators(), fractional_forcings())
def test_property_symbolic_fractional(coeffs, f):
    """Symbolic coefficients and fractional exponents: back-substitution by sympy alone holds."""
    der = ck.LinearODE(coeffs).particular(f, t=t)
    assert der.verified
    assert residual(coeffs, der.solution, f) == 0, f"reproduce: ck.LinearODE({coeffs}).particular({f}, t=t)"


FRACTIONAL_DSOLVE_CASES = [
    ([1, sp.Rational(1, 2)], sp.exp(-t / 3)),
    ([1, sp.Rational(1, 3), sp.Rational(1, 4)], sp.sin(t / 2)),
    ([2, sp.Rational(3, 2), sp.Rational(1, 4)], t * sp.exp(-t / 4)),
    ([1, 1, sp.Rational(1, 4)], sp.exp(-t / 2)),  # -1/2 is a double root of the characteristic polynomial
]


@pytest.mark.parametrize("coeffs, f", FRACTIONAL_DSOLVE_CASES)
def test_fractional_agrees_with_dsolve(coeffs, f):
    """Fractional coefficients and exponents: calckit - dsolve solves the homogeneous equation
    (sympy.dsolve, hint nth_linear_constant_coeff_undetermined_coefficients)."""
    test_agrees_with_dsolve(coeffs, f)


# --- errors -------------------------------------------------------------------------------


def test_zero_leading_coefficient_message():
    with pytest.raises(ck.ModelError) as info:
        ck.LinearODE([0, 1, 2])
    assert str(info.value) == (
        "LinearODE coefficients: the leading coefficient is zero, so the equation is not of the order "
        "its length says. Drop the leading zero(s) and give the lower-order equation."
    )
    assert isinstance(info.value, ValueError)


def test_too_few_coefficients_message():
    with pytest.raises(ck.ModelError) as info:
        ck.LinearODE([3])
    assert str(info.value) == (
        "LinearODE coefficients: got 1 coefficient(s); a differential equation needs at least two. "
        "Give [a_n, ..., a_1, a_0], highest derivative first, e.g. [m, c, k]."
    )


def test_complex_coefficient_message():
    with pytest.raises(ck.ModelError) as info:
        ck.LinearODE([1, sp.I, 1])
    assert str(info.value) == (
        "coefficient a_1 (position 2, highest derivative first): the coefficient I is complex. "
        "Use real coefficients; split a complex model into real and imaginary parts."
    )


def test_time_dependent_coefficient_message():
    with pytest.raises(ck.ModelError) as info:
        ck.LinearODE([1, t, 1]).particular(sp.cos(t), t=t)
    assert str(info.value) == (
        "coefficient a_1: the coefficient t depends on the time variable t. "
        "The method needs constant coefficients; freeze the coefficient at a value."
    )


def test_function_coefficient_message():
    g = sp.Function("g")
    with pytest.raises(ck.ModelError) as info:
        ck.LinearODE([1, g(t), 1])
    assert "is a function, not a constant" in str(info.value)


def test_non_number_coefficient_message():
    with pytest.raises(ck.ModelError) as info:
        ck.LinearODE([1, "two", 1])
    assert str(info.value) == (
        "coefficient a_1 (position 2, highest derivative first): expected a number or sympy "
        "expression, got str 'two'. Give an int, float, Fraction or sympy expression."
    )


def test_nan_coefficient_message():
    with pytest.raises(ck.ModelError) as info:
        ck.LinearODE([1, float("nan"), 1])
    assert str(info.value) == (
        "coefficient a_1 (position 2, highest derivative first): the value nan is not a finite number. "
        "Give a finite number."
    )


class TestDefectOfCalckit:
    """A failed check by substitution is calckit's defect: InternalError with a line to paste."""

    def test_failed_check_raises_internal_error(self, monkeypatch):
        """The check is forced to fail; the message says where, what, and how to reproduce."""
        import calckit.engine.scalar

        monkeypatch.setattr(calckit.engine.scalar, "satisfies", lambda *args: False)
        with pytest.raises(ck.InternalError) as info:
            ck.LinearODE([1, 0, 4]).particular(sp.cos(2 * t), t=t)
        reproduce = (
            "import calckit as ck; from sympy import *; t = Symbol('t', real=True); "
            "ck.LinearODE([Integer(1), Integer(0), Integer(4)]).particular(cos(Mul(Integer(2), Symbol('t', "
            "real=True))), t=t)"
        )
        assert str(info.value) == (
            "forcing cos(2*t): the derived particular solution does not satisfy the equation (residual 0). "
            "This is a defect of calckit, not of your input; please report it with this line: "
            + reproduce
            + "."
        )
        assert info.value.reproduce == reproduce
        assert isinstance(info.value, RuntimeError) and isinstance(info.value, ck.CalcError)

    def test_reproducer_repeats_the_case(self, monkeypatch):
        """The pasted line runs the same derivation (it fails the same way while the check is broken)."""
        import calckit.engine.scalar

        m_, c_ = sp.symbols("m c", positive=True)
        monkeypatch.setattr(calckit.engine.scalar, "satisfies", lambda *args: False)
        with pytest.raises(ck.InternalError) as info:
            ck.LinearODE([m_, c_, 3]).particular(t * sp.exp(-2 * t), t=t)
        with pytest.raises(ck.InternalError) as again:
            exec(info.value.reproduce, {})
        assert str(again.value) == str(info.value)
        monkeypatch.undo()
        namespace: dict = {}
        exec(info.value.reproduce.replace("ck.LinearODE", "der = ck.LinearODE"), namespace)
        der = namespace["der"]
        # checked by sympy alone, outside the engine
        assert residual([m_, c_, 3], der.solution, t * sp.exp(-2 * t)) == 0


class TestPhaseOffsets:
    """A forcing with a phase offset keeps it in the answer: ``sin(t - 2)``, not ``sin 2 sin t ...``."""

    CASES = [
        ([1, 1, 4], sp.sin(t - 2)),
        ([1, 1, 4], sp.cos(3 * t + sp.pi / 7) + t * sp.sin(3 * t + sp.pi / 7)),
        ([m, c, k], P * sp.cos(w * t - a)),
        ([1, 0, 1], sp.cos(t + 1)),  # resonance with a phase: t sin(t + 1) / 2
    ]

    @pytest.mark.parametrize("coeffs, f", CASES)
    def test_compact_and_agrees_with_dsolve(self, coeffs, f):
        """The phase appears as written, no sin/cos of the bare phase is left, and dsolve agrees."""
        der = ck.LinearODE(coeffs).particular(f, t=t)
        (arg,) = {fn.args[0] for fn in f.atoms(sp.sin, sp.cos)}
        phase = arg.subs(t, 0)
        assert der.solution.has(arg)
        assert not der.solution.has(sp.sin(phase), sp.cos(phase), sp.sin(-phase), sp.cos(-phase))
        assert residual(coeffs, der.solution, f) == 0
        # sympy.dsolve, hint nth_linear_constant_coeff_undetermined_coefficients (outside reference):
        # the two particular solutions differ by a solution of the homogeneous equation
        x = sp.Function("x")
        n = len(coeffs) - 1
        ode = sp.Eq(sum(cf * x(t).diff(t, n - i) for i, cf in enumerate(coeffs)), f)
        theirs = sp.dsolve(ode, x(t), hint="nth_linear_constant_coeff_undetermined_coefficients").rhs
        theirs = theirs.subs({s: 0 for s in theirs.free_symbols if s.name.startswith("C")})
        assert residual(coeffs, sp.expand_trig(der.solution - theirs), 0) == 0

    def test_resonant_phase_form(self):
        """x'' + x = cos(t + 1): x_p = t sin(t + 1) / 2 (the modification rule, worked by hand)."""
        der = ck.LinearODE([1, 0, 1]).particular(sp.cos(t + 1), t=t)
        assert sp.simplify(der.solution - t * sp.sin(t + 1) / 2) == 0
        assert der.solution.has(sp.sin(t + 1))

    def test_two_phases_at_one_frequency_left_expanded(self):
        """Two different phases at one frequency have no single rotation: the form is left as derived."""
        f = sp.sin(t - 2) + sp.cos(t + 1)
        der = ck.LinearODE([1, 1, 4]).particular(f, t=t)
        assert residual([1, 1, 4], der.solution, f) == 0


class TestRadicalsCleared:
    """Numeric coefficients with radicals are written without a radical in the denominator."""

    CASES = [
        ([1, sp.sqrt(2), 3], sp.cos(sp.sqrt(2) * t) + sp.exp(-sp.sqrt(3) * t)),
        ([1, sp.sqrt(2) + 1, 1], sp.cos(t) + 1),
    ]

    @pytest.mark.parametrize("coeffs, f", CASES)
    def test_no_radical_below(self, coeffs, f):
        """Each term's numeric factor has a rational denominator, and the answer still satisfies the equation."""
        der = ck.LinearODE(coeffs).particular(f, t=t)
        assert residual(coeffs, der.solution, f) == 0
        for term in sp.Add.make_args(der.solution):
            number = term.as_independent(t, as_Add=False)[0]
            assert sp.fraction(sp.together(number))[1].is_Rational, term

    def test_transient_cleared(self):
        """The constants of the free motion are rationalised too (checked against sympy.dsolve with ics)."""
        x = sp.Function("x")
        f = sp.exp(-sp.sqrt(3) * t)
        res = ck.LinearODE([1, sp.sqrt(2), 3]).response(f, [1, 0], t=t)
        theirs = sp.dsolve(
            sp.Eq(x(t).diff(t, 2) + sp.sqrt(2) * x(t).diff(t) + 3 * x(t), f), x(t), ics={x(0): 1, x(t).diff(t).subs(t, 0): 0}
        ).rhs
        assert sp.simplify(sp.expand(res.solution - theirs)) == 0
        for term in sp.Add.make_args(res.transient):
            number = term.as_independent(t, as_Add=False)[0]
            assert sp.fraction(sp.together(number))[1].is_Rational, term
