"""Moved to ``slopescreen.maps.io.textfiles``:
this path works for one more release (0.3) and warns."""

from slopescreen._moved import forward

__getattr__ = forward(__name__, "slopescreen.maps.io.textfiles")
