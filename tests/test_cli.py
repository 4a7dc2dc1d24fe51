"""Tests of the ``calckit`` command line: demo, build, diff, batch, new; exit codes and messages.

The commands run as ``python -m calckit`` in a subprocess, as a user would run
them, so that exit codes and the absence of tracebacks are those of the real
command. Commands that start a kernel run once per module, two at a time.
"""

from __future__ import annotations

import concurrent.futures as cf
import csv
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

import calckit.workflow as workflow
from calckit.workflow import cli
from calckit.workflow import diff as diffing

ROOT = Path(__file__).parent.parent
DATA = Path(__file__).parent / "data"
REPRODUCE = "import calckit as ck; ck.Oscillator(1, 0, 4).response('cos(2*t)')"
EXAMPLE = ROOT / "examples" / "harrow_creek_p101.toml"
TEMPLATE = "single_mass_harmonic"
INPUT_NAMES = ", ".join(workflow.load_template(TEMPLATE).inputs)


def calckit(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH", "")) if p)
    return subprocess.run(
        [sys.executable, "-m", "calckit", *args],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
    )


def _example_with(old: str, new: str) -> str:
    text = EXAMPLE.read_text(encoding="utf-8")
    assert text.count(old) == 1, old
    return text.replace(old, new)


# Bad inputs: the file's name, the line of the example to change, what to put instead, and the
# exact message (after "calckit build: error: "). Every one exits with 2.
BAD_INPUTS = {
    "broken_toml": (
        'mass = "1850 kg"',
        'mass = "1850 kg',
        "broken_toml.toml, line 16, column 71: the inputs file is not valid TOML: illegal character "
        "'\\n'. Check that line: text needs quotes (mass = \"250 kg\") and each key is set once.",
    ),
    "missing_input": (
        'mass = "1850 kg"',
        "",
        f'missing_input.toml: missing input "mass". The template\'s inputs are {INPUT_NAMES}.',
    ),
    "unknown_key": (
        'stiffness = "720 kN/m"',
        'stifness = "720 kN/m"',
        'unknown_key.toml: unknown input "stifness" on line 22 (did you mean "stiffness"?); missing input '
        f'"stiffness". The template\'s inputs are {INPUT_NAMES}.',
    ),
    "nan_mass": (
        'mass = "1850 kg"',
        "mass = nan",
        "nan_mass.toml, line 16, mass: the value nan is not a finite number. Give a finite number.",
    ),
    "unknown_unit": (
        'stiffness = "720 kN/m"',
        'stiffness = "720 kN/mn"',
        'unknown_unit.toml, line 22, stiffness: unknown unit "kN/mn" in "720 kN/mn". Did you mean "kN/m"? '
        "Write a unit such as "
        "N/m, N/mm, lbf/in (unit names are case-sensitive).",
    ),
    "wrong_dimension": (
        'mass = "1850 kg"',
        'mass = "1850 N/mm"',
        "wrong_dimension.toml, line 16, mass: expected a mass (kg, lb, ...), got 1850 N/mm, which is a "
        'stiffness. Give a mass, for example "250 kg".',
    ),
    "zero_mass": (
        'mass = "1850 kg"',
        'mass = "0 kg"',
        "zero_mass.toml, line 16, mass: must be greater than zero, got 0 kg. Check the value and its sign "
        "in the inputs.",
    ),
    "tangent_forcing": (
        'forcing = "F0*cos(w*t)"',
        'forcing = "F0*tan(w*t)"',
        'tangent_forcing.toml, line 19, forcing: the function "tan" is not allowed in "F0*tan(w*t)". '
        "Allowed: numbers, the inputs F0, w, the time t, pi, + - * / ** and parentheses, and the functions "
        "sin, cos, exp, sinh, cosh, sqrt, Heaviside, Min, Max, Piecewise.",
    ),
    "attribute_trick": (
        'forcing = "F0*cos(w*t)"',
        'forcing = "().__class__"',
        'attribute_trick.toml, line 19, forcing: attribute access "().__class__" is not allowed. Allowed: '
        "numbers, the inputs F0, w, the time t, pi, + - * / ** and parentheses, and the functions sin, cos, "
        "exp, sinh, cosh, sqrt, Heaviside, Min, Max, Piecewise.",
    ),
    "import_trick": (
        'forcing = "F0*cos(w*t)"',
        "forcing = \"__import__('os').system('touch created-by-forcing')\"",
        "import_trick.toml, line 19, forcing: attribute access \"__import__('os').system\" is not allowed in "
        "\"__import__('os').system('touch created-by-forcing')\". Allowed: numbers, the inputs F0, w, the time "
        "t, pi, + - * / ** and parentheses, and the functions sin, cos, exp, sinh, cosh, sqrt, Heaviside, Min, Max, Piecewise.",
    ),
}


@pytest.fixture(scope="module")
def runs(tmp_path_factory, shared_demo):
    """Every command that needs a kernel, run once, two at a time; results by name (the demo is the
    run's one shared build, linked in as demo/)."""
    root = tmp_path_factory.mktemp("cli")
    demo_root, demo_run = shared_demo
    (root / "demo").symlink_to(demo_root / "demo", target_is_directory=True)
    jobs = {}
    for name, (old, new, _) in BAD_INPUTS.items():
        (root / f"{name}.toml").write_text(_example_with(old, new), encoding="utf-8")
        jobs[name] = ("build", TEMPLATE, "--inputs", f"{name}.toml", "--out", f"bad/{name}")
    marker = root / "created-by-forcing"
    (root / "slow.toml").write_text(
        _example_with('forcing_frequency = "1480 rpm"', 'forcing_frequency = "600 rpm"'), encoding="utf-8"
    )
    jobs["slow"] = ("build", TEMPLATE, "--inputs", "slow.toml", "--out", "slow")
    (root / "internal.toml").write_text('subject = "x"\n', encoding="utf-8")
    jobs["internal_in_cell"] = (
        "build", str(DATA / "internal_error.ipynb"), "--inputs", "internal.toml", "--out", "internal",
    )  # fmt: skip
    jobs["missing_template"] = ("build", "no_such_template", "--inputs", "slow.toml", "--out", "x")
    with open(root / "cases.csv", "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(["case", "forcing_frequency", "mass"])
        writer.writerow(["full-speed", "1480 rpm", ""])
        writer.writerow(["turned-down", "600 rpm", ""])
        writer.writerow(["no-unit", "", "1850"])
    (root / "one.csv").write_text("case,forcing_frequency\nonly,1200 rpm\n", encoding="utf-8")
    jobs["one_case"] = ("batch", TEMPLATE, "--cases", "one.csv", "--inputs", str(EXAMPLE), "--out", "one")
    with cf.ThreadPoolExecutor(max_workers=2) as pool:
        futures = {name: pool.submit(calckit, *args, cwd=root) for name, args in jobs.items()}
        done = {name: future.result() for name, future in futures.items()}
    done["demo"] = demo_run
    # these need the demo's folder
    done["refused"] = calckit("build", TEMPLATE, "--inputs", "slow.toml", "--out", "demo/p101", cwd=root)
    done["batch"] = calckit(
        "batch", TEMPLATE, "--cases", "cases.csv", "--inputs", str(EXAMPLE), "--out", "batch", "--workers", "2",
        cwd=root,
    )  # fmt: skip
    return root, done, marker


def _no_traceback(run: subprocess.CompletedProcess) -> None:
    assert "Traceback" not in run.stderr and "Traceback" not in run.stdout


class TestBadInputs:
    @pytest.mark.parametrize("name", list(BAD_INPUTS))
    def test_message_and_exit_code(self, runs, name):
        """Each bad input gives exit code 2 and one line naming the file, the key and the line."""
        root, done, _ = runs
        run = done[name]
        _no_traceback(run)
        assert run.returncode == 2
        assert run.stdout == ""
        message = run.stderr.removeprefix("calckit build: error: ")
        found = re.search(r" \(found by single_mass_harmonic\.ipynb, cell \d+, line \d+\)\n$", message)
        if found:  # raised in the template: where it was raised may move as the template is edited
            message = message[: found.start()] + "\n"
        assert run.stderr.startswith("calckit build: error: ")
        assert message == f"{BAD_INPUTS[name][2]}\n"
        assert not (root / "bad" / name).exists()

    def test_nothing_left_behind(self, runs):
        """Failed builds leave no sheet and no temporary folder."""
        root, _, _ = runs
        assert not (root / "bad").exists() or not list((root / "bad").iterdir())
        assert not list(root.rglob(".calckit-build-*"))

    def test_injected_code_never_runs(self, runs):
        """A forcing that would create a file if it were run is refused as text; no file appears."""
        root, done, marker = runs
        assert done["import_trick"].returncode == 2
        assert not marker.exists()
        assert not list(root.rglob("created-by-forcing"))

    def test_missing_template(self, runs):
        """A template that does not exist: exit 2 and the templates there are."""
        _, done, _ = runs
        run = done["missing_template"]
        assert run.returncode == 2
        assert run.stderr == (
            "calckit build: error: no_such_template: no such template: it is neither a notebook file nor a "
            f"bundled template. Give the path of a .ipynb file or a bundled template's name "
            f"({', '.join(workflow.bundled_templates())}).\n"
        )


class TestExitCodes:
    def test_internal_error_in_a_template_cell(self, runs):
        """calckit's InternalError raised in a template's cell exits with 1 (a defect, not bad input)."""
        root, done, _ = runs
        run = done["internal_in_cell"]
        _no_traceback(run)
        assert (run.returncode, run.stdout) == (1, "")
        assert run.stderr.startswith("calckit build: error: internal_error.ipynb, cell 3, line 2 ")
        assert run.stderr.endswith(
            "InternalError: self-check: the particular solution does not satisfy the equation. This is a "
            "defect of calckit, not of your input; please report it with this line: import calckit as ck; "
            "ck.Oscillator(1, 0, 4).response('cos(2*t)').\n"
        )
        assert not (root / "internal").exists()

    @pytest.mark.parametrize(
        ("command", "module", "function"),
        [
            (["build", TEMPLATE, "--inputs", "in.toml", "--out", "out"], "build", "build_sheet"),
            (["new", TEMPLATE, "calc.ipynb"], "starter", "new_calculation"),
            (["batch", TEMPLATE, "--cases", "c.csv", "--out", "out"], "batch", "run_batch"),
        ],
    )
    def test_internal_error_raised_directly(self, monkeypatch, capsys, command, module, function):
        """An InternalError out of the function a command calls exits with 1 and says it is calckit's."""
        import functools
        import importlib

        from calckit.errors import InternalError

        held = importlib.import_module(f"calckit.workflow.{module}")

        @functools.wraps(getattr(held, function))  # the command's help is read from the docstring
        def broken(*args, **kwargs):
            raise InternalError("the residual check failed", reproduce=REPRODUCE, where="solve")

        monkeypatch.setattr(held, function, broken)
        assert cli.main(command) == 1
        captured = capsys.readouterr()
        assert (captured.out, captured.err) == (
            "",
            f"calckit {command[0]}: internal error: solve: the residual check failed. This is a defect of "
            f"calckit, not of your input; please report it with this line: {REPRODUCE}.\n",
        )

    def test_bad_input_raised_directly(self, monkeypatch, capsys):
        """A calckit error about the input, out of the same function, still exits with 2."""
        import functools

        from calckit.errors import InputsError
        from calckit.workflow import build

        @functools.wraps(build.build_sheet)
        def refused(*args, **kwargs):
            raise InputsError("must be greater than zero, got 0 kg", where="p101.toml, line 16, mass")

        monkeypatch.setattr(build, "build_sheet", refused)
        assert cli.main(["build", TEMPLATE, "--inputs", "p101.toml", "--out", "out"]) == 2
        assert capsys.readouterr().err == (
            "calckit build: error: p101.toml, line 16, mass: must be greater than zero, got 0 kg.\n"
        )

    @pytest.mark.parametrize("command", [[], ["build"], ["batch"], ["demo"], ["diff"], ["new"], ["watch"]])
    def test_help_says_the_exit_codes(self, capsys, command):
        """The help of the command states all the exit codes; each sub-command's, those it can end with."""
        with pytest.raises(SystemExit):
            cli.main([*command, "--help"])
        out = " ".join(capsys.readouterr().out.split())
        said = cli.COMMAND_EXIT_CODES[command[0]] if command else cli.EXIT_CODES
        assert " ".join(said.split()) in out
        assert "a defect of calckit (an internal error" in out and "130 interrupted" in out
        if command in ([], ["build"], ["demo"]):
            assert "1 a template cell that failed on another error" in out
            assert "a build past its time limit" in out

    @pytest.mark.parametrize("command", ["build", "batch", "demo", "diff", "new", "watch"])
    def test_help_offers_only_options_it_takes(self, capsys, command):
        """Every --option a command's help names is one argparse accepts for that command."""
        with pytest.raises(SystemExit):
            cli.main([command, "--help"])
        named = set(re.findall(r"(?<![\w-])--[a-z][a-z-]*[a-z]", capsys.readouterr().out))
        sub = next(a for a in cli.parser()._actions if a.dest == "command").choices[command]
        accepted = {option for action in sub._actions for option in action.option_strings}
        assert named <= accepted, f"{command} --help names {sorted(named - accepted)}, which it does not take"

    def test_new_says_nothing_of_what_it_lacks(self, capsys):
        """new takes no --overwrite and builds nothing: its help speaks of neither."""
        with pytest.raises(SystemExit):
            cli.main(["new", "--help"])
        out = " ".join(capsys.readouterr().out.split())
        assert "overwrite" not in out and "check" not in out and "template cell" not in out
        assert "new never replaces a file" in out


class TestDemo:
    def test_prints_where_the_files_are(self, runs):
        """The demo builds the bundled example and prints the paths of the sheet, record and notebook."""
        root, done, _ = runs
        run = done["demo"]
        _no_traceback(run)
        # the SP-601 demo's separation check is not met on purpose (its inputs file says so), so the
        # demo exits with the code of a sheet built with a check not met, and names that demo
        assert run.returncode == cli.CHECKS_NOT_MET == 3, run.stderr
        lines = run.stdout.splitlines()
        assert lines[0].startswith(f"Built demo p101 ({TEMPLATE} with harrow_creek_p101.toml) in ")
        assert lines[0].endswith(": 3 of 3 checks met")
        for label, suffix in (("sheet:", ".html"), ("record:", ".json"), ("notebook:", ".ipynb")):
            path = f"demo/p101/{TEMPLATE}{suffix}"
            assert f"  {label:<13}{path}" in lines
            assert (root / path).is_file()
        assert lines[-2] == f"Open demo/p101/{TEMPLATE}.html in a browser to read the sheet."
        assert lines[-1] == "Checks not met in sp601-stroke (exit code 3); the sheet says which."

    def test_overwrite_refused(self, runs):
        """Building other inputs into the demo's folder is refused with exit 2; the sheet is kept."""
        root, done, _ = runs
        run = done["refused"]
        record = diffing.load_built_record(root / "demo" / "p101")
        assert run.returncode == 2
        assert run.stderr == (
            f"calckit build: error: demo/p101/{TEMPLATE}.json: the output folder already holds a sheet with "
            f"fingerprint {record['fingerprint'][:12]}, built from other inputs. Build into another folder, "
            "or pass overwrite=True (--overwrite) to replace it.\n"
        )
        assert [i["text"] for i in record["inputs"] if i["name"] == "forcing_frequency"] == ["1480 rpm"]


class TestDiff:
    def test_shows_the_change(self, runs):
        """diff lists the one input changed, the results it moved and the check that flipped."""
        root, done, _ = runs
        # built, with the amplitude check not met at 600 rpm: the exit code of its own
        assert done["slow"].returncode == cli.CHECKS_NOT_MET, done["slow"].stderr
        assert done["slow"].stdout.splitlines()[0].endswith(": 2 of 3 checks met")
        run = calckit("diff", "demo/p101", f"slow/{TEMPLATE}.html", "--html", "diff.html", cwd=root)
        _no_traceback(run)
        assert run.returncode == 0
        report = diffing.diff_sheets(root / "demo" / "p101", root / "slow")
        assert run.stdout == (
            f"Comparing demo/p101/{TEMPLATE}.json\n     with slow/{TEMPLATE}.json\n"
            + report.text()
            + "\nReport written to diff.html\n"
        )
        assert "Inputs changed (1):\n  forcing_frequency: 1480 rpm -> 600 rpm\n" in run.stdout
        assert "Checks flipped (1):\n  amplitude: met -> NOT MET\n" in run.stdout
        # results as the sheet shows them: the amplitude in mm, the phase in degrees
        # each result under its step's title on the sheet, with its name
        assert re.search(r"\n  [^\n]*\(amplitude\): 0\.02058 mm -> ", run.stdout)
        assert re.search(r"\n  [^\n]*\(phase_lag\): 179\.3 deg -> \d+(\.\d+)? deg \(", run.stdout)
        assert run.stdout.splitlines()[2].startswith("Old: HCW-VIB-001 rev A, fingerprint ")
        assert (root / "diff.html").read_text().startswith("<!DOCTYPE html>")

    def test_html_not_over_a_file(self, runs):
        """--html refuses a file that exists (exit 2, nothing printed, the file kept); --overwrite replaces it."""
        root, done, _ = runs
        assert done["slow"].returncode == cli.CHECKS_NOT_MET, done["slow"].stderr
        notes = root / "notes.html"
        notes.write_text("<p>my notes</p>", encoding="utf-8")
        run = calckit("diff", "demo/p101", "slow", "--html", "notes.html", cwd=root)
        _no_traceback(run)
        assert (run.returncode, run.stdout, run.stderr) == (
            2,
            "",
            "calckit diff: error: notes.html: the file exists already. Give another file for --html, or pass "
            "--overwrite to replace it; nothing was written.\n",
        )
        assert notes.read_text(encoding="utf-8") == "<p>my notes</p>"
        again = calckit("diff", "demo/p101", "slow", "--html", "notes.html", "--overwrite", cwd=root)
        assert again.returncode == 0, again.stderr
        assert again.stdout.endswith("Report written to notes.html\n")
        assert notes.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")

    def test_html_never_over_a_compared_sheet(self, runs):
        """--html naming a file of a sheet being compared is refused even with --overwrite."""
        root, _, _ = runs
        sheet = root / "slow" / f"{TEMPLATE}.html"
        kept = sheet.read_bytes()
        run = calckit("diff", "demo/p101", "slow", "--html", f"slow/{TEMPLATE}.html", "--overwrite", cwd=root)
        assert (run.returncode, run.stdout, run.stderr) == (
            2,
            "",
            f"calckit diff: error: slow/{TEMPLATE}.html: the report would replace a file of a sheet being "
            "compared. Give another file for --html; nothing was written.\n",
        )
        assert sheet.read_bytes() == kept

    def test_same_sheet(self, runs):
        """A sheet compared with its own record: same inputs, same calculation."""
        root, _, _ = runs
        run = calckit("diff", f"demo/p101/{TEMPLATE}.html", "demo/p101", cwd=root)
        assert run.returncode == 0
        assert run.stdout.splitlines()[-1] == "Same inputs, same calculation (the fingerprints are equal)."

    def test_missing_file(self, tmp_path):
        """A sheet that does not exist: exit 2, one line."""
        run = calckit("diff", "old.json", "new.json", cwd=tmp_path)
        assert (run.returncode, run.stderr) == (
            2,
            "calckit diff: error: old.json: no such file or folder. Check the path.\n",
        )


class TestBatch:
    def test_one_bad_case(self, runs):
        """A batch of three with one bad case: two sheets, a summary, progress on stderr, exit 1."""
        root, done, _ = runs
        run = done["batch"]
        _no_traceback(run)
        assert run.returncode == 1
        progress = run.stderr.splitlines()
        assert sorted(line[:5] for line in progress) == ["[1/3]", "[2/3]", "[3/3]"]
        failed = [line for line in progress if " no-unit: FAILED: " in line]
        assert len(failed) == 1
        assert (
            "cases.csv, line 4 (case no-unit), mass: expected a mass (kg, lb, ...), got 1850, which has no unit."
            in failed[0]
        )
        assert run.stdout.splitlines()[0] == "3 cases: 2 built, 1 failed"
        with open(root / "batch" / "summary.csv", newline="", encoding="utf-8") as handle:
            rows = {row["case"]: row for row in csv.DictReader(handle)}
        assert {name: row["status"] for name, row in rows.items()} == {
            "full-speed": "built",
            "turned-down": "built",
            "no-unit": "failed",
        }
        assert (rows["full-speed"]["amplitude: verdict"], rows["turned-down"]["amplitude: verdict"]) == (
            "met",
            "not met",
        )
        assert (root / "batch" / "summary.html").is_file()
        assert (root / "batch" / "turned-down" / f"{TEMPLATE}.html").is_file()

    def test_summary_not_replaced(self, runs):
        """A second batch into the same folder is refused before any case runs: exit 2, the summary kept."""
        root, done, _ = runs
        assert done["batch"].returncode == 1
        before = (root / "batch" / "summary.csv").read_bytes()
        run = calckit(
            "batch", TEMPLATE, "--cases", "one.csv", "--inputs", str(EXAMPLE), "--out", "batch", cwd=root
        )
        _no_traceback(run)
        assert (run.returncode, run.stdout, run.stderr) == (
            2,
            "",
            "calckit batch: error: batch/summary.csv: the output folder already holds a batch summary "
            "(summary.csv, summary.html). Batch into another folder, or pass overwrite=True (--overwrite) to "
            "replace it; no case was run.\n",
        )
        assert (root / "batch" / "summary.csv").read_bytes() == before
        assert not (root / "batch" / "only").exists()

    def test_one_case(self, runs):
        """A batch of one case says "1 case"."""
        _, done, _ = runs
        run = done["one_case"]
        assert run.returncode == 0, run.stderr
        assert run.stdout.splitlines()[0] == "1 case: 1 built, 0 failed"

    def test_unknown_column_stops_before_running(self, tmp_path):
        """An unknown column is refused before any case runs: exit 2, no output folder."""
        (tmp_path / "cases.csv").write_text("case,stifness\na,1 N/m\n")
        run = calckit("batch", TEMPLATE, "--cases", "cases.csv", "--out", "out", cwd=tmp_path)
        assert run.returncode == 2
        assert run.stderr.startswith(
            'calckit batch: error: cases.csv, line 1: unknown input "stifness". Did you mean "stiffness"?'
        )
        assert not (tmp_path / "out").exists()


class TestNew:
    def test_copies_then_refuses(self, tmp_path):
        """new writes the template and its inputs file, and refuses to replace them."""
        first = calckit("new", TEMPLATE, "calcs/p102.ipynb", cwd=tmp_path)
        assert first.returncode == 0
        assert first.stdout.splitlines()[0] == "Wrote calcs/p102.ipynb and calcs/p102.toml."
        assert (tmp_path / "calcs" / "p102.toml").is_file()
        again = calckit("new", TEMPLATE, "calcs/p102.ipynb", cwd=tmp_path)
        assert (again.returncode, again.stderr) == (
            2,
            "calckit new: error: calcs/p102.ipynb: the file exists already. Choose another name; nothing was written.\n",
        )


class TestHelp:
    def test_commands_listed(self, capsys):
        """calckit --help lists the six commands with their library summaries."""
        with pytest.raises(SystemExit) as info:
            cli.main(["--help"])
        assert info.value.code == 0
        out = " ".join(capsys.readouterr().out.split())
        for name, func in (
            ("demo", workflow.run_demo),
            ("build", workflow.build_sheet),
            ("diff", diffing.diff_sheets),
            ("batch", workflow.run_batch),
            ("new", workflow.new_calculation),
            ("watch", workflow.watch_sheet),
        ):
            assert f"{name} {cli._summary(func)}" in out

    @pytest.mark.parametrize(
        ("command", "func", "options"),
        [
            ("build", workflow.build_sheet, ["inputs", "out", "pdf", "overwrite"]),
            ("batch", workflow.run_batch, ["cases", "inputs", "workers", "overwrite"]),
            ("demo", workflow.run_demo, ["out", "pdf", "overwrite"]),
            ("watch", workflow.watch_sheet, ["inputs", "out", "pdf", "overwrite"]),
        ],
    )
    def test_options_reuse_docstrings(self, capsys, command, func, options):
        """Each option's help is the library parameter's description."""
        with pytest.raises(SystemExit):
            cli.main([command, "--help"])
        out = " ".join(capsys.readouterr().out.split())
        assert " ".join(cli._summary(func).split()) in out
        for option in options:
            assert " ".join(cli._param(func, option).split()) in out

    def test_usage_error(self, capsys):
        """A missing option is a usage error with exit code 2."""
        with pytest.raises(SystemExit) as info:
            cli.main(["build", TEMPLATE])
        assert info.value.code == 2
        assert "the following arguments are required: --inputs, --out" in capsys.readouterr().err


#: A child that holds the import of the command line's build module (a finder that says so on stdout,
#: then sleeps), so that SIGINT lands while the command line is still being imported.
_HELD_IMPORT = """
import sys, time
class Hold:
    def find_spec(self, name, path=None, target=None):
        if name == "calckit.workflow.build":
            print("importing", flush=True)
            time.sleep(60)
        return None
sys.meta_path.insert(0, Hold())
sys.argv = ["calckit", "build", "x.ipynb", "--inputs", "x.toml", "--out", "out"]
"""


class TestInterruptWhileImporting:
    @pytest.mark.parametrize(
        "start",
        [
            "import runpy; runpy.run_module('calckit', run_name='__main__', alter_sys=True)",
            "from importlib.metadata import entry_points; "
            "sys.exit(entry_points(group='console_scripts')['calckit'].load()())",
        ],
        ids=["python -m calckit", "the calckit command's entry point"],
    )
    def test_ctrl_c_during_the_imports(self, tmp_path, start):
        """SIGINT before main's handler is set: one line, exit 130, no traceback (the shell's word)."""
        import signal

        process = subprocess.Popen(
            [sys.executable, "-c", _HELD_IMPORT + start],
            cwd=tmp_path,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )
        try:
            assert process.stdout.readline() == "importing\n"
            process.send_signal(signal.SIGINT)
            stdout, stderr = process.communicate(timeout=30)
        finally:
            process.kill()
        assert (process.returncode, stdout, stderr) == (130, "", "calckit: interrupted\n")


class TestLightStart:
    def test_no_heavy_imports_before_the_kernel(self):
        """The command line starts without sympy, pint, numpy or matplotlib: a build starts its kernel first."""
        code = (
            "import sys; from calckit.workflow import cli; cli.parser(); "
            "print(sorted(m for m in ('sympy', 'pint', 'numpy', 'matplotlib') if m in sys.modules))"
        )
        done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
        assert done.stdout.strip() == "[]"

    def test_help_read_from_source_is_the_docstring(self):
        """The diff command's help, read from the source without importing it, is the function's docstring."""
        import inspect

        code = (
            "import inspect, sys; from calckit.workflow import cli; "
            "d = cli._documented('calckit.workflow.diff', 'diff_sheets'); "
            "print('calckit.workflow.diff' in sys.modules); print(inspect.getdoc(d))"
        )
        done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
        loaded, doc = done.stdout.split("\n", 1)
        assert loaded == "False"
        assert doc.rstrip("\n") == inspect.getdoc(diffing.diff_sheets)


class TestTrust:
    def test_commands_that_run_templates_say_so(self, capsys):
        """build, batch, demo and the top-level help say that a template's code runs; diff and new do not."""
        for command, says in (
            ("build", True),
            ("batch", True),
            ("demo", True),
            ("diff", False),
            ("new", False),
            ("watch", True),
        ):
            with pytest.raises(SystemExit):
                cli.main([command, "--help"])
            out = " ".join(capsys.readouterr().out.split())
            assert (" ".join(cli.TRUST.split()) in out) is says, command
        with pytest.raises(SystemExit):
            cli.main(["--help"])
        assert "build only templates you trust" in " ".join(capsys.readouterr().out.split())
