"""The package's layers: imports point down only, with no circle, lazy imports included.

physics, units, files, parameters, constraints (0) <- om, driver, total_coloring, components,
case (1)
<- system (2) <-
optimum (3) <- studies (4) <- report (5) <- cli (6) <- __main__ (7). The physics imports nothing
from OpenMDAO, and only the command line parses arguments.
"""
import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "mdao"
LAYERS = (("mdao.physics", 0), ("mdao.units", 0), ("mdao.files", 0), ("mdao.parameters", 0),
          ("mdao.constraints", 0), ("mdao.om", 1), ("mdao.driver", 1), ("mdao.total_coloring", 1),
          ("mdao.components", 1), ("mdao.case", 1),
          ("mdao.system", 2), ("mdao.optimum", 3), ("mdao.studies", 4), ("mdao.report", 5),
          ("mdao.cli", 6), ("mdao.__main__", 7))


def _modules():
    mods = {}
    for f in PACKAGE.rglob("*.py"):
        parts = list(f.relative_to(PACKAGE.parent).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        mods[".".join(parts)] = f
    return mods


def _layer(name):
    for prefix, level in LAYERS:
        if name == prefix or name.startswith(prefix + ".") or name.startswith(prefix + "_"):
            return level
    return None


def _imports(path):
    """Every module an ``import`` statement names, at any depth (lazy imports too)."""
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            out |= {a.name for a in node.names}
        elif isinstance(node, ast.ImportFrom) and node.module and not node.level:
            out |= {node.module} | {f"{node.module}.{a.name}" for a in node.names}
    return out


def _graph():
    mods = _modules()

    def resolve(target):
        while target and target not in mods:
            target = target.rpartition(".")[0]
        return target or None

    graph = {}
    for name, path in mods.items():
        targets = {resolve(t) for t in _imports(path) if t.startswith("mdao")}
        graph[name] = {t for t in targets if t and t != name and not name.startswith(t + ".")}
    return graph


def test_every_module_has_a_layer():
    assert [m for m in _modules() if m != "mdao" and _layer(m) is None] == []


def test_imports_point_down():
    up = [f"{a} -> {b}" for a, targets in _graph().items() for b in targets
          if _layer(a) is not None and _layer(b) is not None and _layer(b) > _layer(a)]
    assert up == []


def test_no_import_circle():
    graph = _graph()
    circles = []

    def visit(node, stack):
        for nxt in graph.get(node, ()):
            if nxt in stack:
                circles.append(" -> ".join(stack[stack.index(nxt):] + [nxt]))
            elif len(stack) < 12:
                visit(nxt, stack + [nxt])

    for start in graph:
        visit(start, [start])
    assert circles == []


def test_physics_is_plain_numpy():
    for name, path in _modules().items():
        if _layer(name) == 0:
            assert not any(t.split(".")[0] == "openmdao" for t in _imports(path)), name


def test_argparse_only_in_the_command_line():
    users = [n for n, p in _modules().items() if "argparse" in _imports(p)]
    assert all(_layer(n) >= 6 for n in users), users
