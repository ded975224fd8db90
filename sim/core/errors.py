"""Error hierarchy.

Every error a user can cause derives from :class:`GaitloadError`. Input errors are also
``ValueError`` and carry the file, the key and what was expected, so a message can name all
three. All errors pickle cleanly (they cross process pools in sweeps).
"""

from __future__ import annotations


class GaitloadError(Exception):
    """Base class of every error raised on purpose by gaitload."""

    exit_code = 1


class InputError(GaitloadError, ValueError):
    """A file, key, type, unit or value that cannot be accepted (exit code 2)."""

    exit_code = 2

    def __init__(self, file: str | None, key: str | None, expected: str, got: object = None):
        self.file = None if file is None else str(file)
        self.key = key
        self.expected = expected
        self.got = got
        super().__init__(file, key, expected, got)

    def __str__(self) -> str:
        where = self.file or "<input>"
        if self.key:
            where += f": key '{self.key}'"
        msg = f"{where}: expected {self.expected}"
        if self.got is not None:
            msg += f", got {self.got!r}"
        return msg

    def __reduce__(self):  # keep pickling explicit for clarity across processes
        return (type(self), (self.file, self.key, self.expected, self.got))


class RecordError(InputError):
    """A run record that cannot be read or used (wrong format version, failed run, ...)."""


class SimulationFailure(GaitloadError):
    """The simulated robot fell or diverged; the record is kept with that status (exit 3)."""

    exit_code = 3

    def __init__(self, status: str, detail: str, record: str | None = None):
        self.status = status
        self.detail = detail
        self.record = record
        super().__init__(status, detail, record)

    def __str__(self) -> str:
        return f"run {self.status}: {self.detail}"

    def __reduce__(self):
        return (type(self), (self.status, self.detail, self.record))


class Interrupted(KeyboardInterrupt):
    """Ctrl-C or SIGTERM stopped a command (exit code 130); ``detail`` says what was kept and
    where (an interrupted run's partial record, say). A ``KeyboardInterrupt``, so code that
    cleans up on Ctrl-C cleans up on it too."""

    exit_code = 130

    def __init__(self, detail: str = ""):
        self.detail = detail
        super().__init__(detail)

    def __reduce__(self):
        return (type(self), (self.detail,))
