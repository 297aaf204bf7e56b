"""An invented station for the demo and the documentation, and the script that makes its sweeps.

"Ridgeback Hill" is a made-up amateur and club station: a 40 m wire dipole fed through a short jumper
and a long run of foam coax, and a 2 m vertical at the top of a 25 m tower fed with RG-213. Its sweeps
are generated from the physical models in this package (antenna impedance models embedded behind
RLGC lines) with a little seeded measurement noise, so anyone can make them again, bit for bit.
Nothing here is a measurement of a real antenna.
"""
from __future__ import annotations

import os

import numpy as np

from ..physics import rf
from ..physics.deembedding import embed_gamma
from ..io.cables import catalog
from ..physics.joint import Joint
from ..physics.line import Line
from ..io.atomic import write_text_atomic
from ..io.touchstone import write_touchstone

NOISE_RMS = 0.003  # rms error added to each measured reflection, per real and imaginary part
SEED = 20261202

DIPOLE_LINE_TOML = """\
# Ridgeback Hill, 40 m dipole feed (an invented station for the deembed demo).
name = "40 m dipole feed"

[[section]]
label = "indoor jumper"
cable = "rg58"
length = "2m"

[[section]]
label = "main run to the dipole"
cable = "rg8x"
length = "36m"
"""

VERTICAL_LINE_TOML = """\
# Ridgeback Hill, 2 m vertical feed (an invented station for the deembed demo).
name = "2 m vertical feed"

[[section]]
label = "tower run"
cable = "rg213"
length = "45m"
"""

SITE_TOML = """\
# Ridgeback Hill (an invented station for the deembed demo): every antenna against its baseline.
# Check it with:  deembed site sample_sweeps/ridgeback-hill.site.toml --out out/site
name = "Ridgeback Hill"

[limits]                      # for every antenna (these are the defaults, written out)
max_shift = "50kHz"
max_swr_rise = 0.2
max_gamma_change = 0.1
max_bw_loss = "25%"

[[antenna]]
name = "2 m vertical"
line = "vertical-2m.line.toml"
baseline = "vertical-2m.s1p"
latest = ["vertical-2m-after.s1p"]

[[antenna]]
name = "40 m dipole"
line = "dipole-40m.line.toml"
baseline = "dipole-40m.s1p"
latest = ["dipole-40m-after.s1p"]
limits = { max_shift = "20kHz" }
"""


def series_antenna_z(freq_hz, f0_hz: float, r0_ohm: float, q: float, r_loss_ohm: float = 0.0):
    """A resonant antenna's feedpoint impedance, modelled as a series RLC whose radiation resistance
    grows as f^2 around resonance: Z = R0 (f/f0)^2 + R_loss + j Q R0 (f/f0 - f0/f).

    A demo model only: it has the right shape near resonance, not any one antenna's figures.
    """
    x = np.asarray(freq_hz, dtype=float) / f0_hz
    return r0_ohm * x**2 + r_loss_ohm + 1j * q * r0_ohm * (x - 1 / x)


def _noisy(gamma, rng):
    n = gamma.size
    return gamma + NOISE_RMS * (rng.standard_normal(n) + 1j * rng.standard_normal(n))


def station():
    """The station's antennas, lines and sweep plans: name -> dict."""

    cat = catalog()
    dipole_line = Line((cat["rg58"].section(2.0, "indoor jumper"), cat["rg8x"].section(36.0, "main run to the dipole")),
                       name="40 m dipole feed")
    vertical_line = Line((cat["rg213"].section(45.0),))
    return {
        "dipole-40m": dict(line=dipole_line, f=np.linspace(6.6e6, 7.6e6, 501),
                           z=lambda f: series_antenna_z(f, 6.96e6, 58.0, 11.0, 2.0)),
        "vertical-2m": dict(line=vertical_line, f=np.linspace(140e6, 152e6, 601),
                            z=lambda f: series_antenna_z(f, 145.6e6, 36.0, 7.0, 1.0)),
        # After tower work: the vertical detuned by a new antenna mounted beside it.
        "vertical-2m-after": dict(line=vertical_line, f=np.linspace(140e6, 152e6, 601),
                                  z=lambda f: series_antenna_z(f, 144.7e6, 33.0, 7.5, 1.0)),
        # Entries below were added for the site check; new entries go at the end so the random stream
        # of the sweeps above is unchanged.
        # The 40 m dipole swept again after the tower work: the antenna untouched (fresh trace noise only).
        "dipole-40m-after": dict(line=dipole_line, f=np.linspace(6.6e6, 7.6e6, 501),
                                 z=lambda f: series_antenna_z(f, 6.96e6, 58.0, 11.0, 2.0)),
        # The 2 m vertical untouched, but its run took in water: half as much loss again (a line change).
        "vertical-2m-wet": dict(line=Line((_wet(cat["rg213"].section(45.0), 1.5),)), f=np.linspace(140e6, 152e6, 601),
                                z=lambda f: series_antenna_z(f, 145.6e6, 36.0, 7.0, 1.0)),
    }


