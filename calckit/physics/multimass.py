"""Multi-mass models ``M x'' + C x' + K x = F(t)`` by vector undetermined coefficients.

For ``n`` coordinates with constant symmetric mass, damping and stiffness
matrices, a forcing vector whose entries are quasi-polynomial sums is split row
by row (:func:`calckit.forcing.split_forcing`) and the exponents of all rows are
pooled. For each exponent ``lambda = a + i b`` (forcing terms
``t^j e^{a t} cos|sin(b t)``, ``j <= d``) the trial form is a vector
quasi-polynomial

.. math::

    x_g(t) = e^{a t} \\sum_{k=0}^{d+s} t^k (\\mathbf{A}_k \\cos bt + \\mathbf{B}_k \\sin bt),
    \\qquad Z(\\lambda) = \\lambda^2 M + \\lambda C + K,

where ``s`` is the multiplicity of ``lambda`` as a root of ``det Z``. Away from
resonance (``s = 0``) the coefficient equations have one solution. At a
resonance (``s > 0``) the powers of ``t`` go up by ``s`` and, unlike the scalar
method, the lower powers are kept: a vector free motion ``e^{lambda t} phi``
removes only the direction of the mode shape ``phi``, not whole rows. The
system is then underdetermined (the free motion itself solves the homogeneous
part) and the free unknowns are set to 0. The degree ``d + s`` always suffices:
``x = adj Z(D) y`` with ``det Z(D) y = t^d e^{lambda t}`` is a solution of that
degree. When the forcing is orthogonal to the resonant mode shape the extra
powers of ``t`` come out zero and the mode is not excited.

Natural frequencies and mass-normalised mode shapes solve
``K phi = omega^2 M phi``; proportional damping (``Phi^T C Phi`` diagonal)
gives modal damping ratios and the total response from an initial state by
modal superposition.

References
----------
Rao, *Mechanical Vibrations*, 5th ed., ch. 5 and 6 (two- and
multi-degree-of-freedom systems, modal analysis, proportional damping), from
memory. Gohberg, Lancaster & Rodman, *Matrix Polynomials* (1982), ch. 1 and 8
(particular solutions of ``L(D) x = f`` for a matrix polynomial), from memory.

Examples
--------
>>> import sympy as sp
>>> t = sp.Symbol("t", real=True)
>>> model = MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]])
>>> model.natural_frequencies()
(1, sqrt(3))
>>> model.particular([sp.cos(2 * t), 0], t=t).solution.T
Matrix([[-2*cos(2*t)/3, cos(2*t)/3]])
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from numbers import Number

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.engine.forcing import COS, SIN, ExponentGroup, ForcingSplit, resolve_time, split_forcing
from calckit.engine.response import Response
from calckit.engine.steps import (
    CharacteristicStep,
    DerivativesStep,
    HomogeneousStep,
    InitialConditionsStep,
    ResonanceStep,
    SolvedCoefficientsStep,
    Step,
    SubstitutionStep,
    TotalResponseStep,
    TrialFormStep,
)
from calckit.engine.undetermined import (
    LAMBDA,
    Derivation,
    LinearODE,
    _Form,
    _is_zero,
    _tidy,
    particular_step,
    vanishes,
    verification_step,
)
from calckit.errors import ForcingError, ModelError
from calckit.physics.oscillator import Oscillator

__all__ = [
    "MultiMass",
    "Modes",
    "VectorGroup",
    "VectorForcing",
    "MatrixEquationStep",
    "VectorForcingStep",
    "ModeResonanceStep",
    "VectorCoefficientEquationsStep",
    "ModeExcitationStep",
    "ModesStep",
]

_MU = sp.Symbol("mu")  # omega**2 in the frequency equation det(K - mu M) = 0
_LETTERS = (("A", "B"), ("P", "Q"), ("U", "V"), ("G", "H"))
_FLOAT_RTOL = 1e-9  # off-diagonal tolerance of Phi^T C Phi when modes are in floats


# ---------------------------------------------------------------------------
# forcing vectors


@dataclass(frozen=True)
class VectorGroup:
    """One exponent ``lambda = decay +/- i frequency`` pooled over the rows of F.

    ``rows[r]`` is row ``r``'s :class:`~calckit.forcing.ExponentGroup` at this
    exponent, or None when that row has no term with it.
    """

    decay: sp.Expr
    frequency: sp.Expr
    rows: tuple[ExponentGroup | None, ...]

    @property
    def degree(self) -> int:
        """Highest power of t in any row."""
        return max(group.degree for group in self.rows if group is not None)

    @property
    def exponent(self) -> sp.Expr:
        """``a + i b`` (``b >= 0``)."""
        return self.decay + sp.I * self.frequency

    @property
    def harmonic(self) -> bool:
        """True when the group oscillates (``b != 0``)."""
        return self.frequency != 0

    def expr(self, t: sp.Symbol) -> sp.ImmutableMatrix:
        """The group's part of F(t) as a column."""
        return sp.ImmutableMatrix([sp.S.Zero if g is None else g.expr(t) for g in self.rows])


@dataclass(frozen=True)
class VectorForcing:
    """A forcing vector split row by row, with the exponents pooled over rows.

    This is the ``split`` of a multi-mass :class:`~calckit.undetermined.Derivation`.
    """

    forcing: sp.ImmutableMatrix
    t: sp.Symbol
    rows: tuple[ForcingSplit, ...]
    groups: tuple[VectorGroup, ...]

    def expr(self) -> sp.ImmutableMatrix:
        """The split forcing as a column (equal to ``forcing``)."""
        return sp.ImmutableMatrix([row.expr() for row in self.rows])


# ---------------------------------------------------------------------------
# step records of the vector method (the scalar records are reused where they fit)


@dataclass(frozen=True)
class MatrixEquationStep(Step):
    """The equations of motion ``M x'' + C x' + K x = F(t)``."""

    mass: sp.ImmutableMatrix
    damping: sp.ImmutableMatrix
    stiffness: sp.ImmutableMatrix
    forcing: sp.ImmutableMatrix
    t: sp.Symbol
    unknown: sp.Symbol

    @property
    def kind(self) -> str:
        return "equation"


