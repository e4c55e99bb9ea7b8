"""JSON reader and writer: defaults, mapping to the core dataclasses, every refusal.

The format itself is our own design, specified in docs/interchange.md; the
expected messages below are that specification. Calendar facts are marked.
"""

from __future__ import annotations

import json
from datetime import date

import pytest

from planner.core.logbook import Approach, Entry, Logbook, Pilot
from planner.export import interchange as ix
from tests.export.helpers import doc, entry, only


def test_minimal_entry_takes_every_documented_default():
    book = ix.read_json(doc(entry("e1")))
    assert book.pilot == Pilot(name="Test Pilot")
    assert only(book.entries) == Entry(id="e1", date=date(2026, 6, 15))
    e = book.entries[0]
    assert (e.device, e.category, e.aircraft_class, e.conditions) == ("aircraft", "airplane", None, None)
    assert (e.approaches, e.unlogged_approaches, e.holds, e.course_tracking) == ((), 0, 0, False)
    assert (e.ua_nose_high, e.ua_nose_low, e.checks, e.remarks) == (0, 0, (), "")


def test_fields_map_onto_core_names():
    text = doc(
        entry(
            "e7",
            device="atd",
            category="airplane",
            **{"class": "single-engine-land"},
            conditions="simulated",
            approaches=[
                {"type": "ILS", "airfield": "QJRR", "runway": "27L", "to_minimums": True},
                {"type": "RNAV (GPS)", "airfield": "QPNV", "coupled": True, "conditions": "actual"},
            ],
            holds=2,
            course_tracking=True,
            instrument_simulated_hours=1.2,
            partial_panel_approaches=1,
            unusual_attitude_recoveries={"nose_high": 2, "nose_low": 3},
            checks=["ipc", "easa-ir-proficiency-check"],
            safety_pilot="A. Safety",
            instructor="I. Nstructor",
            remarks="line one\nline two",
            aircraft="JR-ATD1",
            route="QJRR-QPNV-QJRR",
            start_time="07:05",
            end_time="23:59",
            total_hours=1.25,
            pic_hours=0,
            dual_received_hours=1.25,
            solo_hours=0.5,
        ),
        pilot={
            "name": "Test Pilot",
            "home_timezone": "America/Denver",
            "instrument_categories": ["airplane"],
            "category_classes": ["airplane/single-engine-land", "airplane/multi-engine-land"],
        },
    )
    book = ix.read_json(text)
    e = only(book.entries)
    assert e.aircraft_class == "single-engine-land"
    assert e.approaches == (
        Approach("ILS", "QJRR", "27L", to_minimums=True),
        Approach("RNAV (GPS)", "QPNV", None, coupled=True, conditions="actual"),
    )
    assert (e.ua_nose_high, e.ua_nose_low) == (2, 3)
    assert e.checks == ("ipc", "easa-ir-proficiency-check")
    assert (e.start_time, e.end_time, e.total_hours, e.solo_hours) == ("07:05", "23:59", 1.25, 0.5)
    assert book.pilot.category_classes == (
        "airplane/single-engine-land",
        "airplane/multi-engine-land",
    )


def test_integer_approaches_mean_unlogged_approaches():
    e = only(ix.read_json(doc(entry(approaches=4, partial_panel_approaches=1))).entries)
    assert (e.approaches, e.unlogged_approaches, e.approach_count) == ((), 4, 4)


def test_empty_optional_text_is_the_same_as_null():
    e = only(ix.read_json(doc(entry(safety_pilot="", route="", **{"class": ""}))).entries)
    assert (e.safety_pilot, e.route, e.aircraft_class) == (None, None, None)


def test_approach_without_type_or_airfield_is_kept_for_the_engine_to_refuse_credit():
    e = only(ix.read_json(doc(entry(approaches=[{"airfield": "QJRR"}, {}]))).entries)
    assert e.approaches == (Approach(None, "QJRR"), Approach(None, None))


def test_entries_come_back_sorted_by_date_then_id():
    text = doc(
        {"id": "b", "date": "2026-01-02"},
        {"id": "z", "date": "2026-01-01"},
        {"id": "a", "date": "2026-01-02"},
    )
    assert [e.id for e in ix.read_json(text).entries] == ["z", "a", "b"]


