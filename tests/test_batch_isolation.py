"""A batch reuses one kernel per worker: a case must not see anything of the case before it.

The bundled template is copied with two extra cells before its last one: a probe
that writes onto the sheet what a case could have left behind (a global, the
matplotlib settings, open figures, numpy's print options, an environment
variable, the warning filters, files in or a change of the working folder,
a builtin), and a cell that leaves all of that behind and
prints the kernel's process id (into the notebook only, not the sheet). A
batch of three cases runs in one worker: the second runs after the first in
the same kernel; the second also adds a builtin, which the reset cannot undo,
so the third runs in a new kernel. The second and third cases are also built
alone with ``build_sheet``; each pair of sheets must be the same bytes (JSON
record, HTML, executed notebook), apart from the text naming where the inputs
came from (the inputs' source), the fingerprint (which covers that source) and
the printed process id.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import nbformat
import pytest

from calckit.workflow import PARAMETERS_TAG, build_sheet, bundled_templates, run_batch

EXAMPLE = Path(__file__).parent.parent / "examples" / "harrow_creek_p101.toml"

PROBE = """\
import os, warnings
import builtins
import matplotlib
from sympy.core.parameters import global_parameters
sheet.note(
    f"probe: leaked global {'leaked' in globals()}; lines.linewidth {matplotlib.rcParams['lines.linewidth']}; "
    f"axes.linewidth {matplotlib.rcParams['axes.linewidth']}; font.size {matplotlib.rcParams['font.size']}; "
    f"open figures {plt.get_fignums()}; numpy precision {np.get_printoptions()['precision']}; "
    f"environment {os.environ.get('CALCKIT_ISOLATION_PROBE')}; warning filters {len(warnings.filters)}; "
    f"files here {sorted(os.listdir('.'))}; sympy evaluate {global_parameters.evaluate}; "
    f"builtin {hasattr(builtins, 'calckit_isolation_probe')}"
)
"""

POLLUTE = """\
leaked = 1
matplotlib.rcParams["lines.linewidth"] = 7.0
matplotlib.rcParams["axes.linewidth"] = 3.0
matplotlib.rcParams["font.size"] = 20.0
plt.figure()
np.set_printoptions(precision=2)
os.environ["CALCKIT_ISOLATION_PROBE"] = "set"
warnings.simplefilter("ignore")
open("left-behind.txt", "w").close()
os.mkdir("sub")
os.chdir("sub")
if add_builtin:
    builtins.calckit_isolation_probe = 1
print("kernel process", os.getpid())
"""

CLEAN = "probe: leaked global False; lines.linewidth 1.5; axes.linewidth 0.8; font.size 10.0; open figures []"


@pytest.fixture(scope="module")
def sheets(tmp_path_factory):
    root = tmp_path_factory.mktemp("isolation")
    notebook = nbformat.read(bundled_templates()["single_mass_harmonic"], as_version=4)
    parameters = next(c for c in notebook.cells if PARAMETERS_TAG in c.metadata.get("tags", []))
    parameters.source += "\nadd_builtin = False\n"
    last = len(notebook.cells) - 1  # the cell that shows the sheet
    notebook.cells[last:last] = [nbformat.v4.new_code_cell(PROBE), nbformat.v4.new_code_cell(POLLUTE)]
    for number, cell in enumerate(notebook.cells):
        cell.id = f"cell-{number}"
    template = root / "probed.ipynb"
    nbformat.write(notebook, template)

    text = EXAMPLE.read_text(encoding="utf-8")
    assert text.count('forcing_frequency = "1480 rpm"') == 1
    inputs = {}
    for name, speed, builtin in (("second", "1200 rpm", "true"), ("third", "900 rpm", "false")):
        path = root / f"{name}.toml"
        path.write_text(
            text.replace(
                'forcing_frequency = "1480 rpm"', f'forcing_frequency = "{speed}"\nadd_builtin = {builtin}'
            ),
            encoding="utf-8",
        )
        inputs[name] = path
    cases = root / "cases.csv"
    cases.write_text(
        "case,forcing_frequency,add_builtin\nfirst,1480 rpm,false\nsecond,1200 rpm,true\nthird,900 rpm,false\n",
        encoding="utf-8",
    )
    batch = run_batch(template, cases, root / "batch", inputs=inputs["third"], workers=1)
    alone = {name: build_sheet(template, path, root / "alone" / name) for name, path in inputs.items()}
    return root, batch, alone


def _files(folder: Path, label: str) -> dict[str, str]:
    """The sheet's three files as text; the inputs' label, the fingerprint and the record's seal replaced, the
    printed process id dropped."""
    record = json.loads((folder / "probed.json").read_text(encoding="utf-8"))
    fingerprint = record["fingerprint"]
    files = {}
    for suffix in (".json", ".html", ".ipynb"):
        text = (folder / f"probed{suffix}").read_text(encoding="utf-8").replace(label, "INPUTS")
        for shown in (fingerprint, fingerprint[:16], fingerprint[:12]):  # whole, and as a sheet shortens it
            text = text.replace(shown, "FINGERPRINT")
        files[suffix] = text
    # the seal is a hash of the record's content, which holds the label and fingerprint masked above;
    # the content itself is compared in full, so the seal is masked with them
    files[".json"] = files[".json"].replace(record["seal"], "SEAL")
    files[".ipynb"] = re.sub(r"kernel process \d+", "kernel process N", files[".ipynb"])
    return files


def _pid(folder: Path) -> str:
    return re.search(r"kernel process (\d+)", (folder / "probed.ipynb").read_text(encoding="utf-8")).group(1)


def test_all_built(sheets):
    _, batch, _ = sheets
    assert [(case.name, case.ok, case.message) for case in batch.cases] == [
        ("first", True, ""),
        ("second", True, ""),
        ("third", True, ""),
    ]


def test_kernel_reused_then_replaced(sheets):
    """The second case ran in the first one's kernel; the builtin it added sent the third to a new kernel."""
    root, _, _ = sheets
    first, second, third = (_pid(root / "batch" / name) for name in ("first", "second", "third"))
    assert first == second
    assert third != second


@pytest.mark.parametrize("name", ["second", "third"])
def test_nothing_leaks_onto_the_sheet(sheets, name):
    """The probe on a later case's sheet sees the state of a new kernel."""
    root, _, _ = sheets
    record = json.loads((root / "batch" / name / "probed.json").read_text(encoding="utf-8"))
    (probe,) = [note for note in record["notes"] if note.startswith("probe:")]
    assert probe.startswith(CLEAN)
    assert "numpy precision 8; environment None;" in probe
    assert probe.endswith("files here []; sympy evaluate True; builtin False")


@pytest.mark.parametrize("name", ["second", "third"])
def test_same_sheet_as_built_alone(sheets, name):
    """Record, HTML and notebook of a case run after another are those of the case built alone."""
    root, _, alone = sheets
    in_batch = _files(root / "batch" / name, f"third.toml with case {name} of cases.csv")
    built = _files(root / "alone" / name, f"{name}.toml")
    for suffix in (".json", ".html", ".ipynb"):
        assert in_batch[suffix] == built[suffix], suffix
