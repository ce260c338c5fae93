"""The s-plane pole map: interval boxes, constant-damping lines, the Re(s) = 0 boundary."""
from __future__ import annotations

import math

import numpy as np

from ._style import PALETTE, new_figure, styled

__all__ = ["plot_splane", "BOX_GID", "DAMPING_LINE_GID"]

#: ``gid`` of each interval rectangle (lets tests and tools find them).
BOX_GID = "pole-interval-box"
#: ``gid`` of each constant-damping line.
DAMPING_LINE_GID = "constant-damping-line"


def _as_poles(poles):
    from ..poles import Pole

    out = []
    for p in poles:
        out.append(p if isinstance(p, Pole) else Pole.from_dict(p))
    return out


@styled
def plot_splane(poles, *, damping_ratios=(0.01, 0.05, 0.1, 0.2, 0.5), title=None):
    """Map poles on the upper half of the s-plane (conjugates are implied).

    Parameters
    ----------
    poles : sequence of identify.poles.Pole (or their ``to_dict()`` dicts)
    damping_ratios : sequence of float
        Constant-damping lines drawn from the origin: the ray ``Re = -ζωn``,
        ``Im = ωn√(1-ζ²)``.
    title : str, optional

    Returns
    -------
    matplotlib.figure.Figure
        ``Re(s)`` against ``Im(s)``, both in rad/s; one marker per pole; one rectangle
        (``gid = "pole-interval-box"``) per pole with intervals, spanning its real- and
        imaginary-part intervals; the line ``Re(s) = 0`` where decay turns to growth.
    """
    from matplotlib.patches import Rectangle

    ps = _as_poles(poles)
    fig, axes = new_figure(1, 1, height_in=3.6, width_in=6.0)
    ax = axes[0, 0]
    if ps:
        re = np.array([p.real for p in ps])
        im = np.array([p.imag for p in ps])
        lo_re = [p.ci.real[0] for p in ps if p.ci is not None] + list(re)
        hi_re = [p.ci.real[1] for p in ps if p.ci is not None] + list(re)
        hi_im = [p.ci.imag[1] for p in ps if p.ci is not None] + list(im)
        x_left = min(min(lo_re), 0.0)
        x_right = max(max(hi_re), 0.0)
        y_top = max(max(hi_im), 1e-12)
    else:
        x_left, x_right, y_top = -1.0, 0.0, 1.0
    span_x = max(x_right - x_left, 0.05 * y_top, 1e-12)
    x_left -= 0.15 * span_x
    x_right += 0.15 * span_x
    y_top *= 1.12

    radius = math.hypot(min(x_left, -1e-300), y_top) * 1.5
    for zeta in damping_ratios:
        zeta = float(zeta)
        if not 0.0 < zeta < 1.0:
            continue
        x_end, y_end = -zeta * radius, radius * math.sqrt(1.0 - zeta * zeta)
        ax.plot([0.0, x_end], [0.0, y_end], color=PALETTE["context"], linestyle=":",
                linewidth=0.8, gid=DAMPING_LINE_GID)
        # label where the ray leaves the visible box
        scale = min(y_top / y_end if y_end else np.inf, x_left / x_end if x_end else np.inf)
        ax.annotate(f"ζ = {zeta:g}", (x_end * scale * 0.97, y_end * scale * 0.97),
                    fontsize=7, color=PALETTE["context"], ha="left", va="top")
    ax.axvline(0.0, color=PALETTE["alert"], linewidth=1.1,
               label="Re(s) = 0: decay (left) / growth (right)")

    for i, p in enumerate(ps):
        if p.ci is not None:
            (r0, r1), (i0, i1) = p.ci.real, p.ci.imag
            ax.add_patch(Rectangle((r0, i0), r1 - r0, i1 - i0, fill=True, alpha=0.35,
                                   facecolor=PALETTE["model"], edgecolor=PALETTE["model"],
                                   linewidth=1.0, gid=BOX_GID,
                                   label=f"{p.ci.level:.0%} interval" if i == 0 else None))
    if ps:
        ax.plot([p.real for p in ps], [p.imag for p in ps], linestyle="none", marker="x",
                markersize=7, markeredgewidth=1.6, color=PALETTE["measured"], label="pole")
        for p in ps:
            ax.annotate(f"{p.natural_frequency_hz:.4g} Hz", (p.real, p.imag),
                        textcoords="offset points", xytext=(5, 4), fontsize=7)
    ax.set_xlim(x_left, x_right)
    ax.set_ylim(-0.04 * y_top, y_top)
    ax.set_xlabel("Re(s) (rad/s)")
    ax.set_ylabel("Im(s) (rad/s)")
    ax.set_title(title or "Poles in the s-plane (upper half)")
    ax.legend(loc="best")
    return fig
