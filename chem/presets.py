"""Preset files (TOML, ``format = 1``): read, validate and write mixtures.

Every error is one line naming the file, the entry and the field, e.g.
``rinse.toml: ingredient 2 (Na2HPO4): conc: unknown unit 'kg'``.
Saving is atomic (temporary file, fsync, rename) and refuses to replace an
existing file unless asked to.
"""

from __future__ import annotations

import contextlib
import json
import math
import os
import re
import secrets
import stat
import time
import tomllib
from pathlib import Path
from typing import Any

import tomli_w

from .activity import MODELS
from .errors import ChemError, PresetError
from .library import WATER_IONS, Library, load_library, resolve
from .model import (MAX_ABS_DH_KJ, AcidBaseSystem, Complex, FixedGas, Gas, Ingredient, Mixture, Reagent, Solid,
                    charge_from_name, charge_label)
from .units import parse_concentration, parse_pressure

FORMAT = 1
_TOP_KEYS = {"format", "title", "temperature_c", "activity", "notes", "ingredient", "custom", "precipitate", "gas",
             "custom_complex", "custom_solid", "custom_gas"}
_INGREDIENT_KEYS = {"name", "conc"}
_CUSTOM_KEYS = {"name", "pKa", "dH_kJ", "dCp_J", "ion_size_A", "charge_fully_protonated", "protons",
                "counter_ions", "species", "molar_mass", "source", "ionic_strength_M", "pKa_sd"}
_CUSTOM_REQUIRED = {"name", "pKa", "charge_fully_protonated", "protons"}
_REACTION_KEYS = {"name", "reaction", "log_K", "dH_kJ", "ionic_strength_M", "log_K_sd", "source"}
_KIND_KEYS = {
    "custom_complex": _REACTION_KEYS | {"ion_size_A"},
    "custom_solid": _REACTION_KEYS | {"formula"},
    "custom_gas": _REACTION_KEYS | {"formula"},
}
_GAS_KEYS = {"name", "pressure"}


def _num(value, where: str, *, lo: float | None = None, hi: float | None = None) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise PresetError(f"{where}: expected a number, got {type(value).__name__} {_quote(value)}")
    try:
        v = float(value)
    except OverflowError:
        raise PresetError(f"{where}: number too large") from None
    if not math.isfinite(v):
        raise PresetError(f"{where}: must be a finite number")
    if lo is not None and v < lo or hi is not None and v > hi:
        raise PresetError(f"{where}: {v:g} is outside {lo:g}..{hi:g}")
    return v


def _int(value, where: str, *, lo: int | None = None, hi: int | None = None) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise PresetError(f"{where}: expected a whole number, got {_quote(value)}")
    if lo is not None and value < lo or hi is not None and value > hi:
        raise PresetError(f"{where}: {_quote(value)} is outside {lo}..{hi}")
    return value


def _str(value, where: str) -> str:
    if not isinstance(value, str):
        raise PresetError(f"{where}: expected text, got {type(value).__name__} {_quote(value)}")
    return value


def _quote(value, limit: int = 60) -> str:
    """A readable, bounded rendering of user input for error messages."""
    text = repr(value)
    return text if len(text) <= limit else text[:limit - 1] + "…"


def _num_list(value, where: str, *, allow_empty: bool = False) -> tuple[float, ...]:
    if not isinstance(value, list) or (not value and not allow_empty):
        raise PresetError(f"{where}: expected a {'list' if allow_empty else 'non-empty list'} of numbers")
    return tuple(_num(v, f"{where}[{i + 1}]") for i, v in enumerate(value))


def _check_table(entry, allowed: set, where: str) -> None:
    if not isinstance(entry, dict):
        raise PresetError(f"{where}: expected a table")
    unknown = set(entry) - allowed
    if unknown:
        raise PresetError(f"{where}: unknown key '{_clip(sorted(unknown)[0])}' (allowed: {', '.join(sorted(allowed))})")


def _clip(text: str, limit: int = 40) -> str:
    return text if len(text) <= limit else text[:limit - 1] + "…"


