"""Speed ratio (input turns per output turn) of each reducer kind, from its geometry.

- cycloidal, ring fixed, output from the disc through pins in holes:
  ``i = z_c / (N - z_c)`` (``N - 1`` for one lobe fewer than pins);
- planetary, sun in, ring fixed, carrier out (Willis): ``i = 1 + Z_r / Z_s``;
- belt (or any chain of simple stages): the product of ``driven / driver`` teeth.

Both the simulation (:mod:`sim.parts.drivetrain`) and the part checks use these, so a ratio
is computed once from the same numbers.
"""

from __future__ import annotations

import math
from collections.abc import Iterable


def ratio_fixed_ring(ring_pins: int, lobes: int) -> float:
    """Speed ratio input/output with the ring fixed and output from the disc: ``z_c/(N-z_c)``."""
    if lobes >= ring_pins:
        raise ValueError("lobes must be fewer than ring pins")
    return lobes / (ring_pins - lobes)


def planetary_ratio(sun_teeth: int, ring_teeth: int) -> float:
    """Input/output speed ratio, sun in, ring fixed, carrier out: ``1 + Z_r/Z_s``."""
    return 1.0 + ring_teeth / sun_teeth


def stage_chain_ratio(stages: Iterable[tuple[int, int]]) -> float:
    """Product of ``driven / driver`` over ``(driver_teeth, driven_teeth)`` stages."""
    return math.prod(driven / driver for driver, driven in stages)
