"""No two texts of a figure of the demo sit on one another (every figure the commands write).

The commands run in-process on three demo samples (a map with three phases, two of them with fewer
than 100 grains; a grain list; a quartz map with four hexagonal poles), the field comparison on one
of them, a two-layer stack over the grain list (as docs/examples/two_layer_stack.yaml does over
the dunite), the predicted crossed-polar view of the quartz map, and the suite figure on the three.
While they run, every text matplotlib draws is
recorded with its box on the page (``Text.draw``), and each PNG written (``projection.draw_png``, or ``Figure.savefig``)
gets the list of pairs of boxes that overlap by more than ``TOLERANCE_PX`` in both directions.
The check is on what is drawn, so tick labels outside the view, empty texts and hidden texts do
not count. Every figure is its own test case, named after its file.
"""

import contextlib
import re
from pathlib import Path

import pytest
from matplotlib.figure import Figure
from matplotlib.text import Text

from fabric2seis import cli
from fabric2seis.figures import projection
from fabric2seis.figures.suite import suite_figure
from fabric2seis.workflow.report_files import REPORT_FIGURES
from fabric2seis.workflow.suite import suite_table

DEMO = Path(__file__).resolve().parents[2] / "demo_samples"
SAMPLES = ("VM03_lherzolite.ang", "VM04_grain_list.csv", "VM05_quartz_mylonite.ctf")
POLE_FIGURES = ("pole_figures", "inverse_pole_figures", "fabric_convergence")
OTHER_SAMPLE_FIGURES = tuple(f for f in REPORT_FIGURES if f not in POLE_FIGURES)
TOLERANCE_PX = 1.0        # at the 150 dpi of the PNG files


def overlapping_pairs(boxes: list[tuple[str, tuple[float, float, float, float]]]) -> list[str]:
    """Pairs of texts whose boxes (x0, y0, x1, y1, pixels) overlap by more than the tolerance both ways."""
    found = []
    for i, (text_a, a) in enumerate(boxes):
        for text_b, b in boxes[i + 1:]:
            wide = min(a[2], b[2]) - max(a[0], b[0])
            high = min(a[3], b[3]) - max(a[1], b[1])
            if wide > TOLERANCE_PX and high > TOLERANCE_PX:
                found.append(f"{text_a!r} / {text_b!r} ({wide:.0f} x {high:.0f} px)")
    return found


def figure_name(path: Path) -> str:
    """``sample/figure`` of a PNG, written first into the folder's temporary twin (``.sample.partial-...``)."""
    return re.sub(r"^\.(.+?)\.partial-[^/]*/", r"\1/", path.with_suffix("").as_posix())


@contextlib.contextmanager
def recording_overlaps(out: Path):
    """While open, every PNG saved under ``out`` gets its list of overlapping texts (a dict by figure name)."""
    drawn: dict[int, tuple[str, tuple[float, float, float, float]]] | None = None
    results: dict[str, list[str]] = {}
    draw_text = Text.draw

    def recording_draw(self, renderer):
        draw_text(self, renderer)
        if drawn is not None and self.get_visible() and self.get_text().strip():
            box = Text.get_window_extent(self, renderer)          # the text alone, not an arrow of an annotation
            drawn[id(self)] = (self.get_text(), (box.x0, box.y0, box.x1, box.y1))

    def recording(write):
        def write_and_record(fig, fname, *args, **kwargs):
            nonlocal drawn
            if not str(fname).endswith(".png") or drawn is not None:      # a PDF, or savefig inside draw_png
                return write(fig, fname, *args, **kwargs)
            drawn = {}
            try:
                box = write(fig, fname, *args, **kwargs)     # the last draw of each text is the one on the page
                results[figure_name(Path(fname).relative_to(out))] = overlapping_pairs(list(drawn.values()))
            finally:
                drawn = None
            return box
        return write_and_record

    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(Text, "draw", recording_draw)
        patch.setattr(Figure, "savefig", recording(Figure.savefig))
        patch.setattr(projection, "draw_png", recording(projection.draw_png))   # PNGs of projection.save
        yield results


