"""The field, suite, splitting and stack figures: contour levels of the misfit surface, flags of edge
and poor fits, measured and predicted told apart without colour, numbered suite labels that do not
overlap, and no text drawn over another."""

import dataclasses
import itertools
from pathlib import Path
from unittest import mock

import numpy as np
import pandas as pd
import pytest
from matplotlib.colors import to_rgba
from matplotlib.contour import ContourSet
from matplotlib.patches import Polygon
from matplotlib.text import Text

from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.figures import field as field_figures
from fabric2seis.figures import splitting as splitting_figures
from fabric2seis.figures import stack as stack_figures
from fabric2seis.figures import suite as suite_figures
from fabric2seis.synth import fabric_orientations
from fabric2seis.waves import field, seismic, stack

DEMO_MEASUREMENTS = Path(__file__).resolve().parents[2] / "demo_samples" / "field_measurements.csv"
# a layout that matplotlib gives up on (it warns) leaves texts where they fall: an error here
pytestmark = pytest.mark.filterwarnings("error::UserWarning")


def drawn_texts(fig):
    """Every text matplotlib draws (tick labels outside the view are not drawn) and its box on screen."""
    seen = []
    draw = Text.draw

    def recording(self, renderer):
        draw(self, renderer)
        if self.get_visible() and self.get_text().strip():
            seen.append((self, self.get_window_extent(renderer)))
    with mock.patch.object(Text, "draw", recording):
        fig.canvas.draw()
    return seen


def overlapping(fig):
    """Pairs of drawn texts whose boxes overlap by more than a tenth of a pixel each way."""
    return [(a.get_text(), b.get_text()) for (a, p), (b, q) in itertools.combinations(drawn_texts(fig), 2)
            if min(p.x1, q.x1) - max(p.x0, q.x0) > 0.1 and min(p.y1, q.y1) - max(p.y0, q.y0) > 0.1]


@pytest.fixture
def kept(monkeypatch):
    """The figures the drawing functions would save, kept open instead."""
    figures = {}

    def keep(fig, stem):
        figures[str(stem)] = fig
        return [f"{stem}.png"]
    for module in (field_figures, splitting_figures, stack_figures, suite_figures):
        monkeypatch.setattr(module, "save", keep)
    yield figures
    for fig in figures.values():
        field_figures.plt.close(fig)


def _sample(name, fabric, n=600):
    olivine = find_mineral("olivine")
    q = fabric_orientations(olivine, fabric, n, 20.0, seed=4)
    agg = seismic.aggregate([(olivine, q, np.ones(n))], {"olivine": 1.0})
    return field.SampleTensor(name, agg.stiffness, agg.density_kg_m3, None)


@pytest.fixture(scope="module")
def fits():
    """Fits to the demo measurements (two nulls added): two olivine fabrics and a random one (an edge fit)."""
    data = field.read_measurements(DEMO_MEASUREMENTS)
    data.loc[data.index[[2, 20]], "null"] = True
    samples = [_sample("strong A", "olivine-A"), _sample("strong B", "olivine-B"), _sample("random", None, 300)]
    return field.fit_field(samples, data, set(), "m.csv")


# --- the misfit surface -----------------------------------------------------------------------------

def test_joint_levels_are_the_delta_chi_square_of_two_parameters():
    # Press et al., Numerical Recipes (3rd ed., section 15.6, table of delta chi-square; from memory):
    # 68.3 % and 95.4 % of two parameters jointly: 2.30 and 6.18; of one parameter: 1.00 and 4.00.
    assert field_figures.joint_levels(2) == pytest.approx((2.30, 6.18), abs=0.005)
    assert field_figures.joint_levels(1) == pytest.approx((field.DELTA_CHI_SQUARE_68, field.DELTA_CHI_SQUARE_95))
    # independently: chi-square of two degrees of freedom is exponential, P(> d) = exp(-d / 2)
    # (common practice), at the probabilities of one and two standard deviations of a normal
    p = np.array([0.682689, 0.954500])
    assert field_figures.joint_levels(2) == pytest.approx(tuple(-2.0 * np.log(1.0 - p)), rel=1e-4)
    with pytest.raises(ValueError, match="at least 1"):
        field_figures.joint_levels(0)


