"""A year of operation read from a CSV file and grouped into temperature bins.

A study's ``[year]`` section names a CSV file beside the study file. Each fluid's fixed design is
then rated bin by bin and the annual energy is the hour-weighted sum over the bins (the
temperature-bin method of energy estimating; common practice). This module only reads, checks and
bins the year; the physics is elsewhere.

Two forms, told apart by the header (the first line that is neither blank nor a comment ``#``):

* hourly, one row per hour: ``sink_temperature_C`` [°C] required; ``source_temperature_C`` [°C]
  and ``source_mass_flow_kg_s`` [kg/s] optional (an empty cell means the study's value); an
  optional ``hour`` column is only checked to increase. At most 8,784 rows (8,760 in a common
  year, 8,784 in a leap year).
* bins, one row per bin: ``sink_temperature_C`` [°C] and ``hours`` [h] required, the same
  optional source columns; used as given (not regrouped), total at most 8,784 h.

Hourly rows are grouped into sink-temperature bins of ``bin_width_K`` (1 K steps are the default
of the issue that asked for this module); a bin's temperature is the hour-weighted mean of the
hours in it, not the centre of its grid cell, so the total hours and the hour-weighted mean sink
temperature of the year are kept, and a year held at one temperature gives one bin at exactly
that temperature.

Limits of values: sink temperature -60 to 60 °C, source temperature -50 to 1000 °C, source mass
flow above 0 kg/s, every number finite. :class:`YearError` names the file, the row (its line
number in the file, from 1), the column, the value and what is allowed.
"""

from __future__ import annotations

import csv
import math
import os
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path, PurePath

__all__ = [
    "YearError",
    "Bin",
    "Year",
    "read_year",
    "resolve_year_path",
    "HOURS_PER_YEAR",
    "HOURS_PER_LEAP_YEAR",
    "DEFAULT_BIN_WIDTH_K",
    "FLOW_STEP_RELATIVE",
    "COLUMNS",
    "FORMS",
]

HOURS_PER_YEAR = 8760
"""Hours in a common year [h] (365 x 24)."""
HOURS_PER_LEAP_YEAR = 8784
"""Hours in a leap year [h] (366 x 24): the most a year file may hold."""
DEFAULT_BIN_WIDTH_K = 1.0
"""Width of the sink-temperature bins of an hourly file [K] (the issue's default)."""
FLOW_STEP_RELATIVE = 0.01
"""Hourly source mass flows are grouped on a geometric grid of this relative step [-] (1 %)."""

_YEAR_LIMIT_TEXT = f"a year has at most {HOURS_PER_YEAR:,} hours ({HOURS_PER_LEAP_YEAR:,} in a leap year)"
_FILE_ALLOWED = "a CSV file in the study's folder (or below it), given relative to the study file"


class YearError(ValueError):
    """A year file or its path is invalid; the message names the file, the row and column (or
    the study key), the value and what is allowed."""


@dataclass(frozen=True)
class _Column:
    """One column a year file may have: name, what a value may be (for messages), the limits
    of its values and whether a cell may be empty (the study's value is used then)."""

    name: str
    allowed: str
    low: float = -math.inf
    high: float = math.inf
    low_open: bool = False
    may_be_empty: bool = False

    def accepts(self, value: float) -> bool:
        above = value > self.low if self.low_open else value >= self.low
        return above and value <= self.high


#: The columns of a year file, once; FORMS and the messages read them from here.
COLUMNS: dict[str, _Column] = {c.name: c for c in (
    _Column("hour", "an hour number, increasing from row to row"),
    _Column("sink_temperature_C", "a sink temperature in °C from -60 to 60", -60.0, 60.0),
    _Column("source_temperature_C", "a source temperature in °C from -50 to 1000, or empty for the "
            "study's", -50.0, 1000.0, may_be_empty=True),
    _Column("source_mass_flow_kg_s", "a source mass flow in kg/s above 0, or empty for the study's",
            0.0, low_open=True, may_be_empty=True),
    _Column("hours", f"a number of hours from 0 to {HOURS_PER_LEAP_YEAR:,}", 0.0,
            float(HOURS_PER_LEAP_YEAR)),
)}


@dataclass(frozen=True)
class _Form:
    """A layout of a year file: its required and optional columns."""

    name: str
    required: tuple[str, ...]
    optional: tuple[str, ...]

    @property
    def allowed(self) -> tuple[str, ...]:
        return self.required + self.optional


