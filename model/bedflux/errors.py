"""The one exception type for a user's mistake, and its message template.

Every check of user input (scenario files, field sheets, fit and plan files) raises
:class:`InputError`. The command line turns it into a one-paragraph message and exit status 2;
any other exception is a bug and keeps its traceback.
"""
from __future__ import annotations


class InputError(ValueError):
    """Bad input from a user: names the file, the key or row, and what is allowed.

    Parameters
    ----------
    message
        What is wrong and what is allowed.
    source
        The file (or "scenario" for a dictionary) the value came from.
    where
        The key path (``zone 'bed': kv``) or the row (``row 7``) inside the source.
    """

    def __init__(self, message: str, source: str | None = None, where: str | None = None):
        self.message = message
        self.source = source
        self.where = where
        super().__init__(self.render())

    def render(self) -> str:
        """The message as shown to the user."""
        parts = []
        if self.source:
            parts.append(str(self.source))
        if self.where:
            parts.append(str(self.where))
        prefix = ": ".join(parts)
        return f"{prefix}: {self.message}" if prefix else self.message

    def located(self, source: str | None = None, where: str | None = None) -> "InputError":
        """A copy with the file and/or key filled in where they were unknown."""
        return InputError(self.message, self.source or source, self.where or where)


class SolverError(RuntimeError):
    """A numerical method failed; the message says which and why.

    ``partial`` holds what was computed before the failure when that is worth keeping (the
    outputs of a transient run before a step whose water budget did not close), else None.
    """

    def __init__(self, message: str, partial: object = None):
        super().__init__(message)
        self.partial = partial
