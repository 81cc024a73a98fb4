"""The package layout keeps its promises: docstring examples run, the solver
is imported only as ``dxf2frame.solver`` and never touches DXF code, and
the subpackages depend on each other in one direction.

These tests read the source (with :mod:`ast`) and import the modules; they
assert no numbers.  The docstring examples they run carry their own sources.
"""
from __future__ import annotations

import ast
import doctest
import importlib
import pkgutil
import subprocess
import sys
from pathlib import Path

import pytest

import dxf2frame
import dxf2frame.solver

ROOT = Path(__file__).resolve().parents[1]


def _modules(package) -> list[str]:
    names = [package.__name__]
    for info in pkgutil.walk_packages(package.__path__, package.__name__ + "."):
        if info.name.endswith("__main__"):
            continue
        names.append(info.name)
    return sorted(names)


MODULES = _modules(dxf2frame) + [m for m in _modules(dxf2frame.solver) if m not in _modules(dxf2frame)]


def _source(module: str) -> Path:
    return Path(importlib.import_module(module).__file__)


@pytest.mark.parametrize("module", MODULES)
def test_docstring_examples_run(module):
    mod = importlib.import_module(module)
    finder = doctest.DocTestFinder(exclude_empty=True)
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    for test in finder.find(mod, module):
        if test.examples:
            runner.run(test, out=lambda text: sys.stdout.write(text))
    result = runner.summarize(verbose=False)
    assert result.failed == 0, f"{result.failed} docstring example(s) of {module} failed (see the output above)"


def test_modules_with_examples_are_found():
    """The examples of the solver and of the reading, report, revision and
    hand-check code are all among the modules run above."""
    with_examples = {m for m in MODULES if ">>>" in _source(m).read_text(encoding="utf-8")}
    expected = {"dxf2frame.solver.model", "dxf2frame.solver.determinacy", "dxf2frame.solver.forces",
                "dxf2frame.solver.combinations", "dxf2frame.units", "dxf2frame.atomic", "dxf2frame.symbols"}
    assert expected <= with_examples


def _imports(path: Path) -> list[tuple[int, str, list[str]]]:
    """(level, module, names) of every import statement of a file."""
    out = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            out += [(0, a.name, []) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            out.append((node.level, node.module or "", [a.name for a in node.names]))
    return out


def test_solver_imports_only_itself_and_numerics():
    for path in sorted((ROOT / "solver").glob("*.py")):
        for level, module, _names in _imports(path):
            top = module.split(".")[0]
            if level:
                assert level == 1, f"{path.name}: reaches outside the solver ({'.' * level}{module})"
            else:
                assert top not in {"ezdxf", "dxf2frame", "solver"}, f"{path.name}: imports {module}"


def test_no_code_imports_a_top_level_solver():
    files = [p for folder in ("dxf2frame", "solver", "tests", "bench", "drawings")
             for p in sorted((ROOT / folder).rglob("*.py"))]
    for path in files:
        for level, module, _names in _imports(path):
            assert not (level == 0 and module.split(".")[0] == "solver"), f"{path}: imports {module!r}"


def test_every_module_imports_without_a_top_level_solver():
    code = ("import importlib, sys\n"
            f"for m in {MODULES!r}:\n"
            "    importlib.import_module(m)\n"
            "assert 'solver' not in sys.modules, 'a top-level solver module was imported'\n")
    proc = subprocess.run([sys.executable, "-c", code], cwd=ROOT / "tests", capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr


# -- the import graph of dxf2frame (solver excluded: its own package) ---------------------------


def _package_modules() -> dict[str, Path]:
    """dotted name -> file of every module of dxf2frame outside the solver."""
    base = ROOT / "dxf2frame"
    out = {}
    for p in sorted(base.rglob("*.py")):
        parts = ["dxf2frame", *p.relative_to(base).with_suffix("").parts]
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = p
    return out


def _edges() -> dict[str, set[tuple[str, tuple[str, ...]]]]:
    """module -> {(imported module, names)} for every import of dxf2frame code,
    lazy and type-checking imports included."""
    mods = _package_modules()
    out: dict[str, set[tuple[str, tuple[str, ...]]]] = {m: set() for m in mods}
    for mod, path in mods.items():
        pkg = mod if path.name == "__init__.py" else mod.rsplit(".", 1)[0]
        for level, module, names in _imports(path):
            if level:
                base = pkg.split(".")[: len(pkg.split(".")) - (level - 1)]
                target = ".".join(base + ([module] if module else []))
            elif module.startswith("dxf2frame"):
                target = module
            else:
                continue
            if target.startswith("dxf2frame.solver"):
                continue
            plain = []
            for n in names:
                if f"{target}.{n}" in mods:
                    out[mod].add((f"{target}.{n}", ()))
                else:
                    plain.append(n)
            if plain or not names:
                out[mod].add((target, tuple(plain)))
    return out


def test_no_import_cycles():
    import networkx as nx

    g = nx.DiGraph()
    for mod, targets in _edges().items():
        for target, _names in targets:
            # a package's __init__ imports its own modules: an edge from a module to the
            # package that contains it would be a cycle through the face, so name the module
            if target != mod and not mod.startswith(target + "."):
                g.add_edge(mod, target)
    cycles = list(nx.simple_cycles(g))
    assert cycles == [], f"import cycles: {cycles}"


def test_drawing_code_never_imports_reading_code():
    for mod, targets in _edges().items():
        if mod.startswith("dxf2frame.draw"):
            bad = [t for t, _n in targets if t.startswith("dxf2frame.read")]
            assert bad == [], f"{mod} imports {bad}"


def test_no_module_imports_a_private_name_of_another():
    for mod, targets in _edges().items():
        for target, names in targets:
            private = [n for n in names if n.startswith("_") and not n.startswith("__")]
            assert private == [], f"{mod} imports {private} from {target}"


#: long functions waiting to be split into named steps (none left)
_SPLIT_PENDING: set[str] = set()


def test_long_functions_say_why():
    """A function of dxf2frame over about 80 lines says in a comment why it is
    one piece ("Long by ..."); otherwise it is split into named steps."""
    for mod, path in _package_modules().items():
        lines = path.read_text(encoding="utf-8").split("\n")
        for node in ast.walk(ast.parse("\n".join(lines))):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)) and node.name not in _SPLIT_PENDING:
                body = lines[node.lineno - 1:node.end_lineno]
                if len(body) > 85:
                    assert any("# Long by" in line for line in body), f"{mod}.{node.name}: {len(body)} lines"


def test_the_file_opener_knows_the_entity_types_the_reader_reads():
    """drawing_file keeps its own list so that opening a file needs no reading
    code; it must name exactly the types the reader has a handler for."""
    from dxf2frame.drawing_file import READ_ENTITY_TYPES
    from dxf2frame.read.dispatch import HANDLERS

    assert set(HANDLERS) == READ_ENTITY_TYPES
