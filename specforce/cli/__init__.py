"""The ``specforce`` command line, thin over the API (:mod:`specforce.api`, :mod:`specforce.api_lines`,
:mod:`specforce.batch`). Takes command-line arguments; gives printed text or JSON, and result files.

User mistakes (domain errors, :class:`specforce.errors.SpecforceError`, and file
errors, :class:`OSError`) end in a one-line message; anything else is a bug and
shows its traceback. Output paths are checked before any computation, and an output
that is one of the command's input files is refused.

The commands live in submodules by subject (:mod:`.lines`, :mod:`.compute`,
:mod:`.batch`); :mod:`.common` holds the group and what the commands share.
"""

from .common import main
from . import batch
from . import compute
from . import ktables  # noqa: F401
from . import lines  # noqa: E402,F401  (registers the commands)

__all__ = ["main"]
