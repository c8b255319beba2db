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
        ax.vlines(freq, 0, spectrum.amplitude, color=PALETTE["data"], lw=2)
        ax.plot(freq[sig], spectrum.amplitude[sig], "o", color=PALETTE["data"],
                label=f"order, share ≥ {min_share:g}")
        ax.plot(freq[~sig], spectrum.amplitude[~sig], "o", mfc="white",
                color=PALETTE["data"], label="order, minor")
        top = spectrum.amplitude.max() if len(spectrum.amplitude) else 1.0
        for o, f, a in zip(spectrum.order[sig][:8], freq[sig][:8], spectrum.amplitude[sig][:8],
                           strict=True):
            ax.annotate(f"{o:g}×", (f, a), textcoords="offset points", xytext=(0, 4),
                        ha="center", fontsize=8)
        hi = freq.max() if len(freq) else 1.0
        if tor is not None:
            first = True
            for f, rigid in zip(tor.modes_hz, tor.rigid_body, strict=True):
                if rigid:
                    continue
                ax.axvspan(f / (1 + tor.band), f / (1 - tor.band), color=PALETTE["band"],
                           alpha=0.5, lw=0,
                           label=f"±{tor.band * 100:g} % band" if first else None)
                ax.axvline(f, color=PALETTE["limit"], lw=1.5,
                           label="torsional mode" if first else None)
                ax.annotate(f"{f:.1f} Hz", (f, top * 0.7), textcoords="offset points",
                            xytext=(3, 0), fontsize=8, color=PALETTE["limit"])
                first = False
                hi = max(hi, f / (1 - tor.band))
        ax.axvline(cur.fe_hz[0] if cur.fe_hz else np.nan, color=PALETTE["mean"], ls="--",
                   lw=1.2, label=f"first lateral mode {cur.fe_hz[0]:.1f} Hz"
                   if cur.fe_hz else None)
        ax.set_xscale("log")
        lo = freq.min() if len(freq) else 0.1
        ax.set_xlim(lo * 0.8, max(hi, cur.fe_hz[0] if cur.fe_hz else hi) * 1.3)
        ax.set_ylim(0, top * 1.6)
        ax.set_title(f"Torque orders at {speed_hz * 60:.0f} rpm vs torsional modes")
        ax.set_xlabel("frequency [Hz] (order × running speed)")
        ax.set_ylabel("torque amplitude [N·m]")
        ax.legend(loc="upper center", ncols=3, frameon=True, framealpha=0.9,
                  edgecolor=PALETTE["grid"])
    return save(fig, path)


# --- trend
_TREND_LABELS = {  # figure: (title, short axis label, unit)
    "cycles_per_min": ("cycle rate", "cycle rate", "cycles/min"),
    "energy_swing_J_median": ("energy swing ΔE, median", "ΔE median", "J"),
    "energy_swing_J_p95": ("energy swing ΔE, 95th percentile", "ΔE p95", "J"),
    "cs_median": ("coefficient of speed fluctuation Cs, median", "Cs median", "-"),
    "cs_p95": ("coefficient of speed fluctuation Cs, 95th percentile", "Cs p95", "-"),
    "torque_peak_Nm_p99": ("peak torque, 99th percentile", "peak torque p99", "N·m"),
    "work_J_mean": ("work per cycle, mean", "work mean", "J"),
    "flagged_share": ("share of flagged cycles", "flagged share", "-"),
}


def _trend_times(result: object, rows: object) -> object:
    """Local start times of group rows, naive for matplotlib."""
    t = result.local(result.groups["start_time"].to_numpy()[rows])
    return t.tz_localize(None) if t.tz is not None else t


def _date_axis(ax: object) -> None:
    import matplotlib.dates as mdates

    loc = mdates.AutoDateLocator(minticks=4, maxticks=10)
    ax.xaxis.set_major_locator(loc)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(loc))


