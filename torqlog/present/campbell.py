"""Campbell diagram: natural frequencies against the forcing lines over a speed range.

Lateral modes are drawn against 1× (unbalance) and 2× (misalignment) of the flywheel
shaft speed, torsional modes against the orders of the torque; crossings are listed.
Modes are those of the non-rotating shaft (gyroscopic stiffening of an overhung disc is
not included), so they are horizontal lines.

References
----------
.. [1] W. T. Thomson and M. D. Dahleh, *Theory of Vibration with Applications*, 5th ed.:
   whirling of rotating shafts; torsional vibration.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np


def campbell_crossings(result: Any, speed_range: tuple[float, float],
                       orders: np.ndarray | None = None) -> list[dict[str, Any]]:
    """Speeds [rpm, of the logged shaft] where a forcing line meets a natural frequency.

    Parameters
    ----------
    result : ShaftResult
        Its current state's modes; ``options["shaft_speed_ratio"]`` for the 1× and 2×
        lines of the flywheel shaft.
    speed_range : (float, float) [rad/s]
        Logged shaft speed range.
    orders : array, optional
        Torque orders of the logged shaft speed (default: those checked).

    Returns
    -------
    list of dict
        ``kind`` (lateral|torsional), ``mode_hz``, ``line`` (e.g. "1×", "order 4"),
        ``speed_rpm``.
    """
    lo, hi = sorted(speed_range)
    ratio = float(result.options.get("shaft_speed_ratio", 1.0))
    cur = result.current
    out = []
    for f in cur.lateral.fe_hz:
        for mult in (1, 2):
            w = 2 * math.pi * f / (mult * ratio)
            if lo <= w <= hi:
                out.append({"kind": "lateral", "mode_hz": f, "line": f"{mult}×",
                            "speed_rpm": w * 60 / (2 * math.pi)})
    if cur.torsional is not None:
        o = (np.asarray(cur.torsional.orders_checked, float) if orders is None
             else np.asarray(orders, float))
        for f, rigid in zip(cur.torsional.modes_hz, cur.torsional.rigid_body, strict=True):
            if rigid:
                continue
            for k in o:
                w = 2 * math.pi * f / k
                if lo <= w <= hi:
                    out.append({"kind": "torsional", "mode_hz": f, "line": f"order {k:g}",
                                "speed_rpm": w * 60 / (2 * math.pi)})
    return sorted(out, key=lambda d: d["speed_rpm"])


def plot_campbell(result: Any, path: str | Path, speed_range: tuple[float, float],
                  spectrum: Any = None) -> Path:
    """Write a Campbell diagram PNG: logged shaft speed [rpm] against frequency [Hz].

    In the house style of :mod:`torqlog.present.plots` (Okabe–Ito colours; lateral and
    torsional modes told apart by line style as well as colour)."""
    from torqlog.present.plots import house_style

    return house_style(_draw_campbell)(result, path, speed_range, spectrum)


def _draw_campbell(result: Any, path: str | Path, speed_range: tuple[float, float],
                   spectrum: Any) -> Path:
    """The drawing of :func:`plot_campbell`."""
    from torqlog.present.plots import PALETTE, new_figure, save

    lo, hi = sorted(speed_range)
    rpm = np.linspace(lo, hi, 200) * 60 / (2 * math.pi)
    ratio = float(result.options.get("shaft_speed_ratio", 1.0))
    cur = result.current
    orders = (np.asarray(spectrum.significant(result.options["min_share"]).order)
              if spectrum is not None else
              np.asarray(cur.torsional.orders_checked if cur.torsional else [], float))
    fig, ax = new_figure(1, 1, height=5.0, width=8.0)
    for mult, style in ((1, "-"), (2, "--")):
        ax.plot(rpm, mult * ratio * rpm / 60, style, color=PALETTE["data"], lw=1.6,
                label=f"{mult}× flywheel shaft (lateral forcing)")
    for k in orders:
        ax.plot(rpm, k * rpm / 60, ":", color=PALETTE["reference"], lw=1.0)
        ax.annotate(f"{k:g}", (rpm[-1], k * rpm[-1] / 60), fontsize=8,
                    color=PALETTE["reference"], xytext=(2, 0), textcoords="offset points")
    if len(orders):
        ax.plot([], [], ":", color=PALETTE["reference"], label="torque orders (torsional)")
    for i, f in enumerate(cur.lateral.fe_hz):
        ax.axhline(f, color=PALETTE["mean"], lw=1.2,
                   label="lateral modes (no gyroscopic effect)" if i == 0 else None)
    if cur.torsional is not None:
        first = True
        for f, rigid in zip(cur.torsional.modes_hz, cur.torsional.rigid_body, strict=True):
            if not rigid:
                ax.axhline(f, color=PALETTE["after"], lw=1.2, ls="-.",
                           label="torsional modes" if first else None)
                first = False
    for c in campbell_crossings(result, (lo, hi), orders):
        ax.plot(c["speed_rpm"], c["mode_hz"], "o", mfc="none", ms=7,
                color=PALETTE["mean"] if c["kind"] == "lateral" else PALETTE["after"])
    run = result.speed * 60 / (2 * math.pi)
    if rpm[0] <= run <= rpm[-1]:
        ax.axvline(run, color="black", lw=0.8, label=f"running speed {run:.0f} rpm")
    top = max([*cur.lateral.fe_hz[:2], 2 * ratio * rpm[-1] / 60]) * 1.15
    ax.set_ylim(0, top)
    ax.set_xlim(rpm[0], rpm[-1])
    ax.set_xlabel("logged shaft speed [rpm]")
    ax.set_ylabel("frequency [Hz]")
    ax.set_title("Campbell diagram (circles: a forcing line meets a mode)")
    ax.legend(loc="upper left", fontsize=8)
    return save(fig, path)


__all__ = ["campbell_crossings", "plot_campbell"]
