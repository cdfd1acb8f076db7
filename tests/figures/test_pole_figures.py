"""Pole figures, inverse pole figures, the convergence figure and their settings (fabric2seis.figures.poles,
fabric2seis.fabric.poles: figure poles and pole labels, fabric2seis.figures.projection: hemisphere and note)."""

import json
import shutil
from pathlib import Path

import numpy as np
import pytest
from matplotlib.contour import ContourSet
from matplotlib.figure import Figure
from matplotlib.text import Text

import fabric2seis.figures.poles as figure_module
from fabric2seis import cli
from fabric2seis.elastic.minerals import find_mineral, load_library
from fabric2seis.fabric.poles import FIGURE_POLES, default_poles, figure_poles, parse_pole, pole_direction
from fabric2seis.figures.poles import (
    FEW_GRAINS,
    axis_density_grid,
    contour_levels,
    convergence_figure,
    pole_density_grid,
    pole_figures,
    sector_outline,
)
from fabric2seis.figures.projection import projection_note, trend_plunge_text
from fabric2seis.synth import fabric_orientations, random_quaternions

DEMO = Path(__file__).resolve().parents[2] / "demo_samples"
OLIVINE = find_mineral("olivine")


@pytest.fixture
def drawn(monkeypatch):
    """The figures the module would save, kept open instead of written."""
    figures: list[Figure] = []
    monkeypatch.setattr(figure_module, "save", lambda fig, stem: figures.append(fig) or [])
    return figures


def texts(fig) -> list[str]:
    return [t.get_text() for t in fig.findobj(Text) if t.get_visible() and t.get_text().strip()]


def test_random_grains_give_about_one_mud_everywhere():
    # a uniform distribution has density 1 m.u.d. everywhere (the unit's definition, common practice);
    # 20000 random grains smoothed by a 10 degree kernel stay within 20 % of it over 90 % of the disk
    q = random_quaternions(20000, np.random.default_rng(5))
    _, _, d, _ = pole_density_grid(OLIVINE, q, np.ones(len(q)), "[100]", 10.0, n=61)
    low, high = np.nanpercentile(d, [5, 95])
    assert 0.8 < low and high < 1.2


@pytest.mark.parametrize("hemisphere", ["lower", "upper"])
def test_mean_density_over_the_equal_area_disk_is_one_mud_for_a_strong_fabric(hemisphere):
    # m.u.d. averages 1 over the sphere (definition) and the Lambert projection keeps areas
    # (common practice), so the plain mean over the disk's grid points is 1 whatever the fabric
    q = fabric_orientations(OLIVINE, "olivine-A", 500, 12.0, seed=3)
    _, _, d, _ = pole_density_grid(OLIVINE, q, np.ones(len(q)), "[010]", 10.0, hemisphere, n=161)
    assert np.nanmax(d) > 5.0
    assert np.nanmean(d) == pytest.approx(1.0, abs=0.02)


def test_upper_hemisphere_is_the_lower_turned_half_a_circle():
    # an axis drawn at its upper end lands opposite its lower end through the centre (common
    # practice of upper-hemisphere projections, X kept right and Z up)
    q = fabric_orientations(OLIVINE, "olivine-B", 300, 15.0, seed=4)
    lower = pole_density_grid(OLIVINE, q, np.ones(300), "[001]", 10.0, "lower", n=61)[2]
    upper = pole_density_grid(OLIVINE, q, np.ones(300), "[001]", 10.0, "upper", n=61)[2]
    turned = lower[::-1, ::-1]
    both = np.isfinite(upper) & np.isfinite(turned)              # the rim may differ by rounding
    assert both.sum() > 0.99 * np.isfinite(upper).sum()
    assert np.allclose(upper[both], turned[both], rtol=1e-9, atol=1e-9)
    assert not np.allclose(upper[both], lower[both], rtol=1e-3)


