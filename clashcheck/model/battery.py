"""Battery packs: chemistry, pack states, open-circuit voltage and resistance.

Per-cell voltages come from the chemistry catalog (``catalogs/batteries.toml``,
common practice; REFERENCES.md §7).  A pack state is where the pack is in its
discharge: ``full``, ``nominal`` or ``empty``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import InputError

__all__ = ["PACK_STATES", "Chemistry", "Pack"]

#: Pack states, from a fresh pack to the end of a flight.
PACK_STATES = ("full", "nominal", "empty")


@dataclass(frozen=True)
class Chemistry:
    """Per-cell voltages of a lithium chemistry."""

    #: Catalog id, e.g. ``"lipo"``.
    id: str
    #: Cell voltage when fully charged [V].
    full_v: float
    #: Nominal cell voltage [V].
    nominal_v: float
    #: Cell voltage under load at the end of a flight [V].
    empty_v: float
    #: Where the figures come from.
    source: str = ""

    def __post_init__(self) -> None:
        if not (0 < self.empty_v < self.nominal_v < self.full_v < 10):
            raise InputError(
                f"chemistry {self.id!r}",
                "cell voltages with 0 < empty < nominal < full",
                (self.empty_v, self.nominal_v, self.full_v),
            )

    def cell_voltage(self, state: str) -> float:
        """Cell voltage [V] at a pack state.

        Parameters
        ----------
        state : str
            Pack state: ``full``, ``nominal`` or ``empty``.

        Returns
        -------
        float
            Cell voltage [V].
        """
        if state == "full":
            return self.full_v
        if state == "nominal":
            return self.nominal_v
        if state == "empty":
            return self.empty_v
        raise InputError("check.pack_states", "one of " + ", ".join(PACK_STATES), state)


@dataclass(frozen=True)
class Pack:
    """A battery pack of ``cells`` cells in series."""

    #: Cells in series (count).
    cells: int
    #: The cell chemistry.
    chemistry: Chemistry
    #: Internal resistance of one cell [ohm]; 0 when not given.
    cell_resistance_ohm: float = 0.0

    def __post_init__(self) -> None:
        if isinstance(self.cells, bool) or not isinstance(self.cells, int) or not 1 <= self.cells <= 24:
            raise InputError("battery.cells", "a whole number of cells from 1 to 24", self.cells)
        if not (math.isfinite(self.cell_resistance_ohm) and self.cell_resistance_ohm >= 0):
            raise InputError(
                "battery.cell_resistance", "a resistance of 0 ohm or more", self.cell_resistance_ohm
            )

    def voltage(self, state: str) -> float:
        """Open-circuit pack voltage [V] at a pack state.

        Parameters
        ----------
        state : str
            Pack state: ``full``, ``nominal`` or ``empty``.

        Returns
        -------
        float
            Open-circuit pack voltage [V].

        Examples
        --------
        >>> lipo = Chemistry("lipo", 4.2, 3.7, 3.5)
        >>> round(Pack(4, lipo).voltage("full"), 3)
        16.8
        """
        return self.cells * self.chemistry.cell_voltage(state)

    @property
    def resistance_ohm(self) -> float:
        """Pack internal resistance [ohm]: cells × cell resistance."""
        return self.cells * self.cell_resistance_ohm