def plot_trend(result: object, figure: str, path: str | Path) -> Path:
    """Trend chart of one figure: per machine, the individuals chart (values, centre
    line, ±3σ limits, baseline shaded, flagged points marked, drift onset drawn) above the
    EWMA chart with its limits. ``result`` is a :class:`torqlog.trend.TrendResult`."""
    import numpy as np

    ch = result.charts[result.charts["figure"] == figure]
    machines = list(dict.fromkeys(ch["machine"])) or [""]
    label, short, unit = _TREND_LABELS.get(figure, (figure, figure, "-"))
    by = result.options["by"]
    zone = result.display_tz or result.options["shifts"]["zone"] + " wall clock"
    fig, axes = new_figure(2 * len(machines), 1, height=2.8, width=11.0, squeeze=False)
    axes = axes[:, 0]
    drift = result.options["drift"]
    onsets = {o["machine"]: o for o in result.onsets}
    for i, m in enumerate(machines):
        d = ch[ch["machine"] == m]
        ax, ax_e = axes[2 * i], axes[2 * i + 1]
        name = f" — {m}" if m else ""
        if d.empty:
            ax.set_title(f"{label}{name}: not charted (too few baseline values)")
            continue
        rows = d["row"].to_numpy()
        t = _trend_times(result, rows)
        x = d["value"].to_numpy()
        base = d["baseline"].to_numpy()
        flagged = d["flagged"].to_numpy()
        c0, lcl, ucl = d["centre"].iloc[0], d["lcl"].iloc[0], d["ucl"].iloc[0]
        if base.any():
            span = (t[base][0], t[base][-1])
            for a in (ax, ax_e):
                a.axvspan(*span, color=PALETTE["band"], alpha=0.35, lw=0,
                          label="baseline" if a is ax else None)
        ax.plot(t, x, "-o", color=PALETTE["data"], ms=4, lw=1.2, label=f"{by} value")
        ax.axhline(c0, color=PALETTE["mean"], lw=1.4, label=f"centre {c0:.4g}")
        ax.axhline(ucl, color=PALETTE["limit"], ls="--", lw=1.2,
                   label=f"limits ±{(ucl - c0) / d['sigma'].iloc[0]:.2f}σ ({drift['limits']}):"
                         f" {lcl:.4g} … {ucl:.4g}")
        ax.axhline(lcl, color=PALETTE["limit"], ls="--", lw=1.2)
        if flagged.any():
            ax.plot(t[flagged], x[flagged], "o", ms=9, mfc="none", mew=2,
                    color=PALETTE["limit"], label="flagged (any rule)")
        on = onsets.get(m)
        if on and on.get("start_time"):
            ts = np.datetime64(_naive_iso(on["start_time"]))
            for a in (ax, ax_e):
                a.axvline(ts, color=PALETTE["limit"], lw=1.0, ls=":",
                          label="drift onset\n(first flag, any figure)" if a is ax else None)
        ax.set_title(f"{label} per {by}{name} — individuals chart")
        ax.set_ylabel(f"{short} [{unit}]")
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8)
        ax_e.plot(t, d["ewma"], "-o", color=PALETTE["data"], ms=3, lw=1.2,
                  label=f"EWMA (λ = {drift['ewma_lambda']:g})")
        ax_e.step(t, d["ewma_ucl"], where="mid", color=PALETTE["limit"], ls="--", lw=1.2,
                  label=f"EWMA limits (L = {drift['ewma_L']:g})")
        ax_e.step(t, d["ewma_lcl"], where="mid", color=PALETTE["limit"], ls="--", lw=1.2)
        ax_e.axhline(c0, color=PALETTE["mean"], lw=1.4, label="centre")
        ef = (d["ewma"] > d["ewma_ucl"]) | (d["ewma"] < d["ewma_lcl"])
        if ef.any():
            ax_e.plot(t[ef.to_numpy()], d["ewma"][ef], "o", ms=8, mfc="none", mew=2,
                      color=PALETTE["limit"], label="beyond EWMA limits")
        ax_e.set_title(f"EWMA of {label}{name}")
        ax_e.set_ylabel(f"EWMA of {short} [{unit}]")
        ax_e.set_xlabel(f"{by} start ({zone})")
        ax_e.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8)
        for a in (ax, ax_e):
            _date_axis(a)
    return save(fig, path)


