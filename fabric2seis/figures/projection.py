"""Equal-area (Lambert) projection of axial directions with Y at the centre, X right, Z up.

A viewer who sees X to the right and Z at the top looks along +Y; the hemisphere away from the
viewer, y >= 0, is projected (the 'lower' hemisphere of this view). Directions are axial, so a
vector with y < 0 is replaced by its opposite. The primitive circle has radius 1. The 'upper'
hemisphere (y <= 0, towards the viewer) keeps X right and Z up: each axis is drawn where its end
with y <= 0 falls, so the picture is the lower one turned half a circle about the centre.

Every projection says which it is: ``projection_note`` writes "lower hemisphere, equal area" (and
the frame) under a panel or at the foot of a figure; ``projection_text`` gives the words alone.
"""

from __future__ import annotations

import matplotlib
import numpy as np

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.axes import Axes  # noqa: E402
from matplotlib.text import Text  # noqa: E402
from matplotlib.transforms import Bbox  # noqa: E402

#: the hemispheres a projection can show (settings key ``figures.pole_hemisphere``)
HEMISPHERES = ("lower", "upper")


def _check_hemisphere(hemisphere: str) -> str:
    if hemisphere not in HEMISPHERES:
        raise ValueError(f"hemisphere must be one of {HEMISPHERES}, got {hemisphere!r}")
    return hemisphere


def project(v: np.ndarray, hemisphere: str = "lower") -> np.ndarray:
    """Project axial unit vectors to screen coordinates (equal area, Y at the centre).

    Parameters
    ----------
    v : array_like, shape (N, 3)
        Unit vectors in the structural frame; their sign is ignored.
    hemisphere : {"lower", "upper"}
        Which half is shown: y >= 0 (away from the viewer) or y <= 0.

    Returns
    -------
    numpy.ndarray, shape (N, 2)
        Screen coordinates within the unit disk.

    References
    ----------
    Lambert azimuthal equal-area projection (common practice).
    """
    v = np.asarray(v, dtype=float)
    v = np.where(v[..., 1:2] < 0, -v, v)
    if _check_hemisphere(hemisphere) == "upper":       # the other end of each axis, seen from the same side
        v = -v * np.array([1.0, -1.0, 1.0])
    scale = np.sqrt(1.0 / (1.0 + v[..., 1]))          # sqrt(2/(1+y)) / sqrt(2)
    return np.stack([v[..., 0] * scale, v[..., 2] * scale], axis=-1)


