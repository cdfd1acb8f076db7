"""The map overview figure (fabric2seis.figures.map_overview) on synthetic maps with known grains.

Maps come from ``synth.voronoi_map`` written as CSV maps (the only writer here that keeps
unindexed rows, a quality column and hexagonal grids), read back through ``pipeline.ingest``.
What is drawn is read from the figure itself: the image arrays (gids ``phase_map``,
``orientation_map``), the legend and the scale bar.
"""

import re

import numpy as np
import pytest
from matplotlib.text import Text
from orix.plot import IPFColorKeyTSL
from orix.quaternion import Orientation
from orix.vector import Vector3d
from scipy.spatial import cKDTree

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.figures.map_overview import MAX_CELLS, map_overview, map_overview_figure, map_raster
from fabric2seis.ingest.io.write import write_table
from fabric2seis.pipeline import ingest
from fabric2seis.settings import settings_for
from fabric2seis.synth import grid_points, voronoi_map

NX, NY, STEP = 40, 30, 2.0
NAMES = np.array(["not indexed", "olivine", "enstatite"], dtype=object)
# a corner block not indexed, another below the quality threshold (0.1 on the CSV's quality column)
UNINDEXED = (slice(0, 3), slice(0, 5))
LOW_QUALITY = (slice(27, 30), slice(33, 40))


def read_sample(path, settings_text=""):
    path.with_suffix(".yaml").write_text(settings_text)
    settings, source = settings_for(path, None)
    return ingest(path, settings, source)


@pytest.fixture(scope="module")
def square(tmp_path_factory):
    """A two-phase square map, its sample (frame turned: lineation +y, foliation normal +x) and what each point is."""
    folder = tmp_path_factory.mktemp("square")
    seeds = np.array([[10, 8], [30, 10], [55, 12], [70, 9], [12, 30], [35, 32], [58, 28], [72, 40],
                      [15, 50], [40, 50], [62, 52], [47, 40], [49, 42]], dtype=float)   # the last two close
    m = voronoi_map(len(seeds), NX, NY, step=STEP, seeds_xy=seeds, seed=4)
    phase = ((m.cell % 2) + 1).reshape(NY, NX)
    phase[UNINDEXED] = 0
    quality = np.full((NY, NX), 0.9)
    quality[LOW_QUALITY] = 0.05
    indexed_cells = np.bincount(m.cell[phase.ravel() > 0], minlength=len(seeds))
    min_pixels = int(np.sort(indexed_cells)[1])          # drops the smallest cell only
    path = folder / "two phases.csv"
    write_table(path, m.quat, NAMES[phase.ravel()], x=m.x, y=m.y, quality=quality.ravel())
    sample = read_sample(path, "frame: {lineation: '+y', foliation_normal: '+x'}\n"
                               f"clean: {{quality_min: 0.1}}\ngrains: {{min_pixels: {min_pixels}}}\n")
    # what each point should be: 0 not indexed, 1 low quality, 2 small grain, else the phase name
    kind = NAMES[phase.ravel()].copy()
    kind[quality.ravel() < 0.1] = "low"
    small = (indexed_cells < min_pixels)[m.cell] & (phase.ravel() > 0) & (quality.ravel() >= 0.1)
    kind[small] = "small"
    assert small.sum() == indexed_cells.min() > 0       # the fixture holds a grain that is too small
    return m, sample, kind.reshape(NY, NX)


def image_of(fig, gid):
    found = [im for ax in fig.axes for im in ax.get_images() if im.get_gid() == gid]
    assert len(found) == 1, gid
    return np.asarray(found[0].get_array())


def legend_colours(fig):
    legends = [ax.get_legend() for ax in fig.axes if ax.get_legend() is not None]
    assert len(legends) == 1
    leg = legends[0]
    return {text.get_text().split(":")[0]: np.asarray(handle.get_facecolor())[:3]
            for text, handle in zip(leg.get_texts(), leg.legend_handles) if hasattr(handle, "get_facecolor")}


