"""`planner evaluate` and `planner timeline` on a logbook file.

Logbook files are read by the real interchange reader.
"""

from __future__ import annotations

import json

import pytest

import planner
from planner.cli import main


@pytest.fixture
def logbook_file(tmp_path):
    ap = [{"type": "ILS", "airfield": "XQA1"}] * 6
    doc = {
        "format_version": 1,
        "pilot": {"name": "Invented Pilot", "home_timezone": "America/Denver", "instrument_categories": ["airplane"],
                  "category_classes": ["airplane/single-engine-land"]},
        "entries": [
            {"id": "a1", "date": "2024-09-05", "class": "single-engine-land", "conditions": "actual",
             "approaches": ap, "holds": 1, "course_tracking": True, "landings": 3},
        ],
    }
    path = tmp_path / "book.json"
    path.write_text(json.dumps(doc))
    return path


def test_evaluate_json_follows_the_contract(logbook_file, capsys):
    assert main(["evaluate", "--logbook", str(logbook_file), "--as-of", "2025-03-20", "--json"]) == 0
    out, err = capsys.readouterr()
    data = json.loads(out)
    assert data["as_of"] == "2025-03-20" and data["rule_sets"] == ["faa-part61"]
    instrument = next(r for r in data["requirements"] if r["id"] == "instrument")
    assert instrument == {
        "rule_set": "faa-part61", "id": "instrument", "scope": "airplane",
        "title": "Instrument experience to act as PIC under IFR", "citation": "14 CFR 61.57(c), (d)",
        "state": "current", "valid_through": "2025-03-31", "regain_by": None, "regain_with": None,
        "missing": {}, "evidence": ["a1"], "warnings": [],
    }
    assert planner.CAUTION in err


def test_evaluate_table_ends_with_the_caution(logbook_file, capsys):
    assert main(["evaluate", "--logbook", str(logbook_file), "--as-of", "2025-04-01",
                 "--rules", "faa-part61,practice-targets"]) == 0
    out = capsys.readouterr().out
    assert "instrument" in out and "GRACE" in out and "tasks by 2025-09-30" in out
    assert out.rstrip().endswith(planner.CAUTION)


def test_evaluate_with_planned_entries_shows_the_moves(logbook_file, tmp_path, capsys):
    plan = tmp_path / "plan.json"
    plan.write_text(json.dumps({"format_version": 1, "pilot": {"name": "Invented Pilot"}, "entries": [
        {"id": "p1", "date": "2025-03-15", "conditions": "actual", "class": "single-engine-land",
         "approaches": [{"type": "RNAV (GPS)", "airfield": "XQB2"}] * 6, "holds": 1, "course_tracking": True}]}))
    assert main(["evaluate", "--logbook", str(logbook_file), "--as-of", "2025-03-01", "--planned", str(plan)]) == 0
    out = capsys.readouterr().out
    assert "2025-03-31 -> 2025-09-30" in out and "+183 days" in out


def test_timeline_json_lists_changes(logbook_file, capsys):
    assert main(["timeline", "--logbook", str(logbook_file), "--from", "2024-09-01", "--to", "2025-12-31", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    instrument = next(r for r in data["requirements"] if r["id"] == "instrument")
    assert [(c["date"], c["state"]) for c in instrument["changes"]] == [
        ("2024-09-01", "lapsed"), ("2024-09-05", "current"), ("2025-04-01", "grace"), ("2025-10-01", "lapsed"),
    ]


def test_bad_rules_are_refused_with_a_clear_message(logbook_file, capsys):
    assert main(["evaluate", "--logbook", str(logbook_file), "--rules", "faa-part91"]) == 2
    assert "unknown rule set 'faa-part91'" in capsys.readouterr().err


def test_default_as_of_is_today_in_the_pilots_zone(logbook_file, capsys):
    assert main(["evaluate", "--logbook", str(logbook_file), "--json"]) == 0
    from datetime import datetime
    from zoneinfo import ZoneInfo

    assert json.loads(capsys.readouterr().out)["as_of"] == datetime.now(ZoneInfo("America/Denver")).date().isoformat()
