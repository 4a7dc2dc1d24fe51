"""The numbered steps of a sheet: results carried as shown, formulas put through, results with their working.

:class:`Steps` is the part of :class:`calckit.sheet.sheet.Sheet` that makes numbered
results: :meth:`~Steps.calc` (a formula with the values put through it, refused when
the printed values do not give the printed result), :meth:`~Steps.result` (a value
obtained elsewhere, with its working), :meth:`~Steps.carried` (an earlier result as
shown) and :meth:`~Steps.independent_check` (a derived response beside a numerical
integration of its equation). The rules are in :mod:`calckit.sheet.working`.
"""

from __future__ import annotations

from typing import Any

import sympy as sp

from calckit.core.rounding import as_shown
from calckit.errors import SheetError
from calckit.sheet.blocks import CalcStep, Check, IndependentCheck, ResultLine
from calckit.sheet.chain import ChainStep, step_links
from calckit.sheet.values import check_name, shown_text, symbol_latex
from calckit.sheet.working import conversion_formula, reproduced, working_of

__all__ = ["Steps"]


class Steps:
    """Numbered results of a sheet (a part of :class:`calckit.sheet.sheet.Sheet`)."""

    def carried(self, name: str, sig: int | None = None):
        """An earlier result as shown on the sheet, rounded to *sig* significant figures, for the next step.

        A checker redoes each step from the numbers printed on the sheet, so the
        next step takes the result as shown, not its unrounded value (the one
        rounding rule is :func:`calckit.core.rounding.as_shown`). A quantity keeps
        its unit; a plain number comes back as a float.

        Examples
        --------
        >>> from calckit.core.units import Q_
        >>> from calckit.sheet import Sheet
        >>> sheet = Sheet("x", show=False)
        >>> _ = sheet.result("omega_n", Q_(26.832815, "rad/s"), working=("input", "vendor data"))
        >>> sheet.carried("omega_n")
        <Quantity(26.83, 'radian / second')>
        >>> sheet.carried("omega_n", sig=2)
        <Quantity(27.0, 'radian / second')>
        """
        if name not in self.results:
            known = ", ".join(self.results) or "none yet"
            raise SheetError(
                f"there is no result named {name!r} on the sheet (results: {known})",
                where=f"carried {name}",
                do="Carry a result computed earlier with calc() or result(), by its name",
            )
        sig = self.sig if sig is None else sig
        if isinstance(sig, bool) or not isinstance(sig, int) or not 1 <= sig <= 17:
            raise SheetError(
                f"sig={sig!r} is not a number of significant figures",
                where=f"carried {name}",
                do="Give a whole number from 1 to 17, e.g. sig=4",
            )
        value = self.results[name]
        shown = as_shown(value if hasattr(value, "units") else float(value), sig)
        self._carried[id(shown)] = (name, shown)  # kept, so the id stays this value's: the chain traces it
        return shown

    def _in_rad_per_s(self, key: str, value: Any, where: str):
        """A speed or frequency in rpm, cpm or Hz as its own step in rad/s (once per sheet), carried as shown."""
        found = conversion_formula(value)
        if found is None:
            return value
        given = f"{value:~P}"
        if given not in self._converted:
            formula, values, note = found
            owner = next((rec for rec in self.inputs.values() if rec.value is value), None)
            label = owner.name if owner else key
            name = f"{label}_rad_s"
            symbol = (owner.symbol if owner else key).replace("\\", "").replace("{", "").replace("}", "")
            self._converted[given] = name
            if name in self.results:  # the template converted it already, as its own step: that step serves
                return self.carried(name)
            # an input typed with many digits (12.3333333333 Hz) is shown as typed, to 12 figures at most
            typed = {k: min(12, _figures(v.magnitude)) for k, v in values.items() if owner is not None}
            self.calc(name, formula, values, symbol=symbol, unit="rad/s", sig=self.sig,
                      title=f"{owner.description if owner else key} in rad/s ({note})", value_sig=typed,
                      _origins={k: owner.name if owner else None for k in values})  # fmt: skip
        return self.carried(self._converted[given])

    def calc(
        self,
        name: str,
        formula: Any,
        values: dict[str, Any] | None = None,
        *,
        title: str = "",
        symbol: str | None = None,
        unit: str | None = None,
        reference: str = "",
        sig: int | None = None,
        value_sig: dict | None = None,
        _origins: dict | None = None,
    ):
        """Put numbers through a formula as a numbered step and return the result.

        ``formula`` is a sympy expression in symbols named after inputs or earlier
        results (or given in ``values``). The step shows the formula, the values
        with units substituted, and the result in ``unit``, to the sheet's ``sig``
        figures unless *sig* says otherwise. A speed in rpm or a frequency in Hz is
        first converted to rad/s in a step of its own (once per sheet); an input typed
        with more figures than that shows them as typed (``value_sig``: name -> figures).

        Raises
        ------
        SheetError
            The values as printed do not give the printed result to its last digit
            (a value put in with more digits than it shows): carry earlier results
            with :meth:`carried`.
        """
        sig = self.sig if sig is None else sig
        from calckit.render.numbers import put_through

        check_name(name, "result name")
        known = {key: rec.value for key, rec in self.inputs.items()}
        known.update(self.results)
        if values:
            known.update(values)
        if isinstance(formula, str):  # read by the whitelist parser: text is never run
            from calckit.core.expressions import parse_expression

            expr = parse_expression(formula, {key: sp.Symbol(key) for key in known}, where=f"step {name}")
        elif isinstance(formula, sp.Expr):
            expr = formula
        elif isinstance(formula, (int, float)) and not isinstance(formula, bool):
            expr = sp.Float(formula) if isinstance(formula, float) else sp.Integer(formula)
        else:
            raise SheetError(
                f"expected a formula (sympy expression or text), got {type(formula).__name__}",
                where=f"step {name}",
                do='Give the formula in symbols, e.g. sympy.sqrt(k / m) or "sqrt(k/m)"',
            )
        needed = {s.name: known[s.name] for s in expr.free_symbols if s.name in known}
        missing = sorted(s.name for s in expr.free_symbols if s.name not in known)
        if missing:
            raise SheetError(
                f"the formula needs {', '.join(missing)}, which {'is' if len(missing) == 1 else 'are'} "
                "neither an input nor an earlier result",
                where=f"step {name}",
                do="Add the input first, or pass values={...}",
            )
        if name in self.results:
            raise SheetError(
                f"the result {name!r} is already on the sheet",
                where=f"step {name}",
                do="Give each result its own name",
            )
        raw = needed
        needed = {key: self._in_rad_per_s(key, value, f"step {name}") for key, value in needed.items()}
        links = step_links(self, raw, needed, values, _origins)
        record = put_through(symbol or name, expr, needed, unit=unit, sig=sig, value_sig=value_sig)
        by_hand = reproduced(record)
        if by_hand is not None:
            raise SheetError(
                f"the values as printed give {by_hand}, but the step prints {record.shown} {record.unit}".rstrip()
                + " (a value went in with more digits than it shows)",
                where=f"step {name}",
                do="Carry earlier results as printed with sheet.carried(name), so a checker can redo the step",
            )
        record = self.units.restated(name, record)  # the sheet's output units (SI unless asked)
        step = self._add(CalcStep(name, title, record, reference))
        self.working[name] = step.working
        result = record.quantity if hasattr(record, "quantity") else record.value
        self.results[name] = result
        self.chain[name] = ChainStep(expr, links)
        return result

    def result(
        self,
        name: str,
        value: Any,
        *,
        title: str = "",
        symbol: str | None = None,
        reference: str = "",
        working: Any = None,
    ):
        """Record a result computed elsewhere (e.g. an Oscillator property) as a step.

        ``working`` says how it was obtained: ``(kind, text)`` with a kind of
        :data:`calckit.sheet.working.WORKING_KINDS` (``"derivation"``, ``"input"``,
        ``"table"``, ``"procedure"`` with its settings); the sheet refuses to save a
        result without it.
        """
        check_name(name, "result name")
        how = working_of(working, f"result {name}")
        self.results[name] = value
        self.working[name] = how
        shown = self.units.shown_value(name, value)  # the sheet's output units (SI unless asked)
        self._add(ResultLine(name, title, symbol_latex(name, symbol), shown, reference, how))
        return value

    def independent_check(
        self,
        name: str,
        comparison: Any,
        *,
        title: str = "",
        symbol: str = "x",
        unit: str = "mm",
    ) -> Check:
        """Show a derived response's peak beside a numerical integration of its equation, and judge it.

        *comparison* is what :func:`calckit.engine.crosscheck.compare_peak` returns. The
        sheet shows both peaks in ``unit`` as a numbered step (the integration named
        with its settings), records them as results ``{name}_derived`` and
        ``{name}_integrated``, and adds the check that they agree within the
        tolerance: a disagreement is a check not met.
        """
        from calckit.core.units import Q_

        check_name(name, "independent check name")
        derived, integrated = (
            Q_(comparison.closed_form_peak, "m").to(unit) if unit else comparison.closed_form_peak,
            Q_(comparison.integrated_peak, "m").to(unit) if unit else comparison.integrated_peak,
        )
        for suffix, value, text in (
            (
                "derived",
                derived,
                f"largest $|{symbol}(t)|$ of the derived $x(t)$ at the sample times of the integration",
            ),
            ("integrated", integrated, comparison.procedure),
        ):
            self.results[f"{name}_{suffix}"] = value
            self.working[f"{name}_{suffix}"] = working_of(("procedure", text), f"independent check {name}")
        block = IndependentCheck(
            name,
            title,
            symbol,
            unit,
            shown_text(derived, self.sig),
            shown_text(integrated, self.sig),
            comparison,
        )
        self._add(block)
        # the basis names the method; its settings (atol scales with the response) are on the
        # independent check's own step, so a moved input does not read as a changed basis
        basis = (
            "two routes to one equation: the derived x(t) against SciPy's "
            f"{comparison.method}; the settings are on the independent check's step"
        )
        return self.check(
            f"independent check: {title or name}",
            comparison.agreement,
            comparison.tolerance,
            basis=basis,
            result=f"{name}_integrated",  # over tolerances: from a procedure, not evaluated
        )


def _figures(x: float) -> int:
    """Significant figures of *x* as Python prints it (``12.333333333333334`` has 17)."""
    digits = repr(abs(float(x))).split("e")[0].replace(".", "").lstrip("0")
    return max(1, len(digits.rstrip("0")) if "." in repr(float(x)) else len(digits.rstrip("0")) or 1)
