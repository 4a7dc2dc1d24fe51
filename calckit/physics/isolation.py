"""A machine with a rotor on spring isolators: its results at running speed, step by step.

The chain a sheet of a machine on isolators writes out, one step after another:
the permissible eccentricity from the balance grade (at the maximum service speed), the
residual unbalance and its force at running speed, the natural frequency and the static
deflection of the isolators under the machine's weight (``m g / k``; not the deflection
under the force amplitude applied statically, ``F_0 / k``), the damping coefficient (viscous,
or the equivalent of a hysteretic loss factor at running speed), the frequency ratio, the amplitude and the force into the floor, the
transmissibility and the isolation efficiency. Each step takes the results before it
*as shown* on the sheet (:func:`calckit.core.rounding.as_shown`, four significant
figures in the unit shown) when ``carry`` says so, so that a checker redoing a step
from the printed numbers gets the printed result.

References
----------
ISO 21940-11:2016, balance quality grade ``G = e_per Omega`` with ``Omega`` the maximum service
speed, from memory.
S. S. Rao, *Mechanical Vibrations*, 5th ed., sec. 3.7 (rotating unbalance) and sec. 9.10
(vibration isolation, transmissibility), from memory.
The standard acceleration of gravity, 9.80665 m/s^2: a defined constant (3rd CGPM, 1901).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

from calckit.core.rounding import as_shown
from calckit.errors import InputsError
from calckit.physics.excitation import (
    eccentricity_from_grade,
    residual_unbalance,
    transmitted_force_amplitude,
    unbalance_force,
)
from calckit.physics.harmonic import forced_amplitude
from calckit.physics.hysteretic import damping_model as _damping_model
from calckit.physics.hysteretic import equivalent_viscous_damping
from calckit.physics.runup import RunUpResults, run_up_results

__all__ = [
    "STANDARD_GRAVITY",
    "IsolatorResults",
    "isolator_refusal",
    "isolator_results",
    "isolator_run_up",
    "static_deflection",
]

#: Standard acceleration of gravity, m/s^2 (a defined constant, 3rd CGPM, 1901).
STANDARD_GRAVITY = 9.80665


def static_deflection(m: float, k: float, g: float = STANDARD_GRAVITY) -> float:
    """Static deflection under the weight: springs of stiffness *k* (N/m) under a mass *m* (kg), in m: ``m g / k``.

    Not the deflection under a force amplitude applied statically, ``F_0 / k``, against which a
    magnification is taken.

    Examples
    --------
    >>> round(static_deflection(1000.0, 980665.0) * 1000, 12)
    10.0
    """
    return m * g / k


@dataclass(frozen=True)
class IsolatorResults:
    """The results at running speed, SI, under the names a sheet gives them.

    Attributes
    ----------
    e_per : permissible mass eccentricity ``G / Omega_max``, m.
    U : residual unbalance, kg m.
    F_0 : unbalance force amplitude at running speed, N.
    omega_n, f_n : natural frequency on the isolators, rad/s and Hz.
    delta_st : static deflection under the weight ``m g / k``, standard gravity, m.
    c : damping coefficient, N s/m (hysteretic: the equivalent ``eta k / Omega`` at running speed).
    r : frequency ratio ``Omega / omega_n``.
    X : amplitude of the machine, m.
    F_T : amplitude of the force into the floor, N.
    T : transmissibility ``F_T / F_0``.
    eta : isolation efficiency ``1 - T`` (a fraction).
    """

    e_per: float
    U: float
    F_0: float
    omega_n: float
    f_n: float
    delta_st: float
    c: float
    r: float
    X: float
    F_T: float
    T: float
    eta: float

    def as_dict(self) -> dict[str, float]:
        """The results by name."""
        return asdict(self)


def isolator_results(
    *,
    machine_mass: float,
    isolator_stiffness: float,
    damping_ratio: float,
    rotor_mass: float,
    balance_grade: float,
    running_speed: float,
    maximum_service_speed: float | None = None,
    damping_model: str = "viscous",
    loss_factor: float | None = None,
    carry: int | None = 4,
) -> IsolatorResults:
    """The isolator results step by step, each step taking the earlier ones as shown.

    Parameters
    ----------
    machine_mass : kg, everything on the isolators.
    isolator_stiffness : N/m, all isolators together.
    damping_ratio : of the isolators.
    rotor_mass : kg, the rotating parts.
    balance_grade : G in mm/s, as the standard quotes it.
    running_speed : rad/s.
    maximum_service_speed : rad/s, the highest speed in service, at which ISO 21940-11 takes the
        permissible eccentricity ``e_per = G / Omega_max``; None: the running speed.
    damping_model : ``"viscous"`` (``c = 2 zeta sqrt(k m)``) or ``"hysteretic"`` (a loss factor,
        elastomer mounts: complex stiffness ``k (1 + i eta)``, the same at running speed as
        ``c = eta k / Omega``; *damping_ratio* is then not used).
    loss_factor : eta, for the hysteretic model.
    carry : significant figures a result is carried at into a later step (in the unit the
        sheet shows it in: um, g mm, N, rad/s, N s/m, a pure number); None carries exactly.

    Examples
    --------
    >>> got = isolator_results(machine_mass=1850.0, isolator_stiffness=720e3, damping_ratio=0.05,
    ...                        rotor_mass=140.0, balance_grade=6.3, running_speed=1480 * math.pi / 30)
    >>> round(got.omega_n, 4), round(got.eta, 4)
    (19.7279, 0.9791)
    """
    m, k, zeta = machine_mass, isolator_stiffness, damping_ratio
    model = _damping_model(damping_model)
    # the sheet converts the speed to rad/s in a step of its own and carries it as shown
    w = as_shown(running_speed, carry)
    w_max = w if maximum_service_speed is None else as_shown(maximum_service_speed, carry)
    e_um = float(eccentricity_from_grade(balance_grade, w_max)) * 1e6  # e_per = G / Omega_max
    u_gmm = float(residual_unbalance(rotor_mass, as_shown(e_um, carry)))  # kg um = g mm
    f0 = float(unbalance_force(as_shown(u_gmm, carry) * 1e-6, w))  # F_0 = U Omega^2
    wn = math.sqrt(k / m)
    if model == "hysteretic":
        c = float(equivalent_viscous_damping(_loss_factor(loss_factor), k, w))  # c_eq = eta k / Omega
    else:
        c = 2 * zeta * math.sqrt(k * m)
    f0_c, c_c = as_shown(f0, carry), as_shown(c, carry)
    x = float(forced_amplitude(f0_c, m, c_c, k, w))
    f_t = float(transmitted_force_amplitude(k, c_c, x, w))
    t_ratio = as_shown(f_t, carry) / f0_c if f0_c else math.nan
    return IsolatorResults(
        e_per=e_um * 1e-6,
        U=u_gmm * 1e-6,
        F_0=f0,
        omega_n=wn,
        f_n=as_shown(wn, carry) / (2 * math.pi),
        delta_st=static_deflection(m, k),
        c=c,
        r=w / as_shown(wn, carry),
        X=x,
        F_T=f_t,
        T=t_ratio,
        eta=1 - as_shown(t_ratio, carry),
    )


def _loss_factor(loss_factor) -> float:
    if loss_factor is None:
        raise InputsError(
            "the hysteretic damping model needs a loss factor",
            where="loss_factor",
            do="Give the mounts' loss factor eta (elastomer about 0.05 to 0.25), or choose the viscous model",
        )
    return float(loss_factor)


def isolator_refusal(
    *,
    machine_mass: float,
    rotor_mass: float,
    damping_ratio: float,
    required_isolation: float,
    shown: tuple[str, str],
    names: dict[str, str] | None = None,
    running_speed: float | None = None,
    maximum_service_speed: float | None = None,
    loss_factor: float | None = None,
) -> InputsError | None:
    """What a machine-on-isolators calculation refuses, with its message; None when it takes the values.

    The template raises the error; the what-if explorer shows it beside the sliders.

    Parameters
    ----------
    machine_mass, rotor_mass : float
        kg (any one unit for both).
    damping_ratio, required_isolation : float
        Fractions (0.05, 0.95).
    shown : (str, str)
        The rotor's and the machine's mass as the user wrote them, for the message.
    names : dict, optional
        The inputs' names (keys ``machine_mass``, ``rotor_mass``, ``damping_ratio``,
        ``required_isolation``, ``maximum_service_speed``), when the template calls them otherwise.
    running_speed, maximum_service_speed : float, optional
        rad/s; a maximum service speed below the running speed is refused.
    loss_factor : float, optional
        For hysteretic mounts: checked in place of *damping_ratio* (below 2, so that the
        same-peak damping ratio ``eta / 2`` is underdamped).

    Examples
    --------
    >>> print(isolator_refusal(machine_mass=100, rotor_mass=200, damping_ratio=0.05,
    ...                        required_isolation=0.9, shown=("200 kg", "100 kg")))
    rotor_mass: the rotor (200 kg) is heavier than everything on the isolators (100 kg). Give the rotating \
