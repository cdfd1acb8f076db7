"""Cautions reach the reader: recalled constants, their check against published aggregate moduli.

Published aggregate moduli: Stixrude & Lithgow-Bertelloni (2011), Geophys. J. Int. 184, 1180,
Table A1 (orthoenstatite K 107.1, G 76.8; albite K 59.8, G 36.0 GPa), as listed in
shared/guide/REFERENCE_VALUES.md; Hill (1952) for the average of the constants, computed here by
pymatgen (a reference library).
"""

import json

import numpy as np
import pytest
import yaml

from fabric2seis.cautions import mineral_cautions
from fabric2seis.cli import main
from fabric2seis.elastic.minerals import DATA_DIR, find_mineral, load_mineral_file
from fabric2seis.ingest.io.write import write_table
from fabric2seis.synth import random_quaternions


@pytest.mark.parametrize("name, k_published, g_published", [("enstatite", 107.1, 76.8), ("albite", 59.8, 36.0)])
def test_recalled_constants_are_checked_against_published_aggregates(name, k_published, g_published):
    from pymatgen.analysis.elasticity import ElasticTensor

    mineral = find_mineral(name)
    assert mineral.constants_recalled
    check = mineral.aggregate_comparison()
    assert (check["k_published_gpa"], check["g_published_gpa"]) == (k_published, g_published)
    reference = ElasticTensor.from_voigt(mineral.stiffness_gpa)
    assert check["k_hill_gpa"] == pytest.approx(reference.k_vrh, abs=0.01)
    assert check["g_hill_gpa"] == pytest.approx(reference.g_vrh, abs=0.01)
    largest = max(abs(reference.k_vrh - k_published) / k_published, abs(reference.g_vrh - g_published) / g_published)
    assert check["disputed"] == (largest > 0.08)
    assert any("recalled" in note for note in mineral_cautions(mineral))


def test_recalled_entries_without_a_published_aggregate_say_so():
    for name in ("antigorite", "hornblende"):
        notes = mineral_cautions(find_mineral(name))
        assert any("no published aggregate moduli" in n for n in notes), name
    assert mineral_cautions(find_mineral("olivine")) == [
        "olivine: lattice recalled without the source at hand (from memory); see 'fabric2seis minerals olivine'"]


def test_a_disputed_entry_is_marked_in_the_listing(tmp_path, capsys):
    # A user's entry: enstatite's constants made 20 % stiffer, checked against the same published
    # aggregate (Stixrude & Lithgow-Bertelloni 2011): Hill moduli about 20 % too high, so disputed.
    entry = yaml.safe_load((DATA_DIR / "enstatite.yaml").read_text())
    entry.update(name="stiff opx", aliases=[], cij_gpa=(1.2 * np.array(entry["cij_gpa"])).round(2).tolist())
    (tmp_path / "stiff_opx.yaml").write_text(yaml.safe_dump(entry))
    mineral = load_mineral_file(tmp_path / "stiff_opx.yaml")
    assert mineral.aggregate_comparison()["disputed"]
    assert any("DISAGREE" in n for n in mineral_cautions(mineral))
    assert main(["minerals", "--library-dir", str(tmp_path)]) == 0
    listing = capsys.readouterr().out
    row = next(line for line in listing.splitlines() if line.startswith("stiff opx"))
    assert "DISPUTED" in row
    assert "recalled, agrees" in next(line for line in listing.splitlines() if line.startswith("enstatite"))


def test_cautions_reach_summary_and_run_log(tmp_path):
    f = tmp_path / "opx_rock.csv"
    n = 400
    names = ["olivine"] * 300 + ["enstatite"] * 100
    write_table(f, random_quaternions(n, np.random.default_rng(3)), names)
    f.with_suffix(".yaml").write_text("bootstrap: {n: 0}\n")
    out = tmp_path / "out"
    assert main(["sample", str(f), "--out", str(out)]) == 0
    cautions = json.loads((out / "summary.json").read_text())["cautions"]
    assert any(c.startswith("enstatite: single-crystal constants") for c in cautions)
    assert any(c.startswith("enstatite: the Hill moduli of the recalled constants") for c in cautions)
    log = (out / "run.log").read_text()
    for caution in cautions:
        assert f"caution: {caution}" in log