def test_byte_order_mark_is_accepted():
    assert ix.read_json("\ufeff" + doc(entry())).entries[0].id == "e1"


# ---------------------------------------------------------------- refusals

REFUSALS = [
    pytest.param(
        doc(entry("e3", date="2026-02-29")),
        'entry "e3": field "date": is not a real date, got "2026-02-29"',
        id="date-not-in-calendar (Gregorian: 2026 is not a leap year)",
    ),
    pytest.param(
        doc(entry("e3", date="2026-6-1")),
        'entry "e3": field "date": must be a date YYYY-MM-DD, got "2026-6-1"',
        id="date-not-zero-padded",
    ),
    pytest.param(
        doc(entry("e3", date="20260601")),
        'entry "e3": field "date": must be a date YYYY-MM-DD, got "20260601"',
        id="date-basic-iso-form",
    ),
    pytest.param(doc({"id": "e3"}), 'entry "e3": field "date": is required', id="date-missing"),
    pytest.param(
        doc(entry("e17", holds=-1)),
        'entry "e17": field "holds": must be a whole number >= 0, got -1',
        id="negative-count",
    ),
    pytest.param(
        doc(entry("e17", landings=100_000)),
        'entry "e17": field "landings": must be at most 99999, got 100000',
        id="count-too-large",
    ),
    pytest.param(
        doc(entry("e4", total_hours=100_000)),
        'entry "e4": field "total_hours": must be a number of hours from 0 to 99999.99, got 100000',
        id="hours-too-large",
    ),
    pytest.param(
        doc(entry("e17", landings=2.5)),
        'entry "e17": field "landings": must be a whole number >= 0, got 2.5',
        id="fractional-count",
    ),
    pytest.param(
        doc(entry("e17", holds=True)),
        'entry "e17": field "holds": must be a whole number >= 0, got true',
        id="boolean-count",
    ),
    pytest.param(
        doc(entry("e17", unusual_attitude_recoveries={"nose_high": -2})),
        'entry "e17": field "unusual_attitude_recoveries.nose_high": must be a whole number >= 0, got -2',
        id="negative-ua-count",
    ),
    pytest.param(
        doc(entry("e17", approaches=-1)),
        'entry "e17": field "approaches": must be a whole number >= 0, got -1',
        id="negative-approach-count",
    ),
    pytest.param(
        doc(entry("e17", approaches="six")),
        'entry "e17": field "approaches": must be a list of approaches or a whole number >= 0, got "six"',
        id="approaches-wrong-type",
    ),
    pytest.param(
        doc(entry("e4", instrument_actual_hours=-0.5)),
        'entry "e4": field "instrument_actual_hours": must be a number of hours from 0 to 99999.99, got -0.5',
        id="negative-hours",
    ),
    pytest.param(
        doc(entry("e4", total_hours=1.234)),
        'entry "e4": field "total_hours": must have at most 2 decimals, got 1.234',
        id="hours-three-decimals",
    ),
    pytest.param(
        doc(entry("e4", pic_hours=True)),
        'entry "e4": field "pic_hours": must be a number of hours >= 0, got true',
        id="boolean-hours",
    ),
    pytest.param(
        doc(entry("e4", pic_hours="1.5")),
        'entry "e4": field "pic_hours": must be a number of hours >= 0, got "1.5"',
        id="hours-as-text",
    ),
    pytest.param(
        doc(entry("e5", device="simulator")),
        'entry "e5": field "device": must be one of aircraft, ffs, ftd, atd, got "simulator"',
        id="unknown-device",
    ),
    pytest.param(
        doc(entry("e5", category="helicopter")),
        'entry "e5": field "category": must be one of airplane, rotorcraft, powered-lift, airship, glider, '
        'got "helicopter"',
        id="unknown-category",
    ),
    pytest.param(
        doc(entry("e5", conditions="imc")),
        'entry "e5": field "conditions": must be one of actual, simulated, got "imc"',
        id="unknown-conditions",
    ),
    pytest.param(
        doc(entry("e5", approaches=[{"type": "ILS", "airfield": "QJRR", "conditions": "hood"}])),
        'entry "e5": field "approaches[1].conditions": must be one of actual, simulated, got "hood"',
        id="unknown-approach-conditions",
    ),
    pytest.param(
        doc(entry("e5", device=None)),
        'entry "e5": field "device": must be one of aircraft, ffs, ftd, atd, got null',
        id="null-device",
    ),
    pytest.param(
        doc(entry("e5", course_tracking="yes")),
        'entry "e5": field "course_tracking": must be true or false, got "yes"',
        id="tracking-not-boolean",
    ),
    pytest.param(
        doc(entry("e5", approaches=[{"type": "ILS", "airfield": "QJRR", "to_minimums": 1}])),
        'entry "e5": field "approaches[1].to_minimums": must be true or false, got 1',
        id="to-minimums-not-boolean",
    ),
    pytest.param(
        doc(entry("e6", hodls=2)),
        'entry "e6": field "hodls": unknown field (allowed: ',
        id="unknown-entry-field",
    ),
    pytest.param(
        doc(entry("e6", approaches=[{"type": "ILS", "airfield": "QJRR", "rwy": "27"}])),
        'entry "e6": field "approaches[1].rwy": unknown field (allowed: type, airfield, runway, '
        "to_minimums, coupled, conditions)",
        id="unknown-approach-field",
    ),
    pytest.param(
        doc(entry("e6", unusual_attitude_recoveries={"nose_high": 1, "spiral": 1})),
        'entry "e6": field "unusual_attitude_recoveries.spiral": unknown field (allowed: nose_high, nose_low)',
        id="unknown-ua-field",
    ),
    pytest.param(
        doc(entry(), pilot={"name": "P", "licence": "x"}),
        'pilot: field "licence": unknown field (allowed: name, home_timezone, instrument_categories, '
        "category_classes)",
        id="unknown-pilot-field",
    ),
    pytest.param(
        doc(entry(), school="QJRR"),
        'document: field "school": unknown field (allowed: format_version, pilot, entries)',
        id="unknown-top-level-field",
    ),
    pytest.param(
        doc(entry("e8"), entry("e8", date="2026-07-01")),
        'entry "e8": field "id": duplicate id "e8" (already used by entry #1)',
        id="duplicate-id",
    ),
    pytest.param(
        doc(entry(), format_version=2),
        'document: field "format_version": must be 1, got 2',
        id="format-version-2",
    ),
    pytest.param(
        doc(entry(), format_version="1"),
        'document: field "format_version": must be 1, got "1"',
        id="format-version-text",
    ),
    pytest.param(
        doc(entry(), format_version=True),
        'document: field "format_version": must be 1, got true',
        id="format-version-boolean",
    ),
    pytest.param(
        json.dumps({"pilot": {"name": "P"}, "entries": []}),
        'document: field "format_version": is required',
        id="format-version-missing",
    ),
    pytest.param(
        json.dumps({"format_version": 1, "entries": []}),
        'document: field "pilot": is required',
        id="pilot-missing",
    ),
    pytest.param(doc(pilot={"home_timezone": "UTC"}), 'pilot: field "name": is required', id="name-missing"),
    pytest.param(doc(pilot={"name": "  "}), 'pilot: field "name": must not be empty', id="name-blank"),
    pytest.param(
        doc(pilot={"name": "P", "home_timezone": "America/Denvr"}),
        'pilot: field "home_timezone": must be an IANA time zone name such as "America/Denver", '
        'got "America/Denvr"',
        id="timezone-not-iana (zoneinfo)",
    ),
    pytest.param(
        doc(pilot={"name": "P", "home_timezone": "MST7"}),
        'pilot: field "home_timezone": must be an IANA time zone name',
        id="timezone-posix-string (zoneinfo)",
    ),
    pytest.param(
        doc(pilot={"name": "P", "instrument_categories": ["airplanes"]}),
        'pilot: field "instrument_categories[1]": must be one of airplane, rotorcraft',
        id="instrument-category-unknown",
    ),
    pytest.param(
        doc(pilot={"name": "P", "category_classes": ["single-engine-land"]}),
        'pilot: field "category_classes[1]": must be "category/class"',
        id="category-class-without-category",
    ),
    pytest.param(
        doc(pilot={"name": "P", "category_classes": ["airplane/Single Engine"]}),
        'pilot: field "category_classes[1] (class)": must be lowercase words joined by hyphens',
        id="category-class-bad-class",
    ),
    pytest.param(
        doc(pilot={"name": "P", "instrument_categories": ["airplane", "airplane"]}),
        'pilot: field "instrument_categories": lists "airplane" twice',
        id="instrument-category-twice",
    ),
    pytest.param(
        doc(entry("e9", landings=1, night_full_stop_landings=3)),
        'entry "e9": field "night_full_stop_landings": must not exceed landings (1), got 3',
        id="night-landings-exceed-landings",
    ),
    pytest.param(
        doc(entry("e9", approaches=[{"type": "LOC", "airfield": "QCTW"}], partial_panel_approaches=2)),
        'entry "e9": field "partial_panel_approaches": must not exceed the approaches logged (1), got 2',
        id="partial-panel-exceeds-approaches",
    ),
    pytest.param(
        doc(entry("e10", checks=["IPC"])),
        'entry "e10": field "checks[1]": must be lowercase words joined by hyphens (e.g. "ipc"), got "IPC"',
        id="check-not-kebab",
    ),
    pytest.param(
        doc(entry("e10", checks=[""])),
        'entry "e10": field "checks[1]": must be lowercase words joined by hyphens',
        id="check-empty",
    ),
    pytest.param(
        doc(entry("e10", checks="ipc")),
        'entry "e10": field "checks": must be a list, got "ipc"',
        id="checks-not-a-list",
    ),
    pytest.param(
        doc(entry("e10", checks=["ipc", "ipc"])),
        'entry "e10": field "checks": lists "ipc" twice',
        id="check-twice",
    ),
    pytest.param(
        doc(entry("e11", **{"class": "Single Engine Land"})),
        'entry "e11": field "class": must be lowercase words joined by hyphens',
        id="class-not-kebab",
    ),
    pytest.param(
        doc(entry("e12", start_time="7:30")),
        'entry "e12": field "start_time": must be a local time HH:MM (00:00 to 23:59), got "7:30"',
        id="time-not-padded",
    ),
    pytest.param(
        doc(entry("e12", end_time="24:00")),
        'entry "e12": field "end_time": must be a local time HH:MM (00:00 to 23:59), got "24:00"',
        id="time-24h",
    ),
    pytest.param(
        doc(entry("e13", approaches=[{"type": "ILS; LOC", "airfield": "QJRR"}])),
        'entry "e13": field "approaches[1].type": must not contain "|" or ";"',
        id="approach-type-with-separator",
    ),
    pytest.param(
        doc(entry("e13", approaches=[{"type": "ILS", "airfield": "QJRR ", "runway": "9"}])),
        'entry "e13": field "approaches[1].airfield": must not start or end with a space, got "QJRR "',
        id="approach-airfield-trailing-space",
    ),
    pytest.param(
        doc(entry("e13", approaches=["ILS QJRR"])),
        'entry "e13": field "approaches[1]": must be an object with type and airfield, got "ILS QJRR"',
        id="approach-not-object",
    ),
    pytest.param(
        doc(entry("e14", safety_pilot="A\nB")),
        'entry "e14": field "safety_pilot": must not contain line breaks',
        id="line-break-in-name",
    ),
    pytest.param(
        doc(entry("e14", remarks="bell\x07")),
        'entry "e14": field "remarks": must not contain control characters',
        id="control-character-in-remarks",
    ),
    pytest.param(doc({"date": "2026-01-01"}), 'entry #1 (no valid id): field "id": is required', id="id-missing"),
    pytest.param(
        doc({"id": 7, "date": "2026-01-01"}),
        'entry #1 (no valid id): field "id": must be non-empty text, got 7',
        id="id-number",
    ),
    pytest.param(
        doc({"id": " e1", "date": "2026-01-01"}),
        'entry " e1": field "id": must not start or end with a space',
        id="id-leading-space",
    ),
    pytest.param(doc(["e1"]), 'entry #1 (no valid id): field "entry": must be an object', id="entry-not-object"),
    pytest.param(
        '{"format_version": 1, "pilot": {"name": "P"}, "entries": [\n'
        '  {"id": "e1", "date": "2026-01-01", "holds": 1, "holds": 2}]}',
        'entry "e1": field "holds": appears twice in the same object',
        id="duplicate-key",
    ),
    pytest.param(
        '{"format_version": 1, "pilot": {"name": "P"}, "entries": [\n'
        '  {"id": "e1", "date": "2026-01-01", "total_hours": NaN}]}',
        "not valid JSON: NaN is not a number in JSON",
        id="nan",
    ),
    pytest.param(
        '{"format_version": 1,\n  "pilot": {"name": "P"}\n  "entries": []}',
        "not valid JSON: line 3, column 3: Expecting ',' delimiter",
        id="bad-json-names-line",
    ),
    pytest.param("[]", "document: must be an object with format_version, pilot and entries, got []", id="array"),
]


