"""The package's architecture, checked by tools rather than by memory.

* the layer contract in pyproject.toml (import-linter): base < physics < io < analysis < render < jobs < cli,
  each layer importing only the layers below it;
* every module imports on its own in a fresh interpreter (no import cycle hidden by the order in which the
  tests happen to import things);
* the demo runs from a fresh interpreter through the library, without the command line imported first;
* outside deembed/cli/ no function imports a deembed module (only scikit-rf, matplotlib, pandas, scipy, jinja2
  and the standard library may be imported late); no module uses another module's private names; line parts
  are told apart by ``kind`` or isinstance, never by hasattr or the class name. Each has a commented list of
  the cases still open, which may only shrink.
"""
from __future__ import annotations

import ast
import os
import pkgutil
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import deembed

ROOT = Path(__file__).resolve().parents[1]
LAYERS = ("base", "physics", "io", "analysis", "render", "jobs", "cli")


def _modules():
    names = ["deembed", "deembed.__main__"]
    for info in pkgutil.walk_packages(deembed.__path__, "deembed."):
        names.append(info.name)
    return sorted(names)


def _fresh(code: str, timeout: float = 120.0):
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=timeout,
                          cwd=str(ROOT))


def test_every_subpackage_is_a_layer_and_nothing_sits_outside_them():
    top = sorted(p.name for p in Path(deembed.__path__[0]).iterdir()
                 if p.suffix == ".py" or (p.is_dir() and (p / "__init__.py").exists()))
    assert top == sorted(["__init__.py", "__main__.py", *LAYERS]), top


def test_layer_contract_holds():
    exe = Path(sys.executable).with_name("lint-imports")
    assert exe.exists(), "import-linter is a test dependency (pyproject.toml [test])"
    r = subprocess.run([str(exe), "--config", str(ROOT / "pyproject.toml")], capture_output=True, text=True,
                       cwd=str(ROOT), timeout=120)
    assert r.returncode == 0, r.stdout[-3000:] + r.stderr[-2000:]
    assert "0 broken" in r.stdout


def test_every_module_imports_alone_in_a_fresh_interpreter():
    mods = _modules()
    assert len(mods) > 30
    with ThreadPoolExecutor(max_workers=max(2, os.cpu_count() or 2)) as pool:
        results = list(pool.map(lambda m: (m, _fresh(f"import {m}")), mods))
    failed = {m: r.stderr.strip().splitlines()[-1:] for m, r in results if r.returncode != 0}
    assert not failed, failed


def test_the_demo_runs_from_a_fresh_interpreter_without_the_cli(tmp_path):
    code = ("import sys; from deembed.jobs.demo import run_demo; run_demo(sys.argv[1], echo=lambda *a: None); "
            "print('cli' if 'deembed.cli.app' in sys.modules else 'no cli')")
    r = subprocess.run([sys.executable, "-c", code, str(tmp_path / "demo")], capture_output=True, text=True,
                       cwd=str(ROOT), timeout=300)
    assert r.returncode == 0, r.stderr[-3000:]
    assert r.stdout.strip().endswith("no cli")
    assert (tmp_path / "demo" / "site" / "index.html").is_file()


# ------------------------------------------------------------------------------------------------------------
# The import and line-part rules of DEVELOPERS.md ("Architecture"), read from the source (AST), not from memory.

PKG = ROOT / "deembed"

LATE_THIRD_PARTY = {"skrf", "matplotlib", "pandas", "scipy", "jinja2",
                    "markupsafe"}  # markupsafe: jinja2's own escaping type (Markup), installed with jinja2
"""What a module outside cli/ may import inside a function (start-up time), besides the standard library."""

LATE_IMPORTS_PENDING = {
    # Function-level imports of the package's own modules outside cli/ that are still there, as
    # "file:function". This list may only shrink: move the import to the module's top (lint-imports and the
    # fresh-interpreter test above show whether a cycle results) and delete its line here. Owners in brackets.
    "deembed/__main__.py:run",                         # [perf] `python -m deembed` entry point
}

LATE_OPTIONAL = {
    "deembed/io/history.py:_Postgres.__init__": "psycopg",  # the optional `postgres` extra: not installed
}                                                                  # unless a postgresql:// store is used


def _sources(skip_cli: bool = False):
    for p in sorted(PKG.rglob("*.py")):
        rel = p.relative_to(ROOT).as_posix()
        if skip_cli and rel.startswith("deembed/cli/"):
            continue
        yield rel, ast.parse(p.read_text(encoding="utf-8"), filename=rel)


def _module_of(rel: str) -> list[str]:
    parts = rel[:-3].split("/")
    return parts[:-1] if parts[-1] == "__init__" else parts


def _import_target(rel: str, node: ast.ImportFrom) -> str:
    """The absolute module a ``from ... import`` names (relative imports resolved against ``rel``)."""
    if not node.level:
        return node.module or ""
    pkg = _module_of(rel) if rel.endswith("__init__.py") else _module_of(rel)[:-1]
    base = pkg[: len(pkg) - (node.level - 1)]
    return ".".join(base + ([node.module] if node.module else []))