#: The two forms of a year file; a header with an ``hours`` column is the bin form.
FORMS: dict[str, _Form] = {f.name: f for f in (
    _Form("hourly", ("sink_temperature_C",), ("hour", "source_temperature_C", "source_mass_flow_kg_s")),
    _Form("bins", ("sink_temperature_C", "hours"), ("source_temperature_C", "source_mass_flow_kg_s")),
)}


@dataclass(frozen=True)
class Bin:
    """One bin of the year: its sink inlet temperature [°C] and its duration [h].

    source_temperature_C [°C] and source_mass_flow_kg_s [kg/s] are None where the study's source
    values hold. For a bin made from hourly rows, each value is the mean over the bin's hours.
    """

    sink_temperature_C: float
    hours: float
    source_temperature_C: float | None = None
    source_mass_flow_kg_s: float | None = None


@dataclass(frozen=True)
class Year:
    """A year of operation as bins sorted by sink temperature (then source temperature and flow).

    total_hours [h] is the sum of the bins' hours; source is the file read; form is "hourly"
    (binned here) or "bins" (as given in the file).
    """

    bins: tuple[Bin, ...]
    total_hours: float
    source: Path
    form: str

    @property
    def mean_sink_temperature_C(self) -> float:
        """Hour-weighted mean sink temperature of the year [°C]."""
        return math.fsum(b.hours * b.sink_temperature_C for b in self.bins) / self.total_hours

    @property
    def min_sink_temperature_C(self) -> float:
        """Lowest sink temperature of the bins with hours [°C] (for an hourly file, the coldest
        bin's mean: within one bin width of the coldest hour)."""
        return min(b.sink_temperature_C for b in self.bins if b.hours > 0)

    @property
    def max_sink_temperature_C(self) -> float:
        """Highest sink temperature of the bins with hours [°C] (for an hourly file, the
        warmest bin's mean)."""
        return max(b.sink_temperature_C for b in self.bins if b.hours > 0)


# ---------------------------------------------------------------------------------------------
# Reading
# ---------------------------------------------------------------------------------------------

def _where(label: str, line: int, column: str | None = None) -> str:
    text = f"{label}, row {line}"
    return f"{text}, column {column}" if column else text


def _lines(path: Path, label: str) -> Iterator[tuple[int, list[str]]]:
    """(line number from 1, cells) of each line that is neither blank nor a comment ``#``.

    Lines are decoded one by one (UTF-8, a byte-order mark allowed), so a bad byte is reported
    on its own line."""
    try:
        stream = open(path, "rb")
    except FileNotFoundError:
        raise YearError(f"{label}: no such file; allowed: {_FILE_ALLOWED}") from None
    except IsADirectoryError:
        raise YearError(f"{label}: is a folder, not a file; allowed: {_FILE_ALLOWED}") from None
    except OSError as exc:
        raise YearError(f"{label}: cannot be read ({exc.strerror or type(exc).__name__}); "
                        f"allowed: {_FILE_ALLOWED}, readable by you") from None
    with stream:
        for number, raw in enumerate(stream, start=1):
            try:
                text = raw.decode("utf-8-sig" if number == 1 else "utf-8").rstrip("\r\n")
            except UnicodeDecodeError as exc:
                raise YearError(f"{_where(label, number)}: not UTF-8 text (byte {raw[exc.start]:#04x}); "
                                "allowed: a CSV text file in UTF-8") from None
            if not text.strip() or text.lstrip().startswith("#"):
                continue
            try:
                cells = next(csv.reader([text]))
            except csv.Error as exc:
                raise YearError(f"{_where(label, number)}: not a CSV line ({exc}); allowed: "
                                "numbers separated by commas") from None
            yield number, [c.strip() for c in cells]


def _allowed_columns_text() -> str:
    return "; ".join(f"{f.name} form: {', '.join(f.allowed)} (required: {', '.join(f.required)})"
                     for f in FORMS.values())


def _header(label: str, line: int, cells: list[str]) -> tuple[_Form, list[str]]:
    """The form named by a header and its columns, in file order; faults raise YearError."""
    form = FORMS["bins"] if "hours" in cells else FORMS["hourly"]
    where = f"{label}, row {line} (the header: the first line neither blank nor a comment)"
    unknown = [c for c in cells if c not in form.allowed]
    if unknown:
        names = ", ".join(repr(c) for c in unknown)
        raise YearError(f"{where}: unknown column{'s' if len(unknown) > 1 else ''} {names}; "
                        f"allowed: {_allowed_columns_text()}")
    twice = sorted({c for c in cells if cells.count(c) > 1})
    if twice:
        raise YearError(f"{where}: column {', '.join(twice)} appears twice; allowed: each column once")
    missing = [c for c in form.required if c not in cells]
    if missing:
        raise YearError(f"{where}: required column {', '.join(missing)} is missing; allowed: "
                        f"{_allowed_columns_text()}")
    return form, cells


