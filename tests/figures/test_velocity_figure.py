"""The velocity sheet: its extremes against an independent Christoffel solution, the trend/plunge of
a known direction, the panels setting through the command, and no text drawn over another."""

import re

import numpy as np
import pytest
from matplotlib.figure import Figure
from matplotlib.text import Text

from fabric2seis.cli import main
from fabric2seis.elastic.minerals import find_mineral
from fabric2seis.figures import velocities as vel

VOIGT = {(0, 0): 0, (1, 1): 1, (2, 2): 2, (1, 2): 3, (2, 1): 3, (0, 2): 4, (2, 0): 4, (0, 1): 5, (1, 0): 5}
ALL_PANELS = list(vel.PANELS)


@pytest.fixture(scope="module")
def olivine():
    m = find_mineral("olivine")
    return m.stiffness_gpa, m.density_kg_m3


def full_tensor(c):
    t = np.zeros((3, 3, 3, 3))
    for (i, j), p in VOIGT.items():
        for (k, m), q in VOIGT.items():
            t[i, j, k, m] = c[p, q]
    return t


def brute_force_speeds(c, rho, n=300_000):
    """Vp, Vs1, Vs2 (km/s) over a Fibonacci set of n axes of one hemisphere, by numpy.linalg.eigh of
    the Christoffel matrix Gamma_ik = C_ijkl n_j n_l (common practice), written here without the
    library's solver."""
    k = np.arange(n) + 0.5
    z = 1.0 - k / n
    r = np.sqrt(1.0 - z * z)
    phi = np.pi * (1.0 + 5 ** 0.5) * k
    d = np.vstack([np.column_stack([r * np.cos(phi), r * np.sin(phi), z]), np.eye(3)])
    gamma = np.einsum("ijkl,mj,ml->mik", full_tensor(c), d, d)
    v = np.sqrt(np.linalg.eigh(gamma)[0] * 1e3 / rho)      # GPa / (kg m^-3) -> km^2/s^2
    return v[:, 2], v[:, 1], v[:, 0]


def table_rows(fig):
    (side,) = [ax for ax in fig.axes if ax.get_label() == "extremes"]
    cells = side.tables[0].get_celld()
    n_rows = max(r for r, _ in cells) + 1
    return {cells[r, 0].get_text().get_text(): (cells[r, 1].get_text().get_text(), cells[r, 2].get_text().get_text())
            for r in range(1, n_rows)}


def hemispheres(fig):
    return [ax.get_label().split()[1] for ax in fig.axes if ax.get_label().startswith("hemisphere ")]


def test_extremes_equal_a_brute_force_christoffel_solution(olivine):
    # Independent: eigh of the Christoffel matrix over 300 000 axes (about 0.25 degree apart,
    # common practice). The sheet refines its 1-degree grid, so its extremes, cusps included (AVs
    # vanishing on an acoustic axis, Vs2 where the shear sheets touch), agree to half the last digit shown.
    c, rho = olivine
    vp, vs1, vs2 = brute_force_speeds(c, rho)
    fig = vel.velocity_sheet(c, rho, panels=ALL_PANELS)
    rows = table_rows(fig)
    for e in vel.extremes(c, rho, ALL_PANELS):
        q = vel.PANELS[e.panel]
        values = q.values(vp, vs1, vs2)
        expected = values.max() if e.kind == "max" else values.min()
        half_digit = 0.5 * 10.0 ** -q.decimals
        assert e.value == pytest.approx(expected, abs=half_digit), (e.panel, e.kind)
        shown, direction = rows[f"{q.symbol} {e.kind}"]
        assert float(shown.split()[0]) == pytest.approx(expected, abs=2 * half_digit), (e.panel, e.kind, shown)
        assert shown.endswith(q.unit) and direction == e.trend_plunge
    avp = 200.0 * (vp.max() - vp.min()) / (vp.max() + vp.min())
    assert float(rows["AVp"][0].split()[0]) == pytest.approx(avp, abs=0.05)


def test_olivine_vp_extremes_along_its_crystal_axes(olivine):
    # Olivine is fastest for P along [100] and slowest along [010] (Kumazawa & Anderson 1969, from
    # memory; CONVENTIONS.md). With [100] along X and [010] along Y the sheet reports trend/plunge
    # 000/00 and 090/00, in the table and in the callouts.
    c, rho = olivine
    fig = vel.velocity_sheet(c, rho, panels=["vp"])
    rows = table_rows(fig)
    assert rows["Vp max"][1] == "000/00" and rows["Vp min"][1] == "090/00"
    (panel,) = [ax for ax in fig.axes if ax.get_label() == "hemisphere vp"]
    callouts = [t.get_text() for t in panel.texts if t.get_text().startswith(("max", "min"))]
    assert sorted(callouts) == [f"max {rows['Vp max'][0]}\nat 000/00", f"min {rows['Vp min'][0]}\nat 090/00"]


