"""The member panels of an ensemble's cross-section: fractions of members, shaded.

Under the statistic's severity (drawn in the severity colours of
:mod:`icing.outputs.plot.style`), one panel per threshold shows the fraction of
the members at that severity or worse, in bands (none, up to a quarter, up to a
half, up to three quarters, most, all) on a blue-green ramp of our own that
shares no colour with the severity ramp, so a fraction is never read as a
severity. Where no member has data the panel is grey and hatched like every
coverage gap; the ground is drawn as ground.
"""

from __future__ import annotations

import numpy as np
from matplotlib.colors import BoundaryNorm, ListedColormap
from matplotlib.patches import Patch

from icing import codes
from icing.hazards.ensemble import FRACTION_BAND_LABELS, SHOWN_FRACTION_WORDS
from icing.outputs.plot.style import GAP_FILL, GAP_HATCH, GAP_HATCH_COLOUR, GROUND

__all__ = ["FRACTION_COLOURS", "FRACTION_BANDS", "PANEL_WORDS", "draw_member_panel"]

#: Fill per band of member fraction: (0, 1/4], (1/4, 1/2], (1/2, 3/4], (3/4, 1), all.
#: A pale-to-deep blue-green ramp of our own, lightness falling with the fraction.
FRACTION_COLOURS = ("#dcefe9", "#a9d6cb", "#6bb3a6", "#2f8478", "#0f4f49")
#: Band edges of the fill (a fraction of 0 is left unfilled; each band includes its upper
#: edge, so 1 of 4 members falls in "up to 1/4").
FRACTION_BANDS = (0.0, 0.25 + 1e-6, 0.5 + 1e-6, 0.75 + 1e-6, 1.0 - 1e-6, 1.0 + 1e-6)
#: Legend text per band.
_BAND_LABELS = FRACTION_BAND_LABELS[1:]
#: The thresholds drawn, one panel each.
PANEL_WORDS = SHOWN_FRACTION_WORDS


def draw_member_panel(ax, fr, curtain, word, *, path=None, legend=False):
    """Shade one threshold's member fraction on ``ax`` (same frame as the severity panel).

    Parameters
    ----------
    ax : matplotlib Axes
    fr : the cross-section's frame (cell coordinates)
    curtain : icing.hazards.results.Curtain
        With ``member_fraction`` (an ensemble or a spread).
    word : str
        The threshold: the fraction of members at this word or worse is shaded.
    path : (ndarray, ndarray), optional
        The planned flight path (km, axis altitude) drawn over the shading.
    legend : bool
        Draw the bands' legend beside the panel.
    """
    frac = np.asarray(curtain.member_fraction[word], float)
    below = np.asarray(curtain.below_ground, bool)
    nodata = ~np.isfinite(frac) & ~below
    cmap = ListedColormap(list(FRACTION_COLOURS))
    norm = BoundaryNorm(list(FRACTION_BANDS), cmap.N)
    shown = np.ma.masked_where(~(frac > 0.0), np.clip(frac, 1e-6, 1.0))
    ax.pcolormesh(
        fr.X, fr.Y, shown, cmap=cmap, norm=norm, shading="nearest", zorder=1, rasterized=True
    )
    if nodata.any():
        cs = ax.contourf(
            fr.X,
            fr.Y,
            nodata.astype(float),
            levels=[0.5, 1.5],
            colors=[GAP_FILL],
            hatches=[GAP_HATCH],
            zorder=2,
        )
        if hasattr(cs, "set_hatchcolor"):
            cs.set_hatchcolor(GAP_HATCH_COLOUR)
        cs.set_rasterized(True)
    if below.any():
        ax.contourf(fr.X, fr.Y, below.astype(float), levels=[0.5, 1.5], colors=[GROUND], zorder=3)
    if path is not None and path[0] is not None:
        ax.plot(path[0], path[1], color="black", linewidth=1.6, zorder=5)
    members = int(getattr(curtain, "members", 0) or 0)
    or_worse = "" if word == codes.SEVERITY[-1] else " or worse"
    ax.set_title(
        f"fraction of the {members} members at {word}{or_worse}",
        fontsize=8,
        loc="left",
        pad=3,
    )
    ax.set_ylabel("[ft]", fontsize=7)
    ax.tick_params(labelsize=7)
    if legend:
        handles = [
            Patch(facecolor=c, edgecolor="#555555", linewidth=0.4, label=t)
            for c, t in zip(FRACTION_COLOURS, _BAND_LABELS, strict=True)
        ]
        handles.append(
            Patch(facecolor=GAP_FILL, edgecolor=GAP_HATCH_COLOUR, hatch=GAP_HATCH, label="no data")
        )
        leg = ax.legend(
            handles=handles,
            loc="upper left",
            bbox_to_anchor=(1.015, 1.0),
            fontsize=6.5,
            title="members",
            title_fontsize=6.5,
            frameon=True,
            borderaxespad=0.0,
        )
        leg.set_gid("member-legend")
