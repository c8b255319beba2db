"""Reading: logger exports in, SI arrays out.

Owns the file layout sniffing (dialect, preamble, header, unit row, channel roles), the
streaming readers that turn a log into SI chunks and whole-log records, the unit layer
(pint; the only place units are converted) and the machine profile (TOML). May import
only :mod:`torqlog.errors` and third-party libraries: it is the bottom of the flow.
"""
