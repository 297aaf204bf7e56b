"""A plain ASCII Touchstone file is parsed from its bytes, a chunk decoded at a time (no str copy of the whole
file, for the memory of big sweeps). Reference: the same reader given the decoded text, the path every file
with other bytes takes (UTF-8 or Latin-1 comments, UTF-16): the sweep, its comments and notes, and every
refusal with its line must be the same either way."""
from pathlib import Path

import numpy as np
import pytest

from deembed.base.errors import InputFileError
from deembed.io import touchstone
from deembed.io.touchstone import read_sweep

ROOT = Path(__file__).resolve().parents[1]

ONE = "# MHz S RI R 50\n" + "".join(f"{1 + 0.001 * i:.3f} {0.1 + 1e-4 * i:.6f} {-0.2 + 1e-4 * i:.6f}\n"
                                    for i in range(3000))
BIG_HEAD = "".join(f"! header comment {i:05d} {'x' * 60}\n" for i in range(1200))  # past HEAD_BYTES
V2 = ("[Version] 2.0\n# MHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 3\n[Network Data]\n"
      "1 0.1 0.2\n2 0.1 0.3\n! inside\n3 0.2 0.1\n[End]\n")
TWO = "# GHz S MA R 75\n" + "".join(f"{1 + i} 0.5 {i} 0.9 -{i} 0.9 -{i} 0.4 {2 * i}\n" for i in range(200))



def _at(k: int, extra: str, text: str = ONE) -> str:
    """``text`` with ``extra`` lines put after its first ``k`` lines."""
    lines = text.splitlines(keepends=True)
    return "".join(lines[:k]) + extra + "".join(lines[k:])


CASES = {
    "plain": ONE,
    "crlf": ONE.replace("\n", "\r\n"),
    "cr": ONE.replace("\n", "\r"),
    "comments in data": _at(200, "! a remark\n") + "  ! another\n",
    "second option line": _at(150, "# GHz S MA R 75\n"),
    "header past the first 64 KiB": BIG_HEAD + ONE,
    "no option line": "! no options\n1.5 0.5 90\n2.5 0.25 -180\n",
    "v2": V2,
    "v2 without end": V2.replace("[End]\n", ""),
    "v2 count wrong": V2.replace("Frequencies] 3", "Frequencies] 4"),
    "two-port": TWO,
    "two-port noise block": TWO + "1 1.2 0.5 30 0.3\n2 1.4 0.5 40 0.3\n",
    "bad token late": _at(2400, "1e9 abc 0.1\n"),
    "nan late": _at(2400, "1e9 nan 0.1\n"),
    "frequency goes down": ONE + "1.5 0 0\n",
    "repeated frequency": ONE + "3.999 0 0\n3.999 0 0\n",
    "overflow": _at(2800, "9e9 1e999 0\n"),
    "short record": _at(1200, "99 0.1\n"),
    "keyword in v1": _at(800, "[Number of Ports] 1\n"),
    "only comments": "! nothing\n! here\n",
    "empty-ish": " \n\t\n",
    "absurd gamma": ONE + "9 20 0\n",
}


def _outcome(path, **kw):
    try:
        sw = read_sweep(path, **kw)
    except (InputFileError, ValueError) as exc:
        return ("error", type(exc).__name__, str(exc))
    return ("ok", sw.freq_hz.tobytes(), sw.s.tobytes(), sw.s.shape, sw.comments, sw.notes, sw.file_z_ref_ohm)


def _via_text(monkeypatch, path, **kw):
    own = touchstone._read_text

    def decoded(p, name):
        t = own(p, name)
        return t.decode("ascii") if isinstance(t, bytes) else t

    with monkeypatch.context() as m:
        m.setattr(touchstone, "_read_text", decoded)
        return _outcome(path, **kw)


@pytest.mark.parametrize("name", sorted(CASES))
def test_ascii_bytes_path_equals_the_text_path(tmp_path, monkeypatch, name):
    text = CASES[name]
    suffix = ".ts" if text.startswith("[Version]") else (".s2p" if text is TWO or text.startswith(TWO[:40]) else ".s1p")
    p = tmp_path / ("f" + suffix)
    p.write_bytes(text.encode("ascii"))
    if text.strip():
        assert isinstance(touchstone._read_text(p, str(p)), bytes)  # the path under test is taken
    kw = {"expect_ports": None} if suffix == ".s2p" else {}
    ours = _outcome(p, **kw)
    assert ours == _via_text(monkeypatch, p, **kw)
    if name in ("plain", "crlf", "cr", "header past the first 64 KiB"):
        assert ours[0] == "ok" and ours[3] == (3000, 1, 1)


@pytest.mark.parametrize("path", sorted((ROOT / "sample_sweeps").glob("*.s1p")), ids=lambda p: p.name)
def test_sample_sweeps_read_the_same_either_way(monkeypatch, path):
    assert _outcome(path) == _via_text(monkeypatch, path)


def test_big_file_in_several_chunks(tmp_path, monkeypatch):
    n = 60_000  # about 2.5 MB: several parse chunks
    f = np.linspace(1.0, 60.0, n)
    g = 0.3 * np.exp(1j * f)
    p = tmp_path / "big.s1p"
    p.write_text("# MHz S RI R 50\n" + "".join(f"{a:.10g} {b.real:.12g} {b.imag:.12g}\n" for a, b in zip(f, g)))
    ours = _outcome(p)
    assert ours == _via_text(monkeypatch, p)
    sw = read_sweep(p)
    assert np.allclose(sw.gamma, g, rtol=0, atol=1e-12)  # numpy's parse of the same text, %.12g
