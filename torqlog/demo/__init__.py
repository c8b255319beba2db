"""Demo: the invented Brindlemoor Works machines and their synthetic logs.

Owns the drive and load models of the demo machines, the simulator that writes their
logs, and the ``torqlog demo`` run. May import every library package (it sits just
below the command line); no library package imports it.
"""