def _entry_name(entry: dict, where: str, required, label: str) -> tuple[str, str]:
    """The name of a custom table once its required keys are there: (name, ``where`` naming it)."""
    for key in required:
        if key not in entry:
            raise PresetError(f"{where}: missing '{key}'")
    name = _str(entry["name"], label).strip()
    if not name:
        raise PresetError(f"{label}: must not be empty")
    if len(name) > MAX_NAME:
        raise PresetError(f"{label}: longer than {MAX_NAME} characters")
    return name, f"{where} ({_clip(name)})"


def custom_reagent(entry: dict, where: str, library: Library) -> Reagent:
    """Build the system and reagent defined by one ``[[custom]]`` table."""
    _check_table(entry, _CUSTOM_KEYS, where)
    name, where = _entry_name(entry, where, sorted(_CUSTOM_REQUIRED), f"{where}.name")
    pka = _num_list(entry["pKa"], f"{where}: pKa", allow_empty=True)
    for i, p in enumerate(pka):
        if not -2.0 <= p <= 16.0:
            raise PresetError(f"{where}: pKa[{i + 1}] = {p:g} is outside -2..16")
    dh = _num_list(entry["dH_kJ"], f"{where}: dH_kJ", allow_empty=True) if "dH_kJ" in entry else None
    dcp = _num_list(entry["dCp_J"], f"{where}: dCp_J", allow_empty=True) if "dCp_J" in entry else None
    if dh is not None:
        for i, v in enumerate(dh):
            if abs(v) > MAX_ABS_DH_KJ:
                raise PresetError(f"{where}: dH_kJ[{i + 1}] = {v:g} is outside ±{MAX_ABS_DH_KJ:g} kJ/mol")
    if dcp is not None:
        for i, v in enumerate(dcp):
            if abs(v) > 5000.0:
                raise PresetError(f"{where}: dCp_J[{i + 1}] = {v:g} is outside ±5000 J/(K·mol)")
    pka_sd = _num_list(entry["pKa_sd"], f"{where}: pKa_sd", allow_empty=True) if "pKa_sd" in entry else None
    charge = _int(entry["charge_fully_protonated"], f"{where}: charge_fully_protonated", lo=-6, hi=6)
    protons = _int(entry["protons"], f"{where}: protons", lo=0, hi=len(pka))
    size = _num(entry.get("ion_size_A", 4.0), f"{where}: ion_size_A", lo=1.0, hi=15.0)
    ref_i = _num(entry.get("ionic_strength_M", 0.0), f"{where}: ionic_strength_M", lo=0.0, hi=5.0)
    species = entry.get("species")
    if species is None:
        if not pka and charge_from_name(name) == charge:
            species = (name,)
        elif not pka:
            raise PresetError(f"{where}: species: give the one species name (e.g. \"M{charge_label(charge) or ''}\")"
                              " of a system with no pKa")
        else:
            species = tuple(f"{name} ({charge_label(charge - k) or '0'})" for k in range(len(pka) + 1))
    else:
        if (not isinstance(species, list) or len(species) != len(pka) + 1
                or not all(isinstance(s, str) and s.strip() for s in species)):
            raise PresetError(f"{where}: species must list {len(pka) + 1} name{'s' if pka else ''}, "
                              "fully protonated first")
        species = tuple(s.strip() for s in species)
        for k, sp in enumerate(species):
            if len(sp) > MAX_NAME:
                raise PresetError(f"{where}: species name longer than {MAX_NAME} characters")
            if sp in WATER_IONS or sp in {i.name for i in library.ions}:
                raise PresetError(f"{where}: species '{_clip(sp)}' is the name of a strong ion or of water's "
                                  "ions; choose another name")
            if charge_from_name(sp) not in (0, charge - k) and _has_suffix(sp):
                raise PresetError(f"{where}: species '{_clip(sp)}' should carry charge {charge - k:+d}")
    counter_in = entry.get("counter_ions", {})
    if not isinstance(counter_in, dict):
        raise PresetError(f"{where}: counter_ions must be a table like {{ \"Cl-\" = 1 }}")
    counter = []
    for ion_name, n in counter_in.items():
        try:
            ion = library.ion(ion_name)
        except ChemError:
            raise PresetError(f"{where}: counter_ions: unknown ion '{_clip(ion_name)}' "
                              f"(use {', '.join(i.name for i in library.ions)})") from None
        counter.append((ion, _int(n, f"{where}: counter_ions.{_clip(ion_name)}", lo=1, hi=10)))
    molar_mass = entry.get("molar_mass")
    if molar_mass is not None:
        molar_mass = _num(molar_mass, f"{where}: molar_mass", lo=1e-3, hi=1e6)
    source = _str(entry.get("source", "user-defined in the preset"), f"{where}: source")
    try:
        system = AcidBaseSystem(name=name, species=species, pka=pka, charge_fully_protonated=charge,
                                dh_kj=dh or None, dcp_j=dcp or None, ion_size_a=size, source=source, custom=True,
                                buffer=bool(pka), ionic_strength=ref_i, pka_sd=pka_sd or None)
        return Reagent(name=name, system=system, protons=protons, counter_ions=tuple(counter),
                       molar_mass=molar_mass, source=source, custom=True)
    except ChemError as exc:
        raise PresetError(f"{where}: {exc}") from None


