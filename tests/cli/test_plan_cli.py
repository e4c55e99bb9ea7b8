"""`planner schools`, `planner plan` and `planner export-ics`, run in-process on the real demo (seed_demo/)."""

from __future__ import annotations

import io
import json
from datetime import UTC, datetime
from pathlib import Path

import pytest
import vobject

from planner import CAUTION
from planner.cli import main

FROM, TO, NOW = "2026-12-01", "2026-12-28", "2026-12-01T06:00Z"


@pytest.fixture
def demo(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> dict:
    monkeypatch.setenv("PLANNER_DATABASE_URL", f"sqlite:///{tmp_path / 'demo.sqlite3'}")
    assert main(["init"]) == 0 and main(["demo"]) == 0
    capsys.readouterr()
    assert main(["schools", "--json"]) == 0
    (school,) = json.loads(capsys.readouterr().out)
    assert school["slug"] == "juniper-ridge" and school["name"] == "Juniper Ridge Flight Academy"
    assert main(["pilots", "--json"]) == 0
    pilots = {p["name"].split()[0]: p["id"] for p in json.loads(capsys.readouterr().out)}
    return {"school": school["id"], "pilots": pilots}


def _plan(capsys, demo, *extra: str) -> dict:  # type: ignore[no-untyped-def]
    assert main(["plan", "--school", str(demo["school"]), "--from", FROM, "--to", TO, "--now", NOW, "--json", *extra]) == 0
    return json.loads(capsys.readouterr().out)


def test_plan_json_covers_every_pilot_in_need_and_explains(demo, capsys) -> None:  # type: ignore[no-untyped-def]
    out = _plan(capsys, demo)
    assert out["caution"] == CAUTION and out["saved"] is False
    assert out["sessions"] and all(s["why_slot"] and s["why_partner"] for s in out["sessions"])
    flying = {leg["pilot_flying"]["id"] for s in out["sessions"] for leg in s["legs"]}
    unmet = {u["pilot"]["id"] for u in out["unmet"]}
    # Dev (medical expired 2026-10-31) and Tobias (nobody free in his hours) get reasons, the others sessions.
    assert demo["pilots"]["Dev"] in unmet and demo["pilots"]["Dev"] not in flying
    assert {demo["pilots"][n] for n in ("Priya", "Mara", "Rafael")} <= flying
    assert all(u["reason"] for u in out["unmet"])
    assert demo["pilots"]["Dev"] not in {leg["safety_pilot"]["id"] for s in out["sessions"] for leg in s["legs"]}
    assert any(n["unit"] == "check" and n["pilot_id"] == demo["pilots"]["Priya"] for n in out["not_plannable"])


def test_plan_table_ends_with_the_caution_and_reports_progress_on_stderr(demo, capsys) -> None:  # type: ignore[no-untyped-def]
    assert main(["plan", "--school", str(demo["school"]), "--from", FROM, "--to", TO, "--now", NOW]) == 0
    cap = capsys.readouterr()
    assert cap.out.rstrip().endswith(CAUTION)
    assert "why this slot:" in cap.out and "Needs no session meets:" in cap.out and "--save" in cap.out
    assert "scheduling" in cap.err and "gaps" in cap.err


def test_plan_save_stores_sessions_and_export_ics_writes_them(demo, capsys, tmp_path) -> None:  # type: ignore[no-untyped-def]
    out = _plan(capsys, demo, "--save")
    assert out["saved"] and all(isinstance(s["id"], int) for s in out["sessions"])
    mara = demo["pilots"]["Mara"]
    target = tmp_path / "mara.ics"
    assert main(["export-ics", "--pilot", str(mara), "--as-of", FROM, "-o", str(target)]) == 0
    cal = vobject.readOne(target.read_text(encoding="utf-8"))  # vobject: an independent parser
    timed = [ev for ev in cal.vevent_list if hasattr(ev.dtstart.value, "hour")]
    mine = [s for s in out["sessions"] if any(mara in (l["pilot_flying"]["id"], l["safety_pilot"]["id"]) for l in s["legs"])]
    assert len(timed) == len(mine) >= 1
    assert CAUTION in capsys.readouterr().err


def test_export_ics_to_stdout_is_a_calendar(demo, capsys) -> None:  # type: ignore[no-untyped-def]
    assert main(["export-ics", "--pilot", str(demo["pilots"]["Signe"]), "--as-of", FROM]) == 0
    out = capsys.readouterr().out
    assert out.startswith("BEGIN:VCALENDAR") and "END:VCALENDAR" in out


def test_bad_input_gets_a_message_and_an_exit_status(demo, capsys) -> None:  # type: ignore[no-untyped-def]
    assert main(["plan", "--school", "99", "--from", FROM, "--to", TO]) == 1
    assert "no school with id 99" in capsys.readouterr().err
    assert main(["plan", "--school", str(demo["school"]), "--from", TO, "--to", FROM]) == 2
    assert "before" in capsys.readouterr().err
    assert main(["export-ics", "--pilot", "999"]) == 1
    assert "no pilot with id 999" in capsys.readouterr().err
    with pytest.raises(SystemExit):
        main(["plan", "--school", "1", "--from", "2026-13-01", "--to", TO])


def test_plan_save_that_clashes_with_a_booking_made_meanwhile_exits_2_and_stores_nothing(  # type: ignore[no-untyped-def]
    demo, capsys, monkeypatch
) -> None:
    import os

    from sqlalchemy import func, select

    from planner import planning
    from planner.db import models
    from planner.db.session import make_engine, make_session_factory

    real, proposals = planning.propose_sessions, []

    def remember(*args, **kwargs):  # type: ignore[no-untyped-def]
        proposals.append(real(*args, **kwargs))
        return proposals[-1]

    monkeypatch.setattr(planning, "propose_sessions", remember)
    assert _plan(capsys, demo, "--save")["saved"]  # another instructor's run saves first
    engine = make_engine(os.environ["PLANNER_DATABASE_URL"])

    def count() -> int:
        with make_session_factory(engine)() as s:
            return s.scalar(select(func.count()).select_from(models.PracticeSession))

    before = count()
    # Ours was computed from the same state before theirs was committed: every session of it is taken now.
    monkeypatch.setattr(planning, "propose_sessions", lambda *args, **kwargs: proposals[0])
    status = main(["plan", "--school", str(demo["school"]), "--from", FROM, "--to", TO, "--now", NOW, "--save"])
    err = capsys.readouterr().err
    assert status == 2
    assert "planner plan: the proposed session 2026-12-" in err and " clashes: practice session " in err
    assert "already holds" in err and "nothing was stored" in err
    assert count() == before
    engine.dispose()


# A TAF for the demo airfield, valid 1 Dec 12:00Z to 2 Dec 18:00Z (read off the report's validity group by hand);
# from 2 Dec 06:00Z more than 6 SM and sky clear, which meets the default 3,000 ft / 5 SM.
TAF = "TAF QJRR 011120Z 0112/0218 27012KT P6SM SCT050\n  FM012000 30008KT 5SM BR BKN015\n  FM020600 30008KT P6SM SKC\n"


def _count_sessions() -> int:
    import os

    from sqlalchemy import text

    from planner.db.session import make_engine

    engine = make_engine(os.environ["PLANNER_DATABASE_URL"])
    try:
        with engine.connect() as conn:
            return conn.execute(text("SELECT count(*) FROM practice_sessions")).scalar_one()
    finally:
        engine.dispose()


def test_plan_reads_weather_reports_from_a_file_and_says_which_source_decided(demo, capsys, tmp_path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "qjrr.txt"
    path.write_text(TAF, encoding="utf-8")
    out = _plan(capsys, demo, "--weather", str(path))
    assert out["practice_minimums"] == {"ceiling_ft": 3000, "visibility_sm": 5.0} and out["daylight_only"] is False
    sources = {}
    for s in out["sessions"]:
        start, end = (datetime.fromisoformat(s[k]) for k in ("start", "end"))
        inside = datetime(2026, 12, 1, 12, tzinfo=UTC) <= start and end <= datetime(2026, 12, 2, 18, tzinfo=UTC)
        sources[s["start"]] = s["vmc_basis"]["source"]
        assert s["vmc_basis"]["source"] == ("report text" if inside else "climatology"), s["start"]
        if inside:
            assert s["vmc_likelihood"] == 1.0 and s["vmc_basis"]["reason"].startswith("TAF QJRR 011120Z")
    assert "report text" in sources.values(), "a session inside the TAF's validity (Priya, Wednesday 2 Dec)"
    assert "1 pasted or imported report for QJRR" in out["vmc_source"]
    # The table says the same in words.
    assert main(["plan", "--school", str(demo["school"]), "--from", FROM, "--to", TO, "--now", NOW, "--weather", str(path)]) == 0
    table = capsys.readouterr().out
    assert "    weather: VMC likelihood 100% from the report text: TAF QJRR 011120Z" in table
    assert "from climatology (no report covers the slot)" in table


def test_plan_reads_weather_from_standard_input(demo, capsys, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    monkeypatch.setattr("sys.stdin", io.TextIOWrapper(io.BytesIO(TAF.encode("utf-8")), encoding="utf-8"))
    out = _plan(capsys, demo, "--weather", "-")
    assert any(s["vmc_basis"]["source"] == "report text" for s in out["sessions"])


def test_unreadable_weather_text_names_the_file_and_line_and_plans_nothing(demo, capsys, tmp_path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "bad.txt"
    path.write_text(TAF.replace("P6SM SKC", "P6SM SKX"), encoding="utf-8")
    args = ["plan", "--school", str(demo["school"]), "--from", FROM, "--to", TO, "--now", NOW, "--save"]
    assert main([*args, "--weather", str(path)]) == 2
    err = capsys.readouterr().err
    assert f"--weather {path}: line 3: " in err and "'SKX'" in err and "nothing was planned" in err
    assert _count_sessions() == 0
    assert main([*args, "--weather", str(tmp_path / "missing.txt")]) == 2
    assert "cannot read" in capsys.readouterr().err
    path.write_bytes(b"\xff\xfe METAR")
    assert main([*args, "--weather", str(path)]) == 2
    assert "not UTF-8 text" in capsys.readouterr().err
    assert main([*args, "--min-ceiling", "20000"]) == 2
    assert "--min-ceiling: the ceiling minimum is whole feet from 0 to 10,000" in capsys.readouterr().err
    assert main([*args, "--min-visibility", "11"]) == 2
    assert "--min-visibility" in capsys.readouterr().err
    assert _count_sessions() == 0


def test_plan_options_for_minimums_and_daylight_are_echoed(demo, capsys) -> None:  # type: ignore[no-untyped-def]
    out = _plan(capsys, demo, "--min-ceiling", "4500", "--min-visibility", "7", "--daylight-only")
    assert out["practice_minimums"] == {"ceiling_ft": 4500, "visibility_sm": 7.0} and out["daylight_only"] is True
    assert all(s["daylight"] for s in out["sessions"])
    assert "ceiling 4,500 ft, visibility 7 SM" in out["vmc_source"]


def test_weather_text_beyond_the_limit_is_refused_whole(demo, capsys, tmp_path) -> None:  # type: ignore[no-untyped-def]
    args = ["plan", "--school", str(demo["school"]), "--from", FROM, "--to", TO, "--now", NOW]
    long = tmp_path / "long.txt"
    long.write_text((TAF + "\n") * 200, encoding="utf-8")  # about 26,000 characters, each report readable
    assert main([*args, "--weather", str(long)]) == 2
    assert "at most 20,000" in capsys.readouterr().err
    huge = tmp_path / "huge.txt"
    huge.write_bytes(b"\xc3\xa9" * 50_000)  # 100,000 bytes: refused before decoding
    assert main([*args, "--weather", str(huge)]) == 2
    assert "more than 20,000 characters" in capsys.readouterr().err
