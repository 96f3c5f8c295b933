"""The layout's rules, read from the source with ``ast`` (nothing is imported).

The import rules by package (the table in DEVELOPERS.md, "Layout"), the CLI's
"no science" rule, and the sizes of modules and functions.  Every import
counts, at module level or inside a function: a lazy import is still an arrow
in the graph.  Common practice, no source: these are the project's own house
rules (DEVELOPERS.md), not physics.
"""

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "snrkit"

#: Layers ("units") of the import graph.  ``io`` has two floors: its ground
#: floor (TOML reader, shipped tables, atomic writes) serves every package;
#: ``io.systemfile`` builds a System from a file, so it sits above the bodies
#: and atmospheres.
BASE = {"snrkit", "snrkit._version", "snrkit.constants", "snrkit.units", "snrkit.errors",
        "snrkit.labelled"}
COMPUTE = ("bodies", "atmosphere", "photons", "stats", "engine")

#: unit -> the units it may import (besides itself).
MAY_IMPORT = {
    "base": set(),
    "io": {"base"},
    "bodies": {"base", "io"},
    "atmosphere": {"base", "io"},
    "photons": {"base", "io"},
    "stats": {"base", "io", "bodies", "atmosphere", "photons"},
    "engine": {"base", "io", "bodies", "atmosphere", "photons", "stats"},
    "io.systemfile": {"base", "io", "bodies", "atmosphere"},
    "planning": {"base", "io", "io.systemfile", "bodies", "atmosphere", "photons", "stats",
                 "engine"},
    "output": {"base", "io", "io.systemfile", "bodies", "atmosphere", "photons", "stats",
               "engine", "planning"},
    "cli": {"base", "io", "io.systemfile", "bodies", "atmosphere", "photons", "stats", "engine",
            "planning", "output"},
    "main": {"base", "cli"},
}

#: Modules of the io ground floor that write files: no compute package imports them.
IO_WRITERS = {"snrkit.io.atomic"}

#: The only modules of the compute packages the CLI may import: public
#: functions that take Quantities or files and return tables.  Everything else
#: in bodies, atmosphere, photons, stats and engine is compute, and the CLI
#: does not reach into it (a new compute module is forbidden to it by default).
CLI_PUBLIC = {
    "snrkit.bodies.system", "snrkit.bodies.limits", "snrkit.bodies.describe",
    "snrkit.atmosphere.scenarios", "snrkit.atmosphere.spectrum", "snrkit.atmosphere.user_opacity",
    "snrkit.photons.instruments", "snrkit.photons.precision", "snrkit.photons.targets",
    "snrkit.engine.transits",
}

#: Science libraries the CLI never imports at module level.
SCIENCE_LIBRARIES = {"numpy", "scipy", "astropy", "xarray", "matplotlib"}

MAX_MODULE_LINES = 400
MAX_FUNCTION_LINES = 80

#: TEMPORARY: being rewritten by the lead developer, who will split it.  Remove
#: an entry as soon as its module is within the sizes.
TEMPORARY_SIZE_EXCEPTIONS = set()


def _modules():
    out = {}
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
        is_package = parts[-1] == "__init__"
        if is_package:
            parts = parts[:-1]
        out[".".join(parts)] = (path, is_package)
    return out


MODULES = _modules()


def _unit(module):
    if module in BASE:
        return "base"
    if module == "snrkit.__main__":
        return "main"
    if module == "snrkit.io.systemfile":
        return "io.systemfile"
    return module.split(".")[1]


