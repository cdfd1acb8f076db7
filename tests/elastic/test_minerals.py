"""The mineral library: completeness, checks on load, and setting conversions."""

import textwrap

import numpy as np
import pytest
from orix.vector import Miller

from fabric2seis import elastic as el
from fabric2seis.elastic.minerals import (
    POINT_GROUP_NAMES,
    crystal_direction,
    find_mineral,
    load_library,
    load_mineral_file,
)
from fabric2seis.errors import InputError
from fabric2seis.point_groups import point_group

REQUIRED = ["olivine", "enstatite", "diopside", "pyrope", "quartz", "calcite", "albite",
            "hornblende", "antigorite", "muscovite", "ice"]


def test_library_has_the_required_minerals_each_with_source_and_memory_flag(library):
    assert set(REQUIRED) <= set(library)
    for m in library.values():
        assert m.source and isinstance(m.from_memory, tuple)
        assert 900 < m.density_kg_m3 < 4500   # ice 919 to almandine 4318 kg m^-3 (common practice)
        # independent recheck: symmetric and positive definite (numpy eigenvalues)
        assert np.array_equal(m.cij_published_gpa, m.cij_published_gpa.T)
        assert np.linalg.eigvalsh(m.cij_published_gpa).min() > 0
        assert np.linalg.eigvalsh(el.voigt_to_kelvin(m.stiffness_gpa)).min() > 0


def test_names_and_aliases_are_unique_and_found_case_insensitively(library):
    keys = [k for m in library.values() for k in (m.name, *m.aliases)]
    assert len(keys) == len(set(keys))
    assert find_mineral("Olivine").name == "olivine"
    assert find_mineral("GARNET").name == "pyrope"
    assert find_mineral("Ice_Ih").name == "ice"


def test_unknown_mineral_suggests_the_nearest():
    with pytest.raises(InputError, match="did you mean 'olivine'"):
        find_mineral("olivne")


@pytest.mark.parametrize("name", ["diopside", "hornblende", "muscovite"])
def test_monoclinic_a_star_setting_is_converted_to_orix_frame(library, name):
    # Published X || a*, Z || c (IRE convention). orix's Miller class gives a* (plane normal (100))
    # and c ([001]) in orix's crystal Cartesian frame: the conversion must map X and Z onto them.
    m = library[name]
    phase = m.phase
    a_star = Miller(hkl=[1, 0, 0], phase=phase).unit.data[0]
    c_dir = Miller(uvw=[0, 0, 1], phase=phase).unit.data[0]
    assert np.allclose(m.setting_rotation @ [1, 0, 0], a_star, atol=1e-9)
    assert np.allclose(m.setting_rotation @ [0, 0, 1], c_dir, atol=1e-9)
    # and by hand: with e1 || a and e3 || c*, a* = (sin beta, 0, -cos beta)
    beta = np.radians(m.lattice["beta"])
    assert np.allclose(a_star, [np.sin(beta), 0, -np.cos(beta)], atol=1e-9)


def test_crystal_directions_of_orthorhombic_monoclinic_and_hexagonal_lattices(library):
    # In orix's frame (e1 || a, e3 || c*): an orthorhombic lattice has a, b, c on x, y, z; a
    # monoclinic one (b unique) has c = (cos beta, 0, sin beta) and a* = (sin beta, 0, -cos beta); a
    # hexagonal one has a + 2b along y (common practice in crystallography).
    olivine, diopside, quartz = library["olivine"], library["diopside"], library["quartz"]
    assert np.allclose(crystal_direction(olivine, "[100]"), [1, 0, 0], atol=1e-12)
    assert np.allclose(crystal_direction(olivine, "[010]"), [0, 1, 0], atol=1e-12)
    assert np.allclose(crystal_direction(olivine, "(001)"), [0, 0, 1], atol=1e-12)
    beta = np.radians(diopside.lattice["beta"])
    assert np.allclose(crystal_direction(diopside, "[001]"), [np.cos(beta), 0, np.sin(beta)], atol=1e-9)
    assert np.allclose(crystal_direction(diopside, "(100)"), [np.sin(beta), 0, -np.cos(beta)], atol=1e-9)
    assert np.allclose(crystal_direction(quartz, "[120]"), [0, 1, 0], atol=1e-9)
    # indices with more than one digit or a sign are written apart, with spaces or commas
    assert np.allclose(crystal_direction(quartz, "[1 2 0]"), crystal_direction(quartz, "[1,2,0]"), atol=1e-12)
    assert np.allclose(crystal_direction(olivine, "[1 -1 0]"), crystal_direction(olivine, "[1,-1,0]"), atol=1e-12)
    a, b = olivine.lattice["a"], olivine.lattice["b"]
    assert np.allclose(crystal_direction(olivine, "[1 -1 0]"), np.array([a, -b, 0]) / np.hypot(a, b), atol=1e-9)


