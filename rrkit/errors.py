"""Exceptions and warnings raised by rrkit.

Every message says *what* was wrong, *where* (file and line when a file is involved), *what was
expected*, and, where it helps, a hint. The exceptions subclass the builtins a user already
catches, so ``except ValueError`` keeps working.
"""

from __future__ import annotations

from os import PathLike

__all__ = ["ERROR_COLUMNS", "InputError", "QualityWarning", "RrkitWarning"]

#: The columns of every ``errors.csv`` rrkit writes (one row per file that could not be used):
#: the file, the kind of error (the exception's class name, or a name such as
#: ``UnplacedFile``) and the one-line message.
ERROR_COLUMNS = ("path", "error_type", "message")


class InputError(ValueError):
    """A file or an argument that rrkit cannot use as it is.

    Parameters
    ----------
    message : str
        What was found and what was expected.
    path : str or path-like, optional
        The file the problem is in.
    line : int, optional
        1-based line number in that file.
    hint : str, optional
        What the user can do about it ("pass unit='s'").

    Attributes
    ----------
    path, line, hint, message
        As given; ``str(error)`` joins them into one readable line.

    Examples
    --------
    >>> err = InputError("found 'abc', expected a number", path="rr.txt", line=4)
    >>> str(err)
    "rr.txt, line 4: found 'abc', expected a number"
    """

    def __init__(
        self,
        message: str,
        *,
        path: str | PathLike[str] | None = None,
        line: int | None = None,
        hint: str | None = None,
    ) -> None:
        self.message = message
        self.path = None if path is None else str(path)
        self.line = line
        self.hint = hint
        super().__init__(self._render())

    def _render(self) -> str:
        where = ""
        if self.path is not None:
            where = self.path
            if self.line is not None:
                where += f", line {self.line}"
            where += ": "
        elif self.line is not None:
            where = f"line {self.line}: "
        text = where + self.message
        if self.hint:
            text += f" ({self.hint})"
        return text

    def __reduce__(self):
        # keep keyword-only attributes through pickling (process pools send errors back)
        return (_rebuild_input_error, (self.message, self.path, self.line, self.hint))


def _rebuild_input_error(message, path, line, hint):
    return InputError(message, path=path, line=line, hint=hint)


class RrkitWarning(UserWarning):
    """Base class of rrkit's warnings (a value was adjusted, a result is less reliable)."""


class QualityWarning(RrkitWarning):
    """The data are usable but of doubtful quality (weak detection, many corrections)."""
