"""The exceptions mettle raises.

Every error of the library arrives as one of these classes, with the message
the command line prints after ``mettle: error:`` (file or source name, row and
column included). Each class also derives from the built-in exception it
refines, so ``except ValueError`` keeps working in code that expects it.
"""


class MettleError(Exception):
    """Base class of every mettle error."""


class DataError(MettleError, ValueError):
    """The data cannot be used: a missing or unknown column, a bad or empty
    cell, too few rows, a constant target, a value the model cannot take."""


class FileReadError(DataError, OSError):
    """A file (table, schema, model, cost file) could not be opened or read."""


class FileWriteError(MettleError, OSError):
    """A file could not be written. Files are written atomically: an older
    file under the same name is left intact, and no partial file remains."""


class SchemaError(MettleError, ValueError):
    """A schema file is malformed or inconsistent."""


class SettingsError(MettleError, ValueError):
    """A training setting is outside its valid range, or settings conflict."""


class TrainingError(MettleError, RuntimeError):
    """Every candidate network failed to train."""


class ModelError(MettleError, ValueError):
    """A model file is corrupt, truncated, not a mettle model, or written by a
    newer mettle."""


class RequirementError(MettleError, ValueError):
    """A requirement (``"uts_mpa>=620"``) cannot be understood or used."""


class CostsError(MettleError, ValueError):
    """A cost-and-limits file is malformed or inconsistent."""


__all__ = [
    "MettleError",
    "DataError",
    "FileReadError",
    "FileWriteError",
    "SchemaError",
    "SettingsError",
    "TrainingError",
    "ModelError",
    "RequirementError",
    "CostsError",
]