def _wet(section, factor: float):
    """The same section with its matched loss multiplied by ``factor`` (an invented wet run)."""
    from dataclasses import replace

    return replace(section, loss=section.loss.scaled(factor), label=section.label + " (wet)")


def analyzer_sweeps(rng=None) -> dict:
    """name -> (freq_hz, gamma measured at the analyzer end)."""
    rng = rng or np.random.default_rng(SEED)
    out = {}
    for name, st in station().items():
        f = st["f"]
        g_ant = rf.gamma_from_z(st["z"](f))
        g_in = embed_gamma(g_ant, st["line"].s_params(f))
        out[name] = (f, _noisy(g_in, rng))
    return out


def far_end_standards(rng=None) -> dict:
    """Open, short and load placed at the far end of the 40 m dipole's line, swept from the analyzer end."""
    rng = rng or np.random.default_rng(SEED + 1)
    st = station()["dipole-40m"]
    f = np.linspace(6.0e6, 8.0e6, 401)
    s = st["line"].s_params(f)
    out = {}
    for name, g in (("open", 1.0), ("short", -1.0), ("load", 0.0)):
        out[name] = (f, _noisy(embed_gamma(np.full(f.size, complex(g)), s), rng))
    return out


WIDE_LINE_TOML = """\
# Ridgeback Hill, 30 m (10 MHz) ground-plane feed (an invented station for the deembed demo).
# As the station's records describe it: the joint part-way up is not in the description.
name = "30 m ground-plane feed"

[[section]]
label = "analyzer jumper"
cable = "rg58"
length = "2m"

[[section]]
label = "tower run"
cable = "rg213"
length = "40m"
"""


def wide_run(wet: bool = True):
    """The 30 m ground-plane's feed as it really is: the described jumper and tower run, but with a barrel
    joint 26 m up the tower run (28 m from the analyzer) that has taken in water: 3 ohm of contact
    resistance in series and 25 pF across the line (invented figures)."""
    cat = catalog()
    return Line((cat["rg58"].section(2.0, "analyzer jumper"), cat["rg213"].section(26.0, "tower run, below the joint"),
                 Joint(series_r_ohm=3.0, shunt_c_f=25e-12, label="wet barrel joint") if wet else
                 Joint(label="barrel joint, sound"),
                 cat["rg213"].section(14.0, "tower run, above the joint")), name="30 m ground-plane feed (as built)")


def wide_sweep(rng=None, wet: bool = True):
    """A wide sweep (0.1 to 60 MHz in 100 kHz steps, every point a multiple of the step) of the 30 m
    ground-plane through :func:`wide_run`: for ``deembed locate``. ``wet=False`` is the same run swept a
    year earlier, before the joint took in water (a baseline). Returns (freq_hz, gamma)."""
    rng = rng or np.random.default_rng(SEED + 2 if wet else SEED + 3)
    f = np.arange(1, 601) * 100e3
    g_ant = rf.gamma_from_z(series_antenna_z(f, 10.12e6, 36.0, 6.0, 1.0))
    g = _noisy(embed_gamma(g_ant, wide_run(wet).s_params(f)), rng)
    # the antenna is nearly an open at the lowest frequencies: keep the noisy readings physically possible
    mag = np.abs(g)
    return f, np.where(mag > 0.998, g * (0.998 / np.maximum(mag, 1e-12)), g)


# ------------------------------------------------------------ text-table samples (analyzers that export CSV)

CSV_HEAD = ("Ridgeback Hill (invented station for the deembed demo): generated from physical models, "
            "not a measurement. Regenerate with: python sample_sweeps/generate.py")