def disk_grid(n: int = 161, hemisphere: str = "lower") -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Build a square grid of screen points, their directions and a mask of the unit disk.

    Parameters
    ----------
    n : int
        Points along each side of the grid.
    hemisphere : {"lower", "upper"}
        Directions with y >= 0 (lower) or y <= 0 (upper), as ``project`` draws them.

    Returns
    -------
    a, b : numpy.ndarray, shape (n, n)
        Screen coordinates of the grid.
    dirs : numpy.ndarray, shape (n, n, 3)
        Unit direction of each grid point (points outside the disk map to the rim).
    inside : numpy.ndarray of bool, shape (n, n)
        Which points lie in the unit disk.
    """
    s = np.linspace(-1.0, 1.0, n)
    a, b = np.meshgrid(s, s)
    rho2 = a ** 2 + b ** 2
    inside = rho2 <= 1.0
    r2 = np.minimum(rho2, 1.0) * 2.0                   # back to Lambert radius squared
    y = 1.0 - r2 / 2.0
    f = np.sqrt(np.maximum(1.0 - r2 / 4.0, 0.0)) * np.sqrt(2.0)
    sign = -1.0 if _check_hemisphere(hemisphere) == "upper" else 1.0
    dirs = np.stack([a * f, sign * y, b * f], axis=-1)
    dirs /= np.linalg.norm(dirs, axis=-1, keepdims=True)
    return a, b, dirs, inside


def frame_axes(ax, labels=("X", "Z", "Y")) -> None:
    """Draw the primitive circle, the foliation trace and axis labels (X right, Z top, Y centre).

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Panel to draw on.
    labels : tuple of str
        Labels of the right, top and centre directions.
    """
    t = np.linspace(0, 2 * np.pi, 361)
    ax.plot(np.cos(t), np.sin(t), color="black", lw=0.8)
    ax.plot([-1, 1], [0, 0], color="0.4", lw=0.5, ls="--")
    ax.text(1.06, 0, labels[0], ha="left", va="center", fontsize=8)
    ax.text(0, 1.06, labels[1], ha="center", va="bottom", fontsize=8)
    ax.plot([0], [0], marker="+", color="0.3", ms=5, mew=0.8)
    ax.text(0.04, 0.04, labels[2], fontsize=7, color="0.3")
    ax.set_xlim(-1.18, 1.18)
    ax.set_ylim(-1.18, 1.18)
    ax.set_aspect("equal")
    ax.axis("off")


def projection_text(hemisphere: str = "lower", frame: str | None = None) -> str:
    """The words that say what a projection shows: "lower hemisphere, equal area" and the frame.

    Parameters
    ----------
    hemisphere : {"lower", "upper"}
        The half of the sphere drawn.
    frame : str, optional
        The frame, added after a comma (``"structural frame"``).

    Returns
    -------
    str
        For example ``"lower hemisphere, equal area, structural frame"``.
    """
    text = f"{_check_hemisphere(hemisphere)} hemisphere, equal area"
    return f"{text}, {frame}" if frame else text


def projection_note(target, hemisphere: str = "lower", frame: str | None = None, **style) -> Text:
    """Say on a figure or under a panel which hemisphere and which projection is drawn.

    On a panel (an Axes) the note goes just under it, centred; on a figure (or subfigure) it is the
    line at its foot (``supxlabel``, which constrained layout keeps clear of the panels), after
    any text already there.

    Parameters
    ----------
    target : matplotlib.axes.Axes or matplotlib.figure.Figure or matplotlib.figure.SubFigure
        Where the note goes.
    hemisphere : {"lower", "upper"}
        The half of the sphere drawn.
    frame : str, optional
        The frame, named after the projection (``"structural frame"``).
    **style
        Text properties that replace the defaults (font size 7, dark grey).

    Returns
    -------
    matplotlib.text.Text
        The note.
    """
    text = projection_text(hemisphere, frame)
    props = {"fontsize": 7, "color": "0.25", **style}
    if isinstance(target, Axes):
        return target.text(0.5, -0.01, text, transform=target.transAxes, ha="center", va="top", **props)
    before = target.get_supxlabel()
    return target.supxlabel(f"{before}\n{text}" if before else text, **props)


def trend_plunge_text(direction: np.ndarray) -> str:
    """An axis of the structural frame as trend/plunge, ``"ttt/pp"`` in whole degrees.

    Trend from X (lineation) towards Y, 0 to 360 degrees (0 to 180 for a horizontal axis); plunge
    below the XY (foliation) plane, 0 to 90 degrees; of the axis's end with z <= 0 (CONVENTIONS.md).

    Parameters
    ----------
    direction : array_like, shape (3,)
        The axis; its sign and length are ignored.

    Returns
    -------
    str
        For example ``"090/05"``.
    """
    v = np.asarray(direction, dtype=float)
    v = v / np.linalg.norm(v)
    v = -v if v[2] > 0 else v
    plunge = int(round(np.degrees(np.arcsin(np.clip(-v[2], 0.0, 1.0)))))
    trend = int(round(np.degrees(np.arctan2(v[1], v[0])))) % 360
    if plunge == 0:
        trend %= 180
    return f"{trend:03d}/{plunge:02d}"


#: resolution of the PNG files (dots per inch)
PNG_DPI = 150


def save(fig, stem) -> list[str]:
    """Write ``stem``.png and ``stem``.pdf and close the figure, drawing it twice in all.

    The PNG comes from one drawing on the Agg canvas (:func:`draw_png`), which also gives the
    tight box around what was drawn; the PDF is drawn once with that box and the layout held (the
    figure keeps no layout engine, so savefig does not draw it again before writing the PDF).
    ``savefig(bbox_inches="tight")`` per file would draw four times. The PDF carries no creation
    date, so that the same figure is the same bytes on every run.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure.
    stem : str or Path
        Path of the files without suffix; ``.png`` and ``.pdf`` are written.

    Returns
    -------
    list of str
        The files written.
    """
    out = [f"{stem}.png", f"{stem}.pdf"]
    box = draw_png(fig, out[0])
    if fig.get_layout_engine() is not None:
        # the layout of the drawing holds for the PDF: computed once. No engine at all from here, not
        # matplotlib's placeholder ("none"): with any engine, savefig draws the figure once more first
        with matplotlib.rc_context({"figure.autolayout": False, "figure.constrained_layout.use": False}):
            fig.set_layout_engine(None)
    fig.savefig(out[1], dpi=PNG_DPI, bbox_inches=box, metadata={"CreationDate": None})   # no date: rerun, same bytes
    plt.close(fig)
    return out


def draw_png(fig, path) -> Bbox:
    """Draw the figure once at ``PNG_DPI`` and write the tight box around it as a PNG; return the box.

    The box is matplotlib's tight box of what was drawn plus its usual pad (``savefig.pad_inches``),
    as ``savefig(bbox_inches="tight")`` takes it; the PNG is that box cut out of the drawn pixels,
    the pad beyond the figure's edge in the figure's colour. When something was drawn beyond
    the edge, ``savefig`` draws the file instead, widening the figure as it does.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure (any layout engine runs during the drawing).
    path : str or Path
        The PNG file.

    Returns
    -------
    matplotlib.transforms.Bbox
        The box, in inches.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from PIL import Image, PngImagePlugin

    fig.set_dpi(PNG_DPI)
    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    canvas.draw()
    tight = fig.get_tightbbox(canvas.get_renderer())
    box = tight.padded(matplotlib.rcParams["savefig.pad_inches"])
    pixels = np.asarray(canvas.buffer_rgba())
    height, width = pixels.shape[:2]
    if not (tight.x0 >= 0 and tight.y0 >= 0 and tight.x1 * PNG_DPI <= width + 0.5
            and tight.y1 * PNG_DPI <= height + 0.5):
        fig.savefig(path, dpi=PNG_DPI, bbox_inches=box)
        return box
    # the box in pixels, rows counted from the top; sized as savefig sizes its canvas (whole pixels)
    left, bottom = int(round(box.x0 * PNG_DPI)), height - int(round(box.y0 * PNG_DPI))
    right, top = left + int(box.width * PNG_DPI), bottom - int(box.height * PNG_DPI)
    sheet = np.empty((bottom - top, right - left, 4), dtype=np.uint8)
    sheet[:] = np.round(np.asarray(matplotlib.colors.to_rgba(fig.get_facecolor())) * 255).astype(np.uint8)
    rows, cols = slice(max(top, 0), min(bottom, height)), slice(max(left, 0), min(right, width))
    sheet[rows.start - top:rows.stop - top, cols.start - left:cols.stop - left] = pixels[rows, cols]
    info = PngImagePlugin.PngInfo()
    info.add_text("Software", f"matplotlib version{matplotlib.__version__}, https://matplotlib.org/")
    Image.fromarray(sheet).save(path, format="png", pnginfo=info, dpi=(PNG_DPI, PNG_DPI))
    return box
