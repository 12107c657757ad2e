"""clashcheck: find where motor and propeller vibration meets a multirotor frame's resonances.

The library follows one data flow: a build file is validated by
:func:`load_build` (units are checked there, once), the drive model and the
excitation orders turn throttle into frequencies, and :func:`check_build`
returns a :class:`ClashResult` that :mod:`clashcheck.report.check` formats.

The subpackages are layers, each importing only from those below it:
``model`` (plain SI physics) < ``inputs`` (text and catalogs, units checked
once) < ``identify`` (recordings to modes) < ``analysis`` (windows, verdicts,
comparisons) < ``report`` (tables, JSON, figures) < ``cli``.

Results are design advice.  Bench and tap tests are done with the propellers
removed; lithium packs are charged and stored under supervision; local
aviation rules and licensed practice come first.
"""

from typing import TYPE_CHECKING

from ._lazy import lazy_getattr
from .errors import ClashcheckError, InputError, OutputError, RecordingError

if TYPE_CHECKING:
    from .analysis.clash import ClashResult, check_build
    from .inputs.buildfile import load_build, load_modes_file
    from .model.build import Build

#: Public names loaded on first use, so that ``import clashcheck.errors`` (or the
#: recording worker) does not pay for the build and clash modules.
_LAZY = {"Build": "model.build", "load_build": "inputs.buildfile", "load_modes_file": "inputs.buildfile",
         "ClashResult": "analysis.clash", "check_build": "analysis.clash"}


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
