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


def write_atomic(path, text: str, *, overwrite: bool = False) -> Path:
    """Write ``text`` to ``path`` atomically; refuse to replace a file unless ``overwrite``.

    Only a regular file is ever written or replaced: a symbolic link, a device, a pipe or
    a folder at ``path`` is refused even with ``overwrite`` (the path is never followed into
    something else). The new file follows the user's umask like any file the user creates;
    a replaced file keeps its permissions. Problems raise :class:`PresetError` (one line).
    """
    label = str(path)
    if not label.strip():
        raise PresetError("no file name given")
    p = Path(path)
    try:
        data = text.encode("utf-8")
    except UnicodeEncodeError:
        raise PresetError(f"{label}: the text cannot be written as UTF-8") from None
    try:
        info: os.stat_result | None = os.lstat(p)
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
    if not p.parent.is_dir():
        raise PresetError(f"{label}: folder {p.parent} does not exist")
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