@pytest.mark.parametrize("trend, plunge", [(30.0, 20.0), (250.0, 65.0)])
def test_trend_and_plunge_follow_a_turned_crystal(olivine, trend, plunge):
    # The crystal turned so that [100] trends `trend` (from X towards Y) and plunges `plunge` below
    # the XY plane, [010] horizontal at trend + 90 (CONVENTIONS.md: axes given by their z <= 0 end).
    # The tensor is turned here with the 4th-rank rule C'_ijkl = R_ia R_jb R_kc R_ld C_abcd (common practice).
    c, rho = olivine
    t, p = np.radians(trend), np.radians(plunge)
    a = np.array([np.cos(p) * np.cos(t), np.cos(p) * np.sin(t), -np.sin(p)])
    b = np.array([-np.sin(t), np.cos(t), 0.0])
    r = np.column_stack([a, b, np.cross(a, b)])
    turned_full = np.einsum("ia,jb,kc,ld,abcd->ijkl", r, r, r, r, full_tensor(c))
    turned = np.zeros((6, 6))
    for (i, j), v in VOIGT.items():
        for (k, m), w in VOIGT.items():
            turned[v, w] = turned_full[i, j, k, m]
    found = {e.kind: e for e in vel.extremes(turned, rho, ["vp"])}
    assert found["max"].trend_plunge == f"{trend:03.0f}/{plunge:02.0f}"
    assert found["min"].trend_plunge == f"{(trend + 90.0) % 180.0:03.0f}/00"


def drawn_texts(fig, monkeypatch):
    """Text artists actually drawn (tick labels of hidden axes are not), with their boxes."""
    drawn = []
    original = Text.draw

    def draw(self, renderer):
        if self.get_visible() and self.get_text().strip():
            drawn.append(self)
        return original(self, renderer)

    monkeypatch.setattr(Text, "draw", draw)
    fig.canvas.draw()
    monkeypatch.setattr(Text, "draw", original)
    renderer = fig.canvas.get_renderer()
    return [(t.get_text(), t.get_window_extent(renderer)) for t in dict.fromkeys(drawn)]


@pytest.mark.parametrize("panels", [list(vel.DEFAULT_PANELS), ["vp_vs2"], ALL_PANELS])
def test_no_text_overlaps_another(olivine, monkeypatch, panels):
    # Every pair of drawn texts (titles, callouts, table cells, colour-bar labels) has disjoint boxes.
    c, rho = olivine
    fig = vel.velocity_sheet(c, rho, sample_name="one olivine crystal", average="hill", n_grains=1, panels=panels)
    texts = drawn_texts(fig, monkeypatch)
    assert len(texts) > 10 * len(panels)
    clashes = [(s, t) for i, (s, a) in enumerate(texts) for t, b in texts[i + 1:] if a.overlaps(b)]
    assert not clashes


def test_sheet_draws_the_panels_asked_for_on_a_given_figure(olivine, tmp_path):
    c, rho = olivine
    fig = Figure()
    assert vel.velocity_sheet(c, rho, panels=["vs2", "vp", "dvs", "avs"], fig=fig) is fig
    assert hemispheres(fig) == ["vs2", "vp", "dvs", "avs"]
    assert {"Vs2 max", "Vp min", "AVp", "dVs min", "AVs max"} <= set(table_rows(fig))
    files = vel.velocity_figure(tmp_path / "v", "s", c, rho, "hill", 1, panels=["delay"])
    assert [f[-3:] for f in files] == ["png", "pdf"] and (tmp_path / "v.png").stat().st_size > 1000
    with pytest.raises(ValueError, match="panels"):
        vel.velocity_sheet(c, rho, panels=["vp", "vp"])


def test_isotropic_solid_gives_uniform_panels_without_callouts():
    # Isotropic: every direction has the same speeds (common practice), so no direction is an extreme.
    lam, mu = 80.0, 50.0
    c = np.zeros((6, 6))
    c[:3, :3] = lam
    c[[0, 1, 2], [0, 1, 2]] += 2 * mu
    c[[3, 4, 5], [3, 4, 5]] = mu
    fig = vel.velocity_sheet(c, 3000.0, panels=["vp", "avs"])
    rows = table_rows(fig)
    vp = np.sqrt((lam + 2 * mu) * 1e3 / 3000.0)
    assert rows["Vp"] == (f"{vp:.2f} km/s", "uniform") and rows["AVs"] == ("0.0 %", "uniform")
    assert not [t for ax in fig.axes for t in ax.texts if re.match("(max|min) ", t.get_text())]


def grain_list(tmp_path, sidecar):
    f = tmp_path / "crystal.csv"
    f.write_text("phase,phi1,Phi,phi2\n" + "olivine,0,0,0\n" * 3)
    (tmp_path / "crystal.yaml").write_text(sidecar)
    return f


def test_panels_setting_reaches_the_figure_through_the_command(tmp_path, monkeypatch):
    drawn = []
    sheet = vel.velocity_sheet

    def recording_sheet(*args, **kwargs):
        fig = sheet(*args, **kwargs)
        drawn.append(hemispheres(fig))
        return fig

    monkeypatch.setattr(vel, "velocity_sheet", recording_sheet)
    f = grain_list(tmp_path, "figures: {velocities: {panels: [vs2, vp_vs1]}}\nbootstrap: {n: 0}\n")
    # --threads 1: figures drawn in this process, where the hooks see them (not in a second one)
    assert main(["sample", str(f), "--out", str(tmp_path / "res"), "--threads", "1"]) == 0
    assert drawn == [["vs2", "vp_vs1"]] and (tmp_path / "res" / "velocities.pdf").exists()


@pytest.mark.parametrize("panels", ["[vp, speed]", "[vp, vp]", "[]", "vp"])
def test_bad_panels_are_refused_in_one_line(tmp_path, capsys, panels):
    f = grain_list(tmp_path, f"figures: {{velocities: {{panels: {panels}}}}}\n")
    assert main(["sample", str(f), "--out", str(tmp_path / "res")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert "crystal.yaml" in err and "key figures.velocities.panels" in err, err
    assert not (tmp_path / "res").exists()
