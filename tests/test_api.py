"""The Python API (fabric2seis.api, offered from the package): the same numbers as `fabric2seis sample`,
a light package import, figures returned as matplotlib Figures (into the caller's Axes for one
panel), settings given as a dict, and the example script for notebooks."""

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from matplotlib.figure import Figure

import fabric2seis
from fabric2seis.cli import main
from fabric2seis.errors import InputError
from fabric2seis.stages import plain

ROOT = Path(__file__).resolve().parents[1]
GRAIN_LIST = ROOT / "demo_samples" / "VM04_grain_list.csv"     # 400 grains: the smallest demo sample
MAP = ROOT / "demo_samples" / "VM01_dunite.ang"
ENV = {**os.environ, "PYTHONPATH": str(ROOT)}


@pytest.fixture(scope="module")
def command_folder(tmp_path_factory):
    out = tmp_path_factory.mktemp("api") / "VM04"
    assert main(["sample", str(GRAIN_LIST), "--out", str(out)]) == 0
    return out


@pytest.fixture(scope="module")
def result():
    return fabric2seis.analyse(GRAIN_LIST)


def test_importing_the_package_loads_no_heavy_library():
    # PEP 562 (module __getattr__): the API and numpy's science stack load on first use only
    code = ("import sys, json, fabric2seis; "
            "print(json.dumps([m for m in ('matplotlib', 'orix', 'scipy', 'pandas') if m in sys.modules]))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=ENV, cwd=ROOT, check=True)
    assert json.loads(out.stdout) == []
    with pytest.raises(AttributeError, match="no attribute 'no_such_name'"):
        fabric2seis.no_such_name  # noqa: B018


def test_the_api_gives_the_numbers_the_command_writes(result, command_folder):
    # summary.json and stiffness.json read back with the json module, independently of the API
    written = json.loads((command_folder / "summary.json").read_text())
    assert json.loads(json.dumps(result.summary, default=plain)) == written
    stiffness = json.loads((command_folder / "stiffness.json").read_text())
    for name in ("voigt", "reuss", "hill", "geometric"):
        assert np.array_equal(np.round(result.tensors_gpa[name], 6), np.array(stiffness[name]))
    assert round(result.density_kg_m3, 3) == stiffness["density_kg_m3"] == written["density_kg_m3"]
    olivine = written["phases"]["olivine"]
    assert result.fabric_indices["olivine"] == {"J": olivine["J"], "M": olivine["M"], "pfJ": olivine["pfJ"],
                                                "n": olivine["n"]}
    assert result.seismic["avs_max_pct"] == written["seismic"]["avs_max_pct"]
    assert result.splitting["along_z"] == written["splitting"]["along_z"]
    assert result.intervals["avp_pct"] == written["uncertainty"]["avp_pct"]


def test_the_four_averages_keep_their_textbook_relations(result):
    t = result.tensors_gpa
    # Hill (1952): the Hill average is the mean of the Voigt and Reuss tensors
    assert np.allclose(t["hill"], (t["voigt"] + t["reuss"]) / 2, atol=1e-9)
    # Hill (1952): Voigt bounds the stiffness from above, Reuss from below (as quadratic forms);
    # the geometric mean lies between them (Matthies & Humbert 1993)
    assert np.linalg.eigvalsh(t["voigt"] - t["geometric"]).min() > -1e-9
    assert np.linalg.eigvalsh(t["geometric"] - t["reuss"]).min() > -1e-9
    # olivine aggregates: about 3200 to 3400 kg/m^3 (handbook range for forsterite-rich olivine, from memory)
    assert 3200 < result.density_kg_m3 < 3400


def test_figures_come_back_as_figures(result):
    for draw in (fabric2seis.velocity_figure, fabric2seis.pole_figures, fabric2seis.inverse_pole_figures,
                 fabric2seis.fabric_convergence_figure, fabric2seis.splitting_figure):
        assert isinstance(draw(result), Figure), draw.__name__
    with pytest.raises(ValueError, match="not a map"):
        fabric2seis.map_overview_figure(result)


def test_one_panel_draws_into_the_callers_axes(result):
    fig = Figure()
    left, right = fig.subplots(1, 2)
    assert fabric2seis.velocity_hemisphere(result, "vp", ax=left) is fig
    assert fabric2seis.pole_figure(result, "olivine", "[100]", ax=right) is fig
    assert left.collections and right.collections        # the filled contours are in the caller's axes
    # the callouts of the extremes give the numbers of summary.json to the digits shown
    texts = [t.get_text() for t in left.texts]
    assert f"max {result.seismic['vp_max_km_s']:.2f} km/s" in "\n".join(texts)
    assert f"min {result.seismic['vp_min_km_s']:.2f} km/s" in "\n".join(texts)
    assert "olivine" in right.get_title() and "[100]" in right.get_title()
    with pytest.raises(ValueError, match="no fabric of 'quartz'"):
        fabric2seis.pole_figure(result, "quartz", "[0001]")


def test_a_map_read_alone_has_its_overview():
    sample = fabric2seis.read_sample(MAP)
    assert sample.grains is not None and sample.grains.n_grains > 0
    assert isinstance(fabric2seis.map_overview_figure(sample), Figure)


def test_settings_as_a_dict_go_over_the_sidecar_and_are_checked():
    quick = fabric2seis.analyse(GRAIN_LIST, {"bootstrap": {"n": 0}})
    assert quick.intervals == {}
    assert quick.splitting["field"]["layer_thickness_km"] == 60.0      # from the sidecar
    with pytest.raises(InputError, match="bootstarp"):
        fabric2seis.analyse(GRAIN_LIST, {"bootstarp": {"n": 0}})
    sample = fabric2seis.read_sample(GRAIN_LIST)
    with pytest.raises(ValueError, match="settings it was read with"):
        fabric2seis.analyse(sample, {"bootstrap": {"n": 0}})


def test_the_notebook_example_prints_the_headline_numbers(result, tmp_path):
    script = ROOT / "docs" / "examples" / "notebook_example.py"
    out = subprocess.run([sys.executable, str(script), str(tmp_path)], capture_output=True, text=True, env=ENV,
                         cwd=ROOT, timeout=600)
    assert out.returncode == 0, out.stderr
    text = out.stdout
    s = result.seismic
    assert f"AVs max {s['avs_max_pct']:.2f} %" in text
    assert f"Vp max {s['vp_max_km_s']:.3f} km/s" in text
    assert f"delay {result.splitting['along_z']['delay_s_per_100km']:.3f} s per 100 km" in text
    assert re.search(r"J-index \d+\.\d\d \(95 % interval", text)
    assert (tmp_path / "avs_hemisphere.png").stat().st_size > 10_000
