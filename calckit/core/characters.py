"""Characters that look like the ones an engineer meant: named, so that a refusal says which.

A Cyrillic ``с`` (U+0441) typed or pasted for a Latin ``c`` makes ``сos(w*t)`` an unknown
function, ``maсs`` an unknown input and ``1850 кg`` an unknown unit, and the text shown
in the message looks right. :func:`lookalike` finds the first such character and says
what it is (its Unicode name and code point, from :mod:`unicodedata`), where it sits and
which character it resembles; :func:`lookalike_error` makes the caller's error of it.

The table holds the Cyrillic and Greek letters drawn like Latin ones and the punctuation
pasted from word processors (minus sign, curly quotes, the multiplication sign);
characters whose compatibility form (NFKC) is plain ASCII (full-width letters, the
ligature ``ﬁ``) are found through :func:`unicodedata.normalize`. The micro sign and the
Greek mu (``µm``), the ohm sign and the degree sign are units, not look-alikes.
"""

from __future__ import annotations

import unicodedata

from calckit.errors import CalcError

__all__ = ["LOOKALIKES", "lookalike", "lookalike_error"]

#: Characters drawn like an ASCII one: character -> the ASCII character it resembles.
LOOKALIKES: dict[str, str] = {
    # Cyrillic small letters
    "а": "a", "в": "b", "е": "e", "к": "k", "м": "m", "н": "h", "о": "o", "р": "p", "с": "c",
    "т": "t", "у": "y", "х": "x", "ѕ": "s", "і": "i", "ј": "j", "ԁ": "d", "һ": "h", "ԛ": "q",
    "ԝ": "w", "ɡ": "g",
    # Cyrillic capital letters
    "А": "A", "В": "B", "Е": "E", "К": "K", "М": "M", "Н": "H", "О": "O", "Р": "P", "С": "C",
    "Т": "T", "У": "Y", "Х": "X", "Ѕ": "S", "І": "I", "Ј": "J", "Ԛ": "Q", "Ԝ": "W",
    # Greek letters
    "ο": "o", "ν": "v", "ι": "i", "κ": "k", "τ": "t", "υ": "u", "ρ": "p", "α": "a",
    "Α": "A", "Β": "B", "Ε": "E", "Ζ": "Z", "Η": "H", "Ι": "I", "Κ": "K", "Μ": "M", "Ν": "N",
    "Ο": "O", "Ρ": "P", "Τ": "T", "Υ": "Y", "Χ": "X",
    # punctuation from word processors
    "−": "-", "‐": "-", "‑": "-", "‒": "-", "–": "-", "—": "-", "×": "*", "·": "*", "∗": "*",
    "⁄": "/", "∕": "/", "‘": "'", "’": "'", "“": '"', "”": '"', "\u00a0": " ", "\u2009": " ",
    "\u202f": " ",
}

_UNIT_SIGNS = frozenset("µμΩ°")  # micro, mu, ohm, degree: pint reads them as units


def _resembles(char: str) -> str | None:
    if char in LOOKALIKES:
        return LOOKALIKES[char]
    if char.isascii() or char in _UNIT_SIGNS:
        return None
    plain = unicodedata.normalize("NFKC", char)
    return plain if plain.isascii() and plain.strip() else None


def lookalike(text: str, allowed: str = "") -> str | None:
    """The first character of *text* drawn like an ASCII one, described; None if there is none.

    Positions count from 1; characters in *allowed* (those of declared names) are passed over.

    Examples
    --------
    >>> lookalike("maсs")
    "character 'с' (CYRILLIC SMALL LETTER ES, U+0441) at position 3 looks like 'c'"
    >>> lookalike("mass") is None
    True
    """
    for position, char in enumerate(text, start=1):
        plain = None if char in allowed else _resembles(char)
        if plain is not None:
            name = unicodedata.name(char, "an unnamed character")
            return f"character {char!r} ({name}, U+{ord(char):04X}) at position {position} looks like {plain!r}"
    return None


def lookalike_error(
    text: str, error: type[CalcError], *, where: str, subject: str = "", allowed: str = ""
) -> CalcError | None:
    """The error to raise instead when *text*, refused, holds a look-alike character; else None.

    Callers ask only once they refuse the text, so that a name or unit that reads well
    with such a character (a declared Greek name) is never refused for it. *subject*
    says whose text it is (``'the expression "сos(t)"'``); the text in quotes by default.
    Characters in *allowed* (those of the caller's declared names: a Greek ``ρ``) are no cause.

    Examples
    --------
    >>> from calckit.errors import InputsError
    >>> print(lookalike_error("сos(t)", InputsError, where="forcing"))
    forcing: character 'с' (CYRILLIC SMALL LETTER ES, U+0441) at position 1 looks like 'c', in "сos(t)". Type it again with plain Latin letters and ASCII signs (- * / ' ").
    """
    found = lookalike(text, allowed)
    if found is None:
        return None
    return error(
        f"{found}, in {subject or repr_text(text)}",
        where=where,
        do="Type it again with plain Latin letters and ASCII signs (- * / ' \")",
    )


def repr_text(text: str) -> str:
    """*text* in double quotes, cut to 80 characters."""
    return f'"{text}"' if len(text) <= 80 else f'"{text[:77]}..."'
