"""Shared look of rrkit's figures: a colour-blind-safe palette, markers, figure creation.

Figures are built as bare `matplotlib.figure.Figure` objects (no pyplot, no backend switch, no
global state), so they work without a display and never disturb a user's interactive session;
``savefig`` renders them with Agg.

Colours are the Okabe-Ito palette (Okabe M, Ito K 2008, "Color Universal Design", the set also
recommended by Wong B 2011, Nat Methods 8:441, doi:10.1038/nmeth.1618). Every class that a
colour tells apart also gets its own marker, so the figures still read in grey scale.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["DIVERGING_CMAP", "INK", "LABEL_STYLE", "OKABE_ITO", "new_figure", "save"]

OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky": "#56B4E9",
    "green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "purple": "#CC79A7",
    "grey": "#999999",
}

#: rrkit's neutral inks: figures that compare lines (agreement, trend, spectrum) draw them in
#: these greys and tell them apart by dash style and width; ``accent`` marks the one thing a
#: reader should find first (a flag, an off-scale value).
INK = {
    "ink": "#1f1f1f",
    "dark": "#4a4a4a",
    "mid": "#7a7a7a",
    "light": "#b3b3b3",
    "faint": "#e4e4e4",
    "accent": "#b0361f",
}

#: beat class -> (colour, marker, legend text)
LABEL_STYLE = {
    "ectopic": (OKABE_ITO["vermillion"], "v", "ectopic (premature)"),
    "missed": (OKABE_ITO["blue"], "s", "missed beat"),
    "extra": (OKABE_ITO["orange"], "^", "extra beat"),
    "long": (OKABE_ITO["purple"], "D", "long"),
    "short": (OKABE_ITO["green"], "o", "short"),
    "implausible": (OKABE_ITO["black"], "X", "implausible"),
}

#: ColorBrewer's red-blue diverging map (Harrower M, Brewer CA 2003, Cartogr J 40(1):27-37),
#: one of the schemes that stay distinguishable for the common colour-vision deficiencies.
DIVERGING_CMAP = "RdBu"


def new_figure(width_in: float, height_in: float):
    """A new `matplotlib.figure.Figure` (matplotlib imported here, lazily)."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width_in, height_in), layout="constrained")
    return fig


def save(fig, path, *, dpi: int = 120, tight: bool = False) -> Path:
    """Write ``fig`` atomically (PNG, SVG or PDF by the suffix) and return the path.

    The one writer of every rrkit figure: the suffix is checked first, the figure is rendered
    into a temporary file beside the target and moved into place (`rrkit._atomic`), so a reader
    never sees half a figure. ``tight`` crops to the drawn content (``bbox_inches="tight"``).
    """
    from .._atomic import atomic_path
    from ..errors import InputError

    out = Path(path)
    suffix = out.suffix.lower()
    if suffix not in (".png", ".svg", ".pdf"):
        raise InputError(f"figure path {str(out)!r} must end in .png, .svg or .pdf; got "
                         f"{suffix or 'no suffix'!r}")
    out.parent.mkdir(parents=True, exist_ok=True)
    # the temporary name does not end in the figure's suffix: say the format
    with atomic_path(out, fsync=False) as tmp:
        fig.savefig(tmp, format=suffix[1:], dpi=dpi, facecolor="white",
                    bbox_inches="tight" if tight else None)
    return out