parts only in rotor_mass and the whole machine in machine_mass.
    """
    name = {
        key: key
        for key in (
            "machine_mass",
            "rotor_mass",
            "damping_ratio",
            "required_isolation",
            "maximum_service_speed",
        )
    }
    name.update(names or {})
    if rotor_mass > machine_mass:
        return InputsError(
            f"the rotor ({shown[0]}) is heavier than everything on the isolators ({shown[1]})",
            where=name["rotor_mass"],
            do=f"Give the rotating parts only in {name['rotor_mass']} and the whole machine in {name['machine_mass']}",
        )
    if loss_factor is not None and not loss_factor < 2:
        return InputsError(
            f"a loss factor of {loss_factor:g} is beyond any mount (its same-peak damping ratio eta/2 is not underdamped)",
            where=name.get("loss_factor", "loss_factor"),
            do="Give the mounts' loss factor, elastomer about 0.05 to 0.25",
        )
    if loss_factor is None and not damping_ratio < 1:
        return InputsError(
            f"a damping ratio of {damping_ratio:g} is not underdamped",
            where=name["damping_ratio"],
            do="Isolators are lightly damped; give a damping ratio below 1 (bare steel coil springs about 0.005 "
            "to 0.01, elastomer mounts about 0.05)",
        )
    if not required_isolation < 1:
        return InputsError(
            f"an isolation efficiency of {required_isolation:.0%} cannot be reached",
            where=name["required_isolation"],
            do="Give an efficiency below 100 %, e.g. 90 %",
        )
    if (
        running_speed is not None
        and maximum_service_speed is not None
        and maximum_service_speed < running_speed
    ):
        return InputsError(
            f"the maximum service speed ({maximum_service_speed:.4g} rad/s) is below the running speed "
            f"({running_speed:.4g} rad/s)",
            where=name["maximum_service_speed"],
            do="Give the highest speed the machine runs at in service, at least the running speed "
            "(leave it empty to take the running speed)",
        )
    return None


def isolator_run_up(
    *,
    machine_mass: float,
    isolator_stiffness: float,
    damping_ratio: float,
    rotor_mass: float,
    balance_grade: float,
    running_speed: float,
    run_up_time: float,
    direction: str = "up",
    maximum_service_speed: float | None = None,
) -> RunUpResults:
    """The run-up from rest of a machine on isolators under its rotor's unbalance (:func:`run_up_results`),
    or with ``direction="down"`` its coast-down over *run_up_time* from the steady state at running speed.

    The damping coefficient ``c = 2 zeta sqrt(k m)`` and the unbalance ``U = m_r G / Omega_max``
    (*maximum_service_speed*, None: the running speed) are taken unrounded (the run-up is a simulation, not a step a checker redoes by hand).
    Units as :func:`isolator_results` (SI; the grade in mm/s, as the standard quotes it). For
    hysteretic mounts give the damping ratio with the same resonant peak, ``eta / 2``
    (:func:`calckit.physics.hysteretic.equivalent_damping_ratio`): the loss factor holds for a
    steady state only, and the run-up's largest motion comes near resonance.
    """
    m, k, zeta = machine_mass, isolator_stiffness, damping_ratio
    w_max = running_speed if maximum_service_speed is None else maximum_service_speed
    unbalance = float(residual_unbalance(rotor_mass, eccentricity_from_grade(balance_grade, w_max)))
    return run_up_results(
        m=m,
        c=2 * zeta * math.sqrt(k * m),
        k=k,
        omega=running_speed,
        unbalance=unbalance,
        run_up_time=run_up_time,
        zeta=zeta,
        direction=direction,
    )