def _has_suffix(name: str) -> bool:
    return name.endswith(("+", "-"))


#: Longest name accepted for anything a preset defines.
MAX_NAME = 80


def _reaction_table(kind: str, entry, where: str, index: dict):
    """One ``[[custom_complex]]``, ``[[custom_solid]]`` or ``[[custom_gas]]`` table, resolved."""
    _check_table(entry, _KIND_KEYS[kind], where)
    name, where = _entry_name(entry, where, ("name", "reaction", "log_K"), f"{where}: name")
    reaction = entry["reaction"]
    if not isinstance(reaction, dict) or not reaction:
        raise PresetError(f"{where}: reaction: expected a table of species and whole-number coefficients, "
                          "e.g. { \"M^2+\" = 1, \"L-\" = 1 }")
    for sp, coeff in reaction.items():
        if isinstance(coeff, bool) or not isinstance(coeff, int):
            raise PresetError(f"{where}: reaction: coefficient of '{_clip(sp)}' must be a whole number "
                              f"(got {_quote(coeff)})")
        if coeff == 0:
            raise PresetError(f"{where}: reaction: coefficient of '{_clip(sp)}' must not be 0")
        if coeff < 0 and sp not in WATER_IONS:
            raise PresetError(f"{where}: reaction: only H+ and OH- may have a negative coefficient "
                              f"(got '{_clip(sp)}' = {coeff})")
    log_k = _num(entry["log_K"], f"{where}: log_K", lo=-200.0, hi=200.0)
    dh = _num(entry["dH_kJ"], f"{where}: dH_kJ", lo=-MAX_ABS_DH_KJ, hi=MAX_ABS_DH_KJ) if "dH_kJ" in entry else None
    ref_i = _num(entry.get("ionic_strength_M", 0.0), f"{where}: ionic_strength_M", lo=0.0, hi=5.0)
    sd = _num(entry["log_K_sd"], f"{where}: log_K_sd", lo=0.0, hi=10.0) if "log_K_sd" in entry else None
    source = _str(entry.get("source", "user-defined in the preset"), f"{where}: source")
    args = dict(name=name, reaction=tuple(reaction.items()), log_k=log_k, dh_kj=dh, ionic_strength=ref_i,
                log_k_sd=sd, source=source, custom=True)
    try:
        if kind == "custom_complex":
            item = Complex(**args, ion_size_a=_num(entry.get("ion_size_A", 4.0), f"{where}: ion_size_A",
                                                   lo=1.0, hi=15.0))
        elif kind == "custom_solid":
            item = Solid(**args, formula=_str(entry.get("formula", ""), f"{where}: formula"))
        else:
            if len(reaction) != 1 or next(iter(reaction.values())) != 1:
                raise PresetError(f"{where}: reaction: a gas dissolves into one species with coefficient 1, "
                                  "e.g. { \"HL\" = 1 }")
            item = Gas(**args, formula=_str(entry.get("formula", ""), f"{where}: formula"))
    except PresetError:
        raise
    except ChemError as exc:
        raise PresetError(f"{where}: {exc}") from None
    try:
        resolved = resolve(item, index, allow_complex=kind == "custom_gas")
    except ChemError as exc:
        msg = str(exc)
        field = "name" if msg.startswith("name:") else "reaction"
        raise PresetError(f"{where}: {msg if msg.startswith((field + ':')) else field + ': ' + msg}") from None
    if kind == "custom_gas":
        own = resolved.owners[0]
        from .model import species_charge
        if species_charge(own, resolved.species) != 0:
            raise PresetError(f"{where}: reaction: the dissolved species of a gas must be neutral "
                              f"('{_clip(resolved.species)}' is charged)")
    return resolved