@dataclass(frozen=True)
class VectorForcingStep(Step):
    """The forcing vector's terms pooled into exponent groups over all rows."""

    forcing: sp.ImmutableMatrix
    groups: tuple[VectorGroup, ...]
    t: sp.Symbol

    @property
    def kind(self) -> str:
        return "forcing-split"


@dataclass(frozen=True)
class ModeResonanceStep(ResonanceStep):
    """Multiplicity of the exponent as a root of ``det Z``, and the mode(s) it meets.

    ``modes`` are 1-based mode numbers (empty when not identified),
    ``natural_frequency`` the undamped natural frequency met (None when the
    exponent is not a pure harmonic of the undamped model), ``mode_shape`` a
    vector spanning the free motion (None when not resonant).
    """

    modes: tuple[int, ...] = ()
    natural_frequency: sp.Expr | None = None
    mode_shape: sp.ImmutableMatrix | None = None

    @property
    def kind(self) -> str:
        return "resonance"


@dataclass(frozen=True)
class VectorCoefficientEquationsStep(Step):
    """One vector equation per basis function: ``lhs[r] = rhs[r]`` for every row r."""

    group: int
    basis: tuple[sp.Expr, ...]
    equations: tuple[tuple[sp.ImmutableMatrix, sp.ImmutableMatrix], ...]

    @property
    def kind(self) -> str:
        return "coefficient-equations"


@dataclass(frozen=True)
class ModeExcitationStep(Step):
    """At a resonance: whether the resonant mode is excited, and whether x grows without bound."""

    group: int
    modes: tuple[int, ...]
    natural_frequency: sp.Expr | None
    excited: bool
    growth_power: int  # highest extra power of t that survives (0 when not excited)
    unbounded: bool

    @property
    def kind(self) -> str:
        return "mode-excitation"


@dataclass(frozen=True)
class ModesStep(Step):
    """Natural frequencies, mass-normalised mode shapes and modal damping ratios."""

    frequencies: tuple
    shapes: sp.ImmutableMatrix
    damping_ratios: tuple

    @property
    def kind(self) -> str:
        return "modes"


# ---------------------------------------------------------------------------
# modes


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


# ---------------------------------------------------------------------------
# the model


def _rows_of(value, name: str) -> list[list]:
    if isinstance(value, np.ndarray) or isinstance(value, sp.MatrixBase):
        if isinstance(value, np.ndarray) and value.ndim > 2:
            raise ModelError(
                f"got an array with {value.ndim} dimensions",
                where=name,
                do="Give an n x n matrix, one row and one column per coordinate",
            )
        rows = value.tolist()
    elif isinstance(value, (list, tuple)):
        rows = list(value)
    else:
        raise ModelError(
            f"expected a matrix (list of rows, numpy array or sympy Matrix), got {type(value).__name__} {value!r}",
            where=name,
            do="Give an n x n matrix, one row and one column per coordinate",
        )
    if not rows:
        raise ModelError("the matrix is empty", where=name, do="Give at least one coordinate")
    if not any(isinstance(r, (list, tuple, np.ndarray)) for r in rows):
        rows = [[r] for r in rows]  # a flat list reads as a column
    lengths = {len(r) if isinstance(r, (list, tuple, np.ndarray)) else 1 for r in rows}
    if len(lengths) != 1:
        raise ModelError(
            "its rows have different lengths",
            where=name,
            do="Give an n x n matrix, every row with n entries",
        )
    return [list(r) if isinstance(r, (list, tuple, np.ndarray)) else [r] for r in rows]


def _matrix(value, name: str) -> sp.ImmutableMatrix:
    rows = _rows_of(value, name)
    n_rows, n_cols = len(rows), len(rows[0])
    if n_rows != n_cols:
        raise ModelError(
            f"the matrix has {n_rows} row(s) and {n_cols} column(s); it must be square",
            where=name,
            do="Give an n x n matrix, one row and one column per coordinate",
        )
    out = []
    for i, row in enumerate(rows):
        out_row = []
        for j, entry in enumerate(row):
            where = f"{name}[{i + 1},{j + 1}]"
            if isinstance(entry, np.generic):
                entry = entry.item()
            value = exact(entry, where=where)
            if value.has(sp.I) or (value.is_number and not value.is_real):
                raise ModelError(
                    f"the entry {value} is complex",
                    where=where,
                    do="Use real masses, damping and stiffness coefficients",
                )
            out_row.append(value)
        out.append(out_row)
    return sp.ImmutableMatrix(out)


def _check_symmetric(matrix: sp.ImmutableMatrix, name: str, what: str) -> None:
    n = matrix.rows
    for i in range(n):
        for j in range(i + 1, n):
            if not _is_zero(matrix[i, j] - matrix[j, i]):
                raise ModelError(
                    f"the matrix is not symmetric: {name}[{i + 1},{j + 1}] = {matrix[i, j]} but "
                    f"{name}[{j + 1},{i + 1}] = {matrix[j, i]}; passive {what} give symmetric matrices",
                    where=name,
                    do=f"Check the entry; an active element (feedback, gyroscopic or follower force) "
                    f"belongs in the forcing, not in {name}",
                )


def _check_positive_definite(mass: sp.ImmutableMatrix) -> tuple[str, ...]:
    """Exact square-root-free Cholesky (LDL^T) for numbers; minors for symbols."""
    n = mass.rows
    if not mass.free_symbols:
        low = [[sp.S.Zero] * n for _ in range(n)]
        diag = [sp.S.Zero] * n
        for j in range(n):
            pivot = mass[j, j] - sum(low[j][k] ** 2 * diag[k] for k in range(j))
            if not (pivot > 0):
                raise ModelError(
                    f"the matrix is not positive definite: pivot {j + 1} of its Cholesky factorisation is {pivot}",
                    where="M",
                    do="Give every coordinate a positive mass (or inertia) and check the coupling "
                    "terms; condense massless coordinates out of the model first",
                )
            diag[j] = pivot
            for i in range(j + 1, n):
                low[i][j] = (mass[i, j] - sum(low[i][k] * low[j][k] * diag[k] for k in range(j))) / pivot
        return ()
    minors = []
    for j in range(1, n + 1):
        minor = sp.factor(mass[:j, :j].det())
        if minor.is_nonpositive:
            raise ModelError(
                f"the matrix is not positive definite: its leading principal minor of order {j} is {minor}",
                where="M",
                do="Give every coordinate a positive mass; declare symbols positive=True",
            )
        minors.append(minor)
    return (
        "M is taken as positive definite: its leading principal minors "
        + ", ".join(map(str, minors))
        + " are assumed positive",
    )