def _number(label: str, line: int, column: _Column, text: str) -> float | None:
    """The value of one cell, checked against its column's limits (None: empty, allowed)."""
    where = _where(label, line, column.name)
    if not text:
        if column.may_be_empty:
            return None
        raise YearError(f"{where}: empty; allowed: {column.allowed}")
    try:
        value = float(text)
    except ValueError:
        raise YearError(f"{where}: {text!r} is not a number; allowed: {column.allowed}") from None
    if not math.isfinite(value):
        raise YearError(f"{where}: {text!r} is not a finite number; allowed: {column.allowed}")
    if not column.accepts(value):
        raise YearError(f"{where}: {text!r} is out of range; allowed: {column.allowed}")
    return value


def _record(label: str, line: int, names: list[str], cells: list[str]) -> dict[str, float | None]:
    """One data row as column name -> value. Extra cells must be empty (a trailing comma)."""
    if len(cells) < len(names) or any(cells[len(names):]):
        raise YearError(f"{_where(label, line)}: {len(cells)} value{'' if len(cells) == 1 else 's'}; allowed: "
                        f"{len(names)} values, one per column of the header ({', '.join(names)})")
    return {name: _number(label, line, COLUMNS[name], text) for name, text in zip(names, cells)}


def _mean(values: Sequence[float]) -> float:
    """Mean of values, exact when they are all equal (the first value plus the mean deviation),
    kept between their smallest and largest."""
    first = values[0]
    mean = first + math.fsum(v - first for v in values) / len(values)
    return min(max(mean, min(values)), max(values))


def _grid(value: float, step: float) -> int:
    """Index of the cell of a grid of ``step`` with cells centred on its multiples."""
    return math.floor(value / step + 0.5)


def _flow_grid(flow_kg_s: float) -> int:
    """Index on a geometric grid of ratio 1 + FLOW_STEP_RELATIVE (flows within about 1 % share it)."""
    return math.floor(math.log(flow_kg_s) / math.log1p(FLOW_STEP_RELATIVE) + 0.5)


def _bin_order(b: Bin) -> tuple:
    def optional(x: float | None) -> tuple[int, float]:
        return (0, 0.0) if x is None else (1, x)
    return (b.sink_temperature_C, optional(b.source_temperature_C), optional(b.source_mass_flow_kg_s))


def _hourly_bins(records: list[dict[str, float | None]], bin_width_K: float) -> list[Bin]:
    """Hourly records grouped by (sink bin, source temperature bin, source flow within 1 %)."""
    groups: dict[tuple, list[dict[str, float | None]]] = {}
    for r in records:
        source, flow = r.get("source_temperature_C"), r.get("source_mass_flow_kg_s")
        key = (_grid(r["sink_temperature_C"], bin_width_K),
               None if source is None else _grid(source, bin_width_K),
               None if flow is None else _flow_grid(flow))
        groups.setdefault(key, []).append(r)
    bins = []
    for key, rows in groups.items():
        def mean_of(name: str) -> float:
            return _mean([r[name] for r in rows])
        bins.append(Bin(mean_of("sink_temperature_C"), float(len(rows)),
                        None if key[1] is None else mean_of("source_temperature_C"),
                        None if key[2] is None else mean_of("source_mass_flow_kg_s")))
    return bins