@pytest.fixture(scope="module")
def overlaps(tmp_path_factory) -> dict[str, list[str]]:
    """Run the demo's commands once; by figure (``sample/figure``), the overlapping texts."""
    out = tmp_path_factory.mktemp("overlap")
    with recording_overlaps(out) as results:
        for name in SAMPLES:
            # --threads 1: figures drawn in this process, where the hooks see them (not in a second one)
            assert cli.main(["sample", str(DEMO / name), "--out", str(out / Path(name).stem), "--threads", "1"]) == 0
        assert cli.main(["field", str(out / "VM04_grain_list"), "--measurements", str(DEMO / "field_measurements.csv"),
                         "--out", str(out / "field"), "--threads", "1"]) == 0      # its figures here too
        stack = out / "two_layers.yaml"        # paths in a stack file are relative to it
        stack.write_text("period_s: 8\nincidence_deg: 10\nlayers:\n  - result: VM04_grain_list\n    thickness_km: 60\n"
                         "  - name: crust\n    fast_azimuth_deg: 120\n    delay_s: 0.4\n", encoding="utf-8")
        assert cli.main(["field", "--stack", str(stack), "--measurements", str(DEMO / "field_measurements.csv"),
                         "--out", str(out / "stack")]) == 0
        assert cli.main(["optics", str(DEMO / "VM05_quartz_mylonite.ctf"), "--out", str(out / "optics")]) == 0
        suite_figure(out / "suite_comparison", suite_table([out / Path(n).stem / "summary.json" for n in SAMPLES]))
    return results


def test_the_check_sees_texts_on_one_another_and_not_texts_apart(tmp_path):
    # the check itself: two labels at one place overlap, two far apart do not, a hidden one is not drawn
    with recording_overlaps(tmp_path) as results:
        fig = Figure(figsize=(3, 2))
        ax = fig.add_subplot()
        ax.text(0.5, 0.5, "first label", transform=ax.transAxes)
        ax.text(0.52, 0.5, "second label", transform=ax.transAxes)
        ax.text(0.05, 0.9, "far away", transform=ax.transAxes)
        ax.text(0.05, 0.9, "hidden", transform=ax.transAxes, visible=False)
        fig.savefig(tmp_path / "probe.png")
    assert len(results["probe"]) == 1 and "'first label' / 'second label'" in results["probe"][0]


def _check(overlaps: dict[str, list[str]], figure: str) -> None:
    assert figure in overlaps, f"{figure}.png was not written (written: {sorted(overlaps)})"
    assert not overlaps[figure], f"{figure}.png: texts overlap: " + "; ".join(overlaps[figure])


@pytest.mark.parametrize("sample", [Path(s).stem for s in SAMPLES])
@pytest.mark.parametrize("figure", POLE_FIGURES)
def test_pole_and_convergence_figures_have_no_overlapping_text(overlaps, sample, figure):
    # layouts must keep every text clear of every other (common practice of figure design)
    _check(overlaps, f"{sample}/{figure}")


@pytest.mark.parametrize("sample", [Path(s).stem for s in SAMPLES])
@pytest.mark.parametrize("figure", OTHER_SAMPLE_FIGURES)
def test_other_figures_of_a_sample_have_no_overlapping_text(overlaps, sample, figure):
    # the same rule for every figure of the report (workflow.report_files.REPORT_FIGURES); some are
    # drawn only for some samples (a map overview needs a map)
    if f"{sample}/{figure}" not in overlaps:
        pytest.skip(f"{figure} is not drawn for {sample}")
    _check(overlaps, f"{sample}/{figure}")


def test_field_stack_optics_and_suite_figures_have_no_overlapping_text(overlaps):
    # every figure the field comparison writes, the suite comparison, and any other figure written
    listed = {f"{Path(s).stem}/{f}" for s in SAMPLES for f in REPORT_FIGURES}
    rest = sorted(f for f in overlaps if f not in listed)
    for kind in ("field/", "stack/", "optics/"):
        assert any(f.startswith(kind) for f in rest), f"no {kind} figure was written (written: {rest})"
    assert len([f for f in rest if f.startswith("field/")]) == 5    # two per station (two stations), the rose
    assert "suite_comparison" in rest
    bad = {f: overlaps[f] for f in rest if overlaps[f]}
    assert not bad, "texts overlap: " + " | ".join(f"{f}.png: " + "; ".join(v) for f, v in bad.items())
