"""``protomix library [QUERY]``: list systems and reagents with their sources."""

from __future__ import annotations

HELP = "list acid–base systems and reagents (matching QUERY), with pKa and sources"


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


def run(args) -> int:
    from chem import load_library
    from chem.model import AcidBaseSystem

    lib = load_library()
    hits = lib.search(args.query)
    if not hits:
        print(f"protomix: nothing in the library matches '{args.query}'")
        return 0
    for item in hits:
        if isinstance(item, AcidBaseSystem):
            print(_system_line(item))
        else:
            print(_reagent_line(item))
        if args.sources or args.query:
            print(f"         source: {item.source}")
    print(f"\n{sum(isinstance(h, AcidBaseSystem) for h in hits)} systems, "
          f"{sum(not isinstance(h, AcidBaseSystem) for h in hits)} reagents"
          + ("" if args.query or args.sources else "  (add --sources for where each number comes from)"))
    return 0
