"""Random aggregates of every library mineral, through `fabric2seis sample` (the command users run).

A rock of randomly oriented crystals is isotropic; its Voigt and Reuss moduli are the closed forms
of Hill (1952) in the single-crystal stiffness and compliance, and Hill's average is their mean.
The reference values come from pymatgen (``ElasticTensor.k_voigt``, ``g_voigt``, ``k_reuss``,
``g_reuss``, ``k_vrh``, ``g_vrh``), a general-purpose reference library. The geometric mean lies
between the Reuss and Voigt bounds (Matthies & Humbert 1993). This is the test that would have
caught averaging twin variants in stiffness before inverting them for the Reuss average.
"""

import json

import numpy as np
import pytest

from fabric2seis.cli import main
from fabric2seis.elastic.minerals import load_library
from fabric2seis.ingest.io.write import write_table
from fabric2seis.synth import random_quaternions

N_GRAINS = 6000
LIBRARY = load_library()


def isotropic_moduli(c: np.ndarray) -> tuple[float, float]:
    """Bulk and shear modulus of the isotropic tensor nearest to ``c`` (its rotation invariants).

    K = C_iijj / 9 and G = (3 C_ijij - C_iijj) / 30, written out in Voigt notation (Nye 1957).
    """
    c = np.asarray(c)
    k = (c[0, 0] + c[1, 1] + c[2, 2] + 2 * (c[0, 1] + c[0, 2] + c[1, 2])) / 9.0
    g = ((c[0, 0] + c[1, 1] + c[2, 2]) - (c[0, 1] + c[0, 2] + c[1, 2]) + 3 * (c[3, 3] + c[4, 4] + c[5, 5])) / 15.0
    return k, g


@pytest.fixture(scope="module")
def random_rock_results(tmp_path_factory):
    folder = tmp_path_factory.mktemp("random_rocks")
    out = {}
    for name, mineral in LIBRARY.items():
        table = folder / f"random_{name.replace(' ', '_')}.csv"
        quat = random_quaternions(N_GRAINS, np.random.default_rng(7))
        write_table(table, quat, [name] * N_GRAINS)
        table.with_suffix(".yaml").write_text(       # at the conditions the constants were measured at
            f"bootstrap: {{n: 0}}\nvelocity_grid_step_deg: 5\nconditions: {{temperature_c: "
            f"{mineral.reference_temperature_c}, pressure_gpa: {mineral.reference_pressure_gpa}}}\n")
        result = folder / f"out_{table.stem}"
        assert main(["sample", str(table), "--out", str(result)]) == 0
        out[name] = json.loads((result / "stiffness.json").read_text())
    return out


@pytest.mark.parametrize("name", sorted(LIBRARY))
def test_random_aggregate_moduli_equal_hills_closed_forms(random_rock_results, name):
    from pymatgen.analysis.elasticity import ElasticTensor

    crystal = ElasticTensor.from_voigt(LIBRARY[name].stiffness_gpa)
    expected = {"voigt": (crystal.k_voigt, crystal.g_voigt), "reuss": (crystal.k_reuss, crystal.g_reuss),
                "hill": (crystal.k_vrh, crystal.g_vrh)}
    tensors = random_rock_results[name]
    for average, (k_ref, g_ref) in expected.items():
        k, g = isotropic_moduli(np.array(tensors[average]))
        assert k == pytest.approx(k_ref, rel=0.01), (name, average, "K")
        assert g == pytest.approx(g_ref, rel=0.01), (name, average, "G")
    k_geo, g_geo = isotropic_moduli(np.array(tensors["geometric"]))
    assert crystal.k_reuss * 0.999 <= k_geo <= crystal.k_voigt * 1.001, name
    assert crystal.g_reuss * 0.999 <= g_geo <= crystal.g_voigt * 1.001, name


def test_quartz_and_calcite_reuss_shear_moduli(random_rock_results):
    # Reuss shear moduli from the constants (McSkimin et al. 1965; Peselnick & Robie
    # 1962) by Hill's formula, through pymatgen: quartz G_R about 41 GPa, calcite about 26.3 GPa.
    from pymatgen.analysis.elasticity import ElasticTensor

    for name, g_reuss in (("quartz", 41.0), ("calcite", 26.3)):
        assert ElasticTensor.from_voigt(LIBRARY[name].stiffness_gpa).g_reuss == pytest.approx(g_reuss, abs=0.5)
        g = isotropic_moduli(np.array(random_rock_results[name]["reuss"]))[1]
        assert g == pytest.approx(g_reuss, abs=0.5), name
