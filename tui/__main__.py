"""Entry point of the ``protomix`` console script."""

from __future__ import annotations

import sys

from tui.cli import main as _cli_main


def main(argv: list[str] | None = None) -> int:
    """Run protomix with ``argv`` (default ``sys.argv[1:]``); returns the exit status."""
    code = _cli_main(sys.argv[1:] if argv is None else argv)
    return code


if __name__ == "__main__":
    sys.exit(main())
