"""The package's architecture, checked by tools rather than by memory.

* the layer contract in pyproject.toml (import-linter): base < physics < io < analysis < render < jobs < cli,
  each layer importing only the layers below it;
* every module imports on its own in a fresh interpreter (no import cycle hidden by the order in which the
  tests happen to import things);
* the demo runs from a fresh interpreter through the library, without the command line imported first.
"""
from __future__ import annotations

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
