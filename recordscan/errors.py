"""Error and warning types of recordscan.

Every error the tool raises on purpose derives from :class:`RecordScanError` and from the
builtin exception a Python programmer would expect (``ValueError`` for bad data, ``OSError``
for missing files…). The command line maps :class:`RecordScanError` to exit code 2 with a
one-line message; anything else is a defect.
"""

from __future__ import annotations


class RecordScanError(Exception):
    """Base class of all deliberate recordscan errors."""


class FormatError(RecordScanError, ValueError):
    """A file is not a valid record of the format it claims (COMTRADE, TOML…).

    The message names the file and what is wrong with it.
    """


class MissingFileError(RecordScanError, FileNotFoundError):
    """A file the record or description needs is not there."""


class RoleError(RecordScanError, ValueError):
    """Channel roles are missing or ambiguous; the message says how to write a profile."""


class DetectionError(RecordScanError, ValueError):
    """A detector cannot evaluate the record (not: "found nothing", which is an empty result)."""


class FitError(RecordScanError, RuntimeError):
    """An arc-parameter fit cannot be set up (a non-converged fit is a result, not an error)."""


class ModelError(RecordScanError, ValueError):
    """A physical model or scenario description is inconsistent or out of its valid range."""


class StoreError(RecordScanError, RuntimeError):
    """The arc-parameter database cannot be opened, migrated or written."""


class RecordScanWarning(UserWarning):
    """Base category of recordscan warnings."""


class FormatWarning(RecordScanWarning):
    """A record deviates from the standard in a way the reader could tolerate."""


class FitWarning(RecordScanWarning):
    """A fit did not converge or a parameter is implausible."""


class DetectionWarning(RecordScanWarning):
    """A detector worked on degraded evidence."""
