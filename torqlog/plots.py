"""Figures (PNG) for every stage, in one house style.

Functions here take result objects or arrays and a path; they compute nothing new.
matplotlib runs with the non-interactive Agg backend, so no screen is needed.
"""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

#: The torqlog palette: deep teal for measured data, burnt orange for the mean or
#: the design value, slate for references, brick red for limits and failures,
#: olive for "after retrofit".
PALETTE: dict[str, str] = {
    "data": "#1b6f7a",
    "mean": "#d2691e",
    "reference": "#5b6770",
    "limit": "#b22222",
    "after": "#6b8e23",
    "band": "#9fc9cf",
    "grid": "#d9dde0",
}

_RC = {
    "figure.dpi": 100,
    "savefig.dpi": 150,
    "font.size": 10,
    "axes.titlesize": 11,
    "axes.titleweight": "bold",
    "axes.grid": True,
    "grid.color": PALETTE["grid"],
    "grid.linewidth": 0.6,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "legend.frameon": False,
    "legend.fontsize": 9,
}


def new_figure(nrows: int = 1, ncols: int = 1, *, height: float = 3.2,
               width: float = 8.0, **kwargs: object) -> tuple[Figure, object]:
    """Create a figure in the house style; returns ``(fig, axes)``."""
    with plt.rc_context(_RC):
        fig, axes = plt.subplots(nrows, ncols, figsize=(width, height * nrows),
                                 layout="constrained", **kwargs)
    return fig, axes


def style() -> dict:
    """The rc settings of the house style, for ``plt.rc_context(style())``."""
    return dict(_RC)


def save(fig: Figure, path: str | Path) -> Path:
    """Save a figure to PNG (150 dpi) and close it; returns the path."""
    p = Path(path)
    with plt.rc_context(_RC):
        fig.savefig(p, dpi=150)
    plt.close(fig)
    return p
