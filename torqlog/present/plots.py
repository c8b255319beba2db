"""Figures (PNG) for every stage, in one house style.

Functions here take result objects or arrays and a path; they compute nothing new.
matplotlib draws with its Agg renderer straight onto a :class:`~matplotlib.figure.Figure`
(no pyplot, no screen). Each figure is drawn once and written as an RGB PNG, so the HTML
and the PDF report embed the same bytes without drawing or converting it again.

House style: the colour-blind-safe palette of Okabe and Ito [1]_ (:data:`PALETTE`), with
lines told apart by their style as well as their colour, and pass/fail always written in
words; figures at most :data:`MAX_WIDTH_IN` wide so that, printed across an A4 or Letter
page (about 180 mm), text stays at 7 pt or more.

References
----------
.. [1] M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and
   presentations that are friendly to colorblind people", J*FLY, 2008 (the eight-colour
   palette: black, orange, sky blue, bluish green, yellow, blue, vermillion, reddish
   purple).
"""

from __future__ import annotations

import functools
import textwrap
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeVar

import matplotlib

matplotlib.use("Agg")
from cycler import cycler  # noqa: E402  (a matplotlib dependency)
from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402

if TYPE_CHECKING:
    import pandas as pd

#: The torqlog palette, from the Okabe–Ito colour-blind-safe set [1]_: blue for measured
#: data, orange for the mean or the design value, grey for references, vermillion for
#: limits and failures, bluish green for "after retrofit", sky blue for bands and faint
#: data; reddish purple and yellow as spare accents.
PALETTE: dict[str, str] = {
    "data": "#0072B2",       # blue
    "mean": "#E69F00",       # orange
    "reference": "#595959",  # neutral grey
    "limit": "#D55E00",      # vermillion
    "after": "#009E73",      # bluish green
    "band": "#56B4E9",       # sky blue
    "accent": "#CC79A7",     # reddish purple
    "yellow": "#F0E442",
    "grid": "#dddddd",
}

#: The Okabe–Ito colours in the order lines take them when a figure names none.
CYCLE = ("#0072B2", "#E69F00", "#009E73", "#D55E00", "#CC79A7", "#56B4E9", "#000000",
         "#F0E442")

#: Widest figure [in]: printed across ~7.1 in of A4 or Letter, 8 pt text stays ≥ 7 pt.
MAX_WIDTH_IN = 8.0
#: Resolution of the PNG files [dots per inch]: 1200 px across an 8-inch figure.
DPI = 150

_RC = {
    "figure.dpi": 100,
    "savefig.dpi": DPI,
    "font.size": 10,
    "axes.titlesize": 10.5,
    "axes.titleweight": "bold",
    "axes.labelsize": 10,
    "axes.grid": True,
    "axes.prop_cycle": cycler(color=list(CYCLE)),
    "xtick.labelsize": 9,
    "ytick.labelsize": 9,
    "grid.color": PALETTE["grid"],
    "grid.linewidth": 0.6,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "legend.frameon": False,
    "legend.fontsize": 9,
}

_F = TypeVar("_F", bound=Callable[..., Any])


def house_style(fn: _F) -> _F:
    """Decorator: draw the whole figure of ``fn`` (and save it) in the house style."""

    @functools.wraps(fn)
    def styled(*args: Any, **kwargs: Any) -> Any:
        with matplotlib.rc_context(_RC):
            return fn(*args, **kwargs)

    return styled  # type: ignore[return-value]


def new_figure(nrows: int = 1, ncols: int = 1, *, height: float = 3.2,
               width: float = 7.5, **kwargs: Any) -> tuple[Figure, Any]:
    """Create a figure in the house style on an Agg canvas; returns ``(fig, axes)``.

    ``width`` is capped at :data:`MAX_WIDTH_IN` so the figure stays legible in print.
    """
    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(min(width, MAX_WIDTH_IN), height * nrows), layout="constrained")
        FigureCanvasAgg(fig)
        axes = fig.subplots(nrows, ncols, **kwargs)
    return fig, axes


def style() -> dict:
    """The rc settings of the house style, for ``matplotlib.rc_context(style())``."""
    return dict(_RC)


def save(fig: Figure, path: str | Path) -> Path:
    """Save a figure (PNG at :data:`DPI`, RGB; or SVG/PDF by the path's suffix).

    The figure is drawn once; the file is written to a temporary name beside it and
    renamed into place (:func:`torqlog.io.outputs.atomic_path`). Returns the path.
    """
    from torqlog.errors import UsageError
    from torqlog.io.outputs import atomic_path

    p = Path(path)
    fmt = p.suffix.lower().lstrip(".") or "png"
    if fmt not in ("png", "svg", "pdf"):
        raise UsageError(f"{p}: a figure file must end in .png, .svg or .pdf")
    _wrap_titles(fig)
    with matplotlib.rc_context(_RC), atomic_path(p) as tmp:
        if fmt == "png":
            _write_png(fig, tmp)
        else:
            fig.savefig(tmp, dpi=DPI, format=fmt)
    return p


