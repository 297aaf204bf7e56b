"""Hostile input, faults and interruption: every reproduction of issue 16 as a test.

The promises checked (README, "Exit status" and "Hostile input"): bad input ends in one ``error:`` line
naming the file or option, exit status 2; results that cannot be written end in exit status 3 naming the
path; an interrupted run ends in 128 + the signal; in every one of these cases the output folder keeps
exactly what it held before (no temporary files, no partial set, no lock left behind) and no input is
changed. The facts these rest on are facts of the trade or of the operating system (common practice, no
source): a passive load reflects at most |Gamma| = 1; a device file such as /dev/zero never ends; SIGTERM
is what schedulers and ``kill`` send, and the shell reports a process ended by signal N as 128 + N; a
process killed with SIGKILL cannot clean up after itself.

The disk-full case uses a real, tiny tmpfs when the tests run as root (mounting needs it) and an
injected ENOSPC otherwise. Waits on other processes are bounded (a hang guard, not a speed check).
"""
from __future__ import annotations

import errno
import json
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pytest

from deembed.base.errors import InputFileError, OptionError
from deembed.cli.app import main

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_sweeps"
LINE = ["--cable", "rg213", "--length", "30m"]
IS_ROOT = hasattr(os, "geteuid") and os.geteuid() == 0
HANG_GUARD_S = 300  # a bound on waiting for another process: only a hang reaches it


