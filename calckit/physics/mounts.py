"""A rigid body on N mounts in six degrees of freedom: matrices, modes in words, loads, response.

:class:`MountedBody` takes a :class:`~calckit.physics.rigid_body.RigidBody` and its
:class:`~calckit.physics.rigid_body.Mount` s and forms, about the centre of gravity,

.. math::

    K = \\sum_i T_i^T k_i T_i, \\qquad C = \\sum_i T_i^T c_i T_i, \\qquad
    M = \\operatorname{diag}(m, m, m, J), \\qquad T_i = [\\, I \\mid -[r_i]_\\times ]

for the coordinates ``q = (x, y, z, theta_x, theta_y, theta_z)`` of the CG. It hands
them to :class:`~calckit.physics.multimass.MultiMass` (:meth:`MountedBody.multimass`),
so the forced response is the engine's vector undetermined coefficients. Around it:
the refusals (mounts that cannot hold the body, with the free motion named), the six
modes described in words (:func:`describe_mode`, shares of each mode's kinetic
energy), the static load and deflection of every mount under the weight
(:meth:`MountedBody.static`), whether the CG stands over the mounts' footprint
(:meth:`MountedBody.footprint`), a rotating unbalance as a force and a moment about
the CG (:class:`Unbalance`, :data:`MOMENT_FORMULAS`), and from a steady state the
motion of a named point, ``x_P = x + theta x r_P`` (:func:`point_motion`), and the
force of each mount into the floor (:func:`mount_forces`).

References
----------
C. M. Harris and A. G. Piersol (eds.), *Harris' Shock and Vibration Handbook*, 5th ed.,
ch. 30 (rigid body on resilient supports), from memory; the kinetic-energy shares of a
mode are common practice in reading coupled modes (no source).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import sympy as sp

from calckit.errors import ModelError
from calckit.physics.isolation import STANDARD_GRAVITY
from calckit.physics.multimass import MultiMass
from calckit.physics.rigid_body import Mount, RigidBody, placement, skew

__all__ = [
    "COORDINATES",
    "MOMENT_FORMULAS",
    "MountLoad",
    "MountedBody",
    "Unbalance",
    "describe_mode",
    "harmonic_state",
    "mount_forces",
    "mounted_skid",
    "skid_results",
    "point_motion",
    "steady_amplitudes",
]

#: the six coordinates of the CG: (symbol, name in words)
COORDINATES = (
    ("x", "sway along x"),
    ("y", "sway along y"),
    ("z", "bounce"),
    (r"\theta_x", "roll (about x)"),
    (r"\theta_y", "pitch (about y)"),
    (r"\theta_z", "yaw (about z)"),
)

#: standard gravity, m/s^2, exact (the one value in calckit.physics.isolation)
GRAVITY = sp.Rational(str(STANDARD_GRAVITY))

_rx, _ry, _rz, _Fx, _Fy, _Fz = sp.symbols("r_x r_y r_z F_x F_y F_z")
#: the moment about the CG of a force F at r from it, M = r x F (the one place of the formulas)
MOMENT_FORMULAS = {
    "M_x": _ry * _Fz - _rz * _Fy,
    "M_y": _rz * _Fx - _rx * _Fz,
    "M_z": _rx * _Fy - _ry * _Fx,
}

#: a mode is "mostly" one motion when that motion holds at least this share of its kinetic energy
MOSTLY = 0.8
#: motions under this share of a mode's kinetic energy are not named in its description
NAMED_SHARE = 0.1


@dataclass(frozen=True)
class MountLoad:
    """A mount's static state under the weight: axial load (N, compression +), deflection (m), ratings."""

    name: str
    load: float
    deflection: float
    rated_load: float | None
    rated_deflection: float | None

    @property
    def in_tension(self) -> bool:
        return self.load < 0


@dataclass(frozen=True)
class Footprint:
    """Whether the CG stands over the convex hull of the mounts (plan view, x-y)."""

    inside: bool
    hull: tuple
    distance: float  # m outside the hull (0 when inside)
    note: str