def _wrap_titles(fig: Figure) -> None:
    """Break axes titles that would run past the figure's width onto more lines."""
    width_pt = fig.get_figwidth() * 72.0
    for ax in fig.axes:
        for loc in ("center", "left"):
            text = ax.get_title(loc)
            size = ax.title.get_fontsize()  # the left title has the same size
            limit = max(20, int(0.8 * width_pt / (0.6 * size)))  # ~0.6 em per character
            if text and any(len(line) > limit for line in text.splitlines()):
                ax.set_title("\n".join(textwrap.fill(line, limit)
                                       for line in text.splitlines()), loc=loc)


def _write_png(fig: Figure, path: str | Path) -> None:
    """Draw the figure on its Agg canvas and write the pixels as an RGB PNG (no alpha:
    the report's PDF then takes the bytes as they are)."""
    import numpy as np
    from PIL import Image  # pillow: a matplotlib dependency

    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    fig.set_dpi(DPI)
    canvas.draw()
    rgb = np.asarray(canvas.buffer_rgba())[..., :3]
    Image.fromarray(rgb).save(path, format="PNG", dpi=(DPI, DPI))


def axis_unit(key: str, units: str = "si") -> tuple[float, str]:
    """``(scale, unit)`` of an axis that shows the figure of a JSON key.

    ``scale`` multiplies a value in the key's own unit (SI for ``torque_mean_Nm``) into
    ``unit``, the unit people read in ``units`` ("si": kN·m, kJ, mm, MPa; "us": lbf·ft,
    ft·lbf, in, ksi), through :func:`torqlog.present.labels.label_of` -- the labels and
    the one conversion layer of :mod:`torqlog.io.units`.

    Examples
    --------
    >>> axis_unit("torque_mean_Nm")
    (0.001, 'kN·m')
    >>> axis_unit("outer_diameter_m", "us")[1]
    'in'
    """
    from torqlog.present.labels import label_of

    lab = label_of(key, units)
    return lab.scale, lab.unit


# --- cycles
@house_style
def plot_cycles(result: Any, path: str | Path, faint: int = 40, *, units: str = "si") -> Path:
    """Torque vs crank angle, E(θ) of the mean cycle with ΔE marked, and speed vs angle.

    Drawn from the running mean cycle of all clean cycles (``result.mean``): the mean bold,
    a band of mean ± 2 standard deviations at each angle, and the first ``faint`` kept
    cycles as thin lines. ``result`` is a :class:`torqlog.signal.cycles.CycleResult`;
    ``units`` "si" or "us" (axes in kN·m and kJ, or lbf·ft and ft·lbf).
    """
    import numpy as np

    kt, ut = axis_unit("torque_mean_Nm", units)
    ke, ue = axis_unit("energy_swing_J", units)

    m = result.mean
    deg = np.degrees(np.asarray(m["angle"], float))
    step = deg[1] - deg[0]
    has_t = bool(np.isfinite(m["torque_mean"]).any())
    has_w = bool(np.isfinite(m["speed_mean"]).any())
    n = result.summary["cycles"]
    fig, axes = new_figure(3, 1, height=2.5, width=7.5, sharex=True)
    ax_t, ax_e, ax_w = axes
    fig.suptitle(f"Cycles of {Path(result.source).name}: {n} clean of "
                 f"{result.summary['cycles_total']}", fontweight="bold")
    if has_t:
        _cycle_panel(ax_t, deg, m["torque_mean"], m.get("torque_sd"),
                     result.curves.get("torque"), kt, faint, n)
        fig.legend(*ax_t.get_legend_handles_labels(), loc="outside lower center", ncols=3,
                   fontsize=8.5)
        ax_t.set_ylabel(f"torque [{ut}]")
        ax_t.set_title("Torque against crank angle")
        _energy_panel(ax_e, deg, result.energy_curve(), ke, ue)
    else:
        for ax in (ax_t, ax_e):
            ax.text(0.5, 0.5, "no torque channel in this log", transform=ax.transAxes,
                    ha="center", va="center", color=PALETTE["reference"])
            ax.set_yticks([])
    if has_w:
        rpm = 60.0 / (2 * np.pi)
        _cycle_panel(ax_w, deg, np.asarray(m["speed_mean"]) * rpm,
                     None if m.get("speed_sd") is None else np.asarray(m["speed_sd"]) * rpm,
                     None if result.curves.get("speed") is None
                     else np.asarray(result.curves["speed"]) * rpm, 1.0, faint, n)
        ax_w.set_ylabel("speed [rpm]")
        ax_w.set_title("Shaft speed against crank angle")
    else:
        ax_w.text(0.5, 0.5, "no speed information in this log", transform=ax_w.transAxes,
                  ha="center", va="center", color=PALETTE["reference"])
        ax_w.set_yticks([])
    ax_w.set_xlabel("crank angle within the cycle [deg]")
    ax_w.set_xlim(0, float(deg[-1] + step / 2))
    return save(fig, path)


def _cycle_panel(ax: Any, deg: Any, mean: Any, sd: Any, curves: Any, scale: float,
                 faint: int, n: int) -> None:
    """One channel over the cycle: ±2 SD band, a few faint cycles, the mean bold."""
    import numpy as np
    from matplotlib.collections import LineCollection

    mean = np.asarray(mean, float) * scale
    if sd is not None and np.isfinite(sd).any():
        sd = np.asarray(sd, float) * scale
        ax.fill_between(deg, mean - 2 * sd, mean + 2 * sd, color=PALETTE["band"], alpha=0.35,
                        lw=0, label=f"mean ± 2 SD ({n} cycles)")
    if curves is not None and len(curves):
        c = np.asarray(curves, float)[:faint] * scale
        segs = np.stack([np.broadcast_to(deg, c.shape), c], axis=-1)
        ax.add_collection(LineCollection(segs, colors=PALETTE["data"], linewidths=0.4,
                                         alpha=0.25, label=f"{len(c)} single cycles"))
    ax.plot(deg, mean, color=PALETTE["mean"], lw=2.0, label="mean cycle")


