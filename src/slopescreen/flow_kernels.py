"""Moved to ``slopescreen.maps.terrain.flow_kernels``:
this path works for one more release (0.3) and warns."""

from slopescreen._moved import forward

__getattr__ = forward(__name__, "slopescreen.maps.terrain.flow_kernels")
