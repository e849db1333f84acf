"""The error a measurement file reader raises: the file's name, the line to blame (if one is), and what is wrong."""

from collections.abc import Callable
from functools import partial
from typing import Self


class FileError(ValueError):
    """str() gives 'NAME:LINE: message', or 'NAME: message' when no single line is to blame."""

    def __init__(self, message: str, *, source: str, line: int | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.source = source
        self.line = line

    def __str__(self) -> str:
        if self.line is None:
            return f"{self.source}: {self.message}"
        return f"{self.source}:{self.line}: {self.message}"

    def __reduce__(self) -> tuple[Callable[[str], Self], tuple[str]]:
        # Keyword-only arguments need help to survive pickling (Django's cache, multiprocessing).
        return (partial(type(self), source=self.source, line=self.line), (self.message,))
