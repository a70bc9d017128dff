"""Exception hierarchy of sdmnet.

Every problem with what a user gave us (files, options) is an :class:`InputError`, whose
text is the one line the CLI prints after ``error: ``::

    FILE: WHERE: what is wrong

Anything else that escapes is a bug in sdmnet, not in the input.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["SdmnetError", "InputError", "ConfigurationError", "RunInterrupted"]


class SdmnetError(Exception):
    """Base class of every exception sdmnet raises on purpose."""


class InputError(SdmnetError):
    """A file or option that sdmnet cannot use.

    Parameters
    ----------
    file : str or Path
        The file at fault, or ``"<command line>"`` for an option.
    where : str
        Where in the file: a key path such as ``cables[3].length_km`` or ``line 7``.
    what : str
        What is wrong, in words a user can act on.
    """

    def __init__(self, file: str | Path, where: str, what: str) -> None:
        self.file = str(file)
        self.where = where
        self.what = what
        super().__init__(f"{self.file}: {self.where}: {self.what}")


class ConfigurationError(InputError):
    """A well-formed input describing something that cannot be built.

    Example: independent (per-core) switching on randomly coupled fiber.
    """


class RunInterrupted(SdmnetError):
    """A sweep stopped by SIGINT/SIGTERM; finished tasks are already on disk."""
