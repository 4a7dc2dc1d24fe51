"""The what-if plan of a skid on its mounts (a rigid body in six DOF) at one set of values.

The functions here are named by the plan in :data:`calckit.explore.plans.PLANS`; none
knows a plan's name. They build the skid with :func:`calckit.physics.mounts.mounted_skid`
and take its results from :func:`calckit.physics.mounts.skid_results`, the two
functions the template calls (the template checks its derived steady state against the
same receptance route). The explorer's plot and time history show the **bounce** alone:
the mass on all the mounts' axial springs and dampers together (:func:`_bounce`), which
the results table says; the six coupled modes are in the table.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from calckit.core.units import Q_, fmt
from calckit.explore.results import Row, _judge, _Move
from calckit.explore.values import _Input
from calckit.physics.criteria import SEPARATION_BAND, SEPARATION_BASIS, speed_separation
from calckit.physics.excitation import eccentricity_from_grade, residual_unbalance
from calckit.physics.mounts import Unbalance, mounted_skid, skid_results
from calckit.physics.rigid_body import read_point

_MOUNTS = tuple(f"mount_{i}" for i in range(1, 7))
_POINTS = tuple(f"point_{i}" for i in range(1, 4))


def _given(texts: Mapping[str, Any], keys) -> list[tuple[str, str]]:
    return [(k, str(texts[k])) for k in keys if str(texts.get(k, "") or "").strip()]


def _coordinates(text: Any, where: str) -> tuple:
    """``"x = 0.18 m; y = 0.03 m; z = 0.62 m"`` as (x, y, z) in m (the name-free form of a point)."""
    return read_point(str(text), where)[1]


def _skid(values: Mapping[str, float], texts: Mapping[str, Any]):
    """The skid as the template builds it, and its unbalance at the current values."""
    mounts = [read_point(text, key) for key, text in _given(texts, _MOUNTS)]
    inertia = str(texts.get("inertia", "box")).strip().lower()
    if inertia == "box":
        J, sides = "box", _coordinates(texts["box_sides"], "box_sides")
    else:
        from calckit.core.expressions import parse_parameters
        from calckit.core.units import to_si

        e = {
            k: float(to_si(q, k).magnitude)
            for k, q in parse_parameters(texts["inertia_tensor"], where="inertia_tensor").items()
        }
        J = [[e["Jxx"], e["Jxy"], e["Jxz"]], [e["Jxy"], e["Jyy"], e["Jyz"]], [e["Jxz"], e["Jyz"], e["Jzz"]]]
        sides = None
    mounted = mounted_skid(
        values["mass"],
        _coordinates(texts["centre_of_gravity"], "centre_of_gravity"),
        J,
        mounts,
        axis=str(texts.get("mount_axis", "z")).strip(),
        stiffness=(values["stiffness"], values["shear_stiffness"]),
        damping=(values["damping"], values["shear_damping"]),
        rated_load=values.get("rated_load"),
        rated_deflection=values.get("rated_deflection"),
        sides=sides,
    )
    w = values["forcing_frequency"]
    U = residual_unbalance(values["rotor_mass"], eccentricity_from_grade(values["balance_grade"] * 1000.0, w))
    unbalance = Unbalance(_coordinates(texts["unbalance_position"], "unbalance_position"), float(U), w, "x")
    points = [read_point(text, key) for key, text in _given(texts, _POINTS)]
    return mounted, unbalance, points


def _bounce(values: Mapping[str, float], texts: Mapping[str, Any]) -> tuple[float, float, float]:
    """``(m, N c_a, N k_a)``: the skid bouncing on all its mounts' axial springs and dampers (the plot's model)."""
    n = len(_given(texts, _MOUNTS))
    return values["mass"], n * values["damping"], n * values["stiffness"]


def _mount_results(mv: _Move) -> tuple[dict[str, float], None]:
    """The sheet's results by its names (:func:`calckit.physics.mounts.skid_results`), SI, with the modes' words."""
    mounted, unbalance, points = _skid(mv.values, mv.texts)
    results = skid_results(mounted, unbalance, points)
    results["F_0"] = float(unbalance.amplitude)
    return results, None


def _static_load_check(mv: _Move, results: Mapping[str, float]):
    """The most heavily loaded mount against its rated load (the sheet checks every mount)."""
    loads = {k[2:]: v for k, v in results.items() if k.startswith("P_")}
    worst = max(loads, key=loads.get)
    rated = mv.values.get("rated_load")
    if rated is None:
        return None
    return _judge(f"static load of {worst}", loads[worst] / 1000, rated / 1000, "<=", "kN",
                  "mount maker's rated static load")  # fmt: skip


def _point_motion_check(mv: _Move, results: Mapping[str, float]):
    """The named point that moves most against the motion limit (the sheet checks every point)."""
    limit = mv.quantities.get("amplitude_limit")
    moves = {k: v for k, v in results.items() if k.startswith("point_")}
    if limit is None or not moves:
        return None
    worst = max(moves, key=moves.get)
    names = {k: read_point(t, k)[0] for k, t in _given(mv.texts, _POINTS)}
    name = names[worst.rsplit("_", 1)[0]]
    return _judge(f"motion of the {name}", moves[worst] * 1000, float(limit.to("mm").magnitude), "<=", "mm",
                  mv.texts.get("amplitude_limit_basis", ""))  # fmt: skip


def _nearest_mode_check(mv: _Move, results: Mapping[str, float]):
    """Running speed against the nearest of the six modes (the sheet checks every mode and order)."""
    w = mv.values["forcing_frequency"]
    separations = {j: speed_separation(w, results[f"omega_{j}"]) for j in range(1, 7)}
    j = min(separations, key=separations.get)
    return _judge(f"mode {j} from order 1", separations[j] * 100, SEPARATION_BAND * 100, ">=", "percent",
                  SEPARATION_BASIS)  # fmt: skip


def _mount_rows(results, inputs: Mapping[str, _Input]) -> list[Row]:
    """Six modes (Hz), the static load of each mount, the motion of the named points."""
    got = results.sheet
    rows: list[Row] = []
    for j in range(1, 7):
        w = got[f"omega_{j}"]
        rows.append((f"omega_{j}", f"mode {j}, f<sub>{j}</sub>", fmt(Q_(w / (2 * math.pi), "Hz")), repr(w)))
    for name, value in got.items():
        if name.startswith("P_"):
            rows.append((name, f"static load of {name[2:]}", fmt(Q_(value, "N").to("kN")), repr(value)))
    for name, value in got.items():
        if name.startswith("point_"):
            point, axis = name.rsplit("_", 1)
            rows.append((name, f"motion of {point} along {axis}", fmt(Q_(value, "m").to("um")), repr(value)))
    rows.append(("bounce", "plot: the bounce alone (m on all the mounts' axial springs)", "", ""))
    return rows