def _energy_panel(ax: Any, deg: Any, e: Any, scale: float = 1e-3, unit: str = "kJ") -> None:
    """E(θ) of the mean cycle with its range ΔE marked (``e`` [J] shown × ``scale`` in
    ``unit``)."""
    import numpy as np

    from torqlog.present.labels import sig

    edeg = np.concatenate(([0.0], deg + (deg[1] - deg[0]) / 2))
    ax.plot(edeg, e * scale, color=PALETTE["data"], lw=2.0)
    imax, imin = int(np.argmax(e)), int(np.argmin(e))
    de = e[imax] - e[imin]
    for i in (imax, imin):
        ax.axhline(e[i] * scale, color=PALETTE["reference"], lw=0.8, ls="--")
    xm = edeg[-1] * 0.02
    ax.annotate("", xy=(xm, e[imax] * scale), xytext=(xm, e[imin] * scale),
                arrowprops={"arrowstyle": "<->", "color": PALETTE["mean"], "lw": 1.5})
    ax.text(xm * 2.5, (e[imax] + e[imin]) / 2 * scale,
            f"ΔE = {sig(de * scale, 3)} {unit} (mean cycle)",
            color="black", va="center", fontweight="bold",
            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.8})
    ax.set_ylabel(f"E(θ) [{unit}]")
    ax.set_title("Accumulated energy above the mean torque, E(θ) = ∫(T − T̄)dθ")


# --- shaft
@house_style
def plot_shaft(result: object, path: str | Path, spectrum: object | None = None, *,
               units: str = "si") -> Path:
    """Shaft check figure: static deflection, first lateral mode shapes, and (with a
    spectrum) the torque orders at the running speed against the torsional modes.

    Parameters
    ----------
    result : ShaftResult
        From :func:`torqlog.shaft.check.check_shaft`.
    path : str or Path
        PNG file to write.
    spectrum : OrderSpectrum, optional
        Orders of the torque; drawn as stems at order x running speed [Hz], with each
        elastic torsional mode as a vertical line and the band of order frequencies that
        would be flagged (f / (1 + band) to f / (1 - band)) shaded.
    units : str
        "si" (positions in m, deflection in mm, torque in N·m) or "us" (in, mil, lbf·ft).
    """
    import numpy as np

    kx, ux = axis_unit("position_m", units)
    kd, ud = axis_unit("static_deflection_max_mm", units)  # mm, or mil (thou)
    kd *= 1e3  # the deflections are in m
    kt, ut = axis_unit("motor_torque_rms_Nm", units)
    km, um = axis_unit("mass_kg", units)

    states = [("before", result.before, PALETTE["data"])]
    if result.after is not None:
        states.append(("after", result.after, PALETTE["after"]))
    nrows = 3 if spectrum is not None else 2
    fig, axes = new_figure(nrows, 1, height=2.9, width=8.0)
    ax = axes[0]
    for label, st, color in states:
        lat = st.lateral
        ax.plot(lat.x * kx, lat.deflection * kd, color=color,
                label=f"{label}: max {lat.static_deflection_max * kd:.3g} {ud}")
        for m in lat.model.masses:
            yi = np.interp(m.at, lat.x, lat.deflection) * kd
            ax.plot(m.at * kx, yi, "o", color=color, ms=6 + 3 * (m.name == "added"))
            if label == "before" or m.name == "added":
                right = m.at > 0.8 * lat.model.length
                ax.annotate(f"{m.name} {m.mass * km:.3g} {um}",
                            (m.at * kx, yi), textcoords="offset points",
                            xytext=(-6 if right else 4, -12 if label == "before" else 6),
                            ha="right" if right else "left", fontsize=8, color=color)
    cur = result.current.lateral
    ax.plot(np.asarray(cur.model.bearings) * kx, np.zeros(len(cur.model.bearings)), "^",
            color=PALETTE["reference"], ms=10, label="bearing (simple support)")
    ax.axhline(0.0, color=PALETTE["reference"], lw=0.8)
    ax.invert_yaxis()
    ax.set_title("Static deflection under the weights of the masses")
    ax.set_xlabel(f"position along shaft x [{ux}]")
    ax.set_ylabel(f"deflection (down) [{ud}]")
    ax.legend(loc="best")

    ax = axes[1]
    styles = ["-", "--", ":"]
    for i, (f, shape) in enumerate(zip(cur.fe_hz, cur.mode_shapes, strict=False)):
        ax.plot(cur.x * kx, shape, styles[i % 3], color=PALETTE["data"] if i == 0 else
                PALETTE["reference"], label=f"mode {i + 1}: {f:.1f} Hz")
    ax.plot(np.asarray(cur.model.bearings) * kx, np.zeros(len(cur.model.bearings)), "^",
            color=PALETTE["reference"], ms=10, label="bearing")
    state = "after" if result.after is not None else "current"
    ax.set_title(f"Lateral mode shapes ({state}); first mode {cur.ratio:.1f}× shaft speed "
                 f"{cur.forcing_hz:.2f} Hz: {cur.verdict}")
    ax.set_xlabel(f"position along shaft x [{ux}]")
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
        amplitude, orders = spectrum.amplitude[shown] * kt, spectrum.order[shown]
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
                   lw=1.2, label=f"first lateral mode {cur.fe_hz[0]:.1f} Hz (driven by 1×, "
                   f"2×, not by orders)" if cur.fe_hz else None)
        ax.set_xscale("log")
        lo = freq.min() if len(freq) else 0.1
        ax.set_xlim(lo * 0.8, hi * 1.3)
        ax.set_ylim(0, top * 1.6)
        ax.set_title(f"Torque orders at {speed_hz * 60:.0f} rpm vs torsional modes")
        ax.set_xlabel("frequency [Hz] (order × running speed)")
        ax.set_ylabel(f"torque amplitude [{ut}]")
        # below the axis, under its x label: inside, it covered the top tick and y label
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.3), ncols=2, fontsize=8.5,
                  frameon=True, framealpha=0.9, edgecolor=PALETTE["grid"])
    return save(fig, path)


