"""The command line: the typer app, its commands (one module each in this folder) and the error mapping.

Every user error is a :class:`deembed.base.errors.DeembedError`; ``main`` prints it as one line and
exits with its status: 2 for bad input, 3 for results that could not be written (``--debug`` shows the
traceback instead). The statuses are listed at ``EXIT_OK`` below and in the README.
"""
from __future__ import annotations

import copy
import inspect
import sys
from collections.abc import MutableMapping

import typer
from typer.core import TyperCommand, TyperGroup

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

class LazyGroup(TyperGroup):
    """The command group that builds a command's parameters only when that command is asked for.

    typer turns every command function into click parameters before it can show any help, which reads the
    type hints of all nine commands and costs ``deembed --help`` more than a third of its time. The top-level
    help needs only each command's name and first line of help, so :func:`command` gives this group a
    :class:`_LazyCommands` mapping: the listing comes from the docstrings (through the same click code, so
    the same text), and ``deembed CMD ...`` builds only CMD. Built through ``typer.main.get_command(app)``
    (all commands at once, as typer does) it is an ordinary typer group."""

    def list_commands(self, ctx) -> list:
        return list(self.commands.keys())  # names only: typer's own would build every command

    def format_commands(self, ctx, formatter) -> None:
        commands = self.commands
        if not isinstance(commands, _LazyCommands):
            return super().format_commands(ctx, formatter)
        self.commands = {name: commands.for_listing(name) for name in commands}  # typer's layout, our rows
        try:
            super().format_commands(ctx, formatter)
        finally:
            self.commands = commands


