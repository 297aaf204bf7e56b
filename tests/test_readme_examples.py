"""Every command example in the README runs as written from the repository root on the bundled samples.

The examples are taken from the README's ```sh blocks (lines that start with ``deembed``) and run
through the command-line entry point in a scratch copy of the repository's sample folder, so they
write nowhere in the checkout. A compare, site or trend example may end with exit status 1 (outside
its limits: that is what it demonstrates); anything else must exit 0, and no example may end in an
``error:`` line (status 2). They run in README order, as a reader would type them.
"""
import re
import shlex
import shutil
from pathlib import Path

import pytest

from deembed.cli.app import main

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _examples():
    out = []
    for block in re.findall(r"```sh\n(.*?)```", README, flags=re.S):
        block = block.replace("\\\n", " ")  # a command continued on the next line
        for line in block.splitlines():
            line = line.strip()
            if line.startswith("deembed "):
                out.append(line)
    return out


EXAMPLES = _examples()


def test_there_are_examples_for_every_command():
    from deembed.cli.app import app
    import typer.main

    names = set(typer.main.get_command(app).commands)
    used = {shlex.split(e, comments=True)[1] for e in EXAMPLES}
    assert names <= used, f"commands without a README example: {sorted(names - used)}"


def test_readme_examples_run_in_order(tmp_path, monkeypatch, capsys):
    # one test, in README order: a later example may use what an earlier one wrote (a characterization)
    shutil.copytree(ROOT / "sample_sweeps", tmp_path / "sample_sweeps")
    monkeypatch.chdir(tmp_path)
    assert len(EXAMPLES) > 20
    for command in EXAMPLES:
        args = shlex.split(command, comments=True)[1:]
        rv = main(args)
        err = capsys.readouterr().err
        assert "error:" not in err, f"{command!r}: {err}"
        allowed = (0, 1) if args[0] in ("compare", "site", "trend") else (0,)
        assert rv in allowed, f"{command!r} exited {rv}: {err}"
    # nothing was written into the checkout's own sample folder by the examples run in the copy
    assert not list((ROOT / "sample_sweeps").rglob("*.sqlite"))
