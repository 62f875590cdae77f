"""``ookframe`` entry point: subcommand registry, one error funnel, named exit codes."""

from __future__ import annotations

import argparse
import difflib
import importlib
import sys
from collections.abc import Sequence
from types import ModuleType

from .. import __version__
from ..errors import CaptureError, CodegenError, OokframeError, SpecError, ValueRangeError
from . import exitcodes
from .registry import COMMANDS


def _modules() -> list[ModuleType]:
    return [importlib.import_module(f"{__package__}.{m}") for m in COMMANDS]


def build_parser() -> tuple[argparse.ArgumentParser, dict[str, ModuleType]]:
    """Return the argument parser and the command-name -> module map."""
    parser = argparse.ArgumentParser(
        prog="ookframe",
        description="Design, encode, decode, stress and emit C for frames on cheap OOK radio links.",
    )
    parser.add_argument("--version", action="version", version=f"ookframe {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    table: dict[str, ModuleType] = {}
    for mod in _modules():
        text = mod.HELP.replace("%", "%%")  # argparse formats help strings with %
        p = sub.add_parser(mod.NAME, help=text, description=mod.HELP)
        mod.add_arguments(p)
        table[mod.NAME] = mod
    return parser, table


def _suggest_command(argv: Sequence[str], names: list[str]) -> str | None:
    words = [a for a in argv if not a.startswith("-")]
    if not words or words[0] in names:
        return None
    close = difflib.get_close_matches(words[0], names, n=1)
    hint = f" (did you mean '{close[0]}'?)" if close else ""
    return f"unknown command '{words[0]}'{hint}; commands: {', '.join(names)}"


def _asks_version(argv: Sequence[str]) -> bool:
    """True when --version comes before any command word (only --debug may precede it)."""
    for a in argv:
        if a == "--version":
            return True
        if a != "--debug":
            return False
    return False


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit code (also used as the process status)."""
    argv = list(sys.argv[1:] if argv is None else argv)
    if _asks_version(argv):  # answered before the commands (and numpy, rich) are imported
        sys.stdout.write(f"ookframe {__version__}\n")
        return _exit(exitcodes.OK)
    from .output import OutputExists, err

    parser, table = build_parser()
    msg = _suggest_command(argv, list(table))
    if msg:
        err.print(f"ookframe: error: {msg}")
        return _exit(exitcodes.USAGE)
    try:
        args = parser.parse_args(argv)
    except SystemExit as e:  # argparse already printed its message
        return _exit(int(e.code or 0) and exitcodes.USAGE)
    if not args.command:
        parser.print_help(sys.stderr)
        return _exit(exitcodes.USAGE)
    try:
        return _exit(table[args.command].run(args))
    except SpecError as e:
        return _fail(args, f"spec error: {e}", exitcodes.BAD_SPEC)
    except (CaptureError, ValueRangeError) as e:
        return _fail(args, str(e), exitcodes.BAD_INPUT)
    except CodegenError as e:
        return _fail(args, str(e), exitcodes.CODEGEN)
    except OutputExists as e:
        return _fail(args, str(e), exitcodes.EXISTS)
    except OokframeError as e:
        return _fail(args, str(e), exitcodes.BAD_INPUT)
    except OSError as e:
        return _fail(args, f"{e.strerror or e}: {e.filename or ''}".rstrip(": "), exitcodes.BAD_INPUT)
    except KeyboardInterrupt:
        err.print("ookframe: interrupted")
        return _exit(exitcodes.INTERRUPTED)
    except Exception as e:  # noqa: BLE001 - the one funnel for bugs
        if args.debug:
            raise
        return _fail(args, f"internal error: {type(e).__name__}: {e} (rerun with --debug "
                     "for a traceback)", exitcodes.INTERNAL)


def _fail(args: argparse.Namespace, message: str, code: int) -> int:
    from .output import err

    if getattr(args, "debug", False):
        import traceback

        traceback.print_exc()
    err.print(f"ookframe {args.command}: error: {message}", markup=False)
    return _exit(code)


def _exit(code: int) -> int:
    return code


def run() -> None:  # pragma: no cover - console script shim
    from ..stress.allocator import keep_freed_memory

    keep_freed_memory()  # this process is ookframe's own: long runs reuse freed blocks
    sys.exit(main())


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
