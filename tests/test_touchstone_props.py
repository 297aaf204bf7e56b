"""Property tests: the readers and parsers fail only with the project's own errors, and writing round-trips.

Invariants (design requirements of the project, common practice, no source): any bytes given as a .s1p
file give a Sweep or an InputFileError; any finite one-port sweep written as RI reads back bit for bit;
the unit parsers give a value or an OptionError.
"""
from __future__ import annotations

import math
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from deembed.base import units
from deembed.base.errors import InputFileError, OptionError
from deembed.io.sweep import Sweep
from deembed.io.touchstone import read_sweep, write_touchstone

SETTINGS = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])

# text made of the pieces a Touchstone file is built from, so the search reaches deep into the parser
_PIECES = st.sampled_from(["# ", "MHz ", "GHz ", "hz ", "S ", "Z ", "Y ", "RI ", "MA ", "DB ", "R ", "50 ", "75 ",
                           "0 ", "1 ", "-1 ", "2.5 ", "1e3 ", "1e999 ", ".5 ", "nan ", "! c ", "\n", "\r\n", "\t",
                           "[Version] 2.0\n", "[Number of Ports] 1\n", "[Number of Frequencies] 2\n",
                           "[Network Data]\n", "[End]\n", "[Reference] ", "[Matrix Format] Lower\n", "\xb5",
                           "\x00", "x", "_"])
_TOUCHSTONEISH = st.lists(_PIECES, max_size=40).map("".join)


def _read_bytes(data: bytes, name: str):
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / name
        p.write_bytes(data)
        try:
            return read_sweep(p, expect_ports=None)
        except InputFileError as e:
            assert e.path == str(p)
            return e


@SETTINGS
@given(st.binary(max_size=400))
def test_any_bytes_give_sweep_or_input_error(data):
    out = _read_bytes(data, "x.s1p")
    assert isinstance(out, (Sweep, InputFileError))
    if isinstance(out, Sweep):
        assert np.all(np.diff(out.freq_hz) > 0) and np.all(out.freq_hz >= 0)
        assert np.all(np.isfinite(out.s))


@SETTINGS
@given(_TOUCHSTONEISH, st.sampled_from(["x.s1p", "x.s2p", "x.ts"]))
def test_touchstone_like_text_gives_sweep_or_input_error(text, name):
    out = _read_bytes(text.encode("latin-1"), name)
    assert isinstance(out, (Sweep, InputFileError))
    if isinstance(out, Sweep):
        assert np.all(np.diff(out.freq_hz) > 0) and np.all(np.isfinite(out.s))


_GAMMA_PART = st.floats(min_value=-7.0, max_value=7.0, allow_nan=False, width=64)


@SETTINGS
@given(st.lists(st.floats(min_value=0, max_value=1e15, allow_nan=False, allow_infinity=False),
                min_size=1, max_size=30, unique=True),
       st.data(), st.sampled_from(["Hz", "kHz", "MHz", "GHz"]))
def test_one_port_round_trip_is_exact(freqs, data, unit):
    f = np.array(sorted(freqs))
    f = f[np.concatenate(([True], np.diff(f) > 0))]  # 0.0 and -0.0 count as one point
    f = np.abs(f)
    # parts within +-7 keep |Gamma| under the reader's plausibility bound of 10 (a larger reflection is
    # refused as no measurement: tests/test_hostile.py); every exponent down to subnormals is still drawn
    re_ = data.draw(st.lists(_GAMMA_PART, min_size=f.size, max_size=f.size))
    im_ = data.draw(st.lists(_GAMMA_PART, min_size=f.size, max_size=f.size))
    g = np.array(re_) + 1j * np.array(im_)
    with tempfile.TemporaryDirectory() as d:
        p = Path(d) / "r.s1p"
        write_touchstone(p, f, g, unit=unit)
        sw = read_sweep(p)
    assert np.array_equal(sw.freq_hz, f)
    assert np.array_equal(sw.gamma.real, g.real) and np.array_equal(sw.gamma.imag, g.imag)


_UNIT_TEXT = st.one_of(
    st.text(max_size=30),
    st.tuples(st.sampled_from(["", "-", "+", " "]),
              st.floats(allow_nan=True, allow_infinity=True).map(repr),
              st.sampled_from(["", "MHz", "khz", "Hz", "m", "ft", "'", '"', "ns", "us", "µs", "W", "kW", "dB",
                               "dB@14MHz", "@", "x", " GHz"])).map("".join),
)


@SETTINGS
@given(_UNIT_TEXT)
def test_unit_parsers_give_value_or_option_error(text):
    for fn in (units.parse_frequency, units.parse_length, units.parse_delay, units.parse_power):
        try:
            v = fn(text)
        except OptionError:
            continue
        assert isinstance(v, float) and math.isfinite(v)
    try:
        db, hz = units.parse_loss_point(text)
    except OptionError:
        return
    assert math.isfinite(db) and db >= 0 and math.isfinite(hz) and hz > 0


@pytest.mark.parametrize("fn,text", [(units.parse_frequency, "2E302MHz"), (units.parse_length, "1e306km"),
                                     (units.parse_power, "1e306kW")])
def test_unit_parser_overflow_is_option_error(fn, text):
    try:
        v = fn(text)
    except OptionError:
        return
    assert math.isfinite(v)
