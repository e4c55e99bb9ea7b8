"""The timeline SVG drawn from a hand-made timeline report (rendering only; dates are arbitrary)."""

from __future__ import annotations

import re
from datetime import date

from planner.core import currency
from planner.web import chart

START, END, TODAY = date(2025, 6, 1), date(2027, 6, 1), date(2026, 12, 1)


def _row(changes):  # type: ignore[no-untyped-def]
    return currency.RequirementTimeline("faa-part61", "instrument", "airplane", "Instrument", "14 CFR 61.57(c)", tuple(changes))


def _report(*rows):  # type: ignore[no-untyped-def]
    return currency.TimelineReport(START, END, ("faa-part61",), tuple(rows))


def _svg(report, planned=()):  # type: ignore[no-untyped-def]
    return str(chart.render(report, TODAY, label=lambda r: f"{r.title} ({r.scope})", planned=planned))


def test_a_moved_date_inside_one_state_does_not_split_the_band() -> None:
    row = _row([
        currency.StateChange(START, "current", date(2025, 11, 30), None, None),
        currency.StateChange(date(2025, 8, 3), "current", date(2026, 2, 28), None, None),
        currency.StateChange(date(2026, 3, 1), "grace", date(2026, 2, 28), date(2026, 8, 31), "tasks"),
        currency.StateChange(date(2026, 9, 1), "lapsed", date(2026, 2, 28), None, "check"),
    ])
    svg = _svg(_report(row))
    bands = re.findall(r'<rect class="tl-band tl-(\w+)"', svg)
    assert bands == ["current", "grace", "lapsed"]
    assert "Instrument (airplane): current from 2025-06-01 to 2026-02-28" in svg
    assert "grace from 2026-03-01 to 2026-08-31 (regain with tasks until 2026-08-31)" in svg
    # Deadlines: the last valid day of the period and the end of the regain stage.
    assert re.findall(r'class="tl-deadline"[^>]*><title>[^<]*?(last valid day|end of regain with tasks) (\d{4}-\d\d-\d\d)', svg) == [
        ("last valid day", "2026-02-28"), ("end of regain with tasks", "2026-08-31"),
    ]
    assert "Instrument (airplane): lapsed today, last valid day 2026-02-28." in svg


def test_each_state_has_its_own_pattern_and_a_word_and_no_style_attributes() -> None:
    row = _row([
        currency.StateChange(START, "current", date(2026, 1, 31), None, None),
        currency.StateChange(date(2026, 2, 1), "grace", date(2026, 1, 31), date(2026, 7, 31), "tasks"),
        currency.StateChange(date(2026, 8, 1), "lapsed", date(2026, 1, 31), None, "check"),
    ])
    svg = _svg(_report(row))
    for word in ("current", "grace", "lapsed"):
        assert f'fill="url(#tl-{word})"' in svg and f">{word}</text>" in svg
    assert "style=" not in svg and "<script" not in svg


def test_today_and_planned_dates_are_marked_and_labelled() -> None:
    row = _row([currency.StateChange(START, "current", date(2027, 3, 31), None, None)])
    svg = _svg(_report(row), planned=[date(2026, 12, 10), date(2028, 1, 1)])
    assert "<title>Today 2026-12-01</title>" in svg
    assert svg.count('class="tl-planned"') == 1  # the date outside the range is not drawn
    assert "Planned entry on 2026-12-10." in svg
    assert 'aria-labelledby="timeline-title timeline-desc"' in svg


def test_labels_are_escaped_and_shortened_with_the_full_text_in_the_title() -> None:
    row = currency.RequirementTimeline("x", "y", "pilot", "<b>A very long requirement title that goes on</b>", "c", (
        currency.StateChange(START, "lapsed", None, None, "tasks"),))
    svg = str(chart.render(_report(row), TODAY, label=lambda r: r.title))
    assert "<b>" not in svg and "&lt;b&gt;A very long requirement title that goes on&lt;/b&gt;" in svg
    assert "…</text>" in svg