def read_year(path: str | os.PathLike[str], bin_width_K: float = DEFAULT_BIN_WIDTH_K) -> Year:
    """Read a year file (hourly or bin form) and return it as sorted bins.

    path: the CSV file (see the module docstring for its columns); bin_width_K: width of the
    sink-temperature bins of an hourly file [K], above 0 (default 1 K, the issue's default; bins
    are centred on multiples of the width and source temperatures are grouped on the same grid).
    A bin's sink temperature [°C] is the hour-weighted mean of its hours, so total hours and the
    mean sink temperature of the year are kept and a year at one temperature reproduces it exactly.
    A bin-form file is checked and used as given (bins of 0 h are kept). Faults raise YearError.
    """
    label = str(path)
    if isinstance(bin_width_K, bool) or not isinstance(bin_width_K, (int, float)) \
            or not math.isfinite(bin_width_K) or bin_width_K <= 0:
        raise YearError(f"{label}: bin width {bin_width_K!r} K; allowed: a finite width above 0 K")
    lines = _lines(Path(path), label)
    first = next(lines, None)
    if first is None:
        raise YearError(f"{label}: empty (no header and no data); allowed: a header line naming "
                        f"the columns ({_allowed_columns_text()}), then one row per hour or per bin")
    header_line, header_cells = first
    form, names = _header(label, header_line, header_cells)
    hourly = form is FORMS["hourly"]
    records: list[dict[str, float | None]] = []
    count = 0
    previous_hour: float | None = None
    for line, cells in lines:
        count += 1
        if hourly and count > HOURS_PER_LEAP_YEAR:
            continue  # only counted, for the message below
        record = _record(label, line, names, cells)
        hour = record.get("hour")
        if hour is not None:
            if previous_hour is not None and hour <= previous_hour:
                raise YearError(f"{_where(label, line, 'hour')}: {cells[names.index('hour')]!r} does not "
                                f"follow the previous row's hour {previous_hour:g}; allowed: "
                                f"{COLUMNS['hour'].allowed}")
            previous_hour = hour
        records.append(record)
    if not records:
        raise YearError(f"{label}: a header (row {header_line}) but no data rows; allowed: one row "
                        f"per {'hour' if hourly else 'bin'} below the header")
    if hourly:
        if count > HOURS_PER_LEAP_YEAR:
            raise YearError(f"{label}: {count:,} hourly rows; allowed: at most {HOURS_PER_LEAP_YEAR:,} "
                            f"rows, one per hour ({_YEAR_LIMIT_TEXT})")
        bins = _hourly_bins(records, float(bin_width_K))
    else:
        bins = [Bin(r["sink_temperature_C"], r["hours"], r.get("source_temperature_C"),
                    r.get("source_mass_flow_kg_s")) for r in records]
    total = math.fsum(b.hours for b in bins)
    if total > HOURS_PER_LEAP_YEAR:
        raise YearError(f"{label}: the bins hold {total:,g} hours in all; allowed: at most "
                        f"{HOURS_PER_LEAP_YEAR:,} ({_YEAR_LIMIT_TEXT})")
    if total <= 0:
        raise YearError(f"{label}: the bins hold 0 hours in all; allowed: a total above 0 h")
    return Year(tuple(sorted(bins, key=_bin_order)), total, Path(path), form.name)


# ---------------------------------------------------------------------------------------------
# Where the file is
# ---------------------------------------------------------------------------------------------

def resolve_year_path(study_file: str | os.PathLike[str], relative: str) -> Path:
    """The year file named by the study key ``year.file``, resolved inside the study's folder.

    relative: the path as written in the study, relative to the folder of study_file. Refused
    with YearError: an absolute path, a path that resolves outside the study's folder (through
    ``..`` or a symbolic link), a missing file or a folder. Returns the resolved path.
    """
    where = f"{study_file}: year.file = {relative!r}"
    if not isinstance(relative, str) or not relative.strip():
        raise YearError(f"{where}: not a file path; allowed: {_FILE_ALLOWED}")
    if PurePath(relative).is_absolute() or PurePath(relative).anchor:
        raise YearError(f"{where}: an absolute path; allowed: {_FILE_ALLOWED}")
    folder = Path(study_file).parent.resolve()
    written = Path(os.path.normpath(folder / relative))
    try:
        target = (folder / relative).resolve()
    except (OSError, RuntimeError) as exc:  # a loop of symbolic links
        raise YearError(f"{where}: cannot be followed ({exc}); allowed: {_FILE_ALLOWED}") from None
    if not written.is_relative_to(folder):
        raise YearError(f"{where}: outside the study's folder {folder}; allowed: {_FILE_ALLOWED}")
    if not target.is_relative_to(folder):
        raise YearError(f"{where}: a symbolic link to {target}, outside the study's folder {folder}; "
                        f"allowed: {_FILE_ALLOWED}")
    if not target.exists():
        raise YearError(f"{where}: no such file ({target}); allowed: {_FILE_ALLOWED}")
    if not target.is_file():
        raise YearError(f"{where}: {target} is not a file; allowed: {_FILE_ALLOWED}")
    return target
