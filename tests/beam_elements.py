"""A finite-element model of a beam and of a portal frame, built here with numpy, as outside references.

Euler-Bernoulli beam elements of two nodes, a deflection and a rotation at each (cubic Hermite
shape functions): the element stiffness ``E I / l^3 [[12, 6l, -12, 6l], [6l, 4l^2, -6l, 2l^2], ...]``
and the consistent mass ``m' l / 420 [[156, 22l, 54, -13l], ...]`` (J. S. Przemieniecki, *Theory of
Matrix Structural Analysis*, McGraw-Hill 1968, ch. 5 and 11; R. D. Cook et al., *Concepts and
Applications of Finite Element Analysis*, 4th ed., sec. 2.4 and 11.3; from memory). Under point loads
at the nodes the cubic elements give the exact deflection at every node and the exact cubic between
them, so a static solve is a reference to round-off; the natural frequencies converge from above
as the elements shrink (solved with ``scipy.linalg.eigh``).

The portal frame uses plane frame elements (the beam element above plus an axial bar, rotated into
the global axes), with an axial stiffness so large that the members hardly stretch, as the closed
forms assume.

Nothing here imports calckit.
"""

from __future__ import annotations

import numpy as np
from scipy import linalg

#: What each end condition fixes at x = 0 and x = L: (deflection, rotation) of the end nodes.
SUPPORTS = {
    "simply supported": {"left": (True, False), "right": (True, False)},
    "fixed-fixed": {"left": (True, True), "right": (True, True)},
    "cantilever": {"left": (True, True), "right": (False, False)},
}


def element_stiffness(ei: float, le: float) -> np.ndarray:
    """Bending stiffness of one element, dofs (w1, theta1, w2, theta2)."""
    return (ei / le**3) * np.array(
        [
            [12, 6 * le, -12, 6 * le],
            [6 * le, 4 * le**2, -6 * le, 2 * le**2],
            [-12, -6 * le, 12, -6 * le],
            [6 * le, 2 * le**2, -6 * le, 4 * le**2],
        ]
    )


def element_mass(per_length: float, le: float) -> np.ndarray:
    """Consistent mass of one element, dofs (w1, theta1, w2, theta2)."""
    return (per_length * le / 420) * np.array(
        [
            [156, 22 * le, 54, -13 * le],
            [22 * le, 4 * le**2, 13 * le, -3 * le**2],
            [54, 13 * le, 156, -22 * le],
            [-13 * le, -3 * le**2, -22 * le, 4 * le**2],
        ]
    )


class Beam:
    """A beam of *elements* equal elements, assembled; ``free`` the dofs the supports leave free."""

    def __init__(self, kind: str, ei: float, span: float, per_length: float = 0.0, elements: int = 60):
        self.span, self.elements = span, elements
        le = span / elements
        n = 2 * (elements + 1)
        self.K, self.M = np.zeros((n, n)), np.zeros((n, n))
        for e in range(elements):
            dofs = slice(2 * e, 2 * e + 4)
            self.K[dofs, dofs] += element_stiffness(ei, le)
            self.M[dofs, dofs] += element_mass(per_length, le)
        fixed = []
        for end, node in (("left", 0), ("right", elements)):
            w, theta = SUPPORTS[kind][end]
            fixed += [2 * node] * w + [2 * node + 1] * theta
        self.free = np.array([d for d in range(n) if d not in fixed])

    def node(self, x: float) -> int:
        """The node at *x* (the mesh must have one there)."""
        n = round(x / self.span * self.elements)
        assert abs(n * self.span / self.elements - x) < 1e-12 * self.span, "no node at the load"
        return n

    def deflection(self, loads: list[tuple[float, float]]) -> np.ndarray:
        """All dofs under point forces ``(force, x)``, by numpy.linalg.solve."""
        f = np.zeros(len(self.K))
        for force, x in loads:
            f[2 * self.node(x)] += force
        u = np.zeros(len(self.K))
        u[self.free] = np.linalg.solve(self.K[np.ix_(self.free, self.free)], f[self.free])
        return u

    def stiffness_at(self, x: float) -> float:
        """Force over deflection under a point force at *x*."""
        return 1.0 / self.deflection([(1.0, x)])[2 * self.node(x)]

    def fundamental(self, masses: list[tuple[float, float]] = ()) -> float:
        """The lowest natural frequency, rad/s, with point masses ``(mass, x)`` added; scipy.linalg.eigh."""
        m = self.M.copy()
        for mass, x in masses:
            m[2 * self.node(x), 2 * self.node(x)] += mass
        free = np.ix_(self.free, self.free)
        # every eigenvalue: LAPACK's subset driver is less accurate here (1e-5 off the lowest, measured)
        return float(np.sqrt(linalg.eigh(self.K[free], m[free], eigvals_only=True)[0]))


def portal_sway(
    ei_c: float, h: float, ei_b: float, span: float, bases: str, rigid_beam: bool = False
) -> float:
    """Sway stiffness of a portal frame (two columns, one beam) under a horizontal force at the beam's level,
    by a plane-frame stiffness solve; *bases* "fixed" or "pinned"; a rigid beam holds the tops of the
    columns from rotating. The members' axial stiffness is 1e8 times their bending stiffness (stretching
    changes the sway by about 1e-8)."""
    ea = 1e8 * max(ei_c, ei_b) / min(h, span) ** 2
    nodes = np.array([[0.0, 0.0], [0.0, h], [span, h], [span, 0.0]])
    members = [(0, 1, ei_c), (1, 2, ei_b), (3, 2, ei_c)]
    k = np.zeros((12, 12))
    for i, j, ei in members:
        d = nodes[j] - nodes[i]
        le = float(np.hypot(*d))
        c, s = d / le
        local = np.zeros((6, 6))  # dofs (u1, w1, theta1, u2, w2, theta2) along and across the member
        local[np.ix_([0, 3], [0, 3])] = ea / le * np.array([[1, -1], [-1, 1]])
        local[np.ix_([1, 2, 4, 5], [1, 2, 4, 5])] = element_stiffness(ei, le)
        rot = np.zeros((6, 6))
        for n in (0, 3):
            rot[n : n + 3, n : n + 3] = [[c, s, 0], [-s, c, 0], [0, 0, 1]]
        dofs = [3 * i, 3 * i + 1, 3 * i + 2, 3 * j, 3 * j + 1, 3 * j + 2]
        k[np.ix_(dofs, dofs)] += rot.T @ local @ rot
    fixed = [0, 1, 9, 10] + ([2, 11] if bases == "fixed" else []) + ([5, 8] if rigid_beam else [])
    free = [d for d in range(12) if d not in fixed]
    f = np.zeros(12)
    f[3] = 1.0  # a unit horizontal force at the top of the left column
    u = np.linalg.solve(k[np.ix_(free, free)], f[free])
    return 1.0 / u[free.index(3)]