@pytest.mark.parametrize(("text", "message"), REFUSALS)
def test_bad_document_is_refused_naming_entry_and_field(text, message):
    with pytest.raises(ix.InterchangeError) as caught:
        ix.read_json(text)
    assert str(caught.value).startswith(message)


def test_error_carries_entry_id_and_field_as_attributes():
    with pytest.raises(ix.InterchangeError) as caught:
        ix.read_json(doc(entry("e17", holds=-1)))
    assert (caught.value.entry_id, caught.value.field, caught.value.line) == ("e17", "holds", None)
    assert isinstance(caught.value, ValueError)


def test_bad_json_error_carries_line():
    with pytest.raises(ix.InterchangeError) as caught:
        ix.read_json('{\n\n  "format_version": 1,,\n}')
    assert caught.value.line == 3


# ---------------------------------------------------------------- writer


def test_writer_output_is_canonical_and_reads_back_byte_identical():
    text = doc(
        {"id": "b", "date": "2026-03-01", "total_hours": 1.50, "approaches": 2},
        {"id": "a", "date": "2026-03-01", "remarks": "Piñon Valley", "approaches": [{"type": "VOR", "airfield": "QPNV"}]},
        pilot={"name": "P", "home_timezone": "America/Denver"},
    )
    once = ix.write_json(ix.read_json(text))
    assert ix.write_json(ix.read_json(once)) == once
    assert once.endswith("}\n") and not once.endswith("\n\n")
    assert "Piñon" in once  # written as UTF-8 text, not \\u escapes
    written = json.loads(once)
    assert [e["id"] for e in written["entries"]] == ["a", "b"]
    assert list(written["entries"][0]) == list(ix.ENTRY_KEYS)
    assert list(written["entries"][0]["approaches"][0]) == list(ix.APPROACH_KEYS)
    assert written["entries"][1]["total_hours"] == 1.5 and '"total_hours": 1.5,' in once
    assert '"pic_hours": 0,' in once
    assert written["entries"][1]["approaches"] == 2


