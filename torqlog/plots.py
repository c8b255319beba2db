"""Figures (PNG) for every stage, in one house style.

Functions here take result objects or arrays and a path; they compute nothing new.
matplotlib runs with the non-interactive Agg backend, so no screen is needed.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

if TYPE_CHECKING:
    import pandas as pd

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


# --- size
def plot_drive_curve(df: pd.DataFrame, path: str | Path, target_cs: float | None = None,
                     recommended: float | None = None) -> Path:
    """Simulated Cs and peak motor torque against added flywheel inertia.

    Parameters
    ----------
    df : DataFrame
        A drive curve (:func:`torqlog.drive.drive_curve`): ``added_inertia_kgm2``, ``cs``,
        ``motor_torque_peak_Nm`` (motor shaft).
    path : str or Path
        PNG file to write.
    target_cs : float, optional
        Target Cs, drawn as a horizontal line.
    recommended : float, optional [kg*m^2]
        Recommended added inertia, marked on the Cs curve.
    """
    import numpy as np

    x = df["added_inertia_kgm2"].to_numpy(float)
    cs = df["cs"].to_numpy(float)
    peak = df["motor_torque_peak_Nm"].to_numpy(float)
    fig, ax = new_figure(height=4.4)
    with plt.rc_context(_RC):
        h1 = ax.plot(x, cs, "o-", color=PALETTE["data"], lw=1.8, ms=4,
                     label="Cs, simulated with motor slip")
        handles = list(h1)
        if target_cs is not None:
            handles.append(ax.axhline(target_cs, color=PALETTE["limit"], ls="--", lw=1.2,
                                      label=f"target Cs = {target_cs:g}"))
        if recommended is not None and x.size:
            cs_rec = float(np.interp(recommended, x, cs))
            handles.extend(ax.plot([recommended], [cs_rec], marker="*", ms=14, ls="none",
                                   color=PALETTE["mean"],
                                   label=f"recommended: {recommended:.4g} kg·m² added"))
        ax.set_xlabel("added inertia at the logged shaft [kg·m²]")
        ax.set_ylabel("coefficient of speed fluctuation Cs [–]", color=PALETTE["data"])
        ax.set_ylim(bottom=0)
        ax2 = ax.twinx()
        ax2.grid(False)
        ax2.spines["right"].set_visible(True)
        handles.extend(ax2.plot(x, peak, "s-", color=PALETTE["reference"], lw=1.4, ms=3.5,
                                label="peak motor torque (motor shaft)"))
        ax2.set_ylabel("peak motor torque [N·m]", color=PALETTE["reference"])
        ax2.set_ylim(bottom=0)
        ax.set_title("Speed fluctuation and motor torque against added flywheel inertia")
        fig.legend(handles=handles, loc="outside lower center", ncols=2)
    return save(fig, path)