def test_grains_at_the_identity_put_a_on_x_and_c_on_z():
    # Bunge's passive convention (v_crystal = g v_structural, CONVENTIONS.md): the identity puts the
    # crystal a axis on X (screen right, trend/plunge 000/00) and c on Z (screen top, plunge 90)
    q = np.tile([1.0, 0.0, 0.0, 0.0], (50, 1))
    a, b, d, dirs = pole_density_grid(OLIVINE, q, np.ones(50), "[100]", 10.0, n=81)
    k = np.nanargmax(d)
    assert abs(abs(a.flat[k]) - 1.0) < 0.03 and abs(b.flat[k]) < 0.03
    assert trend_plunge_text(dirs.reshape(-1, 3)[k]) == "000/00"
    a, b, d, dirs = pole_density_grid(OLIVINE, q, np.ones(50), "[001]", 10.0, n=81)
    k = np.nanargmax(d)
    assert abs(a.flat[k]) < 0.03 and abs(abs(b.flat[k]) - 1.0) < 0.03
    assert trend_plunge_text(dirs.reshape(-1, 3)[k]).endswith("/90")


def _area(xy: np.ndarray) -> float:
    x, y = xy[:, 0], xy[:, 1]
    return 0.5 * abs(np.dot(x, np.roll(y, 1)) - np.dot(y, np.roll(x, 1)))


@pytest.mark.parametrize("name", sorted(load_library()))
def test_sector_covers_its_share_of_the_sphere(name):
    # the |G| images of a fundamental sector of the Laue group G tile the sphere (orix, common
    # practice), so its equal-area image has 2 pi / |G| of the disk's area pi (the upper half)
    mineral = find_mineral(name)
    assert _area(sector_outline(mineral)) == pytest.approx(2.0 * np.pi / mineral.orix_symmetry.laue.size, rel=0.01)


def test_sector_of_mmm_is_the_octant_and_of_6_mmm_is_30_degrees_wide():
    # mmm: the spherical triangle [001]-[100]-[010]; 6/mmm: 30 degrees from a to [10-10] (orix's
    # fundamental sectors; common practice of inverse pole figures)
    octant = sector_outline(OLIVINE)
    for corner in ([0.0, 0.0], [1.0, 0.0], [0.0, 1.0]):
        assert np.min(np.linalg.norm(octant - corner, axis=1)) < 0.01
    assert octant.min() > -1e-6 and np.linalg.norm(octant, axis=1).max() < 1.0 + 1e-6
    wedge = sector_outline(find_mineral("ice"))
    rim = wedge[np.linalg.norm(wedge, axis=1) > 0.5]
    azimuth = np.degrees(np.arctan2(rim[:, 1], rim[:, 0]))
    assert azimuth.min() == pytest.approx(0.0, abs=0.5) and azimuth.max() == pytest.approx(30.0, abs=0.5)


def test_inverse_pole_figure_finds_x_at_a_and_averages_one_mud_in_its_sector():
    # A-type olivine has [100] along X (Karato et al. 2008); the density counts every symmetry
    # equivalent, so its mean over one sector (equal-area grid points) is the sphere's mean, 1 m.u.d.
    q = fabric_orientations(OLIVINE, "olivine-A", 400, 12.0, seed=6)
    a, b, d, dirs, inside = axis_density_grid(OLIVINE, q, np.ones(400), (1.0, 0.0, 0.0), 10.0)
    k = np.nanargmax(np.where(inside, d, np.nan))
    assert np.degrees(np.arccos(abs(dirs.reshape(-1, 3)[k][0]))) < 6.0
    assert np.mean(d[inside]) == pytest.approx(1.0, abs=0.04)


def test_rhomb_poles_of_quartz_and_calcite_lie_at_their_angles_from_c():
    # plane normal (h0-hl) of a hexagonal cell: tan(angle to c) = 2 c h / (sqrt(3) a l) (hexagonal
    # interplanar geometry, common practice): quartz r about 51.8 deg, calcite's cleavage r (10-14)
    # about 44.6 deg (both from memory, checked here by the formula)
    for name, label, l in (("quartz", "r (10-11)", 1), ("calcite", "(10-14)", 4)):
        m = find_mineral(name)
        lat = m.lattice
        expected = np.degrees(np.arctan2(2.0 * lat["c"], np.sqrt(3.0) * lat["a"] * l))
        got = np.degrees(np.arccos(abs(pole_direction(m, label) @ pole_direction(m, "[0001]"))))
        assert got == pytest.approx(expected, abs=0.01)
    # [2-1-10] is the a axis, which orix's crystal frame puts on e1
    assert np.allclose(pole_direction(find_mineral("quartz"), "a [2-1-10]"), [1.0, 0.0, 0.0], atol=1e-9)


