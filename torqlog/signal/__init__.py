"""Signal: a log's samples to cycles in the angle domain and per-cycle figures.

Owns conditioning (gaps, spikes, clipped and frozen runs, filtering), the shaft angle,
the cycle split and the streaming cycle engine, per-cycle energy swing and Cs, the mean
cycle, the order spectrum, channel health and what is in a log (``inspect``). May import
:mod:`torqlog.io` and :mod:`torqlog.errors`; never the design, fleet or presentation
packages (a figure is drawn by a lazy import inside a result's ``plot``).
"""
