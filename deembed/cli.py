"""The command line: parse options, call one library function, render the result.

Every user error is a :class:`deembed.errors.DeembedError`; ``main`` prints it as one line and
exits with status 2 (``--debug`` shows the traceback instead).
"""
from __future__ import annotations

import json
import sys
from typing import List, Optional

import typer

from .errors import DeembedError, OptionError

SAFETY = (
    "Safety: bleed static off the feed line (short centre to shield) before connecting an analyzer; never "
    "transmit into an analyzer; keep clear of RF exposure from nearby transmitters; tower work only by trained, "
    "equipped crews; no antenna work with lightning about. Local codes and licensed practice come first."
)

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    help="Remove the feed line from an antenna sweep taken at the analyzer end: the feedpoint's true match, "
         "resonance and bandwidth.\n\n" + SAFETY,
    context_settings={"help_option_names": ["-h", "--help"]},
    pretty_exceptions_enable=False,
)

# Line options shared by every command that removes a line.
CableOpt = typer.Option(None, "--cable", help="Catalog cable id (see `deembed cables`), e.g. rg213.")
LengthOpt = typer.Option(None, "--length", help="Physical length with unit: 30m, 98ft.")
VfOpt = typer.Option(None, "--vf", help="Velocity factor, in (0, 1].")
DelayOpt = typer.Option(None, "--delay", help="One-way delay, e.g. 152ns (a bare number is ns).")
Z0Opt = typer.Option(None, "--z0", help="Nominal characteristic impedance, ohm (default: the cable's, or 50).")
LossOpt = typer.Option(None, "--loss", help="The run's one-way matched loss at a frequency, e.g. 1.25dB@14MHz; "
                                            "repeat for a second frequency.")
LineOpt = typer.Option(None, "--line", help="Line description: a .toml file (several sections) or a measured "
                                            "or characterized .s2p.")
CablesOpt = typer.Option(None, "--cables", help="Your own cable catalog (TOML), added to the built-in one.")
ExtrapolateOpt = typer.Option(False, "--extrapolate", help="Allow a characterized line to be used beyond the "
                                                           "frequencies it was measured over.")


def build_line(cable, length, vf, delay, z0, loss, line, cables, extrapolate=False):
    """The line from the shared options, plus notes for the summary."""
    from .linespec import line_from_options

    return line_from_options(cable=cable, length=length, vf=vf, delay=delay, z0=z0, loss=loss or (),
                             cables_file=cables, line_file=line, allow_extrapolation=extrapolate)


def parse_thresholds(text: str) -> tuple:
    from .units import parse_positive

    vals = []
    for part in text.split(","):
        v = parse_positive(part.strip(), "--swr-limits", "SWR threshold")
        if v <= 1:
            raise OptionError("--swr-limits", f"{part.strip()!r}: an SWR threshold must be above 1")
        vals.append(v)
    return tuple(sorted(set(vals)))


@app.command("correct")
def correct_command(
    sweep: str = typer.Argument(..., help="Touchstone sweep taken at the analyzer end (.s1p, or .s2p with --port)."),
    cable: Optional[str] = CableOpt,
    length: Optional[str] = LengthOpt,
    vf: Optional[str] = VfOpt,
    delay: Optional[str] = DelayOpt,
    z0: Optional[str] = Z0Opt,
    loss: Optional[List[str]] = LossOpt,
    line: Optional[str] = LineOpt,
    cables: Optional[str] = CablesOpt,
    extrapolate: bool = ExtrapolateOpt,
    port: Optional[int] = typer.Option(None, "--port", help="For a 2-port file: which port's reflection to use (1 or 2)."),
    out: str = typer.Option("deembed-out", "--out", help="Folder for the results (created if needed)."),
    swr_limits: str = typer.Option("1.5,2,3", "--swr-limits", help="SWR thresholds for bandwidth spans."),
    target: Optional[str] = typer.Option(None, "--target", help="Wanted resonant frequency, e.g. 14.15MHz: trimming advice."),
    power: Optional[str] = typer.Option(None, "--power", help="Transmitter power for a power budget, e.g. 100W."),
    bands: bool = typer.Option(False, "--bands", help="Check the built-in sample band list."),
    bands_file: Optional[str] = typer.Option(None, "--bands-file", help="Check the bands in this TOML file."),
    no_plots: bool = typer.Option(False, "--no-plots", help="Skip the PNG plots and the HTML report."),
    as_json: bool = typer.Option(False, "--json", help="Print the summary as JSON on standard output."),
):
    """Correct a sweep through a known line: feedpoint Touchstone, table, summary, plots and report."""
    from . import workflow
    from .units import parse_frequency, parse_power

    if port is not None and port not in (1, 2):
        raise OptionError("--port", f"{port} is not a port of a 2-port file; use 1 or 2")
    the_line, notes = build_line(cable, length, vf, delay, z0, loss, line, cables, extrapolate)
    opts = workflow.Options(
        port=port, thresholds=parse_thresholds(swr_limits),
        target_hz=parse_frequency(target, "--target") if target else None,
        power_w=parse_power(power) if power else None,
        bands=bands, bands_file=bands_file, plots=not no_plots, html=not no_plots, notes=notes,
    )
    _, summary, _ = workflow.correct_file(sweep, the_line, out, opts, line_inputs=[line, cables])
    if as_json:
        print(json.dumps(workflow.to_jsonable(summary), indent=2))
    else:
        from .render import correction_text

        print(correction_text(summary, out))


