"""Fixtures for driving the explorer with Pilot, by keys only, away from the user's own files."""

from __future__ import annotations

from contextlib import suppress

import pytest
from textual.worker import WorkerCancelled, WorkerFailed

import chem


@pytest.fixture(autouse=True)
def data_dir(tmp_path, monkeypatch):
    """The explorer's data folder for this test (presets, autosave): a fresh temporary folder."""
    folder = tmp_path / "protomix-data"
    monkeypatch.setenv("PROTOMIX_DATA_DIR", str(folder))
    return folder


def _autosaved(folder) -> list[chem.Mixture]:
    """The mixtures in the autosave files of ``folder``, newest first."""
    files = sorted(folder.glob("session*.toml"), key=lambda p: p.stat().st_mtime_ns, reverse=True)
    return [chem.load_preset(p) for p in files]


@pytest.fixture
def autosaved(data_dir):
    """``autosaved()``: the mixtures in the autosave files of the test's data folder, newest first."""
    return lambda: _autosaved(data_dir)


@pytest.fixture
def orphan(data_dir):
    """``orphan(mixture, name="session-old.toml")``: the autosave of a session that ended without quitting."""
    def make(mixture: chem.Mixture, name: str = "session-old.toml"):
        data_dir.mkdir(parents=True, exist_ok=True)
        return chem.save_preset(mixture, data_dir / name, overwrite=True)
    return make


@pytest.fixture(scope="session")
def library() -> chem.Library:
    return chem.load_library()


@pytest.fixture
def acetate_buffer(library) -> chem.Mixture:
    """Acetic acid and sodium acetate, 50 mM each, 25 °C, Davies."""
    return chem.Mixture((chem.Ingredient(library.reagent("acetic acid"), 0.05, "50 mM"),
                         chem.Ingredient(library.reagent("sodium acetate"), 0.05, "50 mM")),
                        title="acetate test buffer")


async def _settle(pilot) -> None:
    app = pilot.app
    for _ in range(3):
        with suppress(WorkerCancelled, WorkerFailed):     # failures are checked through notifications
            await app.workers.wait_for_complete()
        await pilot.pause()


def _screen_lines(app) -> list[str]:
    # The composited screen, as the terminal would show it (Compositor is private: tests only).
    return [strip.text for strip in app.screen._compositor.render_strips()]


def _text_of(widget) -> str:
    region = widget.region
    lines = _screen_lines(widget.app)[region.y:region.bottom]
    return "\n".join(line[region.x:region.right] for line in lines)


@pytest.fixture
def settle():
    """``await settle(pilot)``: wait until solving and plotting are done and their messages handled."""
    return _settle


@pytest.fixture
def text_of():
    """``text_of(widget)``: what the widget's region of the screen shows, line by line."""
    return _text_of


@pytest.fixture
def screen_lines():
    """``screen_lines(app)``: the whole screen as text lines."""
    return _screen_lines