def table_station():
    """The two feeds whose sweeps come as text tables: an 80 m inverted-L (R and X exported) and a
    10 m vertical swept with an analyzer that exports SWR only."""
    cat = catalog()
    return {
        "inverted-l-80m": dict(line=Line((cat["rg213"].section(30.0),), name="80 m inverted-L feed"),
                               f=np.linspace(3.40e6, 3.90e6, 251),
                               z=lambda f: series_antenna_z(f, 3.62e6, 38.0, 14.0, 4.0)),
        "vertical-10m": dict(line=Line((cat["rg8x"].section(25.0),), name="10 m vertical feed"),
                             f=np.linspace(27.8e6, 29.8e6, 401),
                             z=lambda f: series_antenna_z(f, 28.75e6, 40.0, 22.0, 1.5)),
    }


def table_sweeps(rng=None) -> dict:
    """name -> (freq_hz, gamma at the analyzer end, with trace noise)."""
    rng = rng or np.random.default_rng(SEED + 2)
    out = {}
    for name, st in table_station().items():
        f = st["f"]
        g_in = embed_gamma(rf.gamma_from_z(st["z"](f)), st["line"].s_params(f))
        out[name] = (f, _noisy(g_in, rng))
    return out


def table_texts() -> dict:
    """file name -> text of the two text-table samples."""
    sw = table_sweeps()
    f, g = sw["inverted-l-80m"]
    z = rf.z_from_gamma(g)
    rx = [CSV_HEAD, "80 m inverted-L, swept at the analyzer end (30 m of RG-213)", "Freq (MHz),R (ohm),X (ohm)"]
    rx += [f"{fi / 1e6:.4f},{zi.real:.2f},{zi.imag:.2f}" for fi, zi in zip(f, z)]
    f, g = sw["vertical-10m"]
    s = rf.swr(g)
    sv = [CSV_HEAD, "10 m vertical, swept at the analyzer end (25 m of RG-8X)", "kHz;SWR"]
    sv += [f"{fi / 1e3:.1f};{si:.3f}" for fi, si in zip(f, s)]
    return {"inverted-l-80m.rx.csv": "\n".join(rx) + "\n", "vertical-10m.swr.csv": "\n".join(sv) + "\n"}


def write_samples(folder: str) -> list[str]:
    """Write the station's sweeps and line descriptions into ``folder``; returns the paths."""

    os.makedirs(folder, exist_ok=True)
    written = []
    head = ["Ridgeback Hill (invented station for the deembed demo): generated from physical models,",
            "not a measurement. Regenerate with: python sample_sweeps/generate.py"]
    for name, (f, g) in analyzer_sweeps().items():
        p = os.path.join(folder, f"{name}.s1p")
        write_touchstone(p, f, g, comments=head + [f"sweep at the analyzer end: {name}"])
        written.append(p)
    for name, (f, g) in far_end_standards().items():
        p = os.path.join(folder, f"dipole-40m-far-{name}.s1p")
        write_touchstone(p, f, g, comments=head + [f"{name} at the far end of the 40 m dipole's line"])
        written.append(p)
    f, g = wide_sweep()
    p = os.path.join(folder, "groundplane-30m-wide.s1p")
    write_touchstone(p, f, g, comments=head + ["wide sweep at the analyzer end: 30 m ground-plane, 0.1-60 MHz",
                                               "(a wet barrel joint part-way up the tower run)"])
    written.append(p)
    f, g = wide_sweep(wet=False)
    p = os.path.join(folder, "groundplane-30m-wide-baseline.s1p")
    write_touchstone(p, f, g, comments=head + ["wide sweep at the analyzer end: 30 m ground-plane, 0.1-60 MHz",
                                               "baseline, a year before the joint took in water"])
    written.append(p)
    p = os.path.join(folder, "dipole-40m.line.toml")
    write_text_atomic(p, DIPOLE_LINE_TOML)
    written.append(p)
    for name, text in (("vertical-2m.line.toml", VERTICAL_LINE_TOML), ("ridgeback-hill.site.toml", SITE_TOML),
                       ("groundplane-30m.line.toml", WIDE_LINE_TOML), *table_texts().items()):
        p = os.path.join(folder, name)
        write_text_atomic(p, text)
        written.append(p)
    return written
