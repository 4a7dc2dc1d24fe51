"""Layer 1: splitting a forcing into quasi-polynomial terms grouped by exponent."""

from __future__ import annotations

import pytest
import sympy as sp

import calckit as ck

t = sp.Symbol("t", real=True)
w, A, a, P, tau, b = sp.symbols("omega A a P tau b", positive=True)


def groups_of(f):
    return {(g.decay, g.frequency): g for g in ck.split_forcing(f, t).groups}


@pytest.mark.parametrize(
    "f",
    [
        sp.cos(w * t) ** 2,
        sp.sin(a * t) * sp.cos(b * t),
        sp.exp(a * t) * sp.exp(b * t),
        sp.cosh(2 * t) + sp.sinh(3 * t),
        A * sp.cos(w * t) + a * t**2 + P * sp.exp(-t / tau) + t * sp.exp(-t) * sp.sin(4 * t),
        sp.cos(w * t + 1),
        (sp.cos(t) + t) ** 3,
        2**t,
    ],
)
def test_split_is_an_identity(f):
    """The split adds back to the forcing (checked by sympy.simplify after rewriting to exp)."""
    split = ck.split_forcing(f, t)
    assert sp.simplify((split.expr() - f).rewrite(sp.exp)) == 0


def test_cos_squared_splits_into_mean_and_double_frequency():
    """cos^2(wt) = 1/2 + cos(2wt)/2 (product-to-sum identity)."""
    groups = groups_of(sp.cos(w * t) ** 2)
    assert set(groups) == {(0, 0), (0, 2 * w)}
    assert groups[(0, 0)].terms[0].coefficient == sp.Rational(1, 2)


def test_groups_by_exponent():
    f = 3 * sp.cos(2 * t) + 5 * sp.sin(2 * t) + t * sp.exp(-t) * sp.sin(4 * t) + t**2
    groups = groups_of(f)
    assert set(groups) == {(0, 2), (-1, 4), (0, 0)}
    assert len(groups[(0, 2)].terms) == 2
    assert groups[(-1, 4)].degree == 1 and groups[(0, 0)].degree == 2
    assert groups[(-1, 4)].exponent == -1 + 4 * sp.I


def test_negative_frequency_is_normalised():
    """sin(-2t) = -sin(2t); cos(-2t) = cos(2t)."""
    groups = groups_of(sp.sin(-2 * t) + sp.cos(-2 * t))
    (group,) = groups.values()
    assert group.frequency == 2
    coefs = {term.kind: term.coefficient for term in group.terms}
    assert coefs == {"cos": 1, "sin": -1}


def test_float_coefficients_become_exact():
    (group,) = ck.split_forcing(0.1 * sp.cos(2.5 * t), t).groups
    assert group.frequency == sp.Rational(5, 2) and group.terms[0].coefficient == sp.Rational(1, 10)


def test_numbers_and_time_default():
    assert ck.split_forcing(7).groups[0].terms[0].coefficient == 7
    tt = sp.Symbol("t")
    assert ck.split_forcing(sp.cos(tt)).t == tt


# --- refused forcings: each names the term and says why ---------------------------------