def parse_preset(data: dict, label: str, library: Library | None = None) -> Mixture:
    """Turn the parsed TOML of a preset into a :class:`Mixture`; ``label`` names the file in errors."""
    library = library or load_library()
    if not isinstance(data, dict):
        raise PresetError(f"{label}: expected a TOML document")
    unknown = set(data) - _TOP_KEYS
    if unknown:
        raise PresetError(f"{label}: unknown key '{_clip(sorted(unknown)[0])}' "
                          f"(allowed: {', '.join(sorted(_TOP_KEYS))})")
    fmt = data.get("format", FORMAT)
    if fmt != FORMAT or isinstance(fmt, bool):
        raise PresetError(f"{label}: format: expected {FORMAT}, got {_quote(fmt)}")
    title = _str(data.get("title", ""), f"{label}: title")
    notes = _str(data.get("notes", ""), f"{label}: notes")
    temp = _num(data.get("temperature_c", 25.0), f"{label}: temperature_c", lo=0.0, hi=100.0)
    activity = _str(data.get("activity", "davies"), f"{label}: activity")
    if activity not in MODELS:
        raise PresetError(f"{label}: activity: unknown model '{_clip(activity)}' (use {', '.join(MODELS)})")

    customs: dict[str, Reagent] = {}
    raw_custom = data.get("custom", [])
    if not isinstance(raw_custom, list):
        raise PresetError(f"{label}: custom: expected [[custom]] tables")
    for i, entry in enumerate(raw_custom):
        reagent = custom_reagent(entry, f"{label}: custom {i + 1}", library)
        clash = library.find(reagent.name)
        if clash is not None:
            kind = "reagent" if isinstance(clash, Reagent) else "system"
            raise PresetError(f"{label}: custom {i + 1} ({_clip(reagent.name)}): name: '{_clip(reagent.name)}' is "
                              f"already the library's {kind} '{_clip(clash.name)}'; give your own reagent a name of "
                              "its own (it would silently replace the library's)")
        key = reagent.name.casefold()
        if key in customs:
            raise PresetError(f"{label}: custom {i + 1}: name '{_clip(reagent.name)}' is defined twice")
        customs[key] = reagent

    # species names: the preset's own systems first, then the library's
    index = dict(library.species_index)
    own_species: dict[str, str] = {}
    for reagent in customs.values():
        for sp in reagent.system.species:
            if sp in own_species:
                raise PresetError(f"{label}: custom ({_clip(reagent.name)}): species name '{_clip(sp)}' is also "
                                  f"used by custom '{_clip(own_species[sp])}'")
            own_species[sp] = reagent.name
            index[sp] = reagent.system
    extras: dict[str, list] = {"custom_complex": [], "custom_solid": [], "custom_gas": []}
    taken: dict[str, str] = {sp: "a species" for sp in own_species}
    for kind in ("custom_complex", "custom_solid", "custom_gas"):
        raw = data.get(kind, [])
        if not isinstance(raw, list):
            raise PresetError(f"{label}: {kind}: expected [[{kind}]] tables")
        label_kind = kind.replace("_", " ")
        for i, entry in enumerate(raw):
            item = _reaction_table(kind, entry, f"{label}: {label_kind} {i + 1}", index)
            if item.name in taken:
                raise PresetError(f"{label}: {label_kind} {i + 1} ({_clip(item.name)}): name: '{_clip(item.name)}' "
                                  f"is already {taken[item.name]} in this preset")
            taken[item.name] = f"a {label_kind.replace('custom ', '')}"
            extras[kind].append(item)
            if kind == "custom_complex":
                index[item.name] = item

    gases = []
    raw_gas = data.get("gas", [])
    if not isinstance(raw_gas, list):
        raise PresetError(f"{label}: gas: expected [[gas]] tables")
    own_gases = {g.name.casefold(): g for g in extras["custom_gas"]}
    for i, entry in enumerate(raw_gas):
        where = f"{label}: gas {i + 1}"
        _check_table(entry, _GAS_KEYS, where)
        if "name" not in entry:
            raise PresetError(f"{where}: missing 'name'")
        name = _str(entry["name"], f"{where}: name").strip()
        where = f"{where} ({_clip(name)})"
        if "pressure" not in entry:
            raise PresetError(f"{where}: missing 'pressure'")
        gas = own_gases.get(name.casefold())
        if gas is None:
            try:
                gas = library.gas(name)
            except ChemError as exc:
                raise PresetError(f"{where}: name: {exc}") from None
        raw_p = entry["pressure"]
        try:
            pressure = parse_pressure(raw_p)
        except ChemError as exc:
            raise PresetError(f"{where}: pressure: {exc}") from None
        if any(g.gas.name == gas.name for g in gases):
            raise PresetError(f"{where}: name: gas '{_clip(gas.name)}' is held twice")
        gases.append(FixedGas(gas, pressure, raw_p.strip() if isinstance(raw_p, str) else None))

    precipitate = data.get("precipitate", False)
    if isinstance(precipitate, list):
        names = []
        known = {s.name for s in library.solids} | {s.name for s in extras["custom_solid"]}
        for j, sname in enumerate(precipitate):
            if not isinstance(sname, str):
                raise PresetError(f"{label}: precipitate[{j + 1}]: expected a solid's name")
            if sname not in known:
                close = [k for k in known if k.casefold() == sname.casefold()]
                hint = f" (did you mean '{close[0]}'?)" if close else ""
                raise PresetError(f"{label}: precipitate: unknown solid '{_clip(sname)}'{hint}")
            names.append(sname)
        precipitate = tuple(names)
    elif not isinstance(precipitate, bool):
        raise PresetError(f"{label}: precipitate: expected true, false or a list of solid names")

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
            raise PresetError(f"{where}: unknown key '{_clip(sorted(unknown)[0])}' (allowed: conc, name)")
        if "name" not in entry:
            raise PresetError(f"{where}: missing 'name'")
        name = _str(entry["name"], f"{where}: name")
        where = f"{where} ({_clip(name)})"
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
        except OverflowError:
            raise PresetError(f"{where}: conc: number too large") from None
        ingredients.append(Ingredient(reagent, conc, raw.strip() if isinstance(raw, str) else None))
    try:
        mixture = Mixture(tuple(ingredients), temperature_c=temp, activity=activity, title=title, notes=notes,
                          gases=tuple(gases), precipitate=precipitate,
                          custom_complexes=tuple(extras["custom_complex"]),
                          custom_solids=tuple(extras["custom_solid"]), custom_gases=tuple(extras["custom_gas"]))
    except ChemError as exc:
        raise PresetError(f"{label}: {exc}") from None
    return mixture


