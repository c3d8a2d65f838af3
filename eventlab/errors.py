"""The exception family of eventlab.

Every error that bad input can cause derives from :class:`EventlabError` and
carries a one-line message that names the file, the line or field, and what
was expected.  The command line turns any of them into that one line on
stderr and exit status 2.
"""

from __future__ import annotations


class EventlabError(Exception):
    """Base of every error eventlab raises on purpose."""


class RecordFormatError(EventlabError, ValueError):
    """A COMTRADE file does not follow IEEE C37.111.

    Parameters
    ----------
    message : str
        What was found and what was expected.
    path : str, optional
        The file concerned.
    line : int, optional
        1-based line number in a text file (or sample row of a data file).
    field : str, optional
        The field name as C37.111 spells it (``nrates``, ``samp``, ``a`` ...).
    """

    def __init__(self, message: str, *, path: str | None = None,
                 line: int | None = None, field: str | None = None) -> None:
        self.path = path
        self.line = line
        self.field = field
        self.detail = message
        where = []
        if path is not None:
            where.append(str(path))
        if line is not None:
            where.append(f"line {line}")
        if field is not None:
            where.append(f"field {field}")
        prefix = ", ".join(where)
        super().__init__(f"{prefix}: {message}" if prefix else message)


class ChannelMapError(EventlabError, ValueError):
    """A record's channels cannot be mapped to the quantities of a terminal."""


class SignalError(EventlabError, ValueError):
    """Signals too short, too few samples per cycle, or otherwise unusable."""


class ModelError(EventlabError, ValueError):
    """A network model file is invalid or a request does not fit the model."""


class FitDidNotConverge(EventlabError, RuntimeError):
    """A model-matched solve did not converge."""
