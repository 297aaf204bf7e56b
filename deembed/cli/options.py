"""Options shared by several commands (the line options) and their small parsers."""
from __future__ import annotations

import typer

from ..base.errors import OptionError


CableOpt = typer.Option(None, "--cable", metavar="ID", help="Catalog cable id (see `deembed cables`), e.g. rg213.")


LengthOpt = typer.Option(None, "--length", metavar="LENGTH", help="Physical length with unit: 30m, 98ft.")


VfOpt = typer.Option(None, "--vf", metavar="VF", help="Velocity factor, in (0, 1], e.g. 0.66.")


DelayOpt = typer.Option(None, "--delay", metavar="TIME", help="One-way delay instead of length and VF, e.g. 152ns.")


Z0Opt = typer.Option(None, "--z0", metavar="OHMS", help="Nominal characteristic impedance, e.g. 50ohm (default: the "
                                                           "cable's, or 50 ohm).")


LossOpt = typer.Option(None, "--loss", metavar="LOSS@FREQ",
                       help="The run's one-way matched loss at a frequency, e.g. 0.8dB@21MHz; two or more points "
                            "(commas, or repeat the option) fit conductor and dielectric loss.")


LineOpt = typer.Option(None, "--line", metavar="FILE", help="Line description: a .toml file (several sections) or a measured "
                                            "or characterized .s2p.")


CablesOpt = typer.Option(None, "--catalog", metavar="FILE", help="Your own cable catalog (TOML), added to the "
                                                                   "built-in one.")


ExtrapolateOpt = typer.Option(False, "--extrapolate", help="Allow a characterized line to be used beyond the "
                                                           "frequencies it was measured over.")


ColumnsOpt = typer.Option(None, "--columns", metavar="MAP",
                          help="For a sweep exported as a text table (CSV, semicolons, tabs or spaces): its columns "
                               "in order, the frequency with its unit and then r,x (ohm) or re,im (reflection) or "
                               "rl,phase (dB, degrees) or swr or rl alone; - skips a column. E.g. freq:MHz,r,x or "
                               "freq:kHz,-,swr.")


PortOpt = typer.Option(None, "--port", metavar="1|2", help="For a 2-port file: which port's reflection to use (1 or 2).")


def check_port(port) -> None:
    """The --port value: 1 or 2 (the library's check, named as the option)."""
    from ..io.touchstone import check_port as _check

    _check(port, "--port")


OPTION_FOR_FIELD = {
    "cables": "--catalog",
    **{k: f"--{k}" for k in ("cable", "length", "vf", "delay", "z0", "loss", "line", "port", "out",
                             "power", "extrapolate", "target", "open", "short", "load")},
    "measured_swr": "--measured-swr", "antenna_swr": "--antenna-swr", "open_c": "--open-c", "short_l": "--short-l",
    "load_r": "--load-r", "standards": "--open/--short/--load", "swr_threshold": "--swr-limits",
    "max_shift": "--max-shift", "max_swr_rise": "--max-swr-rise", "max_gamma_change": "--max-gamma-change",
    "max_bw_loss": "--max-bw-loss", "max_loss_change": "--max-loss-change", "tolerance": "--tol",
    "calibration": "--cal-uncertainty",
    "columns": "--columns", "max_input_size": "--max-input-size",
    "lowpass": "--lowpass", "resolve": "--resolve", "keep": "--keep", "remove": "--remove", "unit": "--unit",  # locate
    "max_loss_rise": "--max-loss-rise", "max_drift": "--max-drift", "time_limit": "--time-limit",  # trend, site
    "date": "--date", "record": "--record", "no_record": "--no-record",                            # history
}
"""The library's field names (in :class:`~deembed.base.errors.DeembedError` messages) and the options that set
them: the command line shows its option names in every error."""

LINE_OPTIONS = {k: OPTION_FOR_FIELD[k] for k in ("cable", "length", "vf", "delay", "z0", "loss", "line", "tolerance")}


