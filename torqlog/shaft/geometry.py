"""Shaft geometry shared by the lateral and the torsional models: cylindrical segments
and the parts the shaft carries.

Both :mod:`torqlog.shaft.lateral` (lateral) and :mod:`torqlog.shaft.torsion` build on these, so they
live in a small module of their own and neither model imports the other for them.

References
----------
.. [1] J. M. Gere and S. P. Timoshenko, *Mechanics of Materials*: second and polar
   moments of area of solid and hollow circular sections.
"""

from __future__ import annotations

import math
from dataclasses import dataclass


# --------------------------------------------------------------------------- inputs
@dataclass(frozen=True)
class ShaftSegment:
    """A cylindrical length of shaft.

    Attributes
    ----------
    length : float [m]
    diameter : float [m]
        Outer diameter.
    bore : float [m]
        Inner diameter of a hollow segment, 0 for solid.
    modulus, density : float or None [Pa], [kg/m^3]
        Per-segment material overriding the model's, None to use the model's.
    """

    length: float
    diameter: float
    bore: float = 0.0
    modulus: float | None = None
    density: float | None = None

    @property
    def area(self) -> float:
        """Cross-section area [m^2]."""
        return math.pi / 4.0 * (self.diameter**2 - self.bore**2)

    @property
    def second_moment(self) -> float:
        """Second moment of area about a diameter, I = pi (d^4 - d_i^4) / 64 [m^4]."""
        return math.pi / 64.0 * (self.diameter**4 - self.bore**4)

    @property
    def polar_moment(self) -> float:
        """Polar second moment of area, J = pi (d^4 - d_i^4) / 32 [m^4]."""
        return math.pi / 32.0 * (self.diameter**4 - self.bore**4)


@dataclass(frozen=True)
class PointMass:
    """A part carried by the shaft (flywheel, gear, pulley, coupling half).

    Attributes
    ----------
    name : str
    mass : float [kg]
    at : float [m]
        Position along the shaft, from x = 0 at the start of the first segment.
    inertia : float [kg*m^2]
        Polar moment of inertia about the shaft axis (0 when unknown). Lateral modes
        use the thin-disc diametral inertia inertia / 2 only when asked
        (``rotary_inertia=True``).
    """

    name: str
    mass: float
    at: float
    inertia: float = 0.0


__all__ = ["PointMass", "ShaftSegment"]
