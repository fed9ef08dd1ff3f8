"""Fixtures shared by several test modules."""

from pathlib import Path

import pytest

REGION = Path(__file__).resolve().parents[1] / "demo_region"


@pytest.fixture(scope="session")
def demo_out(tmp_path_factory):
    """The demo region run once for the session: (output folder, console lines)."""
    from slopescreen.maps.engine import run

    out = tmp_path_factory.mktemp("quillbrook")
    lines = []
    run(REGION / "quillbrook_scenarios.toml", out, progress=False, echo=lines.append)
    return out, lines