class MultiMass:
    """``M x'' + C x' + K x = F(t)`` for ``n`` coordinates.

    Parameters
    ----------
    M, C, K : n x n matrices
        Lists of rows, numpy arrays or sympy matrices of ints, floats (read as
        the decimals they display), Fractions, sympy numbers or symbols.
        ``C`` may be None or 0 for an undamped model. M must be symmetric and
        positive definite (checked exactly for numbers; for symbols, a leading
        principal minor known to be <= 0 is refused and the others are assumed
        positive, see ``assumptions``); C and K must be symmetric, as passive
        springs and dampers make them.

    Examples
    --------
    >>> import sympy as sp
    >>> t = sp.Symbol("t", real=True)
    >>> model = MultiMass([[2, 0], [0, 1]], [[3, -1], [-1, 1]], [[30, -10], [-10, 10]])
    >>> der = model.particular([10, 0], t=t)
    >>> der.solution.T, der.verified
    (Matrix([[1/2, 1/2]]), True)
    """

    def __init__(self, M, C, K, *, name: str = "x"):
        self.M = _matrix(M, "M")
        n = self.M.rows
        self.K = _matrix(K, "K")
        if C is None or (isinstance(C, (int, float, Fraction)) and not isinstance(C, bool) and C == 0):
            self.C = sp.ImmutableMatrix.zeros(n, n)
        else:
            self.C = _matrix(C, "C")
        for other, label in ((self.C, "C"), (self.K, "K")):
            if other.rows != n:
                raise ModelError(
                    f"M is {n} x {n} but {label} is {other.rows} x {other.rows}",
                    where="MultiMass(M, C, K)",
                    do="Give M, C and K of the same size, one row and one column per coordinate",
                )
        _check_symmetric(self.M, "M", "masses")
        _check_symmetric(self.C, "C", "dampers")
        _check_symmetric(self.K, "K", "springs")
        self.assumptions: tuple[str, ...] = _check_positive_definite(self.M)
        self.name = name
        self._modes: Modes | None = None

    # ------------------------------------------------------------------ basics
    @property
    def size(self) -> int:
        """Number of coordinates n."""
        return self.M.rows

    @property
    def parameters(self) -> frozenset:
        """Free symbols of M, C and K."""
        return frozenset(self.M.free_symbols | self.C.free_symbols | self.K.free_symbols)

    @property
    def undamped(self) -> bool:
        """True when C is the zero matrix."""
        return all(entry == 0 for entry in self.C)

    def dynamic_stiffness(self, variable: sp.Expr = LAMBDA) -> sp.ImmutableMatrix:
        """``Z(lambda) = lambda^2 M + lambda C + K``."""
        return sp.ImmutableMatrix(variable**2 * self.M + variable * self.C + self.K)

    def characteristic_polynomial(self, variable: sp.Symbol = LAMBDA) -> sp.Expr:
        """``det Z(lambda)``, a polynomial of degree 2n."""
        return sp.expand(self.dynamic_stiffness(variable).det(method="berkowitz"))

    def __repr__(self) -> str:
        return f"MultiMass(M={self.M.tolist()}, C={self.C.tolist()}, K={self.K.tolist()})"

    # ------------------------------------------------------------------ modes
    def modes(self) -> Modes:
        """Natural frequencies and mass-normalised mode shapes (cached).

        Exact (sympy) when the frequency equation ``det(K - omega^2 M) = 0``
        splits into factors of degree at most 2 in ``omega^2`` (always for n <= 2,
        and for symbolic models, where a failure raises ModelError); otherwise
        numpy floats from a Cholesky reduction and ``numpy.linalg.eigh``.
        """
        if self._modes is None:
            self._modes = _exact_modes(self) or _float_modes(self)
        return self._modes

    def natural_frequencies(self) -> tuple:
        """Undamped natural frequencies ``omega_i`` (rad/s) of ``K phi = omega^2 M phi``.

        .. math:: \\det(K - \\omega^2 M) = 0

        Ascending for numeric models; exact sympy values where the frequency
        equation splits into quadratics, numpy floats otherwise (see :meth:`modes`).

        Examples
        --------
        >>> MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]]).natural_frequencies()
        (1, sqrt(3))
        """
        return self.modes().frequencies

    def mode_shapes(self):
        """Mode shapes as columns, mass-normalised: ``Phi^T M Phi = I``.

        A sympy ImmutableMatrix when exact, else a numpy array (see :meth:`modes`).

        Examples
        --------
        >>> MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]]).mode_shapes()
        Matrix([
        [sqrt(2)/2,  sqrt(2)/2],
        [sqrt(2)/2, -sqrt(2)/2]])
        """
        return self.modes().shapes

    def modal_damping(self):
        """``Phi^T C Phi``, checked to be diagonal (proportional damping).

        Raises ModelError when the damping is not proportional.
        """
        modes = self.modes()
        if modes.exact:
            cm = sp.ImmutableMatrix(modes.shapes.T * self.C * modes.shapes).applyfunc(_simplify)
            n = self.size
            for i in range(n):
                for j in range(i + 1, n):
                    if not _is_zero(cm[i, j]):
                        _not_proportional(i, j, cm[i, j])
            return cm
        phi = modes.shapes
        cm = phi.T @ _floats(self.C, "C") @ phi
        scale = max(float(np.max(np.abs(np.diag(cm)))), 1e-300)
        off = cm - np.diag(np.diag(cm))
        if np.max(np.abs(off)) > _FLOAT_RTOL * scale:
            i, j = np.unravel_index(np.argmax(np.abs(off)), off.shape)
            _not_proportional(min(i, j), max(i, j), off[i, j])
        return cm

    def modal_damping_ratios(self) -> tuple:
        """``zeta_i = (Phi^T C Phi)_ii / (2 omega_i)`` for proportional damping.

        .. math:: \\Phi^T C \\Phi = \\operatorname{diag}(2 \\zeta_i \\omega_i)

        None for a mode of zero natural frequency (rigid-body mode). Raises
        ModelError when ``Phi^T C Phi`` is not diagonal (damping not proportional).

        Examples
        --------
        >>> MultiMass([[1, 0], [0, 1]], [[2, -1], [-1, 2]], [[20, -10], [-10, 20]]).modal_damping_ratios()
        (sqrt(10)/20, sqrt(30)/20)
        """
        return _ratios(self.modes(), self.modal_damping())

    # ------------------------------------------------------------------ frequency response
    def frequency_response(self, omegas) -> np.ndarray:
        """Receptance matrices ``H(omega) = (K - omega^2 M + i omega C)^{-1}`` at numeric frequencies.

        .. math:: X = H(\\omega) F, \\qquad H(\\omega) = (K - \\omega^2 M + i \\omega C)^{-1}

        Returns a complex array of shape ``(len(omegas), n, n)``; ``H[k, i, j]``
        is the response of coordinate i to a unit harmonic force on coordinate j.

        Examples
        --------
        >>> H = MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]]).frequency_response([0.0])
        >>> H.shape, round(float(H[0, 0, 0].real), 6)
        ((1, 2, 2), 0.666667)
        """
        mass, damping, stiffness = (
            _floats(m, label) for m, label in ((self.M, "M"), (self.C, "C"), (self.K, "K"))
        )
        w = np.atleast_1d(np.asarray(omegas, dtype=float))
        if w.ndim != 1:
            raise ModelError(
                f"expected a list of frequencies, got an array of shape {w.shape}",
                where="frequency_response",
                do="Give a one-dimensional sequence of angular frequencies in rad/s",
            )
        z = stiffness[None] - (w**2)[:, None, None] * mass[None] + 1j * w[:, None, None] * damping[None]
        try:
            return np.linalg.inv(z)
        except np.linalg.LinAlgError as exc:
            dets = np.abs(np.linalg.det(z))
            where = float(w[int(np.argmin(dets))])
            raise ModelError(
                f"the receptance is unbounded at omega = {where:g} rad/s (undamped resonance)",
                where="frequency_response",
                do="Leave the natural frequencies out of the list, or add damping",
            ) from exc

    # ------------------------------------------------------------------ the method
    def particular(self, F, *, t: sp.Symbol | None = None) -> Derivation:
        """Particular solution of ``M x'' + C x' + K x = F(t)`` by vector undetermined coefficients.

        .. math::

            x_p(t) = \\sum_g e^{a_g t} \\sum_{k=0}^{d_g+s_g} t^k
            (\\mathbf{A}_{g,k} \\cos b_g t + \\mathbf{B}_{g,k} \\sin b_g t)

        Parameters
        ----------
        F : sequence of n forcing expressions (or a sympy column)
            Each entry a finite sum of ``t**j exp(a t) cos|sin(b t)`` terms,
            their products and powers; 0 where no force acts.
        t : sympy.Symbol, optional
            The time variable (default: the symbol named ``t`` in F).

        Returns
        -------
        Derivation
            ``solution`` is a sympy ImmutableMatrix column ``x_p(t)``; ``split``
            a :class:`VectorForcing`; ``operator`` this model; ``verified`` is
            True when every row of ``M x_p'' + C x_p' + K x_p - F`` vanishes.

        Examples
        --------
        >>> import sympy as sp
        >>> t = sp.Symbol("t", real=True)
        >>> model = MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]])
        >>> der = model.particular([sp.cos(t), sp.cos(t)], t=t)  # at mode 1, in its shape
        >>> der.solution.T
        Matrix([[t*sin(t)/2, t*sin(t)/2]])
        """
        return _derive(self, F, t)

    # ------------------------------------------------------------------ total response
    def response(self, F, x0=None, v0=None, *, t: sp.Symbol | None = None) -> Response:
        """Total response meeting ``x(0) = x0`` and ``x'(0) = v0`` (proportional damping).

        .. math::

            x(t) = x_p(t) + \\sum_i \\phi_i q_i(t), \\qquad
            \\ddot q_i + 2 \\zeta_i \\omega_i \\dot q_i + \\omega_i^2 q_i = 0,

            q_i(0) = \\phi_i^T M (x_0 - x_p(0)), \\quad
            \\dot q_i(0) = \\phi_i^T M (v_0 - \\dot x_p(0)).

        The steady state is the exact particular solution; each mode's free
        motion uses the transient basis of its modal oscillator (undamped,
        under-, critically or over-damped, or a rigid-body mode). Non-proportional
        damping raises ModelError (its free motion has complex mode shapes; this
        kit does not solve it). When the modes are in floats (see :meth:`modes`)
        the transient carries floats.

        Parameters
        ----------
        F : forcing vector (see :meth:`particular`)
        x0, v0 : sequences of n numbers, optional
            Initial displacements and velocities (default zero).

        Returns
        -------
        Response
            ``solution``, ``transient`` and ``steady_state`` are sympy columns.

        Examples
        --------
        >>> import sympy as sp
        >>> t = sp.Symbol("t", real=True)
        >>> model = MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]])
        >>> model.response([0, 0], [1, 1], [0, 0], t=t).solution.T
        Matrix([[cos(t), cos(t)]])
        """
        return _total(self, F, x0, v0, t)


