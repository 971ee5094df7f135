"""The exception and warning tree of gravplan.

Every error a user can cause is a :class:`PlannerError`; the command line turns it
into a message and a non-zero exit without a traceback.  Warnings are ordinary
``UserWarning`` subclasses so that callers can filter them.
"""

from __future__ import annotations


class PlannerError(Exception):
    """Base class of every error gravplan raises on purpose."""


class InputError(PlannerError, ValueError):
    """A value given by the user is invalid (scenario key, argument, option)."""


class InputFileError(PlannerError, OSError):
    """A file given by the user is missing, unreadable or malformed."""


class OutputError(PlannerError, OSError):
    """The output folder cannot take a new result set (busy, not gravplan's, unwritable)."""


class TerrainError(PlannerError, ValueError):
    """The route and the DEM do not fit: off the raster, long voids, bad CRS."""


class DesignError(PlannerError):
    """The requested design is impossible as stated (no water reaches a point)."""


class ConvergenceError(PlannerError, RuntimeError):
    """An iterative solver did not converge.

    Carries the iteration count, the largest residual and the last iterate.
    """

    def __init__(self, message: str, *, iterations: int, residual: float, last=None):
        super().__init__(message)
        self.iterations = iterations
        self.residual = residual
        self.last = last


class RangeWarning(UserWarning):
    """A correlation is used outside the range its authors published."""


class NoDataWarning(UserWarning):
    """DEM voids were filled along the line; the filled stretch is reported."""


class TerrainWarning(UserWarning):
    """Something about the DEM or CRS the user should know (distortion, striping)."""


class UnitWarning(UserWarning):
    """A value that is valid but looks like a unit mistake (metres for millimetres...)."""


class OutputWarning(UserWarning):
    """A deliverable could not be written on this machine; the message says why."""