class MountedBody:
    """A rigid body on mounts: the 6 x 6 M, K, C about the CG, and what follows from them.

    Examples
    --------
    >>> body = RigidBody(1000, (0, 0, 0), (100, 100, 100))
    >>> mounts = [Mount(f"M{i}", (x, y, -0.5), (1e6, 5e5)) for i, (x, y) in
    ...           enumerate(((-1, -1), (1, -1), (1, 1), (-1, 1)), start=1)]
    >>> MountedBody(body, mounts).K[2, 2]
    4000000
    """

    def __init__(self, body: RigidBody, mounts):
        self.body = body
        self.mounts = tuple(mounts)
        if len(self.mounts) < 1:
            raise ModelError("no mounts were given", where="mounts", do="Give the mounts the body stands on")
        names = [m.name for m in self.mounts]
        if len(set(names)) != len(names):
            twice = sorted({n for n in names if names.count(n) > 1})
            raise ModelError(
                f"the mount name(s) {', '.join(twice)} appear twice",
                where="mounts",
                do="Name every mount once",
            )
        self.arms = tuple(sp.ImmutableMatrix(m.position - body.cg) for m in self.mounts)
        self.placements = tuple(placement(r) for r in self.arms)
        self.M = body.mass_matrix
        self.K = self._sum(lambda m: m.stiffness_matrix)
        self.C = self._sum(lambda m: m.damping_matrix)
        self._check_held()

    def _sum(self, local) -> sp.ImmutableMatrix:
        out = sp.zeros(6, 6)
        for mount, T in zip(self.mounts, self.placements, strict=True):
            out += T.T * local(mount) * T
        return sp.ImmutableMatrix(out)

    def _check_held(self) -> None:
        K = np.array(self.K.tolist(), dtype=float)
        scale = np.sqrt(
            np.array([1.0] * 3 + [float(sum(r.dot(r) for r in self.arms) / len(self.arms)) or 1.0] * 3)
        )
        reduced = K / np.outer(scale, scale)  # rotations per metre of arm, so both blocks weigh alike
        values, vectors = np.linalg.eigh(reduced)
        if values[0] > 1e-9 * values[-1]:
            return
        free = vectors[:, 0] / scale
        free = free / np.max(np.abs(free))
        words = [COORDINATES[j][1] for j in np.argsort(-np.abs(free)) if abs(free[j]) > 0.05][:3]
        raise ModelError(
            f"the mounts cannot hold the body: K is singular, and the body is free to move in "
            f"{' with '.join(words)} with no mount resisting it",
            where="mounts",
            do="Give the mounts shear stiffness as well as axial, and place at least three of them not on one line",
        )

    # ------------------------------------------------------------------ the model
    def multimass(self) -> MultiMass:
        """The six equations ``M q'' + C q' + K q = Q(t)`` as a :class:`MultiMass`."""
        return MultiMass(self.M, self.C, self.K, name="q")

    def float_matrices(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """M, C, K as float arrays (SI)."""
        return tuple(np.array(A.tolist(), dtype=float) for A in (self.M, self.C, self.K))

    def modes(self):
        """Natural frequencies (rad/s, ascending) and mass-normalised mode shapes (columns), floats.

        ``scipy.linalg.eigh(K, M)``'s problem, solved by the multi-mass model's
        float route (Cholesky of M, ``numpy.linalg.eigh``).
        """
        modes = self.multimass().modes()
        return np.array([float(w) for w in modes.frequencies]), np.array(modes.shapes.tolist(), dtype=float)

    # ------------------------------------------------------------------ static
    def static(self, gravity=GRAVITY) -> tuple[np.ndarray, tuple[MountLoad, ...]]:
        """The CG's static displacement under the weight, and every mount's axial load and deflection.

        .. math:: K q_s = (0, 0, -m g, 0, 0, 0)^T, \\qquad u_i = T_i q_s, \\qquad
                  P_i = -a_i^T k_i u_i, \\quad \\delta_i = -a_i^T u_i

        (compression and the axial shortening counted positive, ``a_i`` the mount's axial
        direction).
        """
        weight = sp.ImmutableMatrix([0, 0, -self.body.mass * sp.nsimplify(gravity), 0, 0, 0])
        q = np.linalg.solve(
            np.array(self.K.tolist(), dtype=float), np.array(weight.tolist(), dtype=float).ravel()
        )
        loads = []
        for mount, T in zip(self.mounts, self.placements, strict=True):
            u = np.array(T.tolist(), dtype=float) @ q
            a = np.array(mount.axial.tolist(), dtype=float).ravel()
            k = np.array(mount.stiffness_matrix.tolist(), dtype=float)
            loads.append(
                MountLoad(
                    mount.name,
                    float(-a @ k @ u),
                    float(-a @ u),
                    None if mount.rated_load is None else float(mount.rated_load),
                    None if mount.rated_deflection is None else float(mount.rated_deflection),
                )
            )
        return q, tuple(loads)

    def footprint(self) -> Footprint:
        """Whether the CG is over the mounts' footprint (convex hull in plan), with a note for the sheet."""
        pts = sorted({(float(m.position[0]), float(m.position[1])) for m in self.mounts})
        hull = _convex_hull(pts)
        g = (float(self.body.cg[0]), float(self.body.cg[1]))
        distance = _outside_distance(hull, g)
        inside = distance <= 1e-9
        if inside:
            note = f"The centre of gravity (x = {g[0]:.4g} m, y = {g[1]:.4g} m in plan) stands over the mounts' footprint."
        else:
            note = (
                f"Warning: the centre of gravity (x = {g[0]:.4g} m, y = {g[1]:.4g} m in plan) lies "
                f"{distance * 1000:.0f} mm outside the footprint of the mounts (their convex hull in plan). "
                "Some mounts are unloaded or pulled: the static loads below say which; a mount in tension "
                "must be rated for it, or the mounts moved."
            )
        return Footprint(inside, tuple(hull), distance, note)


def _convex_hull(points: list) -> list:
    """Andrew's monotone chain: the hull's corners anticlockwise (a segment or a point when degenerate)."""
    if len(points) <= 2:
        return list(points)

    def cross(o, a, b):
        return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0])

    lower, upper = [], []
    for p in points:
        while len(lower) >= 2 and cross(lower[-2], lower[-1], p) <= 0:
            lower.pop()
        lower.append(p)
    for p in reversed(points):
        while len(upper) >= 2 and cross(upper[-2], upper[-1], p) <= 0:
            upper.pop()
        upper.append(p)
    return lower[:-1] + upper[:-1]