def _imports(module):
    """(line, imported snrkit module) for every import in ``module``, lazy ones included."""
    path, is_package = MODULES[module]
    package = module if is_package else module.rpartition(".")[0]
    out = []
    tree = ast.parse(path.read_text(encoding="utf-8"))
    # imports under `if TYPE_CHECKING:` name types for annotations only and never run:
    # they are no arrow between layers (photons.targets annotates a System it is handed)
    typing_only = {id(n) for block in ast.walk(tree)
                   if isinstance(block, ast.If) and isinstance(block.test, ast.Name)
                   and block.test.id == "TYPE_CHECKING"
                   for stmt in block.body for n in ast.walk(stmt)}
    for node in ast.walk(tree):
        if id(node) in typing_only:
            continue
        if isinstance(node, ast.Import):
            out += [(node.lineno, a.name) for a in node.names if a.name.split(".")[0] == "snrkit"]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[:len(package.split(".")) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
            elif (node.module or "").split(".")[0] == "snrkit":
                target = node.module
            else:
                continue
            # `from . import detect` imports the module snrkit.stats.detect
            subs = [f"{target}.{a.name}" for a in node.names if f"{target}.{a.name}" in MODULES]
            out += [(node.lineno, m) for m in (subs or [target])]
    return out


def _module_level_imports(module):
    path, _ = MODULES[module]
    for node in ast.parse(path.read_text(encoding="utf-8")).body:
        if isinstance(node, ast.Import):
            yield from ((node.lineno, a.name.split(".")[0]) for a in node.names)
        elif isinstance(node, ast.ImportFrom) and not node.level:
            yield node.lineno, node.module.split(".")[0]


def test_every_module_is_in_a_known_unit():
    units = {_unit(m) for m in MODULES}
    assert units <= set(MAY_IMPORT), units - set(MAY_IMPORT)
    # the packages the layout promises exist
    for name in COMPUTE + ("planning", "output", "io", "cli"):
        assert f"snrkit.{name}" in MODULES, name


def test_imports_follow_the_layers():
    wrong = []
    for module in MODULES:
        unit = _unit(module)
        for line, target in _imports(module):
            assert target in MODULES, f"{module}:{line} imports {target}, which does not exist"
            other = _unit(target)
            if other != unit and other not in MAY_IMPORT[unit]:
                wrong.append(f"{module}:{line} ({unit}) imports {target} ({other})")
    assert not wrong, "\n".join(wrong)


def test_compute_packages_do_not_write_files_or_talk_to_people():
    wrong = []
    for module in MODULES:
        if _unit(module) not in COMPUTE:
            continue
        for line, target in _imports(module):
            if target in IO_WRITERS or _unit(target) in ("cli", "output", "planning"):
                wrong.append(f"{module}:{line} imports {target}")
    assert not wrong, "\n".join(wrong)


def test_only_main_imports_the_cli():
    wrong = [f"{module}:{line} imports {target}"
             for module in MODULES if _unit(module) not in ("cli", "main")
             for line, target in _imports(module) if _unit(target) == "cli"]
    assert not wrong, "\n".join(wrong)


def test_the_cli_does_no_science():
    wrong = []
    for module in MODULES:
        if _unit(module) != "cli":
            continue
        wrong += [f"{module}:{line} imports {lib} at module level"
                  for line, lib in _module_level_imports(module) if lib in SCIENCE_LIBRARIES]
        wrong += [f"{module}:{line} reaches into the compute module {target}"
                  for line, target in _imports(module)
                  if _unit(target) in COMPUTE and target not in CLI_PUBLIC]
    assert not wrong, "\n".join(wrong)


def test_no_cycles_between_packages():
    graph = {u: set() for u in MAY_IMPORT}
    for module in MODULES:
        for _, target in _imports(module):
            if _unit(target) != _unit(module):
                graph[_unit(module)].add(_unit(target))
    # depth-first search for a back edge
    state, stack = {}, []

    def visit(u):
        state[u] = "open"
        stack.append(u)
        for v in sorted(graph[u]):
            if state.get(v) == "open":
                raise AssertionError("cycle: " + " -> ".join(stack[stack.index(v):] + [v]))
            if v not in state:
                visit(v)
        stack.pop()
        state[u] = "done"

    for u in sorted(graph):
        if u not in state:
            visit(u)


def test_no_cycles_between_modules():
    # one planet's path never climbs back up: no module imports, even lazily, a
    # module that imports it back (Tarjan's strongly connected components)
    graph = {m: {t for _, t in _imports(m) if t != m} for m in MODULES}
    index, low, stack, on_stack, cycles = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in graph[v]:
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
    assert not cycles, cycles


def test_the_rules_can_fail():
    # the checks above see a lazy import inside a function, and resolve `from . import x`
    tree_imports = _imports("snrkit.engine.engine")
    assert any(t == "snrkit.stats.detect" for _, t in tree_imports)
    assert any(t.startswith("snrkit.atmosphere.") for _, t in tree_imports)
    assert _unit("snrkit.io.atomic") == "io" and _unit("snrkit.io.systemfile") == "io.systemfile"


def test_lazy_top_level_names_point_at_their_modules():
    # snrkit/__init__.py imports Star, Planet, System, ... by name on first use
    # (importlib, invisible to the import graph): each target must define the name
    tree = ast.parse((PACKAGE / "__init__.py").read_text(encoding="utf-8"))
    lazy = next(ast.literal_eval(n.value) for n in tree.body
                if isinstance(n, ast.Assign) and getattr(n.targets[0], "id", "") == "_LAZY")
    for name, module in lazy.items():
        assert module in MODULES, (name, module)
        body = ast.parse(MODULES[module][0].read_text(encoding="utf-8")).body
        defined = {n.name for n in body if isinstance(n, (ast.FunctionDef, ast.ClassDef))}
        defined |= {a.asname or a.name for n in body if isinstance(n, ast.ImportFrom)
                    for a in n.names}
        assert name in defined, (name, module)


def _size_reason(lines, lineno):
    """True when a ``# size:`` comment sits right above line ``lineno`` (1-based)."""
    i = lineno - 2
    while i >= 0 and lines[i].strip().startswith("#"):
        if lines[i].strip().startswith("# size:"):
            return True
        i -= 1
    return False


def _sized(path, name):
    text = path.read_text(encoding="utf-8")
    lines = text.splitlines()
    tree = ast.parse(text)
    # a module's reason stands near its top: before its first function or class
    first = min((n.lineno for n in tree.body
                 if isinstance(n, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef))),
                default=len(lines) + 1)
    first_start = first - 1          # skip the comment block (and decorators) of that def
    while first_start > 0 and lines[first_start - 1].strip().startswith(("#", "@")):
        first_start -= 1
    module_reason = any(line.startswith("# size:") for line in lines[:first_start])
    out = []
    if len(lines) > MAX_MODULE_LINES and not module_reason:
        out.append(f"{name}: {len(lines)} lines")
    for node in ast.walk(tree):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
            start = min([node.lineno] + [d.lineno for d in node.decorator_list])
            length = node.end_lineno - start + 1
            if length > MAX_FUNCTION_LINES and not _size_reason(lines, start):
                out.append(f"{name}:{node.lineno} {node.name}: {length} lines")
    return out


