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


def test_reads_a_position_and_radius(tmp_path):
    path = tmp_path / "walk.csv"
    path.write_text("# position: 12.5, -3, 1\n# radius_m: 25\nfrequency_hz,level_dbm\n1,2\n3,4\n")
    s = read_survey(path)
    assert s["position"] == {"x_m": 12.5, "y_m": -3.0, "floor": 1} and s["radius_m"] == 25.0
    path.write_text("# position: 4, 5\nfrequency_hz,level_dbm\n1,2\n3,4\n")
    assert read_survey(path)["position"] == {"x_m": 4.0, "y_m": 5.0}


@pytest.mark.parametrize("value", ["4", "a, b", "1, 2, 1.5", "1, 2, 3, 4"])
def test_bad_positions(tmp_path, value):
    path = tmp_path / "walk.csv"
    path.write_text(f"# position: {value}\nfrequency_hz,level_dbm\n1,2\n3,4\n")
    with pytest.raises(SurveyFileError, match="position"):
        read_survey(path)
