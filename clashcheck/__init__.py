"""clashcheck: find where motor and propeller vibration meets a multirotor frame's resonances.

The library follows one data flow: a build file is validated by
:func:`load_build` (units are checked there, once), the drive model and the
excitation orders turn throttle into frequencies, and :func:`check_build`
returns a :class:`ClashResult` that :mod:`clashcheck.report` formats.

Results are design advice.  Bench and tap tests are done with the propellers
removed; lithium packs are charged and stored under supervision; local
aviation rules and licensed practice come first.
"""

from .build import Build, load_build, load_modes_file
from .clash import ClashResult, check_build
from .errors import ClashcheckError, InputError, OutputError, RecordingError

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
