"""What the explorer knows of each template: the roles of its inputs and one declarative ``Plan`` each.

Adding a template to the explorer is adding one :class:`Plan` to :data:`PLANS`: which
parameter plays which role, which roles are on sliders, how the force amplitude is
formed, the function that computes the template's results, the checks it makes, what
it refuses, the rows of its results table, and which plots fit it. The
:class:`~calckit.explore.explorer.Explorer` only calls what its plan holds.

=======================  ====================================================
template                 entry
=======================  ====================================================
``single_mass_harmonic`` force given (``force_amplitude``); results through
                         :func:`calckit.physics.single_mass.single_mass_results`,
                         carried at four significant figures;
                         checks: amplitude against ``amplitude_limit``, speed
                         separation; amplitude curve, steady state and the
                         response from rest
``machine_on_isolators`` force from the rotor: ``F0 = m_r e w^2`` with
                         ``e = G / w`` (ISO 21940-11, from memory); results
                         through :func:`calckit.physics.isolation.isolator_results`
                         and :func:`calckit.physics.runup.run_up_results`, carried
                         at four significant figures; checks: isolation
                         efficiency, frequency ratio >= 3, speed separation,
                         motion during the run-up; transmissibility curve, run-up
                         history
``machine_on_mounts``    force from the rotor as above; results through
                         :func:`calckit.physics.mounts.skid_results` (six modes,
                         static load per mount, motion at the named points, force
                         per mount); checks: the most loaded mount against its
                         rating, the point that moves most, the mode nearest
                         running speed; the plot and time history show the
                         bounce alone (``equivalent``)
=======================  ====================================================

A template not in the table is read by parameter names as the single-mass entry.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from calckit.errors import InputsError
from calckit.explore import mount_results as _m
from calckit.explore import results as _r
from calckit.explore.values import Role
from calckit.physics.criteria import SEPARATION_BASIS
from calckit.physics.excitation import BALANCE_QUALITY_GRADES

__all__ = ["DEFAULT_TEMPLATE", "PLANS", "ROLES", "Plan", "Role"]

#: Template used when values are given directly.
DEFAULT_TEMPLATE = "single_mass_harmonic"


#: The model's inputs, by keyword: the names a template may declare them under.
ROLES: Mapping[str, Role] = MappingProxyType(
    {
        r.key: r
        for r in (
            Role("mass", "mass", ("mass", "m"), "mass"),
            Role("stiffness", "stiffness", ("stiffness", "k"), "stiffness", scale="log"),
            Role(
                "damping_ratio", "dimensionless", ("damping_ratio", "zeta"), "damping ratio", "non-negative"
            ),
            Role(
                "damping",
                "damping coefficient",
                ("damping", "damping_coefficient", "c"),
                "damping coefficient",
                "non-negative",
            ),
            Role("force_amplitude", "force", ("force_amplitude", "F0"), "force amplitude", "non-negative"),
            Role(
                "forcing_frequency",
                "frequency",
                ("forcing_frequency", "running_speed", "speed"),
                "forcing frequency",
                scale="log",
            ),
            Role("amplitude_limit", "length", ("amplitude_limit",), "amplitude limit", scale=""),
            Role("amplitude_limit_basis", None, ("amplitude_limit_basis",), "basis of the limit", "", ""),
            Role("forcing", None, ("forcing",), "forcing", "", ""),
            Role("rotor_mass", "mass", ("rotor_mass",), "rotor mass"),
            Role(
                "balance_grade",
                "velocity",
                ("balance_grade",),
                "balance quality grade",
                choices=BALANCE_QUALITY_GRADES,
                choice_unit="mm/s",
            ),
            Role("run_up_time", "time", ("run_up_time",), "run-up time"),
            Role(
                "required_isolation",
                "dimensionless",
                ("required_isolation",),
                "least isolation efficiency",
                scale="",
            ),
            Role(
                "required_isolation_basis",
                None,
                ("required_isolation_basis",),
                "basis of the isolation",
                "",
                "",
            ),
            Role("movement_limit", "length", ("movement_limit",), "movement limit", scale=""),
            Role(
                "movement_limit_basis", None, ("movement_limit_basis",), "basis of the movement limit", "", ""
            ),
            # a rigid body on mounts (machine_on_mounts): the mounts' shear springs, ratings, and the layout as text
            Role("shear_stiffness", "stiffness", ("mount_shear_stiffness",), "shear stiffness", scale="log"),
            Role(
                "shear_damping",
                "damping coefficient",
                ("mount_shear_damping",),
                "shear damping",
                "non-negative",
                scale="",
            ),
            Role("rated_load", "force", ("mount_rated_load",), "rated load", scale=""),
            Role("rated_deflection", "length", ("mount_rated_deflection",), "rated deflection", scale=""),
            *(
                Role(key, None, (key,), key.replace("_", " "), "", "")
                for key in (
                    "centre_of_gravity",
                    "inertia",
                    "box_sides",
                    "inertia_tensor",
                    "mount_axis",
                    "unbalance_position",
                    *(f"mount_{i}" for i in range(1, 7)),
                    *(f"point_{i}" for i in range(1, 4)),
                )
            ),  # fmt: skip
        )
    }
)


@dataclass(frozen=True)
class Plan:
    """What the explorer knows of one template: a declarative entry of :data:`PLANS`.

    Attributes
    ----------
    template : str
        The template's name.
    names : mapping
        Role (a key of :data:`ROLES`) -> the template's parameter name. Empty: the
        parameters are recognised by the names :data:`ROLES` lists.
    required, optional : tuple of str
        Roles the template must declare, and roles it may declare. ``"damping"``
        stands for either ``damping_ratio`` or ``damping`` (a coefficient).
    sliders : tuple of str
        Roles on sliders, in order; other roles with a unit are limits (moved by
        :meth:`Explorer.set`, kept like the others), roles without one are text.
    force : callable
        ``force(values) -> F0``: the force amplitude (N) from the SI values by role.
    results : callable
        ``results(move) -> (results by the template's names, run-up or None)``.
    carry : int or None
        Significant figures at which the template carries a result into a later
        step (None: results are carried exactly).
    checks : tuple of callables
        ``check(move, results) -> Check or None``, in the template's order.
    refuse : callable or None
        ``refuse(values, quantities, names) -> InputsError or None``: the values the
        template refuses, with its message.
    rows : callable
        ``rows(whatif, inputs) -> [(name, label, shown, SI)]``: the results table.
    curve : str
        Frequency-response plot: ``"amplitude"`` or ``"transmissibility"``.
    history : str
        Time history: ``"steady"`` (steady state and from rest) or ``"run-up"``
        (run-up from rest through resonance, then running speed).
    separation_basis : str
        Basis of the speed-separation check.
    equivalent : callable or None
        ``equivalent(values, texts) -> (m, c, k)``: the one mass the plot and the time history
        show, for a model that is not one mass (None: the mass, damping and stiffness by role).
    takes_only : mapping
        Template parameters the plan computes at one value only (parameter -> that value,
        compared as lower-case text); other values are refused, so that the explorer
        never shows numbers for a case its sheet would compute otherwise.
    """

    template: str
    names: Mapping[str, str]
    required: tuple[str, ...]
    optional: tuple[str, ...]
    sliders: tuple[str, ...]
    force: Callable[[Mapping[str, float]], float]
    results: Callable[..., tuple[dict[str, float], Any]]
    carry: int | None
    checks: tuple[Callable[..., Any], ...]
    refuse: Callable[..., InputsError | None] | None
    rows: Callable[..., list[tuple[str, str, str, str]]]
    curve: str
    history: str
    separation_basis: str = SEPARATION_BASIS
    takes_only: Mapping[str, str] = field(default_factory=lambda: MappingProxyType({}))
    equivalent: Callable[..., tuple[float, float, float]] | None = None

    def roles(self) -> tuple[str, ...]:
        """Every role the entry knows, required first."""
        wanted = [r for r in (*self.required, *self.optional) if r != "damping"]
        if "damping" in self.required or "damping" in self.optional:
            wanted += ["damping_ratio", "damping"]
        return tuple(dict.fromkeys(wanted))


#: The inputs of a machine on isolators that are on sliders, in order.
_ISOLATOR_SLIDERS = (
    "mass",
    "stiffness",
    "damping_ratio",
    "forcing_frequency",
    "rotor_mass",
    "balance_grade",
    "run_up_time",
)

#: machine_on_mounts: the roles on sliders, the template's names of the roles, the layout as text
_MOUNT_SLIDERS = ("mass", "stiffness", "shear_stiffness", "forcing_frequency", "rotor_mass", "balance_grade")
_MOUNT_NAMES = {
    "mass": "machine_mass",
    "stiffness": "mount_axial_stiffness",
    "shear_stiffness": "mount_shear_stiffness",
    "damping": "mount_axial_damping",
    "shear_damping": "mount_shear_damping",
    "forcing_frequency": "running_speed",
    "rotor_mass": "rotor_mass",
    "balance_grade": "balance_grade",
    "amplitude_limit": "motion_limit",
    "amplitude_limit_basis": "motion_limit_basis",
    "rated_load": "mount_rated_load",
    "rated_deflection": "mount_rated_deflection",
}
_MOUNT_TEXTS = (
    "centre_of_gravity", "inertia", "box_sides", "inertia_tensor", "mount_axis", "unbalance_position",
    *(f"mount_{i}" for i in range(1, 7)), *(f"point_{i}" for i in range(1, 4)),
)  # fmt: skip

#: The templates the explorer supports, one entry each (see the module notes).
PLANS: Mapping[str, Plan] = MappingProxyType(
    {
        p.template: p
        for p in (
            Plan(
                template="single_mass_harmonic",
                names=MappingProxyType({}),
                required=("mass", "stiffness", "damping", "force_amplitude", "forcing_frequency"),
                optional=("amplitude_limit", "amplitude_limit_basis", "forcing"),
                sliders=(
                    "mass",
                    "stiffness",
                    "damping_ratio",
                    "damping",
                    "force_amplitude",
                    "forcing_frequency",
                ),
                force=_r._given_force,
                results=_r._single_mass_results,
                carry=4,
                checks=(_r._amplitude_check, _r._separation_check),
                refuse=None,
                rows=_r._single_mass_rows,
                curve="amplitude",
                history="steady",
            ),
            Plan(
                template="machine_on_isolators",
                names=MappingProxyType(
                    {
                        "mass": "machine_mass",
                        "stiffness": "isolator_stiffness",
                        "damping_ratio": "damping_ratio",
                        "forcing_frequency": "running_speed",
                        "rotor_mass": "rotor_mass",
                        "balance_grade": "balance_grade",
                        "run_up_time": "run_up_time",
                        "required_isolation": "required_isolation",
                        "required_isolation_basis": "required_isolation_basis",
                        "movement_limit": "movement_limit",
                        "movement_limit_basis": "movement_limit_basis",
                    }
                ),
                required=(
                    *_ISOLATOR_SLIDERS,
                    "required_isolation",
                    "required_isolation_basis",
                    "movement_limit",
                    "movement_limit_basis",
                ),
                optional=(),
                sliders=_ISOLATOR_SLIDERS,
                force=_r._unbalance_force,
                results=_r._isolator_results,
                carry=4,
                checks=(_r._isolation_check, _r._ratio_check, _r._separation_check, _r._run_up_check),
                refuse=_r._isolator_refusal,
                rows=_r._isolator_rows,
                curve="transmissibility",
                history="run-up",
                # the sliders move a viscous model with the grade at running speed
                # ... at one running speed, against its 1x order only (a speed range or more orders: build the sheet)
                takes_only=MappingProxyType(
                    {
                        "damping_model": "viscous",
                        "maximum_service_speed": "",
                        "minimum_running_speed": "",
                        "maximum_running_speed": "",
                        "excitation_orders": "1",
                    }
                ),
            ),
            Plan(
                template="machine_on_mounts",
                names=MappingProxyType({**_MOUNT_NAMES, **{k: k for k in _MOUNT_TEXTS}}),
                required=(
                    *_MOUNT_SLIDERS,
                    "damping",
                    "shear_damping",
                    "amplitude_limit",
                    "amplitude_limit_basis",
                    "rated_load",
                    "rated_deflection",
                    *_MOUNT_TEXTS,
                ),  # fmt: skip
                optional=(),
                sliders=_MOUNT_SLIDERS,
                force=_r._unbalance_force,
                results=_m._mount_results,
                carry=None,
                checks=(_m._static_load_check, _m._point_motion_check, _m._nearest_mode_check),
                refuse=None,
                rows=_m._mount_rows,
                curve="amplitude",
                history="steady",
                equivalent=_m._bounce,
            ),
        )
    }
)


def _roles_of(
    plan: Plan, parameters: Mapping[str, Any], names: Mapping[str, str] | None, where: str
) -> dict[str, str]:
    """Role -> the template's parameter name, for the roles of *plan*."""
    found: dict[str, str] = {}
    names = dict(names or {})
    for key, name in names.items():
        if key not in ROLES:
            raise InputsError(
                f'"{key}" is not an input of the explorer\'s model',
                where="explore(names=...)",
                do=f"Map these keywords to the template's names: {', '.join(plan.roles())}",
            )
        if name not in parameters:
            raise InputsError(
                f'the template declares no parameter "{name}"',
                where=f"explore(names={{{key!r}: {name!r}}})",
                do=f"The template's parameters are {', '.join(parameters)}",
            )
        found[key] = name
    for key in plan.roles():
        if key in found:
            continue
        candidates = ((plan.names[key],) if key in plan.names else ()) if plan.names else ROLES[key].names
        for name in candidates:
            if name in parameters:
                found[key] = name
                break
    if "damping_ratio" in found and "damping" in found and "damping" not in names:
        del found["damping"]
    missing = [k for k in plan.required if k != "damping" and k not in found]
    if "damping" in plan.required and "damping_ratio" not in found and "damping" not in found:
        missing.append("damping")
    if missing:

        def wanted(key: str) -> str:
            if key == "damping":
                return "the damping (damping_ratio, zeta, damping, damping_coefficient or c)"
            known = (plan.names[key],) if key in plan.names else ROLES[key].names
            return f"the {ROLES[key].label} ({', '.join(known)})"

        raise InputsError(
            f"the template declares no input for {'; '.join(wanted(k) for k in missing)}",
            where=where,
            do="Explore a template of one mass on a spring and damper under a harmonic force "
            f"(such as {DEFAULT_TEMPLATE}), map its names with names={{'mass': '...'}}, "
            "or give the values directly",
        )
    return found


def _plan_of(plan: str | Plan | None, template: str) -> Plan:
    """The entry of :data:`PLANS` for *template* (or the one asked for)."""
    if isinstance(plan, Plan):
        return plan
    if plan is None:
        return PLANS.get(template, PLANS[DEFAULT_TEMPLATE])
    if plan not in PLANS:
        raise InputsError(
            f"the explorer has no entry called {plan!r}",
            where="explore(plan=...)",
            do=f"Give one of {', '.join(PLANS)}, or a Plan",
        )
    return PLANS[plan]