def test_misfit_surface_draws_the_joint_contours_and_marks_the_best_fit(fits, kept):
    one = fits.stations[0]
    field_figures.misfit_surface("m", one)
    fig = kept["m"]
    level68, level95 = field_figures.joint_levels(2)
    line_sets = [c for ax in fig.axes for c in ax.collections if isinstance(c, ContourSet) and not c.filled]
    assert len(line_sets) == 2                                         # the whole range and the close-up
    for lines in line_sets:
        assert list(lines.levels) == pytest.approx([level68, level95])
        assert [ls for ls in lines.get_linestyles()][0] != [ls for ls in lines.get_linestyles()][1]
    bands = [c for ax in fig.axes for c in ax.collections if isinstance(c, ContourSet) and c.filled][0]
    assert list(bands.levels[:3]) == pytest.approx([0.0, level68, level95])   # the scale starts at the minimum
    best = (one.model["thickness_km"], one.model["lineation_trend_deg"])
    marked = [line for ax in fig.axes for line in ax.lines if line.get_marker() == "X"
              and np.allclose(np.c_[line.get_xdata(), line.get_ydata()], [best])]
    assert len(marked) == 2
    assert f"best {one.model['thickness_km']:.0f} km" in fig._suptitle.get_text()
    assert not overlapping(fig)


def test_edge_and_poor_fits_are_said_in_the_title(fits, kept):
    edge = next(s for s in fits.stations if s.sample == "random")
    assert edge.model["edge_of_range"]                 # a random fabric cannot give two seconds of delay
    field_figures.misfit_surface("edge", edge)
    field_figures.data_and_predictions("edge data", edge)
    for stem in ("edge", "edge data"):
        title = kept[stem]._suptitle.get_text()
        assert "EDGE FIT" in title and f"{edge.model['searched_thickness_km'][1]:.0f} km" in title
        assert not overlapping(kept[stem])
    good = fits.stations[0]
    assert not good.model["poor_fit"] and field_figures.fit_flags(good.model) == ""
    poor = dict(good.model, poor_fit=True, reduced_chi_square=3.4,
                poor_fit_reasons=["reduced chi-square 3.40 above 2: the residuals are larger than the errors allow"])
    assert field_figures.fit_flags(poor) == "POOR FIT: reduced chi-square 3.40"


def test_misfit_of_one_fitted_parameter_is_a_curve_with_the_one_parameter_levels(fits, kept):
    one = fits.stations[0]
    grid = dict(one.grid, chi_square=one.grid["chi_square"][:, :1, :], azimuths=one.grid["azimuths"][:1])
    field_figures.misfit_surface("curve", dataclasses.replace(one, grid=grid))
    ax = kept["curve"].axes[1]
    levels = sorted(line.get_ydata()[0] for line in ax.lines if line.get_linestyle() in ("-", "--")
                    and len(set(line.get_ydata())) == 1)
    assert levels == pytest.approx([1.0, 4.0])      # the fit's own intervals (field.DELTA_CHI_SQUARE_*)
    assert not overlapping(kept["curve"])


# --- measured and predicted without colour ---------------------------------------------------------

def _grey(colour):
    r, g, b, _ = to_rgba(colour)
    return 0.299 * r + 0.587 * g + 0.114 * b        # luma (ITU-R BT.601; common practice)


def test_data_and_predictions_tell_measured_from_predicted_by_style(fits, kept):
    one = fits.stations[0]
    field_figures.data_and_predictions("d", one)
    fig = kept["d"]
    top = fig.axes[1]
    measured = [line for line in top.lines if line.get_marker() == "o"]
    nulls = [line for line in top.lines if line.get_marker() == "D"]
    predicted = [line for line in top.lines if line.get_marker() in ("None", "", None) and line.get_linestyle() == "-"]
    assert measured and nulls and predicted
    assert _grey(measured[0].get_markerfacecolor()) < 0.1             # filled black
    assert _grey(nulls[0].get_markerfacecolor()) > 0.9               # open
    assert len(nulls[0].get_xdata()) == 2 * int(one.measurements["null"].sum())   # along and across
    assert not overlapping(fig)


def test_fast_directions_one_panel_per_station_samples_by_marker_measured_filled(fits, kept):
    field_figures.fast_direction_rose("r", fits.predictions)
    fig = kept["r"]
    panels = [ax for ax in fig.axes if ax.name == "polar"]
    assert len(panels) == fits.predictions["station"].nunique() == 2
    for ax in panels:
        roses = [p for p in ax.patches if isinstance(p, Polygon)]
        assert len(roses) == 1 and _grey(roses[0].get_facecolor()) < 0.9          # measured: filled grey
        rings = [line for line in ax.lines if line.get_label().startswith("predicted by")]
        assert [line.get_label() for line in rings] == [f"predicted by {s} (ring {k + 1})" for k, s in
                                                          enumerate(["strong A", "strong B", "random"])]
        assert len({line.get_marker() for line in rings}) == 3                      # told apart by shape
        assert all(_grey(line.get_markerfacecolor()) > 0.9 for line in rings)      # open, unlike the rose
        radii = [line.get_ydata()[0] for line in rings]
        assert radii == sorted(radii) and len(set(radii)) == 3                     # and by ring
    assert not overlapping(fig)


