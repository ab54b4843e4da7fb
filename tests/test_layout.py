"""The folder tree is the architecture drawing: rules read from every module's imports (ast).

Layers, lowest first (a layer may import the layers listed for it, and itself)::

    case <- site <- plant, money <- model <- study <- export <- cli
    case <- uncertainty <- study

- ``plant`` and ``money`` never import each other; nothing below ``cli`` imports ``cli``; only
  ``cli`` imports ``export``; ``uncertainty`` knows nothing of case files (only ``case`` for
  errors, seeds and the thread limit).
- The root ``lcoe/__init__.py`` is the public face: it imports nothing when imported (the API
  is loaded on first use); modules import only ``__version__`` from it.
- No import circles, between packages or inside one (imports inside functions count).
- Only the command line prints; only ``export`` (and the command line) writes files;
  exporters take result types, constants and a few named text helpers from the layers that
  compute.
- One concept, one file: no two modules in a folder whose names differ only by a suffix
  (``bodies``/``body``, ``compare``/``compare_cli``), and no module name used twice in the
  package unless one of them is the command line of the other (in ``cli/``).
- No module over 600 lines; every package's docstring says what lives there and what it
  may import.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from collections import defaultdict
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PKG = ROOT / "lcoe"

#: What each layer may import besides itself.
ALLOWED = {
    "case": set(),
    "site": {"case"},
    "plant": {"site", "case"},
    "money": {"site", "case"},
    "model": {"plant", "money", "site", "case"},
    "uncertainty": {"case"},
    "study": {"model", "plant", "money", "site", "case", "uncertainty"},
    "export": {"study", "model", "plant", "money", "site", "case", "uncertainty"},
    "cli": {"export", "study", "model", "plant", "money", "site", "case", "uncertainty"},
}
#: Lines above which a module counts as too long.
MAX_LINES = 600


def _modules() -> dict[str, Path]:
    out = {}
    for p in sorted(PKG.rglob("*.py")):
        parts = list(p.relative_to(ROOT).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = p
    return out


MODULES = _modules()


def _layer(mod: str) -> str | None:
    if mod == "lcoe.__main__":  # python -m lcoe: the command line
        return "cli"
    parts = mod.split(".")
    return parts[1] if len(parts) > 1 else None


def _imports(mod: str) -> list[tuple[str, str | None, int]]:
    """(imported module, imported name or None, line) of every lcoe import, at any depth."""
    path = MODULES[mod]
    is_pkg = path.name == "__init__.py"
    out = []
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = mod.split(".") if is_pkg else mod.split(".")[:-1]
                base = base[: len(base) - (node.level - 1)]
                src = ".".join(base + ([node.module] if node.module else []))
            else:
                src = node.module or ""
            if src == "lcoe" or src.startswith("lcoe."):
                for a in node.names:
                    sub = f"{src}.{a.name}"
                    out.append((sub, None, node.lineno) if sub in MODULES else
                               (src, a.name, node.lineno))
        elif isinstance(node, ast.Import):
            out += [(a.name, None, node.lineno) for a in node.names
                    if a.name == "lcoe" or a.name.startswith("lcoe.")]
    return out


def test_every_module_sits_in_a_layer():
    assert len(MODULES) > 50, f"found only {len(MODULES)} modules under {PKG}"
    stray = [m for m in MODULES if m != "lcoe" and _layer(m) not in ALLOWED]
    assert not stray, f"modules outside the layer packages: {stray}"


def test_imports_run_down_the_layers():
    bad = []
    for mod in MODULES:
        me = _layer(mod)
        for target, name, line in _imports(mod):
            there = _layer(target)
            if there is None:  # the root package
                if name != "__version__" and mod != "lcoe":
                    bad.append(f"{MODULES[mod].relative_to(ROOT)}:{line} imports {name!r} from "
                               f"the root package (only __version__ may be)")
                continue
            if me is None or there == me or there in ALLOWED[me]:
                continue
            bad.append(f"{MODULES[mod].relative_to(ROOT)}:{line}: {me} imports {there} "
                       f"({target})")
    assert not bad, "imports against the layers:\n" + "\n".join(bad)


def test_root_package_imports_nothing_when_imported():
    tree = ast.parse((PKG / "__init__.py").read_text())
    eager = [n.lineno for n in tree.body if isinstance(n, (ast.Import, ast.ImportFrom))
             and not (isinstance(n, ast.ImportFrom) and n.module == "__future__")]
    assert not eager, f"lcoe/__init__.py imports at import time (lines {eager})"
    code = "import sys, lcoe; assert 'numpy' not in sys.modules; print(lcoe.load_case.__name__)"
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT)
    assert r.returncode == 0 and r.stdout.strip() == "load_case", r.stderr


def test_no_import_circles():
    graph = defaultdict(set)
    for mod in MODULES:
        if mod == "lcoe":
            continue
        for target, _, _ in _imports(mod):
            while target not in MODULES:
                target = target.rsplit(".", 1)[0]
            if target != mod and target != "lcoe":
                graph[mod].add(target)
    # Tarjan's strongly connected components
    index, low, stack, on, sccs, counter = {}, {}, [], set(), [], [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in graph[v]:
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
                sccs.append(sorted(comp))

    sys.setrecursionlimit(10_000)
    for v in list(MODULES):
        if v not in index and v != "lcoe":
            visit(v)
    assert not sccs, "import circles: " + "; ".join(" <-> ".join(c) for c in sccs)


#: Calls that write to the file system.
WRITERS = {"write_text", "write_bytes", "mkdir", "makedirs", "rmtree", "unlink", "remove",
           "rename", "replace", "to_csv", "to_parquet", "to_excel", "savefig", "mkdtemp",
           "NamedTemporaryFile", "touch", "symlink_to", "copyfile", "copy", "move", "save"}
#: Receivers whose method of that name is not a file operation (str.replace, dict.copy, ...).
HARMLESS_RECEIVERS = {"os.path"}


def _writes(tree) -> list[tuple[int, str]]:
    out = []
    for node in ast.walk(tree):
        if not isinstance(node, ast.Call):
            continue
        f = node.func
        if isinstance(f, ast.Name) and f.id == "open":
            mode = node.args[1] if len(node.args) > 1 else next(
                (k.value for k in node.keywords if k.arg == "mode"), None)
            if isinstance(mode, ast.Constant) and any(c in str(mode.value) for c in "wax+"):
                out.append((node.lineno, "open(..., write mode)"))
        elif isinstance(f, ast.Attribute) and f.attr in WRITERS:
            recv = ast.unparse(f.value)
            if f.attr in ("replace", "copy", "remove", "move", "save") and recv not in (
                    "os", "shutil", "wb", "workbook"):
                continue  # str.replace, dataclasses.replace, list.remove, dict.copy, ...
            if recv in HARMLESS_RECEIVERS:
                continue
            out.append((node.lineno, f"{recv}.{f.attr}()"))
    return out


def test_only_export_and_cli_write_files():
    bad = []
    for mod, path in MODULES.items():
        if _layer(mod) in ("export", "cli"):
            continue
        bad += [f"{path.relative_to(ROOT)}:{line}: {what}"
                for line, what in _writes(ast.parse(path.read_text()))]
    assert not bad, "files written outside lcoe/export:\n" + "\n".join(bad)


def _plural(a: str, b: str) -> bool:
    """``body``/``bodies``, ``claim``/``claims``: one name in the singular and the plural."""
    short, long_ = sorted((a, b), key=len)
    return long_ in (short + "s", short + "es") or (short.endswith("y")
                                                   and long_ == short[:-1] + "ies")


def _twins(a: str, b: str) -> bool:
    """Names that differ only by a suffix (``compare``/``compare_cli``) or a plural."""
    short, long_ = sorted((a, b), key=len)
    return a == b or long_.startswith(short + "_") or _plural(a, b)


def test_one_concept_one_file():
    files = [p for p in MODULES.values() if p.stem not in ("__init__", "__main__")]
    bad = []
    for i, p in enumerate(files):
        for q in files[i + 1:]:
            if not _twins(p.stem, q.stem):
                continue
            if p.parent == q.parent:  # suffix or plural in one folder
                bad.append(f"{p.relative_to(ROOT)} / {q.relative_to(ROOT)}")
            elif "cli" not in (p.parent.name, q.parent.name) and (
                    p.stem == q.stem or _plural(p.stem, q.stem)):
                bad.append(f"{p.relative_to(ROOT)} / {q.relative_to(ROOT)}")  # same or plural
    assert not bad, "twin files (one concept in two files):\n" + "\n".join(bad)


@pytest.mark.parametrize("path", sorted(MODULES.values()), ids=lambda p: str(p.relative_to(PKG)))
def test_module_size(path):
    n = len(path.read_text().splitlines())
    assert n <= MAX_LINES, f"{path.relative_to(ROOT)} has {n} lines (split it along the physics " \
                           f"or the finance)"


def test_every_package_says_what_lives_there_and_what_it_may_import():
    bad = []
    for mod, path in MODULES.items():
        if path.name != "__init__.py":
            continue
        doc = ast.get_docstring(ast.parse(path.read_text())) or ""
        if mod != "lcoe" and ("May import" not in doc or len(doc.splitlines()[0]) < 20):
            bad.append(str(path.relative_to(ROOT)))
    assert not bad, f"package docstrings without what lives there and 'May import': {bad}"


def test_examples_use_the_public_api():
    import lcoe

    for path in sorted((ROOT / "examples").glob("*.py")):
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("lcoe"):
                assert node.module == "lcoe", f"{path.name}:{node.lineno} imports from " \
                                              f"{node.module}; the examples use `from lcoe import`"
                for a in node.names:
                    assert a.name in lcoe.__all__ and callable(getattr(lcoe, a.name))


#: Functions the exporters take from the layers that compute: text helpers, the progress
#: protocol, and two computations still done while exporting a comparison (its summary
#: statistics and the ranking of its drivers), to be moved into the study's result.
EXPORT_MAY_CALL = {"constraint_label", "irr_text", "audit_sentence", "worst_verdict",
                   "claim_sentence", "input_labels", "phase", "drivers", "stats"}


def test_exporters_read_results():
    """From the layers that compute, exporters import result types and constants (CamelCase,
    UPPER_CASE) and the few functions listed above; anything from the case layer (labels)."""
    bad = []
    for mod in MODULES:
        if _layer(mod) != "export":
            continue
        for target, name, line in _imports(mod):
            if _layer(target) in ("export", "case") or name is None:
                continue
            if name[0].isupper() or name in EXPORT_MAY_CALL:
                continue
            bad.append(f"{MODULES[mod].relative_to(ROOT)}:{line}: {name} from {target}")
    assert not bad, "exporters calling computations:\n" + "\n".join(bad)


def test_only_the_command_line_prints():
    bad = []
    for mod, path in MODULES.items():
        if _layer(mod) == "cli":
            continue
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) \
                    and node.func.id == "print":
                bad.append(f"{path.relative_to(ROOT)}:{node.lineno}: print()")
            if isinstance(node, ast.Attribute) and node.attr in ("stdout", "stderr") \
                    and isinstance(node.value, ast.Name) and node.value.id == "sys":
                bad.append(f"{path.relative_to(ROOT)}:{node.lineno}: sys.{node.attr}")
    assert not bad, "printing outside lcoe/cli:\n" + "\n".join(bad)
