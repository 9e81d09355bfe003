"""Plot drawing for every kind of terminal, and the user's data folder."""

from __future__ import annotations

import numpy as np
import pytest

import chem
from rich.style import Style
from tui import storage
from tui.widgets.plot_area import prepare
from tui.widgets.plot_kinds import (PLAIN_MARKERS, PLOT_KINDS, PlotRequest, PlotStyle, draw_kind, grid_points,
                                    locale_is_utf8, plot_kind, simplify, visible_runs)

BRAILLE = range(0x2800, 0x2900)


def build_plot(result, request):
    """The drawing of the built-in plot kind named in ``request``."""
    return draw_kind(plot_kind(request.kind), result, request)


@pytest.fixture(scope="module")
def demo_result():
    return chem.solve(chem.demo_mixture())


@pytest.mark.parametrize("kind", [k.id for k in PLOT_KINDS])
def test_each_plot_has_labelled_axes_and_marks_the_current_ph(kind, demo_result):
    style = PlotStyle.for_terminal(dark=True, color=True, utf8=True)
    drawing = build_plot(demo_result, PlotRequest(kind, 70, 24, None, style))
    text = drawing.plain
    assert "pH" in text and f"pH {demo_result.pH:.2f}" in text
    assert ("fraction" if kind == "distribution" else "log C") in text
    assert any(ord(ch) in BRAILLE for ch in text)
    assert len(text.splitlines()) <= 24 and max(len(line) for line in text.splitlines()) <= 70


def test_without_colour_every_series_has_its_own_marker(demo_result):
    style = PlotStyle.for_terminal(dark=True, color=False, utf8=True)
    drawing = build_plot(demo_result, PlotRequest("distribution", 100, 30, None, style))
    n_series = sum(len(s.species) for s, _ in demo_result.mixture.systems())
    used = {ch for ch in drawing.plain if ch in PLAIN_MARKERS}
    assert len(used) >= min(n_series, len(PLAIN_MARKERS)) - 1   # a curve may hide entirely behind another
    assert not any(ord(ch) in BRAILLE for ch in drawing.plain)
    assert all(rgb is None for line in drawing.legend for _, rgb in line)


def test_without_utf8_the_plot_is_pure_ascii(demo_result):
    for color in (True, False):
        style = PlotStyle.for_terminal(dark=False, color=color, utf8=False)
        for kind in PLOT_KINDS:
            text = build_plot(demo_result, PlotRequest(kind.id, 70, 20, None, style)).plain
            assert text.isascii(), sorted({ch for ch in text if not ch.isascii()})


def test_dark_and_light_themes_get_their_own_series_colours(demo_result):
    dark = build_plot(demo_result, PlotRequest("log-c", 70, 20, None,
                                                PlotStyle.for_terminal(dark=True, color=True, utf8=True)))
    light = build_plot(demo_result, PlotRequest("log-c", 70, 20, None,
                                                 PlotStyle.for_terminal(dark=False, color=True, utf8=True)))
    dark_colours = {rgb for line in dark.legend for _, rgb in line if rgb}
    light_colours = {rgb for line in light.legend for _, rgb in line if rgb}
    assert dark_colours and light_colours and not dark_colours & light_colours
    # light-theme colours are dark enough to read on a pale background, and the reverse
    assert max(sum(c) for c in light_colours) < min(sum(c) for c in dark_colours)


def test_a_plot_area_too_small_says_so(demo_result):
    style = PlotStyle.for_terminal(dark=True, color=True, utf8=True)
    drawing = build_plot(demo_result, PlotRequest("distribution", 20, 6, None, style))
    assert drawing.note and "Enlarge" in drawing.plain


def test_prepared_lines_fill_the_width_exactly(demo_result):
    style = PlotStyle.for_terminal(dark=True, color=True, utf8=True)
    drawing = build_plot(demo_result, PlotRequest("distribution", 64, 18, None, style))
    image = prepare(drawing, 64, Style())
    assert len(image.strips) == 18
    assert all(strip.cell_length == 64 for strip in image.strips)
    assert "".join(seg.text for seg in image.strips[0]).rstrip() == image.plain.splitlines()[0].rstrip()


def test_curves_are_downsampled_to_about_twice_the_plot_width():
    assert grid_points(70) == 140
    assert grid_points(10) == 60 and grid_points(1000) == 400


def _distance_to_polyline(px, py, qx, qy):
    """Distance of each point (px, py) to the polyline through (qx, qy)."""
    ax, ay, bx, by = qx[:-1], qy[:-1], qx[1:], qy[1:]
    dx, dy = bx - ax, by - ay
    t = np.clip(((px[:, None] - ax) * dx + (py[:, None] - ay) * dy) / (dx * dx + dy * dy), 0.0, 1.0)
    return np.min(np.hypot(ax + t * dx - px[:, None], ay + t * dy - py[:, None]), axis=1)


