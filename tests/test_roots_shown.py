"""Issue 16, item 3: roots with no closed form are shown numerically on the characteristic step,
with the method and the precision they are shown to.

Outside reference: ``numpy.roots`` (eigenvalues of the companion matrix, LAPACK) of the same
characteristic polynomial. That ``lambda^5 + 11 lambda - 2`` has no roots in radicals is checked
with ``sympy.roots`` (which returns none of them).
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest
import sympy as sp

import calckit as ck
from calckit.engine.steps import CharacteristicStep
from calckit.render.display import derivation_html, derivation_text

t = sp.Symbol("t", real=True)
QUINTIC = [1, 0, 0, 0, 11, -2]  # lambda^5 + 11 lambda - 2: no roots in radicals


def _shown_roots(text: str) -> list[complex]:
    """The roots as the plain text of the characteristic step shows them (``lambda ~= a + b*I``)."""
    step = text.split("Characteristic polynomial", 1)[1].split("\n4. ", 1)[0]
    found = re.findall(r"lambda ~= (.+?)    \(", step)
    return [complex(sp.sympify(value)) for value in found]


def _half_unit(x: float, sig: int) -> float:
    """Half a unit in the last of *sig* significant figures of *x* (the rounding error allowed)."""
    return 0.5 * 10 ** (math.floor(math.log10(abs(x))) - sig + 1) if x else 0.0


def _match(shown: list[complex], reference: np.ndarray, sig: int) -> None:
    assert len(shown) == len(reference)
    left = list(reference)
    for value in shown:
        best = min(left, key=lambda r: abs(r - value))
        assert abs(value.real - best.real) <= _half_unit(best.real, sig) * 1.0001, (value, best)
        assert abs(value.imag - best.imag) <= _half_unit(best.imag, sig) * 1.0001, (value, best)
        left.remove(best)


def test_quintic_has_no_closed_form():
    lam = sp.Symbol("lambda")
    assert sum(sp.roots(sp.Poly(lam**5 + 11 * lam - 2, lam)).values()) == 0


@pytest.mark.parametrize("sig", [4, 6])
def test_particular_shows_numerical_roots_to_the_sheet_figures(sig):
    der = ck.LinearODE(QUINTIC).particular(sp.cos(3 * t), t=t)
    text = derivation_text(der, sig=sig)
    assert "roots not found in closed form" not in text
    _match(_shown_roots(text), np.roots(QUINTIC), sig)
    assert "numerical roots: sympy Poly.nroots (mpmath), 30 digits," in text
    assert f"kept to 15 significant figures, shown to {sig}" in text


def test_response_shows_the_same_roots_and_the_html_names_the_method():
    res = ck.LinearODE(QUINTIC).response(sp.cos(3 * t), [0, 0, 0, 0, 0], t=t)
    _match(_shown_roots(derivation_text(res, sig=4)), np.roots(QUINTIC), 4)
    html = derivation_html(res, sig=4).replace(
        "\u00a0", " "
    )  # MathML text keeps its spaces as no-break spaces
    assert "roots not found in closed form" not in html
    assert "sympy Poly.nroots" in html
    assert "\u2248" in html or "&#x2248;" in html  # the sign of a rounded root


def test_exact_display_shows_twelve_figures_at_most():
    der = ck.LinearODE(QUINTIC).particular(sp.cos(3 * t), t=t)
    text = derivation_text(der)
    _match(_shown_roots(text), np.roots(QUINTIC), 12)
    assert not re.search(r"\d{13}", text)  # no digit run longer than 12 (issue 16, item 3)


def test_closed_form_roots_stay_exact_and_mixed_factors_are_marked_one_by_one():
    """(lambda - 1)(lambda^5 + 11 lambda - 2): the root 1 is exact, the quintic's five numerical."""
    lam = sp.Symbol("lambda")
    coefficients = sp.Poly(sp.expand((lam - 1) * (lam**5 + 11 * lam - 2)), lam).all_coeffs()
    der = ck.LinearODE(coefficients).particular(sp.cos(3 * t), t=t)
    step = next(s for s in der.steps if isinstance(s, CharacteristicStep))
    text = derivation_text(der, sig=4)
    assert "lambda = 1    (simple root)" in text
    assert text.count("(simple root, numerical)") == 5
    numerical = [r for r, _ in step.roots if r.atoms(sp.Float)]
    _match([complex(r) for r in numerical], np.roots(QUINTIC), 14)


def test_a_numeric_quadratic_keeps_its_closed_form():
    text = derivation_text(ck.Oscillator(250, 400, 180000).particular(sp.cos(20 * t), t=t), sig=4)
    assert "numerical" not in text.split("Characteristic polynomial", 1)[1].split("\n4. ", 1)[0]


def test_multi_mass_roots_shown_numerically_against_numpy():
    """A two-mass model whose det Z(lambda) (a quartic) has no readable closed form: the characteristic
    step carries its roots as numbers, which agree with numpy.roots of the same polynomial."""
    import numpy as np
    import sympy as sp

    import calckit as ck

    t = sp.Symbol("t", real=True)
    model = ck.MultiMass([[2400, 0], [0, 120]], [[12210, -4748], [-4748, 4748]], [[60630000, -2630000], [-2630000, 2630000]])
    der = model.particular([1200 * sp.cos(155 * t), 0], t=t)
    (step,) = [s for s in der.steps if type(s).__name__ == "CharacteristicStep"]
    ours = sorted((complex(root) for root, _ in step.roots), key=lambda z: (z.real, z.imag))
    lam = sp.Symbol("lambda")
    M, C, K = (sp.Matrix(a) for a in ([[2400, 0], [0, 120]], [[12210, -4748], [-4748, 4748]], [[60630000, -2630000], [-2630000, 2630000]]))
    det = (lam**2 * M + lam * C + K).det()
    theirs = sorted((complex(r) for r in np.roots([float(c) for c in sp.Poly(det, lam).all_coeffs()])), key=lambda z: (z.real, z.imag))
    assert np.allclose(ours, theirs, rtol=1e-10)