def test_writer_refuses_what_it_could_not_read_back():
    both = Entry(id="x", date=date(2026, 1, 1), approaches=(Approach("ILS", "QJRR"),), unlogged_approaches=2)
    with pytest.raises(ix.InterchangeError, match='entry "x": field "approaches": cannot hold both'):
        ix.write_json(Logbook(Pilot("P"), (both,)))
    inexact = Entry(id="y", date=date(2026, 1, 1), total_hours=0.1 + 0.2)
    with pytest.raises(ix.InterchangeError, match='entry "y": field "total_hours": must have at most 2 decimals'):
        ix.write_json(Logbook(Pilot("P"), (inexact,)))
    with pytest.raises(ix.InterchangeError, match='entry "y": field "total_hours"'):
        ix.write_csv(Logbook(Pilot("P"), (inexact,)))


def test_writer_turns_empty_optional_text_into_null():
    e = Entry(id="x", date=date(2026, 1, 1), safety_pilot="", route="")
    written = json.loads(ix.write_json(Logbook(Pilot("P"), (e,))))
    assert (written["entries"][0]["safety_pilot"], written["entries"][0]["route"]) == (None, None)


@pytest.mark.parametrize(
    ("filename", "first"),
    [("book.JSON", "{"), ("book.csv", "format_version"), ("book.txt", "{"), ("book", "format_version")],
)
def test_read_chooses_format_by_extension_or_content(filename, first):
    book = Logbook(Pilot("P"), (Entry(id="e1", date=date(2026, 1, 1)),))
    text = ix.write_json(book) if first == "{" else ix.write_csv(book)
    assert ix.read(text, filename) == book


def test_read_with_wrong_extension_reports_the_parse_problem():
    csv_text = ix.write_csv(Logbook(Pilot("P")))
    with pytest.raises(ix.InterchangeError, match="not valid JSON: line 1, column 1"):
        ix.read(csv_text, "book.json")
