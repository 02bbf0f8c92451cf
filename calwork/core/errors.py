"""One exception tree for calwork.

Every error is a :class:`CalworkError` and also the builtin a caller would catch
(``ValueError``, ``OSError``, ...). Errors carry structured fields (``path``, ``line``,
``column``, ``run``, ``found``, ``expected``) and render them with one template::

    runs.csv:14: column 'mass_g': must be a positive number (expected a number > 0; got '0,98 g')

The CLI prints ``str(error)`` on one line and exits with status 2.
"""

from __future__ import annotations

from collections.abc import Iterable
from pathlib import Path
from typing import Any

__all__ = [
    "AmbiguousColumnError",
    "BalanceError",
    "CalibrationError",
    "CalworkError",
    "ChoiceError",
    "ColumnError",
    "CombinationError",
    "DataFileError",
    "DuplicateRunError",
    "EquationError",
    "ExportError",
    "FitError",
    "FormulaError",
    "InputFileError",
    "LabbookBusyError",
    "LabbookError",
    "LabbookFormatError",
    "LabbookIntegrityError",
    "LogFormatError",
    "LogPathError",
    "NetworkError",
    "PeriodDetectionError",
    "RunError",
    "SensorRangeError",
    "SheetError",
    "SimulationError",
    "TimeAxisError",
    "UncertaintyError",
    "UnitError",
    "ValueCellError",
    "check_choice",
]

_MISSING: Any = object()


class CalworkError(Exception):
    """Root of every error raised by calwork.

    Parameters
    ----------
    message
        What is wrong, in words (without the location).
    path
        File the problem is in, if any.
    line
        1-based line (text files) or row (spreadsheets) number.
    column
        Column (field) name.
    run
        Run id from a run sheet.
    found
        The offending value as read (rendered with ``repr``).
    expected
        What would have been accepted, in words.
    """

    def __init__(
        self,
        message: str,
        *,
        path: str | Path | None = None,
        line: int | None = None,
        column: str | None = None,
        run: str | None = None,
        found: Any = _MISSING,
        expected: str | None = None,
        **extra: Any,
    ) -> None:
        self.message = message
        self.path = str(path) if path is not None else None
        self.line = line
        self.column = column
        self.run = run
        self.found = None if found is _MISSING else found
        self._has_found = found is not _MISSING
        self.expected = expected
        self.extra = extra
        for key, value in extra.items():
            setattr(self, key, value)
        super().__init__(self._render())

    def _render(self) -> str:
        where = []
        if self.path is not None:
            where.append(self.path if self.line is None else f"{self.path}:{self.line}")
        elif self.line is not None:
            where.append(f"line {self.line}")
        if self.run is not None:
            where.append(f"run {self.run!r}")
        if self.column is not None:
            where.append(f"column {self.column!r}")
        text = (": ".join(where) + ": " if where else "") + self.message
        tail = []
        if self.expected is not None:
            tail.append(f"expected {self.expected}")
        if self._has_found:
            tail.append(f"got {self.found!r}")
        if tail:
            text += " (" + "; ".join(tail) + ")"
        return text

    def __str__(self) -> str:
        return self._render()

    def _fields(self) -> dict[str, Any]:
        """The structured fields, as keyword arguments of the constructor."""
        kwargs = {"path": self.path, "line": self.line, "column": self.column, "run": self.run,
                  "expected": self.expected, **self.extra}
        if self._has_found:
            kwargs["found"] = self.found
        return kwargs

    def __reduce__(self):  # picklable with all structured fields
        return (_rebuild, (type(self), self.message, self._fields()))

    def with_context(self, **fields: Any) -> CalworkError:
        """Return a copy of this error with location fields filled in where missing."""
        kwargs = self._fields()
        for key, value in fields.items():
            if kwargs.get(key) is None:
                kwargs[key] = value
        return type(self)(self.message, **kwargs)