# ---------------------------------------------------------------------------
# helpers


def _simplify(expr: sp.Expr) -> sp.Expr:
    expr = sp.sympify(expr)
    if expr.is_Rational:
        return expr
    if sp.count_ops(expr) > 200:
        return _tidy(expr)
    return sp.simplify(sp.radsimp(expr))


def _floats(matrix: sp.ImmutableMatrix, label: str) -> np.ndarray:
    if matrix.free_symbols:
        raise ModelError(
            f"{label} has symbols ({', '.join(sorted(map(str, matrix.free_symbols)))}); this needs numbers",
            where=label,
            do="Substitute numbers first, e.g. MultiMass(M.subs(values), C.subs(values), K.subs(values))",
        )
    return np.array(matrix.tolist(), dtype=float)


def _not_proportional(i: int, j: int, value) -> None:
    raise ModelError(
        f"the damping is not proportional: Phi^T C Phi has the off-diagonal entry {value} at "
        f"({i + 1},{j + 1}), so the modes do not uncouple",
        where="C",
        do="Use proportional damping (e.g. C = alpha M + beta K) or modal damping ratios, "
        "or integrate the coupled equations numerically",
    )


def _first_positive(vector: list) -> list:
    for entry in vector:
        if not _is_zero(entry):
            sign = entry.is_negative if entry.is_number else entry.could_extract_minus_sign()
            return [-e for e in vector] if sign else vector
    return vector


