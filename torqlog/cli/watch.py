"""The cycle-shape options of ``cycles`` and the ``watch`` command (follow a live log)."""

from __future__ import annotations

import json
import math
import sys
from collections.abc import Callable
from typing import Any

import click
import numpy as np

from torqlog.cli.base import cli, cycle_options, load_profile_opt, make_cycle_options, read_kwargs


def shape_options(f: Callable) -> Callable:
    """Options of the cycle-shape check."""
    opts = [
        click.option("--reference", type=click.Path(dir_okay=False), default=None,
                     help="Learn the normal cycle shape from this known-good log of the same "
                          "machine (default: the first clean cycles of the log itself)."),
        click.option("--shape-model", type=click.Path(dir_okay=False), default=None,
                     help="Score against a saved shape model (see --save-shape-model)."),
        click.option("--save-shape-model", type=click.Path(dir_okay=False), default=None,
                     help="Write the shape model used to this JSON file."),
        click.option("--false-alarm", type=float, default=0.005, show_default=True,
                     help="False-alarm rate per healthy cycle of the shape check."),
        click.option("--learn-cycles", type=int, default=300, show_default=True,
                     help="Clean cycles the shape model is learned from without a reference."),
        click.option("--no-shape-check", is_flag=True, help="Leave out the cycle-shape check."),
        click.option("--shape-plot", type=click.Path(dir_okay=False), default=None,
                     help="Write a PNG: the worst abnormal cycles over the normal band."),
    ]
    for o in reversed(opts):
        f = o(f)
    return f


def shape_kwargs(log: str, kw: dict[str, Any]) -> dict[str, Any]:
    """``anomaly`` and ``shape_model`` keywords for analyse_cycles; pops the shape options.

    A ``--reference`` log is read with the same cycle options as LOG (peeked, not popped).
    """
    from torqlog.errors import UsageError
    from torqlog.signal import anomaly as an
    from torqlog.signal.cycles import shape_model_from_log

    ref, path = kw.pop("reference"), kw.pop("shape_model")
    off = kw.pop("no_shape_check")
    ao = an.AnomalyOptions(false_alarm=kw.pop("false_alarm"),
                           learn_cycles=kw.pop("learn_cycles"))
    if ref and path:
        raise UsageError("give --reference LOG or --shape-model FILE, not both")
    model = None
    if path:
        model = an.load_model(path)
    elif ref:
        peek = dict(kw)
        profile = load_profile_opt(peek.pop("profile", None))
        read = read_kwargs(peek)
        model = shape_model_from_log(ref, make_cycle_options(peek, profile), ao, **read)
    if off:
        return {"anomaly": False}
    return {"anomaly": ao, "shape_model": model}


def _num(x: Any) -> Any:
    if isinstance(x, float | np.floating):
        return None if math.isnan(x) else float(x)
    if isinstance(x, np.integer | np.bool_):
        return x.item()
    return x


@cli.command("watch")
@click.argument("log", type=click.Path(dir_okay=False))
@cycle_options
@shape_options
@click.option("--format", "fmt", type=click.Choice(["line", "jsonl"]), default="line",
              show_default=True, help="A compact line per cycle, or JSON lines for programs.")
@click.option("--poll", type=float, default=0.5, show_default=True,
              help="Seconds between looks at the file.")
@click.option("--idle-exit", type=float, default=None,
              help="Stop when the file has not grown for this many seconds.")
@click.option("--exit-on-alarm", is_flag=True,
              help="Stop at the first abnormal cycle with exit status 3.")
