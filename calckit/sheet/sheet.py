"""The calculation sheet itself: adding blocks, the fingerprint, saving.

A :class:`Sheet` is data first. Each call adds a block (an input, a calculation
step, a derivation, an acceptance check, a figure, an assumption ...) and
returns what a template needs next (usually the value). Renderers turn the
sheet into a notebook view (each block displays as it is added), one
self-contained HTML file (inline CSS, SVG and MathML; no script, no network),
a PDF printed from that HTML by headless Chromium, and a JSON record that the
re-run and diff tools read (:class:`~calckit.sheet.record.SheetRecord`). The
blocks are in :mod:`calckit.sheet.blocks`, the check methods in
:mod:`calckit.sheet.check_methods`, the checks' arithmetic in
:mod:`calckit.sheet.checking`; every file is written by
:func:`calckit.core.files.write_file`.

The fingerprint is a SHA-256 over the canonical inputs, the kit's version and
the template's content: two sheets with the same fingerprint came from the
same inputs through the same calculation.

Examples
--------
>>> sheet = Sheet("Pump P-101 isolation", project="Harrow Creek WTW", number="HC-VIB-001",
...               author="A. Engineer", date="2026-12-01", show=False)
>>> m = sheet.input("m", "250 kg", description="Pump and base mass", source="Vendor drawing")
>>> k = sheet.input("k", "180 kN/m", description="Total isolator stiffness", source="Isolator data")

A template states its inputs with :meth:`Sheet.given` (source from the inputs
file, sign checked) and carries a result into the next step as shown with
:meth:`Sheet.carried`.
"""

from __future__ import annotations

import hashlib
import json
import os
from collections.abc import Callable, Mapping
from dataclasses import asdict
from pathlib import Path
from typing import Any

from calckit._version import __version__
from calckit.core.checks import positive
from calckit.core.files import free_name, write_file
from calckit.core.units import fmt, quantity
from calckit.errors import InputsError, OverwriteError, SheetError
from calckit.sheet.blocks import (
    DEFAULT_CAUTION,
    Check,
    DerivationBlock,
    Figure,
    SheetInput,
    TableBlock,
    TextBlock,
    TitleBlock,
)
from calckit.sheet.check_methods import CheckMethods
from calckit.sheet.output_units import OutputUnits, apply_units
from calckit.sheet.record import SheetRecord, record_of
from calckit.sheet.record_reading import existing_fingerprint
from calckit.sheet.steps import Steps
from calckit.sheet.tolerance_study import Tolerances, sample_request
from calckit.sheet.values import check_name, exact_text, figure_svg, shown_text, si_value, symbol_latex
from calckit.sheet.working import rounding_policy

__all__ = ["SAMPLING_KEYS", "Sheet", "in_kernel"]

# ------------------------------------------------------------------ helpers

_REFUSE = "Pass overwrite=True to replace it, keep_both=True to write alongside it, or choose another name"


def _canonical(obj: Any) -> str:
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), ensure_ascii=True)


#: The keys of ``Sheet(sampling=...)`` (and of an inputs file's ``[sampling]`` table); ``k`` may be left out.
SAMPLING_KEYS: tuple[str, ...] = ("samples", "distribution", "seed", "k")


def _sampling_request(sampling: Any) -> Any:
    """The :class:`~calckit.sheet.tolerance_study.SampleRequest` of ``Sheet(sampling=...)``, checked by its one rule."""
    where = "Sheet(sampling=...)"
    example = '{"samples": 100000, "distribution": "uniform", "seed": 2026}'
    if not isinstance(sampling, Mapping):
        raise SheetError(
            f"the sampling asked for is a {type(sampling).__name__}, not a table of its keys",
            where=where,
            do=f"Give e.g. sampling={example}",
        )
    unknown = [str(key) for key in sampling if key not in SAMPLING_KEYS]
    missing = [key for key in SAMPLING_KEYS[:3] if key not in sampling]
    if unknown or missing:
        said = [f"unknown key {', '.join(map(repr, unknown))}"] if unknown else []
        said += [f"no {' or '.join(missing)}"] if missing else []
        raise SheetError(
            f"the sampling asked for has {'; '.join(said)}",
            where=where,
            do=f"Give samples, distribution, seed and, for a normal distribution, k: e.g. sampling={example}",
        )
    try:
        return sample_request(
            sampling["samples"], sampling["distribution"], sampling["seed"], sampling.get("k", 3.0)
        )
    except InputsError as exc:
        raise InputsError(exc.what, where=where, do=exc.do) from None


