r"""LaTeX to MathML for exported calculation sheets.

The kit writes LaTeX once per displayable object. Jupyter shows that LaTeX as it
is; an exported sheet carries the same LaTeX converted here to presentation
MathML, which every current browser lays out with no script and no network.

Choice of converter
-------------------
Two converters were compared on the constructs a calculation sheet uses
(fractions, square roots, subscripts such as ``\omega_n`` and ``x_p``, Greek
letters, primes and dots, ``\left( \right)``, aligned steps and small linear
systems, ``\operatorname{atan2}``, ``\cdot``, units after ``\;\mathrm{N/m}``,
``\text{...}``, ``\approx``, ``\quad``):

``sympy.printing.mathml.mathml(expr, printer="presentation")``
    Takes a sympy expression, not LaTeX, so units, ``\text``, aligned steps and
    anything typed by hand cannot go through it; we would need two formatters
    that drift apart. Its output uses named entities (``&InvisibleTimes;``,
    ``&dd;``, ``&ExponentialE;``) that are not well-formed XML without a DTD.
    It prints ``atan2(y, x)`` as ``arctan(y, x)``, ``exp(-a t)`` as a fraction
    over ``e^{a t}``, and the second derivative's denominator as ``d^2 t``.
    Fractions, roots, subscripts and Greek letters are otherwise good.

``latex2mathml`` (3.81)
    Takes the LaTeX we already have, so one formatter feeds both outputs.
    Fractions, roots, sub/superscripts, Greek, primes (U+2032), ``\dot``,
    ``\ddot``, stretchy ``\left( \right)``, ``cases``, ``split``, matrices,
    ``\cdot``, ``\approx``, ``\quad``, ``\;`` and ``\mathrm`` units convert well.
    Weak spots found and repaired here:

    * ``aligned`` and ``gathered`` come out as one row with a literal ``&`` (not
      even well-formed XML) and ``<mspace linebreak>``, which browsers ignore:
      they are rewritten to ``split`` and a centred ``array``, which become
      ``<mtable>``. Bare ``&`` and ``\\`` at the top level are wrapped the same
      way.
    * ``\operatorname{atan2}`` (a name with a digit) comes out as an empty
      ``<mo/>`` and italic letters: such names go through a letters-only
      placeholder and come back as ``<mo>atan2</mo>``;
      ``\operatorname{atan_{2}}`` becomes ``\operatorname{atan}_{2}``.
    * ``\mathrm{m}`` with one letter loses its upright style: it is restored
      with ``mathvariant="normal"``.
    * ``\text{... \% ... \&}`` keeps the backslash, and a raw ``<`` or ``&`` in
      ``\text`` breaks the XML: text is unescaped and re-serialised properly.
    * ``\boldsymbol{x}`` uses ``mathvariant="bold-italic"``, which browsers
      ignore: ASCII letters are mapped to the Unicode bold italic letters.
    * Unknown commands (``\foo``, ``\label``) pass through as text: they are
      refused with :class:`calckit.errors.SheetError`.

    Seen in Chromium screenshots and repaired for layout:

    * primes as superscripts (``<msup>x ′</msup>``) shrink to a speck: they
      follow the base at full size, and ``x_p'`` becomes x-prime sub p;
    * Chromium ignores ``columnalign`` and ``columnspacing``: cells carry
      ``text-align`` and padding in ``style`` so relation signs line up;
    * ``/`` in units and ``-`` after ``=`` or ``(`` were spaced as binary
      operators: they are set tight;
    * operator names become ``<mi>`` like ``\cos``, with no gap before "(";
    * matrix entries are centred 1.8 em apart and an entry's own sign is set
      tight (``11984`` beside ``-4522`` must not read as a subtraction).

Decision: latex2mathml for everything, with the repairs above.
"""

from __future__ import annotations

import html
import re
import xml.etree.ElementTree as ET

import latex2mathml.converter
import latex2mathml.exceptions

from calckit.errors import SheetError

__all__ = ["latex_to_mathml"]