def _exact_modes(model: MultiMass) -> Modes | None:
    n = model.size
    poly = sp.Poly(sp.expand((model.K - _MU * model.M).det(method="berkowitz")), _MU)
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
    items = [(_simplify(mu), mult) for mu, mult in found.items()]
    if not symbolic:
        items.sort(key=lambda item: float(item[0]))
    freqs, shapes = [], []
    for mu, mult in items:
        if mu.is_number and mu.is_negative:  # pragma: no cover - K indefinite
            raise ModelError(
                f"the frequency equation has the negative root omega^2 = {mu}, so K is not positive semidefinite",
                where="K",
                do="Check the signs of the stiffness matrix; an unstable model has no natural frequency",
            )
        basis = (model.K - mu * model.M).nullspace(iszerofunc=_is_zero, simplify=_simplify)
        if len(basis) != mult:
            return None if not symbolic else _no_modes()
        done: list[sp.Matrix] = []
        for vec in basis:  # Gram-Schmidt in the M inner product within a repeated frequency
            for prev in done:
                vec = vec - (prev.T * model.M * vec)[0, 0] * prev
            norm = sp.sqrt(_simplify((vec.T * model.M * vec)[0, 0]))
            vec = sp.Matrix(_first_positive([_simplify(e / norm) for e in vec]))
            done.append(vec)
        for vec in done:
            freqs.append(_simplify(sp.sqrt(mu)))
            shapes.append(vec)
    return Modes(tuple(freqs), sp.ImmutableMatrix.hstack(*shapes), True)


def _no_modes():
    raise ModelError(
        "the mode shapes of this symbolic model were not found",
        where="mode_shapes",
        do="Substitute numbers for the parameters",
    )


def _float_modes(model: MultiMass) -> Modes:
    mass, stiffness = _floats(model.M, "M"), _floats(model.K, "K")
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
    w = np.sqrt(np.clip(w2, 0.0, None))
    return Modes(tuple(np.float64(x) for x in w), phi, False)


def _forcing_entries(model: MultiMass, F) -> list:
    if isinstance(F, sp.MatrixBase):
        if 1 not in F.shape:
            raise ForcingError(
                f"got a {F.rows} x {F.cols} matrix",
                where="F",
                do="Give a column (or list) of forcing expressions, one per coordinate",
            )
        entries = list(F)
    elif isinstance(F, np.ndarray):
        entries = [e.item() if isinstance(e, np.generic) else e for e in F.ravel().tolist()]
    elif isinstance(F, Sequence) and not isinstance(F, str):
        entries = list(F)
    else:
        raise ForcingError(
            f"expected a list of forcing expressions, got {type(F).__name__} {F!r}",
            where="F",
            do="Give one forcing expression per coordinate, e.g. [F0*sympy.cos(w*t), 0]",
        )
    if len(entries) != model.size:
        raise ForcingError(
            f"got {len(entries)} forcing {'entry' if len(entries) == 1 else 'entries'} for a model with {model.size} coordinates",
            where="F",
            do="Give one forcing expression per coordinate, with 0 where no force acts",
        )
    return entries


def _split_vector(model: MultiMass, F, t) -> VectorForcing:
    entries = _forcing_entries(model, F)
    if t is None:
        named = {s for e in entries for s in getattr(e, "free_symbols", ()) if s.name == "t"}
        t = resolve_time(sp.Add(*named), next(iter(named)) if len(named) == 1 else None)
    else:
        t = resolve_time(sp.S.Zero, t)
    splits = []
    for r, entry in enumerate(entries):
        if isinstance(entry, Number) and not isinstance(entry, (bool, sp.Basic)):
            entry = entry if isinstance(entry, (int, float, Fraction)) else float(entry)
        try:
            splits.append(split_forcing(entry, t))
        except ForcingError as exc:
            where = f"F row {r + 1}" + (f", {exc.where}" if exc.where else "")
            raise ForcingError(exc.what, where=where, do=exc.do) from None
    pooled: dict = {}
    for r, split in enumerate(splits):
        for group in split.groups:
            pooled.setdefault((group.decay, group.frequency), [None] * model.size)[r] = group
    keys = sorted(pooled, key=lambda k: (sp.default_sort_key(k[0]), sp.default_sort_key(k[1])))
    groups = tuple(VectorGroup(a, b, tuple(pooled[(a, b)])) for a, b in keys)
    forcing = sp.ImmutableMatrix([split.forcing for split in splits])
    return VectorForcing(forcing, t, tuple(splits), groups)


def _letters(taken: set[str]) -> tuple[str, str]:
    for pair in _LETTERS:
        if not any(name == letter or name.startswith(letter + "_") for name in taken for letter in pair):
            return pair
    return ("alpha", "beta")


def _real_imag(expr: sp.Expr) -> tuple[sp.Expr, sp.Expr]:
    """Split by the explicit I, treating symbols as real."""
    real, imag = sp.S.Zero, sp.S.Zero
    for term in sp.Add.make_args(sp.expand(expr)):
        coef, rest = term.as_independent(sp.I, as_Add=False)
        if rest == sp.I:
            imag += coef
        elif rest == 1:
            real += term
        else:  # pragma: no cover - I**k folded by expand
            real += term
    return real, imag


def _plain(expr) -> str:
    from calckit.engine.undetermined import _plain as scalar_plain

    return scalar_plain(expr)


# ---------------------------------------------------------------------------
# the derivation


