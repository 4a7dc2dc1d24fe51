r"""Formulas of derivation steps, in hand-calculation reading order.

Each step record (:mod:`calckit.engine.steps`, scalar and multi-mass alike) becomes a few
*rows* (:mod:`calckit.render.rows`; the pieces are in :mod:`calckit.render.tex`): an aligned
left side, a right side starting with a relation, and an optional note, each
piece spelled twice, once in LaTeX and once in plain text. The rows are the one
formatter behind every output: :func:`rows_latex` prints them for the notebook
and for MathML, :func:`rows_text` for a terminal. Nothing here knows about
Jupyter or HTML.

What a step shows
-----------------
========================  ==============================================================
equation                  ``m \ddot{x} + c \dot{x} + k x = f(t)`` and ``f(t) = ...``
forcing split             ``f_g(t) = ...`` with its exponent ``\lambda_g``, one row a group
characteristic            ``p(\lambda) = ... = 0`` and the roots with multiplicity
resonance                 ``p(\lambda_g) = value`` and the multiplicity ``s_g``
trial form                ``x_g(t) = ...``
derivatives               ``\dot{x}_g(t) = ...``, ``\ddot{x}_g(t) = ...`` (primes above order 2)
substitution              the operator on ``x_g``, then the collected left side ``= f_g(t)``
coefficient equations     a braced system, each row labelled by its basis function
solved coefficients       ``A = ...`` and the conditions the solution needs
particular solution       ``x_p(t) = ...``
verification              ``m \ddot{x}_p + c \dot{x}_p + k x_p - f(t) = 0`` and a check word
homogeneous               ``x_h(t) = ...``
initial conditions        ``x(0) = ... = x_0`` and the constants
total response            ``x(t) = x_h(t) + x_p(t) = ...``
modes (multi-mass)        ``\omega_i = ...``, ``\Phi = ...`` and ``\zeta_i = ...``
========================  ==============================================================

Symbol names
------------
Symbols print through :func:`symbol_latex`: Greek names become Greek letters,
``_`` starts a subscript, and a subscript that is a word is set upright
(``omega_n`` -> ``\omega_{n}``, ``F_max`` -> ``F_{\mathrm{max}}``). Pass
``names={"Fo": r"F_{\circ}"}`` to choose your own.

Examples
--------
>>> import sympy as sp
>>> from calckit import Oscillator
>>> t = sp.Symbol("t", real=True)
>>> m, c, k = sp.symbols("m c k", positive=True)
>>> der = Oscillator(m, c, k).particular(sp.cos(t), t=t)
>>> step_latex(der.steps[0], notation(der.steps))
'\\begin{aligned}m \\ddot{x} + c \\dot{x} + k x &= f(t) \\\\ f(t) &= \\cos{\\left(t \\right)}\\end{aligned}'
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from calckit.engine.steps import CoefficientEquationsStep, Step
from calckit.errors import SheetError
from calckit.render.rows import step_rows
from calckit.render.tex import (
    DERIVATIVE_STYLES,
    EQ,
    LEVELS,
    NE,
    SUMMARY_KINDS,
    Notation,
    Row,
    Tex,
    expr_latex,
    expr_text,
    notation,
    rows_latex,
    rows_text,
    symbol_latex,
)

__all__ = [
    "LEVELS",
    "SUMMARY_KINDS",
    "DERIVATIVE_STYLES",
    "Tex",
    "Row",
    "Notation",
    "notation",
    "symbol_latex",
    "expr_latex",
    "expr_text",
    "step_rows",
    "step_latex",
    "step_plain",
    "rows_latex",
    "rows_text",
    "steps_at",
    "check_level",
    "EQ",
    "NE",
]


def _braced(step: Step) -> bool:
    return isinstance(step, CoefficientEquationsStep) and len(step.equations) > 1


def step_latex(step: Step, nt: Notation | None = None, *, names: Mapping | None = None) -> str:
    r"""LaTeX of one step's formula (without ``$$``).

    Parameters
    ----------
    step : Step
    nt : Notation, optional
        From :func:`notation` over the whole derivation; default: read from the step alone.
    names : mapping, optional
        Extra display names (used when *nt* is not given).

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit.engine.steps import HomogeneousStep
    >>> C1, t = sp.symbols("C_1 t")
    >>> step_latex(HomogeneousStep("Transient", "Free motion.", C1 * sp.exp(-t), (C1,), "overdamped"))
    'x_{h}(t) = C_{1} e^{- t}'
    """
    nt = notation((step,), names=names) if nt is None else nt
    return rows_latex(step_rows(step, nt), brace=_braced(step))


def step_plain(
    step: Step, nt: Notation | None = None, *, names: Mapping | None = None, indent: str = ""
) -> str:
    """Plain text of one step's formula (sympy ``sstr`` spelling).

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit.engine.steps import HomogeneousStep
    >>> C1, t = sp.symbols("C_1 t")
    >>> step_plain(HomogeneousStep("Transient", "Free motion.", C1 * sp.exp(-t), (C1,), "overdamped"))
    'x_h(t) = C_1*exp(-t)'
    """
    nt = notation((step,), names=names) if nt is None else nt
    return rows_text(step_rows(step, nt), indent=indent)


def check_level(level: str) -> str:
    """Return *level* if it is one of :data:`LEVELS`, else raise SheetError."""
    if level not in LEVELS:
        raise SheetError(f'unknown level "{level}"', where="level", do='Use "summary" or "full"')
    return level


def steps_at(steps: Iterable[Step], level: str = "full") -> tuple[tuple[int, Step], ...]:
    """The steps shown at *level*, each with its number in the full derivation.

    Numbers are kept at the summary level, so that step 17 is step 17 in every output.

    Examples
    --------
    >>> import sympy as sp
    >>> from calckit import LinearODE
    >>> t = sp.Symbol("t")
    >>> [n for n, _ in steps_at(LinearODE([1, 0, 4]).particular(sp.cos(2 * t), t=t).steps, "summary")]
    [1, 10, 11]
    """
    check_level(level)
    numbered = tuple(enumerate(steps, start=1))
    if level == "full":
        return numbered
    return tuple((n, s) for n, s in numbered if s.kind in SUMMARY_KINDS)