def test_point_group_table_holds_the_32_crystal_classes_with_their_orders():
    # The crystallographic point groups and their orders (International Tables for Crystallography,
    # vol. A, table 10.1.2.2; from memory), under orix's Hermann-Mauguin names: 30 of the 32 here,
    # and 2 and m below.
    orders = {"1": 1, "-1": 2, "2/m": 4, "222": 4, "mm2": 4, "mmm": 8, "4": 4, "-4": 4, "4/m": 8, "422": 8,
              "4mm": 8, "-42m": 8, "4/mmm": 16, "3": 3, "-3": 6, "32": 6, "3m": 6, "-3m": 12, "6": 6, "-6": 6,
              "6/m": 12, "622": 12, "6mm": 12, "-6m2": 12, "6/mmm": 24, "23": 12, "m-3": 24, "432": 24,
              "-43m": 24, "m-3m": 48}
    proper_groups = {"1", "222", "4", "422", "3", "32", "6", "622", "23", "432"}
    for name, order in orders.items():
        group = point_group(name)
        assert group.name == name and group.to_orix().size == order, name
        # the proper rotations are all of a proper group and half of any other
        assert len(group.proper) == (order if name in proper_groups else order // 2), name
    # the classes 2 and m are there in orix's settings with the axis named (211, 121, 112, m11 ...)
    assert {"211", "121", "112", "m11", "1m1", "11m"} <= set(POINT_GROUP_NAMES)
    assert len(POINT_GROUP_NAMES) == 38
    # b-unique 2/m: the 2-fold along y (b), four operations
    group = point_group("2/m", "b")
    assert group.to_orix().size == 4 and group.name == "2/m" and group.laue_name == "2/m"
    assert np.allclose(np.abs(group.proper[1]), [0, 0, 1, 0])


@pytest.mark.parametrize("name", ["olivine", "enstatite"])
def test_orthorhombic_zero_pattern(library, name):
    # Orthorhombic symmetry in the a, b, c setting (Nye 1957): nine constants, all others zero.
    c = library[name].stiffness_gpa
    mask = np.zeros((6, 6), bool); mask[:3, :3] = True; mask[[3, 4, 5], [3, 4, 5]] = True
    assert np.all(c[~mask] == 0)


def test_monoclinic_b_unique_zero_pattern_in_orix_frame(library):
    # Monoclinic with the 2-fold along y (Nye 1957): only c15, c25, c35, c46 off the orthotropic block.
    for name in ("diopside", "hornblende", "antigorite", "muscovite"):
        c = library[name].stiffness_gpa
        allowed = np.zeros((6, 6), bool); allowed[:3, :3] = True; allowed[[3, 4, 5], [3, 4, 5]] = True
        for i, j in [(0, 4), (1, 4), (2, 4), (3, 5)]:
            allowed[i, j] = allowed[j, i] = True
        assert np.allclose(c[~allowed], 0, atol=1e-9), name


def test_quartz_c14_convention_and_dauphine_average(library):
    # Convention adopted (recorded in quartz.yaml): X along an a axis, Z along c, c14 < 0 as printed
    # by McSkimin et al. (1965). The Dauphine twin (180 degrees about c) flips the sign of c14.
    q = library["quartz"]
    assert q.stiffness_gpa[0, 3] == pytest.approx(-18.04)
    twin = el.rotate_voigt(q.stiffness_gpa, np.diag([-1.0, -1.0, 1.0]))
    assert twin[0, 3] == pytest.approx(+18.04)
    # the library's twin law reproduces that turn, and only quartz carries one (calcite has no
    # Dauphine twin: it is a property of quartz, not of the Laue class; common practice)
    [turn] = q.twin_rotations()
    assert np.allclose(turn, np.diag([-1.0, -1.0, 1.0]), atol=1e-12)
    assert [m.name for m in library.values() if m.twins] == ["quartz"]
    avg = el.kelvin_to_voigt(el.crystal_kelvin_matrices(q.stiffness_gpa, [turn])["stiffness"])
    assert np.allclose(avg[[0, 1, 3, 4], [3, 3, 0, 5]], 0, atol=1e-12)
    keep = np.ones((6, 6), bool); keep[[0, 1, 3, 3, 4, 5], [3, 3, 0, 1, 5, 4]] = False
    assert np.allclose(avg[keep], q.stiffness_gpa[keep])


def test_hexagonal_and_trigonal_equalities(library):
    # Hexagonal and trigonal symmetry (Nye 1957): c66 = (c11 - c12)/2, c22 = c11, c55 = c44.
    for name in ("ice", "quartz", "calcite"):
        c = library[name].stiffness_gpa
        assert c[5, 5] == pytest.approx((c[0, 0] - c[0, 1]) / 2, abs=0.006), name
        assert c[1, 1] == pytest.approx(c[0, 0]) and c[4, 4] == pytest.approx(c[3, 3])


def test_pressure_derivatives_follow_the_same_setting(library):
    q = library["quartz"]
    assert q.dcij_dp[0, 0] == pytest.approx(3.28) and q.dcij_dp[5, 5] == pytest.approx(-2.69)
    assert library["olivine"].dcij_dp[3, 3] == pytest.approx(1.67)
    assert "temperature_derivatives" in library["olivine"].derivatives_from_memory


def _write(tmp_path, body):
    f = tmp_path / "mineral.yaml"
    f.write_text(textwrap.dedent(body))
    return f


_BASE = """\
    name: testite
    point_group: mmm
    density_kg_m3: 3000
    lattice: {a: 5, b: 6, c: 7, alpha: 90, beta: 90, gamma: 90}
    published_axes: {x: a, z: c}
    source: invented for a test
    from_memory: []
    cij_gpa:
      - [200, 70, 70, C14, 0, 0]
      - [70, 200, 70, 0, 0, 0]
      - [70, 70, 200, 0, 0, 0]
      - [C14, 0, 0, C44, 0, 0]
      - [0, 0, 0, 0, 60, 0]
      - [0, 0, 0, 0, 0, 60]
"""


def test_good_file_loads(tmp_path):
    m = load_mineral_file(_write(tmp_path, _BASE.replace("C14", "0").replace("C44", "60")))
    assert m.name == "testite"


def test_not_positive_definite_file_is_refused(tmp_path):
    f = _write(tmp_path, _BASE.replace("C14", "0").replace("C44", "-5"))
    with pytest.raises(InputError, match=r"mineral.yaml, cij_gpa: the stiffness is not positive definite"):
        load_mineral_file(f)


def test_symmetry_pattern_violation_is_refused(tmp_path):
    f = _write(tmp_path, _BASE.replace("C14", "10").replace("C44", "60"))
    with pytest.raises(InputError, match="break point group mmm symmetry: c14"):
        load_mineral_file(f)


def test_unknown_key_and_point_group_are_refused(tmp_path):
    base = _BASE.replace("C14", "0").replace("C44", "60")
    with pytest.raises(InputError, match="unknown key 'desnity'"):
        load_mineral_file(_write(tmp_path, base + "    desnity: 3\n"))
    with pytest.raises(InputError, match="unknown point group 'mmn'"):
        load_mineral_file(_write(tmp_path, base.replace("point_group: mmm", "point_group: mmn")))


def test_user_library_dir_adds_entries(tmp_path):
    _write(tmp_path, _BASE.replace("C14", "0").replace("C44", "60"))
    lib = load_library([tmp_path])
    assert "testite" in lib and "olivine" in lib


def test_the_library_reads_the_same_with_libyamls_parser_as_with_pyyamls_own():
    # the library files are read with libyaml's parser where PyYAML has it (FAST_SAFE_LOADER);
    # PyYAML's pure-Python safe loader is the reference: the same data from every file
    import yaml

    from fabric2seis.elastic import minerals
    from fabric2seis.settings import FAST_SAFE_LOADER

    assert FAST_SAFE_LOADER is getattr(yaml, "CSafeLoader", yaml.SafeLoader)
    files = sorted(minerals.DATA_DIR.glob("*.yaml"))
    assert len(files) >= 20
    for path in files:
        text = path.read_text()
        assert yaml.load(text, Loader=FAST_SAFE_LOADER) == yaml.safe_load(text), path.name