@pytest.mark.parametrize("module", sorted(MODULES))
def test_sizes(module):
    path, _ = MODULES[module]
    rel = str(path.relative_to(PACKAGE.parent))
    too_big = _sized(path, rel)
    if rel in TEMPORARY_SIZE_EXCEPTIONS:
        assert too_big, f"{rel} is within the sizes: remove it from TEMPORARY_SIZE_EXCEPTIONS"
        return
    assert not too_big, "\n".join(too_big)


def test_size_rule_sees_a_long_function(tmp_path):
    body = "\n".join(f"    x{i} = {i}" for i in range(MAX_FUNCTION_LINES))
    path = tmp_path / "long.py"
    path.write_text(f"def f():\n{body}\n")
    assert _sized(path, "long.py") == [f"long.py:1 f: {MAX_FUNCTION_LINES + 1} lines"]
    path.write_text(f"# size: one table, read top to bottom\ndef f():\n{body}\n")
    assert _sized(path, "long.py") == []
    # a function's reason does not excuse a long module
    path.write_text(f"# size: one table, read top to bottom\ndef f():\n{body}\n"
                    + "x = 1\n" * MAX_MODULE_LINES)
    assert _sized(path, "long.py") == [f"long.py: {MAX_MODULE_LINES + MAX_FUNCTION_LINES + 2} lines"]
