"""The project's exceptions.

Every error a user can cause is an :class:`InputError` naming the file (or option), the
field and what is allowed. The CLI prints it as one line and exits with status 2.
"""

from __future__ import annotations


class VascplanError(Exception):
    """Base of every error vascplan reports to a user (exit status 2)."""


class InputError(VascplanError):
    """A mistake in a file or an option.

    Parameters
    ----------
    source : str
        The file name, or ``--option`` for a command-line value.
    field : str
        Dotted field path inside the file (``lesions.0.start_cm``); empty when the
        whole file is wrong (not UTF-8, empty, too large).
    message : str
        What is wrong and what is allowed.
    """

    def __init__(self, source: str, field: str, message: str) -> None:
        self.source = str(source)
        self.field = field
        self.message = message
        super().__init__(str(self))

    def __str__(self) -> str:
        where = f"{self.source}: {self.field}" if self.field else self.source
        # One line whatever user text the message quotes (a CSV cell holding a newline).
        return f"{where}: {self.message}".replace("\r", "\\r").replace("\n", "\\n")


class StoreError(VascplanError):
    """The observation store could not be opened or written."""
