"""Sizing: how much inertia a retrofit needs, from the machine as measured.

Owns the identification of the existing inertia and the drive from the log, the drive
model (induction motor, linear slip), its validation against the measured Cs, the
required and added inertia with its interval, and the motor before and after. May import
:mod:`torqlog.signal`, :mod:`torqlog.io` and :mod:`torqlog.errors`.
"""