REFUSED = [
    (
        sp.tan(t),
        "forcing term tan(t): the method of undetermined coefficients does not apply: tan is not a "
        "polynomial, exponential, sine, cosine, sinh or cosh of t, so its derivatives do not stay in a "
        "finite family and no trial form with finitely many coefficients exists. Approximate it by a finite "
        "Fourier series over the interval of interest (calckit.physics.fourier) or integrate numerically.",
    ),
    (
        1 / t,
        "forcing term 1/t: the method of undetermined coefficients does not apply: t appears raised to the "
        "power -1; only whole powers t**0, t**1, t**2, ... keep the trial form finite. Approximate it by a "
        "finite Fourier series over the interval of interest (calckit.physics.fourier) or integrate numerically.",
    ),
    (
        sp.sqrt(t),
        "forcing term sqrt(t): the method of undetermined coefficients does not apply: t appears raised to "
        "the power 1/2; only whole powers t**0, t**1, t**2, ... keep the trial form finite. Approximate it "
        "by a finite Fourier series over the interval of interest (calckit.physics.fourier) or integrate numerically.",
    ),
    (
        sp.Abs(t - 1),
        "forcing term Abs(t - 1): the method of undetermined coefficients does not apply: its derivative "
        "jumps where the argument changes sign, so no single trial form fits all t. Split the time range at "
        "the switching points and solve each piece, starting each from the end state of the one before.",
    ),
    (
        sp.Heaviside(t - 1),
        "forcing term Heaviside(t - 1): the method of undetermined coefficients does not apply: it switches "
        "at a point in time, and the method needs one formula valid for all t. Split the time range at the "
        "switching points and solve each piece, starting each from the end state of the one before.",
    ),
    (
        sp.exp(t**2),
        "forcing term exp(t**2): the method of undetermined coefficients does not apply: its argument t**2 "
        "is not of the form a*t + b, so its derivatives do not stay in a finite family and no trial form "
        "with finitely many coefficients exists. Approximate it by a finite Fourier series over the interval "
        "of interest (calckit.physics.fourier) or integrate numerically.",
    ),
    (
        3 * sp.cos(t) + sp.log(t) * sp.cos(t),
        "forcing term log(t)*cos(t), in log(t): the method of undetermined coefficients does not apply: log "
        "is not a polynomial, exponential, sine, cosine, sinh or cosh of t, so its derivatives do not stay "
        "in a finite family and no trial form with finitely many coefficients exists. Approximate it by a "
        "finite Fourier series over the interval of interest (calckit.physics.fourier) or integrate numerically.",
    ),
    (
        sp.DiracDelta(t),
        "forcing term DiracDelta(t): the method of undetermined coefficients does not apply: an impulse is "
        "not a function the trial form can match; it sets initial velocity instead. Model the impulse I as "
        "the initial velocity v0 = I/m and solve with zero forcing.",
    ),
    (
        sp.Function("g")(sp.Symbol("x")),
        "forcing term g(x): it is a function of x, which is neither the time t nor a parameter. "
        "Use plain symbols for parameters, or write the forcing out in t.",
    ),
]


@pytest.mark.parametrize("f, message", REFUSED, ids=[str(case[0]) for case in REFUSED])
def test_refused_forcings(f, message):
    with pytest.raises(ck.ForcingError) as info:
        ck.split_forcing(f, t)
    assert str(info.value) == message
    assert isinstance(info.value, ValueError) and isinstance(info.value, ck.CalcError)


def test_refused_forcing_through_the_engine():
    with pytest.raises(ck.ForcingError, match=r"^forcing term tan\(t\)"):
        ck.Oscillator(1, 1, 1).particular(sp.cos(t) + sp.tan(t), t=t)


def test_complex_forcing_refused():
    """A real system needs a real force: exp(i w t) is refused with what to write instead."""
    with pytest.raises(ck.ForcingError) as info:
        ck.split_forcing(sp.exp(sp.I * 2 * t), t)
    assert str(info.value) == (
        "forcing: the forcing exp(2*I*t) is complex; a real system needs a real force. Write it with cos "
        "and sin (e.g. cos(w*t) instead of exp(I*w*t)), and take the real part."
    )


def test_not_finite_forcing_message_has_one_prefix():
    with pytest.raises(ck.ForcingError) as info:
        ck.split_forcing(float("nan") * sp.cos(t), t)
    assert str(info.value) == "forcing: the value nan is not a finite number. Give a finite number."


def test_not_an_expression():
    with pytest.raises(ck.ForcingError) as info:
        ck.split_forcing("cos(t)", t)
    assert str(info.value) == (
        "forcing: expected a sympy expression or a number, got str 'cos(t)'. "
        "Build the forcing with sympy, e.g. F0*sympy.cos(w*t)."
    )


def test_time_not_a_symbol():
    with pytest.raises(ck.ForcingError) as info:
        ck.split_forcing(sp.cos(t), t="t")
    assert str(info.value) == (
        "t: the time variable must be a sympy Symbol, got str 't'. Pass t=sympy.Symbol(\"t\", real=True)."
    )
