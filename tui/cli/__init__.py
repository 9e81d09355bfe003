"""Command-line dispatch.

``protomix [FILE.toml]`` opens the explorer; ``protomix SUBCOMMAND ...`` runs
a line command.  Each subcommand lives in its own module exposing
``HELP`` (one line), ``add_arguments(parser)`` and ``run(args) -> int``.

Exit statuses (also in ``--help`` and the README):

* 0: done.
* 1: an internal error, a bug of protomix (one line asks to report it).
* 2: bad input or a file problem (one line on stderr: what and where).
* 3: no usable answer: a solve did not converge (the numbers are printed, marked
  unreliable), or ``library`` found nothing that matches.

Every message that quotes text from a file or the command line goes through
:func:`tui.text.one_line`: control characters escaped, long input shortened.
``--help`` and ``--version`` load neither the core nor numpy.
"""

from __future__ import annotations

import argparse
import errno
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
EXIT_NO_ANSWER = 3

EXIT_STATUSES = ("exit status: 0 done; 2 bad input or a file problem (one line on stderr); 3 no usable answer "
                 "(a solve did not converge, or nothing matches); 1 an internal error (please report it)")


def _version() -> str:
    from tui import __version__

    return __version__


#: Errors of writing the output (files of our own are written by chem, which words its errors itself).
_OUTPUT_ERRNOS = {errno.ENOSPC, errno.EDQUOT, errno.EFBIG, errno.EIO, errno.EPIPE}


class _Parser(argparse.ArgumentParser):
    """argparse with one-line, terminal-safe errors and exit status 2."""

    def _print_message(self, message, file=None) -> None:  # type: ignore[override]
        # argparse drops write errors; --help into a full device must fail like any output.
        if message:
            (file or sys.stderr).write(message)

    def error(self, message: str) -> None:  # type: ignore[override]
        from tui.text import one_line

        self.exit(EXIT_BAD_INPUT, f"{self.prog}: error: {one_line(message)} (see --help)\n")


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
                f"{lines}\n\nRun 'protomix COMMAND --help' for a command's options.\n{EXIT_STATUSES}.\n"
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


def _user_error(exc: BaseException) -> bool:
    """``exc`` was caused by what the user gave (bad input, a file), not by a bug."""
    core = sys.modules.get("chem")                      # loaded whenever the core ran
    if core is not None and isinstance(exc, core.ChemError):
        return True
    storage = sys.modules.get("tui.storage")
    return storage is not None and isinstance(exc, storage.StorageError)


def _say(message: str) -> None:
    from tui.text import one_line

    try:
        print(f"protomix: {one_line(message)}", file=sys.stderr)
    except (OSError, ValueError):                       # stderr itself is gone: nothing more to do
        pass


def _output_failed(exc: OSError) -> int:
    """stdout cannot be written (a full disk, /dev/full, a closed pipe): one line, status 2."""
    import os

    try:                                                # the interpreter flushes stdout again at exit
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass
    if isinstance(exc, BrokenPipeError):                # the reader went away (| head): not an error
        return EXIT_OK
    _say(f"error: cannot write the output ({exc.strerror or exc})")
    return EXIT_BAD_INPUT


def _run(argv: list[str]) -> int:
    if argv and argv[0] in SUBCOMMANDS:
        name = argv[0]
        try:
            mod = importlib.import_module(SUBCOMMANDS[name])
        except ModuleNotFoundError as exc:
            if exc.name != SUBCOMMANDS[name]:
                raise
            _say(f"error: the '{name}' command is not available in this build")
            return EXIT_BAD_INPUT
        parser = _Parser(prog=f"protomix {name}", description=getattr(mod, "DESCRIPTION", mod.HELP),
                         formatter_class=argparse.RawDescriptionHelpFormatter,
                         epilog="\n\n".join(filter(None, (getattr(mod, "EPILOG", None), EXIT_STATUSES + "."))))
        mod.add_arguments(parser)
        args = parser.parse_args(argv[1:])
        return int(mod.run(args) or 0)
    parser = _top_parser(_available() if any(a in ("-h", "--help") for a in argv) else {})
    args = parser.parse_args(argv)
    if args.file is not None:
        from pathlib import Path

        if not Path(args.file).is_file():
            _say(f"error: '{args.file}' is neither a preset file nor a command ({', '.join(SUBCOMMANDS)}); "
                 "see --help")
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


def main(argv: list[str]) -> int:
    try:
        code = _run(argv)
        sys.stdout.flush()                              # a full device fails here, not at exit
        return code
    except SystemExit as exc:                           # --help, --version, argparse errors
        try:
            sys.stdout.flush()
        except OSError as out:
            return _output_failed(out)
        return int(exc.code or 0) if isinstance(exc.code, int) else EXIT_BAD_INPUT
    except KeyboardInterrupt:
        _say("interrupted")
        return 130
    except OSError as exc:
        if isinstance(exc, BrokenPipeError) or exc.filename is None and exc.errno in _OUTPUT_ERRNOS:
            return _output_failed(exc)
        if _user_error(exc):
            _say(f"error: {exc}")
            return EXIT_BAD_INPUT
        _say(f"internal error: {type(exc).__name__}: {exc} (please report this with the input that caused it)")
        return EXIT_INTERNAL
    except Exception as exc:  # noqa: BLE001 - last line of defence: no traceback for users
        if _user_error(exc):
            _say(f"error: {exc}")
            return EXIT_BAD_INPUT
        _say(f"internal error: {type(exc).__name__}: {exc} (please report this with the input that caused it)")
        return EXIT_INTERNAL