def _naive_iso(iso: str) -> object:
    """An ISO time string as a naive timestamp in its own wall clock."""
    import pandas as pd

    t = pd.Timestamp(iso)
    return t.tz_localize(None) if t.tz is not None else t


def plot_trend_box(result: object, path: str | Path) -> Path:
    """Box plot of the clean cycles' energy swing ΔE per group (shift, day, hour or
    file), one panel per machine; boxes coloured by shift, flagged groups outlined red,
    baseline groups shaded. Whiskers at 1.5 IQR (Tukey); outliers not drawn."""
    import numpy as np
    from matplotlib.patches import Patch

    cyc = result.cycles[result.cycles["flag"] == ""]
    by_group = {int(k): v.dropna().to_numpy()
                for k, v in cyc.groupby("group")["energy_swing_J"]}
    groups = result.groups
    machines = list(dict.fromkeys(groups["machine"])) or [""]
    by = result.options["by"]
    width = max(9.0, 0.32 * len(groups) / len(machines) + 4.0)
    fig, axes = new_figure(len(machines), 1, height=3.8, width=width, squeeze=False)
    shift_names = list(result.options["shifts"]["names"])
    colours = [PALETTE["data"], PALETTE["mean"], PALETTE["after"], PALETTE["reference"],
               PALETTE["band"]]
    base_n = None if result.options["drift"]["baseline"] == "table" else int(
        result.options["drift"]["baseline"].split()[1])
    for ax, m in zip(axes[:, 0], machines, strict=True):
        rows = np.flatnonzero((groups["machine"] == m).to_numpy())
        data = [by_group[r] if r in by_group else np.zeros(0) for r in rows]
        keep = [i for i, v in enumerate(data) if v.size]
        if not keep:
            ax.set_title(f"Energy swing per {by}: no clean cycles")
            continue
        bp = ax.boxplot([data[i] for i in keep], positions=np.arange(len(rows))[keep],
                        widths=0.6, showfliers=False, patch_artist=True,
                        medianprops={"color": "black", "lw": 1.2})
        for b, i in zip(bp["boxes"], keep, strict=True):
            g = groups.iloc[rows[i]]
            s = g["shift"]
            b.set_facecolor(colours[shift_names.index(s) % len(colours)]
                            if s in shift_names else PALETTE["data"])
            b.set_alpha(0.75)
            if g["flags"]:
                b.set_edgecolor(PALETTE["limit"])
                b.set_linewidth(2.0)
        if base_n:
            ax.axvspan(-0.5, min(base_n, len(rows)) - 0.5, color=PALETTE["band"], alpha=0.3,
                       lw=0)
        t = _trend_times(result, rows)
        if by == "shift":
            labels = [f"{a:%m-%d} {s}" for a, s in zip(t, groups["shift"].iloc[rows],
                                                         strict=True)]
        elif by == "day":
            labels = [f"{a:%Y-%m-%d}" for a in t]
        elif by == "hour":
            labels = [f"{a:%m-%d %H:%M}" for a in t]
        else:
            labels = [Path(f).name for f in groups["file"].iloc[rows]]
        ax.set_xticks(np.arange(len(rows)), labels, rotation=60, ha="right", fontsize=8)
        ax.set_xlim(-0.6, len(rows) - 0.4)
        name = f" — {m}" if m else ""
        ax.set_title(f"Energy swing ΔE of each clean cycle, per {by}{name}")
        ax.set_ylabel("energy swing ΔE [J]")
        ax.set_xlabel(f"{by} (start, local time)")
        handles = [Patch(facecolor=colours[i % len(colours)], alpha=0.75, label=s)
                   for i, s in enumerate(shift_names) if by in ("shift", "hour", "file")]
        handles.append(Patch(facecolor="white", edgecolor=PALETTE["limit"], lw=2,
                             label="group flagged"))
        if base_n:
            handles.append(Patch(facecolor=PALETTE["band"], alpha=0.3, label="baseline"))
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8,
                  title="box: quartiles\nwhiskers: 1.5 IQR\n(outliers not drawn)",
                  title_fontsize=8, alignment="left")
    return save(fig, path)
