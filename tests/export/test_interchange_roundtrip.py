"""Property: any valid logbook survives write -> read unchanged, and write -> read -> write
is byte-identical, in both formats (the format's own promise, docs/interchange.md)."""

from __future__ import annotations

from datetime import date

from hypothesis import given, settings
from hypothesis import strategies as st

from planner.core.logbook import CATEGORIES, CONDITIONS, DEVICES, Approach, Entry, Logbook, Pilot
from planner.export import interchange as ix

# Free text: anything printable, incl. commas, quotes, "|", ";", non-ASCII.
_line_chars = st.characters(blacklist_categories=("Cs", "Cc"))
line_text = st.text(_line_chars, min_size=1, max_size=12)
multi_text = st.text(st.one_of(_line_chars, st.sampled_from("\n\r\t")), max_size=20)
optional_line = st.none() | line_text
kebab = st.from_regex(r"[a-z0-9]{1,6}(-[a-z0-9]{1,6}){0,2}", fullmatch=True)
approach_part = st.text(
    st.characters(blacklist_categories=("Cs", "Cc"), blacklist_characters="|;"), min_size=1, max_size=10
).filter(lambda s: s == s.strip())
hours = st.integers(0, 2_000).map(lambda n: n / 100) | st.integers(0, 99_999_99).map(lambda n: n / 100)
count = st.integers(0, 40)
hhmm = st.none() | st.builds(lambda h, m: f"{h:02d}:{m:02d}", st.integers(0, 23), st.integers(0, 59))

approaches = st.builds(
    Approach,
    type=st.none() | approach_part,
    airfield=st.none() | approach_part,
    runway=st.none() | approach_part,
    to_minimums=st.booleans(),
    coupled=st.booleans(),
    conditions=st.none() | st.sampled_from(CONDITIONS),
)


@st.composite
def entries(draw, ident):
    listed = draw(st.lists(approaches, max_size=4).map(tuple))
    unlogged = 0 if listed else draw(st.integers(0, 8))
    landings = draw(count)
    return Entry(
        id=ident,
        date=draw(st.dates(date(1990, 1, 1), date(2040, 12, 31))),
        device=draw(st.sampled_from(DEVICES)),
        category=draw(st.sampled_from(CATEGORIES)),
        aircraft_class=draw(st.none() | kebab),
        conditions=draw(st.none() | st.sampled_from(CONDITIONS)),
        approaches=listed,
        unlogged_approaches=unlogged,
        holds=draw(count),
        course_tracking=draw(st.booleans()),
        instrument_actual_hours=draw(hours),
        instrument_simulated_hours=draw(hours),
        landings=landings,
        night_full_stop_landings=draw(st.integers(0, landings)),
        partial_panel_approaches=draw(st.integers(0, len(listed) + unlogged)),
        ua_nose_high=draw(count),
        ua_nose_low=draw(count),
        checks=tuple(draw(st.lists(kebab, max_size=3, unique=True))),
        safety_pilot=draw(optional_line),
        instructor=draw(optional_line),
        remarks=draw(multi_text),
        aircraft=draw(optional_line),
        route=draw(optional_line),
        start_time=draw(hhmm),
        end_time=draw(hhmm),
        total_hours=draw(hours),
        pic_hours=draw(hours),
        dual_received_hours=draw(hours),
        solo_hours=draw(hours),
    )


ids = line_text.filter(lambda s: s == s.strip())


@st.composite
def logbooks(draw):
    pilot = Pilot(
        name=draw(line_text.filter(str.strip)),
        home_timezone=draw(st.none() | st.sampled_from(sorted(ix._zones())[::37])),
        instrument_categories=tuple(draw(st.lists(st.sampled_from(CATEGORIES), unique=True))),
        category_classes=tuple(
            draw(st.lists(st.builds("{}/{}".format, st.sampled_from(CATEGORIES), kebab), unique=True, max_size=3))
        ),
    )
    idents = draw(st.lists(ids, max_size=6, unique=True))
    return Logbook(pilot, tuple(draw(entries(i)) for i in idents))


def canonical(book: Logbook) -> Logbook:
    return Logbook(book.pilot, tuple(sorted(book.entries, key=lambda e: (e.date, e.id))))


@settings(max_examples=150, deadline=None)
@given(logbooks())
def test_json_write_read_gives_equal_logbook_and_identical_bytes(book):
    text = ix.write_json(book)
    back = ix.read_json(text)
    assert back == canonical(book)
    assert ix.write_json(back) == text


@settings(max_examples=150, deadline=None)
@given(logbooks())
def test_csv_write_read_gives_equal_logbook_and_identical_bytes(book):
    text = ix.write_csv(book)
    back = ix.read_csv(text)
    assert back == canonical(book)
    assert ix.write_csv(back) == text


@settings(max_examples=60, deadline=None)
@given(logbooks())
def test_json_and_csv_carry_the_same_logbook(book):
    assert ix.read(ix.write_csv(book), "x.csv") == ix.read(ix.write_json(book), "x.json")
