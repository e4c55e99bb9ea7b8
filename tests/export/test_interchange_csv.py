"""CSV reader and writer: layout, approach sub-format, refusals naming line and column.

The layout is our own design (docs/interchange.md is the specification).
"""

from __future__ import annotations

from datetime import date

import pytest

from planner.core.logbook import Approach, Entry, Logbook, Pilot
from planner.export import interchange as ix

PILOT = Pilot(
    name="Test Pilot",
    home_timezone="America/Denver",
    instrument_categories=("airplane",),
    category_classes=("airplane/single-engine-land", "airplane/multi-engine-land"),
)
BOOK = Logbook(
    PILOT,
    (
        Entry(
            id="f2",
            date=date(2026, 6, 2),
            aircraft_class="single-engine-land",
            conditions="simulated",
            approaches=(
                Approach("ILS", "QJRR", "27L", to_minimums=True),
                Approach("RNAV (GPS)", "QPNV", None, coupled=True, conditions="actual"),
                Approach("VOR-A", "QCTW"),
                Approach(None, "QCTW", None, to_minimums=True),
            ),
            holds=1,
            course_tracking=True,
            total_hours=1.5,
            instrument_simulated_hours=1.1,
            landings=3,
            night_full_stop_landings=1,
            checks=("ipc", "flight-review"),
            safety_pilot="Safety, Sam",
            remarks='Said "hello"; then\nsecond line | bar',
        ),
        Entry(id="f1", date=date(2026, 6, 1), unlogged_approaches=3),
    ),
)

HEADER_LINE = ",".join(ix.CSV_ENTRY_COLUMNS)


def test_csv_layout_is_pilot_block_blank_line_entry_table():
    text = ix.write_csv(BOOK)
    assert text.endswith("\r\n")  # RFC 4180 line ends
    lines = text.split("\r\n")
    assert lines[0] == "format_version,pilot_name,home_timezone,instrument_categories,category_classes"
    assert lines[1] == "1,Test Pilot,America/Denver,airplane,airplane/single-engine-land; airplane/multi-engine-land"
    assert lines[2] == ""
    assert lines[3] == HEADER_LINE
    assert lines[4].startswith("f1,2026-06-01,aircraft,airplane,,,")
    assert lines[5].startswith("f2,2026-06-02,")
    assert lines[6] == "" and len(lines) == 7


def test_approaches_cell_sub_format():
    text = ix.write_csv(BOOK)
    assert ",3,0,no," in text  # integer shorthand, then holds 0, tracking no
    assert "ILS|QJRR|27L|minimums; RNAV (GPS)|QPNV||coupled actual; VOR-A|QCTW; |QCTW||minimums" in text


def test_csv_round_trip_is_byte_identical_and_equal_to_json():
    text = ix.write_csv(BOOK)
    back = ix.read_csv(text)
    assert back == Logbook(PILOT, tuple(sorted(BOOK.entries, key=lambda e: (e.date, e.id))))
    assert ix.write_csv(back) == text
    assert ix.read_json(ix.write_json(BOOK)) == back


def _with_row(row: str, *, header: str = HEADER_LINE) -> str:
    return "format_version,pilot_name\n1,P\n\n" + header + "\n" + row + "\n"


def test_short_rows_missing_columns_and_lenient_cells_take_defaults():
    text = _with_row("e1,2026-06-01", header="id,date,approaches,course_tracking")
    e = ix.read_csv(text).entries[0]
    assert e == Entry(id="e1", date=date(2026, 6, 1))
    text = _with_row("e1,2026-06-01,ILS | QJRR | 9 | simulated minimums ,TRUE, 2 ,,,", header="id,date,approaches,course_tracking,holds")
    e = ix.read_csv(text).entries[0]
    assert e.approaches == (Approach("ILS", "QJRR", "9", to_minimums=True, conditions="simulated"),)
    assert (e.course_tracking, e.holds) == (True, 2)


def test_spreadsheet_padding_and_byte_order_mark_are_tolerated():
    text = "\ufeffformat_version,pilot_name,,\n1,P,,\n,,,\nid,date,,\ne1,2026-06-01,,\n,,,\n"
    book = ix.read_csv(text)
    assert book == Logbook(Pilot("P"), (Entry(id="e1", date=date(2026, 6, 1)),))


