"""Names of a package loaded on first use (PEP 562), from one table: name -> the module that holds it.

The sheet and workflow folders export their names this way, so that importing one of
their modules (a build reading a record, the command line) does not load the whole
folder, nor sympy and pint with it.
"""

from __future__ import annotations

import importlib
import sys
from collections.abc import Callable, Mapping
from typing import Any

__all__ = ["lazy_names"]


def lazy_names(
    package: str, names: Mapping[str, str]
) -> tuple[Callable[[str], Any], Callable[[], list[str]]]:
    """``(__getattr__, __dir__)`` for *package*, giving each of *names* from its module on first use.

    >>> getattr_, dir_ = lazy_names("calckit.core", {"as_shown": "calckit.core.rounding"})
    >>> getattr_("as_shown").__name__
    'as_shown'
    """

    def __getattr__(name: str) -> Any:
        if name not in names:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(names[name]), name)
        setattr(sys.modules[package], name, value)
        return value

    def __dir__() -> list[str]:
        return sorted(set(vars(sys.modules[package])) | set(names))

    return __getattr__, __dir__
