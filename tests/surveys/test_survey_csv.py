"""The command line's survey CSV format."""

import pytest

from cohop.survey_csv import SurveyFileError, read_survey


def test_reads_columns_and_comment_fields(tmp_path):
    path = tmp_path / "sweep.csv"
    path.write_text("# applies_to: a, b\n# resolution_bandwidth_hz: 10000\n# detector: peak\n"
                    "frequency_hz,level_dbm,occupancy_fraction\n902000000,-110.5,0.0\n902010000,-80,0.4\n")
    s = read_survey(path)
    assert s == {"frequencies_hz": [902e6, 902.01e6], "levels_dbm": [-110.5, -80.0], "occupancy_fraction": [0.0, 0.4],
                 "applies_to": ["a", "b"], "resolution_bandwidth_hz": 10000.0, "detector": "peak", "id": "sweep"}


def test_without_occupancy(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text("frequency_hz,level_dbm\n1,2\n3,4\n")
    assert "occupancy_fraction" not in read_survey(path)


@pytest.mark.parametrize("text, message", [("", "no header"), ("freq,level\n1,2\n", "must name"),
                                           ("frequency_hz,level_dbm\n1,abc\n", "not a number")])
def test_bad_files(tmp_path, text, message):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    with pytest.raises(SurveyFileError, match=message):
        read_survey(path)


def test_the_sample_survey_file_loads():
    from importlib import resources

    s = read_survey(resources.files("cohop.samples").joinpath("filter_gallery_survey.csv"))
    assert len(s["frequencies_hz"]) == len(s["levels_dbm"]) == len(s["occupancy_fraction"]) > 1000
