"""Exceptions raised by the numerical kernels.

    ModelError                 base of everything models/ raises on purpose
    ├── ConvergenceError       an iterative solver did not reach its tolerance
    └── InvalidInput           (also a ValueError) an argument is out of its domain

Arguments are checked at the public boundary; messages name the argument in backticks and show
the value received, e.g. "`depth` must be positive, got -3.0".
"""

from __future__ import annotations


class ModelError(Exception):
    """Base class for errors raised by models/."""


class ConvergenceError(ModelError):
    """An iterative solver did not converge within its iteration budget."""


class InvalidInput(ModelError, ValueError):
    """An argument is outside the domain a kernel accepts."""


__all__ = ["ConvergenceError", "InvalidInput", "ModelError"]
