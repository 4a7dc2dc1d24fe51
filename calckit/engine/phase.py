r"""Phase offsets kept compact in a particular solution.

A forcing such as ``sin(t - 2)`` is split into ``cos 2 sin t - sin 2 cos t`` for the
method (the trial form is in ``cos(b t)`` and ``sin(b t)``), so the solved coefficients
come out as combinations of ``cos 2`` and ``sin 2``. An engineer writes the answer in
the forcing's own phase instead: for one frequency ``b`` whose forcing terms all carry
one phase ``phi``, the part ``P cos(b t) + Q sin(b t)`` is the rotation

.. math::

    P\cos bt + Q\sin bt = A\cos(bt + \varphi) + B\sin(bt + \varphi),\qquad
    A = P\cos\varphi - Q\sin\varphi,\quad B = P\sin\varphi + Q\cos\varphi,

(the angle-sum identities), and ``A``, ``B`` lose ``cos phi`` and ``sin phi`` once
``sin^2 phi = 1 - cos^2 phi`` is applied. :func:`compact_phases` makes that rewrite
only when it removes every ``cos phi`` and ``sin phi`` and the result is the same
function (checked exactly); otherwise the solution is returned as it was.

Examples
--------
>>> import sympy as sp
>>> t = sp.Symbol("t", real=True)
>>> x = (3 * sp.cos(2) / 10 - sp.sin(2) / 10) * sp.sin(t) + (-3 * sp.sin(2) / 10 - sp.cos(2) / 10) * sp.cos(t)
>>> compact_phases(x, sp.sin(t - 2), t)
3*sin(t - 2)/10 - cos(t - 2)/10
"""

from __future__ import annotations

import sympy as sp

__all__ = ["compact_phases", "phases_of"]


def phases_of(forcing: sp.Expr, t: sp.Symbol) -> dict:
    """``{b: phi}`` for each frequency whose trigonometric arguments ``b t + phi`` share one phase ``phi != 0``.

    A frequency with two phases (or a phase and none) is left out: there is no single
    rotation to write it in.
    """
    seen: dict = {}
    for fn in forcing.atoms(sp.sin, sp.cos):
        arg = sp.expand(fn.args[0])
        if not arg.has(t):
            continue
        phi, moving = arg.as_independent(t, as_Add=True)
        b = moving.coeff(t)
        if b == 0 or b.has(t) or sp.expand(b * t - moving) != 0:
            continue
        if b.could_extract_minus_sign():  # sin(-b t - phi) is written for b, phi
            b, phi = -b, -phi
        seen.setdefault(b, set()).add(phi)
    return {b: next(iter(phis)) for b, phis in seen.items() if len(phis) == 1 and next(iter(phis)) != 0}


def _angle_atoms(phi: sp.Expr):
    """``sin psi, cos psi`` with ``psi = +-phi`` the form sympy keeps (``sin(-2)`` becomes ``-sin(2)``)."""
    psi = -phi if phi.could_extract_minus_sign() else phi
    return sp.sin(psi), sp.cos(psi)


def _without_squares(expr: sp.Expr, phi: sp.Expr) -> sp.Expr:
    """*expr* expanded with ``sin(phi)**2`` replaced by ``1 - cos(phi)**2``."""
    sin_atom, cos_atom = _angle_atoms(phi)
    s, c = sp.Dummy("s"), sp.Dummy("c")
    poly_form = sp.expand(sp.expand(expr).xreplace({sin_atom: s, cos_atom: c}))
    reduced = sp.rem(sp.Poly(poly_form, s), sp.Poly(s**2 + c**2 - 1, s)).as_expr()
    return sp.expand(reduced).xreplace({s: sin_atom, c: cos_atom})


def compact_phases(solution: sp.Expr, forcing: sp.Expr, t: sp.Symbol) -> sp.Expr:
    """*solution* with each single-phase frequency of *forcing* written in ``cos(b t + phi)``, ``sin(b t + phi)``."""
    phases = phases_of(forcing, t)
    if not phases or not isinstance(solution, sp.Expr):
        return solution
    out = sp.expand(solution)
    for b, phi in phases.items():
        cos_bt, sin_bt = sp.cos(b * t), sp.sin(b * t)
        parts = sp.collect(out, [cos_bt, sin_bt], evaluate=False)
        P, Q = parts.get(cos_bt, sp.S.Zero), parts.get(sin_bt, sp.S.Zero)
        if (P == 0 and Q == 0) or any(p.has(cos_bt, sin_bt) for p in (P, Q)):
            continue
        try:
            A = _without_squares(P * sp.cos(phi) - Q * sp.sin(phi), phi)
            B = _without_squares(P * sp.sin(phi) + Q * sp.cos(phi), phi)
        except (sp.PolynomialError, sp.polys.polyerrors.CoercionFailed, ValueError, TypeError):
            continue
        if A.has(*_angle_atoms(phi)) or B.has(*_angle_atoms(phi)):
            continue
        rest = sp.expand(out - P * cos_bt - Q * sin_bt)
        candidate = rest + sp.factor_terms(A) * sp.cos(b * t + phi) + sp.factor_terms(B) * sp.sin(b * t + phi)
        # the same function: expanded back by the angle-sum identities it must give the old form
        # A and B must give back P and Q by the angle-sum identities (sympy then keeps
        # cos(b t + phi) and sin(b t + phi) in its own canonical form, same value)
        back = sp.expand(
            A * (cos_bt * sp.cos(phi) - sin_bt * sp.sin(phi)) + B * (sin_bt * sp.cos(phi) + cos_bt * sp.sin(phi))
            - P * cos_bt - Q * sin_bt
        )
        if back != 0 and _without_squares(back, phi) != 0:
            continue
        out = candidate
    return out
