"""What a consultant's comparison of options assumes beyond the design itself.

Traffic headway, the number of bays to empty through the helix, the standard bay and
aisle used to price the plot the helix takes, and the parapet above the top deck.
Every default carries its source; ``comparison:`` in the project file overrides them
(:func:`helix.project._comparison`).
"""
from __future__ import annotations

from dataclasses import dataclass

from .errors import finite, require

__all__ = ["ComparisonAssumptions", "HEADWAY_SOURCE", "BAY_SOURCE", "AISLE_SOURCE", "PARAPET_SOURCE",
           "BAYS_TO_EMPTY_SOURCE"]

#: 3600 s / 1900 veh/h: the base saturation flow of a lane of queued passenger cars.
HEADWAY_SOURCE = ("Highway Capacity Manual (TRB, 2010), base saturation flow rate 1,900 pc/h/ln "
                  "(a queued stream moving steadily; an upper bound for a ramp lane); from memory; verify")
BAY_SOURCE = ("IStructE, Design recommendations for multi-storey and underground car parks, 4th ed. "
              "(2011): standard bay 2.4 m x 4.8 m; from memory; verify")
AISLE_SOURCE = ("IStructE, Design recommendations for multi-storey and underground car parks, 4th ed. "
                "(2011): 6.0 m aisle for 90-degree bays; from memory; verify")
PARAPET_SOURCE = ("common practice, no single source: a 1.1 m edge barrier above the top deck "
                  "(vehicle barriers in car parks are commonly about 1.1 m high)")
BAYS_TO_EMPTY_SOURCE = "a round example figure, not a source: state the bays the helix serves"


@dataclass(frozen=True)
class ComparisonAssumptions:
    """Inputs of the comparison of options (SI: seconds, metres).

    ``headway`` is the time between successive vehicles passing a point of one lane in
    a steady queue; ``bay_width`` x ``bay_length`` the standard bay and ``aisle_width``
    the aisle shared by the bays on its two sides (each bay takes half of it).
    """

    headway: float = 3600.0 / 1900.0
    bays_to_empty: int = 500
    bay_width: float = 2.4
    bay_length: float = 4.8
    aisle_width: float = 6.0
    parapet_height: float = 1.1
    headway_source: str = HEADWAY_SOURCE
    bays_source: str = BAYS_TO_EMPTY_SOURCE
    bay_source: str = BAY_SOURCE
    aisle_source: str = AISLE_SOURCE
    parapet_source: str = PARAPET_SOURCE

    def __post_init__(self):
        require(finite(self.headway, 0.1, 60.0), self, "headway", self.headway, "a headway of 0.1 to 60 seconds")
        require(isinstance(self.bays_to_empty, int) and 0 <= self.bays_to_empty <= 1_000_000, self,
                "bays_to_empty", self.bays_to_empty, "a whole number of bays from 0 to 1000000")
        for key in ("bay_width", "bay_length"):
            require(finite(getattr(self, key), 0.5, 30.0), self, key, getattr(self, key), "a length of 0.5 to 30 m")
        for key in ("aisle_width", "parapet_height"):
            require(finite(getattr(self, key), 0.0, 30.0), self, key, getattr(self, key), "a length of 0 to 30 m")

    @property
    def area_per_bay(self) -> float:
        """Plan area one bay takes with its share of the aisle: ``w (l + a / 2)``."""
        return self.bay_width * (self.bay_length + 0.5 * self.aisle_width)
