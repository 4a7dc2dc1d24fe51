"""The what-if explorer: sliders over a template's calculation (ipywidgets imported only here).

The folder, one job a module:

=================  ===========================================================
``plans.py``       the roles of inputs, ``Plan`` and ``PLANS``: one declarative
                   entry per template, holding the functions it computes with
``model.py``       what is derived once with symbols and compiled
``results.py``     the result sets, checks, refusals and rows the plans name; ``WhatIf``
``values.py``      one input (``_Input``) and the number helpers
``keep.py``        writing the inputs file that ``calckit build`` reads; ``Kept``
``figure.py``      the plots
``widgets.py``     the sliders and buttons (ipywidgets imported only here, lazily)
``explorer.py``    the ``Explorer``
``start.py``       opening one: template, plan, starting values
=================  ===========================================================

:func:`explore` is light to import; the explorer itself loads sympy, numpy and
ipywidgets when it is first opened.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from calckit.explore.explorer import Explorer
    from calckit.explore.plans import Plan

__all__ = ["explore"]


def explore(
    inputs: str | os.PathLike | None = None,
    template: str | os.PathLike | None = None,
    *,
    mass: Any = None,
    stiffness: Any = None,
    damping_ratio: Any = None,
    damping: Any = None,
    force_amplitude: Any = None,
    forcing_frequency: Any = None,
    amplitude_limit: Any = None,
    values: Mapping[str, Any] | None = None,
    names: Mapping[str, str] | None = None,
    plan: str | Plan | None = None,
    band: float = 0.20,  # calckit.physics.criteria.SEPARATION_BAND (a literal here: this module stays light)
    points: int = 2000,  # calckit.explore.explorer.CURVE_POINTS
    widgets: bool = True,
) -> Explorer:
    """Open the what-if explorer on a template's calculation of one mass under a harmonic force.

    Parameters
    ----------
    inputs : str or path, optional
        An inputs file (TOML) for *template*; checked against the template's
        parameters as ``calckit build`` checks it.
    template : str or path, optional
        A template notebook or a bundled template's name; ``single_mass_harmonic``
        by default. Its entry in :data:`PLANS` (or its parameter names) says which
        inputs, results and checks there are (see the module notes).
    mass, stiffness, damping_ratio, damping, force_amplitude, forcing_frequency, amplitude_limit
        Values given directly, by role: text with a unit (``"1850 kg"``), a pint
        quantity, or a number for the damping ratio. They replace the file's (or
        the template's) starting values.
    values : mapping, optional
        More values given directly, by the template's parameter name or by role
        (``{"rotor_mass": "200 kg", "balance_grade": "2.5 mm/s"}``).
    names : mapping, optional
        Role -> the template's parameter name, for names not recognised.
    plan : str or Plan, optional
        The entry to explore the template by (a key of :data:`PLANS`, or a
        :class:`Plan`); by default the template's own entry, else the single-mass one.
    band : float
        Half-width of the speed-separation band as a fraction (0.20: +/-20 %).
    points : int
        Points on the frequency-response curve and the time history.
    widgets : bool
        Build the sliders (when ipywidgets is importable). With False, or without
        ipywidgets, the explorer shows a still and moves by :meth:`Explorer.set`.

    Returns
    -------
    Explorer

    Raises
    ------
    InputsError, UnitsError
        A template without the inputs of the model, an inputs file that does not
        match its template, a value of the wrong kind or sign, values the template
        refuses, a forcing that is not one harmonic at the forcing frequency.
    BuildError
        No such template.
    """
    from calckit.explore.start import open_explorer

    return open_explorer(
        inputs,
        template,
        mass=mass,
        stiffness=stiffness,
        damping_ratio=damping_ratio,
        damping=damping,
        force_amplitude=force_amplitude,
        forcing_frequency=forcing_frequency,
        amplitude_limit=amplitude_limit,
        values=values,
        names=names,
        plan=plan,
        band=band,
        points=points,
        widgets=widgets,
    )