def _segment_distance(p, a, b) -> float:
    ax, ay = b[0] - a[0], b[1] - a[1]
    length = ax * ax + ay * ay
    s = 0.0 if length == 0 else max(0.0, min(1.0, ((p[0] - a[0]) * ax + (p[1] - a[1]) * ay) / length))
    return float(np.hypot(p[0] - a[0] - s * ax, p[1] - a[1] - s * ay))


def _outside_distance(hull: list, p) -> float:
    """0 inside the hull (or on it), else the distance to it, m."""
    if len(hull) == 1:
        return float(np.hypot(p[0] - hull[0][0], p[1] - hull[0][1]))
    edges = list(zip(hull, hull[1:] + hull[:1], strict=True))
    if len(hull) >= 3 and all(
        (b[0] - a[0]) * (p[1] - a[1]) - (b[1] - a[1]) * (p[0] - a[0]) >= -1e-12 for a, b in edges
    ):
        return 0.0
    return min(_segment_distance(p, a, b) for a, b in edges)


# ---------------------------------------------------------------------- modes in words
def energy_shares(shape, M) -> np.ndarray:
    """Each coordinate's share of a mode's kinetic energy, ``|phi_j (M phi)_j| / sum``."""
    phi = np.asarray(shape, dtype=float)
    parts = np.abs(phi * (np.asarray(M, dtype=float) @ phi))
    return parts / parts.sum()


def describe_mode(shape, M) -> str:
    """A mode in words: "mostly bounce (98 %)" or "coupled roll (about x) 61 % and sway along y 37 %".

    The shares are of the mode's kinetic energy by coordinate (:func:`energy_shares`);
    "mostly" when one holds at least :data:`MOSTLY` of it, else the motions holding at
    least :data:`NAMED_SHARE`, largest first.
    """
    shares = energy_shares(shape, M)
    order = np.argsort(-shares)
    first = order[0]
    if shares[first] >= MOSTLY:
        return f"mostly {COORDINATES[first][1]} ({shares[first] * 100:.0f} %)"
    named = [j for j in order if shares[j] >= NAMED_SHARE]
    return "coupled " + " and ".join(f"{COORDINATES[j][1]} {shares[j] * 100:.0f} %" for j in named)


