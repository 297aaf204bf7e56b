"""An invented history of the Ridgeback Hill station: its feeds swept twice a year for four years.

The crew sweeps every feed each spring and autumn from March 2023. The 2 m vertical's tower run of
RG-213 slowly takes on water: its matched loss grows by 10 % of the dry loss per year (about
+0.36 dB/yr at 146 MHz), the antenna itself unchanged. The 40 m dipole and a 20 m ground plane
stay dry and untouched; only fresh trace noise differs between their sweeps. Every sweep is made
from the physical models (antenna impedance models behind RLGC lines, :mod:`deembed.jobs.samples`)
with seeded noise, so anyone can make them again, bit for bit. Nothing here is a measurement.
"""
from __future__ import annotations

import os

import numpy as np

from ..io.atomic import write_text_atomic
from ..io.cables import catalog
from ..io.touchstone import write_touchstone
from ..physics import rf
from ..physics.deembedding import embed_gamma
from ..physics.line import Line
from .samples import DIPOLE_LINE_TOML, VERTICAL_LINE_TOML, series_antenna_z
HISTORY_SEED = 20230318
HISTORY_POINTS = 301
SWEEP_DATES = ("2023-03-18", "2023-09-30", "2024-03-23", "2024-10-05", "2025-03-15", "2025-09-27",
               "2026-03-21", "2026-10-03")
WATER_LOSS_GROWTH_PER_YEAR = 0.10
"""The wet run's matched loss grows by this fraction of its dry loss each year."""

SITE_FILE = "ridgeback-hill-years.site.toml"
ENTRY_TABLE = "antenna"
"""The site file's table for one antenna and its line (renamed [[antenna]] by the vocabulary change)."""


def _years(date: str) -> float:
    import datetime as _dt

    return (_dt.date.fromisoformat(date) - _dt.date.fromisoformat(SWEEP_DATES[0])).days / 365.25


def antennas():
    """The three antennas (each with its feed line): name -> (file prefix, line builder(years), frequencies, antenna impedance, line file)."""
    from dataclasses import replace


    cat = catalog()

    def vertical_line(years):
        sec = cat["rg213"].section(45.0, "tower run")
        factor = 1.0 + WATER_LOSS_GROWTH_PER_YEAR * years
        return Line((replace(sec, loss=sec.loss.scaled(factor)),), name="2 m vertical feed")

    def dipole_line(years):
        return Line((cat["rg58"].section(2.0, "shack jumper"), cat["rg8x"].section(36.0, "main run to the dipole")),
                    name="40 m dipole feed")

    def gp_line(years):
        return Line((cat["rg213"].section(28.0, "run to the ground plane"),), name="20 m ground plane feed")

    return {
        "2 m vertical": ("vertical-2m", vertical_line, np.linspace(140e6, 152e6, HISTORY_POINTS),
                         lambda f: series_antenna_z(f, 145.6e6, 36.0, 7.0, 1.0), "vertical-2m.line.toml"),
        "40 m dipole": ("dipole-40m", dipole_line, np.linspace(6.6e6, 7.6e6, HISTORY_POINTS),
                        lambda f: series_antenna_z(f, 6.96e6, 58.0, 11.0, 2.0), "dipole-40m.line.toml"),
        "20 m ground plane": ("groundplane-20m", gp_line, np.linspace(13.6e6, 14.8e6, HISTORY_POINTS),
                              lambda f: series_antenna_z(f, 14.2e6, 33.0, 9.0, 1.5), "groundplane-20m.line.toml"),
    }


GP_LINE_TOML = """\
# Ridgeback Hill, 20 m ground plane feed (an invented station for the deembed demo).
name = "20 m ground plane feed"

[[section]]
label = "run to the ground plane"
cable = "rg213"
length = "28m"
"""


def history_sweeps(rng=None) -> dict:
    """(antenna name, date) -> (file name, freq_hz, gamma at the analyzer end)."""

    rng = rng or np.random.default_rng(HISTORY_SEED)
    out = {}
    for name, (prefix, line_of, f, z, _) in antennas().items():
        g_ant = rf.gamma_from_z(z(f))
        for date in SWEEP_DATES:
            g_in = embed_gamma(g_ant, line_of(_years(date)).s_params(f))
            noise = 0.003 * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))
            out[(name, date)] = (f"{prefix}-{date}.s1p", f, g_in + noise)
    return out


def site_toml() -> str:
    lines = ["# Ridgeback Hill over four years (an invented history for the deembed demo): every feed swept",
             "# each spring and autumn. Record and trend it with:",
             "#   deembed site sample_sweeps/history/ridgeback-hill-years.site.toml --out out/years",
             "#   deembed trend sample_sweeps/history/ridgeback-hill-years.site.toml --out out/trend",
             "# The history store is the file beside this one (ridgeback-hill-years.history.sqlite).",
             'name = "Ridgeback Hill"', ""]
    for name, (prefix, _, _, _, line_file) in antennas().items():
        first, *rest = SWEEP_DATES
        lines += [f"[[{ENTRY_TABLE}]]", f'name = "{name}"', f'line = "{line_file}"',
                  f'baseline = {{ file = "{prefix}-{first}.s1p", date = "{first}" }}', "latest = ["]
        lines += [f'  {{ file = "{prefix}-{d}.s1p", date = "{d}" }},' for d in rest]
        lines += ["]"]
        if name == "2 m vertical":
            lines += ['limits = { max_shift = "150kHz" }   # VHF: noise alone moves the resonance ~20 kHz rms']
        lines += [""]
    return "\n".join(lines)


def write_history(folder: str) -> list[str]:
    """Write the dated sweeps, the line files and the site file into ``folder``; returns the paths."""

    os.makedirs(folder, exist_ok=True)
    written = []
    head = ["Ridgeback Hill over four years (invented history for the deembed demo): generated from physical",
            "models, not a measurement. Regenerate with: python sample_sweeps/generate.py"]
    for (name, date), (fname, f, g) in history_sweeps().items():
        p = os.path.join(folder, fname)
        write_touchstone(p, f, g, comments=head + [f"{name}, swept at the analyzer end on {date}"])
        written.append(p)
    for fname, text in (("vertical-2m.line.toml", VERTICAL_LINE_TOML), ("dipole-40m.line.toml", DIPOLE_LINE_TOML),
                        ("groundplane-20m.line.toml", GP_LINE_TOML), (SITE_FILE, site_toml())):
        p = os.path.join(folder, fname)
        write_text_atomic(p, text)
        written.append(p)
    return written


__all__ = ["SITE_FILE", "SWEEP_DATES", "WATER_LOSS_GROWTH_PER_YEAR", "antennas", "history_sweeps", "site_toml",
           "write_history"]
