"""Tests of orcscreen.year: reading a year of operation from CSV and grouping it into bins.

Sources (each check names its own beside it):
- The temperature-bin method of energy estimating (hours per outdoor-temperature bin, energy as
  the hour-weighted sum over bins): ASHRAE Handbook - Fundamentals, chapter "Energy Estimating
  and Modeling Methods" (from memory). Binning must keep the hours and the hour-weighted mean
  temperature of the year: the identity that method rests on.
- Calendar: 365 x 24 = 8,760 h in a common year, 366 x 24 = 8,784 h in a leap year (Gregorian
  calendar).
- Discrete orthogonality: a cosine sampled at N equally spaced points over whole periods sums to
  zero, so the formula of the shipped invented climate has the mean of its constant term.
"""

from __future__ import annotations

import csv
import math
import os
from pathlib import Path

import numpy as np
import pytest

from orcscreen.year import (HOURS_PER_LEAP_YEAR, HOURS_PER_YEAR, Bin, YearError, read_year,
                            resolve_year_path)

SHIPPED = Path(__file__).resolve().parent.parent / "studies" / "climate-dry-inland.csv"


def _write(path: Path, lines: list[str]) -> Path:
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _hourly(path: Path, temperatures, header: str = "sink_temperature_C") -> Path:
    return _write(path, [header] + [f"{t!r}" for t in temperatures])


def _invented_formula_C(hours: np.ndarray) -> np.ndarray:
    """The generating formula written in the shipped file's second comment line."""
    return (14.0 - 11.0 * np.cos(2 * np.pi * (hours - 480) / 8760)
            - 6.0 * np.cos(2 * np.pi * (hours % 24 - 3) / 24))


# --- calendar -----------------------------------------------------------------------------------

def test_hours_of_a_year_follow_the_calendar():
    """Gregorian calendar: 365 and 366 days of 24 h."""
    assert (HOURS_PER_YEAR, HOURS_PER_LEAP_YEAR) == (365 * 24, 366 * 24)


# --- conservation -------------------------------------------------------------------------------

@pytest.mark.parametrize("width_K", [0.5, 1.0, 2.5])
def test_hourly_binning_keeps_hours_and_weighted_mean(tmp_path, width_K):
    """Bin method (ASHRAE Fundamentals, from memory): the bins hold every hour of the year and
    their hour-weighted mean is the mean of the hours; tolerance 1e-9 K (floating-point rounding
    of sums of 8,760 terms). Each bin's temperature lies in its grid cell, centred on a multiple
    of the width."""
    rng = np.random.default_rng(20240517)
    hours = np.arange(HOURS_PER_YEAR)
    temperatures = _invented_formula_C(hours) + rng.normal(0.0, 2.0, hours.size)
    year = read_year(_hourly(tmp_path / "noisy.csv", temperatures.tolist()), bin_width_K=width_K)
    assert year.form == "hourly"
    assert year.total_hours == HOURS_PER_YEAR
    assert math.fsum(b.hours for b in year.bins) == HOURS_PER_YEAR
    assert year.mean_sink_temperature_C == pytest.approx(math.fsum(temperatures) / temperatures.size, abs=1e-9)
    assert year.min_sink_temperature_C >= temperatures.min()
    assert year.max_sink_temperature_C <= temperatures.max()
    cells = [math.floor(b.sink_temperature_C / width_K + 0.5) for b in year.bins]
    assert cells == sorted(set(cells)), "one bin per grid cell, sorted by temperature"
    for b, cell in zip(year.bins, cells):
        inside = temperatures[np.floor(temperatures / width_K + 0.5) == cell]
        assert b.hours == inside.size
        assert b.sink_temperature_C == pytest.approx(inside.mean(), abs=1e-9)


@pytest.mark.parametrize("temperature_C", [12.3, -4.7, 0.1, 59.9])
def test_year_at_one_temperature_gives_one_bin_at_that_temperature(tmp_path, temperature_C):
    """A year held at one temperature reproduces it exactly (bin temperature = hour-weighted
    mean of the bin's hours, not the grid centre): common practice of the bin method."""
    year = read_year(_hourly(tmp_path / "flat.csv", [temperature_C] * HOURS_PER_YEAR))
    assert year.bins == (Bin(temperature_C, float(HOURS_PER_YEAR)),)
    assert year.mean_sink_temperature_C == temperature_C
    assert year.min_sink_temperature_C == year.max_sink_temperature_C == temperature_C


