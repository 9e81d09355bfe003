"""Command-line dispatch.

``protomix [FILE.toml]`` opens the explorer; ``protomix SUBCOMMAND ...`` runs
a line command.  Each subcommand lives in its own module exposing
``HELP`` (one line), ``add_arguments(parser)`` and ``run(args) -> int``.
Bad input prints one line to stderr and exits with status 2; no traceback
reaches the user.
"""

from __future__ import annotations

import argparse
import gc
import importlib
import sys

#: subcommand -> module (imported only when used, so --help stays fast)
SUBCOMMANDS = {
    "solve": "tui.cli.solve_cmd",
    "library": "tui.cli.library_cmd",
    "curve": "tui.cli.curve_cmd",
    "recipe": "tui.cli.recipe_cmd",
    "fit": "tui.cli.fit_cmd",
}

EXIT_OK = 0
EXIT_INTERNAL = 1
EXIT_BAD_INPUT = 2


def _version() -> str:
    try:
        from importlib.metadata import version
        return version("protomix")
    except Exception:  # running from a source tree without installing
        return "0.1.0"


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors and exit status 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.exit(EXIT_BAD_INPUT, f"{self.prog}: error: {message} (see --help)\n")


def _available() -> dict[str, object]:
    mods = {}
    for name, modname in SUBCOMMANDS.items():
        try:
            mods[name] = importlib.import_module(modname)
        except ModuleNotFoundError as exc:
            if exc.name != modname:
                raise
    return mods


def _top_parser(mods) -> _Parser:
    lines = "\n".join(f"  protomix {name:<8} {getattr(m, 'HELP', '')}" for name, m in mods.items())
    p = _Parser(
        prog="protomix",
        description="Solve the complete aqueous acid–base equilibrium of a mixture and explore it live.",
        epilog=("commands:\n  protomix [FILE.toml]     open the explorer (on the built-in demo mixture without FILE)\n"
                f"{lines}\n\nRun 'protomix COMMAND --help' for a command's options.\n"
                "Results are model estimates; follow safety data sheets, local codes and licensed practice."),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("file", nargs="?", metavar="FILE.toml", help="preset to open in the explorer")
    p.add_argument("--version", action="version", version=f"protomix {_version()}")
    return p


def _ensure_utf8_stderr() -> None:
    # Textual draws on sys.__stderr__; an ASCII stderr garbles the whole screen.
    err = sys.__stderr__
    if err is not None and (err.encoding or "").lower().replace("-", "") != "utf8":
        try:
            err.reconfigure(encoding="utf-8")
        except (AttributeError, ValueError):
            pass


def main(argv: list[str]) -> int:
    from chem.errors import ChemError

    try:
        if argv and argv[0] in SUBCOMMANDS:
            name = argv[0]
            try:
                mod = importlib.import_module(SUBCOMMANDS[name])
            except ModuleNotFoundError as exc:
                if exc.name != SUBCOMMANDS[name]:
                    raise
                print(f"protomix: error: the '{name}' command is not available in this build", file=sys.stderr)
                return EXIT_BAD_INPUT
            parser = _Parser(prog=f"protomix {name}", description=getattr(mod, "DESCRIPTION", mod.HELP),
                             formatter_class=argparse.RawDescriptionHelpFormatter,
                             epilog=getattr(mod, "EPILOG", None))
            mod.add_arguments(parser)
            args = parser.parse_args(argv[1:])
            return int(mod.run(args) or 0)
        parser = _top_parser(_available() if any(a in ("-h", "--help") for a in argv) else {})
        args = parser.parse_args(argv)
        if args.file is not None:
            from pathlib import Path

            if not Path(args.file).is_file():
                print(f"protomix: error: '{args.file}' is neither a preset file nor a command "
                      f"({', '.join(SUBCOMMANDS)}); see --help", file=sys.stderr)
                return EXIT_BAD_INPUT
        _ensure_utf8_stderr()
        # Start-up creates a few hundred thousand objects (imports, the first layout); the cyclic
        # garbage collector's passes over them cost about 50 ms. The explorer turns it back on,
        # after freezing what it built, once its first frame is up.
        gc.disable()
        try:
            from tui.app import run_explorer

            return int(run_explorer(args.file) or 0)
        finally:
            gc.enable()
    except ChemError as exc:
        print(f"protomix: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("protomix: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return EXIT_OK
    except SystemExit as exc:
        return int(exc.code or 0) if isinstance(exc.code, int) else EXIT_BAD_INPUT
    except Exception as exc:  # noqa: BLE001 - last line of defence: no traceback for users
        print(f"protomix: internal error: {type(exc).__name__}: {exc} "
              "(please report this with the input that caused it)", file=sys.stderr)
        return EXIT_INTERNAL
