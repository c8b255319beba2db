"""Fleet: many logs of one or many machines over time.

Owns discovery of log files and the per-file worker (process pool, Dask), the shift
calendar, control-chart statistics, per-shift trends with drift, and the live watch.
May import the design packages (:mod:`torqlog.sizing`, :mod:`torqlog.rotor`,
:mod:`torqlog.shaft`), :mod:`torqlog.signal`, :mod:`torqlog.io` and :mod:`torqlog.errors`.
"""