_TOKEN_TAGS = frozenset({"mi", "mo", "mn", "mtext", "ms"})
_DELIMITERS = ((r"$$", r"$$"), (r"\[", r"\]"), (r"\(", r"\)"), ("$", "$"))
_ENV_SCAN = re.compile(r"\\begin\{([^}]*)\}|\\end\{([^}]*)\}|\\\\|\\.|&", re.DOTALL)
_OPNAME = re.compile(r"\\operatorname(\*?)\{([^{}]*)\}")
_OPNAME_SUB = re.compile(r"\\operatorname(\*?)\{([A-Za-z]+)_\{([^{}]*)\}\}")
_COMMAND = re.compile(r"\\[A-Za-z]+")
_TEXT_ESCAPE = re.compile(r"\\([&%_#$])")
_ASCII_LETTER_ENTITY = re.compile(r"&#x0*(4[1-9A-Fa-f]|5[0-9Aa]|6[1-9A-Fa-f]|7[0-9Aa]);")
_PLACEHOLDER = "calckitop"
_PARSE_ERRORS = {
    "NoAvailableTokensError": "the formula ends before a command has all its arguments",
    "IndexError": "the formula ends before a command has all its arguments",
    "StopIteration": "the formula ends before a command has all its arguments",
    "NumeratorNotFoundError": "a fraction has no numerator",
    "DenominatorNotFoundError": "a fraction has no denominator",
    "ExtraLeftOrMissingRightError": "a \\left has no matching \\right",
    "MissingSuperScriptOrSubscriptError": "a ^ or _ has nothing after it",
    "DoubleSubscriptsError": "a symbol has two subscripts (write x_{a b} or {x_a}_b)",
    "DoubleSuperscriptsError": "a symbol has two superscripts (write x^{a b} or {x^a}^b)",
    "MissingEndError": "a \\begin has no matching \\end",
    "InvalidAlignmentError": "an array has an unknown column alignment",
}


def latex_to_mathml(latex: str, *, display: bool = True) -> str:
    r"""Convert one LaTeX formula to a ``<math>`` element.

    Parameters
    ----------
    latex : str
        The formula, without or with one pair of ``$$``, ``$``, ``\[ \]`` or
        ``\( \)`` delimiters. ``&`` and ``\\`` at the top level are read as
        an aligned block.
    display : bool, optional
        ``True`` (default) for a block formula (``display="block"``), ``False``
        for a formula inside running text.

    Returns
    -------
    str
        Well-formed MathML (one ``<math>`` element, UTF-8 text, no entities
        other than the five XML ones).

    Raises
    ------
    calckit.errors.SheetError
        When the LaTeX is empty, its braces do not balance, or a construct
        cannot be converted; the message names the LaTeX.

    Examples
    --------
    >>> latex_to_mathml(r"\omega_n = \sqrt{k/m}", display=False)[:60]
    '<math xmlns="http://www.w3.org/1998/Math/MathML" display="in'
    >>> "<mfrac>" in latex_to_mathml(r"\frac{F_0}{k}")
    True
    """
    if not isinstance(latex, str):
        raise SheetError(
            f"expected LaTeX text, got {type(latex).__name__}",
            where="latex_to_mathml",
            do="Pass a str, e.g. sympy.latex(expr)",
        )
    where = f"LaTeX {_snippet(latex)}"
    source = _strip_delimiters(latex.strip())
    if not source:
        raise SheetError("the formula is empty", where=where, do="Pass the formula to show")
    _check_braces(source, where)
    source, names = _prepare(source)
    try:
        root = latex2mathml.converter.convert_to_element(source, display="block" if display else "inline")
    except Exception as exc:  # latex2mathml's parse errors share no base class but Exception
        what = _PARSE_ERRORS.get(type(exc).__name__, f"latex2mathml cannot read it ({type(exc).__name__})")
        raise SheetError(what, where=where, do="Correct the LaTeX") from exc
    for element in root.iter():
        _repair(element, names, where)
    for element in reversed(list(root.iter())):  # children before their parents
        _fold_primes(element)
    for element in root.iter("mtable"):
        _align_cells(element)
    for element in root.iter():
        _mark_unary_signs(element)
    return ET.tostring(root, encoding="unicode")


def _snippet(latex: str, limit: int = 60) -> str:
    text = latex if len(latex) <= limit else latex[: limit - 3] + "..."
    return repr(text)


def _strip_delimiters(text: str) -> str:
    for left, right in _DELIMITERS:
        if len(text) >= len(left) + len(right) and text.startswith(left) and text.endswith(right):
            return text[len(left) : len(text) - len(right)].strip()
    return text