# --- flywheel
@house_style
def plot_flywheel_stresses(result: object, path: str | Path, *, units: str = "si") -> Path:
    """Radial, tangential and criterion stress against radius for a flywheel check.

    Drawn at the operating speed the stresses are evaluated at, with the strength line
    and the allowable stress (strength / required stress factor). Lines far above the
    stresses are named in a note instead of squashing the curves.

    Parameters
    ----------
    result : torqlog.rotor.flywheel.FlywheelResult
    path : str or Path
        PNG file to write.
    units : str
        "si" (radius in mm, stress in MPa) or "us" (in, ksi).

    Returns
    -------
    Path
    """
    import numpy as np

    from torqlog.rotor.flywheel import max_principal, von_mises

    kr, ur = axis_unit("outer_diameter_m", units)  # from m
    ks, us = axis_unit("stress_critical_MPa", units)  # from MPa
    ks *= 1e-6  # the stresses are in Pa

    r = result.radius
    # break the curves at step boundaries (a stepped disc jumps there)
    breaks = np.flatnonzero(np.diff(result.step)) + 1
    r_mm = np.insert(r * kr, breaks, np.nan)

    def cut(values: np.ndarray) -> np.ndarray:
        return np.insert(values * ks, breaks, np.nan)

    crit_fn = von_mises if result.criterion == "von-mises" else max_principal
    crit_label = "von Mises" if result.criterion == "von-mises" else "max principal"
    crit = crit_fn(result.radial, result.tangential)
    strength = result.material.strength * ks
    allowable = result.allowable_stress * ks
    top = float(np.nanmax(crit)) * ks

    fig, ax = new_figure(height=4.4, width=8.0)
    ax.plot(r_mm, cut(crit), color=PALETTE["band"], lw=6, solid_capstyle="butt",
            label=f"{crit_label} (criterion)")
    ax.plot(r_mm, cut(result.tangential), color=PALETTE["data"], lw=1.8,
            label="tangential (hoop)")
    ax.plot(r_mm, cut(result.radial), color=PALETTE["reference"], lw=1.8, ls="--",
            label="radial")
    notes = []
    ymax = 1.25 * top
    for value, label, style in (
            (allowable, f"allowable {allowable:.4g} {us} (strength / "
                        f"{result.required_stress_factor:.3g})", "--"),
            (strength, f"{result.material.strength_kind} strength {strength:.4g} {us}", "-")):
        if value <= 5.0 * top:
            ax.axhline(value, color=PALETTE["limit"], lw=1.2, ls=style, label=label)
            ymax = max(ymax, 1.08 * value)
        else:
            notes.append(label)
    if notes:
        ax.text(0.98, 0.97, "off scale: " + "; ".join(notes)
                + f"\nstress safety factor {result.stress_safety_factor:.3g}",
                transform=ax.transAxes, ha="right", va="top", fontsize=8,
                color="black", bbox={"facecolor": "white", "edgecolor": PALETTE["limit"],
                                     "alpha": 0.9})
    ax.set_ylim(0.0, ymax)
    ax.set_xlim(0.0, result.geometry.outer_radius * kr * 1.02)
    ax.set_xlabel(f"radius [{ur}]")
    ax.set_ylabel(f"stress [{us}]")
    rpm = result.speed * 60.0 / (2.0 * np.pi)
    g = result.geometry
    ax.set_title(f"Flywheel stresses at the operating speed, {rpm:.0f} rpm\n{g.shape}, "
                 f"{result.material.name}, OD {g.outer_diameter * kr:.4g} {ur}: "
                 f"verdict {result.verdict}", loc="left")
    for b in breaks:
        ax.axvline(r[b] * kr, color=PALETTE["reference"], lw=0.8, ls=":",
                   label="web to rim step" if b == breaks[0] else None)
    fig.legend(loc="outside lower center", ncols=3, fontsize=8.5)
    return save(fig, path)