def _function_imports(tree):
    """(qualified function name, import node) for every import statement inside a function."""
    out = []

    def walk(node, scope, in_function):
        for child in ast.iter_child_nodes(node):
            if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                walk(child, scope + [child.name], in_function or not isinstance(child, ast.ClassDef))
            elif isinstance(child, (ast.Import, ast.ImportFrom)):
                if in_function:
                    out.append((".".join(scope), child))
            else:
                walk(child, scope, in_function)

    walk(tree, [], False)
    return out


def test_own_modules_are_imported_at_module_top_outside_cli():
    """Outside deembed/cli/ a function imports only scikit-rf, matplotlib, pandas, scipy, jinja2 or the standard
    library; the package's own modules are imported at the module's top, so the import graph is the one
    import-linter sees (DEVELOPERS.md, "Architecture")."""
    own, other = set(), []
    for rel, tree in _sources(skip_cli=True):
        for func, node in _function_imports(tree):
            key = f"{rel}:{func}"
            if isinstance(node, ast.ImportFrom):
                targets = [_import_target(rel, node)]
            else:
                targets = [a.name for a in node.names]
            for t in targets:
                top = t.split(".")[0]
                if top == "deembed":
                    own.add(key)
                elif top in LATE_THIRD_PARTY or top in sys.stdlib_module_names:
                    continue
                elif LATE_OPTIONAL.get(key) == top:
                    continue
                else:
                    other.append(f"{key} imports {t} inside the function")
    new = sorted(own - LATE_IMPORTS_PENDING)
    assert not new, "import these deembed modules at the module's top: " + ", ".join(new)
    assert not other, other


def _deembed_module_names(rel: str, tree) -> set[str]:
    """Names in a module bound to a deembed module or object by an import."""
    names = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and _import_target(rel, node).split(".")[0] == "deembed":
            names.update(a.asname or a.name for a in node.names)
        elif isinstance(node, ast.Import):
            names.update((a.asname or a.name).split(".")[0] for a in node.names if a.name.startswith("deembed"))
    return names


PRIVATE_IMPORTS_PENDING: set[str] = set()
"""A module reaching into another's private name, as "file:name". May only shrink (it is empty now): make the
name public (renamed, with a docstring) or keep the code in its own module."""


def _private(name: str) -> bool:
    return name.startswith("_") and not (name.startswith("__") and name.endswith("__"))


def test_no_module_uses_another_modules_private_names():
    """``from .x import _y`` and ``x._y`` across deembed modules: what is shared is public and documented."""
    found = set()
    for rel, tree in _sources():
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom) and _import_target(rel, node).split(".")[0] == "deembed":
                found.update(f"{rel}:{a.name}" for a in node.names if _private(a.name))
                if node.module and any(_private(m) for m in node.module.split(".")):
                    found.add(f"{rel}:{node.module}")
            elif isinstance(node, ast.Import):
                found.update(f"{rel}:{a.name}" for a in node.names
                             if a.name.startswith("deembed") and any(_private(m) for m in a.name.split(".")))
        modules = _deembed_module_names(rel, tree)
        for node in ast.walk(tree):
            if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name) and node.value.id in modules
                    and _private(node.attr)):
                found.add(f"{rel}:{node.value.id}.{node.attr}")
    new = sorted(found - PRIVATE_IMPORTS_PENDING)
    assert not new, "private names used from another module: " + ", ".join(new)


HASATTR_ALLOWED = {
    # hasattr that is not about line parts, as "file: call".
    "deembed/base/signals.py: hasattr(signal, n)",                  # signals this platform has
    "deembed/base/signals.py: hasattr(signal, 'pthread_sigmask')",  # not on every platform
    "deembed/jobs/pool.py: hasattr(signal, s)",                     # signals this platform has
    "deembed/io/jsonfile.py: hasattr(obj, 'to_dict')",              # a typed result or anything JSON-like
    "deembed/io/sitefile.py: hasattr(d, 'isoformat')",              # a TOML date literal
    "deembed/render/pages.py: hasattr(value, '__html__')",          # jinja2/markupsafe's markup protocol
}

HASATTR_PENDING: set[str] = set()
"""hasattr on a line part still there; may only shrink (it is empty now: use part.kind or isinstance)."""


def test_line_parts_are_told_apart_by_kind_not_by_hasattr_or_class_name():
    """Line parts are asked ``part.kind`` (physics.line.LinePart) or isinstance, never hasattr or
    ``type(p).__name__`` (DEVELOPERS.md, "Line parts"). The command line (click's exceptions) is not scanned."""
    found, by_name = set(), []
    for rel, tree in _sources(skip_cli=True):
        for node in ast.walk(tree):
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id == "hasattr":
                found.add(f"{rel}: {ast.unparse(node)}")
            if isinstance(node, ast.Compare):
                for side in (node.left, *node.comparators):
                    if (isinstance(side, ast.Attribute) and side.attr in ("__name__", "__qualname__")
                            and isinstance(side.value, ast.Call) and getattr(side.value.func, "id", "") == "type"):
                        by_name.append(f"{rel}:{node.lineno} {ast.unparse(node)}")
    new = sorted(found - HASATTR_ALLOWED - HASATTR_PENDING)
    assert not new, "hasattr found (use part.kind or isinstance; or add a non-line-part use to HASATTR_ALLOWED): " \
                    + "; ".join(new)
    assert not by_name, by_name