@pytest.mark.parametrize("label, wanted", [("[10]", "not a pole label"), ("[100)", "not a pole label"),
                                           ("[2-1-10]", "four indices"), ("(000)", "only zero")])
def test_bad_pole_labels_are_refused_for_olivine(label, wanted):
    with pytest.raises(ValueError, match=wanted):
        pole_direction(OLIVINE, label)


def test_figure_poles_follow_the_trade_and_the_settings_but_pfj_keeps_its_poles():
    # clinopyroxene [001], (010), (100); quartz c, a, r, z (common practice); a setting by alias wins
    cpx, quartz = find_mineral("clinopyroxene"), find_mineral("quartz")
    assert figure_poles(cpx) == ["[001]", "(010)", "(100)"]
    assert [parse_pole(p).name for p in figure_poles(quartz)] == ["c", "a", "r", "z"]
    assert figure_poles(cpx, {"cpx": ["(100)"]}) == ["(100)"]
    assert default_poles(cpx) == ["[100]", "[010]", "(001)"]      # what pfJ uses, unchanged


def test_every_mineral_with_usual_poles_is_in_the_library_and_its_poles_read(library):
    # a renamed library entry would silently fall back to the crystal system's poles
    for name, labels in FIGURE_POLES.items():
        assert name in library
        for label in labels:
            assert np.linalg.norm(pole_direction(library[name], label)) == pytest.approx(1.0)


def test_few_grains_get_a_note_and_many_do_not(drawn):
    # below FEW_GRAINS grains the density mostly shows the kernel (common practice: a few hundred
    # grains for a stable pole figure)
    few = fabric_orientations(OLIVINE, "olivine-A", FEW_GRAINS - 40, 15.0, seed=1)
    many = fabric_orientations(OLIVINE, "olivine-A", FEW_GRAINS + 50, 15.0, seed=1)
    for q in (few, many):
        pole_figures("unused", "probe", [(OLIVINE, q, np.ones(len(q)), ["[100]"])], 10.0, "grain")
    notes = [[t for t in texts(fig) if "dominated by the 10° kernel" in t] for fig in drawn]
    assert len(notes[0]) == 1 and f"Only {FEW_GRAINS - 40} grains" in notes[0][0]
    assert notes[1] == []
    assert "lower hemisphere, equal area" in drawn[0].get_supxlabel()


def test_convergence_figure_keeps_plain_numbers_and_five_percent_either_side(drawn):
    # at least six subset sizes; numbers as plain as a reader writes them (no 1e or x10^ offsets); a
    # value range at least 5 % either side of the value with all grains, so 1 % looks small
    from fabric2seis import fabric

    q = fabric_orientations(OLIVINE, "olivine-A", 150, 15.0, seed=2)
    conv = fabric.convergence(OLIVINE, q, np.ones(150))
    assert len(conv["rows"]) >= 6
    convergence_figure("unused", "probe", {"olivine": conv})
    fig = drawn[0]
    for ax, key in zip(fig.axes, ("J", "M", "max_mud")):
        final = conv["rows"][-1][key]
        low, high = ax.get_ylim()
        assert low <= 0.95 * final and high >= 1.05 * final
        fig.canvas.draw()
        labels = [t.get_text() for t in ax.get_xticklabels() + ax.get_yticklabels()]
        assert labels and not any(("e" in s or "×" in s or "^" in s) for s in labels)
        assert ax.yaxis.get_offset_text().get_text() == ""
    assert "150" in [t.get_text() for t in fig.axes[0].get_xticklabels()]


