"""clashcheck: find where motor and propeller vibration meets a multirotor frame's resonances.

The library follows one data flow: a build file is validated by
:func:`load_build` (units are checked there, once), the drive model and the
excitation orders turn throttle into frequencies, and :func:`check_build`
returns a :class:`ClashResult` that :mod:`clashcheck.report` formats.

Results are design advice.  Bench and tap tests are done with the propellers
removed; lithium packs are charged and stored under supervision; local
aviation rules and licensed practice come first.
"""

from typing import TYPE_CHECKING

from ._lazy import lazy_getattr
from .errors import ClashcheckError, InputError, OutputError, RecordingError

if TYPE_CHECKING:
    from .build import Build, load_build, load_modes_file
    from .clash import ClashResult, check_build

#: Public names loaded on first use, so that ``import clashcheck.errors`` (or the
#: recording worker) does not pay for the build and clash modules.
_LAZY = {"Build": "build", "load_build": "build", "load_modes_file": "build",
         "ClashResult": "clash", "check_build": "clash"}


__getattr__ = lazy_getattr(__name__, _LAZY, globals())

__all__ = [
    "Build",
    "ClashResult",
    "ClashcheckError",
    "InputError",
    "OutputError",
    "RecordingError",
    "check_build",
    "load_build",
    "load_modes_file",
]

__version__ = "0.1.0"
