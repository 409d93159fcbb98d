"""The package's floors hold: an import never points up a floor, no import cycle, no module past
about 400 lines. The floors, bottom to top, are the flow a reader sees in the folder names."""
import ast
from pathlib import Path

PKG = Path(__file__).resolve().parent.parent / "thermo_budget"

# Bottom to top. The package's root holds the two foundations (errors, units) and, on top, the CLI.
FLOORS = ["base", "physics", "engine", "inputs", "planning", "logs", "output", "page", "cli"]
ROOT_MODULES = {"errors": "base", "units": "base", "display": "base", "output_files": "base",
                "__init__": "cli", "cli": "cli", "__main__": "cli"}
LONGEST_MODULE_LINES = 420


def module_name(path: Path) -> str:
    parts = path.relative_to(PKG.parent).with_suffix("").parts
    return ".".join(parts)


def floor_of(name: str) -> str:
    parts = name.split(".")
    if len(parts) == 2:
        return ROOT_MODULES[parts[1]]
    return parts[1]


def imports_of(path: Path) -> set[str]:
    """Every thermo_budget module this file imports, at module level or inside a function."""
    name = module_name(path)
    package = name.split(".")[:-1] if path.name != "__init__.py" else name.split(".")
    package = name.split(".")[:-1]
    found = set()
    for node in _runtime_nodes(ast.parse(path.read_text())):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - node.level + 1]
                target = base + (node.module.split(".") if node.module else [])
            elif node.module and node.module.split(".")[0] == "thermo_budget":
                target = node.module.split(".")
            else:
                continue
            for alias in node.names:
                candidate = ".".join(target + [alias.name])
                found.add(candidate if _exists(candidate) else ".".join(target))
        elif isinstance(node, ast.Import):
            found.update(a.name for a in node.names if a.name.split(".")[0] == "thermo_budget")
    return {f for f in found if _exists(f) and f != name}


def _runtime_nodes(tree):
    """Every node that runs: all but the bodies of `if TYPE_CHECKING:` (imports for annotations only)."""
    stack = [tree]
    while stack:
        node = stack.pop()
        yield node
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.If) and getattr(child.test, "id", None) == "TYPE_CHECKING":
                stack.extend(child.orelse)
                continue
            stack.append(child)


def _exists(dotted: str) -> bool:
    p = PKG.parent.joinpath(*dotted.split("."))
    return p.with_suffix(".py").exists() or (p / "__init__.py").exists()


def _graph():
    modules = {module_name(p): p for p in PKG.rglob("*.py")}
    graph = {}
    for name, path in modules.items():
        targets = set()
        for t in imports_of(path):
            if t in modules:
                targets.add(t)
            elif t + ".__init__" in modules:
                targets.add(t + ".__init__")
        graph[name] = targets
    return graph


def test_no_import_points_up_a_floor():
    graph = _graph()
    upward = []
    for source, targets in graph.items():
        if source.endswith("__init__"):
            continue   # the package's lazy names and a floor's docstring
        for target in targets:
            if target.endswith("__init__"):
                continue
            if FLOORS.index(floor_of(target)) > FLOORS.index(floor_of(source)):
                upward.append(f"{source} -> {target}")
    assert not upward, "imports that point up a floor: " + ", ".join(sorted(upward))


def test_no_import_cycle():
    graph = {k: {t for t in v if not t.endswith("__init__")} for k, v in _graph().items()
             if not k.endswith("__init__")}
    index, low, stack, on_stack, cycles = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in graph.get(v, ()):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                cycles.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    assert not cycles, f"import cycles: {cycles}"


def test_no_developer_tool_ships_in_the_package():
    # benchmarks and table makers live in tools/, outside the installed package
    tools = {p.stem for p in (PKG.parent / "tools").glob("*.py")}
    assert not tools & {p.stem for p in PKG.rglob("*.py")}


def test_every_module_sits_on_a_floor():
    for path in PKG.rglob("*.py"):
        assert floor_of(module_name(path)) in FLOORS, path


def test_no_module_past_about_400_lines():
    long = {str(p.relative_to(PKG.parent)): n for p in PKG.rglob("*.py")
            if (n := len(p.read_text().splitlines())) > LONGEST_MODULE_LINES}
    assert not long, f"modules past {LONGEST_MODULE_LINES} lines: {long}"


def test_a_cycle_or_an_upward_import_would_be_seen(tmp_path, monkeypatch):
    """The checks above can fail: an upward import planted in a copy is found."""
    import shutil
    copy = tmp_path / "thermo_budget"
    shutil.copytree(PKG, copy, ignore=shutil.ignore_patterns("__pycache__", "data"))
    physics = next(p for p in copy.joinpath("physics").glob("*.py") if p.name != "__init__.py")
    physics.write_text(physics.read_text() + "\nfrom ..page import page_state  # planted\n")
    monkeypatch.setattr(__import__(__name__), "PKG", copy)
    try:
        test_no_import_points_up_a_floor()
    except AssertionError as error:
        assert "page_state" in str(error)
    else:
        raise AssertionError("the planted upward import was not found")
