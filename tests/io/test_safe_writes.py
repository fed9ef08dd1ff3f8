"""Safe writes: an interrupted write leaves the previous file whole."""

import pytest

from slopescreen.maps.io.safe_writes import replacing, write_text


def test_interrupted_write_keeps_previous(tmp_path):
    target = tmp_path / "table.csv"
    write_text(target, "old,complete\n")
    with pytest.raises(KeyboardInterrupt), replacing(target) as tmp:
        tmp.write_text("new,half")
        raise KeyboardInterrupt
    assert target.read_text() == "old,complete\n"
    assert [p.name for p in tmp_path.iterdir()] == ["table.csv"]


def test_successful_write_replaces(tmp_path):
    target = tmp_path / "sub" / "table.csv"
    write_text(target, "a\n")
    write_text(target, "b\n")
    assert target.read_text() == "b\n"
