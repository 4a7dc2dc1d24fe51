"""Natural frequencies, mass-normalised mode shapes and modal damping of ``K phi = omega^2 M phi``.

Exact (sympy) where the frequency equation ``det(K - mu M) = 0`` splits into
factors of degree at most 2 in ``mu = omega^2``; numpy floats from a Cholesky
reduction and ``numpy.linalg.eigh`` otherwise. Proportional damping
(``Phi^T C Phi`` diagonal) gives the modal damping ratios. Within a repeated
frequency the basis is the one that diagonalises the block of ``Phi^T C Phi``
(possible whenever ``C M^-1 K = K M^-1 C``). A negative ``omega^2`` (K indefinite:
an unstable model) is refused on both paths; a float ``omega^2`` within
``ZERO_RTOL`` of the largest is a rigid-body mode.

References
----------
Rao, *Mechanical Vibrations*, 5th ed., ch. 6 (modal analysis, proportional
damping), from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import sympy as sp

from calckit.engine import float_matrix, is_zero, polynomial_determinant, tidy
from calckit.errors import ModelError

__all__ = [
    "FLOAT_RTOL",
    "Modes",
    "first_positive",
    "modal_damping_matrix",
    "modal_damping_ratios",
    "natural_modes",
    "simplified",
]

_MU = sp.Symbol("mu")  # omega**2 in the frequency equation det(K - mu M) = 0
#: off-diagonal tolerance of Phi^T C Phi when modes are in floats
FLOAT_RTOL = 1e-9
#: a float eigenvalue omega^2 within this fraction of the largest |omega^2| is a rigid-body mode (0);
#: one more negative than that makes K indefinite and the model unstable
ZERO_RTOL = 1e-10
#: float eigenvalues omega^2 closer than this fraction of the largest |omega^2| count as one repeated frequency
REPEAT_RTOL = 1e-8


@dataclass(frozen=True)
class Modes:
    """Solution of ``K phi = omega^2 M phi``.

    Attributes
    ----------
    frequencies : tuple
        Natural frequencies in rad/s, ascending for numeric models: exact sympy
        values, or numpy floats when ``exact`` is False.
    shapes : sympy.ImmutableMatrix or numpy.ndarray
        Mode shapes as columns, mass-normalised (``Phi^T M Phi = I``), first
        non-zero entry positive.
    exact : bool
    """

    frequencies: tuple
    shapes: sp.ImmutableMatrix | np.ndarray
    exact: bool


def simplified(expr: sp.Expr) -> sp.Expr:
    """A simplified form of a mode quantity (``radsimp`` then ``simplify``; ``tidy`` when large)."""
    expr = sp.sympify(expr)
    if expr.is_Rational:
        return expr
    if sp.count_ops(expr) > 200:
        return tidy(expr)
    return sp.simplify(sp.radsimp(expr))


def _not_proportional(i: int, j: int, value) -> None:
    raise ModelError(
        f"the damping is not proportional: Phi^T C Phi has the off-diagonal entry {value} at "
        f"({i + 1},{j + 1}), so the modes do not uncouple",
        where="C",
        do="Use proportional damping (e.g. C = alpha M + beta K) or modal damping ratios, "
        "or integrate the coupled equations numerically",
    )


def first_positive(vector: list) -> list:
    """*vector*, negated when its first non-zero entry is negative."""
    for entry in vector:
        if not is_zero(entry):
            sign = entry.is_negative if entry.is_number else entry.could_extract_minus_sign()
            return [-e for e in vector] if sign else vector
    return vector


def _exact_modes(model) -> Modes | None:
    n = model.size
    poly = sp.Poly(polynomial_determinant(model.K - _MU * model.M), _MU)
    symbolic = bool(model.parameters)
    if not symbolic:
        _, factors = sp.factor_list(poly)
        if any(f.degree() > 2 for f, _ in factors):
            return None
    found = sp.roots(poly, cubics=False, quartics=False)
    if sum(found.values()) != n:
        if not symbolic:
            return None
        raise ModelError(
            "the natural frequencies of this symbolic model were not found in closed form",
            where="natural_frequencies",
            do="Substitute numbers for the parameters; numeric models fall back to floats",
        )
    items = [(simplified(mu), mult) for mu, mult in found.items()]
    if not symbolic:
        items.sort(key=lambda item: float(item[0]))
    freqs, shapes = [], []
    for mu, mult in items:
        if mu.is_number and mu.is_negative:
            _unstable(mu)
        basis = (model.K - mu * model.M).nullspace(iszerofunc=is_zero, simplify=simplified)
        if len(basis) != mult:
            return None if not symbolic else _no_modes()
        done: list[sp.Matrix] = []
        for vec in basis:  # Gram-Schmidt in the M inner product within a repeated frequency
            for prev in done:
                vec = vec - (prev.T * model.M * vec)[0, 0] * prev
            norm = sp.sqrt(simplified((vec.T * model.M * vec)[0, 0]))
            vec = sp.Matrix(first_positive([simplified(e / norm) for e in vec]))
            done.append(vec)
        if len(done) > 1 and not model.undamped:
            done = _exact_damping_basis(done, model.C)
        for vec in done:
            freqs.append(simplified(sp.sqrt(mu)))
            shapes.append(vec)
    return Modes(tuple(freqs), sp.ImmutableMatrix.hstack(*shapes), True)


def _exact_damping_basis(vectors: list, damping: sp.ImmutableMatrix) -> list:
    """The exact form of :func:`_damping_basis`: rotate the mass-orthonormal *vectors* of one
    repeated frequency so that their block of ``Phi^T C Phi`` is diagonal.

    The block is symmetric; its eigenvectors (orthonormalised within a repeated
    damping value) give the rotation. When they are not found in closed form the
    vectors are left as they are (the proportionality check then says so).
    """
    basis = sp.Matrix.hstack(*vectors)
    block = (basis.T * damping * basis).applyfunc(simplified)
    size = block.rows
    if all(is_zero(block[i, j]) for i in range(size) for j in range(i + 1, size)):
        return vectors
    try:
        found = block.eigenvects(simplify=True)
    except (NotImplementedError, sp.MatrixError, ValueError):  # pragma: no cover - no closed form
        return vectors
    if sum(len(vecs) for _, _, vecs in found) != size:  # pragma: no cover - not diagonalisable
        return vectors
    if all(value.is_number for value, _, _ in found):
        found = sorted(found, key=lambda item: float(item[0]))
    rotated = []
    for _, _, vecs in found:
        done: list[sp.Matrix] = []
        for vec in vecs:  # orthonormal in the plain inner product: the basis is already M-orthonormal
            for prev in done:
                vec = vec - (prev.T * vec)[0, 0] * prev
            vec = vec / sp.sqrt(simplified((vec.T * vec)[0, 0]))
            done.append(vec)
        rotated.extend(done)
    return [sp.Matrix(first_positive([simplified(e) for e in basis * q])) for q in rotated]


def _unstable(mu) -> None:
    raise ModelError(
        f"the frequency equation has the negative root omega^2 = {mu}, so K is not positive semidefinite "
        "and the model is unstable (a negative stiffness, not a rigid-body mode)",
        where="K",
        do="Check the signs of the stiffness matrix; an unstable model has no natural frequency",
    )


def _no_modes():
    raise ModelError(
        "the mode shapes of this symbolic model were not found",
        where="mode_shapes",
        do="Substitute numbers for the parameters",
    )


def _float_modes(model) -> Modes:
    mass, stiffness = float_matrix(model.M, "M"), float_matrix(model.K, "K")
    low = np.linalg.cholesky(mass)
    reduced = np.linalg.solve(low, np.linalg.solve(low, stiffness).T).T  # L^-1 K L^-T
    reduced = (reduced + reduced.T) / 2
    w2, vectors = np.linalg.eigh(reduced)
    phi = np.linalg.solve(low.T, vectors)
    for j in range(phi.shape[1]):
        col = phi[:, j]
        first = np.flatnonzero(np.abs(col) > 1e-12 * np.max(np.abs(col)))[0]
        if col[first] < 0:
            phi[:, j] = -col
    scale = max(float(np.max(np.abs(w2))), 1e-300)
    if w2[0] < -ZERO_RTOL * scale:
        _unstable(f"{w2[0]:.6g}")
    w2 = np.where(np.abs(w2) <= ZERO_RTOL * scale, 0.0, w2)  # a rigid-body mode: omega = 0 exactly
    phi = _damping_basis(phi, w2, float_matrix(model.C, "C") if not model.undamped else None, scale)
    w = np.sqrt(w2)
    return Modes(tuple(np.float64(x) for x in w), phi, False)


def _repeated_groups(values, close) -> list[list[int]]:
    """Indices of *values* (sorted) in runs where neighbours are equal by *close*."""
    groups: list[list[int]] = []
    for i, value in enumerate(values):
        if groups and close(values[groups[-1][-1]], value):
            groups[-1].append(i)
        else:
            groups.append([i])
    return groups


def _damping_basis(phi: np.ndarray, w2: np.ndarray, damping: np.ndarray | None, scale: float) -> np.ndarray:
    """Within each repeated frequency, the mass-orthonormal basis that diagonalises ``Phi^T C Phi``.

    Any basis of a repeated eigenspace is a set of mode shapes; when C commutes
    with the model (``C M^-1 K = K M^-1 C``, Caughey and O'Kelly's condition) one
    of them also uncouples the damping: the eigenvectors of the block of
    ``Phi^T C Phi`` on that eigenspace (symmetric, so ``numpy.linalg.eigh``).
    """
    if damping is None:
        return phi
    phi = phi.copy()
    for group in _repeated_groups(list(w2), lambda a, b: abs(a - b) <= REPEAT_RTOL * scale):
        if len(group) < 2:
            continue
        block = phi[:, group].T @ damping @ phi[:, group]
        _, rotation = np.linalg.eigh((block + block.T) / 2)
        phi[:, group] = phi[:, group] @ rotation
    for j in range(phi.shape[1]):
        col = phi[:, j]
        first = np.flatnonzero(np.abs(col) > 1e-12 * np.max(np.abs(col)))[0]
        if col[first] < 0:
            phi[:, j] = -col
    return phi


def natural_modes(model) -> Modes:
    """The modes of a multi-mass model: exact where the frequency equation splits, else floats."""
    return _exact_modes(model) or _float_modes(model)


def modal_damping_matrix(model, modes: Modes):
    """``Phi^T C Phi``, checked to be diagonal (proportional damping); ModelError otherwise."""
    if modes.exact:
        cm = sp.ImmutableMatrix(modes.shapes.T * model.C * modes.shapes).applyfunc(simplified)
        n = model.size
        for i in range(n):
            for j in range(i + 1, n):
                if not is_zero(cm[i, j]):
                    _not_proportional(i, j, cm[i, j])
        return cm
    phi = modes.shapes
    cm = phi.T @ float_matrix(model.C, "C") @ phi
    scale = max(float(np.max(np.abs(np.diag(cm)))), 1e-300)
    off = cm - np.diag(np.diag(cm))
    if np.max(np.abs(off)) > FLOAT_RTOL * scale:
        i, j = np.unravel_index(np.argmax(np.abs(off)), off.shape)
        _not_proportional(min(i, j), max(i, j), off[i, j])
    return cm


def modal_damping_ratios(modes: Modes, cm) -> tuple:
    """``zeta_i = (Phi^T C Phi)_ii / (2 omega_i)``; None for a rigid-body mode."""
    out = []
    for i, w in enumerate(modes.frequencies):
        if (modes.exact and is_zero(w)) or (not modes.exact and float(w) == 0.0):
            out.append(None)
        elif modes.exact:
            out.append(simplified(cm[i, i] / (2 * w)))
        else:
            out.append(np.float64(cm[i, i] / (2 * float(w))))
    return tuple(out)
