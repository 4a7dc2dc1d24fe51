"""The multi-mass model ``M x'' + C x' + K x = F(t)``: matrices, checks, modes, receptances.

:class:`MultiMass` holds constant symmetric mass, damping and stiffness
matrices (numbers, symbols or pint quantities, converted to SI), checks them
(square, of one size, symmetric, M positive definite), and gives the natural
frequencies and mass-normalised mode shapes (:mod:`calckit.physics.modes`),
modal damping, receptance matrices, the particular solution by vector
undetermined coefficients (the engine's vector strategy,
:class:`calckit.engine.vector.VectorStrategy`, behind the one skeleton) and the
total response by modal superposition (:mod:`calckit.physics.modal_response`).

References
----------
Rao, *Mechanical Vibrations*, 5th ed., ch. 5 and 6 (two- and
multi-degree-of-freedom systems, modal analysis, proportional damping), from
memory.

Examples
--------
>>> import sympy as sp
>>> t = sp.Symbol("t", real=True)
>>> model = MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]])
>>> model.natural_frequencies
(1, sqrt(3))
>>> model.particular([sp.cos(2 * t), 0], t=t).solution.T
Matrix([[-2*cos(2*t)/3, cos(2*t)/3]])
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.engine import (
    LAMBDA,
    Derivation,
    FrequencyResponse,
    IntervalSolver,
    Response,
    VectorGroup,
    VectorStrategy,
    derive,
    frequency_response,
    is_switching,
    is_zero,
    piecewise_particular,
    piecewise_response,
    polynomial_determinant,
    resolve_time,
)
from calckit.errors import ModelError
from calckit.physics.modal_response import modal_total_response, state_vector
from calckit.physics.modes import (
    Modes,
    first_positive,
    modal_damping_matrix,
    modal_damping_ratios,
    natural_modes,
    simplified,
)

__all__ = ["MultiMass", "Modes"]

#: the unit kind of each matrix's entries, for pint quantities
_KIND = {"M": "mass", "C": "damping coefficient", "K": "stiffness"}


def _is_quantity(value) -> bool:
    return hasattr(value, "magnitude") and hasattr(value, "units")


def _has_quantity(value) -> bool:
    """Whether a matrix as given holds pint quantities (a quantity array, or rows of quantities)."""
    if _is_quantity(value):
        return True
    if isinstance(value, list | tuple):
        return any(_has_quantity(v) for v in value)
    if isinstance(value, np.ndarray) and value.dtype == object:
        return any(_is_quantity(v) for v in value.ravel())
    return False


def _entries_of(value):
    """A quantity array as a nested list of quantities (one per entry); anything else as it is."""
    if _is_quantity(value) and np.ndim(value.magnitude) > 0:
        from calckit.core.units import Q_

        magnitude = np.asarray(value.magnitude, dtype=object)
        return (
            [[Q_(e, value.units) for e in np.atleast_1d(row)] for row in magnitude.tolist()]
            if magnitude.ndim > 1
            else [Q_(e, value.units) for e in magnitude.tolist()]
        )
    return value


def _entry(entry, name: str, where: str) -> sp.Expr:
    """One matrix entry in SI, exact; a pint quantity of the wrong dimension raises UnitsError."""
    if isinstance(entry, np.generic):
        entry = entry.item()
    if _is_quantity(entry):
        from calckit.core.units import quantity, to_si

        magnitude = to_si(quantity(entry, where, expect=_KIND[name]), where).magnitude
        return exact(magnitude.item() if isinstance(magnitude, np.generic) else magnitude, where=where)
    return exact(entry, where=where)


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
    rows = _rows_of(_entries_of(value), name)
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
            value = _entry(entry, name, where)
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
            if not is_zero(matrix[i, j] - matrix[j, i]):
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
        the decimals they display), Fractions, sympy numbers or symbols; or of
        pint quantities (kg; N s/m; N/m), or a pint quantity array, converted to
        SI (a wrong dimension raises UnitsError naming the entry, e.g. ``K[1,2]``).
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
        #: True when the matrices were given as pint quantities: frequencies then come back with units
        self.units = any(_has_quantity(v) for v in (M, C, K))
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
        return polynomial_determinant(self.dynamic_stiffness(variable))

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
            self._modes = natural_modes(self)
        return self._modes

    @property
    def natural_frequencies(self) -> tuple:
        """Undamped natural frequencies ``omega_i`` (rad/s) of ``K phi = omega^2 M phi``.

        .. math:: \\det(K - \\omega^2 M) = 0

        Ascending for numeric models; exact sympy values where the frequency
        equation splits into quadratics, numpy floats otherwise (see :meth:`modes`).

        Examples
        --------
        >>> MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]]).natural_frequencies
        (1, sqrt(3))


        With matrices given as pint quantities, the frequencies are quantities in rad/s,
        as :attr:`Oscillator.natural_frequency` gives them.
        """
        frequencies = self.modes().frequencies
        if not self.units:
            return frequencies
        from calckit.core.units import Q_

        return tuple(Q_(float(w), "rad/s") if sp.sympify(w).is_number else w for w in frequencies)

    @property
    def mode_shapes(self):
        """Mode shapes as columns, mass-normalised: ``Phi^T M Phi = I``.

        A sympy ImmutableMatrix when exact, else a numpy array (see :meth:`modes`).

        Examples
        --------
        >>> MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]]).mode_shapes
        Matrix([
        [sqrt(2)/2,  sqrt(2)/2],
        [sqrt(2)/2, -sqrt(2)/2]])
        """
        return self.modes().shapes

    def modal_damping(self):
        """``Phi^T C Phi``, checked to be diagonal (proportional damping).

        Raises ModelError when the damping is not proportional.
        """
        return modal_damping_matrix(self, self.modes())

    @property
    def modal_damping_ratios(self) -> tuple:
        """``zeta_i = (Phi^T C Phi)_ii / (2 omega_i)`` for proportional damping.

        .. math:: \\Phi^T C \\Phi = \\operatorname{diag}(2 \\zeta_i \\omega_i)

        None for a mode of zero natural frequency (rigid-body mode). Raises
        ModelError when ``Phi^T C Phi`` is not diagonal (damping not proportional).

        Examples
        --------
        >>> MultiMass([[1, 0], [0, 1]], [[2, -1], [-1, 2]], [[20, -10], [-10, 20]]).modal_damping_ratios
        (sqrt(10)/20, sqrt(30)/20)
        """
        return modal_damping_ratios(self.modes(), self.modal_damping())

    def resonant_modes(
        self, group: VectorGroup
    ) -> tuple[tuple[int, ...], sp.Expr | None, sp.ImmutableMatrix | None]:
        """At a resonant exponent group: the modes met, the undamped natural frequency, a free motion.

        Returns (1-based mode numbers, empty when not identified; the undamped
        natural frequency met, None unless the model is undamped and the group a
        pure harmonic; a vector ``phi`` of the free motion ``e^{lambda t} phi``).
        The engine's vector strategy asks for it to name the mode in its sentences.
        """
        lam = group.exponent
        natural = group.frequency if (self.undamped and is_zero(group.decay)) else None
        if natural is not None:
            shape_basis = (self.K - natural**2 * self.M).nullspace(iszerofunc=is_zero, simplify=simplified)
        else:
            shape_basis = self.dynamic_stiffness(lam).nullspace(iszerofunc=is_zero, simplify=simplified)
        shape = sp.ImmutableMatrix(first_positive(list(shape_basis[0]))) if shape_basis else None
        found: tuple[int, ...] = ()
        try:
            modes = self.modes()
            if not modes.exact and natural is not None and natural.is_number:
                found = tuple(
                    i + 1
                    for i, w in enumerate(modes.frequencies)
                    if abs(float(w) - float(natural)) <= 1e-9 * max(1.0, float(natural))
                )
            elif modes.exact:
                if natural is not None:
                    found = tuple(i + 1 for i, w in enumerate(modes.frequencies) if is_zero(w - natural))
                else:
                    cm = self.modal_damping()
                    found = tuple(
                        i + 1
                        for i, w in enumerate(modes.frequencies)
                        if is_zero(sp.expand(lam**2 + cm[i, i] * lam + w**2))
                    )
        except ModelError:
            found = ()
        return found, natural, shape

    # ------------------------------------------------------------------ frequency response
    def frequency_response(self, omegas, **values) -> FrequencyResponse:
        """Receptance matrices ``H(omega) = (K - omega^2 M + i omega C)^{-1}`` at numeric frequencies.

        .. math:: X = H(\\omega) F, \\qquad H(\\omega) = (K - \\omega^2 M + i \\omega C)^{-1}

        Returns a :class:`~calckit.engine.numeric.FrequencyResponse`, the type
        ``Oscillator.frequency_response`` and ``calckit.frequency_response`` return,
        whose ``receptance`` is a complex array of shape ``(len(omegas), n, n)``:
        ``H[k, i, j]`` is the response of coordinate i to a unit harmonic force on
        coordinate j. It reads as that array (``H[:, 0, 0]``, ``np.abs(H)``, ``H.shape``).
        Symbols take numbers from *values* by name; the calculation is
        :func:`calckit.engine.numeric.frequency_response`.

        Examples
        --------
        >>> H = MultiMass([[1, 0], [0, 1]], None, [[2, -1], [-1, 2]]).frequency_response([0.0])
        >>> H.shape, round(float(H[0, 0, 0].real), 6)
        ((1, 2, 2), 0.666667)
        """
        return frequency_response(self, omegas, **values)

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
            a :class:`~calckit.engine.vector_forcing.VectorForcing`; ``operator`` this model; ``verified`` is
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
        if is_switching(F, t):
            column = self._switching_column(F)
            return piecewise_particular(self, column, self.interval_solver(), t=resolve_time(column, t))
        return derive(VectorStrategy(self), F, t)

    def _switching_column(self, F) -> sp.ImmutableMatrix:
        rows = (
            list(F)
            if isinstance(F, sp.MatrixBase)
            else [r[0] if isinstance(r, (list, tuple)) else r for r in F]
        )
        if len(rows) != self.size:
            raise ModelError(
                f"the forcing has {len(rows)} entries for a model of {self.size} coordinates",
                where="forcing",
                do=f"Give one forcing entry per coordinate, {self.size} in all (0 where no force acts)",
            )
        return sp.ImmutableMatrix(
            self.size, 1, [exact(r, where=f"forcing row {i + 1}") for i, r in enumerate(rows)]
        )

    def interval_solver(self) -> IntervalSolver:
        """One interval of a switching forcing: the modal total response from the state (x, x')."""

        def respond(piece, state, tau):
            return modal_total_response(self, piece, state[0], state[1], tau)

        zero = sp.ImmutableMatrix.zeros(self.size, 1)
        return IntervalSolver(respond, lambda x, tau: (x, x.diff(tau)), (zero, zero))

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
        if is_switching(F, t):
            column = self._switching_column(F)
            state = (state_vector(x0, self.size, "x0"), state_vector(v0, self.size, "v0"))
            return piecewise_response(self, column, state, self.interval_solver(), t=resolve_time(column, t))
        return modal_total_response(self, F, x0, v0, t)
