"""Old import paths of modules that moved: one release of warning before they go."""

from __future__ import annotations

import importlib
import warnings
from collections.abc import Callable
from typing import Any


def forward(old: str, new: str) -> Callable[[str], Any]:
    """A module ``__getattr__`` for the old path ``old`` (PEP 562): warns once with a
    DeprecationWarning naming ``new``, then hands every attribute over from ``new``."""
    warnings.warn(
        f"{old} has moved to {new}; the old path goes in the next release",
        DeprecationWarning,
        stacklevel=3,
    )
    module = importlib.import_module(new)

    def __getattr__(name: str) -> Any:
        return getattr(module, name)

    return __getattr__
