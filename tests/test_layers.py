"""The import contract of calckit's layer folders, read from the code's own imports (an AST walk).

The layers of ``shared/DESIGN.md``, each a folder, in the order in which they may
import one another (a folder imports only its own layer and the ones before it)::

    core  <-  engine  <-  physics  <-  render  <-  sheet  <-  workflow  <-  explore

``calckit/errors.py`` and ``calckit/_version.py`` stand before every layer;
``calckit/__init__.py`` (the public name table) and ``calckit/__main__.py`` after
all of them. Every import counts, also one inside a function body: a late import
still ties the layers together. The one exception is written down in
:data:`LATE_BINDING`: the display mixin in ``core/display.py`` looks up the
renderers in ``render/`` when an object is shown, the way sympy's ``Basic``
finds its printers only when it is printed. It is allowed only inside a function.

Checked here: no import runs up the layers; no private (underscore) name or
module is imported from another folder; no circle of imports between modules;
ipywidgets only in ``explore/``, Jupyter's client libraries only in
``workflow/`` (and IPython's display hooks in the sheet and the explorer).
The checker is tested too, on a small tree with a deliberate upward import.
"""

from __future__ import annotations

import ast
from dataclasses import dataclass
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "calckit"

#: the layer folders, in import order
LAYERS = ("core", "engine", "physics", "render", "sheet", "workflow", "explore")
#: top-level modules every layer may import
BASE = {"calckit.errors", "calckit._version"}
#: top-level modules that stand after every layer
TOP = {"calckit", "calckit.__main__"}
#: (importing module, imported package) pairs allowed to run up, inside functions only
LATE_BINDING = {("calckit.core.display", "calckit.render")}
#: third-party packages that only some folders may import
CONFINED = {
    "ipywidgets": {"explore"},
    "nbclient": {"workflow"},
    "nbformat": {"workflow"},
    "jupyter_client": {"workflow"},
    "ipykernel": {"workflow"},
    "IPython": {"workflow", "sheet", "explore"},
}


@dataclass(frozen=True)
class Import:
    source: str  # the importing module
    target: str  # the module imported (a name imported from a package counts as the package)
    names: tuple[str, ...]  # names taken from the target by "from ... import"
    line: int
    in_function: bool

    def where(self) -> str:
        return f"{self.source} line {self.line}"