def _rebuild(cls: type[CalworkError], message: str, kwargs: dict[str, Any]) -> CalworkError:
    return cls(message, **kwargs)


# --- input files ----------------------------------------------------------------------------
class InputFileError(CalworkError, OSError):
    """A file is missing, unreadable, or not in a readable encoding."""


class LogFormatError(CalworkError, ValueError):
    """A temperature log has no recognisable structure (header, columns, enough points)."""


class ColumnError(LogFormatError):
    """A required column is missing or a named column does not exist."""


class AmbiguousColumnError(ColumnError):
    """Several columns could be the one wanted; carries ``candidates``."""


class ValueCellError(CalworkError, ValueError):
    """A numeric cell holds text, a blank or NaN."""


class TimeAxisError(LogFormatError):
    """Times are not strictly increasing (duplicated or out of order)."""


class UnitError(CalworkError, ValueError):
    """A unit could not be parsed or is not the kind of unit expected."""


class SensorRangeError(CalworkError, ValueError):
    """A reading is outside the plausible range for the sensor or the calorimeter."""


class SheetError(CalworkError, ValueError):
    """A run sheet is malformed."""


class DuplicateRunError(SheetError):
    """Two rows of a run sheet have the same run id."""


class LogPathError(SheetError):
    """A run sheet's ``log`` path escapes the sheet's folder or does not exist."""


class DataFileError(CalworkError, ValueError):
    """A bundled or user data file (constants, certificates) is malformed."""


class ChoiceError(CalworkError, ValueError):
    """A string option is not one of the registered choices."""


# --- physics and numerics -------------------------------------------------------------------
class PeriodDetectionError(CalworkError, ValueError):
    """Fore, main or after period cannot be located in a thermogram."""


class MultipleEventsError(PeriodDetectionError):
    """A log holds several heat events and nothing says which one to reduce."""


class FitError(CalworkError, RuntimeError):
    """A least-squares fit did not converge or gave no usable covariance."""


class ConvergenceError(FitError):
    """An iterative solver did not converge within its iteration limit."""


class UncertaintyError(CalworkError, ArithmeticError):
    """An uncertainty could not be propagated (never reported as zero instead)."""


class SimulationError(CalworkError, ValueError):
    """Simulator parameters are not physical."""


class FormulaError(CalworkError, ValueError):
    """A chemical formula or species does not parse."""


class EquationError(CalworkError, ValueError):
    """A reaction equation does not parse."""


class BalanceError(EquationError):
    """A reaction is not balanced in elements or charge; carries ``imbalance``."""


class NetworkError(CalworkError, ValueError):
    """A thermochemical network is malformed or cannot be solved."""


class CombinationError(NetworkError):
    """A target reaction is not a (unique) combination of the given reactions."""


class CalibrationError(CalworkError, ValueError):
    """A calibration is missing or unusable for a run."""


class RunError(CalworkError, ValueError):
    """A run's data are inconsistent (names the run and the column)."""


# --- lab book and export --------------------------------------------------------------------
class LabbookError(CalworkError, OSError):
    """The lab book cannot be opened, read or written."""


class LabbookBusyError(LabbookError):
    """Another process holds the lab book; retry."""


class LabbookFormatError(LabbookError):
    """A file is not a calwork lab book (corrupt, foreign or too new)."""


class LabbookIntegrityError(LabbookError):
    """The audit hash chain or a stored blob does not verify."""


class ExportError(CalworkError, OSError):
    """A report or workbook cannot be written."""


def check_choice(name: str, value: str, choices: Iterable[str]) -> str:
    """Return ``value`` if it is one of ``choices``, else raise :class:`ChoiceError`.

    Examples
    --------
    >>> check_choice("method", "dickinson", ["dickinson", "newton-fit"])
    'dickinson'
    """
    valid = sorted(choices)
    if value not in valid:
        raise ChoiceError(f"{name} must be one of {valid}", found=value)
    return value