def test_simplify_keeps_what_can_be_seen():
    x = np.linspace(0.0, 14.0, 281)
    y = 1.0 / (1.0 + 10.0 ** (x - 7.0))
    x_step, y_step = 14.0 / 140, 1.0 / 80
    xs, ys = simplify(x, y, x_step, y_step)
    assert len(xs) < len(x) / 4
    assert xs[0] == x[0] and xs[-1] == x[-1]
    # measured in plot dots, no point of the full curve is more than half a dot from the simplified line
    gap = _distance_to_polyline(x / x_step, y / y_step, xs / x_step, ys / y_step)
    assert gap.max() <= 0.5 + 1e-9


def test_visible_runs_skip_what_lies_on_the_floor():
    y = np.array([0, 0, 0.5, 0.6, 0, 0, 0, 0.2, 0])
    assert visible_runs(y, 0.1) == [slice(1, 5), slice(6, 9)]
    assert visible_runs(np.zeros(5), 0.1) == []


@pytest.mark.parametrize("env, expected", [
    ({"LANG": "en_US.UTF-8"}, True),
    ({"LANG": "C"}, False),
    ({"LC_ALL": "C", "LANG": "en_US.UTF-8"}, False),
    ({"LC_CTYPE": "de_DE.utf8"}, True),
    ({}, False),
    ({"LANG": "C", "LC_CTYPE": "C.UTF-8"}, False),          # Python's coercion under LANG=C
    ({"LANG": "en_US.UTF-8", "LC_CTYPE": "C.UTF-8"}, True),
])
def test_locale_decides_whether_the_terminal_shows_utf8(env, expected):
    assert locale_is_utf8(env) is expected


def test_presets_go_in_the_data_folder_from_the_environment(data_dir):
    assert storage.presets_dir() == data_dir / "presets"
    assert storage.preset_path(" rinse buffer 37C ") == data_dir / "presets" / "rinse buffer 37C.toml"
    assert storage.preset_path("x.toml") == data_dir / "presets" / "x.toml"


@pytest.mark.parametrize("name", ["", "  ", "../up", "a/b", ".hidden", "x" * 81])
def test_unusable_preset_names_are_refused(name):
    with pytest.raises(storage.StorageError):
        storage.preset_path(name)


def test_the_preset_list_marks_a_broken_user_file(data_dir, acetate_buffer):
    storage.save_user_preset(acetate_buffer, "good")
    (data_dir / "presets" / "broken.toml").write_text("format = 1\nbogus = 3\n", encoding="utf-8")
    entries = {e.name: e for e in storage.list_presets() if not e.shipped}
    assert entries["good"].title == "acetate test buffer" and entries["good"].problem is None
    assert "bogus" in entries["broken"].problem
    assert [e.shipped for e in storage.list_presets()][:len(chem.shipped_presets())] == \
        [True] * len(chem.shipped_presets())


def test_an_autosave_round_trips_and_a_clean_end_removes_it(acetate_buffer, data_dir):
    autosave = storage.Autosave.begin()
    assert storage.orphaned_autosaves(autosave.path) == []
    assert autosave.write(acetate_buffer, 1)
    assert chem.load_preset(autosave.path) == acetate_buffer
    autosave.remove()
    autosave.remove()                                   # twice is harmless
    assert list(data_dir.iterdir()) == []               # nothing left: not the file, not the lock


@pytest.mark.parametrize("dark,color,utf8", [(True, True, True), (False, True, True), (True, False, True),
                                             (True, True, False)])
def test_plot_text_is_what_plotext_itself_would_build(dark, color, utf8, demo_result, monkeypatch):
    # figure_text joins plotext's character matrix faster than plotext does; the text must be the same.
    from tui.widgets import curve_kinds, plot_kinds

    original = plot_kinds.figure_text
    checked = []

    def compared(fig):
        ours = original(fig)
        fig.monitor.matrix.set_canvas()                 # plotext's own join of the same matrix
        assert ours == fig.monitor.matrix.get_canvas()
        checked.append(fig)
        return ours

    monkeypatch.setattr(plot_kinds, "figure_text", compared)
    monkeypatch.setattr(curve_kinds, "figure_text", compared)
    style = PlotStyle.for_terminal(dark=dark, color=color, utf8=utf8)
    kinds = PLOT_KINDS + curve_kinds.curve_kinds(None, None)
    for kind in kinds:
        for system in (None, "citrate"):
            draw_kind(kind, demo_result, PlotRequest(kind.id, 70, 24, system, style))
    assert len(checked) == 2 * len(kinds)