def test_contour_levels_from_a_count_or_a_list():
    levels, extend = contour_levels(7.3, 10)
    assert levels[0] == 0.0 and levels[-1] >= 7.3 and extend == "neither"
    levels, extend = contour_levels(7.3, [4, 1, 2])
    assert list(levels) == [1.0, 2.0, 4.0] and extend == "both"
    for bad in (1, [3.0], [-1.0, 2.0]):
        with pytest.raises(ValueError):
            contour_levels(7.3, bad)


def test_projection_note_says_hemisphere_and_projection():
    fig = Figure()
    ax = fig.add_subplot()
    assert projection_note(ax).get_text() == "lower hemisphere, equal area"
    note = projection_note(fig, "upper", "structural frame")
    assert note.get_text() == "upper hemisphere, equal area, structural frame"
    with pytest.raises(ValueError, match="hemisphere"):
        projection_note(ax, "southern")


def _grain_list_with(tmp_path: Path, settings: str) -> Path:
    shutil.copy(DEMO / "VM04_grain_list.csv", tmp_path / "grains.csv")
    (tmp_path / "grains.yaml").write_text(settings)
    return tmp_path / "grains.csv"


def test_settings_choose_poles_hemisphere_and_levels_and_leave_summary_numbers_alone(tmp_path, drawn):
    # through the command: the sidecar's poles, upper hemisphere and levels are drawn; pfJ and the
    # eigenvalues of summary.json stay those of the fixed poles, equal to a run with defaults
    source = _grain_list_with(tmp_path, 'figures:\n  poles:\n    forsterite: ["(010)", "c [001]"]\n'
                                        '  pole_hemisphere: upper\n  pole_levels: [0.5, 1, 2, 4, 8]\n')
    # --threads 1: figures drawn in this process, where the hooks see them (not in a second one)
    assert cli.main(["sample", str(source), "--out", str(tmp_path / "chosen"), "--threads", "1"]) == 0
    pf = next(f for f in drawn if f.get_suptitle().split("\n")[0].endswith("pole figures"))
    titles = [ax.get_title() for ax in pf.findobj(lambda a: hasattr(a, "get_title")) if ax.get_title()]
    assert "(010)" in titles and "c [001]" in titles and "[100]" not in titles
    assert pf.get_supxlabel().startswith("upper hemisphere, equal area")
    assert all(list(c.levels) == [0.5, 1, 2, 4, 8] for c in pf.findobj(ContourSet) if c.filled)
    plain = DEMO / "VM04_grain_list.csv"
    assert cli.main(["sample", str(plain), "--out", str(tmp_path / "plain")]) == 0
    chosen = json.loads((tmp_path / "chosen" / "summary.json").read_text())["phases"]["olivine"]
    default = json.loads((tmp_path / "plain" / "summary.json").read_text())["phases"]["olivine"]
    assert list(chosen["pfJ"]) == ["[100]", "[010]", "[001]"]
    assert chosen["pfJ"] == default["pfJ"] and chosen["eigen"] == default["eigen"]


@pytest.mark.parametrize("poles, place, wanted", [
    ('olivine: ["[100]", "[2-1-10]"]', "figures.poles.olivine.1", "four indices"),
    ('quartz: ["(1011)"]', "figures.poles.quartz.0", "minus the sum"),
    ('olivne: ["[100]"]', "figures.poles.olivne", "did you mean 'olivine'"),
    ('olivine: ["[1x0]"]', "figures.poles.olivine.0", "not a pole label"),
])
def test_bad_pole_settings_are_refused_in_one_line(tmp_path, capsys, poles, place, wanted):
    # bad input: exit 2, one line naming the sidecar and the key, nothing written (CONTRACT.md)
    source = _grain_list_with(tmp_path, f"figures:\n  poles:\n    {poles}\n")
    assert cli.main(["sample", str(source), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1
    assert str(tmp_path / "grains.yaml") in err and f"key {place}" in err and wanted in err
    assert not (tmp_path / "out").exists()
