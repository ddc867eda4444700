"""Domain errors of specforce.

Every error names the file, line, field or argument at fault and says what
was expected, so that a user can fix the input without reading the code.
All subclass :class:`ValueError` (or :class:`OSError` for files) so that
generic handlers keep working; the exceptions are the errors of specforce itself
(:class:`InternalError`, and the adjustment's non-convergence), which subclass
:class:`RuntimeError`.
"""


class SpecforceError(Exception):
    """Base class of all specforce errors."""


class LineRecordError(SpecforceError, ValueError):
    """A line record (160-character format) could not be read.

    Attributes
    ----------
    path : str
        File that holds the record.
    line : int
        1-based line number in that file (after decompression).
    field : str
        Name of the offending field, or ``"record"`` for a wrong length.
    raw : str
        The raw text of the field (or of the whole record).
    """

    def __init__(self, message, *, path="", line=0, field="", raw=""):
        super().__init__(message)
        self.path = str(path)
        self.line = int(line)
        self.field = field
        self.raw = raw


class LineStoreError(SpecforceError, ValueError):
    """An HDF5 line store is missing, damaged or of an unknown layout."""


class MoleculeError(SpecforceError, ValueError):
    """An unknown molecule or isotopologue was asked for."""


class ProfileError(SpecforceError, ValueError):
    """An atmospheric profile failed validation."""


class FormulaError(SpecforceError, ValueError):
    """A published forcing formula or a refit was given inputs outside its domain."""


class OutputPathError(SpecforceError, OSError):
    """An output file cannot be written where the user asked (checked before computing)."""


class ComparisonError(SpecforceError, ValueError):
    """Two states cannot be compared as asked (different bins, bad band edges)."""


class ResultFileError(SpecforceError, ValueError):
    """A file given as a saved result is not one (or is damaged)."""


class ScenarioError(SpecforceError, ValueError):
    """A change or scenario file is malformed or contradicts itself."""


class ContinuumTableError(SpecforceError, ValueError):
    """A continuum table from the user is malformed or implausible."""


class SettingsError(SpecforceError, ValueError):
    """A calculation setting or option is outside its valid range."""


class InternalError(SpecforceError, RuntimeError):
    """specforce computed something physically impossible (a bug or corrupt input data, never a result).

    Raised, for example, when a flux exceeds the blackbody emission of the warmest
    level over the computed range; the message gives the numbers. Please report it
    with the command or script that produced it.
    """


class SpecforceWarning(UserWarning):
    """Base class of specforce's warnings (the command line prints them as one line each)."""


class ProfileWarning(SpecforceWarning):
    """A profile is valid but unusual (e.g. water vapour mildly above saturation)."""


class CoverageWarning(SpecforceWarning):
    """Imported line data cover only part of what the calculation needs; built-in lines fill in."""