def _derive(model: MultiMass, F, t) -> Derivation:
    split = _split_vector(model, F, t)
    t = split.t
    n = model.size
    for label, matrix in (("M", model.M), ("C", model.C), ("K", model.K)):
        if matrix.has(t):
            raise ModelError(
                f"{label} depends on the time variable {t}",
                where=label,
                do="The method needs constant coefficients; freeze the matrix at a value",
            )
    x = sp.Symbol(model.name)
    det = model.characteristic_polynomial()
    det_ode = LinearODE(sp.Poly(det, LAMBDA).all_coeffs())
    roots = None
    if not model.parameters:
        found = sp.roots(sp.Poly(det, LAMBDA), cubics=False, quartics=False)
        if sum(found.values()) == 2 * n:
            roots = tuple(sorted(found.items(), key=lambda item: sp.default_sort_key(item[0])))
    steps: list[Step] = [
        MatrixEquationStep(
            "Equations of motion",
            f"The {n} coupled equations to solve: mass, damping and stiffness matrices acting on the "
            "displacement vector on the left, the forcing vector on the right.",
            model.M,
            model.C,
            model.K,
            split.forcing,
            t,
            x,
        ),
        VectorForcingStep(
            "Forcing split into exponent groups",
            _split_sentence(split),
            split.forcing,
            split.groups,
            t,
        ),
        CharacteristicStep(
            "Characteristic polynomial",
            "Substituting x = phi e^(lambda t) into the free equations gives Z(lambda) phi = 0 with "
            "Z(lambda) = lambda^2 M + lambda C + K; its determinant p(lambda) = det Z(lambda) vanishes "
            "at the exponents of free motion, which decide where the trial form needs extra powers of t.",
            LAMBDA,
            det,
            roots,
        ),
    ]
    taken = {s.name for s in split.forcing.free_symbols | model.parameters} | {t.name, model.name}
    pair = _letters(taken)
    many = len(split.groups) > 1
    parts: list[sp.ImmutableMatrix] = []
    conditions: list[sp.Expr] = []
    for gi, group in enumerate(split.groups, start=1):
        part, group_steps, conds = _solve_group(model, det_ode, group, gi, many, pair, t)
        parts.append(part)
        steps.extend(group_steps)
        conditions.extend(c for c in conds if c not in conditions)
    solution = sp.ImmutableMatrix.zeros(n, 1)
    for part in parts:
        solution = solution + part
    solution = sp.ImmutableMatrix(solution)
    steps.append(particular_step(solution, t, many))
    residual = _residual(model, solution, split.forcing, t)
    verified = all(vanishes(row, t) for row in residual)
    shown = sp.ImmutableMatrix.zeros(n, 1) if verified else residual.applyfunc(sp.simplify)
    steps.append(verification_step(shown, verified, "every row of the equations", list(split.forcing)))
    return Derivation(model, split.forcing, t, split, solution, tuple(steps), verified, tuple(conditions))


def _residual(model: MultiMass, x: sp.ImmutableMatrix, forcing, t) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix(model.M * x.diff(t, 2) + model.C * x.diff(t) + model.K * x - forcing)


def _split_sentence(split: VectorForcing) -> str:
    n = len(split.groups)
    if n == 0:
        return "There is no forcing, so the particular solution is zero."
    if n == 1:
        return (
            "Every term of every row shares one exponent lambda = a + i b, so one vector trial form covers "
            "the whole forcing vector."
        )
    return (
        f"The terms of all rows are expanded and sorted into {n} groups by their exponent lambda = a + i b; "
        "each group gets its own vector trial form (one set of unknowns per coordinate) and is solved on its own."
    )


def _unknowns(group: VectorGroup, gi: int, many: bool, top: int, n: int, pair):
    def name(letter: str, r: int, k: int) -> str:
        parts = ([str(gi)] if many else []) + [str(r + 1)] + ([str(k)] if top > 0 else [])
        return f"{letter}_{{{','.join(parts)}}}" if len(parts) > 1 else f"{letter}_{parts[0]}"

    cos_u = [[sp.Symbol(name(pair[0], r, k)) for k in range(top + 1)] for r in range(n)]
    sin_u = (
        [[sp.Symbol(name(pair[1], r, k)) for k in range(top + 1)] for r in range(n)]
        if group.harmonic
        else None
    )
    return cos_u, sin_u


def _basis(group: VectorGroup, kind: str, j: int, t: sp.Symbol) -> sp.Expr:
    trig = 1 if not group.harmonic else (sp.cos if kind == COS else sp.sin)(group.frequency * t)
    return t**j * sp.exp(group.decay * t) * trig


