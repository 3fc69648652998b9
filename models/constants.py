"""Physical constants and unit conversions used by every kernel (SI units).

`G` is standard gravity (CGPM 1901, 9.80665 m/s²). Kernels take `g=` as a keyword so a check
value computed with another g (many handbooks use 9.81) can be reproduced exactly.
"""

from __future__ import annotations

import math

G = 9.80665  # standard gravity [m/s²]
RHO_SEAWATER = 1025.0  # typical sea-water density [kg/m³]
TWO_PI = 2.0 * math.pi
DEG = math.pi / 180.0  # radians per degree
FOOT = 0.3048  # metres per international foot
KNOT = 1852.0 / 3600.0  # metres per second per knot

__all__ = ["DEG", "FOOT", "G", "KNOT", "RHO_SEAWATER", "TWO_PI"]
