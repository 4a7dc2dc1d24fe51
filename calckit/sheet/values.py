"""How a sheet reads and shows the values put on it.

The SI value a record holds (:func:`si_value`), the text a sheet shows
(:func:`shown_text`, four significant figures by default) and the exact text the
fingerprint covers (:func:`exact_text`).
"""

from __future__ import annotations

import io
import re
from typing import Any

import sympy as sp

from calckit.core.units import fmt, fmt_number, to_si
from calckit.errors import SheetError

__all__ = ["check_name", "exact_text", "figure_svg", "shown_text", "si_value", "symbol_latex"]

_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


def check_name(name: str, where: str) -> str:
    """*name* when it can name an input or result (letters, digits, underscores), else a :class:`SheetError`."""
    if not isinstance(name, str) or not _NAME.match(name):
        raise SheetError(
            f"the name {name!r} is not usable",
            where=where,
            do="Use letters, digits and underscores, starting with a letter, e.g. k_iso",
        )
    return name


def symbol_latex(name: str, symbol: str | None) -> str:
    """The LaTeX symbol given, or the one sympy prints for *name* (``omega_n`` -> ``\\omega_{n}``)."""
    if symbol:
        return symbol
    return sp.latex(sp.Symbol(name))


def figure_svg(fig: Any, caption: str) -> str:
    """A matplotlib figure as inline SVG: text as paths, no date, no metadata naming remote vocabularies."""
    import matplotlib

    if not hasattr(fig, "savefig"):
        raise SheetError(
            f"expected a matplotlib figure, got {type(fig).__name__}",
            where=f"figure {caption!r}",
            do="Pass the figure object, e.g. fig from fig, ax = plt.subplots()",
        )
    buffer = io.StringIO()
    with matplotlib.rc_context({"svg.hashsalt": "calckit", "svg.fonttype": "path"}):
        fig.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None}, bbox_inches="tight")
    svg = buffer.getvalue()
    svg = svg[svg.index("<svg") :]
    return re.sub(r"\s*<metadata>.*?</metadata>", "", svg, flags=re.DOTALL)


def si_value(value: Any, where: str) -> tuple[float | None, str]:
    """*value* in SI as ``(magnitude, unit)``; ``(None, "")`` for what has no number (a symbol, a forcing).

    >>> from calckit.core.units import Q_
    >>> si_value(Q_(180, "kN/m"), "k")
    (180000.0, 'N/m')
    """
    if hasattr(value, "units"):
        si = to_si(value, where)
        return float(si.magnitude), si.unit
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return float(value), ""
    if isinstance(value, sp.Basic) and value.is_number:
        return float(value), ""
    return None, ""


def shown_text(value: Any, sig: int = 4) -> str:
    """*value* as the sheet shows it: a quantity or number to *sig* significant figures, else its text.

    >>> from calckit.core.units import Q_
    >>> shown_text(Q_(26.832815, "rad/s"))
    '26.83 rad/s'
    """
    if hasattr(value, "units"):
        return fmt(value, sig)
    if isinstance(value, (int, float, sp.Basic)) and not isinstance(value, bool):
        try:
            return fmt_number(float(value), sig)
        except (TypeError, ValueError):
            return str(value)
    return str(value)


def exact_text(value: Any) -> str:
    """The exact text of *value* that the fingerprint covers (``repr`` of a float, ``srepr`` of sympy)."""
    if hasattr(value, "units"):
        mag = value.magnitude
        return f"{sp.sstr(mag) if isinstance(mag, sp.Basic) else repr(mag)} {value.units:~}"
    if isinstance(value, sp.Basic):
        return sp.srepr(value)
    return repr(value)