def _solve_group(model: MultiMass, det_ode: LinearODE, group: VectorGroup, gi, many, pair, t):
    n = model.size
    prefix = f"Group {gi}: " if many else ""
    s, value = det_ode.multiplicity(group.exponent)
    d = group.degree
    top = d + s
    modes, natural, shape = _resonant_modes(model, group) if s else ((), None, None)
    steps: list[Step] = [
        ModeResonanceStep(
            prefix + "is the exponent a root?" if many else "Is the exponent a root?",
            _resonance_sentence(model, group, s, modes, natural),
            gi,
            group.exponent,
            value,
            s,
            modes,
            natural,
            shape,
        )
    ]
    cos_u, sin_u = _unknowns(group, gi, many, top, n, pair)
    forms = []
    for r in range(n):
        terms: dict = {}
        for k in range(top + 1):
            terms[(COS, k)] = {cos_u[r][k]: sp.S.One}
            if group.harmonic:
                terms[(SIN, k)] = {sin_u[r][k]: sp.S.One}
        forms.append(_Form(group.decay, group.frequency, terms))
    first = [form.derivative() for form in forms]
    second = [form.derivative() for form in first]
    unknowns = tuple(
        u
        for k in range(top + 1)
        for r in range(n)
        for u in ((cos_u[r][k], sin_u[r][k]) if group.harmonic else (cos_u[r][k],))
    )
    trial = sp.ImmutableMatrix([form.expr(t) for form in forms])
    steps.append(
        TrialFormStep(
            prefix + "trial form" if many else "Trial form",
            _trial_sentence(group, s, d, n),
            gi,
            trial,
            unknowns,
        )
    )
    steps.append(
        DerivativesStep(
            prefix + "derivatives of the trial form" if many else "Derivatives of the trial form",
            "The trial vector is differentiated twice, entry by entry.",
            gi,
            (
                sp.ImmutableMatrix([f.expr(t) for f in first]),
                sp.ImmutableMatrix([f.expr(t) for f in second]),
            ),
        )
    )
    lhs_forms = []
    for i in range(n):
        pairs = []
        for c in range(n):
            for weight, form in (
                (model.M[i, c], second[c]),
                (model.C[i, c], first[c]),
                (model.K[i, c], forms[c]),
            ):
                if weight != 0:
                    pairs.append((weight, form))
        lhs_forms.append(forms[0].scaled_sum(pairs))
    steps.append(
        SubstitutionStep(
            prefix + "substitution into the equations" if many else "Substitution into the equations",
            "The trial vector and its derivatives are substituted into M x'' + C x' + K x, row by row, "
            "and collected by basis function.",
            gi,
            sp.ImmutableMatrix([form.expr(t) for form in lhs_forms]),
            group.expr(t),
        )
    )
    rhs = [
        {} if row is None else {(term.kind, term.power): term.coefficient for term in row.terms}
        for row in group.rows
    ]
    kinds = (COS, SIN) if group.harmonic else (COS,)
    keys = [(kind, j) for j in range(top, -1, -1) for kind in kinds]
    index = {u: col for col, u in enumerate(unknowns)}
    a_rows, b_rows, shown, basis = [], [], [], []
    for key in keys:
        lhs_col, rhs_col = [], []
        for i in range(n):
            lin = {u: sp.expand(c) for u, c in lhs_forms[i].terms.get(key, {}).items()}
            row = [sp.S.Zero] * len(unknowns)
            for u, c in lin.items():
                row[index[u]] = c
            r_value = rhs[i].get(key, sp.S.Zero)
            a_rows.append(row)
            b_rows.append(r_value)
            lhs_col.append(sp.Add(*(c * u for u, c in lin.items() if c != 0)))
            rhs_col.append(r_value)
        if all(e == 0 for e in lhs_col) and all(_is_zero(e) for e in rhs_col):
            continue
        shown.append((sp.ImmutableMatrix(lhs_col), sp.ImmutableMatrix(rhs_col)))
        basis.append(_basis(group, key[0], key[1], t))
    steps.append(
        VectorCoefficientEquationsStep(
            prefix + "equating coefficients" if many else "Equating coefficients",
            "Both sides must agree for every t, so in every row the coefficients of each basis function "
            "must be equal: one vector equation (n scalar equations) per basis function.",
            gi,
            tuple(basis),
            tuple(shown),
        )
    )
    values = _solve_linear(sp.Matrix(a_rows), sp.Matrix(b_rows), unknowns, group)
    conds = _conditions(model, group, det_ode, s)
    steps.append(
        SolvedCoefficientsStep(
            prefix + "solved coefficients" if many else "Solved coefficients",
            "The linear system is solved exactly."
            if not s
            else "At a resonance the system is underdetermined: the free motion in the resonant mode solves "
            "its homogeneous part, so the free unknowns are set to 0 and the others solved exactly.",
            gi,
            tuple((u, values[u]) for u in unknowns),
            tuple(conds),
        )
    )
    part = trial.xreplace(values)
    if s:
        extra = [
            k - d
            for k in range(d + 1, top + 1)
            for r in range(n)
            for u in ((cos_u[r][k], sin_u[r][k]) if group.harmonic else (cos_u[r][k],))
            if not _is_zero(values[u])
        ]
        growth = max(extra, default=0)
        unbounded = bool(growth) and _is_zero(group.decay)
        steps.append(
            ModeExcitationStep(
                prefix + "is the resonant mode excited?" if many else "Is the resonant mode excited?",
                _excitation_sentence(model, modes, natural, growth, unbounded, d),
                gi,
                modes,
                natural,
                bool(growth),
                growth,
                unbounded,
            )
        )
    return part, steps, conds


def _solve_linear(a: sp.Matrix, b: sp.Matrix, unknowns: tuple, group: VectorGroup) -> dict:
    found = sp.linsolve((a, b), list(unknowns))
    if not found:  # cannot happen when s is the true multiplicity
        raise ModelError(
            "the coefficient equations have no solution",
            where=f"exponent {group.exponent}",
            do="Please report this forcing and model to the calckit maintainers",
        )
    (solved,) = found
    raw = dict(zip(unknowns, solved, strict=True))
    free = set().union(*(sp.sympify(v).free_symbols for v in raw.values())) & set(unknowns)
    zero = {u: sp.S.Zero for u in free}
    return {u: _tidy(sp.sympify(v).xreplace(zero)) for u, v in raw.items()}


def _conditions(model: MultiMass, group: VectorGroup, det_ode: LinearODE, s: int) -> list:
    if s or not (model.parameters or group.exponent.free_symbols):
        return []
    value = sp.expand(det_ode.characteristic_polynomial().subs(LAMBDA, group.exponent))
    real, imag = _real_imag(value)
    target = real if _is_zero(imag) else real**2 + imag**2
    condition = sp.Ne(_tidy(target), 0)
    return [] if condition is sp.true else [condition]


def _resonant_modes(model: MultiMass, group: VectorGroup):
    """(mode numbers, undamped natural frequency met, a vector of the free motion)."""
    lam = group.exponent
    natural = group.frequency if (model.undamped and _is_zero(group.decay)) else None
    if natural is not None:
        shape_basis = (model.K - natural**2 * model.M).nullspace(iszerofunc=_is_zero, simplify=_simplify)
    else:
        shape_basis = model.dynamic_stiffness(lam).nullspace(iszerofunc=_is_zero, simplify=_simplify)
    shape = sp.ImmutableMatrix(_first_positive(list(shape_basis[0]))) if shape_basis else None
    found: tuple[int, ...] = ()
    try:
        modes = model.modes()
        if not modes.exact and natural is not None and natural.is_number:
            found = tuple(
                i + 1
                for i, w in enumerate(modes.frequencies)
                if abs(float(w) - float(natural)) <= 1e-9 * max(1.0, float(natural))
            )
        elif modes.exact:
            if natural is not None:
                found = tuple(i + 1 for i, w in enumerate(modes.frequencies) if _is_zero(w - natural))
            else:
                cm = model.modal_damping()
                found = tuple(
                    i + 1
                    for i, w in enumerate(modes.frequencies)
                    if _is_zero(sp.expand(lam**2 + cm[i, i] * lam + w**2))
                )
    except ModelError:
        found = ()
    return found, natural, shape


def _modes_text(modes: tuple[int, ...]) -> str:
    if not modes:
        return "a mode"
    if len(modes) == 1:
        return f"mode {modes[0]}"
    return "modes " + " and ".join(map(str, modes))


