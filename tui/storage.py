"""Where the explorer keeps the user's files: saved presets and the session autosaves.

The data folder is the platform's user data directory (via platformdirs,
which follows ``$XDG_DATA_HOME``), or ``$PROTOMIX_DATA_DIR`` when that is set.
Presets live in its ``presets`` sub-folder.

Each running explorer autosaves its flask to a file of its own,
``session-<id>.toml`` in the data folder, and holds a lock on
``.session-<id>.lock`` for as long as it runs (the operating system drops the
lock when the process ends, however it ends). A clean quit removes both. An
autosave whose lock nobody holds belongs to a session that ended without
quitting (a dropped connection, a crash, a kill): it is *orphaned*, and the
next explorer offers it back. Only an explicit "discard" deletes one.

Every write goes through :func:`chem.write_atomic` (temporary file,
fsync, rename). Nothing here touches chemistry: mixtures are read and
written by :mod:`chem`. Every problem with a folder or a file raises
:class:`StorageError` or :class:`chem.ChemError` with a one-line message.
"""

from __future__ import annotations

import os
import re
import secrets
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path

import chem
from chem import clean_stale_temps, read_preset_bytes

try:
    import fcntl
except ImportError:                                     # not on every platform
    fcntl = None  # type: ignore[assignment]

DATA_DIR_ENV = "PROTOMIX_DATA_DIR"
#: Suffix given to an autosave that cannot be read, when it is moved aside (no longer offered).
UNREADABLE_SUFFIX = ".unreadable"

_NAME_OK = re.compile(r"^[A-Za-z0-9][A-Za-z0-9 _.+-]{0,79}$")
_AUTOSAVE_NAME = re.compile(r"^session(-[A-Za-z0-9_-]{1,64})?\.toml$")


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
    """The folder for the user's protomix files (not created here).

    Raises :class:`StorageError` when ``$PROTOMIX_DATA_DIR`` names the home folder of a
    user that does not exist, or no home folder can be found.
    """
    override = os.environ.get(DATA_DIR_ENV)
    try:
        if override:
            return Path(override).expanduser().absolute()
        from platformdirs import user_data_dir

        return Path(user_data_dir("protomix", appauthor=False)).absolute()
    except (RuntimeError, KeyError, OSError) as exc:   # "~nobody-here": no such user or home folder
        where = f"{DATA_DIR_ENV}={override!r}" if override else "the home folder"
        raise StorageError(f"cannot use {where} as the data folder ({exc})") from None


def presets_dir() -> Path:
    """The folder of the user's own presets (not created here)."""
    return data_dir() / "presets"


def _make_folder(folder: Path) -> Path:
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except FileExistsError:
        raise StorageError(f"cannot use {folder}: it is a file, not a folder") from None
    except OSError as exc:
        raise StorageError(f"cannot create {folder} ({exc.strerror or exc})") from None
    if not folder.is_dir():
        raise StorageError(f"cannot use {folder}: it is not a folder")
    return folder


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
        raw = path.read_bytes() if shipped else read_preset_bytes(path, name)
        mixture = chem.loads_preset(raw, name)
    except chem.ChemError as exc:
        return PresetEntry(Path(str(path)), name.removesuffix(".toml"), shipped, str(exc))
    except OSError as exc:
        return PresetEntry(Path(str(path)), name.removesuffix(".toml"), shipped, exc.strerror or str(exc))
    return PresetEntry(Path(str(path)), mixture.title or name.removesuffix(".toml"), shipped)


def list_presets() -> list[PresetEntry]:
    """Shipped presets, then the user's own, each sorted by file name.

    A user preset that cannot be read is listed with its problem (never raised); a
    data folder that cannot be used lists the shipped presets only.
    """
    entries = [_entry(p, True) for p in chem.shipped_presets()]
    try:
        folder = presets_dir()
        if folder.is_dir():
            entries += [_entry(p, False) for p in sorted(folder.glob("*.toml")) if not p.name.startswith(".")]
    except (StorageError, OSError):
        pass
    return entries


