"""Opening an explorer: the template, its plan, the starting values from a file or given directly.

:func:`open_explorer` is the body of :func:`calckit.explore.explore` (which holds the
parameters and their documentation, and stays light to import).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from calckit.core.units import fmt_number, quantity, to_si
from calckit.errors import CalcError, InputsError
from calckit.explore.explorer import Explorer
from calckit.explore.model import _default_forcing, _forcing_expr
from calckit.explore.plans import DEFAULT_TEMPLATE, ROLES, Plan, _plan_of, _roles_of
from calckit.explore.values import _Input, _input
from calckit.workflow import check_keys, load_template, read_inputs


def open_explorer(
    inputs: Any,
    template: Any,
    *,
    mass: Any,
    stiffness: Any,
    damping_ratio: Any,
    damping: Any,
    force_amplitude: Any,
    forcing_frequency: Any,
    amplitude_limit: Any,
    values: Mapping[str, Any] | None,
    names: Mapping[str, str] | None,
    plan: str | Plan | None,
    band: float,
    points: int,
    widgets: bool,
) -> Explorer:
    """Open the explorer; the parameters are those of :func:`calckit.explore.explore`."""
    tmpl = load_template(template if template is not None else DEFAULT_TEMPLATE)
    plan = _plan_of(plan, tmpl.name)
    file = None
    start: dict[str, Any] = dict(tmpl.parameters)
    wheres = {name: name for name in start}
    roles = _roles_of(plan, tmpl.parameters, names, where=str(tmpl.path))
    if inputs is not None:
        file = read_inputs(inputs)
        check_keys(file, tmpl.parameters, path=file.path, optional=tmpl.optional_inputs)
        start.update(file.assignments(tmpl.parameters))
        wheres.update({name: file.where(name) for name in file.values})
    given = {
        "mass": mass,
        "stiffness": stiffness,
        "damping_ratio": damping_ratio,
        "damping": damping,
        "force_amplitude": force_amplitude,
        "forcing_frequency": forcing_frequency,
        "amplitude_limit": amplitude_limit,
    }
    for key, value in given.items():
        if value is None:
            continue
        if key not in roles:
            raise _not_declared(key, value, roles, start, tmpl.name)
        start[roles[key]] = value
        wheres[roles[key]] = f"explore({key}=...)"
    by_name = {name: key for key, name in roles.items()}
    for key, value in (values or {}).items():
        name = roles.get(key, key)
        if name not in by_name:
            raise InputsError(
                f'"{key}" is not an input the explorer moves on {tmpl.name}',
                where=f"explore(values={{{key!r}: ...}})",
                do=f"Give one of: {', '.join(roles.values())}",
            )
        start[name] = value
        wheres[name] = f"explore(values={{{key!r}: ...}})"
    if not isinstance(points, int) or isinstance(points, bool) or points < 10:
        raise InputsError(
            f"expected 10 or more points, got {points!r}", where="explore(points=...)", do="Give an int"
        )
    if not (isinstance(band, int | float) and 0 < band < 1):
        raise InputsError(
            f"expected a fraction between 0 and 1, got {band!r}",
            where="explore(band=...)",
            do="Give, for example, 0.2 for +/-20 %",
        )

    items: dict[str, _Input] = {}
    texts: dict[str, Any] = {}
    for key in dict.fromkeys((*plan.sliders, *plan.roles())):  # sliders in their order, then the rest
        if key not in roles or key == "forcing":
            continue
        name = roles[key]
        if ROLES[key].kind is None:
            texts[key] = start[name]
        else:
            items[key] = _input(ROLES[key], name, start[name], wheres.get(name, name))
    forcing = _default_forcing()
    if "forcing" in roles:
        name = roles["forcing"]
        forcing = _forcing_expr(start[name], wheres.get(name, name))
    return Explorer(
        items,
        texts,
        plan=plan,
        template=tmpl,
        values=start,
        file=file,
        forcing=forcing,
        band=float(band),
        points=points,
        widgets=widgets,
    )


def _not_declared(
    key: str, value: Any, roles: Mapping[str, str], values: Mapping[str, Any], template: str
) -> InputsError:
    if key == "damping" and "damping_ratio" in roles:
        hint = "Give damping_ratio=c/(2*sqrt(k*m))"
        try:
            c = float(to_si(quantity(value, "damping", expect="damping coefficient"), "damping").magnitude)
            m = float(to_si(quantity(values[roles["mass"]], "mass", expect="mass"), "mass").magnitude)
            k = float(
                to_si(quantity(values[roles["stiffness"]], "stiffness", expect="stiffness"), "k").magnitude
            )
            hint += f", here {fmt_number(c / (2 * math.sqrt(k * m)))}"
        except (CalcError, ValueError, ZeroDivisionError):
            pass
        return InputsError(
            f"the template {template} takes the damping as a ratio ({roles['damping_ratio']}), not as a coefficient",
            where="explore(damping=...)",
            do=hint,
        )
    if key == "damping_ratio" and "damping" in roles:
        return InputsError(
            f"the template {template} takes the damping as a coefficient ({roles['damping']}), not as a ratio",
            where="explore(damping_ratio=...)",
            do="Give damping=c with a unit, c = 2 zeta sqrt(k m)",
        )
    return InputsError(
        f"the template {template} declares no input for the {ROLES[key].label}",
        where=f"explore({key}=...)",
        do="Leave it out, or explore a template that has it",
    )
