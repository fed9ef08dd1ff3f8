"""Fixtures shared by several test modules."""

from pathlib import Path

import pytest

REGION = Path(__file__).resolve().parents[1] / "demo_region"


@pytest.fixture(scope="session")
def demo_out(tmp_path_factory):
    """The demo command (lab fit, hillside check, every scenario of the demo region, the
    known-landslide checks) run once for the session: (output folder, console lines)."""
    import contextlib
    import io

    from slopescreen.cli.main import main

    out = tmp_path_factory.mktemp("quillbrook")
    text = io.StringIO()
    with contextlib.redirect_stdout(text):
        code = main(["demo", "--region", str(REGION), "--out", str(out)])
    assert code == 0, text.getvalue()
    return out, text.getvalue().splitlines()