def module_name(path: Path, root: Path) -> str:
    parts = list(path.relative_to(root.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def imports_of(path: Path, root: Path) -> list[Import]:
    """Every import in one file, relative ones resolved, with whether it sits in a function body."""
    name = module_name(path, root)
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    found: list[Import] = []

    def visit(node: ast.AST, in_function: bool) -> None:
        for child in ast.iter_child_nodes(node):
            inside = in_function or isinstance(child, ast.FunctionDef | ast.AsyncFunctionDef | ast.Lambda)
            if isinstance(child, ast.Import):
                for alias in child.names:
                    found.append(Import(name, alias.name, (), child.lineno, in_function))
            elif isinstance(child, ast.ImportFrom):
                if child.level:
                    base = package.split(".")
                    base = base[: len(base) - (child.level - 1)]
                    target = ".".join(base + ([child.module] if child.module else []))
                else:
                    target = child.module or ""
                names = tuple(alias.name for alias in child.names)
                found.append(Import(name, target, names, child.lineno, in_function))
            visit(child, inside)

    visit(tree, False)
    return found


def all_imports(root: Path) -> list[Import]:
    return [imp for path in sorted(root.rglob("*.py")) for imp in imports_of(path, root)]


def modules_of(root: Path) -> set[str]:
    return {module_name(path, root) for path in root.rglob("*.py")}


def rank(module: str) -> float:
    """Where a calckit module stands in the import order."""
    if module in BASE:
        return -1
    if module in TOP:
        return len(LAYERS)
    folder = module.split(".")[1]
    if folder not in LAYERS:
        raise AssertionError(f"{module} lies outside the layer folders {LAYERS}: move it into one")
    return LAYERS.index(folder)


def folder_of(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 2 or (len(parts) == 2 and parts[1] in LAYERS) else "<top>"


def targets(imp: Import, modules: set[str]) -> list[str]:
    """The calckit modules one import reaches: the module, and submodules named in the import."""
    if imp.target != "calckit" and not imp.target.startswith("calckit."):
        return []
    submodules = [f"{imp.target}.{n}" for n in imp.names if f"{imp.target}.{n}" in modules]
    plain = not imp.names or len(submodules) < len(imp.names)  # names defined in the target itself
    return ([imp.target] if plain else []) + submodules


def is_late_binding(imp: Import, target: str) -> bool:
    """The documented exception: the display mixin's look-up of the renderers inside a function."""
    return imp.in_function and any(
        imp.source == source and (target == package or target.startswith(package + "."))
        for source, package in LATE_BINDING
    )


def upward(root: Path) -> list[str]:
    modules = modules_of(root)
    problems = []
    for imp in all_imports(root):
        for target in targets(imp, modules):
            if rank(target) <= rank(imp.source):
                continue
            if is_late_binding(imp, target):
                continue
            problems.append(f"{imp.where()}: imports {target}, a later layer ({folder_of(target)})")
    return problems


def private_across(root: Path) -> list[str]:
    problems = []
    for imp in all_imports(root):
        if not imp.target.startswith("calckit."):
            continue
        if folder_of(imp.target) == folder_of(imp.source) or imp.target in BASE:
            continue
        private_modules = [part for part in imp.target.split(".")[1:] if part.startswith("_")]
        private_names = [n for n in imp.names if n.startswith("_") and f"{imp.target}.{n}" not in BASE]
        if private_modules or private_names:
            what = ", ".join(private_modules + private_names)
            problems.append(f"{imp.where()}: imports the private {what} of {imp.target} from another folder")
    return problems


def circles(root: Path) -> list[str]:
    modules = modules_of(root)
    graph: dict[str, set[str]] = {m: set() for m in modules}
    for imp in all_imports(root):
        for target in targets(imp, modules):
            if target in modules and target != imp.source and not is_late_binding(imp, target):
                # a package's __init__ importing its own submodules is how a folder exports
                if imp.source != "calckit" and target.startswith(imp.source + "."):
                    continue
                if imp.source == "calckit":
                    continue  # the public name table imports everything, and nothing imports it back
                graph[imp.source].add(target)
    found, state = [], {}

    def walk(node: str, trail: list[str]) -> None:
        state[node] = "open"
        for nxt in sorted(graph[node]):
            if state.get(nxt) == "open":
                found.append(" -> ".join(trail[trail.index(nxt) :] + [nxt]))
            elif nxt not in state:
                walk(nxt, [*trail, nxt])
        state[node] = "done"

    for module in sorted(graph):
        if module not in state:
            walk(module, [module])
    return found


def confined(root: Path) -> list[str]:
    problems = []
    for imp in all_imports(root):
        top = imp.target.split(".")[0]
        if top in CONFINED and folder_of(imp.source) not in CONFINED[top]:
            problems.append(f"{imp.where()}: imports {top}, which belongs in {sorted(CONFINED[top])} only")
    return problems


class TestCalckitImports:
    def test_every_module_in_a_layer_folder(self):
        """Every module of calckit lies in a layer folder, but errors, _version, __init__ and __main__."""
        loose = sorted(m for m in modules_of(PACKAGE) if m not in BASE | TOP and folder_of(m) not in LAYERS)
        assert loose == []

    def test_no_import_runs_up_the_layers(self):
        """No module imports a later layer, also inside a function (the display mixin's late binding aside)."""
        assert upward(PACKAGE) == []

    def test_no_private_name_across_folders(self):
        """No private name or module is imported from another folder."""
        assert private_across(PACKAGE) == []

    def test_no_circles(self):
        """No circle of imports between calckit's modules."""
        assert circles(PACKAGE) == []

    def test_confined_libraries(self):
        """ipywidgets only in explore/, Jupyter's clients only in workflow/."""
        assert confined(PACKAGE) == []

    def test_late_binding_is_only_inside_functions(self):
        """The one exception, the display mixin's look-up of the renderers, happens only when shown."""
        late = [
            imp
            for imp in all_imports(PACKAGE)
            if (imp.source, ".".join(imp.target.split(".")[:2])) in LATE_BINDING
        ]
        assert late, "the display mixin no longer binds late: remove LATE_BINDING"
        assert all(imp.in_function for imp in late)


def _tree(tmp_path: Path, files: dict[str, str]) -> Path:
    root = tmp_path / "calckit"
    for name, text in files.items():
        path = root / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
    for folder in {p.parent for p in root.rglob("*.py")}:
        (folder / "__init__.py").touch()
    return root


class TestTheChecker:
    """The contract's checker finds what it is meant to find (so a passing contract means something)."""

    def test_finds_an_upward_import(self, tmp_path):
        """An engine module importing the sheet is reported, with its line."""
        root = _tree(
            tmp_path, {"engine/solve.py": "x = 1\nfrom calckit.sheet.page import Page\n", "sheet/page.py": ""}
        )
        assert upward(root) == [
            "calckit.engine.solve line 2: imports calckit.sheet.page, a later layer (sheet)"
        ]

    def test_finds_an_upward_import_inside_a_function(self, tmp_path):
        """A late import up the layers counts too, unless it is the documented exception."""
        root = _tree(
            tmp_path,
            {
                "physics/model.py": "def f():\n    import calckit.render.rows\n",
                "render/rows.py": "",
                "core/display.py": "def show():\n    from calckit.render import rows\n",
            },
        )
        assert upward(root) == [
            "calckit.physics.model line 2: imports calckit.render.rows, a later layer (render)"
        ]

    def test_finds_a_relative_upward_import(self, tmp_path):
        """A relative import is resolved before it is judged."""
        root = _tree(tmp_path, {"core/units.py": "from ..workflow import build\n", "workflow/build.py": ""})
        assert upward(root) == [
            "calckit.core.units line 1: imports calckit.workflow.build, a later layer (workflow)"
        ]

    def test_finds_a_private_name_across_folders(self, tmp_path):
        """A private name taken from another folder is reported; one from the same folder is not."""
        root = _tree(
            tmp_path,
            {
                "engine/solve.py": "def _tidy(): pass\n",
                "engine/more.py": "from calckit.engine.solve import _tidy\n",
                "physics/model.py": "from calckit.engine.solve import _tidy\n",
            },
        )
        assert private_across(root) == [
            "calckit.physics.model line 1: imports the private _tidy of calckit.engine.solve from another folder"
        ]

    def test_finds_a_circle(self, tmp_path):
        """Two modules importing each other, even late, make a circle."""
        root = _tree(
            tmp_path,
            {
                "engine/a.py": "from calckit.engine.b import g\n",
                "engine/b.py": "def g():\n    from calckit.engine.a import f\n",
            },
        )
        assert circles(root) == ["calckit.engine.a -> calckit.engine.b -> calckit.engine.a"]

    def test_finds_a_confined_library_outside_its_folder(self, tmp_path):
        """ipywidgets imported by the sheet is reported."""
        root = _tree(tmp_path, {"sheet/view.py": "import ipywidgets\n"})
        assert confined(root) == [
            "calckit.sheet.view line 1: imports ipywidgets, which belongs in ['explore'] only"
        ]

    def test_a_module_outside_the_folders_is_refused(self, tmp_path):
        """A module left at the top of the package has no layer."""
        root = _tree(tmp_path, {"loose.py": "from calckit.core import units\n", "core/units.py": ""})
        with pytest.raises(AssertionError, match="calckit.loose lies outside the layer folders"):
            upward(root)


def test_contributor_guide_lists_every_module():
    """DEVELOPERS.md's table of folders names every module of each folder (the guide stays true)."""
    root = Path(__file__).resolve().parent.parent
    guide = (root / "DEVELOPERS.md").read_text(encoding="utf-8")
    rows = {line.split("|")[1].strip().strip("`/"): line for line in guide.splitlines() if line.startswith("| `")}
    missing = [
        f"{path.parent.name}/{path.stem}"
        for path in sorted((root / "calckit").glob("*/*.py"))
        if path.stem != "__init__" and f"`{path.stem}`" not in rows.get(path.parent.name, "")
    ]
    assert missing == []