# ------------------------------------------------------------------ the sheet


class Sheet(Steps, CheckMethods, Tolerances):
    """A calculation sheet built block by block.

    Parameters
    ----------
    subject : str
        What the calculation is about, e.g. "Pump P-101 on spring isolators".
    project, number, revision, author, checker, date, approver : str
        The title block. ``date`` is printed as given; fix it to rebuild the
        same bytes.
    template : str, optional
        The template's content (or any text identifying the calculation); it
        enters the fingerprint.
    caution : str
        The caution printed on the sheet; by default :data:`DEFAULT_CAUTION`.
        It cannot be left out: sheets size or accept equipment.
    show : bool
        Display each block in Jupyter as it is added (default: when running in
        an IPython kernel).
    sources : mapping, optional
        Source of an input by its name (from an inputs file); it wins over the
        ``source=`` given to :meth:`input`.
    tolerances : mapping, optional
        The band of an input by its name, as an inputs file writes it (``{"tolerance":
        "15 %"}`` or ``{"min": ..., "max": ...}``); :meth:`given` puts it on the input, and
        the sheet then evaluates its checks over the bands (:mod:`calckit.sheet.tolerance_study`).
    sampling : mapping, optional
        A sampled study over the bands, as an inputs file's ``[sampling]`` table writes it:
        ``{"samples": 100000, "distribution": "uniform", "seed": 2026}`` (and ``"k"``, the
        half-band in standard deviations of a normal distribution, 3 if left out); the same
        request as :meth:`sample_study`, checked by the same rule. Empty or None: none.
    inputs_file : str, optional
        Where the template's inputs come from (the inputs file's name, or e.g.
        "the template's own values"): the source :meth:`given` records for an
        input that names none.
    sig : int
        The sheet's one rounding policy: results shown to *sig* significant figures
        and carried as shown (stated as the first assumption; see
        :func:`calckit.sheet.working.rounding_policy`).
    """

    def __init__(
        self,
        subject: str,
        *,
        project: str = "",
        number: str = "",
        revision: str = "A",
        author: str = "",
        checker: str = "",
        date: str = "",
        approver: str = "",
        template: str = "",
        caution: str = DEFAULT_CAUTION,
        show: bool | None = None,
        sources: Mapping[str, str] | None = None,
        inputs_file: str = "",
        sig: int = 4,
        tolerances: Mapping[str, Mapping[str, Any]] | None = None,
        sampling: Mapping[str, Any] | None = None,
    ):
        self.sources = dict(sources or {})
        self.tolerances = {str(name): dict(band) for name, band in (tolerances or {}).items()}
        self.inputs_file = str(inputs_file)
        self.title = TitleBlock(subject, project, number, revision, author, checker, date, approver)
        self.template_digest = hashlib.sha256(template.encode()).hexdigest() if template else ""
        if not caution or not str(caution).strip():
            raise SheetError(
                "a calculation sheet must carry a caution",
                where="Sheet(caution=...)",
                do="Keep the default (calckit.DEFAULT_CAUTION) or give your own wording",
            )
        self.caution = caution
        self.blocks: list[Any] = []
        self.inputs: dict[str, SheetInput] = {}
        self.results: dict[str, Any] = {}
        self.units = OutputUnits()  # SI, each result as its step asks; see use_units
        self._show = in_kernel() if show is None else show
        if isinstance(sig, bool) or not isinstance(sig, int) or not 2 <= sig <= 8:
            raise SheetError(
                f"sig={sig!r} is not a rounding policy", where="Sheet(sig=...)", do="Give 2 to 8"
            )
        self.sig = sig
        self._converted: dict[str, str] = {}  # a speed or frequency as given -> its step in rad/s
        self.working: dict[
            str, Any
        ] = {}  # result name -> how it was obtained (calckit.sheet.working.Working)
        self.chain: dict[
            str, Any
        ] = {}  # result name -> what its formula's symbols stand for (calckit.sheet.chain)
        self._carried: dict[int, tuple[str, Any]] = {}  # id of a value carried() returned -> (result, value)
        # a sampled study asked for (calckit.sheet.tolerance_study.SampleRequest)
        self.sampling: Any = _sampling_request(sampling) if sampling else None
        self.assume(rounding_policy(sig))

    # -------------------------------------------------------------- adding
    def _add(self, block):
        self.blocks.append(block)
        if self._show:
            from calckit.sheet.html import show_block

            show_block(self, block)
        return block

    def input(
        self,
        name: str,
        value: Any,
        *,
        symbol: str | None = None,
        description: str = "",
        source: str = "",
        expect: str | None = None,
    ):
        """Add an input and return its value (a pint Quantity when it has a unit).

        ``value`` may be text with a unit ("250 kg", "1480 rpm"), a number, a
        pint Quantity, or a sympy expression (e.g. a forcing). ``expect`` names
        the kind of quantity ("mass", "stiffness", "frequency" ...) to check.
        A source given for *name* in the sheet's ``sources`` wins over ``source``.
        """
        source = self.sources.get(name, source)
        check_name(name, "input name")
        if name in self.inputs:
            raise SheetError(
                f"the input {name!r} is already on the sheet",
                where=f"input {name}",
                do="Give each input its own name",
            )
        text = str(value)
        if isinstance(value, str) or hasattr(value, "units") or expect:
            value = quantity(value, name, expect=expect)
            text = text if isinstance(text, str) else fmt(value)
        si, si_unit = si_value(value, name)
        record = SheetInput(name, symbol_latex(name, symbol), text, value, si, si_unit, description, source)
        self.inputs[name] = record
        self._add(record)
        return value

    def given(
        self,
        name: str,
        value: Any,
        symbol: str | None,
        description: str,
        expect: str | None,
        source: str | None = None,
        sign: Callable[[Any, str], Any] = positive,
    ):
        """Put a template's input on the sheet, check its sign, and return the quantity.

        The input is added as by :meth:`input`; its source is ``source``, or when
        that is empty the sheet's ``inputs_file`` (a source the inputs file gives
        for *name* in ``sources`` wins over both). ``sign`` is one of
        :func:`calckit.positive` (the default), :func:`calckit.non_negative` or
        :func:`calckit.finite`, called as ``sign(quantity, name)``. A band the sheet's
        ``tolerances`` give for *name* goes on the input, its low end checked by ``sign`` too.

        Raises
        ------
        InputsError
            The value fails ``sign`` (e.g. a mass of 0 kg); the input stays on the sheet.
            The band does not fit the value, or reaches a value ``sign`` refuses (a mass
            whose band reaches zero).
        UnitsError
            The value is not of the kind ``expect`` names.

        Examples
        --------
        >>> import calckit as ck
        >>> sheet = ck.Sheet("Pump P-101", inputs_file="p101.toml", show=False)
        >>> sheet.given("mass", "250 kg", "m", "Pump and base", "mass")
        <Quantity(250, 'kilogram')>
        >>> sheet.inputs["mass"].source
        'p101.toml'
        >>> sheet.given("damping_ratio", 0, r"\\zeta", "Damping ratio", "dimensionless", sign=ck.non_negative)
        <Quantity(0, 'dimensionless')>
        """
        if not callable(sign):
            raise SheetError(
                f"sign={sign!r} is not a check",
                where=f"input {name}",
                do="Pass calckit.positive, calckit.non_negative or calckit.finite",
            )
        q = self.input(
            name,
            value,
            symbol=symbol,
            description=description,
            source=source or self.inputs_file,
            expect=expect,
        )
        q = sign(q, name)
        if name in self.tolerances:
            from dataclasses import replace

            from calckit.core.tolerances import band_within_sign, tolerance_band

            where = f"input {name}"
            band = band_within_sign(tolerance_band(name, q, self.tolerances[name], where), sign, where)
            old = self.inputs[name]
            self.inputs[name] = replace(old, tolerance=band)
            self.blocks = [self.inputs[name] if block is old else block for block in self.blocks]
        return q

    def use_units(self, system: str | None = None, **results: str) -> OutputUnits:
        """Show the results in US customary units (``system="US"``) or in a unit chosen for each.

        Steps already on the sheet are shown again in the new units; values keep their
        SI form in the record. Every value put through one formula is shown in the
        system of the result's unit (see :mod:`calckit.sheet.output_units`).

        >>> from calckit.core.units import Q_
        >>> sheet = Sheet("x", show=False)
        >>> _ = sheet.result("x_max", Q_(0.5, "mm"), working=("input", "read off the drawing"))
        >>> _ = sheet.use_units("US")
        >>> sheet.record()["results"][0]["shown"], sheet.record()["output_units"]
        ('0.01969 in', {'system': 'US', 'results': {}})
        """
        return apply_units(self, OutputUnits.of(system, results))

    def derivation(
        self, derivation: Any, title: str = "Derivation", *, level: str = "full", units: Any = None
    ):
        """Add a derivation (a :class:`~calckit.Derivation` or :class:`~calckit.Response`).

        ``units`` says what a derivation with numbers is in: ``{"x": "m", "t": "s", "f":
        "N"}`` (``t`` in s unless given) or ``"SI"`` for exactly that. The sheet states them
        in a line under the title, with the units of the coefficients that follow from them
        by dimensions (``kg``, ``N·s/m``, ``N/m``), and on every step whose numbers carry a
        unit (the solved coefficients in m, m/s for the coefficient of ``t`` ...). A
        derivation with numbers and no ``units`` says on the sheet that its units are not
        stated. See :mod:`calckit.render.step_units`.

        Raises
        ------
        SheetError
            An unknown level, not a derivation, or units that are not ``x``, ``t``, ``f``
            in units pint reads (``t`` a time).
        """
        from calckit.render.step_units import motion_units

        if level not in ("full", "summary"):
            raise SheetError(f"unknown level {level!r}", where="derivation", do='Use "full" or "summary"')
        if not hasattr(derivation, "steps"):
            raise SheetError(
                f"expected a Derivation or Response, got {type(derivation).__name__}",
                where="derivation",
                do="Pass what Oscillator.particular or Oscillator.response returned",
            )
        motion = motion_units(units, where=f"derivation {title!r}")
        self._add(DerivationBlock(title, derivation, level, motion))
        return derivation

    def figure(self, fig: Any, caption: str) -> Figure:
        """Add a matplotlib figure, embedded as inline SVG (text as paths, no date)."""
        return self._add(Figure(caption, figure_svg(fig, caption)))

    def table(self, headers, rows, caption: str = "") -> TableBlock:
        """Add a table; cells are shown as text (quantities and numbers rounded to 4 figures)."""
        headers = tuple(str(h) for h in headers)
        shown_rows = []
        for index, row in enumerate(rows, start=1):
            cells = tuple(shown_text(cell, self.sig) for cell in row)
            if len(cells) != len(headers):
                raise SheetError(
                    f"row {index} has {len(cells)} cells but there are {len(headers)} headings",
                    where=f"table {caption or ''}".strip(),
                    do="Give every row one cell per heading",
                )
            shown_rows.append(cells)
        return self._add(TableBlock(caption, headers, tuple(shown_rows)))

    def assume(self, text: str) -> TextBlock:
        """Add an assumption."""
        return self._add(TextBlock("assumption", text))

    def reference(self, text: str) -> TextBlock:
        """Add a reference (book, standard and clause, drawing)."""
        return self._add(TextBlock("reference", text))

    def note(self, text: str) -> TextBlock:
        """Add a note."""
        return self._add(TextBlock("note", text))

    # -------------------------------------------------------------- reading
    def of_type(self, cls) -> list:
        """Blocks of one type, in order."""
        return [block for block in self.blocks if isinstance(block, cls)]

    @property
    def checks(self) -> list[Check]:
        return self.of_type(Check)

    @property
    def checks_met(self) -> int:
        return sum(check.met for check in self.checks)

    @property
    def fingerprint(self) -> str:
        """SHA-256 over everything the user provided, the kit version and the template.

        Covered: the title block except the date, every input (name, text as given,
        exact value, unit, description, source, and its tolerance band as written when it
        has one; not the name of the inputs file, which a rename changes and the content
        does not), every check's name, limit,
        relation and basis, the assumptions, references, notes and the caution, and the
        sampled study asked for (samples, distribution, seed, k) when there is one.
        Results are not covered: they follow from these. Two sheets with the same
        fingerprint came from the same inputs through the same calculation.
        """
        title = {key: value for key, value in asdict(self.title).items() if key != "date"}

        def _own(source: str) -> str:
            return "(the inputs file)" if self.inputs_file and source == self.inputs_file else source

        payload = {
            "calckit": __version__,
            "template": self.template_digest,
            "title": title,
            "inputs": [
                # the inputs file's name stands for the file: renamed, the inputs are the same
                [rec.name, rec.text, exact_text(rec.value), rec.si_unit, rec.description, _own(rec.source)]
                + ([sorted(rec.tolerance.spec.items())] if rec.tolerance is not None else [])
                for rec in self.inputs.values()
            ],
            "checks": [[c.name, c.relation, repr(c.limit), c.unit, c.basis] for c in self.checks],
            "text": [[b.kind, b.text] for b in self.of_type(TextBlock)],
            "caution": self.caution,
        }
        if self.sampling is not None:  # a sheet sampled otherwise is another sheet; none asked: as before
            s = self.sampling
            payload["sampling"] = [s.n, s.distribution, s.seed, repr(float(s.k))]
        return hashlib.sha256(_canonical(payload).encode()).hexdigest()

    def record(self) -> dict:
        """The machine-readable record (inputs, results, checks, fingerprint) as its JSON holds it.

        The dictionary of :meth:`to_record`; see :class:`calckit.sheet.SheetRecord`.
        """
        return self.to_record().to_dict()

    def to_record(self) -> SheetRecord:
        """The typed record of the sheet as it stands (:class:`calckit.sheet.SheetRecord`)."""
        return record_of(self)

    # -------------------------------------------------------------- output
    def to_html(self, *, paper: str | None = None) -> str:
        """The whole sheet as one self-contained HTML page (``paper`` fixes the printed size)."""
        from calckit.sheet.html import sheet_page

        if paper not in (None, "A4", "Letter"):
            raise SheetError(f"unknown paper size {paper!r}", where="paper", do='Use "A4" or "Letter"')
        page = sheet_page(self)
        if paper:
            page = page.replace("</style>", f"@page {{ size: {paper}; }}\n</style>", 1)
        return page

    def to_json(self) -> str:
        """The record as JSON text, as :meth:`save` writes it to ``.json``."""
        return self.to_record().to_json()

    def save(
        self, path: str | os.PathLike, *, overwrite: bool = False, keep_both: bool = False, paper: str = "A4"
    ) -> Path:
        """Write the sheet to ``.html``, ``.pdf`` or ``.json``; return the path written.

        A file that already holds a sheet with a different fingerprint is not
        replaced unless ``overwrite=True``; with ``keep_both=True`` the new sheet
        is written alongside as ``name-2.html`` (``-3`` ...). Every file goes
        through :func:`calckit.core.files.write_file` (temporary file, fsync,
        rename; the permissions of a new file, ``0644`` under umask ``022``): a
        failed save never leaves a file that looks complete, and a file that
        appears meanwhile is not replaced. ``paper`` ("A4" or "Letter") sets the
        page size of a PDF; the HTML prints on either.
        """
        path = Path(path)
        suffix = path.suffix.lower()
        if suffix not in (".html", ".pdf", ".json"):
            raise SheetError(
                f"cannot write a sheet as {suffix or 'a file without extension'}",
                where=str(path),
                do="Use a name ending in .html, .pdf or .json",
            )
        path = self._target(path, overwrite=overwrite, keep_both=keep_both)
        replace = path.exists()  # only when allowed: same fingerprint, or overwrite=True
        if suffix == ".pdf":
            from calckit.render.printing import html_to_pdf

            return html_to_pdf(self.to_html(paper=paper), path, overwrite=replace, refuse=_REFUSE)
        data = self.to_json() if suffix == ".json" else self.to_html()
        return write_file(path, data.encode("utf-8"), overwrite=replace, refuse=_REFUSE)

    def _target(self, path: Path, *, overwrite: bool, keep_both: bool) -> Path:
        if not path.exists() or overwrite:
            return path
        found = existing_fingerprint(path)
        if path.suffix.lower() == ".pdf":
            sibling = path.with_suffix(".json")
            found = existing_fingerprint(sibling) if sibling.exists() else None
        if found == self.fingerprint:
            return path
        if keep_both:
            return free_name(path)
        held = (
            f"a sheet with fingerprint {found[:12]}" if found else "a file whose fingerprint cannot be read"
        )
        raise OverwriteError(
            f"the file already holds {held}, built from other inputs", where=str(path), do=_REFUSE
        )

    # -------------------------------------------------------------- display
    def _repr_html_(self) -> str:
        from calckit.sheet.html import sheet_fragment

        return sheet_fragment(self)

    def __repr__(self) -> str:
        return (
            f"<Sheet {self.title.number or ''} rev {self.title.revision}: {self.title.subject!r}, "
            f"{len(self.inputs)} inputs, {len(self.checks)} checks ({self.checks_met} met)>"
        )


def in_kernel() -> bool:
    """Whether the code runs in an IPython kernel (a notebook), where a sheet shows each block as added."""
    import sys

    ipython = sys.modules.get("IPython")
    if ipython is None:
        return False
    try:
        shell = ipython.get_ipython()
    except AttributeError:
        return False
    return shell is not None and getattr(shell, "kernel", None) is not None
