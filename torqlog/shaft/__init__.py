"""Shaft: the shaft that carries the flywheel, laterally and torsionally.

Owns the beam finite elements, the lateral model (static deflection, Rayleigh,
Dunkerley, FE modes) against 1x and 2x the shaft speed, the torsional chain with its
modes and forced response to the log's orders, shaft strength and drivetrain life. May
import :mod:`torqlog.rotor` (materials, fit pressure), :mod:`torqlog.sizing`,
:mod:`torqlog.signal`, :mod:`torqlog.io` and :mod:`torqlog.errors`.
"""
