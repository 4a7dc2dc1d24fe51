"""The kernel's side of a build: the warm-up run once in a new kernel and the reset run before each case.

These functions run inside the kernel (the build calls them by name, see
:data:`calckit.workflow.kernels.IN_KERNEL`), never in the process that builds.

Why a case cannot see the case before it: the reset clears the user's
namespace (IPython's reset: every name, the output history, the execution
count back to 1), closes all figures and restores matplotlib's rcParams as
recorded, changes to the case's own working folder, restores the environment
variables, ``sys.path``, the warning filters (and forgets which warnings were
shown), numpy's error and print settings, sympy's global parameters,
the recursion limit, IPython's display formatters, event hooks and
transformers; it empties sympy's cache and calckit's own caches (bar the unit caches of
:data:`KEPT_CACHES`, which hold unit data only) and reseeds
``random`` and numpy's global generator from the system, as a new process
would. The state it cannot put back is checked instead: a replaced
``sys.stdout`` or hook, a changed builtin, changed import hooks, units
defined in calckit's registry, a module imported from outside the
installation (a case's own folder, say). Any of these, and any case that timed
out, killed its kernel or failed other than by a cell's error, makes the
worker kill the kernel and run the next case in a new one. What remains
shared is what the warm-up loaded (the modules, their code) and modules the
templates imported from the installation. ``tests/test_batch_isolation.py``
checks it: a case that sets a global, matplotlib settings, numpy options, an
environment variable, warning filters and the working folder, and leaves a
figure open, is followed by one whose sheet (record, HTML and notebook) is
byte for byte the sheet built alone, and a case that adds a builtin sends the
next case to a new kernel. A kept kernel is killed when its worker process
ends.
"""

from __future__ import annotations

import os
import site
import sys
from pathlib import Path
from typing import Any

__all__ = ["kernel_warm_up", "kernel_reset"]

_BASELINE: dict[str, Any] = {}

#: calckit's caches that the reset keeps: each holds what depends on its arguments only (unit
#: names; a tolerance study's symbolic expressions, in which a case's numbers are arguments, not
#: constants), never a case's data, and costs time to fill (the exact unit registry is a second pint
#: registry, about 0.4 s to build; a check's margin, its derivatives and their compiled functions
#: about 0.05 s a case). A case that defines units is caught by the reset's check of the
#: registries, and its kernel replaced; an expression naming a function of a case's own is not kept
#: (:func:`calckit.sheet.tolerance_study._keepable`). Every other cache of calckit is emptied before each case.
KEPT_CACHES = frozenset(
    {
        "calckit.sheet.tolerance_study._lambdified",
        "calckit.sheet.tolerance_study._derivatives",
        "calckit.core.units._exact_registry",
        "calckit.core.units._pi_fraction",
        "calckit.core.units._exact_factor",
        "calckit.core.units._unit_dims",
        "calckit.core.units._kind_dimensionality",
    }
)


def kernel_warm_up() -> None:
    """Run once in a new kernel: import what templates use, then record the state to reset to.

    The imports are the ones every template makes (``import calckit as ck`` and the
    layers its names come from); they hold no case's data. What is recorded is what a
    template can change and :func:`kernel_reset` puts back.
    """
    import builtins
    import random
    import warnings

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot  # noqa: F401
    import numpy as np
    import scipy.integrate  # noqa: F401  (the independent check's solve_ivp; it adds warning filters)
    import sympy  # noqa: F401
    from IPython import get_ipython
    from sympy.core.parameters import global_parameters

    # the layers a template's ``import calckit as ck`` reaches (the package loads them lazily;
    # a kernel wants them loaded before the first case): everything but the explorer
    import calckit.core.checks
    import calckit.core.expressions
    import calckit.core.units
    import calckit.engine
    import calckit.engine.crosscheck  # the independent check every derived response gets
    import calckit.physics
    import calckit.render.display
    import calckit.render.numbers
    import calckit.sheet.sheet  # noqa: F401

    calckit.core.units.to_si("1 kN/m", "warm-up")  # builds the exact unit registry (a kept cache)
    shell = get_ipython()
    rc = dict(matplotlib.rcParams.copy())
    rc.pop("backend", None)
    formatters = shell.display_formatter.formatters
    _BASELINE.clear()
    _BASELINE.update(
        user_ns={k: v for k, v in shell.user_ns.items() if isinstance(v, str | type(None))},
        rc=rc,
        environ=dict(os.environ),
        path=list(sys.path),
        meta_path=list(sys.meta_path),
        filters=list(warnings.filters),
        numpy_err=np.geterr(),
        numpy_print=np.get_printoptions(),
        sympy=dict(vars(global_parameters)),
        recursion=sys.getrecursionlimit(),
        streams=(sys.stdout, sys.stderr, sys.displayhook, sys.excepthook),
        builtins={k: v for k, v in vars(builtins).items() if k != "_"},
        formatters={
            mime: (dict(f.type_printers), dict(f.deferred_printers), dict(f.singleton_printers))
            for mime, f in formatters.items()
        },
        events={name: list(hooks) for name, hooks in shell.events.callbacks.items()},
        transformers=(list(shell.ast_transformers), list(shell.input_transformers_post)),
        modules=set(sys.modules),
        units=_units_state(),
    )
    random.seed()  # (the reset reseeds too: a case never sees the numbers of another)
    import gc

    gc.collect()
    gc.freeze()  # what the warm-up loaded stays: the reset's collection then looks at a case's objects only


