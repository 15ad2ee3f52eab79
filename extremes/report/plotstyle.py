"""The look shared by every figure of the report, and a check that a figure's text fits inside it.

Colours are the Okabe-Ito palette [1]_, chosen to stay distinct for the common forms of colour blindness;
each series also differs by line style or marker so that figures read in greyscale print. Legends sit
below the axes (never over the data), and :func:`layout_problems` measures, with matplotlib's renderer,
that every title, axis label, tick label and legend lies inside the figure and that no legend covers an
axes.

matplotlib is imported inside the functions, so importing this module is cheap.

References
----------
.. [1] M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and presentations that are
   friendly to colorblind people," J*FLY, 2002 (colour set also in B. Wong, "Points of view: color
   blindness," *Nat. Methods*, vol. 8, p. 441, 2011, doi:10.1038/nmeth.1618).
"""
from __future__ import annotations

import io
import logging

logger = logging.getLogger(__name__)

__all__ = ["PALETTE", "LINESTYLES", "MARKERS", "new_figure", "to_png", "legend_below", "level_label",
           "layout_problems"]

#: Okabe-Ito colours without yellow (too pale on white paper), strongest contrast first [1]_
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000")
#: line styles paired with the colours, so that series differ in greyscale too
LINESTYLES = ("-", "--", "-.", ":", (0, (5, 1, 1, 1, 1, 1)), (0, (8, 2)), (0, (1, 3)))
#: markers paired with the colours for point series
MARKERS = ("o", "s", "^", "D", "v", "P", "X")
#: dots per inch of the saved figures (about 150 dpi on an A4 page when printed at the text width)
DPI = 120


def new_figure(width_in: float, height_in: float):
    """A matplotlib Figure (no pyplot state) with constrained layout and the report's font sizes."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width_in, height_in), layout="constrained")
    fig.get_layout_engine().set(h_pad=0.06, w_pad=0.06)
    return fig


def to_png(fig, *, dpi: int = DPI) -> bytes:
    """PNG bytes of ``fig`` (Agg renderer)."""
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=dpi, metadata={"Software": None})
    return buffer.getvalue()


def style(index: int) -> dict:
    """Colour and line style of series ``index`` (cycling)."""
    return {"color": PALETTE[index % len(PALETTE)], "ls": LINESTYLES[index % len(LINESTYLES)]}


def legend_below(ax, *, ncols: int = 3, fontsize="small", handles=None, labels=None):
    """One legend under all the axes of ``ax``'s figure (constrained layout keeps it clear of every label).

    The entries are those of every axes of the figure (first of each label), unless ``handles`` and
    ``labels`` are given.
    """
    fig = ax.figure
    if handles is None:
        handles, labels, seen = [], [], set()
        for other in fig.axes:
            for handle, label in zip(*other.get_legend_handles_labels()):
                if label not in seen:
                    seen.add(label)
                    handles.append(handle)
                    labels.append(label)
    if not handles:
        return None
    return fig.legend(handles, labels, loc="outside lower center", ncols=max(1, min(ncols, len(handles))),
                      fontsize=fontsize, frameon=False)


def level_label(datum: str | None, what: str = "still-water level") -> str:
    """Axis label of a level with its unit and datum, e.g. ``still-water level [m above ODN]``.

    A long label is wrapped over lines of at most 32 characters, so that it fits beside a short axes.
    """
    import textwrap

    text = f"{what} [m above {datum or 'unstated datum'}]"
    return text if len(text) <= 32 else "\n".join(textwrap.wrap(text, 32))


def _texts(fig):
    """(name, artist) of every title, axis label, tick label and legend of ``fig``."""
    items = []
    if fig._suptitle is not None and fig._suptitle.get_text():  # noqa: SLF001 - no public getter
        items.append(("suptitle", fig._suptitle))  # noqa: SLF001
    items.extend((f"figure legend {i}", legend) for i, legend in enumerate(fig.legends))
    for k, ax in enumerate(fig.axes):
        name = f"axes {k}"
        for where in ("left", "center", "right"):
            title = ax.get_title(loc=where)
            if title:
                items.append((f"{name} title {title[:30]!r}", ax.title if where == "center"
                              else getattr(ax, f"_{where}_title")))
        for axis in ("xaxis", "yaxis"):
            label = getattr(ax, axis).label
            if label.get_text():
                items.append((f"{name} {axis[0]}-label {label.get_text()[:30]!r}", label))
            axis_object = getattr(ax, axis)
            low, high = sorted(axis_object.get_view_interval())
            span = (high - low) * 1e-9
            for where, tick in zip(axis_object.get_majorticklocs(), axis_object.get_ticklabels()):
                # ticks beyond the view limits are not drawn
                if tick.get_visible() and tick.get_text() and low - span <= where <= high + span:
                    items.append((f"{name} {axis[0]}-tick {tick.get_text()!r}", tick))
        legend = ax.get_legend()
        if legend is not None:
            items.append((f"{name} legend", legend))
    return items


def layout_problems(fig, *, tolerance_px: float = 1.0) -> list[str]:
    """What of ``fig``'s text falls outside it, and which legend covers an axes (empty when it fits).

    The figure is drawn once with its own canvas renderer (Agg) and the window extents of its titles,
    axis labels, visible tick labels and legends are compared with the figure's box; each legend's box is
    also compared with every axes' plotting area.

    Returns
    -------
    list of str
        One line per problem, naming the element.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    box = fig.bbox
    problems = []
    for name, artist in _texts(fig):
        extent = artist.get_window_extent(renderer)
        if (extent.x0 < box.x0 - tolerance_px or extent.y0 < box.y0 - tolerance_px
                or extent.x1 > box.x1 + tolerance_px or extent.y1 > box.y1 + tolerance_px):
            problems.append(f"{name} outside the figure: {tuple(round(v) for v in extent.extents)} vs "
                            f"{tuple(round(v) for v in box.extents)}")
        if "legend" in name:
            for k, ax in enumerate(fig.axes):
                if ax.get_visible() and _overlap_area(ax.bbox, extent) > 4.0:
                    problems.append(f"{name} covers the plotting area of axes {k}")
            for other, artist_other in _texts(fig):
                if other != name and _overlap_area(artist_other.get_window_extent(renderer), extent) > 4.0:
                    problems.append(f"{name} covers {other}")
    return problems


def _overlap_area(a, b) -> float:
    width = min(a.x1, b.x1) - max(a.x0, b.x0)
    height = min(a.y1, b.y1) - max(a.y0, b.y0)
    return max(width, 0.0) * max(height, 0.0)