#: Largest preset (or autosave) file read, in bytes: a hand-written preset is a few kilobytes;
#: anything far larger is not one (``/dev/zero``, a log file named .toml).
MAX_PRESET_BYTES = 1_000_000
#: Deepest nesting of tables and arrays accepted in a preset (the format itself needs 3).
MAX_NESTING = 16
#: A temporary file left by a save that was killed is removed after this many seconds.
STALE_TEMP_S = 600.0

_TEMP_NAME = re.compile(r"^\.(?P<target>.+)\.[0-9A-Za-z_]{8}\.tmp$")


def read_preset_bytes(path, label: str | None = None) -> bytes:
    """The bytes of the preset file at ``path``: a regular file of at most :data:`MAX_PRESET_BYTES`.

    Devices, pipes, sockets and folders are refused without reading from them (opening
    does not block on a pipe), so ``/dev/zero`` or a FIFO named ``x.toml`` gives a
    one-line :class:`PresetError` instead of a hang or an endless read.
    """
    label = str(path) if label is None else label
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(path, flags)
    except FileNotFoundError:
        raise PresetError(f"{label}: no such file") from None
    except NotADirectoryError:
        raise PresetError(f"{label}: no such file (part of the path is not a folder)") from None
    except OSError as exc:
        raise PresetError(f"{label}: cannot read ({exc.strerror or exc})") from None
    try:
        info = os.fstat(fd)
        if stat.S_ISDIR(info.st_mode):
            raise PresetError(f"{label}: is a folder, not a preset file")
        if not stat.S_ISREG(info.st_mode):
            raise PresetError(f"{label}: is not a regular file (a device, pipe or socket); not read")
        if info.st_size > MAX_PRESET_BYTES:
            raise PresetError(f"{label}: is {info.st_size / 1e6:.3g} MB; a preset is at most "
                              f"{MAX_PRESET_BYTES / 1e6:g} MB")
        chunks, size = [], 0
        while size <= MAX_PRESET_BYTES:
            chunk = os.read(fd, min(1 << 16, MAX_PRESET_BYTES + 1 - size))
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
        if size > MAX_PRESET_BYTES:                     # it grew while being read
            raise PresetError(f"{label}: is larger than {MAX_PRESET_BYTES / 1e6:g} MB; not a preset")
        return b"".join(chunks)
    except OSError as exc:
        raise PresetError(f"{label}: cannot read ({exc.strerror or exc})") from None
    finally:
        os.close(fd)