def save_user_preset(mixture: chem.Mixture, name: str, *, overwrite: bool = False) -> Path:
    """Save ``mixture`` as the user preset ``name`` (atomic; refuses to overwrite unless asked)."""
    path = preset_path(name)
    _make_folder(path.parent)
    return chem.save_preset(mixture, path, overwrite=overwrite)


def tidy_up() -> int:
    """Remove temporary files that killed saves left in the data and presets folders; returns how many."""
    try:
        folder = data_dir()
    except StorageError:
        return 0
    return clean_stale_temps(folder) + clean_stale_temps(folder / "presets")


# -- locks ---------------------------------------------------------------------------------------

def _lock_path(autosave: Path) -> Path:
    return autosave.with_name(f".{autosave.stem}.lock")


def _try_lock(path: Path, *, create: bool) -> tuple[int | None, bool]:
    """(descriptor holding an exclusive lock on ``path``, or None; whether someone else holds it).

    A lock that cannot be taken because the file cannot be opened (a read-only folder) is
    reported as not held by anyone: no running explorer can be writing there either. A lock
    file removed by another explorer while this one was taking it is taken again afresh.
    """
    if fcntl is None:
        return None, False
    for _attempt in range(5):
        try:
            fd = os.open(path, os.O_RDWR | (os.O_CREAT if create else 0) | getattr(os, "O_CLOEXEC", 0), 0o600)
        except OSError:
            try:
                fd = os.open(path, os.O_RDONLY | getattr(os, "O_CLOEXEC", 0))
            except OSError:
                return None, False
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            os.close(fd)
            return None, True
        except OSError:
            os.close(fd)
            return None, False
        try:
            if os.stat(path).st_ino == os.fstat(fd).st_ino:
                return fd, False
        except OSError:
            pass
        os.close(fd)                                    # it was removed meanwhile: lock the new one
        if not create:
            return None, False
    return None, False


def _unlock(fd: int | None) -> None:
    if fd is not None:
        try:
            os.close(fd)
        except OSError:
            pass


# -- this session's autosave ---------------------------------------------------------------------

class Autosave:
    """This session's own autosave file, written in order, with the lock that marks it in use.

    :meth:`write` may be called from any thread. Each call carries a sequence number
    taken when the edit was made; a write older than the one already on disk is
    dropped, so a slow worker can never put an older flask over a newer one.
    """

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        session = f"{time.strftime('%Y%m%d-%H%M%S')}-{os.getpid()}-{secrets.token_hex(3)}"
        self.path = folder / f"session-{session}.toml"
        self._lock_fd: int | None = None
        self._mutex = threading.Lock()
        self._sequence = -1
        self.holds: chem.Mixture | None = None
        """The mixture the file holds (None: nothing written yet)."""

    @classmethod
    def begin(cls) -> "Autosave":
        """Create the data folder if needed and claim a new autosave; raises :class:`StorageError`."""
        folder = _make_folder(data_dir())
        autosave = cls(folder)
        fd, _ = _try_lock(_lock_path(autosave.path), create=True)
        if fd is None and fcntl is not None:
            raise StorageError(f"cannot write in {folder} (the autosave needs a lock file there)")
        autosave._lock_fd = fd
        return autosave

    def write(self, mixture: chem.Mixture, sequence: int) -> bool:
        """Write ``mixture`` unless a newer one (higher ``sequence``) is already on disk.

        Returns True when the file holds ``mixture`` afterwards. Raises :class:`StorageError`.
        """
        with self._mutex:
            if sequence < self._sequence:
                return False
            if mixture != self.holds:
                try:
                    chem.save_preset(mixture, self.path, overwrite=True)
                except chem.ChemError as exc:
                    raise StorageError(str(exc)) from None
                self.holds = mixture
            self._sequence = sequence
            return True

    def release(self) -> None:
        """Let go of the lock and keep the file: the session ends without quitting (it becomes an orphan)."""
        with self._mutex:
            self._sequence = 1 << 62                     # nothing more is written
            _unlock(self._lock_fd)
            self._lock_fd = None

    def remove(self) -> None:
        """The session ended cleanly: delete the file and the lock file."""
        with self._mutex:
            self._sequence = 1 << 62
            for path in (self.path, _lock_path(self.path)):
                try:
                    path.unlink()
                except OSError:
                    pass
            _unlock(self._lock_fd)
            self._lock_fd = None