# --- size
@house_style
def plot_drive_curve(df: pd.DataFrame, path: str | Path, target_cs: float | None = None,
                     recommended: float | None = None, *, units: str = "si") -> Path:
    """Simulated Cs and peak motor torque against added flywheel inertia.

    Parameters
    ----------
    df : DataFrame
        A drive curve (:func:`torqlog.sizing.drive.drive_curve`): ``added_inertia_kgm2``, ``cs``,
        ``motor_torque_peak_Nm`` (motor shaft).
    path : str or Path
        PNG file to write.
    target_cs : float, optional
        Target Cs, drawn as a horizontal line.
    recommended : float, optional [kg*m^2]
        Recommended added inertia, marked on the Cs curve.
    units : str
        "si" (kg·m², N·m) or "us" (lb·ft², lbf·ft).
    """
    import numpy as np

    ki, ui = axis_unit("added_inertia_kgm2", units)
    kt, ut = axis_unit("motor_torque_peak_Nm", units)

    x = df["added_inertia_kgm2"].to_numpy(float) * ki
    cs = df["cs"].to_numpy(float)
    peak = df["motor_torque_peak_Nm"].to_numpy(float) * kt
    fig, ax = new_figure(height=4.4)
    with matplotlib.rc_context(_RC):
        h1 = ax.plot(x, cs, "o-", color=PALETTE["data"], lw=1.8, ms=4,
                     label="Cs, simulated with motor slip")
        handles = list(h1)
        if target_cs is not None:
            handles.append(ax.axhline(target_cs, color=PALETTE["limit"], ls="--", lw=1.2,
                                      label=f"target Cs = {target_cs:g}"))
        if recommended is not None and x.size:
            cs_rec = float(np.interp(recommended * ki, x, cs))
            handles.extend(ax.plot([recommended * ki], [cs_rec], marker="*", ms=14, ls="none",
                                   color=PALETTE["mean"],
                                   label=f"recommended: {recommended * ki:.4g} {ui} added"))
        ax.set_xlabel(f"added inertia at the logged shaft [{ui}]")
        ax.set_ylabel("coefficient of speed fluctuation Cs [–]", color=PALETTE["data"])
        ax.set_ylim(bottom=0)
        ax2 = ax.twinx()
        ax2.grid(False)
        ax2.spines["right"].set_visible(True)
        handles.extend(ax2.plot(x, peak, "s-", color=PALETTE["reference"], lw=1.4, ms=3.5,
                                label="peak motor torque (motor shaft)"))
        ax2.set_ylabel(f"peak motor torque [{ut}]", color=PALETTE["reference"])
        ax2.set_ylim(bottom=0)
        ax.set_title("Speed fluctuation and motor torque against added flywheel inertia")
        fig.legend(handles=handles, loc="outside lower center", ncols=2)
    return save(fig, path)


# --- report
@house_style
def plot_distributions(source: Any, path: str | Path, *,
                       target_cs: float | None = None, quantile: float | str = 0.95,
                       title: str | None = None,
                       design_energy_swing: float | None = None, units: str = "si") -> Path:
    """Histograms of the per-cycle energy swing ΔE and coefficient of speed fluctuation
    Cs over the clean cycles of a log, with the median and the design quantile marked.

    Parameters
    ----------
    source : CycleResult or DataFrame
        A :class:`torqlog.signal.cycles.CycleResult`: its fixed histograms
        (``distribution``) and summary are drawn, no per-cycle rows needed. Or a per-cycle
        table (``energy_swing_J``, ``cs``, ``flag``), binned here.
    path : str or Path
        PNG file to write.
    target_cs : float, optional
        Target Cs, drawn as a limit line on the Cs panel.
    quantile : float or "max"
        Design quantile of ΔE (marked on the ΔE panel).
    title : str, optional
        Figure title.
    design_energy_swing : float, optional [J]
        The design ΔE to mark (e.g. the sizing's); default the ``quantile`` of the cycles.
    units : str
        "si" (ΔE in kJ) or "us" (ft·lbf).
    """
    from matplotlib.ticker import MaxNLocator

    ke, ue = axis_unit("energy_swing_J", units)
    panels = (("energy_swing_J", ke, f"energy swing ΔE per cycle [{ue}]", "Energy swing ΔE",
               "no energy swing: the log has no torque (and no inertia was given)"),
              ("cs", 1.0, "coefficient of speed fluctuation Cs per cycle [–]",
               "Speed fluctuation Cs", "no Cs: the log has no speed, angle or encoder"))
    fig, axes = new_figure(1, 2, height=3.6, width=8.0)
    if title:
        fig.suptitle(title, fontweight="bold")
    for ax, (col, scale, xlabel, name, missing) in zip(axes, panels, strict=True):
        ax.set_xlabel(xlabel)
        ax.set_ylabel("cycles [count]")
        h = _histogram(source, col, quantile)
        if h is None:
            ax.text(0.5, 0.5, missing, transform=ax.transAxes, ha="center", va="center",
                    color=PALETTE["reference"], wrap=True)
            ax.set_yticks([])
            ax.set_xticks([])
            ax.set_title(name)
            continue
        counts, edges, n, med, design = h
        edges, med = edges * scale, med * scale
        ax.xaxis.set_major_locator(MaxNLocator(nbins=4))
        ax.yaxis.set_major_locator(MaxNLocator(integer=True))
        ax.stairs(counts, edges, fill=True, color=PALETTE["band"], alpha=0.55,
                  label=f"{n} clean cycles")
        ax.stairs(counts, edges, color=PALETTE["data"], lw=0.9)
        ax.axvline(med, color=PALETTE["data"], lw=1.8, label=f"median {med:.4g}")
        if col == "energy_swing_J":
            qv = (design_energy_swing if design_energy_swing is not None else design) * scale
            qlabel = "max" if quantile == "max" else f"p{100 * float(quantile):g}"
            ax.axvline(qv, color=PALETTE["mean"], lw=1.8, ls="--",
                       label=f"design {qlabel} {qv:.4g}")
        elif target_cs is not None:
            _target_line(ax, target_cs, float(edges[0]), float(edges[-1]), med)
        ax.set_title(name)
        ax.legend(loc="upper left", frameon=True, framealpha=0.9, edgecolor=PALETTE["grid"],
                  fontsize=8)
        ax.set_ylim(top=ax.get_ylim()[1] * 1.45)
    return save(fig, path)