# --- the suite comparison ---------------------------------------------------------------------------

def _suite_table(n=8):
    """A suite of n samples, several on top of each other, and one that failed."""
    rows = []
    for k in range(n):
        j, avs = (3.0, 8.0) if k % 2 else (3.0 + 0.1 * k, 8.0 + 0.4 * k)
        p, g = (0.4, 0.3) if k % 2 else (0.2 + 0.05 * k, 0.3)
        rows.append({"sample": f"VM{k:02d}_a_long_sample_name", "status": "ok", "uncertainty.main_phase": "olivine",
                     "phases.olivine.J": j, "uncertainty.J.low": j - 0.3, "uncertainty.J.high": j + 0.4,
                     "seismic.avs_max_pct": avs, "uncertainty.avs_max_pct.low": avs - 0.5,
                     "uncertainty.avs_max_pct.high": avs + 0.6, "splitting.along_z.delay_s_per_100km": 0.5 + 0.1 * k,
                     "uncertainty.delay_s_per_100km.low": 0.45 + 0.1 * k,
                     "uncertainty.delay_s_per_100km.high": 0.6 + 0.1 * k,
                     **{f"phases.olivine.vollmer.{pole}.{c}": v for pole in ("[100]", "[010]", "[001]")
                        for c, v in zip("PGR", (p, g, 1.0 - p - g))}})
    rows.append({"sample": "broken", "status": "broken.ctf: this is not a text file (it contains binary data)"})
    return pd.DataFrame(rows)


def test_suite_labels_are_numbers_that_overlap_nothing_and_the_key_is_off_the_data(kept):
    table = _suite_table()
    suite_figures.suite_figure("s", table)
    fig = kept["s"]
    assert not overlapping(fig)
    scatter, bars, triangle, key = fig.axes
    for ax in (scatter, triangle):                  # every processed sample numbered once per panel
        numbers = sorted(int(t.get_text()) for t in ax.texts if t.get_text().isdigit())
        assert numbers == list(range(1, 9))
    assert [t.get_text() for t in bars.get_xticklabels()] == [str(k) for k in range(1, 9)]
    legend = key.get_legend()
    texts = [t.get_text() for t in legend.get_texts()]
    assert texts[:8] == [f"{k + 1}  VM{k:02d}_a_long_sample_name" for k in range(8)]
    assert any(t.startswith("broken failed") and "not a text file" in t for t in texts)
    box = legend.get_window_extent(fig.canvas.get_renderer())
    for ax in (scatter, bars, triangle):
        assert not box.overlaps(ax.get_window_extent(fig.canvas.get_renderer()))


def test_place_labels_keeps_labels_apart_and_off_the_points():
    fig, ax = suite_figures.plt.subplots(figsize=(3, 3))
    xy = np.array([[0.5, 0.5]] * 5 + [[0.52, 0.5], [0.2, 0.8]])
    ax.plot(*xy.T, "o", ms=8)
    ax.set_xlim(0, 1)
    ax.set_ylim(0, 1)
    labels = suite_figures.place_labels(ax, xy, [str(k) for k in range(len(xy))], marker_pt=4.0)
    renderer = fig.canvas.get_renderer()
    boxes = [t.get_window_extent(renderer) for t in labels]
    assert len(boxes) == len(xy)
    for a, b in itertools.combinations(boxes, 2):
        assert not (a.x0 < b.x1 and b.x0 < a.x1 and a.y0 < b.y1 and b.y0 < a.y1)
    half = 4.0 * fig.dpi / 72.0
    for x, y in ax.transData.transform(xy):
        assert not any(b.x0 < x + half and x - half < b.x1 and b.y0 < y + half and y - half < b.y1 for b in boxes)
    suite_figures.plt.close(fig)


# --- the splitting and stack figures ---------------------------------------------------------------