def load_preset(path, library: Library | None = None) -> Mixture:
    """Read and validate a preset file. Raises :class:`PresetError` with a one-line message."""
    label = str(path)
    return loads_preset(read_preset_bytes(path, label), label, library)


def _check_shape(data: dict, label: str) -> None:
    """Refuse what the TOML reader accepts but no preset holds: deep nesting, integers no float can hold.

    Walks the parsed document without recursion, so it cannot itself run out of stack.
    """
    stack: list[tuple[Any, str, int]] = [(data, "", 0)]
    while stack:
        value, where, depth = stack.pop()
        if depth > MAX_NESTING:
            raise PresetError(f"{label}: {where or 'document'}: nested more than {MAX_NESTING} levels deep")
        if isinstance(value, dict):
            stack.extend((v, f"{where}.{k}" if where else str(k), depth + 1) for k, v in value.items())
        elif isinstance(value, list):
            stack.extend((v, f"{where}[{i + 1}]", depth + 1) for i, v in enumerate(value))
        elif isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 1000:
            raise PresetError(f"{label}: {where}: the number is too large")


def loads_preset(raw: bytes | str, label: str = "<preset>", library: Library | None = None) -> Mixture:
    """Parse preset text (``label`` names it in errors). A UTF-8 byte-order mark is accepted."""
    if isinstance(raw, bytes) and len(raw) > MAX_PRESET_BYTES or isinstance(raw, str) and len(raw) > MAX_PRESET_BYTES:
        raise PresetError(f"{label}: larger than {MAX_PRESET_BYTES / 1e6:g} MB; not a preset")
    try:
        text = raw.decode("utf-8") if isinstance(raw, bytes) else raw
    except UnicodeDecodeError:
        raise PresetError(f"{label}: not UTF-8 text") from None
    text = text.removeprefix("\ufeff")                 # a byte-order mark, as some editors write
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise PresetError(f"{label}: malformed TOML: {exc}") from None
    except RecursionError:
        raise PresetError(f"{label}: malformed TOML: nested too deeply") from None
    except ValueError:                                  # an integer with thousands of digits
        raise PresetError(f"{label}: malformed TOML: a number has too many digits") from None
    _check_shape(data, label)
    try:
        return parse_preset(data, label, library)
    except (RecursionError, OverflowError):            # a safety net: user data, not a bug of ours
        raise PresetError(f"{label}: a value is too large or nested too deeply") from None