def _units_state() -> tuple:
    """calckit's unit registry: its units (bar the prefixed ones pint adds as they are used) and defaults."""
    from calckit.core.units import ureg

    units = set(ureg._units)
    prefixes = [p for p in ureg._prefixes if p]
    own = frozenset(u for u in units if not any(u.startswith(p) and u[len(p) :] in units for p in prefixes))
    formatter = getattr(ureg, "formatter", ureg)
    return (own, getattr(formatter, "default_format", None), ureg.default_system)


def _installed_module(module: Any) -> bool:
    """Whether a module comes with Python or an installed package (or calckit), not a case's folder."""
    where = getattr(module, "__file__", None)
    if not where:
        return True
    roots = {
        sys.prefix,
        sys.base_prefix,
        sys.exec_prefix,
        str(Path(__file__).resolve().parents[1]),  # calckit/
    }
    roots.update(site.getsitepackages(), [site.getusersitepackages()])
    where = os.path.realpath(where)
    return any(where.startswith(os.path.realpath(root) + os.sep) for root in roots)


def kernel_reset(folder: str) -> None:
    """Run in the kernel before each case: put back the state the warm-up recorded.

    Clears the user's namespace (IPython's reset: names, output history,
    execution count back to 1), closes every figure and restores matplotlib's
    rcParams, the working folder (*folder*), environment variables,
    ``sys.path``, warning filters (and which warnings were already shown),
    numpy's error and print settings, sympy's global parameters and cache,
    calckit's caches (bar :data:`KEPT_CACHES`), IPython's display formatters, event hooks and
    transformers, and reseeds ``random`` and numpy's global generator from the
    system, as a new process would. What cannot be put back (a new builtin, a
    replaced ``sys.stdout``, a module imported from outside the installation,
    units defined in calckit's registry, changed import hooks) raises
    ``RuntimeError``: the caller then replaces the kernel by a new one.
    """
    import builtins
    import gc
    import random
    import warnings

    import matplotlib
    import matplotlib.pyplot as plt
    import numpy as np
    from IPython import get_ipython
    from sympy.core.cache import clear_cache
    from sympy.core.parameters import global_parameters

    base = _BASELINE
    if not base:
        raise RuntimeError("the kernel was not warmed up")
    os.chdir(folder)  # first: the last case's folder is gone, and IPython's reset asks for the working folder
    shell = get_ipython()
    shell.reset(new_session=True)
    for key, value in base["user_ns"].items():
        shell.user_ns.setdefault(key, value)
    plt.close("all")
    matplotlib.rcParams._update_raw(base["rc"])
    if dict(os.environ) != base["environ"]:
        os.environ.clear()
        os.environ.update(base["environ"])
    sys.path[:] = base["path"]
    warnings.resetwarnings()  # also forgets which warnings were shown already
    warnings.filters[:] = base["filters"]
    np.seterr(**base["numpy_err"])
    np.set_printoptions(**base["numpy_print"])
    for key, value in base["sympy"].items():
        setattr(global_parameters, key, value)
    sys.setrecursionlimit(base["recursion"])
    for mime, (types, deferred, singletons) in base["formatters"].items():
        formatter = shell.display_formatter.formatters[mime]
        for held, saved in (
            (formatter.type_printers, types),
            (formatter.deferred_printers, deferred),
            (formatter.singleton_printers, singletons),
        ):
            held.clear()
            held.update(saved)
    for name, hooks in base["events"].items():
        shell.events.callbacks[name][:] = hooks
    shell.ast_transformers[:], shell.input_transformers_post[:] = (list(t) for t in base["transformers"])
    clear_cache()
    for name, module in list(sys.modules.items()):
        if name == "calckit" or name.startswith("calckit."):
            for key, value in list(vars(module).items()):
                if f"{name}.{key}" in KEPT_CACHES:
                    continue
                if callable(getattr(value, "cache_clear", None)) and hasattr(value, "cache_info"):
                    value.cache_clear()
    random.seed()
    np.random.seed()
    gc.collect()

    problems = []
    if (sys.stdout, sys.stderr, sys.displayhook, sys.excepthook) != base["streams"]:
        problems.append("sys.stdout, sys.stderr or a hook was replaced")
    now = {k: v for k, v in vars(builtins).items() if k != "_"}  # "_": the last result shown
    if now.keys() != base["builtins"].keys() or any(_differs(now[k], v) for k, v in base["builtins"].items()):
        changed = sorted(
            set(now) ^ set(base["builtins"])
            | {k for k, v in base["builtins"].items() if _differs(now.get(k), v)}
        )
        problems.append(f"builtins were changed ({', '.join(changed[:5])})")
    if sys.meta_path != base["meta_path"]:
        problems.append("import hooks were changed")
    if _units_state() != base["units"]:
        problems.append("the unit registry was changed")
    foreign = [
        name
        for name in set(sys.modules) - base["modules"]
        if sys.modules[name] is not None and not _installed_module(sys.modules[name])
    ]
    if foreign:
        problems.append(
            f"modules from outside the installation were imported: {', '.join(sorted(foreign)[:3])}"
        )
    if problems:
        raise RuntimeError("the kernel cannot be reset: " + "; ".join(problems))


def _differs(a: Any, b: Any) -> bool:
    """Not the same object, nor an equal one (the kernel binds ``input`` anew for each request)."""
    try:
        return a is not b and not bool(a == b)
    except Exception:
        return True