def test_hourly_rows_with_source_values_are_grouped_and_averaged(tmp_path):
    """Rows within one sink bin, one source-temperature bin and 1 % of flow share a bin whose
    values are the means of its hours; a 25 % different flow or a missing source value (the
    study's) makes its own bin. Means by hand: (20.2 + 20.4)/2 = 20.3, (150.0 + 150.2)/2 = 150.1."""
    path = _write(tmp_path / "src.csv", [
        "hour,sink_temperature_C,source_temperature_C,source_mass_flow_kg_s",
        "1,20.2,150.0,20.0",
        "2,20.4,150.2,20.0",
        "3,20.3,150.1,25.0",
        "4,20.1,,",
    ])
    year = read_year(path)
    assert year.total_hours == 4
    assert len(year.bins) == 3
    by_flow = {b.source_mass_flow_kg_s: b for b in year.bins}
    assert by_flow[20.0].hours == 2
    assert by_flow[20.0].sink_temperature_C == pytest.approx(20.3, abs=1e-12)
    assert by_flow[20.0].source_temperature_C == pytest.approx(150.1, abs=1e-12)
    assert by_flow[25.0] == Bin(20.3, 1.0, 150.1, 25.0)
    assert by_flow[None] == Bin(20.1, 1.0, None, None)
    assert year.mean_sink_temperature_C == pytest.approx((20.2 + 20.4 + 20.3 + 20.1) / 4, abs=1e-12)


# --- bin form -----------------------------------------------------------------------------------

def test_bin_form_is_used_as_given_and_sorted(tmp_path):
    """Bins are taken as written (no regrouping, 0.4 K apart stays two bins), sorted by sink
    temperature; the mean is the hour-weighted one, by hand (2000 x 25 + 3000 x 5.3 + 1000 x 5.7
    + 0 x 30) / 6000 = 12.93333... °C."""
    path = _write(tmp_path / "bins.csv", [
        "# four bins",
        "sink_temperature_C,hours,source_temperature_C,source_mass_flow_kg_s",
        "25,2000,,",
        "5.3,3000,140,12.5",
        "5.7,1000,,",
        "30,0,,",
    ])
    year = read_year(path)
    assert year.form == "bins"
    assert year.source == path
    assert year.bins == (Bin(5.3, 3000.0, 140.0, 12.5), Bin(5.7, 1000.0), Bin(25.0, 2000.0), Bin(30.0, 0.0))
    assert year.total_hours == 6000
    assert year.mean_sink_temperature_C == pytest.approx((2000 * 25 + 3000 * 5.3 + 1000 * 5.7) / 6000, rel=1e-15)
    assert year.max_sink_temperature_C == 25.0, "a bin of 0 h is kept but not operated"


def test_comments_blank_lines_and_a_byte_order_mark_are_skipped(tmp_path):
    """Spreadsheets write a UTF-8 byte-order mark (common practice); comments and blanks skip."""
    path = tmp_path / "bom.csv"
    path.write_bytes("\ufeff# note\n\nsink_temperature_C,hours\r\n10,5\r\n\n# end\n".encode("utf-8"))
    assert read_year(path).bins == (Bin(10.0, 5.0),)


# --- errors: what the file holds ----------------------------------------------------------------

def _error(path: Path, **kwargs) -> str:
    with pytest.raises(YearError) as info:
        read_year(path, **kwargs)
    message = str(info.value)
    assert str(path) in message, "the message names the file"
    assert "allowed" in message, "the message says what is allowed"
    return message


def test_too_many_hourly_rows_are_refused_with_the_count_and_the_limit(tmp_path):
    """8,785 rows is one more than a leap year has (Gregorian calendar)."""
    message = _error(_hourly(tmp_path / "long.csv", [10.0] * (HOURS_PER_LEAP_YEAR + 1)))
    assert "8,785" in message and "8,760" in message and "8,784" in message