app = typer.Typer(
    cls=LazyGroup,
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

METAVARS = {
    "--out": "DIR", "--line": "FILE", "--after-line": "FILE", "--bands-file": "FILE", "--open": "FILE",
    "--short": "FILE", "--load": "FILE", "--catalog": "FILE", "--record": "STORE", "--target": "FREQ",
    "--max-shift": "FREQ", "--max-drift": "RATE", "--at": "FREQ", "--resolve": "LENGTH", "--length": "LENGTH",
    "--power": "POWER", "--date": "YYYY-MM-DD", "--baseline-date": "YYYY-MM-DD", "--name": "NAME",
    "--antenna": "NAME", "--tol": "NAME=VALUE", "--draws": "N", "--seed": "N", "--workers": "N", "--pad": "N",
    "--kaiser-beta": "BETA", "--threshold": "LEVEL", "--floor": "LEVEL", "--keep": "FROM:TO", "--remove": "FROM:TO",
    "--unit": "m|ft", "--cal-uncertainty": "PRESET", "--max-swr-rise": "SWR", "--max-gamma-change": "GAMMA",
    "--max-bw-loss": "PERCENT", "--max-loss-change": "LOSS", "--max-loss-rise": "LOSS", "--loss": "LOSS",
    "--antenna-swr": "SWR", "--measured-swr": "SWR", "--swr-limits": "SWR", "--open-c": "CAPACITANCE",
    "--short-l": "INDUCTANCE", "--load-r": "OHMS", "--z0": "OHMS", "--delay": "TIME", "--vf": "VF",
    "--cable": "ID", "--port": "1|2", "--columns": "MAP", "--time-limit": "DURATION",
}
"""Help placeholders that say what goes there (set on every option that does not name its own)."""


def _placeholders() -> None:
    import inspect

    from typer.models import ArgumentInfo, OptionInfo

    for cmd in app.registered_commands:
        for p in inspect.signature(cmd.callback).parameters.values():
            info = p.default
            if isinstance(info, ArgumentInfo) and info.metavar is None:
                info.metavar = p.name.upper()
            elif isinstance(info, OptionInfo) and info.metavar is None and info.param_decls:
                name = info.param_decls[0]
                if name in METAVARS and not isinstance(info.default, bool):
                    info.metavar = METAVARS[name]


_placeholders()


def _plain_arguments() -> None:
    """Arguments shown as their placeholder alone (``SWEEP``), not ``{SWEEP}`` in the usage line and
    ``SWEEP <str>`` in the list: typer 0.2x's plain help adds both, and neither tells a user anything."""
    from typer.core import TyperArgument

    TyperArgument._usage_display_name = (
        lambda self: (self.display_name_raw if self.required else f"[{self.display_name_raw}]")
        + ("..." if self.nargs != 1 else ""))
    TyperArgument.display_type_rich = lambda self, ctx: None


_plain_arguments()


class _LazyCommands(MutableMapping):
    """name -> click command, each built from its typer registration on first access (see :class:`LazyGroup`)."""

    def __init__(self, typer_app: typer.Typer):
        self._app = typer_app
        self._infos = {info.name or typer.main.get_command_name(info.callback.__name__): info
                       for info in typer_app.registered_commands}
        self._built: dict = {}

    def __getitem__(self, name):
        if name not in self._built:
            self._built[name] = typer.main.get_command_from_info(
                self._infos[name], pretty_exceptions_short=self._app.pretty_exceptions_short,
                rich_markup_mode=self._app.rich_markup_mode)
        return self._built[name]

    def __setitem__(self, name, command) -> None:
        self._built[name] = command
        self._infos.setdefault(name, None)

    def __delitem__(self, name) -> None:
        del self._infos[name]
        self._built.pop(name, None)

    def __iter__(self):
        return iter(self._infos)

    def __len__(self) -> int:
        return len(self._infos)

    def for_listing(self, name):
        """The command if built, else one with its help and flags but no parameters (what a listing shows),
        made with the arguments typer's ``get_command_from_info`` gives these fields."""
        info = self._infos[name]
        if name in self._built or info is None:
            return self[name]
        return TyperCommand(name=name, help=inspect.getdoc(info.callback) if info.help is None
                            else inspect.cleandoc(info.help), short_help=info.short_help, hidden=info.hidden,
                            deprecated=info.deprecated, rich_markup_mode=self._app.rich_markup_mode)


def command():
    """The click command ``main`` runs: the root options and help as typer builds them, the commands lazily."""
    shell = copy.copy(app)
    shell.registered_commands = []  # the group without building a command; they come from the mapping
    group = typer.main.get_command(shell)
    group.commands = _LazyCommands(app)
    return group


def _version(value: bool):
    if value:
        from .. import __version__

        print(f"deembed {__version__}")
        raise typer.Exit()


@app.callback()
def _root(
    version: bool = typer.Option(False, "--version", callback=_version, is_eager=True,
                                 help="Print the version and exit."),
    debug: bool = typer.Option(False, "--debug", help="On an error, show the full traceback instead of the "
                                                      "one-line message (for reporting a fault); works after any "
                                                      "command too."),
):
    """Remove the feed line from an antenna sweep taken at the analyzer end."""


EXIT_OK = 0
EXIT_CHECK_FAILED = 1
EXIT_BAD_INPUT = 2
EXIT_WRITE_FAILED = 3
EXIT_INTERNAL = 4
"""Exit statuses (the README's table): 0 done and every check passed; 1 a check failed (compare or site
limits exceeded, a site entry that could not be checked); 2 bad input (a file or an option); 3 the
results could not be written; 4 an internal error (a bug); 128 + N stopped by signal N (130 Ctrl-C,
143 SIGTERM, 129 SIGHUP)."""

GLOBAL_OPTIONS = ("--debug", "--max-input-size")


def _take_option(args: list, name: str):
    """Remove ``name VALUE`` or ``name=VALUE`` from ``args`` (anywhere); returns (args, value or None)."""
    rest, value, i = [], None, 0
    while i < len(args):
        a = args[i]
        if a == name:
            if i + 1 >= len(args):
                from ..base.errors import OptionError

                raise OptionError(name, "needs a value, e.g. 512MiB")
            value, i = args[i + 1], i + 2
            continue
        if a.startswith(name + "="):
            value = a[len(name) + 1:]
        else:
            rest.append(a)
        i += 1
    return rest, value


def main(argv=None) -> int:
    """Console entry point: run a command; errors become one line and an exit status (see EXIT_*).

    Everything the command prints passes through :class:`~deembed.base.textsafe.SafeStream` (control
    characters from files are shown escaped), Python warnings are not shown (``--debug`` shows them),
    and SIGTERM/SIGHUP unwind like Ctrl-C so that nothing half-written is left.
    """
    import os
    import warnings

    from ..base.signals import signals_raise
    from ..base.textsafe import SafeStream

    args = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in args
    args = [a for a in args if a != "--debug"]
    saved = sys.stdout, sys.stderr
    env_saved = os.environ.get("DEEMBED_MAX_INPUT_SIZE")
    sys.stdout, sys.stderr = SafeStream(sys.stdout), SafeStream(sys.stderr)
    try:
        with warnings.catch_warnings():
            if not debug:
                warnings.simplefilter("ignore")
            with signals_raise():
                return _run(args, debug)
    finally:
        sys.stdout.flush()
        sys.stderr.flush()
        sys.stdout, sys.stderr = saved
        if env_saved is None:
            os.environ.pop("DEEMBED_MAX_INPUT_SIZE", None)
        else:
            os.environ["DEEMBED_MAX_INPUT_SIZE"] = env_saved


def _run(args: list, debug: bool) -> int:
    import os

    from ..base.signals import Interrupted
    from ..base.textsafe import one_line

    try:
        args, size = _take_option(args, "--max-input-size")
        if size is not None:
            from ..io.inputfile import parse_size

            os.environ["DEEMBED_MAX_INPUT_SIZE"] = str(parse_size(size, "--max-input-size"))
        rv = command()(args=args, prog_name="deembed", standalone_mode=False)
        return int(rv) if isinstance(rv, int) else EXIT_OK
    except DeembedError as exc:
        if debug:
            raise
        # the library names fields (power, length); the command line names its options (--power, --length)
        print("error: " + one_line(exc.render(OPTION_FOR_FIELD)), file=sys.stderr)  # always one line
        return getattr(exc, "exit_status", EXIT_BAD_INPUT)
    except typer.Exit as exc:
        return exc.exit_code
    except (typer.Abort, KeyboardInterrupt):
        print("interrupted; results are written all together or not at all, so nothing half-written is left",
              file=sys.stderr)
        return 130
    except Interrupted as exc:
        print(f"stopped by {exc.signame}; results are written all together or not at all, so nothing "
              "half-written is left", file=sys.stderr)
        return exc.exit_status
    except Exception as exc:  # usage errors of the option parser carry format_message() and exit_code
        if hasattr(exc, "format_message") and hasattr(exc, "exit_code"):
            if debug:
                raise
            # one line, like our own errors, instead of the parser's usage block
            msg = one_line(exc.format_message())
            if not msg:  # no arguments at all: the parser has already shown the help
                return exc.exit_code
            ctx = getattr(exc, "ctx", None)
            hint = f" (see '{ctx.command_path} -h')" if ctx is not None and getattr(ctx, "command_path", "") else ""
            print(f"error: {msg}{hint}", file=sys.stderr)
            return exc.exit_code
        if debug:
            raise
        print(one_line(f"internal error: {type(exc).__name__}: {exc} (run again with --debug for the traceback, "
                       "and please report it)"), file=sys.stderr)
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
