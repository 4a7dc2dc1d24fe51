"""A rigid body and the mounts under it: mass, centre of gravity, inertia tensor; position, stiffness, axes.

:class:`RigidBody` holds the machine's mass ``m``, its centre of gravity ``G``
and its inertia tensor ``J`` about ``G`` (checked: symmetric, positive definite,
and its principal moments obey the triangle rule every real body obeys); or the
uniform-box estimate :meth:`RigidBody.uniform_box` from the box's three sides.
:class:`Mount` holds one isolator: where it meets the body, its axial stiffness
and the two shear stiffnesses (with damping coefficients for each), its axes
(an axis letter for an axis-aligned mount, or a rotation matrix whose columns are
the mount's shear, shear, axial directions in the body's axes) and its rated
load and deflection.

The coordinates of the body are those of its centre of gravity,
``q = (x, y, z, theta_x, theta_y, theta_z)``: three small translations and three
small rotations, ``z`` upwards. A mount at ``r`` from ``G`` moves by
``u = x + theta x r = T q`` with ``T = [I | -[r]_x]`` (:func:`placement`), so its
stiffness ``k_g = R diag(k_s1, k_s2, k_a) R^T`` adds ``T^T k_g T`` to the body's
stiffness matrix (:mod:`calckit.physics.mounts`).

References
----------
C. M. Harris and A. G. Piersol (eds.), *Harris' Shock and Vibration Handbook*,
5th ed., ch. 30 (theory of vibration isolation: the rigid body on resilient
supports, six coupled modes), from memory.

Examples
--------
>>> body = RigidBody.uniform_box(1200, (0, 0, 0.5), (2.0, 1.0, 1.0))
>>> body.inertia[0, 0]
200
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import sympy as sp

from calckit.core.exact import exact
from calckit.errors import ModelError

__all__ = ["AXES", "BOX_INERTIA_FORMULAS", "Mount", "RigidBody", "placement", "read_point", "skew"]

#: the axes a mount's axial direction may be named by, with its two shear directions (right-handed)
AXES = {
    "z": ((1, 0, 0), (0, 1, 0), (0, 0, 1)),
    "x": ((0, 1, 0), (0, 0, 1), (1, 0, 0)),
    "y": ((0, 0, 1), (1, 0, 0), (0, 1, 0)),
}

_m, _a, _b, _c = sp.symbols("m a b c")
#: the moments of inertia of a uniform box of sides a, b, c (along x, y, z) about its centre (the one place)
BOX_INERTIA_FORMULAS = {
    "J_xx": _m * (_b**2 + _c**2) / 12,
    "J_yy": _m * (_a**2 + _c**2) / 12,
    "J_zz": _m * (_a**2 + _b**2) / 12,
}

#: rotation-matrix entries that are not 0 or +-1 are carried to this many significant figures
ROTATION_FIGURES = 12


def _number(value, where: str) -> sp.Expr:
    """An input number as an exact sympy number (floats as the decimals they show)."""
    if isinstance(value, np.generic):
        value = value.item()
    got = exact(value, where=where)
    if not got.is_number or not got.is_real or not got.is_finite:
        raise ModelError(
            f"expected a real number, got {value!r}", where=where, do="Give a number in SI units"
        )
    return got


def _vector(values, where: str) -> sp.ImmutableMatrix:
    items = list(values) if isinstance(values, (list, tuple, np.ndarray, sp.MatrixBase)) else None
    if items is None or len(items) != 3:
        raise ModelError(
            f"expected three coordinates (x, y, z), got {values!r}",
            where=where,
            do="Give the point as (x, y, z) in metres from the reference point",
        )
    return sp.ImmutableMatrix(3, 1, [_number(v, f"{where}[{i + 1}]") for i, v in enumerate(items)])


def read_point(text, where: str) -> tuple[str, tuple]:
    """A named point as an inputs file writes it: ``"M1: x = -1.1 m; y = -0.6 m; z = 0 m"``.

    Returns ``(name, (x, y, z))`` with the coordinates exact, in metres. The name before
    the colon may be left out (then it is ``where``); every one of x, y and z must be given,
    each a length.

    >>> read_point("flange: x = 1.2 m; y = 0 m; z = 850 mm", "point_1")
    ('flange', (6/5, 0, 17/20))
    """
    from calckit.core.expressions import parse_parameters
    from calckit.core.units import quantity, to_si

    if not isinstance(text, str) or not text.strip():
        raise ModelError(
            f"expected a point as text, got {text!r}",
            where=where,
            do='Write the point as "name: x = 1.2 m; y = 0 m; z = 0.85 m"',
        )
    name, colon, rest = text.partition(":")
    if not colon:
        name, rest = where, text
    values = parse_parameters(rest, where=where)
    if sorted(values) != ["x", "y", "z"]:
        raise ModelError(
            f"the point gives {', '.join(values) or 'nothing'}; it needs x, y and z, once each",
            where=where,
            do='Write the point as "name: x = 1.2 m; y = 0 m; z = 0.85 m"',
        )
    coords = tuple(
        exact(
            to_si(quantity(values[k], f"{where}, {k}", expect="length"), f"{where}, {k}").magnitude,
            where=where,
        )
        for k in ("x", "y", "z")
    )
    return name.strip() or where, coords


def skew(r) -> sp.ImmutableMatrix:
    """The cross-product matrix ``[r]_x``: ``[r]_x a = r x a``."""
    x, y, z = r
    return sp.ImmutableMatrix([[0, -z, y], [z, 0, -x], [-y, x, 0]])


def placement(r) -> sp.ImmutableMatrix:
    """``T = [I | -[r]_x]``, 3 x 6: the motion ``x + theta x r`` of a point at ``r`` from the CG."""
    return sp.ImmutableMatrix.hstack(sp.eye(3), -skew(r))


@dataclass(frozen=True)
class RigidBody:
    """A rigid machine: mass ``m`` (kg), centre of gravity ``G`` (m), inertia tensor ``J`` about G (kg m^2).

    ``inertia`` is the 3 x 3 tensor ``[[J_xx, -J_xy, -J_xz], ...]`` with the products of
    inertia entered with their minus sign as the tensor has them; a sequence of three
    numbers is read as its diagonal (principal axes along x, y, z). ``basis`` says where
    the inertia comes from (shown on the sheet).
    """

    mass: sp.Expr
    cg: sp.ImmutableMatrix
    inertia: sp.ImmutableMatrix
    basis: str = "given"

    def __init__(self, mass, cg, inertia, basis: str = "given"):
        m = _number(mass, "mass")
        if not m > 0:
            raise ModelError(
                f"the mass is {mass!r}", where="mass", do="Give the machine's mass, greater than zero"
            )
        object.__setattr__(self, "mass", m)
        object.__setattr__(self, "cg", _vector(cg, "centre_of_gravity"))
        object.__setattr__(self, "inertia", _inertia(inertia))
        object.__setattr__(self, "basis", basis)

    @classmethod
    def uniform_box(cls, mass, cg, sides) -> RigidBody:
        """The inertia of a uniform box of sides ``(a, b, c)`` along x, y, z about its centre.

        .. math:: J_{xx} = m (b^2 + c^2) / 12, \\quad J_{yy} = m (a^2 + c^2) / 12, \\quad
                  J_{zz} = m (a^2 + b^2) / 12

        (a solid rectangular block about its centroid, any dynamics text's table of moments
        of inertia; from memory). An estimate: a real machine's mass is not uniform.
        """
        a, b, c = (_number(s, f"box_sides[{i + 1}]") for i, s in enumerate(_vector(sides, "box_sides")))
        for i, s in enumerate((a, b, c)):
            if not s > 0:
                raise ModelError(
                    f"side {i + 1} of the box is {s}",
                    where="box_sides",
                    do="Give the three sides, each greater than zero",
                )
        m = _number(mass, "mass")
        sides = {_m: m, _a: a, _b: b, _c: c}
        diag = tuple(BOX_INERTIA_FORMULAS[k].subs(sides) for k in ("J_xx", "J_yy", "J_zz"))
        return cls(m, cg, diag, basis="uniform-box estimate from the sides of the machine's box")

    @property
    def mass_matrix(self) -> sp.ImmutableMatrix:
        """The 6 x 6 mass matrix about the CG: ``diag(m, m, m)`` and ``J``."""
        out = sp.zeros(6, 6)
        for i in range(3):
            out[i, i] = self.mass
        out[3:, 3:] = self.inertia
        return sp.ImmutableMatrix(out)


def _inertia(value) -> sp.ImmutableMatrix:
    where = "inertia"
    rows = value.tolist() if isinstance(value, (np.ndarray, sp.MatrixBase)) else list(value)
    if len(rows) == 3 and not any(isinstance(r, (list, tuple, np.ndarray)) for r in rows):
        rows = [[rows[0], 0, 0], [0, rows[1], 0], [0, 0, rows[2]]]
    if len(rows) != 3 or any(len(r) != 3 for r in rows):
        raise ModelError(
            f"expected a 3 x 3 inertia tensor or its three diagonal entries, got {value!r}",
            where=where,
            do="Give [[J_xx, J_xy, J_xz], [J_yx, J_yy, J_yz], [J_zx, J_zy, J_zz]] in kg m^2 about the centre of gravity",
        )
    J = sp.ImmutableMatrix(
        [[_number(e, f"{where}[{i + 1},{j + 1}]") for j, e in enumerate(r)] for i, r in enumerate(rows)]
    )
    for i in range(3):
        for j in range(i + 1, 3):
            if J[i, j] != J[j, i]:
                raise ModelError(
                    f"the inertia tensor is not symmetric: J[{i + 1},{j + 1}] = {J[i, j]} but "
                    f"J[{j + 1},{i + 1}] = {J[j, i]}",
                    where=where,
                    do="Enter each product of inertia once and mirror it: J_xy = J_yx, J_xz = J_zx, J_yz = J_zy",
                )
    principal = np.linalg.eigvalsh(np.array(J.tolist(), dtype=float))
    if principal[0] <= 1e-12 * max(abs(principal[-1]), 1e-300):
        raise ModelError(
            f"the inertia tensor is not positive definite (principal moments {_g(principal)} kg m^2): "
            "a rigid body has three positive principal moments of inertia",
            where=where,
            do="Check the moments and the products of inertia (their signs, and that they are about the centre of "
            "gravity); a singular tensor means a body without extent in some direction",
        )
    a, b, c = principal
    if a + b < c * (1 - 1e-9):
        raise ModelError(
            f"the principal moments {_g(principal)} kg m^2 break the triangle rule J_1 + J_2 >= J_3 "
            "that every real body's moments obey",
            where=where,
            do="Check the moments of inertia; one of them is too large for the others",
        )
    return J


def _g(values) -> str:
    """Principal moments for a message; round-off far below the largest shown as 0."""
    top = max(abs(v) for v in values)
    return ", ".join(f"{0.0 if abs(v) <= 1e-9 * top else v:.4g}" for v in values)


@dataclass(frozen=True)
class Mount:
    """One mount: its name, position (m), stiffnesses (N/m) and damping (N s/m), axes and rating.

    ``stiffness`` and ``damping`` are ``(axial, shear, shear)`` or ``(axial, shear)`` with the
    same shear both ways; ``axis`` is ``"z"`` (axial vertical, the default), ``"x"`` or
    ``"y"``, or a 3 x 3 rotation matrix whose columns are the first shear, second shear
    and axial directions in the body's axes. ``rated_load`` (N) and ``rated_deflection``
    (m) are the maker's rating along the axis, or None when not known.
    """

    name: str
    position: sp.ImmutableMatrix
    stiffness: tuple
    damping: tuple
    axes: sp.ImmutableMatrix
    rated_load: sp.Expr | None = None
    rated_deflection: sp.Expr | None = None
    axis_name: str = field(default="z")

    def __init__(
        self, name, position, stiffness, damping=(0, 0), *, axis="z", rated_load=None, rated_deflection=None
    ):
        where = f"mount {name}"
        object.__setattr__(self, "name", str(name))
        object.__setattr__(self, "position", _vector(position, f"{where}, position"))
        object.__setattr__(self, "stiffness", _three(stiffness, f"{where}, stiffness", "stiffness"))
        object.__setattr__(self, "damping", _three(damping, f"{where}, damping", "damping"))
        axes, label = _axes(axis, where)
        object.__setattr__(self, "axes", axes)
        object.__setattr__(self, "axis_name", label)
        for label, value in (("rated_load", rated_load), ("rated_deflection", rated_deflection)):
            if value is not None:
                value = _number(value, f"{where}, {label}")
                if not value > 0:
                    raise ModelError(
                        f"the {label.replace('_', ' ')} is {value}",
                        where=where,
                        do="Give a rating greater than zero",
                    )
            object.__setattr__(self, label, value)

    @property
    def axial(self) -> sp.ImmutableMatrix:
        """The mount's axial direction in the body's axes (a unit column)."""
        return self.axes[:, 2]

    def local_matrix(self, values: tuple) -> sp.ImmutableMatrix:
        """``R diag(s1, s2, a) R^T`` for ``values = (axial, shear1, shear2)``: the mount's matrix in body axes."""
        axial, s1, s2 = values
        R = self.axes
        return sp.ImmutableMatrix(R * sp.diag(s1, s2, axial) * R.T)

    @property
    def stiffness_matrix(self) -> sp.ImmutableMatrix:
        """The mount's 3 x 3 stiffness in the body's axes."""
        return self.local_matrix(self.stiffness)

    @property
    def damping_matrix(self) -> sp.ImmutableMatrix:
        """The mount's 3 x 3 damping in the body's axes."""
        return self.local_matrix(self.damping)


