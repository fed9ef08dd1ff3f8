"""The time stamps a run writes (manifest, lock notes): UTC, to the second."""

from __future__ import annotations

from datetime import UTC, datetime


def utc_now() -> str:
    """Now in UTC as ISO 8601 to the second, e.g. ``2026-12-04T18:43:00Z``."""
    return datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