# ---------------------------------------------------------------------- loads
@dataclass(frozen=True)
class Unbalance:
    """A rotating unbalance ``U = m_u e`` (kg m) at a point, spinning at ``speed`` (rad/s) about an axis.

    Its force ``F = U Omega^2`` turns in the plane across the shaft:
    ``F(t) = U Omega^2 (e_1 cos Omega t + e_2 sin Omega t)``, with ``(e_1, e_2)`` the two
    other axes in the order ``x -> (y, z)``, ``y -> (z, x)``, ``z -> (x, y)`` (the rotor turning
    the right-handed way about its axis).
    """

    position: tuple
    unbalance: float
    speed: float
    axis: str = "x"

    def __post_init__(self):
        from calckit.core.exact import exact

        object.__setattr__(self, "unbalance", exact(self.unbalance, where="unbalance"))
        object.__setattr__(self, "speed", exact(self.speed, where="running_speed"))
        object.__setattr__(
            self,
            "position",
            tuple(exact(v, where=f"unbalance position[{i + 1}]") for i, v in enumerate(self.position)),
        )
        if self.axis not in ("x", "y", "z"):
            raise ModelError(
                f"the shaft axis {self.axis!r} is not one of x, y, z",
                where="unbalance, axis",
                do='Name the shaft\'s axis "x", "y" or "z"',
            )

    @property
    def amplitude(self):
        return self.unbalance * self.speed**2

    def force_columns(self) -> tuple[sp.ImmutableMatrix, sp.ImmutableMatrix]:
        """The force's cosine and sine parts, 3-vectors in the body's axes (N)."""
        e1, e2 = {"x": (1, 2), "y": (2, 0), "z": (0, 1)}[self.axis]
        cos_part, sin_part = [0, 0, 0], [0, 0, 0]
        cos_part[e1] = self.amplitude
        sin_part[e2] = self.amplitude
        return sp.ImmutableMatrix(cos_part), sp.ImmutableMatrix(sin_part)

    def generalized(self, body: RigidBody) -> tuple[sp.ImmutableMatrix, sp.ImmutableMatrix]:
        """The force and its moment about the CG, ``Q = (F, r x F)`` for its cosine and sine parts."""
        r = sp.ImmutableMatrix(self.position) - body.cg
        out = []
        for F in self.force_columns():
            out.append(sp.ImmutableMatrix.vstack(F, skew(r) * F))
        return out[0], out[1]

    def forcing(self, body: RigidBody, t: sp.Symbol) -> list:
        """``Q(t) = Q_c cos Omega t + Q_s sin Omega t``, six rows for the CG's equations."""
        Qc, Qs = self.generalized(body)
        w = self.speed
        return [Qc[i] * sp.cos(w * t) + Qs[i] * sp.sin(w * t) for i in range(6)]


def steady_amplitudes(solution, t: sp.Symbol, speed) -> np.ndarray:
    """The complex amplitudes ``X`` of a steady state ``q = Re(X e^{i Omega t})`` from its cos/sin parts."""
    out = []
    for row in solution:
        row = sp.expand(row)
        a = row.coeff(sp.cos(speed * t))
        b = row.coeff(sp.sin(speed * t))
        out.append(complex(float(a), -float(b)))
    return np.array(out)


def point_motion(body: RigidBody, X: np.ndarray, point) -> np.ndarray:
    """The motion amplitude of a point on the body, ``|x + theta x r_P|`` along x, y, z (m)."""
    r = sp.ImmutableMatrix(point) - body.cg
    T = np.array(placement(r).tolist(), dtype=float)
    return np.abs(T @ X)