def _resonance_sentence(model, group, s, modes, natural) -> str:
    lam = _plain(group.exponent)
    if s == 0:
        return (
            f"det Z({lam}) is not zero: no mode resonates with this group, so the trial form needs no extra "
            "powers of t."
        )
    which = {1: "a simple root", 2: "a double root"}.get(s, f"a root of multiplicity {s}")
    factor = "t" if s == 1 else f"t^{s}"
    if natural is not None and _is_zero(natural):
        what = f"{_modes_text(modes)} is a rigid-body mode (natural frequency 0): the forcing has its shape"
    elif natural is not None:
        what = (
            f"resonance: {_modes_text(modes)} of the undamped model has the natural frequency "
            f"{_plain(natural)} rad/s, the forcing frequency"
        )
    else:
        what = f"the forcing has the shape of a free motion of the damped model ({_modes_text(modes)})"
    return (
        f"The exponent {lam} is {which} of det Z ({what}), so the powers of t in the vector trial form go up "
        f"by {s}: every power up to the forcing's degree plus {s} is kept (factor {factor} on the top term)."
    )


def _trial_sentence(group: VectorGroup, s: int, d: int, n: int) -> str:
    shape = (
        "cosine and sine terms"
        if group.harmonic
        else ("an exponential" if group.decay != 0 else "a polynomial")
    )
    top = d + s
    powers = f" times powers of t up to t^{top}" if top else ""
    return (
        f"Each of the {n} coordinates gets the shape of the forcing group ({shape}{powers}) with its own "
        "unknown coefficients."
    )


def _excitation_sentence(model, modes, natural, growth, unbounded, d) -> str:
    who = _modes_text(modes)
    if not growth:
        return (
            f"The coefficients of the extra powers of t come out zero: the forcing is orthogonal to the shape "
            f"of {who}, so {who} is not excited and the response stays of the forcing's form."
        )
    like = "t" if growth == 1 else f"t^{growth}"
    text = f"The extra powers of t do not vanish: {who} is excited at resonance"
    if unbounded:
        text += (
            f" and, with no damping to limit it, the response grows without bound (like {like} times the forcing's form)"
            if model.undamped
            else f" and the response grows without bound (like {like})"
        )
    return text + "."


# ---------------------------------------------------------------------------
# total response


def _vector(values, n: int, label: str) -> sp.ImmutableMatrix:
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


def _total(model: MultiMass, F, x0, v0, t) -> Response:
    n = model.size
    x0 = _vector(x0, n, "x0")
    v0 = _vector(v0, n, "v0")
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
        q0 = _simplify((column.T * model.M * start)[0, 0])
        qd0 = _simplify((column.T * model.M * speed)[0, 0])
        b0 = [sp.simplify(b.subs(t, 0)) for b in basis]
        b1 = [sp.simplify(sp.diff(b, t).subs(t, 0)) for b in basis]
        det = b0[0] * b1[1] - b0[1] * b1[0]
        c1 = _simplify((q0 * b1[1] - b0[1] * qd0) / det)
        c2 = _simplify((b0[0] * qd0 - b1[0] * q0) / det)
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
    ratios = _ratios(modes, cm)
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
    return Response(total, transient, xp, der, tuple(found), (x0, v0), t, tuple(steps))


def _regime(osc: Oscillator) -> str:
    if osc.k == 0:
        return "rigid-body"
    return osc.regime


def _ratios(modes: Modes, cm) -> tuple:
    out = []
    for i, w in enumerate(modes.frequencies):
        if (modes.exact and _is_zero(w)) or (not modes.exact and float(w) == 0.0):
            out.append(None)
        elif modes.exact:
            out.append(_simplify(cm[i, i] / (2 * w)))
        else:
            out.append(np.float64(cm[i, i] / (2 * float(w))))
    return tuple(out)


# ---------------------------------------------------------------------------
# formula rows for the renderer (it has no entry for these record types)


def _register_rows() -> None:
    from calckit.render.latex import Row, Tex, expr_latex, expr_text, step_rows

    eq = Tex("=", "=")

    def e(expr, nt) -> Tex:
        return Tex(expr_latex(expr, nt.name_map), expr_text(expr))

    def name(latex: str, text: str | None = None) -> Tex:
        return Tex(latex, latex if text is None else text)

    @step_rows.register
    def _(step: MatrixEquationStep, nt) -> tuple:
        lhs = Tex(r"M \ddot{x} + C \dot{x} + K x", "M x'' + C x' + K x")
        rows = [Row((lhs,), (eq, name("F(t)")))]
        for label, matrix in (("M", step.mass), ("C", step.damping), ("K", step.stiffness)):
            rows.append(Row((name(label),), (eq, e(matrix, nt))))
        rows.append(Row((name("F(t)"),), (eq, e(step.forcing, nt))))
        return tuple(rows)

    @step_rows.register
    def _(step: VectorForcingStep, nt) -> tuple:
        many = len(step.groups) > 1
        rows = []
        for g, group in enumerate(step.groups, start=1):
            f = name(f"F_{{{g}}}(t)", f"F_{g}(t)") if many else name("F(t)")
            lam = name(rf"\lambda_{{{g}}}", f"lambda_{g}") if many else name(r"\lambda", "lambda")
            exponent = e(group.exponent, nt)
            rows.append(Row((f,), (eq, e(group.expr(step.t), nt)), (lam, eq, exponent)))
        return tuple(rows)

    @step_rows.register
    def _(step: VectorCoefficientEquationsStep, nt) -> tuple:
        words = Tex(r"\text{coefficients of }", "coefficients of ")
        return tuple(
            Row((e(lhs, nt),), (eq, e(rhs, nt)), (words, e(basis, nt)))
            for basis, (lhs, rhs) in zip(step.basis, step.equations, strict=True)
        )

    @step_rows.register
    def _(step: ModesStep, nt) -> tuple:
        rows = [
            Row((name(rf"\omega_{{{i}}}", f"omega_{i}"),), (eq, e(sp.sympify(w), nt)))
            for i, w in enumerate(step.frequencies, start=1)
        ]
        rows.append(Row((name(r"\Phi", "Phi"),), (eq, e(step.shapes, nt))))
        rows.extend(
            Row((name(rf"\zeta_{{{i}}}", f"zeta_{i}"),), (eq, e(sp.sympify(z), nt)))
            for i, z in enumerate(step.damping_ratios, start=1)
            if z is not None
        )
        return tuple(rows)


_register_rows()
