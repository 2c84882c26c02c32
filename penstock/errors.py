"""The error a case that cannot be run raises, shared by the loader and the model.

Kept apart so that the model can refuse bad input without importing the loader.
"""

from __future__ import annotations

__all__ = ["CaseError"]


class CaseError(ValueError):
    """A case folder that cannot be run.  The message is one line for the user."""

    def __init__(self, file: str, where: str, problem: str):
        self.file = file
        self.where = where
        self.problem = problem
        super().__init__(f"{file}: {where}: {problem}" if where else f"{file}: {problem}")