def mount_forces(mounted: MountedBody, X: np.ndarray, speed: float) -> list[np.ndarray]:
    """The force amplitude of each mount into the floor along x, y, z, ``|(k_i + i Omega c_i) T_i X|`` (N)."""
    out = []
    for mount, T in zip(mounted.mounts, mounted.placements, strict=True):
        k = np.array(mount.stiffness_matrix.tolist(), dtype=float)
        c = np.array(mount.damping_matrix.tolist(), dtype=float)
        u = np.array(T.tolist(), dtype=float) @ X
        out.append(np.abs((k + 1j * float(speed) * c) @ u))
    return out


# ---------------------------------------------------------------------- one place for the sheet and the explorer
def mounted_skid(
    mass,
    cg,
    inertia,
    mounts,
    *,
    stiffness,
    damping,
    axis="z",
    rated_load=None,
    rated_deflection=None,
    sides=None,
) -> MountedBody:
    """A skid on mounts of one type, as the template ``machine_on_mounts`` and its what-if plan build it.

    *inertia* is the 3 x 3 tensor about G, or ``"box"`` with *sides* (the uniform-box estimate);
    *mounts* is ``[(name, (x, y, z)), ...]`` as :func:`~calckit.physics.rigid_body.read_point` reads them;
    *stiffness* and *damping* are ``(axial, shear)`` of every mount, SI.
    """
    body = (
        RigidBody.uniform_box(mass, cg, sides)
        if isinstance(inertia, str) and inertia == "box"
        else RigidBody(mass, cg, inertia)
    )
    return MountedBody(
        body,
        [
            Mount(
                name,
                xyz,
                stiffness,
                damping,
                axis=axis,
                rated_load=rated_load,
                rated_deflection=rated_deflection,
            )
            for name, xyz in mounts
        ],
    )


def harmonic_state(mounted: MountedBody, unbalance: Unbalance) -> np.ndarray:
    """The complex amplitudes ``X`` of the CG's steady state under the unbalance, numerically.

    .. math:: (K - \\Omega^2 M + i \\Omega C) X = Q_c - i Q_s, \\qquad q = \\operatorname{Re}(X e^{i \\Omega t})

    The receptance route (``numpy.linalg.solve``): the explorer's, and on the sheet the check of
    the derivation's amplitudes.
    """
    M, C, K = mounted.float_matrices()
    w = float(unbalance.speed)
    Qc, Qs = (np.array(Q.tolist(), dtype=float).ravel() for Q in unbalance.generalized(mounted.body))
    return np.linalg.solve(K - w**2 * M + 1j * w * C, Qc - 1j * Qs)


def skid_results(mounted: MountedBody, unbalance: Unbalance, points=(), X=None) -> dict[str, float]:
    """The results of the sheet ``machine_on_mounts`` by its names, SI (rad/s, N, m, rad).

    ``omega_1`` .. ``omega_6``; ``P_<mount>``, ``delta_<mount>`` (static load and deflection);
    ``amp_q1`` .. ``amp_q6`` (amplitudes of x, y, z, theta_x, theta_y, theta_z); ``point_<k>_<axis>``
    for the named *points* ``[(name, xyz), ...]``; ``F_<mount>`` (dynamic force along the mount's
    axis). *X* is the steady state's complex amplitudes (default: :func:`harmonic_state`).
    """
    X = harmonic_state(mounted, unbalance) if X is None else np.asarray(X)
    omegas, _ = mounted.modes()
    out = {f"omega_{j + 1}": float(w) for j, w in enumerate(omegas)}
    _, loads = mounted.static()
    for load in loads:
        out[f"P_{load.name}"] = load.load
        out[f"delta_{load.name}"] = load.deflection
    out.update({f"amp_q{j + 1}": float(abs(X[j])) for j in range(6)})
    for k, (_, xyz) in enumerate(points, start=1):
        for axis_name, value in zip("xyz", point_motion(mounted.body, X, xyz), strict=True):
            out[f"point_{k}_{axis_name}"] = float(value)
    for mount, force in zip(mounted.mounts, mount_forces(mounted, X, float(unbalance.speed)), strict=True):
        axial = np.array(mount.axial.tolist(), dtype=float).ravel()
        out[f"F_{mount.name}"] = float(force[int(np.argmax(np.abs(axial)))])
    return out
