"""The project's exception family.

Every error a user can cause derives from :class:`WinderError`. The CLI turns
these into one line on stderr and exit code 2; anything else is a bug.
"""

from __future__ import annotations


class WinderError(Exception):
    """Base of every error winder raises on purpose."""

    exit_code = 2


class InputError(WinderError):
    """Bad user input: a profile value, a command-line option, a typed entry.

    ``where`` names the file (or ``--option``/field), ``key`` the key inside it;
    the message says what was expected. ``str()`` is one line.
    """

    def __init__(self, message: str, *, where: str | None = None, key: str | None = None):
        self.message = message
        self.where = where
        self.key = key
        super().__init__(str(self))

    def __str__(self) -> str:  # one line, file and key first
        parts = [p for p in (self.where, self.key) if p]
        head = ": ".join(parts)
        text = f"{head}: {self.message}" if head else self.message
        return " ".join(text.split())

    def located(self, where: str | None = None, key: str | None = None) -> InputError:
        """A copy with the location filled in where it was missing."""
        return InputError(self.message, where=self.where or where, key=self.key or key)
