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


# --- flywheel
def plot_flywheel_stresses(result: object, path: str | Path) -> Path:
    """Radial, tangential and criterion stress against radius for a flywheel check.

    Drawn at the operating speed the stresses are evaluated at, with the strength line
    and the allowable stress (strength / required stress factor). Lines far above the
    stresses are named in a note instead of squashing the curves.

    Parameters
    ----------
    result : torqlog.flywheel.FlywheelResult
    path : str or Path
        PNG file to write.

    Returns
    -------
    Path
    """
    import numpy as np

    from torqlog.flywheel import max_principal, von_mises

    r = result.radius
    # break the curves at step boundaries (a stepped disc jumps there)
    breaks = np.flatnonzero(np.diff(result.step)) + 1
    r_mm = np.insert(r * 1e3, breaks, np.nan)

    def cut(values: np.ndarray) -> np.ndarray:
        return np.insert(values / 1e6, breaks, np.nan)

    crit_fn = von_mises if result.criterion == "von-mises" else max_principal
    crit_label = "von Mises" if result.criterion == "von-mises" else "max principal"
    crit = crit_fn(result.radial, result.tangential)
    strength = result.material.strength / 1e6
    allowable = result.allowable_stress / 1e6
    top = float(np.nanmax(crit)) / 1e6

    fig, ax = new_figure(height=4.2, width=10.0)
    ax.plot(r_mm, cut(crit), color=PALETTE["band"], lw=6, solid_capstyle="butt",
            label=f"{crit_label} (criterion)")
    ax.plot(r_mm, cut(result.tangential), color=PALETTE["data"], lw=1.8,
            label="tangential (hoop)")
    ax.plot(r_mm, cut(result.radial), color=PALETTE["reference"], lw=1.8, ls="--",
            label="radial")
    notes = []
    ymax = 1.25 * top
    for value, label, style in (
            (allowable, f"allowable {allowable:.4g} MPa (strength / "
                        f"{result.required_stress_factor:.3g})", "--"),
            (strength, f"{result.material.strength_kind} strength {strength:.4g} MPa", "-")):
        if value <= 5.0 * top:
            ax.axhline(value, color=PALETTE["limit"], lw=1.2, ls=style, label=label)
            ymax = max(ymax, 1.08 * value)
        else:
            notes.append(label)
    if notes:
        ax.text(1.02, 0.02, "off scale:\n" + "\n".join(notes)
                + f"\nstress safety factor {result.stress_safety_factor:.3g}",
                transform=ax.transAxes, ha="left", va="bottom", fontsize=8,
                color=PALETTE["limit"])
    ax.set_ylim(0.0, ymax)
    ax.set_xlim(0.0, result.geometry.outer_radius * 1e3 * 1.02)
    ax.set_xlabel("radius [mm]")
    ax.set_ylabel("stress [MPa]")
    rpm = result.speed * 60.0 / (2.0 * np.pi)
    g = result.geometry
    ax.set_title(f"Flywheel stresses at the operating speed, {rpm:.0f} rpm\n{g.shape}, "
                 f"{result.material.name}, OD {g.outer_diameter * 1e3:.0f} mm: "
                 f"verdict {result.verdict}", loc="left")
    for b in breaks:
        ax.axvline(r[b] * 1e3, color=PALETTE["reference"], lw=0.8, ls=":",
                   label="web to rim step" if b == breaks[0] else None)
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0))
    return save(fig, path)