def run(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def one_error_line(err: str, *needles) -> str:
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    assert lines[0].startswith("error: ") and "Traceback" not in err, err
    for n in needles:
        assert str(n) in lines[0], lines[0]
    return lines[0]


def listing(folder: Path) -> dict:
    """Every file under ``folder`` (hidden ones too) with its bytes: the folder's whole state."""
    if not folder.exists():
        return {}
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def write_sweep(path: Path, n: int = 201, f0=7.0e6, f1=7.3e6, scale=0.3) -> Path:
    """An invented analyzer-end sweep (|Gamma| <= 0.6, a phase turning with frequency) as RI Touchstone."""
    f = np.linspace(f0, f1, n)
    g = scale * (1 + np.cos(f / 3e4)) / 2 * np.exp(-2j * np.pi * f * 3e-7) + 0.05
    rows = np.column_stack([f / 1e6, g.real, g.imag])
    with open(path, "w") as fh:
        fh.write("! invented test sweep\n# MHz S RI R 50\n")
        np.savetxt(fh, rows, fmt="%.9f %.9f %.9f")
    return path


def spawn(*args, **kw):
    return subprocess.Popen([sys.executable, "-m", "deembed", *map(str, args)], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, **kw)


def wait_for(cond, what: str):
    end = time.monotonic() + HANG_GUARD_S
    while not cond():
        assert time.monotonic() < end, f"gave up waiting for {what}"
        time.sleep(0.005)


def staging_of(out: Path) -> list:
    return sorted(out.glob(".deembed-stage-*")) if out.exists() else []


# ------------------------------------------------------------------------------------------------------
# 1. absurd values: refused with the line named, never a stalled plot


HUGE = "# MHz S RI R 50\n7.0 1e200 1e200\n7.1 0.1 0.2\n7.2 0.1 0.2\n"


def test_huge_value_is_refused_by_correct(tmp_path, capsys):
    (tmp_path / "h.s1p").write_text(HUGE)
    out = tmp_path / "o"
    code, _, err = run(capsys, "correct", tmp_path / "h.s1p", *LINE, "--out", out)
    assert code == 2
    one_error_line(err, "h.s1p, line 2", "|Gamma|")
    assert not out.exists()


def test_huge_value_is_refused_by_compare(tmp_path, capsys):
    (tmp_path / "h.s1p").write_text(HUGE)
    good = write_sweep(tmp_path / "good.s1p", 3, 7.0e6, 7.2e6)
    code, _, err = run(capsys, "compare", good, tmp_path / "h.s1p", *LINE, "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "h.s1p, line 2")


def test_huge_value_in_a_site_fails_its_entry_only_and_the_index_is_written(tmp_path, capsys):
    (tmp_path / "h.s1p").write_text(HUGE)
    write_sweep(tmp_path / "a.s1p")
    write_sweep(tmp_path / "a-after.s1p")
    write_sweep(tmp_path / "b.s1p", 3, 7.0e6, 7.2e6)
    (tmp_path / "site.toml").write_text(textwrap.dedent("""
        name = "hostile"
        [[antenna]]
        name = "fine"
        cable = "rg213"
        length = "30m"
        baseline = "a.s1p"
        latest = "a-after.s1p"
        [[antenna]]
        name = "huge"
        cable = "rg213"
        length = "30m"
        baseline = "b.s1p"
        latest = "h.s1p"
    """))
    out = tmp_path / "out"
    code, text, err = run(capsys, "site", "--no-record", tmp_path / "site.toml", "--out", out, "--workers", "2")
    assert code == 1, err
    summary = json.loads((out / "site.json").read_text())
    feeds = {f["name"]: f for f in summary["antennas"]}
    assert feeds["fine"]["verdict"] == "within_limits"
    assert feeds["huge"]["verdict"] == "error" and "|Gamma|" in feeds["huge"]["error"]
    assert (out / "index.html").is_file()


def test_plots_leave_out_far_off_values_instead_of_stalling(tmp_path):
    """Values near the float range once kept the rasterizer busy for many minutes: they are not drawn."""
    script = textwrap.dedent(f"""
        import numpy as np
        from types import SimpleNamespace
        from deembed.render import plots
        f = np.array([7.0e6, 7.1e6, 7.2e6])
        g = np.array([1e200 + 1e200j, 0.1 + 0.2j, 0.1 + 0.2j])
        corr = SimpleNamespace(freq_hz=f, gamma_analyzer=g, gamma_feedpoint=g[::-1].copy())
        for name in ("swr_plot", "return_loss_plot", "impedance_plot", "smith_plot"):
            getattr(plots, name)(corr).savefig({str(tmp_path)!r} + "/" + name + ".png")
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=HANG_GUARD_S)
    assert done.returncode == 0, done.stderr
    assert len(list(tmp_path.glob("*.png"))) == 4


def test_plot_bound_keeps_ordinary_values():
    from deembed.render.plots import shown

    v = shown(np.array([0.5, -3.0, 1e7, np.inf]), 1e6)
    assert v[0] == 0.5 and v[1] == -3.0 and np.isnan(v[2]) and np.isnan(v[3])


# ------------------------------------------------------------------------------------------------------
# 2. only regular files, within a size limit checked before reading


def test_device_as_sweep_is_refused(tmp_path, capsys):
    code, _, err = run(capsys, "correct", "/dev/zero", *LINE, "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "/dev/zero", "not a regular file")


def test_device_as_measured_two_port_in_a_line_file_is_refused(tmp_path, capsys):
    sweep = write_sweep(tmp_path / "s.s1p")
    (tmp_path / "line.toml").write_text('[[section]]\nmeasured = "/dev/zero"\n')
    code, _, err = run(capsys, "correct", sweep, "--line", tmp_path / "line.toml", "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "/dev/zero", "not a regular file")


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="no named pipes here")
def test_pipe_as_sweep_is_refused_without_blocking(tmp_path, capsys):
    os.mkfifo(tmp_path / "p.s1p")  # nobody writes to it: opening it for reading would wait forever
    code, _, err = run(capsys, "correct", tmp_path / "p.s1p", *LINE, "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "p.s1p", "pipe")


def test_size_limit_from_the_environment(tmp_path, capsys, monkeypatch):
    sweep = write_sweep(tmp_path / "s.s1p")  # about 7 kB
    monkeypatch.setenv("DEEMBED_MAX_INPUT_SIZE", "2kB")
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "s.s1p", "input size limit", "DEEMBED_MAX_INPUT_SIZE")
    monkeypatch.setenv("DEEMBED_MAX_INPUT_SIZE", "1MiB")
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", tmp_path / "o", "--no-plots")
    assert code == 0, err


def test_size_limit_option_and_a_bad_value(tmp_path, capsys):
    sweep = write_sweep(tmp_path / "s.s1p")
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", tmp_path / "o", "--max-input-size", "2kB")
    assert code == 2
    one_error_line(err, "input size limit")
    code, _, err = run(capsys, "--max-input-size=lots", "correct", sweep, *LINE, "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "--max-input-size", "lots")
    assert "DEEMBED_MAX_INPUT_SIZE" not in os.environ  # the option does not leak out of the command


def test_size_limit_holds_for_a_file_that_grows_after_the_check(tmp_path, monkeypatch):
    """The limit is enforced while reading too (the size seen by stat is not trusted alone)."""
    from deembed.io import inputfile

    p = tmp_path / "grow.s1p"
    p.write_bytes(b"x" * 5000)
    monkeypatch.setenv("DEEMBED_MAX_INPUT_SIZE", "4kB")
    real_fstat = os.fstat
    monkeypatch.setattr(inputfile, "check_input_file", lambda path, name=None: None)
    monkeypatch.setattr(inputfile.os, "fstat", lambda fd: os.stat_result((*real_fstat(fd)[:6], 10, *real_fstat(fd)[7:])))
    with pytest.raises(InputFileError, match="input size limit"):
        inputfile.read_input_bytes(p)


def test_parse_size_units():
    from deembed.io.inputfile import parse_size

    assert parse_size("256MiB") == 256 * 1024 ** 2
    assert parse_size("1GB") == 10 ** 9
    assert parse_size("500kB") == 500_000
    assert parse_size("123456") == 123456
    for bad in ("", "12 parsecs", "-5MB", "0.5kB", "1e400"):
        with pytest.raises(OptionError):
            parse_size(bad)


# ------------------------------------------------------------------------------------------------------
# 3. no output may replace an input


def test_site_output_that_would_replace_a_latest_sweep_is_refused(tmp_path, capsys):
    data = tmp_path / "data"
    data.mkdir()
    write_sweep(data / "a.s1p")
    write_sweep(data / "a.feedpoint.s1p", scale=0.5)  # the latest sweep, named like a's corrected output
    (tmp_path / "site.toml").write_text(textwrap.dedent("""
        [[antenna]]
        name = "data"
        cable = "rg213"
        length = "30m"
        baseline = "data/a.s1p"
        latest = ["data/a.feedpoint.s1p"]
    """))
    before = listing(tmp_path)
    code, _, err = run(capsys, "site", "--no-record", tmp_path / "site.toml", "--out", tmp_path)
    assert code == 2
    one_error_line(err, "site.toml", "would replace the input", "a.feedpoint.s1p")
    assert listing(tmp_path) == before


def test_output_that_would_replace_a_measured_two_port_of_a_line_file_is_refused(tmp_path, capsys, monkeypatch):
    write_sweep(tmp_path / "sweep.s1p")
    # a 2-port (a short adapter, Touchstone 2.0 so any name will do) unluckily named like the summary output
    f = np.linspace(7.0e6, 7.3e6, 11)
    rows = "".join(f"{x / 1e6:.6f} 0 0 0.99 0 0.99 0 0 0\n" for x in f)
    (tmp_path / "sweep.summary.json").write_text(
        "[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 2\n[Two-Port Data Order] 12_21\n"
        f"[Number of Frequencies] {f.size}\n[Network Data]\n{rows}[End]\n")
    (tmp_path / "line.toml").write_text('[[section]]\nmeasured = "sweep.summary.json"\n'
                                        '[[section]]\ncable = "rg213"\nlength = "30m"\n')
    before = listing(tmp_path)
    monkeypatch.chdir(tmp_path)
    code, _, err = run(capsys, "correct", "sweep.s1p", "--line", "line.toml", "--out", ".", "--no-plots")
    assert code == 2
    one_error_line(err, "--out", "sweep.summary.json", "input")
    assert listing(tmp_path) == before


def test_correct_into_the_sweeps_own_folder_keeps_the_sweep(tmp_path, capsys):
    sweep = write_sweep(tmp_path / "x.s1p")
    before = sweep.read_bytes()
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", tmp_path, "--no-plots")
    assert code == 0, err
    assert sweep.read_bytes() == before and (tmp_path / "x.feedpoint.s1p").is_file()


# ------------------------------------------------------------------------------------------------------
# 4. write failures: exit 3, the path named, the folder as it was


def test_folder_in_the_way_of_an_output_file(tmp_path, capsys):
    sweep = write_sweep(tmp_path / "x.s1p")
    out = tmp_path / "o"
    (out / "x.summary.json").mkdir(parents=True)
    (out / "keep.txt").write_text("earlier work")
    before = listing(out)
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out, "--no-plots")
    assert code == 3
    one_error_line(err, "x.summary.json", "folder")
    assert listing(out) == before and not staging_of(out)


def test_out_below_a_file(tmp_path, capsys):
    (tmp_path / "afile").write_text("not a folder")
    code, _, err = run(capsys, "site", "--no-record", SAMPLES / "ridgeback-hill.site.toml", "--out", tmp_path / "afile" / "sub")
    assert code == 3
    one_error_line(err, "afile")


@pytest.mark.parametrize("command", ["correct", "characterize", "compare", "locate"])
@pytest.mark.parametrize("below", [False, True], ids=["out is a file", "out below a file"])
def test_a_file_where_the_results_folder_goes_is_exit_3_for_every_command(tmp_path, capsys, command, below):
    """One rule (README, exit statuses): a file standing where the results folder (or a folder above it) goes
    means the results cannot be written: exit status 3, the file named, the file kept as it was."""
    (tmp_path / "afile").write_text("keep me")
    out = tmp_path / "afile" / "sub" if below else tmp_path / "afile"
    sweep = write_sweep(tmp_path / "x.s1p")
    args = {"correct": ["correct", sweep, *LINE, "--no-plots"],
            "characterize": ["characterize", "--open", SAMPLES / "dipole-40m-far-open.s1p"],
            "compare": ["compare", sweep, write_sweep(tmp_path / "y.s1p"), *LINE, "--draws", "0"],
            "locate": ["locate", SAMPLES / "dipole-40m.s1p", "--line", SAMPLES / "dipole-40m.line.toml"]}[command]
    code, _, err = run(capsys, *args, "--out", out)
    assert code == 3, err
    one_error_line(err, "afile", "is a file", "--out")
    assert (tmp_path / "afile").read_text() == "keep me"


def test_characterize_out_below_a_file_names_no_temporary_file(tmp_path, capsys):
    (tmp_path / "afile").write_text("x")
    code, _, err = run(capsys, "characterize", "--open", SAMPLES / "dipole-40m-far-open.s1p",
                       "--short", SAMPLES / "dipole-40m-far-short.s1p", "--out", tmp_path / "afile" / "run")
    assert code == 3
    line = one_error_line(err, "afile")
    assert ".run.s2p." not in line and "deembed-stage" not in line


def test_characterize_out_in_a_missing_folder_creates_it(tmp_path, capsys):
    code, _, err = run(capsys, "characterize", "--open", SAMPLES / "dipole-40m-far-open.s1p",
                       "--short", SAMPLES / "dipole-40m-far-short.s1p", "--out", tmp_path / "missing" / "run")
    assert code == 0, err
    assert sorted(os.listdir(tmp_path / "missing" / "run")) == ["dipole-40m-far.line.s2p"]


@pytest.fixture
def small_fs(tmp_path):
    """A real 160 KiB file system (tmpfs) when running as root; None where mounting is not allowed."""
    mnt = tmp_path / "small"
    mnt.mkdir()
    if not IS_ROOT or subprocess.run(["mount", "-t", "tmpfs", "-o", "size=160k", "tmpfs", str(mnt)],
                                     capture_output=True).returncode != 0:
        yield None
        return
    try:
        yield mnt
    finally:
        subprocess.run(["umount", str(mnt)], capture_output=True)


def test_full_disk_leaves_the_folder_as_it_was(tmp_path, capsys, small_fs, monkeypatch):
    sweep = write_sweep(tmp_path / "x.s1p", n=2001)
    if small_fs is not None:
        out = small_fs / "o"
    else:  # no mount allowed here: the first output placed under --out fails as a full disk would
        out = tmp_path / "o"
        real = os.replace

        def full(src, dst, *a, **k):
            if str(out) in str(dst):
                raise OSError(errno.ENOSPC, "No space left on device", str(dst))
            return real(src, dst, *a, **k)
        monkeypatch.setattr(os, "replace", full)
    out.mkdir()
    (out / "x.summary.json").write_text('{"earlier": true}\n')
    before = listing(out)
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out)
    assert code == 3
    one_error_line(err, "disk is full")
    assert listing(out) == before and not staging_of(out)


@pytest.mark.skipif(not hasattr(os, "geteuid"), reason="POSIX permissions")
def test_read_only_out(tmp_path, capsys):
    sweep = write_sweep(tmp_path / "x.s1p")
    out = tmp_path / "ro"
    out.mkdir()
    if IS_ROOT:  # root writes through permission bits: use a read-only file system instead
        if subprocess.run(["mount", "-t", "tmpfs", "-o", "ro,size=64k", "tmpfs", str(out)],
                          capture_output=True).returncode != 0:
            pytest.skip("cannot mount a read-only file system here")
    else:
        out.chmod(0o555)
    try:
        code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out, "--no-plots")
        assert code == 3
        one_error_line(err, str(out))
        assert listing(out) == {}
    finally:
        if IS_ROOT:
            subprocess.run(["umount", str(out)], capture_output=True)
        out.chmod(0o755)


def test_write_failure_status_is_not_the_check_failed_status():
    from deembed.base.errors import OutputWriteError
    from deembed.cli import app

    assert OutputWriteError("x", "y").exit_status == app.EXIT_WRITE_FAILED == 3
    assert len({app.EXIT_OK, app.EXIT_CHECK_FAILED, app.EXIT_BAD_INPUT, app.EXIT_WRITE_FAILED,
                app.EXIT_INTERNAL}) == 5


# ------------------------------------------------------------------------------------------------------
# 5. interruption: a real run stopped by a signal leaves the folder as it was


@pytest.fixture(scope="module")
def big_sweep(tmp_path_factory):
    """A 200 000-point sweep: its outputs take seconds to write, time enough to interrupt them."""
    return write_sweep(tmp_path_factory.mktemp("big") / "big.s1p", n=200_000, f0=1e6, f1=30e6)


@pytest.mark.parametrize("sig, status", [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_signal_during_a_real_run_leaves_the_folder_as_it_was(tmp_path, big_sweep, sig, status):
    out = tmp_path / "o"
    out.mkdir()
    (out / "big.summary.json").write_text('{"from": "last year"}\n')
    (out / "notes.txt").write_text("keep me")
    before = listing(out)
    proc = spawn("correct", big_sweep, *LINE, "--out", out, "--draws", "0")
    wait_for(lambda: staging_of(out) or proc.poll() is not None, "the run to start writing")
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=HANG_GUARD_S)
    assert proc.returncode == status, err
    assert "Traceback" not in err and ("stopped by" in err or "interrupted" in err), err
    assert listing(out) == before  # no temporary CSV, no partial set, no lock, no staging folder


def _children(pid: int) -> list:
    kids = []
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            try:
                stat = (d / "stat").read_text()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == pid:
                kids.append(int(d.name))
    return kids


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


def _slow_site(tmp_path: Path, names=("a", "b", "c", "d", "e")) -> Path:
    """A site whose antennas each take seconds (2001-point sweeps with their uncertainty draws)."""
    sweep = write_sweep(tmp_path / "s.s1p", n=2001, f0=1e6, f1=30e6)
    for name in names:
        os.symlink(sweep, tmp_path / f"{name}.s1p")
        os.symlink(sweep, tmp_path / f"{name}-after.s1p")
    (tmp_path / "site.toml").write_text("".join(
        f'[[antenna]]\nname = "{n}"\ncable = "rg213"\nlength = "30m"\nbaseline = "{n}.s1p"\nlatest = "{n}-after.s1p"\n'
        for n in names))
    return tmp_path / "site.toml"


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="needs /proc to find the workers")
@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGTERM])
def test_site_workers_end_with_the_parent(tmp_path, sig):
    site = _slow_site(tmp_path)
    out = tmp_path / "out"
    proc = spawn("site", "--no-record", site, "--out", out, "--workers", "2")
    # the first antenna's outputs are in the staging folder: a worker is writing, three antennas are to come
    wait_for(lambda: any(any(s.iterdir()) for s in staging_of(out)) or proc.poll() is not None,
             "the workers to start writing")
    workers = _children(proc.pid)
    assert proc.poll() is None and workers, "the run ended before it could be interrupted"
    proc.send_signal(sig)
    proc.communicate(timeout=HANG_GUARD_S)
    wait_for(lambda: not any(_alive(w) for w in workers), "the workers to end")
    assert proc.returncode == (-9 if sig == signal.SIGKILL else 143)
    visible = [k for k in listing(out) if not k.startswith(".deembed-")]
    assert visible == []  # nothing was moved into --out; a killed run's staging folder is hidden
    # the next run takes over the lock and clears the killed run's staging folder
    sweep = write_sweep(tmp_path / "small.s1p")
    done = subprocess.run([sys.executable, "-m", "deembed", "correct", str(sweep), *LINE, "--out", str(out),
                           "--no-plots"], capture_output=True, text=True, timeout=HANG_GUARD_S)
    assert done.returncode == 0, done.stderr
    assert not staging_of(out) and not (out / ".deembed-lock").exists() and (out / "small.summary.json").is_file()


# ------------------------------------------------------------------------------------------------------
# 6. TOML shape bounded before parsing, in every kind of TOML file


HOSTILE_TOML = {
    "deep arrays": "a = " + "[" * 1000 + "]" * 1000 + "\n",
    "deep inline tables": "a = " + "{b = " * 600 + "1" + "}" * 600 + "\n",
    "long dotted key": ".".join(["k"] * 20000) + " = 1\n",
    "long table name": "[" + ".".join(["t"] * 20000) + "]\n",
    "many tables": "".join(f"[t{i}]\n" for i in range(6000)),
    "many inline tables": "a = [" + ",".join("{x=1}" for _ in range(6000)) + "]\n",
    "too big": "# " + "x" * (1024 ** 2 + 10) + "\n",
}


@pytest.mark.parametrize("case", sorted(HOSTILE_TOML))
@pytest.mark.parametrize("kind", ["line", "cables", "bands", "site"])
def test_hostile_toml_is_refused_in_every_kind_of_file(tmp_path, capsys, case, kind):
    bad = tmp_path / f"bad-{kind}.toml"
    bad.write_text(HOSTILE_TOML[case])
    sweep = write_sweep(tmp_path / "s.s1p")
    out = tmp_path / "o"
    args = {"line": ["correct", sweep, "--line", bad, "--out", out],
            "cables": ["correct", sweep, *LINE, "--catalog", bad, "--out", out],
            "bands": ["correct", sweep, *LINE, "--bands-file", bad, "--out", out],
            "site": ["site", "--no-record", bad, "--out", out]}[kind]
    code, _, err = run(capsys, *args)
    assert code == 2
    one_error_line(err, bad.name)
    assert not out.exists()


def test_toml_bounds_leave_ordinary_files_alone():
    from deembed.io.tomlbounds import check_toml_bounds

    for p in [*SAMPLES.glob("*.toml"), *(ROOT / "deembed" / "data").glob("*.toml")]:
        check_toml_bounds(p.read_text(encoding="utf-8"), str(p))
    # dots inside strings, numbers and comments are not key parts
    check_toml_bounds('a = "' + "." * 100 + '"\nb = 1.5 # ' + "." * 100 + "\nc = [1.5, 2.5]\n'x.y' = 1\n", "t")


def test_toml_with_a_byte_order_mark_reads(tmp_path, capsys):
    text = (SAMPLES / "ridgeback-hill.site.toml").read_text(encoding="utf-8")
    site = tmp_path / "site.toml"
    site.write_bytes(b"\xef\xbb\xbf" + text.encode())
    for f in SAMPLES.glob("*"):
        if f.name != "ridgeback-hill.site.toml":
            os.symlink(f, tmp_path / f.name)
    code, _, err = run(capsys, "site", "--no-record", site, "--out", tmp_path / "o", "--workers", "1")
    assert code in (0, 1), err
    assert "error" not in err


FUZZ = textwrap.dedent("""
    import os, sys, tempfile
    from hypothesis import given, settings, strategies as st, HealthCheck
    from deembed.base.errors import InputFileError
    from deembed.io.tomlfile import load_toml

    folder = tempfile.mkdtemp()
    ALPHABET = st.sampled_from(list('[]{}=.,"\\'#\\n ab1_-+e') + ['\"\"\"', "'''", '[[', ']]', '\\\\u00', 'true'])
    NESTED = st.recursive(st.sampled_from(["1", "'s'", "1.5", "[]", "{}"]),
                          lambda inner: st.one_of(inner.map(lambda x: "[" + x + "]"),
                                                  inner.map(lambda x: "{a = " + x + "}")), max_leaves=200)

    def check(text):
        p = os.path.join(folder, "f.toml")
        with open(p, "w", encoding="utf-8", errors="surrogatepass") as fh:
            fh.write(text)
        try:
            assert isinstance(load_toml(p), dict)
        except InputFileError:
            pass

    @settings(max_examples=400, deadline=None, suppress_health_check=list(HealthCheck), database=None)
    @given(st.lists(ALPHABET, max_size=400).map("".join))
    def fuzz_tokens(text):
        check(text)

    @settings(max_examples=150, deadline=None, suppress_health_check=list(HealthCheck), database=None)
    @given(NESTED, st.integers(1, 3000), st.integers(0, 40))
    def fuzz_shapes(value, reps, dots):
        check("a = " + value + "\\n")
        check("a = " + "[" * reps + "]" * reps + "\\n")
        check(".".join(["k"] * (dots + 1)) + " = 1\\n")
        check("x = [" + ",".join(["{y=1}"] * reps) + "]\\n")

    @settings(max_examples=200, deadline=None, suppress_health_check=list(HealthCheck), database=None)
    @given(st.text(max_size=300))
    def fuzz_text(text):
        check(text)

    fuzz_tokens()
    fuzz_shapes()
    fuzz_text()
    print("ok")
""")


@pytest.mark.skipif(sys.platform == "win32", reason="resource limits are POSIX")
def test_toml_reader_fuzz_under_cpu_and_memory_bounds():
    """Fuzzing the TOML reader in a process held to 1 GiB of address space and 120 s of CPU: every input
    reads or is refused as an InputFileError; none crashes, recurses out, or exhausts the bounds."""
    import resource

    def limits():
        resource.setrlimit(resource.RLIMIT_AS, (1024 ** 3, 1024 ** 3))
        resource.setrlimit(resource.RLIMIT_CPU, (120, 120))

    env = dict(os.environ, OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1")
    done = subprocess.run([sys.executable, "-c", FUZZ], capture_output=True, text=True, preexec_fn=limits,
                          env=env, timeout=HANG_GUARD_S)
    assert done.returncode == 0 and done.stdout.strip() == "ok", done.stderr[-3000:]


# ------------------------------------------------------------------------------------------------------
# 7. two runs into one --out


def test_second_run_into_a_locked_out_is_refused(tmp_path, capsys):
    import fcntl

    sweep = write_sweep(tmp_path / "x.s1p")
    out = tmp_path / "o"
    out.mkdir()
    fd = os.open(out / ".deembed-lock", os.O_RDWR | os.O_CREAT)
    fcntl.flock(fd, fcntl.LOCK_EX)
    os.write(fd, b"4242\n")
    try:
        code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out, "--no-plots")
    finally:
        os.close(fd)
    assert code == 3
    one_error_line(err, "another deembed run", "4242")
    assert sorted(os.listdir(out)) == [".deembed-lock"]


def test_a_killed_lock_holder_leaves_no_stuck_lock(tmp_path, capsys):
    sweep = write_sweep(tmp_path / "x.s1p")
    out = tmp_path / "o"
    holder = subprocess.Popen([sys.executable, "-c", textwrap.dedent(f"""
        import sys, time
        from deembed.io.outfolder import OutputFolder
        with OutputFolder({str(out)!r}):
            print("locked", flush=True)
            time.sleep(600)
    """)], stdout=subprocess.PIPE, text=True)
    assert holder.stdout.readline().strip() == "locked"
    holder.kill()
    holder.wait(timeout=HANG_GUARD_S)
    assert (out / ".deembed-lock").exists() and staging_of(out)  # left behind by the killed run
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out, "--no-plots")
    assert code == 0, err
    assert not (out / ".deembed-lock").exists() and not staging_of(out)


def test_a_run_started_second_is_refused_at_once_not_at_the_end_of_the_first(tmp_path):
    """The lock is taken when the command starts: a slow run that started first keeps the folder, and a quick
    run started after it is refused (exit 3, the first run's process named) while the first is still working,
    instead of winning the folder and the slow run being refused at its end."""
    slow = write_sweep(tmp_path / "slow.s1p", n=4001)
    quick = write_sweep(tmp_path / "quick.s1p")
    out = tmp_path / "o"
    lock = out / ".deembed-lock"
    first = spawn("correct", slow, *LINE, "--out", out, "--no-plots", "--draws", "3000")
    try:
        wait_for(lambda: lock.exists() and lock.read_text().strip() == str(first.pid), "the first run's lock")
        second = subprocess.run([sys.executable, "-m", "deembed", "correct", str(quick), *LINE, "--out", str(out),
                                 "--no-plots", "--draws", "0"], capture_output=True, text=True,
                                timeout=HANG_GUARD_S)
        first_still_working = first.poll() is None
        _, err1 = first.communicate(timeout=HANG_GUARD_S)
    finally:
        if first.poll() is None:
            first.kill()
    assert second.returncode == 3, second.stderr
    one_error_line(second.stderr, "another deembed run", f"process {first.pid}")
    assert first_still_working, "the second run was only refused after the first had finished"
    assert first.returncode == 0, err1
    assert sorted(os.listdir(out)) == ["slow.feedpoint.s1p", "slow.summary.json", "slow.table.csv"]


def test_a_command_killed_while_it_holds_the_folder_leaves_no_stuck_lock(tmp_path, capsys):
    """SIGKILL (no clean-up possible) of a real command that holds --out from its start: the next run takes the
    folder over and leaves neither lock nor staging folder."""
    slow = write_sweep(tmp_path / "slow.s1p", n=4001)
    out = tmp_path / "o"
    lock = out / ".deembed-lock"
    first = spawn("correct", slow, *LINE, "--out", out, "--no-plots", "--draws", "3000")
    try:
        wait_for(lambda: lock.exists() and lock.read_text().strip() == str(first.pid), "the first run's lock")
    finally:
        first.kill()
        first.communicate(timeout=HANG_GUARD_S)
    assert lock.exists()  # left behind by the killed run, held by no one
    code, _, err = run(capsys, "correct", write_sweep(tmp_path / "x.s1p"), *LINE, "--out", out, "--no-plots")
    assert code == 0, err
    assert sorted(os.listdir(out)) == ["x.feedpoint.s1p", "x.summary.json", "x.table.csv"]


def test_a_refused_command_leaves_no_folder_it_created(tmp_path, capsys):
    """The folder is created when the command starts (to hold the lock); bad input found after that removes it
    again, so nothing is left."""
    out = tmp_path / "new" / "o"
    code, _, err = run(capsys, "correct", write_sweep(tmp_path / "x.s1p"), "--length", "30m", "--vf", "2",
                       "--out", out)
    assert code == 2
    one_error_line(err, "--vf")
    assert not (tmp_path / "new").exists()


@pytest.mark.parametrize("command", ["correct", "compare", "locate", "site", "trend", "characterize"])
def test_every_command_that_writes_takes_its_out_before_reading_anything(tmp_path, capsys, command):
    """With another run holding --out, a command is refused at once (exit 3, that run's process named), before
    it reads a single input: here every input is missing, which would otherwise be exit 2."""
    import fcntl

    out = tmp_path / "o"
    out.mkdir()
    gone = tmp_path / "missing.s1p"
    args = {"correct": ["correct", gone, *LINE], "compare": ["compare", gone, tmp_path / "missing2.s1p", *LINE],
            "locate": ["locate", gone, *LINE], "site": ["site", "--no-record", tmp_path / "missing.site.toml"],
            "trend": ["trend", tmp_path / "missing.site.toml"],
            "characterize": ["characterize", "--open", gone]}[command]
    fd = os.open(out / ".deembed-lock", os.O_RDWR | os.O_CREAT)
    fcntl.flock(fd, fcntl.LOCK_EX)
    os.write(fd, b"4343\n")
    try:
        code, _, err = run(capsys, *args, "--out", out)
    finally:
        os.close(fd)
    assert code == 3, err
    one_error_line(err, "another deembed run", "4343")
    assert sorted(os.listdir(out)) == [".deembed-lock"]


def test_two_runs_racing_into_one_out_never_mix_their_outputs(tmp_path):
    """Two sweeps with the same name (so the same output names) and different point counts, run at once
    into one folder: each run ends with 0 or the clear 'busy' refusal, and the folder holds one run's
    complete set (every output has the same number of points)."""
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    write_sweep(tmp_path / "a" / "x.s1p", n=301)
    write_sweep(tmp_path / "b" / "x.s1p", n=401)
    out = tmp_path / "o"
    procs = [spawn("correct", tmp_path / d / "x.s1p", *LINE, "--out", out, "--no-plots") for d in ("a", "b")]
    results = [(p, *p.communicate(timeout=HANG_GUARD_S)) for p in procs]
    codes = [p.returncode for p, _, _ in results]
    assert all(c in (0, 3) for c in codes) and 0 in codes, [e for _, _, e in results]
    for p, _, err in results:
        if p.returncode == 3:
            one_error_line(err, "another deembed run")
    summary = json.loads((out / "x.summary.json").read_text())
    n = summary["sweep"]["points"]
    fp_rows = [ln for ln in (out / "x.feedpoint.s1p").read_text().splitlines() if ln and ln[0] not in "!#"]
    table_rows = (out / "x.table.csv").read_text().strip().splitlines()[1:]
    assert len(fp_rows) == len(table_rows) == n
    assert sorted(os.listdir(out)) == ["x.feedpoint.s1p", "x.summary.json", "x.table.csv"]


# ------------------------------------------------------------------------------------------------------
# 8. characterize: the same file twice, absurd offsets, absurd lengths: one line, no warnings


def test_characterize_same_file_twice(tmp_path, capsys):
    f = SAMPLES / "dipole-40m-far-open.s1p"
    code, _, err = run(capsys, "characterize", "--open", f, "--short", f, "--out", tmp_path / "x")
    assert code == 2
    one_error_line(err, "--short", "also given as --open")


def test_characterize_identical_standards_in_two_files(tmp_path, capsys):
    copy = tmp_path / "copy.s1p"
    copy.write_bytes((SAMPLES / "dipole-40m-far-open.s1p").read_bytes())
    code, _, err = run(capsys, "characterize", "--open", SAMPLES / "dipole-40m-far-open.s1p", "--short", copy,
                       "--out", tmp_path / "x")
    assert code == 2
    one_error_line(err, "cannot be told apart")


@pytest.mark.parametrize("option, value", [("--open-c", "1e300F"), ("--short-l", "1e300H")])
def test_characterize_absurd_standard_offsets(tmp_path, capsys, option, value):
    code, _, err = run(capsys, "characterize", "--open", SAMPLES / "dipole-40m-far-open.s1p",
                       "--short", SAMPLES / "dipole-40m-far-short.s1p", option, value, "--out", tmp_path / "x")
    assert code == 2
    one_error_line(err, option)


@pytest.mark.parametrize("length", ["1e308m", "1e307m", "5000km"])
def test_absurd_length_is_one_line_without_warnings(tmp_path, capsys, length):
    code, _, err = run(capsys, "correct", SAMPLES / "dipole-40m.s1p", "--cable", "rg213", "--length", length,
                       "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "--length")


def test_no_numpy_warning_reaches_the_terminal(tmp_path, capsys):
    # a loss so large that the maths overflows on the way to the refusal
    code, _, err = run(capsys, "correct", SAMPLES / "dipole-40m.s1p", "--length", "900km", "--vf", "0.66",
                       "--loss", "1000dB@7MHz", "--out", tmp_path / "o")
    assert "Warning" not in err and len([ln for ln in err.splitlines() if ln.strip()]) <= 1, err


# ------------------------------------------------------------------------------------------------------
# 9. text from files reaches the terminal escaped


def test_escape_sequences_in_a_line_name_are_shown_escaped(tmp_path, capsys):
    sweep = write_sweep(tmp_path / "s.s1p")
    (tmp_path / "line.toml").write_text('name = "run\\u001b]0;owned\\u0007\\u001b[2J\\u202e"\n'
                                        '[[section]]\ncable = "rg213"\nlength = "30m"\n')
    code, out, err = run(capsys, "correct", sweep, "--line", tmp_path / "line.toml", "--out", tmp_path / "o",
                         "--no-plots")
    assert code == 0, err
    assert "\x1b" not in out + err and "\x07" not in out and "\u202e" not in out
    assert "\\x1b]0;owned\\x07\\x1b[2J\\u202e" in out


def test_nul_and_escapes_in_site_names_are_shown_escaped(tmp_path, capsys):
    write_sweep(tmp_path / "a.s1p")
    write_sweep(tmp_path / "a2.s1p")
    (tmp_path / "site.toml").write_text('name = "si\\u0000te\\u001b[31m"\n[[antenna]]\nname = "fe\\u0000ed\\r"\n'
                                        'cable = "rg213"\nlength = "30m"\nbaseline = "a.s1p"\nlatest = "a2.s1p"\n')
    code, out, err = run(capsys, "site", "--no-record", tmp_path / "site.toml", "--out", tmp_path / "o", "--workers", "1")
    assert code in (0, 1), err
    assert not any(c in out + err for c in "\x00\x1b\r")
    assert "fe\\x00ed\\x0d" in out


def test_control_characters_in_a_file_name_in_an_error(tmp_path, capsys):
    code, _, err = run(capsys, "correct", tmp_path / "a\x1b[2Jb.s1p", *LINE, "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "a\\x1b[2Jb.s1p", "no such file")


def test_escape_function_keeps_plain_text():
    from deembed.base.textsafe import escape_controls

    plain = "Ridgeback Hill: 2 m vertical, 45 m RG-213, SWR 1.5:1 \u00b5 \u2126 tab\tand newline\n"
    assert escape_controls(plain) == plain
    assert escape_controls("\x1b\x00\x7f\x9b\u202e") == "\\x1b\\x00\\x7f\\x9b\\u202e"


# ------------------------------------------------------------------------------------------------------
# 10. messages that say what is wrong


def test_symlink_loop_is_called_a_loop(tmp_path, capsys):
    os.symlink(tmp_path / "l2.s1p", tmp_path / "l1.s1p")
    os.symlink(tmp_path / "l1.s1p", tmp_path / "l2.s1p")
    code, _, err = run(capsys, "correct", tmp_path / "l1.s1p", *LINE, "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "l1.s1p", "loop")


def test_broken_link_names_its_target(tmp_path, capsys):
    os.symlink(tmp_path / "gone.s1p", tmp_path / "link.s1p")
    code, _, err = run(capsys, "correct", tmp_path / "link.s1p", *LINE, "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "link.s1p", "gone.s1p", "does not exist")


@pytest.mark.skipif(not hasattr(os, "geteuid"), reason="POSIX permissions")
def test_sweep_in_an_unsearchable_folder(tmp_path, capsys, monkeypatch):
    """A folder without search permission. Root passes every permission check, so as root the refusal the
    kernel would give (EACCES) is injected where the file is looked up."""
    locked = tmp_path / "locked"
    locked.mkdir()
    sweep = write_sweep(locked / "s.s1p")
    if IS_ROOT:
        real = os.stat

        def stat(path, *a, **k):
            if str(path).startswith(str(locked) + os.sep):
                raise PermissionError(errno.EACCES, "Permission denied", str(path))
            return real(path, *a, **k)
        monkeypatch.setattr(os, "stat", stat)
    else:
        locked.chmod(0o600)  # no search (x) bit: the file inside cannot be reached
    try:
        code, _, err = run(capsys, "correct", sweep, *LINE, "--out", tmp_path / "o")
    finally:
        monkeypatch.undo()
        locked.chmod(0o755)
    assert code == 2
    one_error_line(err, "s.s1p", "permission denied")


def test_bad_site_wide_catalog_fails_the_site_file(tmp_path, capsys):
    write_sweep(tmp_path / "a.s1p")
    (tmp_path / "site.toml").write_text('catalog = "missing.toml"\n[[antenna]]\nname = "x"\ncable = "rg213"\n'
                                        'length = "30m"\nbaseline = "a.s1p"\nlatest = "a.s1p"\n')
    code, _, err = run(capsys, "site", "--no-record", tmp_path / "site.toml", "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "site.toml", "catalog", "missing.toml")
    assert not (tmp_path / "o").exists()


# ------------------------------------------------------------------------------------------------------
# site worker pool: a time limit per entry, dead workers, how many workers


def _sleepy(job):
    if job == "stuck":
        time.sleep(3600)
    if job == "dies":
        os._exit(9)
    return {"job": job}


def test_pool_stops_a_stuck_entry_and_finishes_the_others():
    from deembed.jobs.pool import can_fork, run_all

    if not can_fork():
        pytest.skip("no fork here")
    jobs = ["a", "stuck", "b", "dies", "c"]
    res = run_all(jobs, _sleepy, workers=2, time_limit_s=1.0,
                  on_failure=lambda job, msg: {"job": job, "failed": msg})
    assert [r["job"] for r in res] == jobs
    assert "time limit" in res[1]["failed"] and "ended unexpectedly" in res[3]["failed"]
    assert all("failed" not in res[i] for i in (0, 2, 4))


def test_site_time_limit_records_the_stuck_entry_and_writes_the_index(tmp_path, capsys, monkeypatch):
    """One entry never finishes (stands for a stuck computation): it is stopped at the limit and recorded as
    failed, the other entries finish, the index is written. (Workers are forked, so they run the stand-in.)"""
    from deembed.jobs import pool, site as site_job

    if not pool.can_fork():
        pytest.skip("no fork here")

    def stand_in(job):
        if job.name == "stuck":
            time.sleep(3600)
        return site_job.AntennaResult(name=job.name, slug=job.slug, verdict="within_limits", error=None,
                                      line="test line", limits={},
                                      baseline={"file": "b.s1p", "outputs": {}, "warnings": [],
                                                "between_points": None})

    monkeypatch.setattr(site_job, "_run_antenna", stand_in)
    (tmp_path / "site.toml").write_text("".join(
        f'[[antenna]]\nname = "{n}"\ncable = "rg213"\nlength = "30m"\nbaseline = "{n}.s1p"\nlatest = "{n}2.s1p"\n'
        for n in ("one", "stuck", "two", "three")))
    out = tmp_path / "out"
    code, text, err = run(capsys, "site", "--no-record", tmp_path / "site.toml", "--out", out, "--time-limit", "1s")
    assert code == 1, err
    feeds = {f["name"]: f for f in json.loads((out / "site.json").read_text())["antennas"]}
    assert feeds["stuck"]["verdict"] == "error" and "time limit of 1 s" in feeds["stuck"]["error"]
    assert all(feeds[n]["verdict"] == "within_limits" for n in ("one", "two", "three"))
    assert (out / "index.html").is_file() and "time limit" in text


def test_worker_count_follows_entries_and_cores():
    from deembed.jobs.pool import plan_workers, usable_cores

    assert plan_workers(2, 1) == 1
    assert plan_workers(1, 10) == 1
    assert plan_workers(64, 64) == usable_cores()


def test_time_limit_option_values(capsys, tmp_path):
    from deembed.jobs.pool import parse_duration

    assert parse_duration("90s") == 90 and parse_duration("10min") == 600 and parse_duration("1.5h") == 5400
    assert parse_duration("none") is None
    code, _, err = run(capsys, "site", "--no-record", SAMPLES / "ridgeback-hill.site.toml", "--time-limit", "soon",
                       "--out", tmp_path / "o")
    assert code == 2
    one_error_line(err, "--time-limit")


# ------------------------------------------------------------------------------------------------------
# every command that writes: locate and trend go through the same transaction


def test_locate_with_a_folder_in_the_way_leaves_the_folder_as_it_was(tmp_path, capsys):
    sweep = write_sweep(tmp_path / "w.s1p", n=801, f0=1e6, f1=60e6)
    out = tmp_path / "o"
    (out / "w.along.json").mkdir(parents=True)
    (out / "earlier.txt").write_text("kept")
    before = listing(out)
    code, _, err = run(capsys, "locate", sweep, *LINE, "--out", out)
    assert code == 3, err
    one_error_line(err, "w.along.json", "folder")
    assert listing(out) == before and not staging_of(out)
    code, _, err = run(capsys, "locate", sweep, *LINE, "--out", tmp_path / "fresh")
    assert code == 0, err
    assert {"w.along.json", "w.along.csv"} <= set(os.listdir(tmp_path / "fresh"))


# ------------------------------------------------------------------------------------------------------
# one command's outputs for one sweep are one set: a rerun replaces the whole set


def test_a_no_plots_rerun_removes_the_earlier_report_and_plots_and_nothing_else(tmp_path, capsys):
    sweep = write_sweep(tmp_path / "x.s1p")
    other = write_sweep(tmp_path / "y.s1p")
    out = tmp_path / "o"
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out, "--draws", "0", "--power", "100W")
    assert code == 0, err
    assert (out / "x.report.html").is_file() and (out / "x.swr.png").is_file() and (out / "x.budget.png").is_file()
    code, _, err = run(capsys, "correct", other, *LINE, "--out", out, "--draws", "0")
    assert code == 0, err
    (out / "notes.txt").write_text("my notes")            # not an output name: never touched
    (out / "x.swr.png.bak").write_text("my copy")        # nor a name merely like one
    others_before = {n: (out / n).read_bytes() for n in os.listdir(out) if n.startswith("y.")}
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out, "--draws", "0", "--no-plots")
    assert code == 0, err
    x_files = sorted(n for n in os.listdir(out) if n.startswith("x.") and n != "x.s1p" and n != "x.swr.png.bak")
    assert x_files == ["x.feedpoint.s1p", "x.summary.json", "x.table.csv"]
    summary = json.loads((out / "x.summary.json").read_text())
    assert sorted(set(summary["outputs"].values()) | {"x.summary.json"}) == x_files
    assert (out / "notes.txt").read_text() == "my notes" and (out / "x.swr.png.bak").read_text() == "my copy"
    assert {n: (out / n).read_bytes() for n in os.listdir(out) if n.startswith("y.")} == others_before


def test_a_no_plots_rerun_keeps_what_locate_wrote_under_a_shared_name(tmp_path, capsys):
    """``deembed locate`` writes NAME.along.png too: a correct rerun without plots leaves it alone."""
    sweep = write_sweep(tmp_path / "w.s1p", n=801, f0=1e6, f1=60e6)
    out = tmp_path / "o"
    code, _, err = run(capsys, "locate", sweep, *LINE, "--out", out)
    assert code == 0, err
    plot = (out / "w.along.png").read_bytes()
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out, "--draws", "0", "--no-plots")
    assert code == 0, err
    assert (out / "w.along.png").read_bytes() == plot and (out / "w.along.json").is_file()


def test_a_rerun_that_fails_at_the_commit_keeps_the_whole_earlier_set(tmp_path, capsys, monkeypatch):
    """The earlier set's files are set aside in the same transaction as the new files are moved in: a move that
    fails puts every one back, the plots and report of the earlier run included."""
    from deembed.io import outfolder

    sweep = write_sweep(tmp_path / "x.s1p")
    out = tmp_path / "o"
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out, "--draws", "0")
    assert code == 0, err
    before = listing(out)
    real_replace = os.replace
    failed = []

    def failing(src, dst):  # the move of the new summary into place fails, once (the undo then works)
        if not failed and str(dst).endswith("x.summary.json") and ".deembed-stage-" in str(src) \
                and ".previous" not in str(src):
            failed.append(dst)
            raise OSError(errno.ENOSPC, "No space left on device", str(dst))
        return real_replace(src, dst)

    monkeypatch.setattr(outfolder.os, "replace", failing)
    code, _, err = run(capsys, "correct", sweep, *LINE, "--out", out, "--draws", "0", "--no-plots")
    assert code == 3 and failed
    one_error_line(err, "disk is full")
    assert listing(out) == before and not staging_of(out)


def test_a_magnitude_rerun_replaces_a_full_set_of_the_same_stem(tmp_path, capsys):
    """The same stem read first with phase (R and X), then as SWR alone: the earlier set's Touchstone file, report
    and plots, which a sweep without phase has none of, go."""
    f = np.linspace(28.0, 29.0, 101)
    z = 50 + 30j * (f - 28.5)
    g = (z - 50) / (z + 50)
    s = (1 + abs(g)) / (1 - abs(g))
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    (tmp_path / "a" / "v.csv").write_text("".join(f"{a:.4f},{b.real:.4f},{b.imag:.4f}\n" for a, b in zip(f, z)))
    (tmp_path / "b" / "v.csv").write_text("".join(f"{a:.4f},{b:.5f}\n" for a, b in zip(f, s)))
    out = tmp_path / "o"
    code, _, err = run(capsys, "correct", tmp_path / "a" / "v.csv", "--columns", "freq:MHz,r,x", *LINE, "--out", out,
                       "--draws", "0")
    assert code == 0, err
    assert (out / "v.feedpoint.s1p").is_file() and (out / "v.report.html").is_file()
    code, _, err = run(capsys, "correct", tmp_path / "b" / "v.csv", "--columns", "freq:MHz,swr", *LINE, "--out", out)
    assert code == 0, err
    assert sorted(os.listdir(out)) == ["v.summary.json", "v.swr.png", "v.table.csv"]
