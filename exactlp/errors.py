"""The one exception tree of exactlp.

Every error the package raises on purpose derives from :class:`ExactLPError`.
Messages are one line and show the offending operand, so that the command
line can print ``str(error)`` and nothing else.

Outcomes of a solve (infeasible, unbounded, a limit reached) are *not*
exceptions: they are values of :class:`exactlp.solver.result.Status`.
"""

from __future__ import annotations

import difflib
from typing import Iterable


class ExactLPError(Exception):
    """Base class of every error raised on purpose by exactlp."""

    exit_code = 4


class InputError(ExactLPError):
    """Bad input: a model, certificate, log or option that cannot be used.

    ``where`` locates the problem: file, line and column (1-based) and the
    dotted field path inside the document.  ``str()`` gives the one-line
    message ``FILE:LINE:COL: FIELD: MESSAGE``.
    """

    exit_code = 2

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        line: int | None = None,
        column: int | None = None,
        field: str | None = None,
    ) -> None:
        self.message = message
        self.file = file
        self.line = line
        self.column = column
        self.field = field
        super().__init__(self.__str__())

    def located(self, **where) -> "InputError":
        """Return a copy with missing location parts filled in from ``where``."""
        values = dict(file=self.file, line=self.line, column=self.column, field=self.field)
        for key, value in where.items():
            if values.get(key) is None:
                values[key] = value
        err = type(self)(self.message, **values)
        return err

    def __str__(self) -> str:
        head = []
        if self.file is not None:
            loc = self.file
            if self.line is not None:
                loc += f":{self.line}"
                if self.column is not None:
                    loc += f":{self.column}"
            head.append(loc)
        if self.field:
            head.append(self.field)
        head.append(self.message)
        return ": ".join(head)


class NumberError(InputError):
    """A number's text is not an exact number we accept."""


class ExpressionError(InputError):
    """A linear expression or constraint formula is malformed."""


class ModelError(InputError):
    """The model document is well formed YAML/MPS but not a valid model."""


class LimitError(InputError):
    """The input exceeds one of the documented resource caps."""


class CertificateError(InputError):
    """A certificate or report file cannot be read as one."""


class OutputError(ExactLPError):
    """An output file cannot be written where asked."""

    exit_code = 2


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """Return `` (did you mean 'x'?)`` for the closest choice, or ``''``."""
    close = difflib.get_close_matches(word, sorted(set(choices)), n=1, cutoff=0.6)
    return f" (did you mean '{close[0]}'?)" if close else ""
