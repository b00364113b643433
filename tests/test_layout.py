"""The house: rooms import only from rooms above them, no module imports itself round a circle, every
package imported is declared, the wheel lists every package, and a checkout runs without installing."""

from __future__ import annotations

import ast
import subprocess
import sys
import sysconfig
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "scorecard"

# The rooms in the order of the data flow (DEVELOPERS.md draws the same map): each may import
# from the rooms before it, and from itself, never from a room after it.
FLOORS = (
    "terms", "errors", "files", "settings", "rows", "intake", "evidence", "classing", "fitter", "selection", "points",
    "scoring", "checks", "rejects", "challenger", "validation", "build", "modelfile", "exports", "monitor", "report", "options",
    "commands", "cli", "demo",
)
# import names of the distributions in pyproject.toml whose import name differs from theirs
IMPORT_NAMES = {"scorewright": "scorecard"}


def _modules() -> dict[str, Path]:
    found = {}
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = path.relative_to(ROOT).with_suffix("").parts
        found[".".join(parts[:-1] if parts[-1] == "__init__" else parts)] = path
    for path in sorted((ROOT / "demo").glob("*.py")):
        found["scorecard.demo" + ("" if path.stem == "__init__" else f".{path.stem}")] = path
    return found


def _imports(module: str, path: Path, *, lazy: bool) -> set[str]:
    """Modules of ours that ``module`` imports (at the top, or anywhere with ``lazy``), outside TYPE_CHECKING."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    skipped = {id(node) for block in ast.walk(tree) if isinstance(block, ast.If)
               and getattr(block.test, "id", "") == "TYPE_CHECKING" for node in ast.walk(block)}
    nodes = ast.walk(tree) if lazy else tree.body
    names = set()
    for node in nodes:
        if id(node) in skipped:
            continue
        if isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join([*anchor, base]) if base else ".".join(anchor)
            if base.startswith("scorecard"):
                names.update(f"{base}.{alias.name}" for alias in node.names)
                names.add(base)
        elif isinstance(node, ast.Import):
            names.update(alias.name for alias in node.names if alias.name.startswith("scorecard"))
    return names


def _room(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else ""


def test_every_room_is_on_the_map():
    rooms = {_room(module) for module in _modules()} - {"", "__main__", "templates"}
    assert rooms <= set(FLOORS), sorted(rooms - set(FLOORS))


def test_no_room_imports_from_a_room_after_it():
    modules = _modules()
    wrong = []
    for module, path in modules.items():
        room = _room(module)
        if room in ("", "__main__"):
            continue  # the package's front door re-exports every room, on first use
        for target in _imports(module, path, lazy=True):
            other = _room(target)
            if other and other in FLOORS and FLOORS.index(other) > FLOORS.index(room):
                wrong.append(f"{module} imports {target}")
    assert not wrong, wrong


def test_no_import_circle():
    modules = _modules()
    graph = {module: {target for target in _imports(module, path, lazy=False) if target in modules and target != module}
             for module, path in modules.items()}
    # a package's __init__ importing its own modules is how it re-exports them, not a circle
    for module in graph:
        graph[module] = {t for t in graph[module] if not (modules[module].name == "__init__.py" and t.startswith(module + "."))}
    state: dict[str, int] = {}
    circles = []

    def visit(module: str, trail: list[str]) -> None:
        state[module] = 1
        for target in sorted(graph[module]):
            if state.get(target) == 1:
                circles.append(" -> ".join([*trail[trail.index(target):], target]) if target in trail else target)
            elif target not in state:
                visit(target, [*trail, target])
        state[module] = 2

    for module in sorted(graph):
        if module not in state:
            visit(module, [module])
    assert not circles, circles


def test_every_imported_package_is_declared():
    project = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    # the dependencies, and the extras of the engines (imported only when a ledger names one)
    specs = [*project["dependencies"], *project["optional-dependencies"]["duckdb"], *project["optional-dependencies"]["spark"]]
    declared = {IMPORT_NAMES.get(name, name) for name in
                (spec.split(">")[0].split("=")[0].split("[")[0].strip().lower() for spec in specs)}
    imported = set()
    for path in _modules().values():
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                imported.update(alias.name.split(".")[0] for alias in node.names)
            elif isinstance(node, ast.ImportFrom) and not node.level and node.module:
                imported.add(node.module.split(".")[0])
    third_party = {name for name in imported if name not in sys.stdlib_module_names and name != "scorecard"}
    assert third_party <= declared, sorted(third_party - declared)
    private = [str(path) for path in _modules().values() if "pandas._libs" in path.read_text(encoding="utf-8")]
    assert not private, private


def test_the_wheel_lists_every_package():
    options = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]
    packages = {".".join(path.parent.relative_to(ROOT).parts) for path in PACKAGE.rglob("__init__.py")}
    assert packages | {"scorecard.templates", "scorecard.demo"} == set(options["packages"])


def test_a_checkout_runs_without_installing():
    # without site (so without the editable install's finder); the dependencies from the environment
    script = (
        "import sys; sys.path[:0] = [sys.argv[1]]; sys.path.append(sys.argv[2])\n"
        "import scorecard.templates, scorecard.demo.generator\n"
        "from importlib import resources\n"
        "print(resources.files('scorecard.templates').joinpath('base.html').is_file())\n"
        "print(scorecard.demo.generator.__file__)\n"
    )
    result = subprocess.run([sys.executable, "-S", "-c", script, str(ROOT), sysconfig.get_paths()["purelib"]],
                            capture_output=True, text=True, cwd=ROOT.parent)
    assert result.returncode == 0, result.stderr
    assert result.stdout.splitlines() == ["True", str(ROOT / "demo" / "generator.py")]
