"""Total response of a multi-mass model from an initial state, by modal superposition.

With proportional damping the free motion is a sum of the modes, each moving as
a single-mass oscillator (:class:`calckit.physics.oscillator.Oscillator`) with its
own natural frequency and damping ratio:

.. math::

    x(t) = x_p(t) + \\sum_i \\phi_i q_i(t), \\qquad
    q_i(0) = \\phi_i^T M (x_0 - x_p(0)), \\quad
    \\dot q_i(0) = \\phi_i^T M (v_0 - \\dot x_p(0)).

References
----------
Rao, *Mechanical Vibrations*, 5th ed., ch. 6 (modal analysis), from memory.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.engine import Response
from calckit.engine.steps import HomogeneousStep, InitialConditionsStep, ModesStep, TotalResponseStep
from calckit.errors import ModelError
from calckit.physics.modes import modal_damping_ratios, simplified
from calckit.physics.oscillator import Oscillator

__all__ = ["modal_total_response", "state_vector"]


def state_vector(values, n: int, label: str) -> sp.ImmutableMatrix:
    """An initial state (*n* values, default zeros) as an exact column; ModelError naming *label*."""
    if values is None:
        return sp.ImmutableMatrix.zeros(n, 1)
    if isinstance(values, (sp.MatrixBase, np.ndarray)):
        values = [
            e.item() if isinstance(e, np.generic) else e
            for e in (list(values) if isinstance(values, sp.MatrixBase) else values.ravel().tolist())
        ]
    if not isinstance(values, Sequence) or isinstance(values, str):
        raise ModelError(
            f"expected a list of {n} numbers, got {type(values).__name__} {values!r}",
            where=label,
            do=f"Give one value per coordinate, {n} in all",
        )
    if len(values) != n:
        raise ModelError(
            f"got {len(values)} value(s) for a model with {n} coordinates",
            where=label,
            do=f"Give one value per coordinate, {n} in all",
        )
    return sp.ImmutableMatrix([exact(v, where=f"{label}[{i + 1}]") for i, v in enumerate(values)])


def modal_total_response(model, F, x0, v0, t) -> Response:
    """Total response of *model* (a MultiMass) under *F* from ``x(0) = x0``, ``x'(0) = v0``."""
    n = model.size
    x0 = state_vector(x0, n, "x0")
    v0 = state_vector(v0, n, "v0")
    modes = model.modes()
    cm = model.modal_damping()  # raises when not proportional
    der = model.particular(F, t=t)
    t = der.t
    if modes.exact:
        phi = modes.shapes
        damping = [cm[i, i] for i in range(n)]
        stiffness = [w**2 for w in modes.frequencies]
    else:
        phi = sp.ImmutableMatrix(modes.shapes.tolist())
        damping = [float(cm[i, i]) for i in range(n)]
        stiffness = [float(w) ** 2 for w in modes.frequencies]
    xp = der.solution
    start = sp.ImmutableMatrix(x0 - xp.subs(t, 0))
    speed = sp.ImmutableMatrix(v0 - xp.diff(t).subs(t, 0))
    taken = {s.name for s in xp.free_symbols}
    constants, general, found, regimes = [], sp.ImmutableMatrix.zeros(n, 1), [], []
    for i in range(n):
        osc = Oscillator(1, damping[i], stiffness[i])
        basis = osc.transient_basis(t)
        if not modes.exact:
            basis = tuple(sp.nfloat(b) for b in basis)
        regimes.append(f"mode {i + 1} {_regime(osc)}")
        pair = []
        for j in (1, 2):
            label = f"C_{2 * i + j}"
            pair.append(sp.Symbol(label if label not in taken else label + "'"))
        constants.extend(pair)
        column = phi[:, i]
        q = pair[0] * basis[0] + pair[1] * basis[1]
        general = general + column * q
        q0 = simplified((column.T * model.M * start)[0, 0])
        qd0 = simplified((column.T * model.M * speed)[0, 0])
        b0 = [sp.simplify(b.subs(t, 0)) for b in basis]
        b1 = [sp.simplify(sp.diff(b, t).subs(t, 0)) for b in basis]
        det = b0[0] * b1[1] - b0[1] * b1[0]
        c1 = simplified((q0 * b1[1] - b0[1] * qd0) / det)
        c2 = simplified((b0[0] * qd0 - b1[0] * q0) / det)
        found.extend([(pair[0], c1), (pair[1], c2)])
    general = sp.ImmutableMatrix(general)
    if not modes.exact:  # floats throughout, not long decimals read as fractions
        general = general.applyfunc(sp.nfloat)
        found = [(c, sp.sympify(v).evalf()) for c, v in found]
    mapping = dict(found)
    transient = sp.ImmutableMatrix(general.xreplace(mapping)).applyfunc(sp.expand)
    equations = (
        sp.Eq(sp.ImmutableMatrix(general.subs(t, 0) + xp.subs(t, 0)), x0, evaluate=False),
        sp.Eq(sp.ImmutableMatrix(general.diff(t).subs(t, 0) + xp.diff(t).subs(t, 0)), v0, evaluate=False),
    )
    frequencies = tuple(modes.frequencies)
    ratios = modal_damping_ratios(modes, cm)
    steps = list(der.steps)
    steps.append(
        ModesStep(
            "Natural frequencies and mode shapes",
            "The undamped eigenproblem K phi = omega^2 M phi gives the natural frequencies and the mode shapes, "
            "scaled so that Phi^T M Phi = I; the damping is proportional (Phi^T C Phi is diagonal), so the "
            "modes uncouple"
            + (
                "."
                if modes.exact
                else "; the frequency equation does not split into quadratics, so the modes are in floats."
            ),
            frequencies,
            phi,
            ratios,
        )
    )
    steps.append(
        HomogeneousStep(
            "Homogeneous (transient) solution",
            "The free motion is a sum of the modes, each moving as a single-mass oscillator with its own "
            "natural frequency and damping ratio; the constants are fixed by the initial state.",
            general,
            tuple(constants),
            ", ".join(regimes),
        )
    )
    steps.append(
        InitialConditionsStep(
            "Constants from the initial state",
            "The total response and its velocity at t = 0 must equal x0 and v0; projecting on each mode "
            "shape (phi_i^T M) gives two equations per mode.",
            equations,
            tuple(found),
        )
    )
    total = sp.ImmutableMatrix(transient + xp)
    steps.append(
        TotalResponseStep(
            "Total response",
            "The total response is the transient (free motion from the initial state) plus the steady state "
            "(the particular solution).",
            transient,
            xp,
            total,
            t,
        )
    )
    return Response(
        solution=total,
        transient=transient,
        steady_state=xp,
        particular=der,
        constants=tuple(found),
        initial_values=(x0, v0),
        t=t,
        steps=tuple(steps),
        conditions=der.conditions,
    )


def _regime(osc: Oscillator) -> str:
    if osc.k == 0:
        return "rigid-body"
    return osc.regime