def test_splitting_and_stack_figures_have_no_text_on_text_and_settings_as_given(kept):
    baz = np.arange(0.0, 360.0, 5.0)
    sweep = {"back_azimuth_deg": baz, "fast_azimuth_deg": (175.0 + 10.0 * np.sin(np.radians(2 * baz))) % 180.0,
             "delay_s": 1.2 + 0.1 * np.cos(np.radians(baz))}
    summary = {"fast_azimuth_deg": 175.0, "delay_s": 1.2, "layer_thickness_km": 62.5, "sweep_incidence_deg": 10.0,
               "lineation_trend_deg": 33.4, "lineation_plunge_deg": 4.6}
    splitting_figures.splitting_figure("one", "VM01", sweep, summary)
    title = kept["one"]._suptitle.get_text()
    assert "62.5 km" in title and "trend 33°, plunge 5°" in title
    assert not overlapping(kept["one"])
    # the line is broken where the azimuth wraps through 180: no segment crosses the panel
    fast = next(line for line in kept["one"].axes[1].lines if line.get_linestyle() == "-").get_ydata()
    assert np.nanmax(np.abs(np.diff(fast))) < 45.0 and np.isnan(fast).any()
    plan = {"file": "s.yaml", "period_s": 8.0, "incidence_deg": 10.0, "back_azimuth_step_deg": 10.0,
            "layers": [{"kind": "splitting", "name": "deep", "fast_azimuth_deg": 30.0, "delay_s": 1.0},
                       {"kind": "splitting", "name": "crust", "fast_azimuth_deg": 120.0, "delay_s": 0.4}]}
    stack_figures.stack_figure("two", stack.sweep_stack(plan, field.read_measurements(DEMO_MEASUREMENTS)))
    assert "dominant period 8 s" in kept["two"]._suptitle.get_text()
    assert not overlapping(kept["two"])


def test_png_cut_from_one_drawing_matches_matplotlibs_tight_savefig(tmp_path):
    # projection.save draws a figure once for its PNG and cuts the tight box (with matplotlib's pad)
    # out of the pixels; matplotlib's own savefig(bbox_inches="tight") is the reference: the same
    # size in pixels, same picture (mean difference of the grey levels well below one level in 255).
    import matplotlib.pyplot as plt
    import numpy as np
    from PIL import Image

    from fabric2seis.figures.projection import PNG_DPI, draw_png

    def sheet():
        fig, axes = plt.subplots(1, 2, figsize=(6, 3), layout="constrained")
        axes[0].imshow(np.arange(400.0).reshape(20, 20), cmap="viridis")
        axes[1].plot([0, 1, 2], [2, 0, 1], color="tab:red")
        axes[1].set_xlabel("a label at the foot")
        fig.suptitle("a title at the top")
        return fig

    reference = sheet()
    reference.savefig(tmp_path / "reference.png", dpi=PNG_DPI, bbox_inches="tight")
    plt.close(reference)
    ours = sheet()
    draw_png(ours, tmp_path / "ours.png")
    plt.close(ours)
    a = np.asarray(Image.open(tmp_path / "reference.png").convert("L"), dtype=float)
    b = np.asarray(Image.open(tmp_path / "ours.png").convert("L"), dtype=float)
    assert a.shape == b.shape
    assert np.mean(np.abs(a - b)) < 1.0


@pytest.mark.parametrize("constrained_by_default", [False, True])
def test_save_draws_a_laid_out_figure_twice_and_writes_matplotlibs_pdf(tmp_path, monkeypatch, constrained_by_default):
    # projection.save draws once for the PNG and once for the PDF, with the layout of the first
    # drawing held. matplotlib's savefig draws a figure that has a layout engine (even its
    # placeholder, set_layout_engine("none")) once more before writing, so save leaves it none; the
    # reference is matplotlib's own PDF of the same figure written with the layout held that way:
    # the same bytes. A user's matplotlibrc asking for constrained layout changes neither.
    import matplotlib
    import matplotlib.pyplot as plt
    from matplotlib.figure import Figure

    from fabric2seis.figures import projection

    monkeypatch.setitem(matplotlib.rcParams, "figure.constrained_layout.use", constrained_by_default)

    def sheet():
        fig, axes = plt.subplots(1, 2, figsize=(6, 3), layout="constrained")
        axes[0].imshow(np.arange(400.0).reshape(20, 20), cmap="viridis")
        fig.colorbar(axes[0].images[0], ax=axes[0], label="a colour bar")
        axes[1].plot([0, 1, 2], [2, 0, 1], color="tab:red")
        axes[1].set_xlabel("a label at the foot")
        fig.suptitle("a title at the top")
        return fig

    reference = sheet()
    box = projection.draw_png(reference, tmp_path / "reference.png")
    reference.set_layout_engine("none")
    reference.savefig(tmp_path / "reference.pdf", dpi=projection.PNG_DPI, bbox_inches=box,
                      metadata={"CreationDate": None})
    plt.close(reference)

    drawings = []
    draw = Figure.draw
    monkeypatch.setattr(Figure, "draw", lambda self, renderer: (drawings.append(renderer), draw(self, renderer))[1])
    ours = sheet()
    projection.save(ours, tmp_path / "ours")
    assert len(drawings) == 2
    assert (tmp_path / "ours.pdf").read_bytes() == (tmp_path / "reference.pdf").read_bytes()
    assert (tmp_path / "ours.png").read_bytes() == (tmp_path / "reference.png").read_bytes()
