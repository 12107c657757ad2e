"""Frame modes from recordings: tap tests and flight logs.

Open a recording with :func:`open_recording`, then analyse it with
:func:`analyse_tap` or :func:`analyse_flight`; both return a
:class:`ModesResult`.  :mod:`.output` turns a result into a table, JSON or a
``[[frame.modes]]`` fragment for a build file.

Nothing here imports scipy or pandas at import time; the analysis functions
import them when they run.

Tap tests are done with the propellers removed.  Results are design advice.
"""

from __future__ import annotations

from .flight import FlightSettings, analyse_flight
from .readers import Columns, Recording, open_recording
from .result import MeasuredMode, ModesResult, OrderStrength
from .tap import TapSettings, analyse_tap

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
]