def _check_braces(text: str, where: str) -> None:
    depth = 0
    i = 0
    while i < len(text):
        char = text[i]
        if char == "\\":
            i += 2  # skip an escaped character such as \{ \} \\ \%
            continue
        if char == "{":
            depth += 1
        elif char == "}":
            depth -= 1
            if depth < 0:
                raise SheetError(
                    f"a closing brace at character {i + 1} has no opening brace",
                    where=where,
                    do="Balance the braces",
                )
        i += 1
    if depth:
        count = "an opening brace is" if depth == 1 else f"{depth} opening braces are"
        raise SheetError(f"{count} never closed", where=where, do="Balance the braces")


def _prepare(source: str) -> tuple[str, dict[str, str]]:
    """Rewrite the LaTeX into the subset latex2mathml converts well."""
    source = _wrap_top_level_rows(source)
    source = re.sub(r"\\(begin|end)\{aligned\}", r"\\\1{split}", source)
    source = source.replace(r"\begin{gathered}", r"\begin{array}{c}")
    source = source.replace(r"\end{gathered}", r"\end{array}")
    source = _OPNAME_SUB.sub(r"\\operatorname\1{\2}_{\3}", source)
    names: dict[str, str] = {}

    def placeholder(match: re.Match[str]) -> str:
        star, name = match.group(1), match.group(2).strip()
        if name.isalpha() or not re.fullmatch(r"[A-Za-z][A-Za-z0-9]*", name):
            return match.group(0)
        key = _PLACEHOLDER + "".join(chr(ord("a") + int(d)) for d in str(len(names)))
        names[key] = name
        return rf"\operatorname{star}{{{key}}}"

    return _OPNAME.sub(placeholder, source), names


def _wrap_top_level_rows(source: str) -> str:
    depth = 0
    found = False
    for match in _ENV_SCAN.finditer(source):
        token = match.group(0)
        if match.group(1) is not None:
            depth += 1
        elif match.group(2) is not None:
            depth -= 1
        elif depth == 0 and token in ("&", "\\\\"):
            found = True
            break
    return rf"\begin{{aligned}}{source}\end{{aligned}}" if found else source


def _repair(element: ET.Element, names: dict[str, str], where: str) -> None:
    tag = element.tag
    raw = element.text or ""
    if tag == "mi" and "mathvariant" not in element.attrib and _ASCII_LETTER_ENTITY.fullmatch(raw):
        element.set("mathvariant", "normal")  # \mathrm{m}: latex2mathml drops the upright style
    text = html.unescape(raw) if raw else raw
    if tag == "mtext":
        text = _TEXT_ESCAPE.sub(r"\1", text)
    if tag == "mo" and text in names:
        text = names[text]
    if tag == "mo" and not element.attrib and re.fullmatch(r"[A-Za-z][A-Za-z0-9]+", text):
        element.tag = "mi"  # an operator name is spaced like \cos, with no gap before "("
    if tag == "mo" and text == "/":
        element.set("lspace", "0")  # a solidus sits tight, as in N/m or F/k
        element.set("rspace", "0")
    if tag == "mi" and element.get("mathvariant") == "bold-italic" and len(text) == 1 and text.isascii():
        text = _bold_italic(text)
        del element.attrib["mathvariant"]
    if tag == "mo" and not text and not element.attrib and not len(element):
        raise SheetError(
            "an \\operatorname name could not be read",
            where=where,
            do="Use letters and digits only, e.g. \\operatorname{atan2}",
        )
    if tag in _TOKEN_TAGS:
        command = _COMMAND.search(text)
        if command:
            raise SheetError(
                f"unknown LaTeX command {command.group(0)}",
                where=where,
                do="Use a command latex2mathml knows, or type the symbol itself",
            )
        if tag == "mi" and text == "&":
            raise SheetError(
                "an alignment & lies inside a construct that has no columns",
                where=where,
                do="Put aligned rows in \\begin{aligned} ... \\end{aligned}",
            )
    if raw:
        element.text = text
    if element.tail:
        element.tail = html.unescape(element.tail)


_PRIMES = frozenset("\u2032\u2033\u2034\u2057")


def _prime_text(element: ET.Element) -> str | None:
    """The primes an element holds, when it holds nothing else."""
    if element.tag == "mrow" and len(element) == 1:
        element = element[0]
    text = element.text or ""
    if element.tag in ("mi", "mo") and not len(element) and text and set(text) <= _PRIMES:
        return text
    return None


