"""The ``calckit`` command line: a thin layer over the workflow's modules (build, batch, starter, diff).

Commands
--------
``calckit demo --out DIR``
    Build the bundled example sheets.
``calckit build TEMPLATE --inputs FILE --out DIR [--pdf] [--overwrite]``
    One sheet from a template and an inputs file.
``calckit diff OLD NEW [--html FILE] [--overwrite]``
    What changed between two built sheets (an existing FILE only with --overwrite).
``calckit batch TEMPLATE --cases FILE --out DIR [--inputs FILE] [--workers N] [--overwrite]``
    One sheet per case, plus a summary.
``calckit new TEMPLATE DEST``
    Copy a bundled template (and an inputs file of its values) to start a calculation.
``calckit watch TEMPLATE --inputs FILE --out DIR [--pdf] [--overwrite]``
    Build a sheet, then again in the same kernel each time the inputs file changes, saying what moved.

Help texts are the library's docstrings.

Exit codes
----------
0
    Done: every sheet built, and every check on it met.
3
    Every sheet built, but a check on one is not met (:data:`CHECKS_NOT_MET`): the sheet
    is written and says which check and by how much; a review pipeline stops here.
    ``calckit demo`` exits with it too: the SP-601 demo's separation check is not met
    on purpose (its inputs file says why), to show what such a sheet looks like.
2
    Bad input: the message names the file, the key and the line where known; a
    refused overwrite; a build that ran past its time limit (``--time-limit``; the
    message names the cell that ran); or a template cell that failed on one of
    calckit's errors about the input (``CellError.user_error``).
1
    A template cell that failed on another error (the template's own), a batch
    in which some case failed (a case past its time limit among them; the summary
    is written), or a defect of calckit:
    an :class:`~calckit.errors.InternalError`, raised directly or in a template's
    cell, or any other unexpected error. The message then says so and carries a
    line to report.
130
    Interrupted.

Errors are one line on stderr, never a traceback.
"""

from __future__ import annotations

import argparse
import ast
import importlib
import importlib.util
import inspect
import re
import signal
import sys
import textwrap
import threading
import types
from collections.abc import Callable, Sequence
from pathlib import Path

from calckit._version import __version__
from calckit.core.files import write_text
from calckit.errors import CalcError, CellError, InternalError, OverwriteError
from calckit.workflow import batch, build, starter, watch

__all__ = ["CHECKS_NOT_MET", "COMMAND_EXIT_CODES", "EXIT_CODES", "main", "parser"]


def _summary(func: Callable) -> str:
    """The first paragraph of a docstring, on one line."""
    doc = inspect.getdoc(func) or ""
    return " ".join(doc.split("\n\n", 1)[0].split())


def _description(func: Callable) -> str:
    """The docstring's text before its first numpy-style section."""
    doc = inspect.getdoc(func) or ""
    text = re.split(r"\n(?:Parameters|Returns|Raises|Examples|Notes)\n-+\n", doc)[0]
    return "\n\n".join(textwrap.fill(" ".join(p.split()), 78) for p in text.split("\n\n"))


def _param(func: Callable, name: str) -> str:
    """A parameter's description in a numpy-style docstring, on one line."""
    doc = inspect.getdoc(func) or ""
    section = re.search(r"\nParameters\n-+\n(.*?)(?:\n\n[A-Z][a-z]+\n-+\n|\Z)", doc, re.DOTALL)
    if section is None:
        raise LookupError(f"{func.__name__} documents no parameters")
    lines = section.group(1).splitlines()
    for index, line in enumerate(lines):
        names = [n.strip() for n in line.split(":")[0].split(",")]
        if not line.startswith(" ") and name in names:
            body = []
            for more in lines[index + 1 :]:
                if more and not more.startswith(" "):
                    break
                body.append(more.strip())
            return " ".join(" ".join(body).split())
    raise LookupError(f"{func.__name__} does not document {name}")


