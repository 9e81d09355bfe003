"""Shared fixtures: keep every test away from the user's own files."""

from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PRESETS = ROOT / "presets"


@pytest.fixture(autouse=True)
def _private_data_dir(tmp_path_factory, monkeypatch):
    """Point the user data folder (presets, autosave) at a fresh temporary folder."""
    monkeypatch.setenv("PROTOMIX_DATA_DIR", str(tmp_path_factory.mktemp("protomix-data")))


@pytest.fixture(autouse=True)
def _utf8_locale(monkeypatch):
    """A UTF-8 terminal locale unless a test sets another: names and plots then look the same on
    every machine (a fresh one may have no LANG at all, which the explorer reads as ASCII only)."""
    monkeypatch.delenv("LC_ALL", raising=False)
    monkeypatch.delenv("LC_CTYPE", raising=False)
    monkeypatch.setenv("LANG", "C.UTF-8")


@pytest.fixture(scope="session")
def lib():
    from chem import load_library

    return load_library()
