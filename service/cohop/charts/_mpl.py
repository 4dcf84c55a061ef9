"""matplotlib, loaded on first use (an optional extra: `pip install 'cohop[plot]'`)."""

from __future__ import annotations

from types import SimpleNamespace


class PlotUnavailable(RuntimeError):
    pass


def toolkit():
    """What the charts draw with: `figure(**kw)` makes a Figure on an Agg canvas of its own, outside pyplot's
    registry of open figures, so a long-running server keeps no figure after its answer (matplotlib's
    documentation, "Embed in a web application server"); `Rectangle` is the patch."""
    try:
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure
        from matplotlib.patches import Rectangle
    except ImportError as err:
        raise PlotUnavailable("charts need matplotlib: pip install 'cohop[plot]'") from err

    def figure(**kw):
        fig = Figure(**kw)
        FigureCanvasAgg(fig)
        return fig

    return SimpleNamespace(figure=figure, Rectangle=Rectangle)


#: Our own palette: shading bins from pale sand to deep aubergine (one per data.HIT_BINS bin).
HIT_COLOURS = ("#f3efe0", "#e9d8a6", "#ee9b00", "#ca6702", "#bb3e03", "#9b2226", "#4a0e2e")
#: Distinct hues for sources (dominant source strips) and systems (site map).
SOURCE_COLOURS = ("#3a86ff", "#8338ec", "#06a77d", "#ff006e", "#fb8500", "#5e548e", "#118ab2", "#8d6346",
                  "#2b2d42", "#70a288")
NEUTRAL, USED_NOW, DROPPED, ADDED, NEW_INTERFERER, INTERFERER = (
    "#a7adb7", "#c9ced6", "#d62828", "#2a9d8f", "#d62828", "#7d8597")
CAUTION = ("Planning estimate: a site survey confirms it; local regulations, the regulator, licensed practice "
           "and the machine's safety assessment prevail.")


def save(fig, path, dpi: int | None = None) -> None:
    if path is not None:
        fig.savefig(path, dpi=dpi or fig.dpi)