def test_pilot_only_file_has_no_entries():
    assert ix.read_csv("format_version,pilot_name\n1,P\n") == Logbook(Pilot("P"))
    assert ix.read_csv(ix.write_csv(Logbook(Pilot("P")))) == Logbook(Pilot("P"))


def _row(**cells: str) -> str:
    values = {"id": "e1", "date": "2026-06-01", **cells}
    return _with_row(",".join(values.values()), header=",".join(values))


CSV_REFUSALS = [
    pytest.param(_row(date="2026-13-01"), 'line 5 (entry "e1"): column "date": is not a real date, got "2026-13-01"', id="bad-date"),
    pytest.param(_row(date="01/06/2026"), 'line 5 (entry "e1"): column "date": must be a date YYYY-MM-DD', id="date-spreadsheet-style"),
    pytest.param(_row(holds="-1"), 'line 5 (entry "e1"): column "holds": must be a whole number >= 0, got "-1"', id="negative-count"),
    pytest.param(_row(landings="two"), 'line 5 (entry "e1"): column "landings": must be a whole number >= 0, got "two"', id="count-not-number"),
    pytest.param(_row(unusual_attitude_nose_low="1.5"), 'line 5 (entry "e1"): column "unusual_attitude_nose_low": must be a whole number >= 0', id="fractional-ua"),
    pytest.param(_row(total_hours="1.234"), 'line 5 (entry "e1"): column "total_hours": must be a number of hours >= 0 with at most 2 decimals, got "1.234"', id="hours-three-decimals"),
    pytest.param(_row(pic_hours="-1"), 'line 5 (entry "e1"): column "pic_hours": must be a number of hours', id="negative-hours"),
    pytest.param(_row(device="sim"), 'line 5 (entry "e1"): column "device": must be one of aircraft, ffs, ftd, atd, got "sim"', id="unknown-device"),
    pytest.param(_row(course_tracking="maybe"), 'line 5 (entry "e1"): column "course_tracking": must be yes or no, got "maybe"', id="bad-boolean"),
    pytest.param(_row(approaches="ILS"), 'line 5 (entry "e1"): column "approaches": approach 1 must be type|airfield[|runway[|flags]], got "ILS"', id="approach-without-airfield"),
    pytest.param(_row(approaches="ILS|QJRR;"), 'line 5 (entry "e1"): column "approaches": approach 2 must be type|airfield', id="empty-approach"),
    pytest.param(_row(approaches="ILS|QJRR|9|min"), 'line 5 (entry "e1"): column "approaches": approach 1: unknown flag "min" (flags: minimums, coupled, actual, simulated)', id="unknown-flag"),
    pytest.param(_row(approaches="ILS|QJRR|9|actual simulated"), 'line 5 (entry "e1"): column "approaches": approach 1: flags repeated or contradictory', id="contradictory-flags"),
    pytest.param(_row(approaches="ILS|QJRR|9|minimums|x"), 'line 5 (entry "e1"): column "approaches": approach 1 must be type|airfield', id="too-many-parts"),
    pytest.param(_row(approaches="ILS|QJRR", partial_panel_approaches="2"), 'line 5 (entry "e1"): column "partial_panel_approaches": must not exceed the approaches logged (1), got 2', id="partial-panel-exceeds"),
    pytest.param(_row(landings="1", night_full_stop_landings="2"), 'line 5 (entry "e1"): column "night_full_stop_landings": must not exceed landings (1), got 2', id="night-landings-exceed"),
    pytest.param(_row(checks="ipc; Flight Review"), 'line 5 (entry "e1"): column "checks" (item 2): must be lowercase words joined by hyphens', id="bad-check"),
    pytest.param(_row(start_time="7.30"), 'line 5 (entry "e1"): column "start_time": must be a local time HH:MM', id="bad-time"),
    pytest.param(_with_row("e1,2026-06-01\ne1,2026-06-02", header="id,date"), 'line 6 (entry "e1"): column "id": duplicate id "e1" (already used on line 5)', id="duplicate-id"),
    pytest.param(_with_row(",2026-06-01", header="id,date"), 'line 5: column "id": must be non-empty text, got ""', id="id-empty"),
    pytest.param(_with_row("e1,2026-06-01,x", header="id,date"), "line 5: has 3 cells but the header has 2 columns", id="extra-cell"),
    pytest.param(_with_row("e1", header="id,date,holdz"), 'line 4: column "holdz": unknown column (allowed: id, date,', id="unknown-column"),
    pytest.param(_with_row("e1", header="id,date,date"), 'line 4: column "date": appears twice in the header', id="column-twice"),
    pytest.param(_with_row("2026-06-01", header="date"), 'line 4: column "id": missing from the header', id="id-column-missing"),
    pytest.param(_with_row("e1", header="id"), 'line 4: column "date": missing from the header', id="date-column-missing"),
    pytest.param("format_version,pilot_name\n2,P\n", 'line 2: column "format_version": must be 1, got 2', id="format-version-2"),
    pytest.param("format_version,pilot_name\nv1,P\n", 'line 2: column "format_version": must be 1, got "v1"', id="format-version-text"),
    pytest.param("format_version,pilot_name\n1,\n", 'line 2: column "pilot_name": must not be empty', id="pilot-name-empty"),
    pytest.param("format_version,pilot_name,home_timezone\n1,P,Denver\n", 'line 2: column "home_timezone": must be an IANA time zone name', id="timezone-not-iana (zoneinfo)"),
    pytest.param("format_version,pilot_name,category_classes\n1,P,airplane/single engine\n", 'line 2: column "category_classes" (item 1 (class)): must be lowercase words joined by hyphens', id="bad-category-class"),
    pytest.param("format_version,pilot_name,licence\n1,P,x\n", 'line 1: column "licence": unknown column (allowed: format_version, pilot_name,', id="unknown-pilot-column"),
    pytest.param("pilot_name\nP\n", 'line 1: column "format_version": missing from the header', id="format-version-column-missing"),
    pytest.param("format_version\n1\n", 'line 1: column "pilot_name": missing from the header', id="pilot-name-column-missing"),
    pytest.param("format_version,pilot_name\n", "line 2: the pilot row is missing below the pilot header", id="pilot-row-missing"),
    pytest.param("", 'line 1: column "format_version": the file is empty', id="empty-file"),
    pytest.param(
        'format_version,pilot_name\n1,P\n\nid,date,remarks\ne1,2026-06-01,"multi\nline"\ne2,2026-06-01,"bad"x\n',
        "line 7: not valid CSV:",
        id="bad-quoting-after-multiline-cell",
    ),
    pytest.param(
        'format_version,pilot_name\n1,P\n\nid,date,remarks\ne1,2026-06-01,"multi\nline"\ne2,2026-13-01,\n',
        'line 7 (entry "e2"): column "date": is not a real date',
        id="line-number-counts-physical-lines",
    ),
]


