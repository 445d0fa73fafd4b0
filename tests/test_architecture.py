"""The shape of the code: one home for each idea.

Read from the source with ``ast`` (nothing is imported):

- no import cycle between the project's modules (imports at module level
  and inside functions alike);
- no function or method longer than ``MAX_FUNCTION_LINES`` lines (from its
  ``def`` to its last line, docstring included);
- the engines never ask which probe model or which spectrum they hold: the
  models (``probe/detectors``) and the dispersions (``probe/gas``) answer
  through their own methods;
- the kinematics package ``trajectories`` never imports ``probe``.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGES = ("probe", "trajectories")
MAX_FUNCTION_LINES = 80


def _module_name(path):
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _sources():
    """{module name: (path, syntax tree)} of every .py file of the packages."""
    out = {}
    for package in PACKAGES:
        for path in sorted((ROOT / package).rglob("*.py")):
            out[_module_name(path)] = (path, ast.parse(path.read_text(), str(path)))
    return out


SOURCES = _sources()


def _is_package(module):
    return SOURCES[module][0].name == "__init__.py"


def _resolve(module, node):
    """Absolute name of the module a ``from ... import`` refers to."""
    if not node.level:
        return node.module
    base = module.split(".")
    base = base if _is_package(module) else base[:-1]
    base = base[:len(base) - (node.level - 1)]
    return ".".join(base + ([node.module] if node.module else []))


def _project_module(name):
    """The longest prefix of ``name`` that is a project module, or None."""
    parts = name.split(".")
    while parts:
        candidate = ".".join(parts)
        if candidate in SOURCES:
            return candidate
        parts.pop()
    return None


def _imported(module, tree):
    """Project modules imported anywhere in ``tree`` (``from a.b import c`` is
    an import of ``a.b.c`` when that is a module, else of ``a.b``)."""
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = _resolve(module, node)
            names = [f"{base}.{alias.name}" for alias in node.names] or [base]
        else:
            continue
        for name in names:
            target = _project_module(name)
            if target is not None and target != module:
                out.add(target)
    return out


def import_graph():
    """{module: set of project modules it imports}."""
    return {module: _imported(module, tree) for module, (_, tree) in SOURCES.items()}


def find_cycle(graph):
    """One cycle of ``graph`` as a list of modules (first == last), or None."""
    state = {}
    stack = []

    def visit(node):
        state[node] = "open"
        stack.append(node)
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == "open":
                return stack[stack.index(nxt):] + [nxt]
            if nxt not in state:
                found = visit(nxt)
                if found:
                    return found
        stack.pop()
        state[node] = "done"
        return None

    for node in sorted(graph):
        if node not in state:
            found = visit(node)
            if found:
                return found
    return None


def long_functions(limit=MAX_FUNCTION_LINES):
    """``path:line name (n lines)`` of every function longer than ``limit``."""
    out = []
    for path, tree in SOURCES.values():
        for node in ast.walk(tree):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                n = node.end_lineno - node.lineno + 1
                if n > limit:
                    out.append(f"{path.relative_to(ROOT)}:{node.lineno} {node.name} ({n} lines)")
    return sorted(out)


def _lines_with(text, where, outside=()):
    """``path:line`` of every line of the .py files under ``where`` (project
    folders) that contains ``text``, except under the folders ``outside``."""
    hits = []
    for path, _ in SOURCES.values():
        rel = path.relative_to(ROOT).as_posix()
        if not rel.startswith(where) or any(rel.startswith(o) for o in outside):
            continue
        for i, line in enumerate(path.read_text().splitlines(), 1):
            if text in line:
                hits.append(f"{rel}:{i}: {line.strip()}")
    return hits


# ---------------------------------------------------------------------------
def test_no_import_cycle_between_project_modules():
    cycle = find_cycle(import_graph())
    assert cycle is None, "import cycle: " + " -> ".join(cycle)


def test_no_function_longer_than_the_limit():
    offenders = long_functions()
    assert not offenders, (f"functions longer than {MAX_FUNCTION_LINES} lines:\n"
                           + "\n".join(offenders))


def test_only_the_detectors_know_whether_a_model_has_a_gap():
    # the gap is the detectors' business: everything else sees channels and
    # declared outputs
    hits = _lines_with("has_gap", "probe/", outside=("probe/detectors/",))
    assert hits == [], "\n".join(hits)


def test_no_code_chooses_by_comparing_the_stationary_kind():
    # the engine for a kind is looked up, not chosen by comparison
    hits = _lines_with("stationary_kind ==", "")
    assert hits == [], "\n".join(hits)


def _dispersion_classes():
    """Names of the classes defined in probe/gas/dispersion.py."""
    _, tree = SOURCES["probe.gas.dispersion"]
    return {node.name for node in tree.body if isinstance(node, ast.ClassDef)}


def _isinstance_of(names, where, outside):
    """``path:line`` of every ``isinstance(x, C)`` under ``where`` (not under
    ``outside``) whose class argument mentions one of ``names``."""
    hits = []
    for path, tree in SOURCES.values():
        rel = path.relative_to(ROOT).as_posix()
        if not rel.startswith(where) or any(rel.startswith(o) for o in outside):
            continue
        for node in ast.walk(tree):
            if (isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
                    and node.func.id == "isinstance" and len(node.args) == 2):
                mentioned = {n.id for n in ast.walk(node.args[1]) if isinstance(n, ast.Name)}
                mentioned |= {n.attr for n in ast.walk(node.args[1])
                              if isinstance(n, ast.Attribute)}
                if mentioned & names:
                    hits.append(f"{rel}:{node.lineno}")
    return hits


def test_nothing_outside_the_gas_asks_which_dispersion_it_holds():
    # a dispersion answers through its methods and attributes
    classes = _dispersion_classes() - {"Dispersion"}
    assert {"Bogoliubov", "Phonon"} <= classes
    hits = (_isinstance_of(classes, "probe/", outside=("probe/gas/",))
            + _lines_with("hasattr(disp", "probe/", outside=("probe/gas/",)))
    assert hits == [], "\n".join(hits)


def test_constants_have_one_home():
    # every module takes its physical constants from probe.constants (the
    # CODATA values of scipy.constants, kept in the cache folder; that a
    # command imports no scipy at all is checked by tests/test_startup.py)
    hits = (_lines_with("scipy.constants", "probe/", outside=("probe/constants.py",))
            + _lines_with("from scipy import constants", "", outside=("probe/constants.py",)))
    hits = [h for h in hits if not h.split(": ", 1)[1].startswith(("#", '"', "``", "(", "G)"))]
    assert hits == [], "\n".join(hits)


def test_trajectories_never_import_probe():
    # pure kinematics: the paths know nothing of gases or probes
    hits = {(module, target) for module, (_, tree) in SOURCES.items()
            if module.split(".")[0] == "trajectories"
            for target in _imported(module, tree) if target.split(".")[0] == "probe"}
    assert hits == set(), sorted(hits)


# ---------------------------------------------------------------------------
# the checks themselves, on small examples
# ---------------------------------------------------------------------------
def test_find_cycle_reports_a_cycle_and_accepts_a_tree():
    assert find_cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}}) == ["a", "b", "c", "a"]
    assert find_cycle({"a": {"b", "c"}, "b": {"c"}, "c": set()}) is None


def test_isinstance_checks_are_found_by_class_name():
    tree = ast.parse("def f(d):\n    return isinstance(\n        d, (gas.Phonon, int))\n")
    SOURCES["probe.engines._example"] = (ROOT / "probe" / "engines" / "_example.py", tree)
    try:
        assert _isinstance_of({"Phonon"}, "probe/", ("probe/gas/",)) == [
            "probe/engines/_example.py:2"]
    finally:
        del SOURCES["probe.engines._example"]


def test_relative_imports_resolve_to_project_modules():
    tree = ast.parse("from .base import Trajectory\nfrom . import spline\n"
                     "def f():\n    from probe.gas.dispersion import Bogoliubov\n")
    assert _imported("trajectories.analytic", tree) == {
        "trajectories.base", "trajectories.spline", "probe.gas.dispersion"}
