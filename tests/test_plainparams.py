"""Start-up: option values converted without pydantic give typer's own answers, and the common commands load
nothing they do not use. The reference for every conversion is typer's own converter (its pydantic adapter).
"""
import subprocess
import sys
from pathlib import Path
from typing import List, Optional

import pytest
import typer
from typer import _coercion, core
from typer.models import OptionInfo

from deembed.cli import plainparams

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_sweeps" / "dipole-40m.s1p"

CASES = [
    (str, ["abc", "", " 1.5 ", "1e3", "ü"]),
    (Optional[str], ["x", "30m"]),
    (int, ["2", "-3", "+4", "007", "1.0", " 2", "abc", "1e3", "", "2.5", 1000, 0, -7]),
    (Optional[int], ["1", "x"]),
    (float, ["1.5", "-2", "2e3", ".5", "5.", "+1E-3", " 1.5", "inf", "nan", "1e999", "abc", "1,5", "", 3, 0.95]),
    (Optional[float], ["0.25", "y"]),
    (List[str], [("a", "b"), ()]),
    (Optional[List[str]], [("1.2dB@14MHz",)]),
    (bool, [True, False]),
]


def _convert(build, annotation, value):
    desc = _coercion.resolve_type_descriptor(annotation=annotation, parameter_info=OptionInfo())
    rp = build(desc)
    try:
        return "ok", rp._coerce_value(value, param=None, ctx=None)
    except Exception as exc:  # typer raises BadParameter with pydantic's message
        return "error", f"{type(exc).__name__}: {exc}"


@pytest.mark.parametrize("annotation,values", CASES, ids=[repr(c[0]) for c in CASES])
def test_plain_conversion_equals_typers_own(annotation, values):
    plainparams.install()
    ours = core.build_runtime_param
    theirs = _coercion.build_runtime_param  # typer's own, untouched in its module
    assert getattr(ours, "_deembed_plain", False)
    for v in values:
        a = _convert(ours, annotation, v)
        b = _convert(theirs, annotation, v)
        assert repr(a) == repr(b) and type(a[1]) is type(b[1]), (annotation, v, a, b)


def _modules_after(args, tmp_path) -> set:
    code = ("import sys; from deembed.cli.app import main; rc = main(sys.argv[1:]); "
            "print('MODS:' + ' '.join(sorted(m for m in ('numpy', 'pandas', 'matplotlib', 'scipy', 'skrf', 'pydantic', "
            "'rich') if m in sys.modules))); sys.exit(0 if rc in (0, 1) else rc)")
    r = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True, timeout=120,
                       cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    return set(r.stdout.rsplit("MODS:", 1)[1].split())


def test_help_loads_only_typer(tmp_path):
    assert _modules_after(["--help"], tmp_path) == set()


def test_correct_without_plots_loads_numpy_only(tmp_path):
    mods = _modules_after(["correct", str(SAMPLE), "--cable", "rg8x", "--length", "36m", "--no-plots",
                           "--out", str(tmp_path / "o")], tmp_path)
    assert mods == {"numpy"}
    assert (tmp_path / "o" / "dipole-40m.table.csv").exists()


def _help_text(group, args):
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        try:
            group.main(args, prog_name="deembed", standalone_mode=False)
        except Exception as exc:  # a usage error: its one-line message, as main() prints it
            return f"{type(exc).__name__}: {exc.format_message()}"
    return buf.getvalue()


def test_top_level_help_builds_no_command_and_equals_typers_own():
    # reference: typer's own group, every command built by typer.main.get_command (what `app()` runs)
    import typer.main

    from deembed.cli.app import app, command

    lazy = command()
    ours = _help_text(lazy, ["--help"])
    assert lazy.commands._built == {}  # the listing came from the docstrings alone
    assert ours == _help_text(typer.main.get_command(app), ["--help"])
    for line in ("correct ", "characterize ", "trend "):
        assert "\n  " + line in ours


@pytest.mark.parametrize("name", ["correct", "budget", "site"])
def test_command_help_builds_that_command_only_and_equals_typers_own(name):
    import typer.main

    from deembed.cli.app import app, command

    lazy = command()
    ours = _help_text(lazy, [name, "--help"])
    assert set(lazy.commands._built) == {name}
    assert ours == _help_text(typer.main.get_command(app), [name, "--help"])
    assert "--out" in ours or name == "budget"


def test_lazy_commands_keep_names_and_suggestions():
    from deembed.cli.app import app, command

    lazy = command()
    assert list(lazy.commands) == [c.name for c in app.registered_commands]
    assert lazy.commands.get("nope") is None
    out = _help_text(lazy, ["corect"])
    assert "No such command 'corect'. Did you mean 'correct'" in out