def _three(values, where: str, what: str) -> tuple:
    items = list(values) if isinstance(values, (list, tuple, np.ndarray)) else [values]
    if len(items) == 2:
        items = [items[0], items[1], items[1]]
    if len(items) != 3:
        raise ModelError(
            f"expected (axial, shear) or (axial, shear 1, shear 2) {what} values, got {values!r}",
            where=where,
            do=f"Give the axial {what} and the shear {what} (one value for both shear directions, or two)",
        )
    out = tuple(_number(v, f"{where}[{i + 1}]") for i, v in enumerate(items))
    for label, v in zip(("axial", "first shear", "second shear"), out, strict=True):
        if v < 0:
            raise ModelError(f"the {label} {what} is {v}", where=where, do=f"Give a {what} of zero or more")
    return out


def _axes(axis, where: str) -> tuple[sp.ImmutableMatrix, str]:
    if isinstance(axis, str):
        key = axis.strip().lower()
        if key not in AXES:
            raise ModelError(
                f"the axis {axis!r} is not one of x, y, z",
                where=f"{where}, axis",
                do='Name the mount\'s axial direction "x", "y" or "z", or give a 3 x 3 rotation matrix',
            )
        return sp.ImmutableMatrix(3, 3, [c for row in zip(*AXES[key], strict=True) for c in row]), key
    R = np.array(axis.tolist() if isinstance(axis, sp.MatrixBase) else axis, dtype=float)
    if R.shape != (3, 3) or not np.allclose(R.T @ R, np.eye(3), atol=1e-9) or np.linalg.det(R) < 0:
        raise ModelError(
            f"the mount's axes {axis!r} are not a rotation (orthonormal columns, determinant +1)",
            where=f"{where}, axis",
            do="Give the columns as unit vectors at right angles: first shear, second shear, axial",
        )
    entries = []
    for v in R.ravel():
        if abs(v - round(v)) < 1e-12 and round(v) in (-1, 0, 1):
            entries.append(sp.Integer(round(v)))
        else:
            entries.append(sp.Rational(f"{v:.{ROTATION_FIGURES}g}"))
    return sp.ImmutableMatrix(3, 3, entries), "rotated"
