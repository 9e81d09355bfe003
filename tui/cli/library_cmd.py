"""``protomix library [QUERY]``: list systems and reagents with their sources."""

from __future__ import annotations

import sys

from tui.cli import EXIT_NO_ANSWER

HELP = "list acid–base systems and reagents (matching QUERY), with pKa and sources"

EPILOG = "Nothing matching QUERY: one line on stderr and exit status 3."


def add_arguments(parser) -> None:
    parser.add_argument("query", nargs="?", default="", help="part of a name, alias or formula")
    parser.add_argument("--sources", action="store_true", help="print the full source of every entry")


def _system_line(sys_) -> str:
    pka = ", ".join(f"{p:g}" for p in sys_.pka)
    if sys_.dh_kj is None:
        temp = "no temperature data"
    else:
        temp = "ΔH " + ", ".join(f"{h:g}" for h in sys_.dh_kj) + " kJ/mol"
        if sys_.dcp_j is not None:
            temp += "; ΔCp " + ", ".join(f"{c:g}" for c in sys_.dcp_j) + " J/(K·mol)"
    forms = " / ".join(sys_.species)
    return f"system   {sys_.name:<22} pKa {pka}  ({temp})  {forms}"


def _reagent_line(r) -> str:
    mm = f"{r.molar_mass:.2f} g/mol" if r.molar_mass else "no molar mass"
    what = f"→ {r.system.name}" if r.system else "strong electrolyte"
    alias = f"  aka {', '.join(r.aliases)}" if r.aliases else ""
    return f"reagent  {r.name:<36} {r.formula:<16} {mm:<14} {what}{alias}"


def _count(n: int, noun: str) -> str:
    return f"{n} {noun}{'s' * (n != 1)}"


def run(args) -> int:
    from chem import load_library
    from chem import AcidBaseSystem
    from tui.text import one_line, printable

    lib = load_library()
    hits = lib.search(args.query)
    if not hits:
        print(f"protomix: nothing in the library matches '{one_line(args.query, 80)}'", file=sys.stderr)
        return EXIT_NO_ANSWER
    lines = []
    for item in hits:
        lines.append(_system_line(item) if isinstance(item, AcidBaseSystem) else _reagent_line(item))
        if args.sources or args.query:
            lines.append(f"         source: {item.source}")
    systems = sum(isinstance(h, AcidBaseSystem) for h in hits)
    lines.append(f"\n{_count(systems, 'system')}, {_count(len(hits) - systems, 'reagent')}"
                 + ("" if args.query or args.sources else "  (add --sources for where each number comes from)"))
    print(printable("\n".join(lines), newlines=True))
    return 0