def _custom_table(reagent: Reagent) -> dict[str, Any]:
    sys_ = reagent.system
    assert sys_ is not None
    table: dict[str, Any] = {"name": reagent.name, "pKa": list(sys_.pka)}
    if sys_.dh_kj is not None:
        table["dH_kJ"] = list(sys_.dh_kj)
    if sys_.dcp_j is not None:
        table["dCp_J"] = list(sys_.dcp_j)
    if sys_.pka_sd is not None:
        table["pKa_sd"] = list(sys_.pka_sd)
    if sys_.ionic_strength:
        table["ionic_strength_M"] = sys_.ionic_strength
    table["ion_size_A"] = sys_.ion_size_a
    table["charge_fully_protonated"] = sys_.charge_fully_protonated
    table["protons"] = reagent.protons
    table["counter_ions"] = {ion.name: n for ion, n in reagent.counter_ions}
    table["species"] = list(sys_.species)
    if reagent.molar_mass is not None:
        table["molar_mass"] = reagent.molar_mass
    return table


def _inline(mapping: dict) -> str:
    return "{ " + ", ".join(f"{json.dumps(k)} = {v}" for k, v in mapping.items()) + " }"


def _reaction_text(kind: str, item) -> str:
    table: dict[str, Any] = {"name": item.name}
    if getattr(item, "formula", ""):
        table["formula"] = item.formula
    table["log_K"] = item.log_k
    if item.dh_kj is not None:
        table["dH_kJ"] = item.dh_kj
    if kind == "custom_complex" and item.ion_size_a != 4.0:
        table["ion_size_A"] = item.ion_size_a
    if item.ionic_strength:
        table["ionic_strength_M"] = item.ionic_strength
    if item.log_k_sd is not None:
        table["log_K_sd"] = item.log_k_sd
    return (f"\n[[{kind}]]\n" + tomli_w.dumps(table) + f"reaction = {_inline(dict(item.reaction))}\n")


def dumps_preset(mixture: Mixture) -> str:
    """The preset text of ``mixture`` (round-trips through :func:`loads_preset`)."""
    doc: dict[str, Any] = {"format": FORMAT}
    if mixture.title:
        doc["title"] = mixture.title
    doc["temperature_c"] = mixture.temperature_c
    doc["activity"] = mixture.activity
    if mixture.notes:
        doc["notes"] = mixture.notes
    p = mixture.precipitate
    if p is not False:
        doc["precipitate"] = p if isinstance(p, bool) else list(p)
    parts = [tomli_w.dumps(doc)]
    for ing in mixture.ingredients:              # [[ingredient]] tables, as people write them
        parts.append("\n[[ingredient]]\n" + tomli_w.dumps({"name": ing.reagent.name,
                                                           "conc": ing.text if ing.text else ing.conc}))
    for g in mixture.gases:
        parts.append("\n[[gas]]\n" + tomli_w.dumps({"name": g.gas.name,
                                                    "pressure": g.text if g.text else g.pressure_atm}))
    seen: set[str] = set()
    for ing in mixture.ingredients:
        if ing.reagent.custom and ing.reagent.name not in seen:
            seen.add(ing.reagent.name)
            table = _custom_table(ing.reagent)
            ions = table.pop("counter_ions")
            parts.append("\n[[custom]]\n" + tomli_w.dumps(table) + f"counter_ions = {_inline(ions)}\n")
    # custom systems that only a gas or a reaction brings in
    for kind, items in (("custom_complex", mixture.custom_complexes), ("custom_solid", mixture.custom_solids),
                        ("custom_gas", mixture.custom_gases)):
        for item in items:
            for own in item.owners:
                if isinstance(own, AcidBaseSystem) and own.custom and own.name not in seen:
                    seen.add(own.name)
                    parts.append("\n[[custom]]\n" + tomli_w.dumps(
                        {"name": own.name, "pKa": list(own.pka), "charge_fully_protonated": own.charge_fully_protonated,
                         "protons": 0, "species": list(own.species)}))
            parts.append(_reaction_text(kind, item))
    return "".join(parts)