@pytest.mark.parametrize(("text", "message"), CSV_REFUSALS)
def test_bad_csv_is_refused_naming_line_and_column(text, message):
    with pytest.raises(ix.InterchangeError) as caught:
        ix.read_csv(text)
    assert str(caught.value).startswith(message)
    assert caught.value.line is not None


def test_csv_error_carries_line_entry_and_field():
    with pytest.raises(ix.InterchangeError) as caught:
        ix.read_csv(_row(holds="-1"))
    assert (caught.value.line, caught.value.entry_id, caught.value.field) == (5, "e1", "holds")


def _doc_block(lang: str) -> str:
    from pathlib import Path

    text = (Path(__file__).parents[2] / "docs" / "interchange.md").read_text(encoding="utf-8")
    return text.split(f"```{lang}\n", 1)[1].split("```", 1)[0]


def test_examples_in_the_documentation_read_and_agree():
    from_json = ix.read_json(_doc_block("json"))
    csv_example = _doc_block("csv").replace("\n", "\r\n")
    from_csv = ix.read_csv(csv_example)
    assert from_json == from_csv
    assert ix.write_csv(from_json) == csv_example


def test_an_approaches_cell_of_thirty_thousand_digits_is_refused_with_the_column_named() -> None:
    # Found by the fuzz run: Python refuses to convert a digit string this long and raised a bare ValueError.
    from datetime import date

    from planner.core.logbook import Entry, Logbook, Pilot
    from planner.export import interchange

    text = interchange.write_csv(Logbook(Pilot("A"), (Entry("e1", date(2026, 1, 1), unlogged_approaches=2),)))
    huge = text.replace(",2,", "," + "9" * 30000 + ",", 1)
    assert huge != text
    with pytest.raises(interchange.InterchangeError, match="approaches"):
        interchange.read_csv(huge)
