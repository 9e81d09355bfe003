"""Preset files (TOML, ``format = 1``): read, validate and write mixtures.

Every error is one line naming the file, the entry and the field, e.g.
``rinse.toml: ingredient 2 (Na2HPO4): conc: unknown unit 'kg'``.
Saving is atomic (temporary file, fsync, rename) and refuses to replace an
existing file unless asked to.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
import tomllib
from pathlib import Path
from typing import Any

import tomli_w

from .activity import MODELS
from .errors import ChemError, PresetError
from .library import Library, load_library
from .model import AcidBaseSystem, Ingredient, Mixture, Reagent, charge_label
from .units import parse_concentration

FORMAT = 1
_TOP_KEYS = {"format", "title", "temperature_c", "activity", "notes", "ingredient", "custom"}
_INGREDIENT_KEYS = {"name", "conc"}
_CUSTOM_KEYS = {"name", "pKa", "dH_kJ", "dCp_J", "ion_size_A", "charge_fully_protonated", "protons",
                "counter_ions", "species", "molar_mass", "source"}
_CUSTOM_REQUIRED = {"name", "pKa", "charge_fully_protonated", "protons"}


def _num(value, where: str, *, lo: float | None = None, hi: float | None = None) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise PresetError(f"{where}: expected a number, got {type(value).__name__} {value!r}")
    v = float(value)
    if not math.isfinite(v):
        raise PresetError(f"{where}: must be a finite number")
    if lo is not None and v < lo or hi is not None and v > hi:
        raise PresetError(f"{where}: {v:g} is outside {lo:g}..{hi:g}")
    return v


def _int(value, where: str, *, lo: int | None = None, hi: int | None = None) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise PresetError(f"{where}: expected a whole number, got {value!r}")
    if lo is not None and value < lo or hi is not None and value > hi:
        raise PresetError(f"{where}: {value} is outside {lo}..{hi}")
    return value


def _str(value, where: str) -> str:
    if not isinstance(value, str):
        raise PresetError(f"{where}: expected text, got {type(value).__name__} {value!r}")
    return value


def _num_list(value, where: str) -> tuple[float, ...]:
    if not isinstance(value, list) or not value:
        raise PresetError(f"{where}: expected a non-empty list of numbers")
    return tuple(_num(v, f"{where}[{i + 1}]") for i, v in enumerate(value))


def custom_reagent(entry: dict, where: str, library: Library) -> Reagent:
    """Build the system and reagent defined by one ``[[custom]]`` table."""
    if not isinstance(entry, dict):
        raise PresetError(f"{where}: expected a table")
    unknown = set(entry) - _CUSTOM_KEYS
    if unknown:
        raise PresetError(f"{where}: unknown key '{sorted(unknown)[0]}' "
                          f"(allowed: {', '.join(sorted(_CUSTOM_KEYS))})")
    for key in sorted(_CUSTOM_REQUIRED):
        if key not in entry:
            raise PresetError(f"{where}: missing '{key}'")
    name = _str(entry["name"], f"{where}.name").strip()
    if not name:
        raise PresetError(f"{where}.name: must not be empty")
    where = f"{where} ({name})"
    pka = _num_list(entry["pKa"], f"{where}: pKa")
    for i, p in enumerate(pka):
        if not -2.0 <= p <= 16.0:
            raise PresetError(f"{where}: pKa[{i + 1}] = {p:g} is outside -2..16")
    dh = _num_list(entry["dH_kJ"], f"{where}: dH_kJ") if "dH_kJ" in entry else None
    dcp = _num_list(entry["dCp_J"], f"{where}: dCp_J") if "dCp_J" in entry else None
    charge = _int(entry["charge_fully_protonated"], f"{where}: charge_fully_protonated", lo=-6, hi=6)
    protons = _int(entry["protons"], f"{where}: protons", lo=0, hi=len(pka))
    size = _num(entry.get("ion_size_A", 4.0), f"{where}: ion_size_A", lo=1.0, hi=15.0)
    species = entry.get("species")
    if species is None:
        species = tuple(f"{name} ({charge_label(charge - k) or '0'})" for k in range(len(pka) + 1))
    else:
        if (not isinstance(species, list) or len(species) != len(pka) + 1
                or not all(isinstance(s, str) and s.strip() for s in species)):
            raise PresetError(f"{where}: species must list {len(pka) + 1} names, fully protonated first")
        species = tuple(s.strip() for s in species)
    counter_in = entry.get("counter_ions", {})
    if not isinstance(counter_in, dict):
        raise PresetError(f"{where}: counter_ions must be a table like {{ \"Cl-\" = 1 }}")
    counter = []
    for ion_name, n in counter_in.items():
        try:
            ion = library.ion(ion_name)
        except ChemError:
            raise PresetError(f"{where}: counter_ions: unknown ion '{ion_name}' "
                              f"(use {', '.join(i.name for i in library.ions)})") from None
        counter.append((ion, _int(n, f"{where}: counter_ions.{ion_name}", lo=1, hi=10)))
    molar_mass = entry.get("molar_mass")
    if molar_mass is not None:
        molar_mass = _num(molar_mass, f"{where}: molar_mass", lo=1e-3, hi=1e6)
    source = _str(entry.get("source", "user-defined in the preset"), f"{where}: source")
    try:
        system = AcidBaseSystem(name=name, species=species, pka=pka, charge_fully_protonated=charge,
                                dh_kj=dh, dcp_j=dcp, ion_size_a=size, source=source, custom=True)
        return Reagent(name=name, system=system, protons=protons, counter_ions=tuple(counter),
                       molar_mass=molar_mass, source=source, custom=True)
    except ChemError as exc:
        raise PresetError(f"{where}: {exc}") from None


def parse_preset(data: dict, label: str, library: Library | None = None) -> Mixture:
    """Turn the parsed TOML of a preset into a :class:`Mixture`; ``label`` names the file in errors."""
    library = library or load_library()
    unknown = set(data) - _TOP_KEYS
    if unknown:
        raise PresetError(f"{label}: unknown key '{sorted(unknown)[0]}' "
                          f"(allowed: {', '.join(sorted(_TOP_KEYS))})")
    fmt = data.get("format", FORMAT)
    if fmt != FORMAT or isinstance(fmt, bool):
        raise PresetError(f"{label}: format: expected {FORMAT}, got {fmt!r}")
    title = _str(data.get("title", ""), f"{label}: title")
    notes = _str(data.get("notes", ""), f"{label}: notes")
    temp = _num(data.get("temperature_c", 25.0), f"{label}: temperature_c", lo=0.0, hi=100.0)
    activity = _str(data.get("activity", "davies"), f"{label}: activity")
    if activity not in MODELS:
        raise PresetError(f"{label}: activity: unknown model '{activity}' (use {', '.join(MODELS)})")

    customs: dict[str, Reagent] = {}
    raw_custom = data.get("custom", [])
    if not isinstance(raw_custom, list):
        raise PresetError(f"{label}: custom: expected [[custom]] tables")
    for i, entry in enumerate(raw_custom):
        reagent = custom_reagent(entry, f"{label}: custom {i + 1}", library)
        key = reagent.name.casefold()
        if key in customs:
            raise PresetError(f"{label}: custom {i + 1}: name '{reagent.name}' is defined twice")
        customs[key] = reagent

    raw_ing = data.get("ingredient", [])
    if not isinstance(raw_ing, list):
        raise PresetError(f"{label}: ingredient: expected [[ingredient]] tables")
    ingredients = []
    for i, entry in enumerate(raw_ing):
        where = f"{label}: ingredient {i + 1}"
        if not isinstance(entry, dict):
            raise PresetError(f"{where}: expected a table with name and conc")
        unknown = set(entry) - _INGREDIENT_KEYS
        if unknown:
            raise PresetError(f"{where}: unknown key '{sorted(unknown)[0]}' (allowed: conc, name)")
        if "name" not in entry:
            raise PresetError(f"{where}: missing 'name'")
        name = _str(entry["name"], f"{where}: name")
        where = f"{where} ({name})"
        if "conc" not in entry:
            raise PresetError(f"{where}: missing 'conc'")
        reagent = customs.get(name.strip().casefold())
        if reagent is None:
            try:
                reagent = library.reagent(name)
            except ChemError as exc:
                raise PresetError(f"{where}: name: {exc}") from None
        raw = entry["conc"]
        try:
            conc = parse_concentration(raw, molar_mass=reagent.molar_mass)
        except ChemError as exc:
            raise PresetError(f"{where}: conc: {exc}") from None
        ingredients.append(Ingredient(reagent, conc, raw.strip() if isinstance(raw, str) else None))
    try:
        return Mixture(tuple(ingredients), temperature_c=temp, activity=activity, title=title, notes=notes)
    except ChemError as exc:
        raise PresetError(f"{label}: {exc}") from None


def load_preset(path, library: Library | None = None) -> Mixture:
    """Read and validate a preset file. Raises :class:`PresetError` with a one-line message."""
    p = Path(path)
    label = str(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise PresetError(f"{label}: no such file") from None
    except IsADirectoryError:
        raise PresetError(f"{label}: is a folder, not a preset file") from None
    except OSError as exc:
        raise PresetError(f"{label}: cannot read ({exc.strerror})") from None
    return loads_preset(raw, label, library)


def loads_preset(raw: bytes | str, label: str = "<preset>", library: Library | None = None) -> Mixture:
    """Parse preset text (``label`` names it in errors)."""
    try:
        text = raw.decode("utf-8") if isinstance(raw, bytes) else raw
    except UnicodeDecodeError:
        raise PresetError(f"{label}: not UTF-8 text") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise PresetError(f"{label}: malformed TOML: {exc}") from None
    return parse_preset(data, label, library)


def _custom_table(reagent: Reagent) -> dict[str, Any]:
    sys_ = reagent.system
    assert sys_ is not None
    table: dict[str, Any] = {"name": reagent.name, "pKa": list(sys_.pka)}
    if sys_.dh_kj is not None:
        table["dH_kJ"] = list(sys_.dh_kj)
    if sys_.dcp_j is not None:
        table["dCp_J"] = list(sys_.dcp_j)
    table["ion_size_A"] = sys_.ion_size_a
    table["charge_fully_protonated"] = sys_.charge_fully_protonated
    table["protons"] = reagent.protons
    table["counter_ions"] = {ion.name: n for ion, n in reagent.counter_ions}
    table["species"] = list(sys_.species)
    if reagent.molar_mass is not None:
        table["molar_mass"] = reagent.molar_mass
    return table


def dumps_preset(mixture: Mixture) -> str:
    """The preset text of ``mixture`` (round-trips through :func:`loads_preset`)."""
    doc: dict[str, Any] = {"format": FORMAT}
    if mixture.title:
        doc["title"] = mixture.title
    doc["temperature_c"] = mixture.temperature_c
    doc["activity"] = mixture.activity
    if mixture.notes:
        doc["notes"] = mixture.notes
    parts = [tomli_w.dumps(doc)]
    for ing in mixture.ingredients:              # [[ingredient]] tables, as people write them
        parts.append("\n[[ingredient]]\n" + tomli_w.dumps({"name": ing.reagent.name,
                                                           "conc": ing.text if ing.text else ing.conc}))
    seen: set[str] = set()
    for ing in mixture.ingredients:
        if ing.reagent.custom and ing.reagent.name not in seen:
            seen.add(ing.reagent.name)
            table = _custom_table(ing.reagent)
            ions = table.pop("counter_ions")
            inline = ", ".join(f"{json.dumps(name)} = {n}" for name, n in ions.items())
            parts.append("\n[[custom]]\n" + tomli_w.dumps(table) + f"counter_ions = {{ {inline} }}\n")
    return "".join(parts)


def write_atomic(path, text: str, *, overwrite: bool = False) -> Path:
    """Write ``text`` to ``path`` atomically; refuse to replace a file unless ``overwrite``."""
    p = Path(path)
    if p.exists() and not overwrite:
        raise PresetError(f"{p}: already exists; not overwritten (choose another name or confirm overwrite)")
    if not p.parent.exists():
        raise PresetError(f"{p}: folder {p.parent} does not exist")
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=p.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        if not overwrite:
            try:
                os.link(tmp, p)          # fails if the name appeared meanwhile
            except FileExistsError:
                raise PresetError(f"{p}: already exists; not overwritten") from None
            except OSError:
                os.replace(tmp, p)       # file systems without hard links
            else:
                os.unlink(tmp)
        else:
            os.replace(tmp, p)
    except OSError as exc:
        raise PresetError(f"{p}: cannot write ({exc.strerror})") from None
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    return p


def save_preset(mixture: Mixture, path, *, overwrite: bool = False) -> Path:
    """Save ``mixture`` as a preset file (atomic; never overwrites silently)."""
    return write_atomic(path, dumps_preset(mixture), overwrite=overwrite)


def shipped_preset_dir():
    """Folder of the presets shipped with the tool (in the wheel, or the source tree)."""
    from importlib import resources

    packaged = resources.files("chem").joinpath("_presets")
    if packaged.is_dir():
        return packaged
    return Path(__file__).resolve().parent.parent / "presets"


def shipped_presets() -> list:
    """The shipped preset files, sorted by name."""
    folder = shipped_preset_dir()
    return sorted((p for p in folder.iterdir() if p.name.endswith(".toml")), key=lambda p: p.name)


DEMO_PRESET = "demo.toml"


def demo_mixture() -> Mixture:
    """The built-in demo mixture the explorer opens on."""
    path = shipped_preset_dir().joinpath(DEMO_PRESET)
    return loads_preset(path.read_bytes(), DEMO_PRESET)
