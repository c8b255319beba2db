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
# --- shaft
def plot_shaft(result: object, path: str | Path, spectrum: object | None = None) -> Path:
    """Shaft check figure: static deflection, first lateral mode shapes, and (with a
    spectrum) the torque orders at the running speed against the torsional modes.

    Parameters
    ----------
    result : ShaftResult
        From :func:`torqlog.shaft.check_shaft`.
    path : str or Path
        PNG file to write.
    spectrum : OrderSpectrum, optional
        Orders of the torque; drawn as stems at order x running speed [Hz], with each
        elastic torsional mode as a vertical line and the band of order frequencies that
        would be flagged (f / (1 + band) to f / (1 - band)) shaded.
    """
    import numpy as np

    states = [("before", result.before, PALETTE["data"])]
    if result.after is not None:
        states.append(("after", result.after, PALETTE["after"]))
    nrows = 3 if spectrum is not None else 2
    fig, axes = new_figure(nrows, 1, height=2.9, width=8.5)
    ax = axes[0]
    for label, st, color in states:
        lat = st.lateral
        ax.plot(lat.x, lat.deflection * 1e3, color=color,
                label=f"{label}: max {lat.static_deflection_max * 1e3:.3f} mm")
        for m in lat.model.masses:
            yi = np.interp(m.at, lat.x, lat.deflection) * 1e3
            ax.plot(m.at, yi, "o", color=color, ms=6 + 3 * (m.name == "added"))
            if label == "before" or m.name == "added":
                right = m.at > 0.8 * lat.model.length
                ax.annotate(f"{m.name} {m.mass:g} kg",
                            (m.at, yi), textcoords="offset points",
                            xytext=(-6 if right else 4, -12 if label == "before" else 6),
                            ha="right" if right else "left", fontsize=8, color=color)
    cur = result.current.lateral
    ax.plot(cur.model.bearings, np.zeros(len(cur.model.bearings)), "^",
            color=PALETTE["reference"], ms=10, label="bearing (simple support)")
    ax.axhline(0.0, color=PALETTE["reference"], lw=0.8)
    ax.invert_yaxis()
    ax.set_title("Static deflection under the weights of the masses")
    ax.set_xlabel("position along shaft x [m]")
    ax.set_ylabel("deflection (down) [mm]")
    ax.legend(loc="best")

    ax = axes[1]
    styles = ["-", "--", ":"]
    for i, (f, shape) in enumerate(zip(cur.fe_hz, cur.mode_shapes, strict=False)):
        ax.plot(cur.x, shape, styles[i % 3], color=PALETTE["data"] if i == 0 else
                PALETTE["reference"], label=f"mode {i + 1}: {f:.1f} Hz")
    ax.plot(cur.model.bearings, np.zeros(len(cur.model.bearings)), "^",
            color=PALETTE["reference"], ms=10, label="bearing")
    state = "after" if result.after is not None else "current"
    ax.set_title(f"Lateral mode shapes ({state}); first mode {cur.ratio:.1f}× highest forcing "
                 f"{cur.forcing_hz:.2f} Hz: {cur.verdict}")
    ax.set_xlabel("position along shaft x [m]")
    ax.set_ylabel("relative deflection [-]")
    ax.legend(loc="best", ncols=2)

    if spectrum is not None:
        ax = axes[2]
        speed_hz = result.speed / (2 * np.pi)
        freq = spectrum.order * speed_hz
        tor = result.current.torsional
        min_share = tor.min_share if tor is not None else 0.05
        sig = spectrum.share >= min_share
        # the frequency axis ends past the highest significant order, torsional mode band
        # and first lateral mode; minor orders beyond it are not drawn
        elastic = [] if tor is None else [f for f, rigid in zip(tor.modes_hz, tor.rigid_body,
                                                                  strict=True) if not rigid]
        hi = freq[sig].max() if sig.any() else (freq.max() if len(freq) else 1.0)
        hi = max([hi, *(f / (1 - tor.band) for f in elastic), *cur.fe_hz[:1]])
        shown = freq <= hi * 1.3
        freq, sig = freq[shown], sig[shown]
        amplitude, orders = spectrum.amplitude[shown], spectrum.order[shown]
        ax.vlines(freq, 0, amplitude, color=PALETTE["data"], lw=2)
        ax.plot(freq[sig], amplitude[sig], "o", color=PALETTE["data"],
                label=f"order, share ≥ {min_share:g}")
        ax.plot(freq[~sig], amplitude[~sig], "o", mfc="white",
                color=PALETTE["data"], label="order, minor")
        top = amplitude.max() if len(amplitude) else 1.0
        for o, f, a in zip(orders[sig][:8], freq[sig][:8], amplitude[sig][:8], strict=True):
            ax.annotate(f"{o:g}×", (f, a), textcoords="offset points", xytext=(0, 4),
                        ha="center", fontsize=8)
        for i, f in enumerate(elastic):
            ax.axvspan(f / (1 + tor.band), f / (1 - tor.band), color=PALETTE["band"],
                       alpha=0.5, lw=0, label=f"±{tor.band * 100:g} % band" if i == 0 else None)
            ax.axvline(f, color=PALETTE["limit"], lw=1.5,
                       label="torsional mode" if i == 0 else None)
            ax.annotate(f"{f:.1f} Hz", (f, top * 0.05), textcoords="offset points",
                        xytext=(3, 0), fontsize=8, rotation=90, va="bottom",
                        color=PALETTE["limit"])
        ax.axvline(cur.fe_hz[0] if cur.fe_hz else np.nan, color=PALETTE["mean"], ls="--",
                   lw=1.2, label=f"first lateral mode {cur.fe_hz[0]:.1f} Hz"
                   if cur.fe_hz else None)
        ax.set_xscale("log")
        lo = freq.min() if len(freq) else 0.1
        ax.set_xlim(lo * 0.8, hi * 1.3)
        ax.set_ylim(0, top * 1.6)
        ax.set_title(f"Torque orders at {speed_hz * 60:.0f} rpm vs torsional modes")
        ax.set_xlabel("frequency [Hz] (order × running speed)")
        ax.set_ylabel("torque amplitude [N·m]")
        ax.legend(loc="upper center", ncols=3, frameon=True, framealpha=0.9,
                  edgecolor=PALETTE["grid"])
    return save(fig, path)
