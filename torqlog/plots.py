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


# --- cycles
def plot_cycles(result: object, path: str | Path) -> Path:
    """Torque vs crank angle (every cycle faint, mean bold), E(θ) of the mean cycle with
    ΔE marked, and speed vs angle. ``result`` is a :class:`torqlog.cycles.CycleResult`."""
    import numpy as np

    mc = result.mean_cycle
    deg = np.degrees(mc["angle"].to_numpy())
    has_t = mc["torque_mean"].notna().any()
    has_w = mc["speed_mean"].notna().any()
    fig, axes = new_figure(3, 1, height=2.6, width=8.0, sharex=True)
    ax_t, ax_e, ax_w = axes
    name = Path(result.source).name
    fig.suptitle(f"Cycles of {name}: {result.summary['cycles']} clean of "
                 f"{result.summary['cycles_total']}", fontweight="bold")
    if has_t:
        for c in result.curves.get("torque", np.empty((0, deg.size))):
            ax_t.plot(deg, c / 1e3, color=PALETTE["band"], lw=0.5, alpha=0.5)
        ax_t.plot(deg, mc["torque_mean"] / 1e3, color=PALETTE["mean"], lw=2.0, label="mean cycle")
        ax_t.plot([], [], color=PALETTE["band"], lw=1, label="each cycle")
        ax_t.legend(loc="upper right")
        ax_t.set_ylabel("torque [kN·m]")
        ax_t.set_title("Torque against crank angle")
        e = result.energy_curve()
        edeg = np.concatenate(([0.0], deg + (deg[1] - deg[0]) / 2))
        ax_e.plot(edeg, e / 1e3, color=PALETTE["data"], lw=2.0)
        imax, imin = int(np.argmax(e)), int(np.argmin(e))
        de = e[imax] - e[imin]
        ax_e.axhline(e[imax] / 1e3, color=PALETTE["reference"], lw=0.8, ls="--")
        ax_e.axhline(e[imin] / 1e3, color=PALETTE["reference"], lw=0.8, ls="--")
        xm = edeg[-1] * 0.02
        ax_e.annotate("", xy=(xm, e[imax] / 1e3), xytext=(xm, e[imin] / 1e3),
                      arrowprops={"arrowstyle": "<->", "color": PALETTE["mean"], "lw": 1.5})
        ax_e.text(xm * 2.5, (e[imax] + e[imin]) / 2e3, f"ΔE = {de / 1e3:.3g} kJ (mean cycle)",
                  color=PALETTE["mean"], va="center", fontweight="bold",
                  bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.8})
        ax_e.set_ylabel("E(θ) [kJ]")
        ax_e.set_title("Accumulated energy above the mean torque, E(θ) = ∫(T − T̄)dθ")
    else:
        for ax in (ax_t, ax_e):
            ax.text(0.5, 0.5, "no torque channel in this log", transform=ax.transAxes,
                    ha="center", va="center", color=PALETTE["reference"])
    if has_w:
        rpm = 60.0 / (2 * np.pi)
        for c in result.curves.get("speed", np.empty((0, deg.size))):
            ax_w.plot(deg, c * rpm, color=PALETTE["band"], lw=0.5, alpha=0.5)
        ax_w.plot(deg, mc["speed_mean"] * rpm, color=PALETTE["mean"], lw=2.0, label="mean cycle")
        ax_w.set_ylabel("speed [rpm]")
        ax_w.set_title("Shaft speed against crank angle")
    else:
        ax_w.text(0.5, 0.5, "no speed information in this log", transform=ax_w.transAxes,
                  ha="center", va="center", color=PALETTE["reference"])
    ax_w.set_xlabel("crank angle within the cycle [deg]")
    ax_w.set_xlim(0, float(np.degrees(result.mean_cycle['angle'].iloc[-1]) +
                           (deg[1] - deg[0]) / 2))
    return save(fig, path)
