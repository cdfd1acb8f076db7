"""The figures of `fabric2seis field`, `field --stack`, the suite and `fabric2seis optics` from Python
(fabric2seis.api): each comes back as the Figure the command draws into its file (the same axes, the
same titles, the same PNG bytes when drawn from the same numbers), and the numbers behind them are
the command's."""

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure

import fabric2seis
from fabric2seis.cli import main
from fabric2seis.errors import InputError
from fabric2seis.figures import field as field_figures
from fabric2seis.figures import optics as optics_figures
from fabric2seis.figures import projection
from fabric2seis.figures import stack as stack_figures
from fabric2seis.figures import suite as suite_figures
from fabric2seis.ingest.io.write import write_ang, write_table
from fabric2seis.synth import voronoi_map
from fabric2seis.workflow.suite import suite_table

ROOT = Path(__file__).resolve().parents[1]
GRAIN_LIST = ROOT / "demo_samples" / "VM04_grain_list.csv"     # 400 grains: the smallest demo sample
MEASUREMENTS = ROOT / "demo_samples" / "field_measurements.csv"  # two stations, VLM-N and VLM-S


def texts(fig):
    """The headings of a figure: the title of every axes, then the figure's own texts (its suptitle,
    the poor-fit box, the notes at its foot)."""
    return [*(ax.get_title() for ax in fig.axes), *(t.get_text() for t in fig.texts)]


@pytest.fixture
def drawn(monkeypatch):
    """What the commands' figure writers draw, by file name: number of axes and headings; the files
    are written as usual."""
    seen = {}

    def recording(fig, stem):
        seen[Path(stem).name] = (len(fig.axes), texts(fig))
        return projection.save(fig, stem)
    for module in (field_figures, stack_figures, suite_figures, optics_figures):
        monkeypatch.setattr(module, "save", recording)
    return seen


def same_png(fig, written: Path, tmp_path) -> bool:
    """Whether ``fig``, saved as the commands save, gives the bytes of the command's PNG."""
    projection.save(fig, tmp_path / "from_api")
    return (tmp_path / "from_api.png").read_bytes() == written.read_bytes()


@pytest.fixture(scope="module")
def results_folder(tmp_path_factory):
    out = tmp_path_factory.mktemp("api_figures") / "VM04"
    assert main(["sample", str(GRAIN_LIST), "--out", str(out)]) == 0
    return out


@pytest.fixture(scope="module")
def analysed():
    return fabric2seis.analyse(GRAIN_LIST)


def test_field_figures_are_those_of_the_command(results_folder, analysed, drawn, tmp_path):
    out = tmp_path / "field"
    # --threads 1: the figures drawn in this process, where `drawn` records them (not in forked ones)
    assert main(["field", str(results_folder), "--measurements", str(MEASUREMENTS), "--out", str(out),
                 "--threads", "1"]) == 0
    written = json.loads((out / "field_fit.json").read_text())
    fit = fabric2seis.fit_field([results_folder], MEASUREMENTS)
    assert json.loads(json.dumps(fit.fits)) == written["fits"]
    # an analysis in memory fits as its results folder does (the numbers rounded as the files hold them)
    assert json.loads(json.dumps(fabric2seis.fit_field([analysed], MEASUREMENTS).fits)) == written["fits"]
    assert [one.station for one in fit.stations] == ["VLM-N", "VLM-S"]
    for one in fit.stations:
        splitting = fabric2seis.field_splitting_figure(fit, station=one.station)
        misfit = fabric2seis.misfit_figure(fit, one.station, "VM04_grain_list")
        assert isinstance(splitting, Figure) and isinstance(misfit, Figure)
        assert drawn[f"splitting_{one.file_stem}"] == (len(splitting.axes), texts(splitting))
        assert drawn[f"misfit_{one.file_stem}"] == (len(misfit.axes), texts(misfit))
        assert len(splitting.axes) == 3         # fast azimuth, delay, the legend row
        assert len(misfit.axes) == 4            # whole range, close-up, legend row, colour bar
        assert one.station in splitting.get_suptitle() and one.station in misfit.get_suptitle()
    roses = fabric2seis.fast_directions_figure(fit)
    assert drawn["fast_directions"] == (len(roses.axes), texts(roses))
    assert sum(ax.name == "polar" for ax in roses.axes) == 2     # a panel per station
    assert same_png(fabric2seis.field_splitting_figure(fit.stations[1]),
                    out / f"splitting_{fit.stations[1].file_stem}.png", tmp_path)
    with pytest.raises(ValueError, match="name one of VM04_grain_list at VLM-N"):
        fabric2seis.misfit_figure(fit)           # two stations: which one?
    with pytest.raises(ValueError, match="no fits for station='VLM-N'"):
        fabric2seis.misfit_figure(fit.stations[1], station="VLM-N")
    with pytest.raises(ValueError, match="fixed takes"):
        fabric2seis.fit_field([results_folder], MEASUREMENTS, {"depth"})