def _prime_mark(text: str) -> ET.Element:
    mark = ET.Element("mo", lspace="0", rspace="0")
    mark.text = text
    return mark


def _fold_primes(element: ET.Element) -> None:
    """Write x' as x followed by a prime at full size, not as a tiny superscript.

    Prime characters are drawn raised already; as a superscript they shrink to
    a speck. ``x_p'`` becomes x-prime with subscript p, as TeX sets it.
    """
    if element.tag not in ("msup", "msubsup") or len(element) != (2 if element.tag == "msup" else 3):
        return
    primes = _prime_text(element[-1])
    if primes is None:
        return
    base = element[0]
    if element.tag == "msubsup":
        sub = element[1]
        for child in list(element):
            element.remove(child)
        element.tag = "msub"
        element.extend([ET.Element("mrow"), sub])
        element[0].extend([base, _prime_mark(primes)])
        return
    element.remove(element[-1])
    element.tag = "mrow"
    inner = base[0] if base.tag == "msub" and len(base) == 2 else None
    if inner is not None and inner.tag == "mrow" and len(inner) and _prime_text(inner[-1]):
        inner[-1].text = _join_primes((inner[-1].text or "") + primes)  # x_p'' read as (x_p')'
    else:
        element.append(_prime_mark(primes))


def _join_primes(text: str) -> str:
    count = sum({"\u2032": 1, "\u2033": 2, "\u2034": 3, "\u2057": 4}[c] for c in text)
    return {1: "\u2032", 2: "\u2033", 3: "\u2034", 4: "\u2057"}.get(count, "\u2032" * count)


_SIGNS = frozenset("+\u2212\u00b1\u2213")
_CLOSERS = frozenset(")]}|\u2016\u232a\u27e9")


def _mark_unary_signs(parent: ET.Element) -> None:
    """Set a sign right after an operator, relation or opening fence tight, as TeX does.

    latex2mathml writes ``= -A`` as two infix operators, which browsers space
    as "= − A"; the sign is made to hug what it negates.
    """
    previous = None
    for child in parent:
        if (
            child.tag == "mo"
            and (child.text or "") in _SIGNS
            and previous is not None
            and previous.tag == "mo"
            and (previous.text or "") not in _CLOSERS
            and previous.get("form") != "postfix"
        ):
            child.set("form", "prefix")
            child.set("lspace", "0")
            child.set("rspace", "0")
        previous = child


_ALIGN = {"left": "left", "right": "right", "center": "center"}


def _align_cells(table: ET.Element) -> None:
    """Carry column alignment into CSS, which Chromium reads (it ignores ``columnalign``).

    Tables from aligned steps (``columnspacing="0em"``) also lose the padding
    between each right-aligned cell and the left-aligned cell after it, so the
    relation signs line up as in TeX; pairs of columns are 1 em apart.
    """
    tight = (table.get("columnspacing") or "").split()[:1] == ["0em"]
    for row in table.iter("mtr"):
        for index, cell in enumerate(c for c in row if c.tag == "mtd"):
            rules = []
            align = _ALIGN.get(cell.get("columnalign", ""))
            if align:
                rules.append(f"text-align: {align}")
            if tight:
                if index % 2 == 0:
                    rules.append("padding-right: 0")
                    rules.append(f"padding-left: {'0' if index == 0 else '1em'}")
                else:
                    rules.append("padding-left: 0")
            elif not table.get("columnspacing"):
                # a matrix: entries centred with a clear gap, so that neighbours never run together
                rules.append("text-align: center" if not align else "")
                rules.append("padding: 0.15em 0.9em")
                first = cell[0] if len(cell) else None
                if first is not None and first.tag == "mo" and (first.text or "") in _SIGNS:
                    # the entry's own sign: -4522 beside 11984 must not read as a subtraction
                    first.set("form", "prefix")
                    first.set("lspace", "0")
                    first.set("rspace", "0")
            rules = [r for r in rules if r]
            if rules:
                cell.set("style", "; ".join(rules))


def _bold_italic(letter: str) -> str:
    if "A" <= letter <= "Z":
        return chr(0x1D468 + ord(letter) - ord("A"))
    if "a" <= letter <= "z":
        return chr(0x1D482 + ord(letter) - ord("a"))
    return letter