# -- sessions that ended without quitting --------------------------------------------------------

@dataclass
class Orphan:
    """An autosave whose session ended without quitting; held (locked) while it is being offered."""

    path: Path
    mixture: chem.Mixture | None
    """What it holds, or None when it cannot be read (see :attr:`problem`)."""
    problem: str | None
    saved_at: float
    """When it was last written (seconds since the epoch)."""
    _lock_fd: int | None = field(default=None, repr=False)

    def discard(self) -> None:
        """Delete it (the user said so). Raises :class:`StorageError` when it cannot be deleted."""
        try:
            self.path.unlink()
        except FileNotFoundError:
            pass
        except OSError as exc:
            raise StorageError(f"cannot delete {self.path} ({exc.strerror or exc})") from None
        finally:
            self._drop_lock(delete=True)

    def keep(self) -> None:
        """Leave it for a later session to offer."""
        self._drop_lock(delete=False)

    def set_aside(self) -> Path:
        """Move an unreadable autosave file out of the way (kept for inspection, no longer offered).

        Anything but a regular file (a folder, a device) is never moved: it is not ours.
        """
        aside = self.path.with_name(self.path.name + UNREADABLE_SUFFIX)
        if not self.path.is_file() or self.path.is_symlink():
            self._drop_lock(delete=False)
            raise StorageError("it is not a regular file")
        try:
            os.replace(self.path, aside)
        except OSError as exc:
            self._drop_lock(delete=False)
            raise StorageError(f"cannot move it aside ({exc.strerror or exc})") from None
        self._drop_lock(delete=True)
        return aside

    def _drop_lock(self, *, delete: bool) -> None:
        if delete:
            try:
                _lock_path(self.path).unlink()
            except OSError:
                pass
        _unlock(self._lock_fd)
        self._lock_fd = None


def orphaned_autosaves(own: Path | None = None) -> list[Orphan]:
    """Autosaves of sessions that ended without quitting, newest first (``own`` left out).

    Each is locked until :meth:`Orphan.discard`, :meth:`Orphan.keep` or
    :meth:`Orphan.set_aside` is called, so two explorers starting together do not both
    offer it. Raises :class:`StorageError` when the data folder cannot be used; a file
    that cannot be read is returned with its problem.
    """
    folder = data_dir()
    try:
        names = sorted(os.listdir(folder))
    except FileNotFoundError:
        return []
    except NotADirectoryError:
        raise StorageError(f"cannot use {folder}: it is a file, not a folder") from None
    except OSError as exc:
        raise StorageError(f"cannot read the folder {folder} ({exc.strerror or exc})") from None
    found = []
    for name in names:
        path = folder / name
        if not _AUTOSAVE_NAME.match(name) or path == own:
            continue
        fd, in_use = _try_lock(_lock_path(path), create=True)
        if in_use:
            continue                                    # a running explorer's own autosave
        try:
            saved_at = os.lstat(path).st_mtime
        except OSError:
            _unlock(fd)
            continue
        try:
            mixture, problem = chem.loads_preset(read_preset_bytes(path, name), name), None
        except chem.ChemError as exc:
            mixture, problem = None, str(exc)
        found.append(Orphan(path, mixture, problem, saved_at, fd))
    _forget_stale_locks(folder, names)
    found.sort(key=lambda o: o.saved_at, reverse=True)
    return found


def _forget_stale_locks(folder: Path, names: list[str]) -> None:
    """Remove lock files of sessions that ended before writing any autosave."""
    present = set(names)
    for name in names:
        if not (name.startswith(".session") and name.endswith(".lock")):
            continue
        if f"{name[1:-len('.lock')]}.toml" in present:
            continue
        fd, in_use = _try_lock(folder / name, create=False)
        if fd is not None and not in_use:
            try:
                (folder / name).unlink()
            except OSError:
                pass
        _unlock(fd)