def test_stack_figure_from_its_file_is_that_of_the_command(results_folder, drawn, tmp_path):
    stack_file = tmp_path / "two layers.yaml"
    stack_file.write_text(f"period_s: 8\nlayers:\n  - result: {results_folder}\n    thickness_km: 60\n"
                          "  - {fast_azimuth_deg: 120, delay_s: 0.4, name: upper crust}\n")
    out = tmp_path / "stack"
    assert main(["field", "--stack", str(stack_file), "--measurements", str(MEASUREMENTS), "--out", str(out)]) == 0
    fig = fabric2seis.stack_figure(stack_file, MEASUREMENTS)
    assert drawn["stack_splitting"] == (len(fig.axes), texts(fig))
    assert len(fig.axes) == 3 and "2 layers (bottom to top: VM04_grain_list, upper crust)" in fig.get_suptitle()
    assert same_png(fig, out / "stack_splitting.png", tmp_path)
    from fabric2seis.waves.stack import read_stack, sweep_stack

    sweep = sweep_stack(read_stack(stack_file))
    assert isinstance(fabric2seis.stack_figure(sweep), Figure)
    with pytest.raises(ValueError, match="keeps the measurements"):
        fabric2seis.stack_figure(sweep, MEASUREMENTS)


def test_suite_figure_from_folders_and_analyses_is_that_of_the_workflow(results_folder, analysed, drawn, tmp_path):
    # the workflow's suite rule draws the table of the samples' summary.json files
    suite_figures.suite_figure(tmp_path / "suite_comparison", suite_table([results_folder / "summary.json"] * 2))
    fig = fabric2seis.suite_figure([results_folder, analysed])
    assert drawn["suite_comparison"] == (len(fig.axes), texts(fig))
    assert len(fig.axes) == 4 and fig.get_suptitle().startswith("Suite of 2 samples: 2 processed")
    assert same_png(fig, tmp_path / "suite_comparison.png", tmp_path)
    with pytest.raises(InputError, match="not a fabric2seis summary"):
        fabric2seis.suite_figure([tmp_path])


@pytest.fixture
def small_section(tmp_path):
    m = voronoi_map(10, 30, 20, step=1.0, n_phases=2, seed=3)
    path = tmp_path / "section A.ang"
    write_ang(path, m.x, m.y, m.quat, m.phase, ["olivine", "enstatite"], ["mmm", "mmm"])
    (tmp_path / "section A.yaml").write_text("optics: {thickness_um: 25, stage_deg: [0, 45]}\n")
    return path, m


def test_optics_figures_are_those_of_the_command(small_section, drawn, tmp_path):
    path, m = small_section
    out = tmp_path / "optics"
    assert main(["optics", str(path), "--out", str(out)]) == 0
    section = fabric2seis.thin_section(path)
    # retardation = birefringence x thickness (common practice), 25 um from the sidecar
    known = np.isfinite(section.optics.retardation_nm)
    assert known.all()
    assert np.allclose(section.optics.retardation_nm, section.optics.birefringence * 25_000, rtol=1e-9)
    table = pd.read_csv(out / "birefringence.csv").set_index("phase")
    for k, mineral in enumerate(section.minerals):
        r = section.optics.retardation_nm[section.mineral_index == k]
        assert round(float(r.max()), 2) == table.loc[mineral.name, "retardation_max_nm"]
    figures = {"crossed_polars": fabric2seis.crossed_polars_figure(section),
               "crossed_polars_plate": fabric2seis.crossed_polars_figure(section, plate=True),
               "retardation_map": fabric2seis.retardation_figure(section),
               "interference_chart": fabric2seis.interference_chart_figure(section)}
    for name, fig in figures.items():
        assert drawn[name] == (len(fig.axes), texts(fig)), name
    assert len(figures["crossed_polars"].axes) == 2            # one panel per stage turn: 0 and 45 degrees
    assert len(figures["retardation_map"].axes) == 2           # the map and its colour bar
    assert same_png(figures["interference_chart"], out / "interference_chart.png", tmp_path)
    assert same_png(figures["crossed_polars_plate"], out / "crossed_polars_plate.png", tmp_path)


def test_retardation_map_draws_into_the_callers_axes_and_grain_lists_have_no_image(small_section, tmp_path):
    path, m = small_section
    section = fabric2seis.thin_section(path, {"optics": {"thickness_um": 30}})     # a dict over the sidecar
    assert section.settings.thickness_um == 30 and section.settings.stage_deg == (0, 45)
    fig = Figure()
    left, right = fig.subplots(1, 2)
    assert fabric2seis.retardation_figure(section, ax=right) is fig
    assert right.images and not left.images
    assert right.get_title().startswith("section A: retardation, 30 um section")
    sample = fabric2seis.read_sample(path)
    with pytest.raises(ValueError, match="settings it was read with"):
        fabric2seis.thin_section(sample, {"optics": {"thickness_um": 30}})
    assert fabric2seis.thin_section(sample).settings.thickness_um == 25
    write_table(tmp_path / "g.csv", m.quat[:50], ["olivine"] * 50)
    grains = fabric2seis.thin_section(tmp_path / "g.csv")
    assert isinstance(fabric2seis.interference_chart_figure(grains), Figure)
    for draw in (fabric2seis.crossed_polars_figure, fabric2seis.retardation_figure):
        with pytest.raises(ValueError, match="not a map"):
            draw(grains)