def _histogram(source: Any, col: str, quantile: float | str) -> tuple[Any, ...] | None:
    """(counts, edges, values, median, design quantile) of a clean-cycle figure, in SI:
    from a cycle result's fixed histogram and running summary, or binned from a table."""
    import numpy as np

    stats = getattr(source, "stats", None)
    if stats is not None:
        keeper = stats.keepers[col]
        if not keeper.n:
            return None
        n = keeper.n
        lo, hi, med = keeper.quantile(0.0), keeper.max(), keeper.median()
        design = hi if quantile == "max" else keeper.quantile(float(quantile))
        bins = max(5, min(40, int(np.sqrt(n)) * 2))
        if hi - lo > 1e-9 * max(abs(hi), 1e-300):
            counts, edges = source.distribution(col, bins)
        else:  # one value: one narrow bar around it
            counts, edges = np.array([n]), np.array([lo * 0.99, hi * 1.01 + 1e-12])
        return counts, np.asarray(edges, float), n, med, design
    table = source.table if hasattr(source, "table") else source
    x = table[table["flag"] == ""][col].to_numpy(dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return None
    spread = float(np.ptp(x))
    rng = None if spread > 1e-9 * max(abs(float(x.mean())), 1e-300) else \
        (float(x[0]) * 0.99, float(x[0]) * 1.01 + 1e-12)
    counts, edges = np.histogram(x, bins=max(5, min(40, int(np.sqrt(x.size)) * 2)), range=rng)
    design = float(np.max(x)) if quantile == "max" else float(np.quantile(x, float(quantile)))
    return counts, edges, x.size, float(np.median(x)), design


def _target_line(ax: Any, target_cs: float, lo: float, hi: float, med: float) -> None:
    """The target Cs as a limit line, or an arrow to it when it is far off the histogram."""
    span = max(hi - lo, 1e-3 * abs(med))
    if lo - 3 * span <= target_cs <= hi + 3 * span:
        ax.axvline(target_cs, color=PALETTE["limit"], lw=1.5, ls="--",
                   label=f"target Cs {target_cs:g}")
        return
    side = "left" if target_cs < lo else "right"
    ax.plot([], [], color=PALETTE["limit"], lw=1.5, ls="--",
            label=f"target Cs {target_cs:g} (off scale, {side})")
    ax.annotate("", xy=(0.0 if side == "left" else 1.0, 0.5),
                xytext=(0.1 if side == "left" else 0.9, 0.5), xycoords="axes fraction",
                arrowprops={"arrowstyle": "->", "color": PALETTE["limit"], "lw": 1.5})


@house_style
def plot_order_spectrum(spectrum: object, path: str | Path, *, min_share: float = 0.05,
                        speed_rpm: float | None = None, max_order: float = 24.0,
                        title: str | None = None, units: str = "si") -> Path:
    """Bar chart of the torque's order spectrum (amplitude by order of the shaft speed).

    Parameters
    ----------
    spectrum : OrderSpectrum
        From :func:`torqlog.signal.spectrum.order_spectrum`.
    path : str or Path
        PNG file to write.
    min_share : float
        Orders with at least this share of the dynamic torque are drawn in full colour
        (the ones the shaft check holds against the torsional modes).
    speed_rpm : float, optional
        Shaft speed, to label the top axis in Hz.
    max_order : float
        Highest order drawn.
    title : str, optional
    units : str
        "si" (torque in kN·m) or "us" (lbf·ft).
    """
    import numpy as np

    kt, ut = axis_unit("torque_mean_Nm", units)

    visible = spectrum.order[spectrum.share >= 0.01]
    top_order = min(max_order, float(visible.max()) * 1.25 if visible.size else max_order)
    keep = spectrum.order <= top_order
    order, amp, share = spectrum.order[keep], spectrum.amplitude[keep], spectrum.share[keep]
    sig = share >= min_share
    fig, ax = new_figure(height=3.6, width=8.0)
    width = 0.35 / max(1, spectrum.revs_per_cycle) * 2
    ax.bar(order[sig], amp[sig] * kt, width=width, color=PALETTE["data"],
           label=f"significant (share ≥ {min_share:g} of the dynamic torque)")
    ax.bar(order[~sig], amp[~sig] * kt, width=width, color=PALETTE["band"],
           label="minor")
    for o, a, s in zip(order[sig][:16], amp[sig][:16], share[sig][:16], strict=True):
        ax.annotate(f"{s:.2f}", (o, a * kt), textcoords="offset points", xytext=(0, 3),
                    ha="center", fontsize=8, rotation=90 if len(order) > 16 else 0,
                    va="bottom", color=PALETTE["data"])
    ax.set_xlabel("order of the shaft speed [–]")
    ax.set_ylabel(f"torque amplitude [{ut}]")
    step = 1.0 / spectrum.revs_per_cycle
    ax.set_xlim(0, (order.max() if order.size else 1.0) + step)
    top = float(amp.max()) * kt if amp.size else 1.0
    ax.set_ylim(0, top * 1.3 if top > 0 else 1.0)
    ax.set_title(title or f"Order spectrum of the mean-cycle torque (mean torque "
                 f"{spectrum.mean * kt:.3g} {ut})")
    ax.plot([], [], ls="none", label="numbers on bars: share of the dynamic torque")
    if speed_rpm:
        hz = speed_rpm / 60.0
        sec = ax.secondary_xaxis("top", functions=(lambda o: o * hz, lambda f: f / hz))
        sec.set_xlabel(f"frequency at {speed_rpm:.4g} rpm [Hz]")
    ax.legend(loc="upper right")
    if np.all(~sig):
        ax.text(0.5, 0.5, "no significant order", transform=ax.transAxes, ha="center",
                color=PALETTE["reference"])
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
    "anomaly_rate": ("share of cycles of abnormal shape", "anomaly rate", "-"),
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


@house_style
def plot_trend(result: object, figure: str, path: str | Path, *, units: str = "si") -> Path:
    """Trend chart of one figure: per machine, the individuals chart (values, centre
    line, ±3σ limits, baseline shaded, flagged points marked, drift onset drawn) above the
    EWMA chart with its limits. ``result`` is a :class:`torqlog.fleet.trend.TrendResult`;
    ``units`` "si" or "us" (the figure's unit as :func:`axis_unit` gives it)."""
    import numpy as np

    ch = result.charts[result.charts["figure"] == figure]
    machines = list(dict.fromkeys(ch["machine"])) or [""]
    label, short, unit = _TREND_LABELS.get(figure, (figure, figure, "-"))
    k, shown = axis_unit(figure, units)
    unit, k = (shown, k) if shown and shown != "%" else (unit, 1.0)
    by = result.options["by"]
    zone = result.display_tz or result.options["shifts"]["zone"] + " wall clock"
    fig, axes = new_figure(2 * len(machines), 1, height=2.8, width=8.0, squeeze=False)
    axes = axes[:, 0]
    drift = result.options["drift"]
    onsets = {o["machine"]: o for o in result.onsets}
    for i, m in enumerate(machines):
        d = ch[ch["machine"] == m]
        ax, ax_e = axes[2 * i], axes[2 * i + 1]
        name = f" — {m}" if m else ""
        if d.empty:
            ax.set_title(f"{label}{name}: not charted (too few baseline values)")
            for a in (ax, ax_e):  # no empty axes with made-up ticks
                a.set_axis_off()
            continue
        rows = d["row"].to_numpy()
        t = _trend_times(result, rows)
        x = d["value"].to_numpy() * k
        base = d["baseline"].to_numpy()
        flagged = d["flagged"].to_numpy()
        c0, lcl, ucl = (d[c].iloc[0] * k for c in ("centre", "lcl", "ucl"))
        if base.any():
            span = (t[base][0], t[base][-1])
            for a in (ax, ax_e):
                a.axvspan(*span, color=PALETTE["band"], alpha=0.35, lw=0,
                          label="baseline" if a is ax else None)
        ax.plot(t, x, "-o", color=PALETTE["data"], ms=4, lw=1.2, label=f"{by} value")
        pchart = "chart" in d and (d["chart"] == "p").all()
        if pchart:  # binomial limits that vary with each group's scored cycles
            ax.axhline(c0, color=PALETTE["mean"], lw=1.4, label=f"centre p̄ = {c0:.4g}")
            ax.step(t, d["ucl"] * k, where="mid", color=PALETTE["limit"], ls="--", lw=1.2,
                    label="p-chart limits p̄ ± 3·√(p̄(1−p̄)/n)\n(n = cycles scored; "
                          "lower clipped at 0)")
            ax.step(t, d["lcl"] * k, where="mid", color=PALETTE["limit"], ls="--", lw=1.2)
        else:
            ax.axhline(c0, color=PALETTE["mean"], lw=1.4, label=f"centre {c0:.4g}")
            ax.axhline(ucl, color=PALETTE["limit"], ls="--", lw=1.2,
                       label=f"limits ±{(ucl - c0) / (k * d['sigma'].iloc[0]):.2f}σ "
                             f"({drift['limits']}): {lcl:.4g} … {ucl:.4g}")
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
        ax.set_title(textwrap.fill(f"{label} per {by}{name} — "
                                   f"{'p' if pchart else 'individuals'} chart", 56))
        ax.set_ylabel(f"{short} [{unit}]")
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8)
        ax_e.plot(t, d["ewma"] * k, "-o", color=PALETTE["data"], ms=3, lw=1.2,
                  label=f"EWMA (λ = {drift['ewma_lambda']:g})")
        ax_e.step(t, d["ewma_ucl"] * k, where="mid", color=PALETTE["limit"], ls="--", lw=1.2,
                  label=f"EWMA limits (L = {drift['ewma_L']:g})")
        ax_e.step(t, d["ewma_lcl"] * k, where="mid", color=PALETTE["limit"], ls="--", lw=1.2)
        ax_e.axhline(0.0 if pchart else c0, color=PALETTE["mean"], lw=1.4, label="centre")
        ef = (d["ewma"] > d["ewma_ucl"]) | (d["ewma"] < d["ewma_lcl"])
        if ef.any():
            ax_e.plot(t[ef.to_numpy()], d["ewma"][ef] * k, "o", ms=8, mfc="none", mew=2,
                      color=PALETTE["limit"], label="beyond EWMA limits")
        if pchart:  # the EWMA runs on the standardized rate (p − p̄)/σ_n
            ax_e.set_title(textwrap.fill(f"EWMA of the standardized {short} "
                                         f"(rate − p̄)/σ_n{name}", 56))
            ax_e.set_ylabel(f"EWMA of standardized {short} [σ]")
        else:
            ax_e.set_title(textwrap.fill(f"EWMA of {label}{name}", 56))
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