@app.command("budget")
def budget_command(
    power: str = typer.Option(..., "--power", help="Forward power at the transmitter, e.g. 100W."),
    loss: float = typer.Option(..., "--loss", help="One-way matched loss of the line, dB."),
    antenna_swr: Optional[float] = typer.Option(None, "--antenna-swr", help="SWR at the antenna."),
    measured_swr: Optional[float] = typer.Option(None, "--measured-swr", help="SWR read at the transmitter end: "
                                                                              "the antenna's is inferred."),
    as_json: bool = typer.Option(False, "--json", help="Print a JSON object on standard output."),
):
    """Power budget along a line: what reaches the antenna, what comes back, what the line burns."""
    from . import rf
    from .budget import antenna_swr_from_measured, power_budget
    from .units import parse_power

    p = parse_power(power)
    if not (loss >= 0 and loss < 1000):
        raise OptionError("--loss", f"{loss:g}: the matched loss must be a number of dB, 0 or more")
    if (antenna_swr is None) == (measured_swr is None):
        raise OptionError("--antenna-swr", "give exactly one of --antenna-swr and --measured-swr")
    given = antenna_swr if antenna_swr is not None else measured_swr
    name = "--antenna-swr" if antenna_swr is not None else "--measured-swr"
    if not given >= 1:
        raise OptionError(name, f"{given:g}: an SWR is 1 or more")
    swr_ant = antenna_swr if antenna_swr is not None else antenna_swr_from_measured(measured_swr, loss)
    g_ant = float(rf.gamma_mag_from_swr(swr_ant)) if swr_ant != float("inf") else 1.0
    b = power_budget(p, loss, g_ant)
    if measured_swr is not None:
        b["inferred_from_measured_swr"] = measured_swr
    from .workflow import to_jsonable

    if as_json:
        print(json.dumps(to_jsonable(b), indent=2))
        return
    from .render import budget_text

    print(budget_text(b, p, loss))


@app.command("cables")
def cables_command(cables: Optional[str] = CablesOpt,
                   at: str = typer.Option("10MHz,100MHz", "--at", help="Frequencies to show the loss at.")):
    """List the cable catalog with loss per 100 m and per 100 ft."""
    from .cables import catalog
    from .units import FEET_PER_M, parse_frequency

    freqs = [parse_frequency(t.strip(), "--at") for t in at.split(",") if t.strip()]
    cat = catalog(cables)
    head = f"{'id':15}{'Z0':>5}{'VF':>6}  " + "".join(f"{f'dB/100m @{f / 1e6:g}MHz':>20}" for f in freqs) + "  name"
    print(head)
    for c in cat.values():
        losses = "".join(f"{float(c.loss_db_per_100ft(f)) * FEET_PER_M:>20.2f}" for f in freqs)
        print(f"{c.id:15}{c.z0_ohm:>5g}{c.vf:>6.2f}  {losses}  {c.name}")
    print("\nFigures are generic nominal values from memory unless your catalog says otherwise; "
          "measure your own run with `deembed characterize` when it matters.")


@app.command("demo")
def demo_command(out: str = typer.Option("out/demo", "--out", help="Folder for the demo's results.")):
    """Run the main job on the bundled sample sweeps of an invented station."""
    from .demo import run_demo

    run_demo(out)


def _register_optional():
    """Commands that live in their own ``cli_<name>.py`` modules register here."""
    from .cli_characterize import characterize_command
    from .cli_compare import compare_command, site_command

    app.command("characterize")(characterize_command)
    app.command("compare")(compare_command)
    app.command("site")(site_command)


_register_optional()


def main(argv=None) -> int:
    """Console entry point: run a command, turning user errors into one line and exit status 2."""
    args = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in args
    args = [a for a in args if a != "--debug"]
    try:
        rv = app(args=args, prog_name="deembed", standalone_mode=False)
        return int(rv) if isinstance(rv, int) else 0
    except DeembedError as exc:
        if debug:
            raise
        print("error: " + " ".join(str(exc).splitlines()), file=sys.stderr)  # always one line
        return 2
    except typer.Exit as exc:
        return exc.exit_code
    except typer.Abort:
        print("aborted", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # usage errors of the option parser carry format_message() and exit_code
        if hasattr(exc, "format_message") and hasattr(exc, "exit_code"):
            if debug:
                raise
            # one line, like our own errors, instead of the parser's usage block
            msg = " ".join(str(exc.format_message()).split())
            if not msg:  # no arguments at all: the parser has already shown the help
                return exc.exit_code
            ctx = getattr(exc, "ctx", None)
            hint = f" (see '{ctx.command_path} -h')" if ctx is not None and getattr(ctx, "command_path", "") else ""
            print(f"error: {msg}{hint}", file=sys.stderr)
            return exc.exit_code
        if debug:
            raise
        print(f"internal error: {type(exc).__name__}: {exc} (run again with --debug for the traceback, "
              "and please report it)", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
