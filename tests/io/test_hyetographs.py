"""Reading a gauge's record: steps as given, every malformed record refused in one line
naming the file and the line."""

from __future__ import annotations

import numpy as np
import pytest

from slopescreen.errors import InputError
from slopescreen.maps.io.hyetographs import read_hyetograph


def _read(tmp_path, text):
    path = tmp_path / "gauge.csv"
    path.write_text(text)
    return read_hyetograph(path)


def test_depths_in_hours(tmp_path):
    ends, rain = _read(tmp_path, "# a gauge\nend_h,rain_mm\n0.5,2\n2,15\n3,0\n")
    assert ends.tolist() == [0.5, 2.0, 3.0]
    assert rain.tolist() == [4.0, 10.0, 0.0]  # mm over 0.5 h, 1.5 h, 1 h


def test_date_times_with_a_zone_and_intensities(tmp_path):
    text = (
        "end_time,rain_mm_h\n"
        "2026-11-30T22:00:00+01:00,\n"  # the record's start
        "2026-11-30T23:00:00+01:00,6\n"
        "2026-12-01T00:30:00+01:00,20\n"
    )
    ends, rain = _read(tmp_path, text)
    np.testing.assert_allclose(ends, [1.0, 2.5])
    assert rain.tolist() == [6.0, 20.0]


def test_a_start_column_across_midnight_without_zones(tmp_path):
    text = (
        "start_time,end_time,rain_mm\n"
        "2026-11-30T23:00,2026-11-30T23:30,3\n"
        "2026-11-30T23:30,2026-12-01T00:30,12\n"
    )
    ends, rain = _read(tmp_path, text)
    np.testing.assert_allclose(ends, [0.5, 1.5])
    np.testing.assert_allclose(rain, [6.0, 12.0])


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("end_h,rain\n1,2\n", "needs one of end_h or end_time, one of rain_mm or rain_mm_h"),
        ("end_h,rain_mm\n", "needs a header and at least one interval"),
        ("end_h,rain_mm\n2,1\n1,1\n", "line 3: end_h 1 is not after the previous time"),
        ("end_h,rain_mm\n1,1\n1,1\n", "line 3: end_h 1 is not after the previous time"),
        ("end_h,rain_mm\n1,-2\n", "line 2: rain_mm must be >= 0, got -2"),
        ("end_h,rain_mm\n1,x\n", "line 2: rain_mm 'x' is not a number"),
        ("end_h,rain_mm_h\n1,1500\n", "line 2: 1500 mm/h is beyond the allowed 0 to 1000 mm/h"),
        ("start_h,end_h,rain_mm\n0,1,1\n1.5,2,1\n", "line 3: a gap of 0.5 h after the previous"),
        ("start_h,end_h,rain_mm\n0,1,1\n0.75,2,1\n", "line 3: overlaps the previous interval"),
        (
            "end_time,rain_mm\n2026-12-01T00:00Z,\n2026-12-01T01:00,3\n",
            "line 3: '2026-12-01T01:00' mixes times with and without a time zone",
        ),
        ("end_time,rain_mm\n2026-12-01T00:00,4\n", "line 2: the first end_time gives the record"),
        ("end_h,rain_mm\nnoon,4\n", "line 2: 'noon' is not a number of hours"),
        ("start_h,end_time,rain_mm\n0,2026-12-01T00:00,1\n", "must both be hours or both"),
    ],
)
def test_malformed_records_are_refused_in_one_line(tmp_path, text, fragment):
    with pytest.raises(InputError) as refused:
        _read(tmp_path, text)
    message = str(refused.value)
    assert "gauge.csv" in message and fragment in message
    assert "\n" not in message
