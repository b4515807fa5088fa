"""Exceptions and warnings of fieldgrid.

Every failure the command line reports with exit code 2 is raised as :class:`FieldgridError`;
a bad design, placed in its file, as its subclass :class:`DesignError`, which carries the file,
line, column, key and message separately. Options given out of range raise :class:`ValueError`
(the message names the option as the command line does, e.g. ``--tol``), unreadable files
:class:`OSError`.
"""

from __future__ import annotations

__all__ = ["FieldgridError", "DesignError", "NotConvergedWarning"]


class FieldgridError(Exception):
    """A failure of a read, a study or a write, with the command line's message."""


class DesignError(FieldgridError, ValueError):
    """A bad design, placed in its file.

    Attributes:
        file: the file name as given (``"<dict>"`` for a dict, whose lines are those of the
            TOML text made from it: ``Design.text``).
        line: 1-based line, or 0 when the error has no place in the file (a replaced
            parameter the design does not have, for example).
        column: 1-based column in characters (0 with ``line == 0``).
        key: dotted path of the offending key, e.g. ``conductor.rect.x`` (may be empty).
        message: what is wrong, one sentence.
        source_line: the offending line of the file ("" when there is none).

    ``str(error)`` is the command line's full message, with the line quoted and marked.
    """

    def __init__(
        self,
        text: str,
        *,
        file: str = "",
        line: int = 0,
        column: int = 0,
        key: str = "",
        message: str = "",
        source_line: str = "",
    ) -> None:
        super().__init__(text)
        self.file = file
        self.line = line
        self.column = column
        self.key = key
        self.message = message
        self.source_line = source_line


class NotConvergedWarning(UserWarning):
    """A linear solve stopped before meeting its tolerance (the command exits with 3).

    The result is returned all the same, with ``Solution.converged`` false and the reason in
    ``Solution.summary["solver"]["failure"]``; its numbers are not to be trusted.
    """