def clean_stale_temps(folder, target: str | None = None, *, older_than: float = STALE_TEMP_S) -> int:
    """Remove temporary files (``.NAME.toml.XXXXXXXX.tmp``) that a killed save left in ``folder``.

    Only files older than ``older_than`` seconds are removed (a save in progress in another
    process is never touched), only regular files, and with ``target`` only those of that
    file name. Returns how many were removed; problems are ignored (it is tidying up).
    """
    removed = 0
    now = time.time()
    try:
        names = os.listdir(folder)
    except OSError:
        return 0
    for name in names:
        found = _TEMP_NAME.match(name)
        if not found or not found["target"].endswith(".toml") or target is not None and found["target"] != target:
            continue
        path = os.path.join(folder, name)
        try:
            info = os.lstat(path)
            if stat.S_ISREG(info.st_mode) and now - info.st_mtime > older_than:
                os.unlink(path)
                removed += 1
        except OSError:
            pass
    return removed


def _target(path, overwrite: bool) -> os.stat_result | None:
    """What is at ``path`` now (None: nothing), if a save may go there; raises :class:`PresetError`."""
    label = str(path)
    if not label.strip():
        raise PresetError("no file name given")
    try:
        info: os.stat_result | None = os.lstat(path)
    except (FileNotFoundError, NotADirectoryError):
        info = None
    except OSError as exc:
        raise PresetError(f"{label}: cannot write ({exc.strerror or exc})") from None
    if info is not None:
        if stat.S_ISLNK(info.st_mode):
            raise PresetError(f"{label}: is a symbolic link; not replaced (name the file itself)")
        if stat.S_ISDIR(info.st_mode):
            raise PresetError(f"{label}: is a folder; not replaced")
        if not stat.S_ISREG(info.st_mode):
            raise PresetError(f"{label}: is not a regular file (a device, pipe or socket); not replaced")
        if not overwrite:
            raise PresetError(f"{label}: already exists; not overwritten (choose another name or confirm overwrite)")
    if not Path(path).parent.is_dir():
        raise PresetError(f"{label}: folder {Path(path).parent} does not exist")
    return info


def check_save_target(path, *, overwrite: bool = False) -> None:
    """Raise :class:`PresetError` now if :func:`write_atomic` could not write ``path``.

    For a command that should refuse before doing its work: the same checks as the write,
    and a trial file created and removed in the folder (the folder may refuse writing).
    """
    _target(path, overwrite)
    p = Path(path)
    trial = p.parent / f".{p.name}.{secrets.token_hex(4)}.tmp"
    try:
        os.close(os.open(trial, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0), 0o600))
        os.unlink(trial)
    except OSError as exc:
        raise PresetError(f"{path}: cannot write ({exc.strerror or exc})") from None


def write_atomic(path, text: str, *, overwrite: bool = False) -> Path:
    """Write ``text`` to ``path`` atomically; refuse to replace a file unless ``overwrite``.

    Only a regular file is ever written or replaced: a symbolic link, a device, a pipe or
    a folder at ``path`` is refused even with ``overwrite`` (the path is never followed into
    something else). The new file follows the user's umask like any file the user creates;
    a replaced file keeps its permissions. Problems raise :class:`PresetError` (one line).
    """
    label = str(path)
    info = _target(path, overwrite)
    p = Path(path)
    try:
        data = text.encode("utf-8")
    except UnicodeEncodeError:
        raise PresetError(f"{label}: the text cannot be written as UTF-8") from None
    clean_stale_temps(p.parent, p.name)
    tmp = p.parent / f".{p.name}.{secrets.token_hex(4)}.tmp"
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(tmp, flags, 0o666)                 # the umask applies, as to any file the user makes
        try:
            if info is not None:
                os.fchmod(fd, stat.S_IMODE(info.st_mode))
            view = memoryview(data)
            while view:
                view = view[os.write(fd, view):]
            os.fsync(fd)
        finally:
            os.close(fd)
        if overwrite:
            os.replace(tmp, p)
        else:
            try:
                os.link(tmp, p)          # fails if the name appeared meanwhile
            except FileExistsError:
                raise PresetError(f"{label}: already exists; not overwritten") from None
            except OSError:
                os.replace(tmp, p)       # file systems without hard links
    except OSError as exc:
        raise PresetError(f"{label}: cannot write ({exc.strerror or exc})") from None
    finally:
        with contextlib.suppress(OSError):
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