def _documented(module: str, name: str) -> Callable | types.SimpleNamespace:
    """A function of *module*, or a stand-in carrying its docstring read from the source.

    The help texts need only the docstrings, so the command line does not import
    the modules it does not run (``diff`` needs the units registry, which takes
    a while to load, and ``build`` does not).
    """
    if module in sys.modules:
        return getattr(sys.modules[module], name)
    try:
        spec = importlib.util.find_spec(module)
        source = Path(spec.origin).read_text(encoding="utf-8")
        for node in ast.parse(source).body:
            if isinstance(node, ast.FunctionDef) and node.name == name:
                doc = ast.get_docstring(node)
                if doc:
                    return types.SimpleNamespace(__name__=name, __doc__=doc)
    except (AttributeError, ImportError, OSError, SyntaxError, TypeError, ValueError):
        pass
    return getattr(importlib.import_module(module), name)


#: The exit code of a command whose sheets were all built but a check on one is not met.
CHECKS_NOT_MET = 3

#: The exit codes of all the commands, as the top-level help shows them.
EXIT_CODES = (
    "Exit codes: 0 done, every check met; 3 built, but a check is not met (the sheet says which; "
    "the SP-601 demo has one on purpose); 2 bad input, a refused overwrite, a build past its time limit, "
    "or a template cell that failed on one of calckit's errors about the input; 1 a template cell that "
    "failed on another error, a batch in which some case failed (a case past its time limit among them; the "
    "summary is written), or a defect of calckit (an internal error, also one raised in a template cell: the "
    "message carries a line to report); 130 interrupted."
)

_DEFECT = "1 a defect of calckit (an internal error: the message carries a line to report); 130 interrupted."
_BUILT = (
    "Exit codes: 0 done, every check met; 3 built, but a check is not met (the sheet says which{demo}); "
    "2 bad input, a refused overwrite (without --overwrite), a build past its time limit (--time-limit), or a "
    "template cell that failed on one of calckit's errors about the input; 1 a template cell that failed on "
    "another error{batch}, or a defect of calckit (an internal error, also one raised in a template cell: "
    "the message carries a line to report); 130 interrupted."
)

#: The exit codes each command can end with, as its help shows them: only what it does and takes.
COMMAND_EXIT_CODES = {
    "demo": _BUILT.format(demo="; the SP-601 demo has one on purpose", batch="").replace(
        " (--time-limit)", ""
    ),
    "build": _BUILT.format(demo="", batch=""),
    "batch": "Exit codes: 0 every case built, every check met; 3 every case built, but a check on one is not "
    "met; 2 bad input (the cases file, the base inputs file, an option) or a refused overwrite (without "
    "--overwrite); 1 a batch in which some case failed, on its inputs, in a template cell or past its time limit "
    "(--time-limit; the summary is written and says which), or " + _DEFECT[2:],
    "diff": "Exit codes: 0 compared; 2 bad input (a file that is not a sheet's record, a record edited after it "
    "was built) or a refused report file (without --overwrite); " + _DEFECT,
    "watch": "Exit codes: 130 interrupted (Ctrl-C, the usual end of a watch); 2 bad input when the watch starts "
    "(no such template or inputs file, an option); 1 a defect of calckit (an internal error: the message carries "
    "a line to report). A bad edit while watching, a refused overwrite, a failed build or a watched file that "
    "disappears is said as an error line and the watch goes on.",
    "new": "Exit codes: 0 written; 2 bad input (no such template) or a file that exists already (new never "
    "replaces a file: give another name); " + _DEFECT,
}

#: What building a template means for the user's machine: said in the help of every command that runs one.
TRUST = (
    "A template is a notebook: building it runs its code with your rights, as running the notebook would, "
    "so build only templates you trust (the bundled ones, or your own). Inputs files are data: calckit reads "
    "them and never runs them."
)


def _fill(text: str) -> str:
    """*text* in lines of 78, never breaking an option such as --time-limit at its hyphen."""
    return textwrap.fill(text, 78, break_on_hyphens=False)


