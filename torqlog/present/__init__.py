"""Presentation: what a person reads.

Owns the figures (one house style), labels for every output key, and the HTML/PDF
report. May import every package below it (fleet, the design packages, signal, io);
nothing below imports it at module level.
"""
