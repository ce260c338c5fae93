"""One plain palette and figure factory for every plot (matplotlib loaded lazily, Agg).

The palette is our own choice: a dark blue and an orange that stay apart under the
common colour-vision deficiencies (they differ in lightness as well as hue), a purple
for a third series, and greys for context.  Series are also told apart by line style
and marker, never by colour alone.
"""
from __future__ import annotations

__all__ = ["PALETTE", "new_figure", "figure_to_png", "unit_label", "styled", "field"]

#: role -> colour (hex).  Measured data dark blue, model orange, extras purple and grey.
PALETTE = {
    "measured": "#2c5d8f",
    "model": "#e07b16",
    "third": "#7d3c98",
    "context": "#8a8a8a",
    "band": "#d5dde6",
    "segment": "#f3e3c7",
    "ink": "#222222",
    "grid": "#e4e4e4",
    "alert": "#b2182b",
}

_RC = {
    "font.size": 9.0,
    "axes.titlesize": 10.0,
    "axes.labelsize": 9.0,
    "axes.edgecolor": PALETTE["ink"],
    "axes.grid": True,
    "grid.color": PALETTE["grid"],
    "grid.linewidth": 0.6,
    "legend.fontsize": 8.0,
    "legend.frameon": False,
    "lines.linewidth": 1.2,
}


def new_figure(nrows: int = 1, ncols: int = 1, *, height_in: float = 3.2, width_in: float = 7.0,
               sharex: bool = False, height_ratios=None):
    """Return ``(figure, axes)`` drawn with the Agg canvas; nothing is shown.

    The figure is built from :class:`matplotlib.figure.Figure` with an Agg canvas, so no
    interactive backend (and no global pyplot state) is ever touched.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    total_h = height_in * nrows
    fig = Figure(figsize=(width_in, total_h))
    FigureCanvasAgg(fig)
    gridspec_kw = {"height_ratios": height_ratios} if height_ratios else None
    axes = fig.subplots(nrows, ncols, sharex=sharex, squeeze=False, gridspec_kw=gridspec_kw)
    # fixed margins in inches: much faster than a layout engine, and the same every time
    fig.subplots_adjust(left=0.8 / width_in, right=1.0 - 0.2 / width_in,
                        bottom=0.55 / total_h, top=1.0 - 0.35 / total_h,
                        hspace=0.75 / height_in, wspace=0.9 / width_in * ncols)
    for ax in axes.flat:
        ax.grid(True, color=PALETTE["grid"], linewidth=0.6)
        ax.set_axisbelow(True)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
    return fig, axes


def figure_to_png(fig, *, dpi: int = 110) -> bytes:
    """Render a figure to PNG bytes (Agg)."""
    import io

    from matplotlib.backends.backend_agg import FigureCanvasAgg

    if not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


def unit_label(name: str, unit: str | None) -> str:
    """``"name (unit)"``, or just ``name`` when the unit is unknown."""
    return f"{name} ({unit})" if unit else name


def styled(func):
    """Run a plotting function inside the house style (rcParams set only meanwhile)."""
    import functools

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        import matplotlib

        with matplotlib.rc_context(_RC):
            return func(*args, **kwargs)

    return wrapper


def field(obj, name: str, default=None):
    """``obj.name`` or ``obj[name]`` (results may be objects or plain dicts)."""
    if obj is None:
        return default
    if isinstance(obj, dict):
        return obj.get(name, default)
    return getattr(obj, name, default)
