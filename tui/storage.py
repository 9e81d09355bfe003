"""Where the explorer keeps the user's files: saved presets and the session autosave.

The data folder is the platform's user data directory (via platformdirs),
or ``$PROTOMIX_DATA_DIR`` when that is set. Presets live in its ``presets``
sub-folder; the running session is autosaved to ``session.toml`` so that a
dropped connection loses nothing. Every write goes through
:func:`chem.save_preset`, which is atomic. Nothing here touches chemistry:
mixtures are read and written by :mod:`chem`.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass
from pathlib import Path

import chem

DATA_DIR_ENV = "PROTOMIX_DATA_DIR"
AUTOSAVE_NAME = "session.toml"

_NAME_OK = re.compile(r"^[A-Za-z0-9][A-Za-z0-9 _.+-]{0,79}$")


class StorageError(Exception):
    """A file name or folder problem, with a one-line message for the user."""


@dataclass(frozen=True)
class PresetEntry:
    """One preset file as listed in the picker."""

    path: Path
    title: str
    """The preset's title, or its file name when it has none."""
    shipped: bool
    """True for presets shipped with protomix, False for the user's own."""
    problem: str | None = None
    """Why the file cannot be opened, or None when it loads."""

    @property
    def name(self) -> str:
        """File name without the ``.toml`` suffix."""
        return self.path.name.removesuffix(".toml")


def data_dir() -> Path:
    """The folder for the user's protomix files (not created here)."""
    override = os.environ.get(DATA_DIR_ENV)
    if override:
        return Path(override).expanduser()
    from platformdirs import user_data_dir

    return Path(user_data_dir("protomix", appauthor=False))


def presets_dir() -> Path:
    """The folder of the user's own presets (not created here)."""
    return data_dir() / "presets"


def autosave_path() -> Path:
    """The file the running session is autosaved to."""
    return data_dir() / AUTOSAVE_NAME


def preset_path(name: str) -> Path:
    """The user preset file for ``name``; raises :class:`StorageError` for an unusable name."""
    name = name.strip().removesuffix(".toml").strip()
    if not name:
        raise StorageError("give the preset a name")
    if not _NAME_OK.match(name):
        raise StorageError("use letters, digits, spaces and - _ . + only (at most 80 characters, "
                           "starting with a letter or digit)")
    return presets_dir() / f"{name}.toml"


def _entry(path, shipped: bool) -> PresetEntry:
    name = path.name
    try:
        mixture = chem.loads_preset(path.read_bytes(), name)
    except chem.ChemError as exc:
        return PresetEntry(Path(str(path)), name.removesuffix(".toml"), shipped, str(exc))
    except OSError as exc:
        return PresetEntry(Path(str(path)), name.removesuffix(".toml"), shipped, exc.strerror or str(exc))
    return PresetEntry(Path(str(path)), mixture.title or name.removesuffix(".toml"), shipped)


def list_presets() -> list[PresetEntry]:
    """Shipped presets, then the user's own, each sorted by file name."""
    entries = [_entry(p, True) for p in chem.shipped_presets()]
    folder = presets_dir()
    if folder.is_dir():
        entries += [_entry(p, False) for p in sorted(folder.glob("*.toml")) if not p.name.startswith(".")]
    return entries


def save_user_preset(mixture: chem.Mixture, name: str, *, overwrite: bool = False) -> Path:
    """Save ``mixture`` as the user preset ``name`` (atomic; refuses to overwrite unless asked)."""
    path = preset_path(name)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StorageError(f"cannot create {path.parent} ({exc.strerror})") from None
    return chem.save_preset(mixture, path, overwrite=overwrite)


def write_autosave(mixture: chem.Mixture) -> Path:
    """Autosave the session's mixture (atomic, replacing the previous autosave)."""
    path = autosave_path()
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StorageError(f"cannot create {path.parent} ({exc.strerror})") from None
    return chem.save_preset(mixture, path, overwrite=True)


def read_autosave() -> chem.Mixture | None:
    """The autosaved mixture of a session that did not end cleanly, or None.

    Raises :class:`chem.ChemError` when the file exists but cannot be read.
    """
    path = autosave_path()
    if not path.is_file():
        return None
    return chem.load_preset(path)


def set_aside_autosave() -> Path:
    """Move an unreadable autosave out of the way (kept for inspection); returns where it went."""
    path = autosave_path()
    aside = path.with_name("session-unreadable.toml")
    path.replace(aside)
    return aside


def clear_autosave() -> None:
    """Forget the autosave (the session ended cleanly)."""
    try:
        autosave_path().unlink()
    except FileNotFoundError:
        pass
