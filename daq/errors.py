"""The project's exception tree: one root, branches by what the caller does.

Foreign exceptions (``VisaIOError``, ``SerialException``, ``sqlite3.Error``)
are translated once, at the boundary where they arise, with ``raise … from``.
"""

from __future__ import annotations

__all__ = [
    "SoaklogError",
    "ConfigError",
    "InputError",
    "InstrumentError",
    "InstrumentTimeout",
    "ConnectionLost",
    "CalibrationError",
    "StorageError",
]


class SoaklogError(Exception):
    """Root of every error soaklog raises on purpose."""

    #: exit status the CLI uses for this error (2 bad input, 1 runtime)
    exit_code: int = 1


class ConfigError(SoaklogError, ValueError):
    """A configuration problem, located by file and key."""

    exit_code = 2

    def __init__(self, problem: str, *, file: str | None = None, key: str | None = None) -> None:
        self.problem = problem
        self.file = file
        self.key = key
        where = ": ".join(p for p in (file, key) if p)
        super().__init__(f"{where}: {problem}" if where else problem)


class InputError(SoaklogError, ValueError):
    """A value given by the user (command line, API call) that cannot be used."""

    exit_code = 2


class CalibrationError(InputError):
    """A calibration fit that cannot be made from the points given."""


class InstrumentError(SoaklogError):
    """An instrument did not do what was asked."""

    def __init__(
        self,
        message: str,
        *,
        resource: str | None = None,
        command: str | None = None,
        scpi_code: int | None = None,
    ) -> None:
        self.resource = resource
        self.command = command
        self.scpi_code = scpi_code
        super().__init__(message)


class InstrumentTimeout(InstrumentError, TimeoutError):
    """No answer within the time limit."""


class ConnectionLost(InstrumentError):
    """The link to the instrument is gone (closed socket, vanished port)."""


class StorageError(SoaklogError):
    """The database could not be written or read."""