def test_a_leap_year_of_hourly_rows_is_accepted(tmp_path):
    """8,784 rows (366 days) is the limit itself."""
    assert read_year(_hourly(tmp_path / "leap.csv", [10.0] * HOURS_PER_LEAP_YEAR)).total_hours == 8784


def test_bins_holding_more_than_a_leap_year_are_refused(tmp_path):
    message = _error(_write(tmp_path / "b.csv", ["sink_temperature_C,hours", "5,5000", "15,4000"]))
    assert "9,000" in message and "8,784" in message


def test_negative_hours_are_refused_with_row_and_column(tmp_path):
    path = _write(tmp_path / "neg.csv", ["sink_temperature_C,hours", "5,100", "6,-3"])
    message = _error(path)
    assert "row 3, column hours" in message and "'-3'" in message


def test_unknown_columns_are_named_with_the_allowed_ones(tmp_path):
    message = _error(_write(tmp_path / "u.csv", ["hour,sink_temperature_C,wind_speed_m_s", "1,5,3"]))
    assert "'wind_speed_m_s'" in message and "row 1" in message
    for allowed in ("sink_temperature_C", "source_temperature_C", "source_mass_flow_kg_s", "hours"):
        assert allowed in message


def test_missing_sink_column_is_refused(tmp_path):
    message = _error(_write(tmp_path / "m.csv", ["hours", "100"]))
    assert "sink_temperature_C" in message and "missing" in message


def test_a_non_number_names_row_and_column_counting_comment_lines(tmp_path):
    """Rows are line numbers of the file: comments and blank lines count."""
    path = _write(tmp_path / "climate.csv", ["# made up", "", "hour,sink_temperature_C", "1,5.0", "2,abc"])
    message = _error(path)
    assert f"{path}, row 5, column sink_temperature_C: 'abc' is not a number" in message
    assert "°C" in message


@pytest.mark.parametrize("column, value, expect", [
    ("sink_temperature_C", "60.1", "-60 to 60"),
    ("sink_temperature_C", "-61", "-60 to 60"),
    ("source_temperature_C", "1000.5", "-50 to 1000"),
    ("source_mass_flow_kg_s", "0", "above 0"),
    ("sink_temperature_C", "nan", "finite"),
    ("source_temperature_C", "inf", "finite"),
])
def test_values_outside_their_limits_are_refused(tmp_path, column, value, expect):
    values = {"sink_temperature_C": "10", "source_temperature_C": "120", "source_mass_flow_kg_s": "5"}
    values[column] = value
    path = _write(tmp_path / "r.csv", [",".join(values), ",".join(values.values())])
    message = _error(path)
    assert f"row 2, column {column}: '{value}'" in message and expect in message


def test_a_row_with_missing_values_is_refused(tmp_path):
    message = _error(_write(tmp_path / "short.csv", ["hour,sink_temperature_C", "1,5", "2"]))
    assert "row 3: 1 value;" in message and "2 values" in message


def test_hours_must_increase(tmp_path):
    message = _error(_write(tmp_path / "h.csv", ["hour,sink_temperature_C", "1,5", "3,6", "2,7"]))
    assert "row 4, column hour: '2'" in message


@pytest.mark.parametrize("lines, expect", [
    ([], "empty"),
    (["# only a comment", ""], "empty"),
    (["hour,sink_temperature_C", "# nothing"], "no data rows"),
])
def test_a_file_without_data_is_refused(tmp_path, lines, expect):
    path = tmp_path / "none.csv"
    path.write_text("\n".join(lines), encoding="utf-8")
    assert expect in _error(path)


def test_bins_with_no_hours_in_all_are_refused(tmp_path):
    assert "0 hours" in _error(_write(tmp_path / "z.csv", ["sink_temperature_C,hours", "5,0"]))


def test_a_byte_that_is_not_utf8_is_reported_on_its_line(tmp_path):
    path = tmp_path / "latin1.csv"
    path.write_bytes(b"hour,sink_temperature_C\n1,5\n2,7\xb0\n")
    assert "row 3" in _error(path)


