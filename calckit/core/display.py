"""One display pipeline for every object that shows itself.

Derivations, responses and steps inherit :class:`Displayable`; each output kind
(``text/latex``, ``text/markdown``, ``text/html`` with MathML, plain text) comes
from the one formatter in :mod:`calckit.render.display`, imported on first use so
that the engine does not load the renderers until something is shown.
"""

from __future__ import annotations

__all__ = ["Displayable"]


class Displayable:
    """Mixin: the rich display protocol over :mod:`calckit.render.display`."""

    __slots__ = ()

    def _repr_latex_(self) -> str:
        from calckit.render.display import latex_document

        return latex_document(self)

    def _repr_markdown_(self) -> str:
        from calckit.render.display import markdown_document

        return markdown_document(self)

    def _repr_html_(self) -> str:
        from calckit.render.display import html_fragment

        return html_fragment(self)

    def _repr_pretty_(self, printer, cycle: bool) -> None:
        from calckit.render.display import plain_text

        printer.text("..." if cycle else plain_text(self))

    def __str__(self) -> str:
        from calckit.render.display import plain_text

        return plain_text(self)