def parser() -> argparse.ArgumentParser:
    """The argument parser of the ``calckit`` command."""
    top = argparse.ArgumentParser(
        prog="calckit",
        description="Build, compare and batch-run forced-vibration calculation sheets from template notebooks.",
        epilog="Run 'calckit COMMAND --help' for a command's options. Start with: calckit demo --out demo\n\n"
        + _fill(TRUST)
        + "\n\n"
        + _fill(EXIT_CODES),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    top.add_argument("--version", action="version", version=f"calckit {__version__}")
    commands = top.add_subparsers(dest="command", metavar="COMMAND", required=True)

    def command(name: str, func: Callable, *, runs_templates: bool = True) -> argparse.ArgumentParser:
        said = [TRUST] if runs_templates else []
        return commands.add_parser(
            name,
            help=_summary(func),
            description=_description(func),
            epilog="\n\n".join(_fill(text) for text in [*said, COMMAND_EXIT_CODES[name]]),
            formatter_class=argparse.RawDescriptionHelpFormatter,
        )

    demo = command("demo", starter.run_demo)
    demo.add_argument("--out", default="calckit-demo", metavar="DIR", help=_param(starter.run_demo, "out"))
    demo.add_argument("--pdf", action="store_true", help=_param(starter.run_demo, "pdf"))
    demo.add_argument("--overwrite", action="store_true", help=_param(starter.run_demo, "overwrite"))

    build_cmd = command("build", build.build_sheet)
    build_cmd.add_argument("template", metavar="TEMPLATE", help=_param(build.build_sheet, "template"))
    build_cmd.add_argument(
        "--inputs", required=True, metavar="FILE", help=_param(build.build_sheet, "inputs")
    )
    build_cmd.add_argument("--out", required=True, metavar="DIR", help=_param(build.build_sheet, "out"))
    build_cmd.add_argument("--pdf", action="store_true", help=_param(build.build_sheet, "pdf"))
    build_cmd.add_argument("--overwrite", action="store_true", help=_param(build.build_sheet, "overwrite"))
    _time_limit_option(build_cmd, build.build_sheet)

    diff_sheets = _documented("calckit.workflow.diff", "diff_sheets")
    diff = command("diff", diff_sheets, runs_templates=False)
    diff.add_argument("old", metavar="OLD", help=_param(diff_sheets, "old"))
    diff.add_argument("new", metavar="NEW", help=_param(diff_sheets, "new"))
    diff.add_argument(
        "--html",
        metavar="FILE",
        help="Also write the report as a self-contained HTML page (a new file, unless --overwrite).",
    )
    diff.add_argument(
        "--overwrite",
        action="store_true",
        help="Replace FILE of --html if it exists (never a compared sheet).",
    )

    batch_cmd = command("batch", batch.run_batch)
    batch_cmd.add_argument("template", metavar="TEMPLATE", help=_param(batch.run_batch, "template"))
    batch_cmd.add_argument("--cases", required=True, metavar="FILE", help=_param(batch.run_batch, "cases"))
    batch_cmd.add_argument("--out", required=True, metavar="DIR", help=_param(batch.run_batch, "out"))
    batch_cmd.add_argument("--inputs", metavar="FILE", help=_param(batch.run_batch, "inputs"))
    batch_cmd.add_argument(
        "--workers", type=_positive_int, metavar="N", help=_param(batch.run_batch, "workers")
    )
    batch_cmd.add_argument("--pdf", action="store_true", help=_param(batch.run_batch, "pdf"))
    batch_cmd.add_argument("--overwrite", action="store_true", help=_param(batch.run_batch, "overwrite"))
    _time_limit_option(batch_cmd, batch.run_batch)

    watch_cmd = command("watch", watch.watch_sheet)
    watch_cmd.add_argument("template", metavar="TEMPLATE", help=_param(watch.watch_sheet, "template"))
    watch_cmd.add_argument(
        "--inputs", required=True, metavar="FILE", help=_param(watch.watch_sheet, "inputs")
    )
    watch_cmd.add_argument("--out", required=True, metavar="DIR", help=_param(watch.watch_sheet, "out"))
    watch_cmd.add_argument("--pdf", action="store_true", help=_param(watch.watch_sheet, "pdf"))
    watch_cmd.add_argument("--overwrite", action="store_true", help=_param(watch.watch_sheet, "overwrite"))
    _time_limit_option(watch_cmd, watch.watch_sheet)

    new = command("new", starter.new_calculation, runs_templates=False)
    new.add_argument("template", metavar="TEMPLATE", help=_param(starter.new_calculation, "template"))
    new.add_argument("dest", metavar="DEST", help=_param(starter.new_calculation, "dest"))
    return top


def _time_limit_option(command: argparse.ArgumentParser, func: Callable) -> None:
    command.add_argument(
        "--time-limit",
        type=_positive_seconds,
        default=build.CASE_TIME_LIMIT_S,
        metavar="SECONDS",
        help=_param(func, "time_limit").replace("None: no limit but the cells'.", "").strip(),
    )


def _positive_seconds(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of seconds, got {text!r}") from None
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(f"expected a number of seconds above 0, got {text}")
    return value


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected 1 or more, got {value}")
    return value


def _print_build(result: build.BuildResult, heading: str) -> None:
    summary = result.record.get("summary", {})
    checks = summary.get("checks", 0)
    met = summary.get("met", 0)
    verdict = f"{met} of {checks} checks met" if checks else "no checks"
    print(f"{heading} in {result.seconds:.1f} s: {verdict}")
    labels = {".html": "sheet", ".pdf": "PDF", ".json": "record", ".ipynb": "notebook"}
    for path in result.files:
        print(f"  {labels[path.suffix] + ':':<13}{path}")
    print(f"  {'fingerprint:':<13}{result.fingerprint[:16]}")


def _all_met(record: dict | None) -> bool:
    """Whether every check of a built sheet's record is met (a sheet without checks: yes)."""
    summary = (record or {}).get("summary", {})
    return summary.get("met", 0) == summary.get("checks", 0)


def _run_demo(args: argparse.Namespace) -> int:
    built = starter.run_demo(args.out, pdf=args.pdf, overwrite=args.overwrite)
    for demo, result in built:
        _print_build(result, f"Built demo {demo.name} ({demo.template} with {demo.inputs.name})")
    if built:
        print(f"Open {built[0][1].html} in a browser to read the sheet.")
    short = [demo.name for demo, result in built if not _all_met(result.record)]
    if short:
        print(f"Checks not met in {', '.join(short)} (exit code {CHECKS_NOT_MET}); the sheet says which.")
        return CHECKS_NOT_MET
    return 0


def _run_build(args: argparse.Namespace) -> int:
    result = build.build_sheet(
        args.template,
        args.inputs,
        args.out,
        pdf=args.pdf,
        overwrite=args.overwrite,
        time_limit=args.time_limit,
    )
    _print_build(result, f"Built {Path(args.template).stem} from {Path(args.inputs).name}")
    return 0 if _all_met(result.record) else CHECKS_NOT_MET


def _run_diff(args: argparse.Namespace) -> int:
    from calckit.workflow import diff as diffing

    report = diffing.diff_sheets(args.old, args.new)
    path = Path(args.html) if args.html else None
    if path is not None:  # refused before anything is printed: the report goes nowhere half
        _check_report_target(path, report, overwrite=args.overwrite)
    print(f"Comparing {report.old}")
    print(f"     with {report.new}")
    print(report.text())
    if path is not None:
        write_text(path, report.html(), overwrite=args.overwrite, refuse=_REPORT_EXISTS)
        print(f"Report written to {path}")
    return 0


def _check_report_target(path: Path, report, *, overwrite: bool) -> None:
    """The --html file of diff: not a folder, not a file of the sheets compared, new unless --overwrite."""
    if path.is_dir():
        raise OverwriteError(
            "the report's file is a folder", where=str(path), do="Give a file name ending in .html"
        )
    if path.exists():
        compared = {
            Path(record).with_suffix(suffix).resolve()
            for record in (report.old, report.new)
            for suffix in (".json", ".html", ".pdf", ".ipynb")
        }
        if path.resolve() in compared:
            raise OverwriteError(
                "the report would replace a file of a sheet being compared",
                where=str(path),
                do="Give another file for --html; nothing was written",
            )
        if not overwrite:
            raise OverwriteError(
                "the file exists already",
                where=str(path),
                do=_REPORT_EXISTS,
            )


_REPORT_EXISTS = "Give another file for --html, or pass --overwrite to replace it; nothing was written"


def _run_batch(args: argparse.Namespace) -> int:
    from calckit.workflow.progress import BatchProgress

    progress = BatchProgress(sys.stderr)  # a bar on a terminal, a line per case otherwise

    result = batch.run_batch(
        args.template,
        args.cases,
        args.out,
        inputs=args.inputs,
        workers=args.workers,
        pdf=args.pdf,
        overwrite=args.overwrite,
        progress=progress,
        time_limit=args.time_limit,
    )
    failed = len(result.failed)
    print(f"{batch.counted(len(result.cases), 'case')}: {len(result.cases) - failed} built, {failed} failed")
    print(f"  summary: {result.summary_html}")
    print(f"           {result.summary_csv}")
    if failed:
        return 1
    return 0 if all(_all_met(case.record) for case in result.cases) else CHECKS_NOT_MET


def _run_new(args: argparse.Namespace) -> int:
    notebook, inputs = starter.new_calculation(args.template, args.dest)
    print(f"Wrote {notebook} and {inputs}.")
    print(f"Edit the inputs, then: calckit build {notebook} --inputs {inputs} --out built/{notebook.stem}")
    return 0


def _run_watch(args: argparse.Namespace) -> int:
    def say(event: watch.WatchEvent) -> None:
        if event.kind in ("failed", "missing"):
            print(event.text, file=sys.stderr, flush=True)
            return
        print(event.text, flush=True)
        if event.kind == "built":
            for path in event.result.files:
                print(f"  {path}", flush=True)
        if event.moved:
            print(event.moved, flush=True)

    watch.watch_sheet(
        args.template,
        args.inputs,
        args.out,
        pdf=args.pdf,
        overwrite=args.overwrite,
        time_limit=args.time_limit,
        say=say,
    )
    return 130  # a watch ends on Ctrl-C


_COMMANDS = {
    "demo": _run_demo,
    "build": _run_build,
    "diff": _run_diff,
    "batch": _run_batch,
    "new": _run_new,
    "watch": _run_watch,
}


class _Interrupts:
    """Ctrl-C (SIGINT) as the command line takes it: one line and exit code 130, at any moment.

    The first interrupt raises ``KeyboardInterrupt`` where the command is, so that what
    it started is undone on the way out (staging folders removed, a half-made move put
    back, kernels killed; a kernel also dies with this process, see
    :mod:`calckit.workflow.kernels`); a second one, while that runs, ends the process at
    once. Either way the line is said once.
    """

    def __init__(self) -> None:
        self.said = False
        self.hit = False
        self.previous = None

    def __enter__(self) -> _Interrupts:
        if threading.current_thread() is threading.main_thread():
            self.previous = signal.signal(signal.SIGINT, self._first)
        return self

    def __exit__(self, *exc) -> None:
        if self.previous is not None and not self.hit:  # interrupted: stay armed until the process ends
            signal.signal(signal.SIGINT, self.previous)

    def say(self, command: str | None) -> int:
        if not self.said:
            self.said = True
            print(f"calckit{' ' + command if command else ''}: interrupted", file=sys.stderr, flush=True)
        return 130

    def _first(self, signum, frame) -> None:
        self.hit = True
        signal.signal(signal.SIGINT, self._again)
        raise KeyboardInterrupt

    def _again(self, signum, frame) -> None:
        import os

        self.say(self.command)
        os._exit(130)

    command: str | None = None


def main(argv: Sequence[str] | None = None) -> int:
    """Run the ``calckit`` command line; return the exit code."""
    with _Interrupts() as interrupts:
        try:
            args = parser().parse_args(argv)
            interrupts.command = args.command
            code = _main(args)
        except KeyboardInterrupt:
            code = 130
        return interrupts.say(interrupts.command) if code == 130 or interrupts.hit else code


def _main(args: argparse.Namespace) -> int:
    try:
        return _COMMANDS[args.command](args)
    except CellError as exc:  # a template's cell failed: the input's fault, the template's or calckit's
        print(f"calckit {args.command}: error: {exc}", file=sys.stderr)
        return 2 if exc.user_error else 1
    except InternalError as exc:  # a defect of calckit, never "bad input"
        print(f"calckit {args.command}: internal error: {exc}", file=sys.stderr)
        return 1
    except CalcError as exc:
        print(f"calckit {args.command}: error: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # the reader went away (calckit ... | head): not an error of ours
        import os

        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())  # so that Python's exit flush does not fail again
        return 0
    except Exception as exc:  # never a traceback at the command line
        text = " ".join(str(exc).split()) or "no message"
        print(
            f"calckit {args.command}: internal error: {type(exc).__name__}: {text} "
            "(please report it with the command you ran)",
            file=sys.stderr,
        )
        return 1
