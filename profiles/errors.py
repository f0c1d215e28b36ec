"""Errors and warnings raised by ``profiles``.

Every error meant for the user carries one line of text that names the file, the row or
column, and what was expected. The command line prints that line as
``profiles: error: ...`` and exits with status 2; nothing else is printed.
"""

from __future__ import annotations


class ProfilesError(Exception):
    """An error the user can act on; its message is one line."""


class InputError(ProfilesError, ValueError):
    """A survey file, column, row or option value that cannot be used."""


class SpacingError(ProfilesError, ValueError):
    """A spacing or length that makes the requested analysis impossible."""


class OutputError(ProfilesError):
    """An output that cannot be written safely (exists, or would overwrite an input)."""


class AliasingWarning(UserWarning):
    """Station spacing too coarse for the wavelengths asked about."""
