"""Frame modes from recordings: tap tests and flight logs.

Open a recording with :func:`open_recording`, then analyse it with
:func:`analyse_tap` or :func:`analyse_flight`; both return a
:class:`ModesResult`.  :mod:`clashcheck.report.modes` turns a result into a table, JSON or a
``[[frame.modes]]`` fragment for a build file.

Nothing here imports scipy or pandas at import time; the analysis functions
import them when they run.

Tap tests are done with the propellers removed.  Results are design advice.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from .._lazy import lazy_getattr

if TYPE_CHECKING:
    from .flight import FlightSettings, analyse_flight
    from .readers import Columns, Recording, open_recording
    from .result import Dwell, MeasuredMode, ModesResult, OrderStrength
    from .tap import TapSettings, analyse_tap

#: Public names and their modules, loaded on first use: ``from clashcheck.identify
#: import worker`` (which the command line does first) then costs no numpy import.
_LAZY = {
    "FlightSettings": "flight", "analyse_flight": "flight",
    "Columns": "readers", "Recording": "readers", "open_recording": "readers",
    "MeasuredMode": "result", "ModesResult": "result", "OrderStrength": "result",
    "Dwell": "result",
    "TapSettings": "tap", "analyse_tap": "tap",
}


__getattr__ = lazy_getattr(__name__, _LAZY, globals())

__all__ = [
    "Columns",
    "Recording",
    "open_recording",
    "TapSettings",
    "analyse_tap",
    "FlightSettings",
    "analyse_flight",
    "MeasuredMode",
    "OrderStrength",
    "ModesResult",
    "Dwell",
]