@house_style
def plot_trend_box(result: object, path: str | Path, *, units: str = "si") -> Path:
    """Box plot of the clean cycles' energy swing ΔE per group (shift, day, hour or
    file), one panel per machine; boxes coloured by shift, flagged groups outlined red,
    baseline groups shaded. Whiskers at 1.5 IQR (Tukey); outliers not drawn. ``units``
    "si" (ΔE in kJ) or "us" (ft·lbf)."""
    import numpy as np
    from matplotlib.patches import Patch

    ke, ue = axis_unit("energy_swing_J", units)
    # box statistics from each group's running summary (exact below its budget)
    boxes = [None if b is None else {**b, **{q: b[q] * ke for q in
                                             ("med", "q1", "q3", "whislo", "whishi")}}
             for b in (g.box("energy_swing_J") for g in result.stats)]
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
        keep = [i for i, r in enumerate(rows) if boxes[r] is not None]
        if not keep:
            ax.set_title(f"Energy swing per {by}: no clean cycles")
            continue
        bp = ax.bxp([boxes[rows[i]] for i in keep], positions=np.arange(len(rows))[keep],
                    widths=0.6, showfliers=False, patch_artist=True,
                    medianprops={"color": "black", "lw": 1.2})
        for b, i in zip(bp["boxes"], keep, strict=True):
            g = groups.iloc[rows[i]]
            s = g["shift"]
            b.set_facecolor(colours[shift_names.index(s) % len(colours)]
                            if s in shift_names else PALETTE["data"])
            b.set_alpha(0.75)
            if g["flags"]:  # outlined and hatched: flagged without relying on colour
                b.set_edgecolor(PALETTE["limit"])
                b.set_linewidth(2.0)
                b.set_hatch("///")
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
        ax.set_ylabel(f"energy swing ΔE [{ue}]")
        ax.set_xlabel(f"{by} (start, local time)")
        handles = [Patch(facecolor=colours[i % len(colours)], alpha=0.75, label=s)
                   for i, s in enumerate(shift_names) if by in ("shift", "hour", "file")]
        handles.append(Patch(facecolor="white", edgecolor=PALETTE["limit"], lw=2,
                             hatch="///", label="group flagged"))
        if base_n:
            handles.append(Patch(facecolor=PALETTE["band"], alpha=0.3, label="baseline"))
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8,
                  title="box: quartiles\nwhiskers: 1.5 IQR\n(outliers not drawn)",
                  title_fontsize=8, alignment="left")
    return save(fig, path)