def watch_cmd(log: str, fmt: str, poll: float, idle_exit: float | None, exit_on_alarm: bool,
              **kw: Any) -> None:
    """Follow LOG while a logger writes it: each cycle's ΔE, Cs and shape check as it
    completes; abnormal cycles print an 'ALARM' line; Ctrl-C prints a summary.

    The file may end in a partial line, pause, or be replaced by a new file (rotation);
    memory stays bounded however long it runs. Cycles appear once the first chunk of
    rows (100 000, as `cycles` reads them: the sample step and noise scales are taken
    from it, so the figures are the same) and, without --reference, the first
    --learn-cycles clean cycles are in; after that, two cycles behind the logger (more
    with a speed cut-off below 6 orders: the filter's look-ahead).
    """
    from torqlog.errors import CheckFailed
    from torqlog.fleet.watch import watch_log
    from torqlog.signal.cycles import COLUMNS

    kw.pop("save_shape_model")
    kw.pop("shape_plot")
    shape = shape_kwargs(log, kw)
    profile = load_profile_opt(kw.pop("profile", None))
    read = read_kwargs(kw)
    opts = make_cycle_options(kw, profile)
    ao = shape.get("anomaly") or None
    state: dict[str, Any] = {"alarm": False, "shown": 0, "first": None}
    out = sys.stdout

    def on_cycles(cols: dict[str, Any]) -> None:
        n = len(cols["cycle"])
        for i in range(n):
            if exit_on_alarm and state["alarm"]:
                break  # stopped at the first alarm: later cycles of the batch are not shown
            state["shown"] += 1
            row = {k: _num(cols[k][i]) for k in COLUMNS if k != "start_time"}
            bad = bool(row["anomaly"])
            if fmt == "jsonl":
                out.write(json.dumps({"type": "cycle", **row}) + "\n")
            else:
                sc = row["anomaly_score"]
                out.write(f"cycle {row['cycle']:>7} t {row['t_start_s']:10.2f} s  "
                          f"ΔE {_g(row['energy_swing_J'], 1e-3)} kJ  Cs {_g(row['cs'])}  "
                          f"shape {'-' if sc is None else f'{sc:.2f}'}"
                          f"{'  ' + row['flag'] if row['flag'] else ''}\n")
            if bad:
                state["alarm"] = True
                state["first"] = state["first"] or {"cycle": row["cycle"],
                                                    "t_start_s": row["t_start_s"]}
                where = cols["anomaly_where"][i] if "anomaly_where" in cols else ""
                msg = f"ALARM cycle {row['cycle']} at t = {row['t_start_s']:.2f} s: abnormal " \
                      f"cycle shape, score {row['anomaly_score']:.2f} (1 = limit)" + \
                      (f": {where}" if where else "")
                out.write((json.dumps({"type": "alarm", "cycle": row["cycle"],
                                       "t_start_s": row["t_start_s"], "text": msg})
                           if fmt == "jsonl" else msg) + "\n")
        out.flush()

    summary = None
    try:
        summary = watch_log(log, on_cycles, opts, anomaly=ao if ao else None,
                            model=shape.get("shape_model"), poll=poll, idle_exit=idle_exit,
                            should_stop=(lambda: state["alarm"]) if exit_on_alarm else None,
                            **read)
    except KeyboardInterrupt:
        pass
    if summary is not None:
        d = summary.to_dict()
        if exit_on_alarm and state["first"]:
            # the summary covers the cycles shown, up to and including the first alarm
            d.update(cycles=state["shown"], abnormal=1, anomaly=None,
                     stopped_at_alarm=state["first"])
        if fmt == "jsonl":
            out.write(json.dumps({"type": "summary", **d}, default=_num) + "\n")
        else:
            sent = (d["anomaly"] or {}).get("summary", "")
            if d.get("stopped_at_alarm"):
                sent = f"stopped at the first alarm (cycle {d['stopped_at_alarm']['cycle']})"
            out.write(f"watched {', '.join(d['files'])}: {d['cycles']} cycles, "
                      f"{d['abnormal']} abnormal; {sent}\n")
    else:
        out.write("stopped\n")
    if exit_on_alarm and state["alarm"]:
        raise CheckFailed("abnormal cycle shape (see the ALARM line)")


def _g(x: Any, scale: float = 1.0) -> str:
    return "-" if x is None else f"{x * scale:.4g}"
