"""Rotor: the flywheel itself.

Owns flywheel and shaft materials with their sources, rotating-disc stress theory
(uniform, stepped, thin rim), and the flywheel design and checks (burst margin, yield
speed, rim speed, shrink fit). May import :mod:`torqlog.signal`, :mod:`torqlog.io` and
:mod:`torqlog.errors`.
"""