TolOpt = typer.Option(None, "--tol", help="A line tolerance, NAME=VALUE, repeatable: length=0.2m (or 1%), vf=0.02, "
                                          "delay=1ns, loss=15%, z0=2ohm. Defaults: the catalog's, else 1 % of "
                                          "length or delay, VF 0.01, loss 10 % (points) or 25 % (catalog), Z0 4 %.")


DrawsOpt = typer.Option(1000, "--draws", help="Monte Carlo draws for the uncertainty intervals (0: no intervals).")


SeedOpt = typer.Option(1, "--seed", help="Seed of the uncertainty's random draws (same seed, same intervals).")


CalOpt = typer.Option("hobby", "--cal-uncertainty",
                      help="The analyzer's calibration error: hobby (default: an inexpensive analyzer and kit), "
                           "bench (a calibrated bench VNA), none, or one bound in |Gamma| such as 0.02.")


def uncertainty_settings(draws: int, seed: int, cal: str):
    """The uncertainty settings from --draws, --seed and --cal-uncertainty (None for --draws 0)."""
    from ..analysis.trust import UncertaintySettings
    from ..analysis.uncertainty import parse_calibration

    if draws < 0 or draws > 100_000:
        raise OptionError("--draws", f"{draws}: give a number of draws from 0 (no intervals) to 100000; 1000 is usual")
    if 0 < draws < 100:
        raise OptionError("--draws", f"{draws} draws are too few for a 95 % interval; give 100 or more, or 0")
    if seed < 0:
        raise OptionError("--seed", f"{seed}: the seed must be 0 or more")
    cal_ = parse_calibration(cal, "--cal-uncertainty")
    if draws == 0:
        return None
    return UncertaintySettings(draws=draws, seed=seed, calibration=cal_)


def build_line(cable, length, vf, delay, z0, loss, line, cables, extrapolate=False, tolerances=()):
    """The line from the shared options, plus notes for the summary."""
    from ..io.linefile import line_from_options

    return line_from_options(cable=cable, length=length, vf=vf, delay=delay, z0=z0, loss=split_list(loss),
                             cables_file=cables, line_file=line, allow_extrapolation=extrapolate,
                             names=LINE_OPTIONS, tolerances=split_list(tolerances))


def split_list(values) -> list:
    """The items of a list option, given the same way everywhere: separated by commas, or the option repeated
    (or both). Empty items are dropped."""
    if values is None:
        return []
    if isinstance(values, str):
        values = [values]
    return [t.strip() for v in values for t in str(v).split(",") if t.strip()]


def parse_thresholds(text) -> tuple:
    from ..base.units import parse_positive

    vals = []
    for part in split_list(text):
        v = parse_positive(part.strip(), "--swr-limits", "SWR threshold")
        if v <= 1:
            raise OptionError("--swr-limits", f"{part.strip()!r}: an SWR threshold must be above 1")
        vals.append(v)
    return tuple(sorted(set(vals)))


RecordOpt = typer.Option(None, "--record", help="Record this run into a history store: a SQLite file (created "
                                                "if missing) or a postgresql:// URL.")
DateOpt = typer.Option(None, "--date", help="The day the sweep was taken, YYYY-MM-DD, for --record (default: "
                                            "the file's modification day, flagged as such).")
NameOpt = typer.Option(None, "--name", help="The antenna's name in the history store (default: the sweep "
                                            "file's name without its extension).")


def record_options(record, date, name, *, baseline_date=None):
    """Check --record/--date/--name together; returns the parsed dates (date, baseline_date)."""
    if record is None:
        for opt, v in (("--date", date), ("--name", name), ("--baseline-date", baseline_date)):
            if v is not None:
                raise OptionError(opt, "only means something with --record STORE; add it, or leave this out")
        return None, None
    if not record.strip():
        raise OptionError("--record", "empty; give a file name (e.g. site.history.sqlite) or a postgresql:// URL")
    if name is not None and not name.strip():
        raise OptionError("--name", "empty name; give the antenna's name, e.g. --name \"2 m vertical\"")
    from ..jobs.record import check_store, parse_date  # the history store's modules only when recording

    d = parse_date(date, "--date") if date is not None else None
    bd = parse_date(baseline_date, "--baseline-date") if baseline_date is not None else None
    check_store(record)
    return d, bd