@house_style
def plot_anomaly(result: object, path: str | Path, worst: int = 3, *,
                 units: str = "si") -> Path:
    """The worst abnormal cycles over the normal band (mean ± 3 SD), per channel;
    torque in N·m (``units="us"``: lbf·ft), speed in rad/s."""
    cur = result.curves  # type: ignore[attr-defined]
    chans = [c for c in ("torque", "speed") if c + "_mean" in cur]
    scales = {"torque": axis_unit("motor_torque_rms_Nm", units), "speed": (1.0, "rad/s")}
    fig, axes = new_figure(max(1, len(chans)), 1, height=3.0, width=8.0, squeeze=False)
    a = cur.get("angle_deg")
    styles = ("-", "--", ":")
    for j, c in enumerate(chans):
        ax = axes[j, 0]
        k, unit = scales[c]
        m, sd = cur[c + "_mean"] * k, cur[c + "_sd"] * k
        ax.fill_between(a, m - 3 * sd, m + 3 * sd, color=PALETTE["band"], alpha=0.45,
                        label="normal band (mean ± 3 SD)")
        ax.plot(a, m, color=PALETTE["reference"], lw=1.0, label="normal mean")
        for i, row in enumerate(cur[c][:worst]):
            ax.plot(a, row * k, lw=1.3, ls=styles[i % 3], color=CYCLE[3:][i % 5],
                    label=f"cycle {cur['cycle'][i]}")
        ax.set_ylabel(f"{c} [{unit}]")
        ax.legend(fontsize=8, loc="best")
    if chans:
        axes[-1, 0].set_xlabel("angle in the cycle [deg]")
        axes[0, 0].set_title(textwrap.fill(result.sentence, 90), fontsize=9,  # type: ignore[attr-defined]
                             fontweight="normal")
    return save(fig, path)
