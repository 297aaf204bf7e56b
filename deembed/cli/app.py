"""The command line: the typer app, its commands (one module each in this folder) and the error mapping.

Every user error is a :class:`deembed.base.errors.DeembedError`; ``main`` prints it as one line and
exits with status 2 (``--debug`` shows the traceback instead).
"""
from __future__ import annotations

import sys

import typer

from ..base.errors import DeembedError
from .budget import budget_command
from .cables import cables_command
from .characterize import characterize_command
from .compare import compare_command
from .correct import correct_command
from .demo import demo_command
from .locate import locate_command
from .options import OPTION_FOR_FIELD
from .plainparams import install as _plain_params
from .site import site_command
from ..render.safety import safety_line
from .trend import trend_command

SAFETY = safety_line()

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    help="Remove the feed line from an antenna sweep taken at the analyzer end: the feedpoint's true match, "
         "resonance and bandwidth.\n\n" + SAFETY,
    context_settings={"help_option_names": ["-h", "--help"]},
    pretty_exceptions_enable=False,
    rich_markup_mode=None,  # plain help: typer's rich formatter alone would cost more than typer itself
)

_plain_params()  # option values without pydantic where plain Python gives typer's answer (start-up time)

# One module per command; each command function imports the layers below it when it runs, so that
# `deembed --help` loads typer and nothing heavy.
app.command("correct")(correct_command)
app.command("budget")(budget_command)
app.command("cables")(cables_command)
app.command("demo")(demo_command)
app.command("characterize")(characterize_command)
app.command("compare")(compare_command)
app.command("site")(site_command)
app.command("locate")(locate_command)
app.command("trend")(trend_command)


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
        # the library names fields (power, length); the command line names its options (--power, --length)
        print("error: " + " ".join(exc.render(OPTION_FOR_FIELD).splitlines()), file=sys.stderr)  # always one line
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