@pytest.mark.parametrize("width", [0.0, -1.0, math.nan])
def test_bin_width_must_be_above_zero(tmp_path, width):
    assert "above 0" in _error(_hourly(tmp_path / "w.csv", [5.0]), bin_width_K=width)


def test_a_missing_file_is_refused_by_the_reader(tmp_path):
    assert "no such file" in _error(tmp_path / "absent.csv")


# --- errors: where the file is ------------------------------------------------------------------

def _path_error(study: Path, relative: str) -> str:
    with pytest.raises(YearError) as info:
        resolve_year_path(study, relative)
    message = str(info.value)
    assert str(study) in message and "year.file" in message and repr(relative) in message
    return message


@pytest.fixture
def study(tmp_path) -> Path:
    folder = tmp_path / "plant"
    folder.mkdir()
    _write(folder / "climate.csv", ["sink_temperature_C", "10"])
    (folder / "data").mkdir()
    _write(folder / "data" / "bins.csv", ["sink_temperature_C,hours", "10,8760"])
    _write(tmp_path / "outside.csv", ["sink_temperature_C", "10"])
    return _write(folder / "plant.toml", ['[year]', 'file = "climate.csv"'])


def test_a_path_inside_the_study_folder_resolves(study):
    assert resolve_year_path(study, "climate.csv") == (study.parent / "climate.csv").resolve()
    assert resolve_year_path(study, "data/../data/bins.csv") == (study.parent / "data" / "bins.csv").resolve()


def test_a_path_outside_the_study_folder_is_refused(study):
    assert "outside the study's folder" in _path_error(study, "../outside.csv")


def test_an_absolute_path_is_refused(study):
    assert "absolute" in _path_error(study, str(study.parent / "climate.csv"))


def test_a_missing_file_is_refused(study):
    assert "no such file" in _path_error(study, "climate-2031.csv")


def test_a_folder_is_refused(study):
    assert "not a file" in _path_error(study, "data")


def _link(link: Path, target: Path) -> None:
    try:
        os.symlink(target, link)
    except (OSError, NotImplementedError) as exc:  # no symbolic links on this system
        pytest.skip(f"cannot create a symbolic link here: {exc}")


def test_a_symbolic_link_pointing_outside_is_refused(study):
    _link(study.parent / "linked.csv", study.parent.parent / "outside.csv")
    message = _path_error(study, "linked.csv")
    assert "symbolic link" in message and "outside the study's folder" in message


def test_a_symbolic_link_inside_the_folder_is_followed(study):
    _link(study.parent / "alias.csv", study.parent / "climate.csv")
    assert resolve_year_path(study, "alias.csv") == (study.parent / "climate.csv").resolve()


# --- the shipped invented climate ---------------------------------------------------------------

def test_shipped_invented_climate_says_it_is_invented():
    """Demo data are invented and say so on their first line (project rule)."""
    first = SHIPPED.read_text(encoding="utf-8").splitlines()[0]
    assert first.startswith("# Invented climate") and "not measured data" in first


def test_shipped_invented_climate_matches_its_formula_and_mean():
    """Every row is the stated formula rounded to 0.1 K (so within 0.05 K); the year reads to
    8,760 h with a mean within 0.1 K of the formula's mean, which is 14 °C exactly (the cosines
    over whole periods sum to zero: discrete orthogonality)."""
    with SHIPPED.open(encoding="utf-8") as stream:
        rows = list(csv.DictReader(line for line in stream if not line.startswith("#")))
    hours = np.array([float(r["hour"]) for r in rows])
    values = np.array([float(r["sink_temperature_C"]) for r in rows])
    assert np.array_equal(hours, np.arange(HOURS_PER_YEAR))
    assert np.max(np.abs(values - _invented_formula_C(hours))) <= 0.05 + 1e-9
    formula_mean = float(np.mean(_invented_formula_C(np.arange(HOURS_PER_YEAR))))
    assert formula_mean == pytest.approx(14.0, abs=1e-9)
    year = read_year(SHIPPED)
    assert year.form == "hourly" and year.total_hours == HOURS_PER_YEAR
    assert abs(year.mean_sink_temperature_C - formula_mean) <= 0.1
