"""The one exception type for user mistakes.

Every check of user input raises :class:`InputError`. It subclasses ``ValueError`` so
library callers can catch either; the shell catches it once and prints its message as a
single line with exit code 2.
"""

from __future__ import annotations


class InputError(ValueError):
    """A value, file, field or cell given by the user is missing or out of range."""