@pytest.mark.parametrize("max_cells, stride, direction", [(MAX_CELLS, 1, "+z"), (NX * NY // 4, 2, "-x")])
def test_orientation_colours_are_orix_ipf_colours_of_the_map_axis(square, max_cells, stride, direction):
    m, sample, kind = square
    fig = map_overview(sample, mineral="olivine", max_cells=max_cells, direction=direction)
    image = image_of(fig, "orientation_map")
    assert image.shape[:2] == (-(-NY // stride), -(-NX // stride))
    shown = kind[::stride, ::stride]
    point = (np.arange(NY)[:, None] * NX + np.arange(NX)[None, :])[::stride, ::stride]
    olivine = shown == "olivine"
    # reference: orix's own TSL key for the sample axis (Nolze & Hielscher 2016), on the orientations
    # as synthesised, in the sample frame: the settings' frame turn must not change the colours
    axis = {"+z": Vector3d.zvector(), "-x": -Vector3d.xvector()}[direction]
    key = IPFColorKeyTSL(find_mineral("olivine").orix_symmetry, axis)
    expected = key.orientation2color(Orientation(m.quat[point[olivine]], find_mineral("olivine").orix_symmetry))
    assert olivine.sum() > 100
    assert np.abs(image[olivine, :3] - expected).max() < 1e-4       # Euler angles rounded to 1e-5 deg in the CSV
    assert np.all(image[shown == "enstatite", :3] == 0.85)          # other phases: one pale grey


def test_phases_and_points_left_out_are_drawn_in_their_legend_colours(square):
    _, sample, kind = square
    fig = map_overview(sample)
    image = image_of(fig, "phase_map")
    colours = legend_colours(fig)
    labels = {"olivine": "olivine", "enstatite": "enstatite", "not indexed": "not indexed",
              "low": "below the quality threshold", "small": "in a grain below grains.min_pixels"}
    # bookkeeping (every point read is kept or left out for one reason) and the legend's colour of each kind
    assert len(sample.points.x) + len(sample.points.dropped.x) == sample.points.n_read == NX * NY
    for what, label in labels.items():
        cells = kind == what
        assert cells.any() and np.all(image[cells, :3] == colours[label]), what
    assert not np.allclose(colours["olivine"], colours["enstatite"])    # a two-phase map shows both phases


def test_scale_bar_length_matches_its_label_in_micrometres(square):
    _, sample, _ = square
    fig = map_overview(sample)
    fig.canvas.draw()
    bars = [(ax, line) for ax in fig.axes for line in ax.lines if line.get_gid() == "scale_bar"]
    labels = [t for ax in fig.axes for t in ax.texts if t.get_gid() == "scale_bar_label"]
    assert len(bars) == 1 and len(labels) == 1
    ax, bar = bars[0]
    number = re.fullmatch(r"\s*([0-9.]+) \u00b5m", labels[0].get_text())
    assert number is not None, labels[0].get_text()
    x = np.asarray(bar.get_xdata(), dtype=float)
    assert x[1] - x[0] == pytest.approx(float(number.group(1)))
    # on the page the bar has the length of as many map micrometres as the image (common practice)
    ends = bar.get_transform().transform(np.column_stack([x, [0.0, 0.0]]))
    image = next(im for im in ax.get_images() if im.get_gid() in ("phase_map", "orientation_map"))
    left, right = image.get_extent()[:2]
    page = ax.transData.transform([[left, 0.0], [right, 0.0]])
    length = float(number.group(1))
    assert (ends[1, 0] - ends[0, 0]) / (page[1, 0] - page[0, 0]) == pytest.approx(length / (right - left))
    assert right - left == pytest.approx(NX * STEP)        # the image spans the map, in the file's unit


def test_pixel_budget_on_large_square_and_hexagonal_maps():
    # common practice for large maps: draw a raster of bounded size, never one marker per point
    for grid, nx, ny in (("square", 1500, 1000), ("hex", 1300, 1000)):
        x, y = grid_points(nx, ny, 0.5, grid)
        raster = map_raster(x, y, grid, 0.5)
        assert raster.index.size <= MAX_CELLS and raster.index.size > MAX_CELLS / 4
        assert np.isin(raster.index, np.arange(-1, len(x))).all()
    raster = map_raster(*grid_points(NX, NY, STEP), "square", STEP, max_cells=100)
    k = raster.stride
    assert raster.index.size <= 100 < -(-NX // (k - 1)) * -(-NY // (k - 1))   # the smallest stride that fits


def test_figure_keeps_to_the_pixel_budget(square):
    _, sample, _ = square
    fig = map_overview(sample, max_cells=150)
    for gid in ("phase_map", "orientation_map"):
        assert image_of(fig, gid).shape[0] * image_of(fig, gid).shape[1] <= 150


def test_hexagonal_cells_show_the_nearest_point():
    x, y = grid_points(30, 24, 1.0, "hex")
    raster = map_raster(x, y, "hex", 1.0, max_cells=400)
    assert raster.index.size <= 400 and raster.stride is None
    left, _, _, top = raster.extent
    rows, cols = raster.index.shape
    cx, cy = np.meshgrid(left + (np.arange(cols) + 0.5) * raster.cell, top + (np.arange(rows) + 0.5) * raster.cell)
    dist, _ = cKDTree(np.column_stack([x, y])).query(np.column_stack([cx.ravel(), cy.ravel()]))  # scipy as reference
    index = raster.index.ravel()
    near = dist <= 1.0
    assert np.array_equal(index >= 0, near)
    chosen = np.hypot(x[index[near]] - cx.ravel()[near], y[index[near]] - cy.ravel()[near])
    assert np.allclose(chosen, dist[near], atol=1e-9)


def test_hexagonal_map_is_drawn_on_square_cells(tmp_path):
    m = voronoi_map(8, 30, 24, step=1.5, grid="hex", n_phases=2, seed=7)
    path = tmp_path / "hex.csv"
    write_table(path, m.quat, NAMES[m.phase], x=m.x.round(6), y=m.y.round(6))
    sample = read_sample(path)
    fig = map_overview(sample, max_cells=500)
    image = image_of(fig, "phase_map")
    assert image.shape[0] * image.shape[1] <= 500
    colours = legend_colours(fig)
    drawn = {name for name in ("olivine", "enstatite") if np.all(image[..., :3] == colours[name], axis=-1).any()}
    assert drawn == {"olivine", "enstatite"}
    assert "hexagonal grid drawn on" in " ".join(t.get_text() for t in fig.texts).lower()


def test_grain_list_has_no_map_overview(tmp_path):
    m = voronoi_map(4, 10, 8, seed=1)
    path = tmp_path / "grains.csv"
    write_table(path, m.quat[:40], ["olivine"] * 40)
    sample = read_sample(path)
    assert map_overview_figure(tmp_path / "map_overview", sample) == []
    assert not list(tmp_path.glob("map_overview*"))
    with pytest.raises(ValueError, match="grain list"):
        map_overview(sample)


def text_boxes(fig, monkeypatch):
    """Every non-empty text drawn on the page (hidden tick labels do not count), with its box."""
    drawn, draw_text = {}, Text.draw

    def recording_draw(self, renderer):
        draw_text(self, renderer)
        if self.get_visible() and self.get_text().strip():
            drawn[id(self)] = (self.get_text(), Text.get_window_extent(self, renderer))

    monkeypatch.setattr(Text, "draw", recording_draw)
    fig.canvas.draw()
    return list(drawn.values())


@pytest.mark.parametrize("nx, ny", [(40, 30), (200, 20), (12, 60), (30, 400)])
def test_no_two_texts_overlap(tmp_path, monkeypatch, nx, ny):
    # the rule for every figure: no text on another (checked on the drawn boxes)
    m = voronoi_map(6, nx, ny, step=1.0, n_phases=2, seed=3)
    path = tmp_path / "m.csv"
    write_table(path, m.quat, NAMES[m.phase], x=m.x, y=m.y)
    boxes = text_boxes(map_overview(read_sample(path)), monkeypatch)
    assert len(boxes) > 10
    for i, (a, box_a) in enumerate(boxes):
        for b, box_b in boxes[i + 1:]:
            wide = min(box_a.x1, box_b.x1) - max(box_a.x0, box_b.x0)
            high = min(box_a.y1, box_b.y1) - max(box_a.y0, box_b.y0)
            assert wide <= 1.0 or high <= 1.0, (a, b)


def test_bad_arguments_are_refused_and_a_given_figure_is_used(square):
    from matplotlib.figure import Figure

    _, sample, _ = square
    for options, message in (({"mineral": "quartz"}, "not in sample"), ({"direction": "+w"}, "map axis"),
                             ({"max_cells": 0}, "at least 1")):
        with pytest.raises(ValueError, match=message):
            map_overview(sample, **options)
    given = Figure()
    assert map_overview(sample, direction="x", fig=given) is given and len(given.axes) == 4
