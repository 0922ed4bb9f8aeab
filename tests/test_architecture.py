"""The package's shape: no import cycle (imports inside functions included), and every public module
declares its public names in ``__all__`` (common practice; STYLE: "re-exports only, short explicit __all__").

The graph is read from the source with :mod:`ast`, not by importing, so an import hidden inside a function
counts the same as one at the top of a module.  ``from package import name`` is an edge to the submodule
``package.name`` when there is one, else to the package itself.  Importing a submodule also runs its
packages' ``__init__``; those implicit edges are not counted (Python runs a package's ``__init__`` before
its submodules, so they cannot deadlock).
"""
import ast
import pathlib

ROOT = pathlib.Path(__file__).resolve().parents[1]
PKG = ROOT / "archsys"


def _modules():
    out = {}
    for path in sorted(PKG.rglob("*.py")):
        parts = list(path.relative_to(ROOT).with_suffix("").parts)
        is_pkg = parts[-1] == "__init__"
        if is_pkg:
            parts = parts[:-1]
        out[".".join(parts)] = (path, is_pkg)
    return out


def _edges(mods):
    graph = {m: set() for m in mods}
    for mod, (path, is_pkg) in mods.items():
        package = mod if is_pkg else mod.rpartition(".")[0]
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                targets = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                if node.level:
                    base = package.split(".")
                    base = base[: len(base) - node.level + 1]
                    source = ".".join(base + ([node.module] if node.module else []))
                else:
                    source = node.module or ""
                targets = [f"{source}.{a.name}" if f"{source}.{a.name}" in mods else source for a in node.names]
            else:
                continue
            for t in targets:
                while t and t not in mods and "." in t:
                    t = t.rpartition(".")[0]
                if t in mods and t != mod:
                    graph[mod].add(t)
    return graph


def _cycles(graph):
    """Strongly connected components with more than one module (Tarjan)."""
    index, low, stack, on, out = {}, {}, [], set(), []
    counter = [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in sorted(graph[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return out


def test_no_import_cycle_even_inside_functions():
    cycles = _cycles(_edges(_modules()))
    assert not cycles, cycles


def test_the_cycle_finder_finds_a_cycle():
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]


def test_every_public_module_declares_all():
    missing = []
    for mod, (path, is_pkg) in _modules().items():
        if any(part.startswith("_") for part in mod.split(".")[1:]) and not is_pkg:
            continue                                   # private modules and __main__
        tree = ast.parse(path.read_text(encoding="utf-8"))
        names = {t.id for node in tree.body if isinstance(node, (ast.Assign, ast.AnnAssign))
                 for t in (node.targets if isinstance(node, ast.Assign) else [node.target])
                 if isinstance(t, ast.Name)}
        if "__all__" not in names:
            missing.append(mod)
    assert not missing, missing
