"""The demo scenario tells the stories it is meant to tell, as the engine sees them on 2026-12-01.

Runs the real commands on the real seed_demo/ data: `planner init`, `planner demo`,
`planner evaluate --pilot ID --json`. Dates follow 14 CFR 61.57(c)/(d) (six calendar
months after the month of the limiting task, then six more of grace).
"""

from __future__ import annotations

import json

import pytest

from planner.cli import main

AS_OF = "2026-12-01"


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> dict[str, int]:
    url = f"sqlite:///{tmp_path_factory.mktemp('demo') / 'demo.sqlite3'}"
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("PLANNER_DATABASE_URL", url)
        assert main(["init"]) == 0 and main(["demo"]) == 0
    return {"url": url}


def _evaluate(demo: dict, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch, first_name: str,
              rules: str = "faa-part61,practice-targets") -> dict[tuple[str, str, str], dict]:
    monkeypatch.setenv("PLANNER_DATABASE_URL", demo["url"])
    capsys.readouterr()
    assert main(["pilots", "--json"]) == 0
    pilots = json.loads(capsys.readouterr().out)
    (pilot,) = [p for p in pilots if p["name"].split()[0] == first_name]
    assert main(["evaluate", "--pilot", str(pilot["id"]), "--as-of", AS_OF, "--rules", rules, "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["as_of"] == AS_OF
    return {(r["rule_set"], r["id"], r["scope"]): r for r in report["requirements"]}


def test_mara_is_current_and_practised(demo, capsys, monkeypatch) -> None:
    r = _evaluate(demo, capsys, monkeypatch, "Mara")
    assert r[("faa-part61", "instrument", "airplane")]["state"] == "current"
    assert r[("practice-targets", "partial-panel", "pilot")]["state"] == "current"
    assert r[("practice-targets", "unusual-attitudes", "pilot")]["state"] == "current"
    assert r[("faa-part61", "passengers-night", "airplane/single-engine-land")]["state"] == "current"


def test_tobias_is_in_grace_until_the_end_of_april(demo, capsys, monkeypatch) -> None:
    # Last tasks in April 2026: current through 31 Oct 2026, tasks may restore it through 30 Apr 2027.
    inst = _evaluate(demo, capsys, monkeypatch, "Tobias")[("faa-part61", "instrument", "airplane")]
    assert (inst["state"], inst["valid_through"], inst["regain_by"], inst["regain_with"]) == (
        "grace", "2026-10-31", "2027-04-30", "tasks")


def test_priya_needs_an_instrument_proficiency_check(demo, capsys, monkeypatch) -> None:
    # 14 CFR 61.57(d): more than six calendar months past the currency period: only an IPC restores it.
    inst = _evaluate(demo, capsys, monkeypatch, "Priya")[("faa-part61", "instrument", "airplane")]
    assert (inst["state"], inst["regain_with"]) == ("lapsed", "check")
    assert inst["valid_through"] < "2026-06-01"


def test_dev_is_legal_but_out_of_practice(demo, capsys, monkeypatch) -> None:
    r = _evaluate(demo, capsys, monkeypatch, "Dev")
    assert r[("faa-part61", "instrument", "airplane")]["state"] == "current"
    for target in ("partial-panel", "unusual-attitudes"):
        status = r[("practice-targets", target, "pilot")]
        assert status["state"] == "lapsed" and status["evidence"][-1].startswith("dev-2026-03")


def test_signe_is_current_from_her_practical_test(demo, capsys, monkeypatch) -> None:
    # Practical test on 17 Oct 2026 counts as the tasks in October: current through 30 Apr 2027.
    inst = _evaluate(demo, capsys, monkeypatch, "Signe")[("faa-part61", "instrument", "airplane")]
    assert (inst["state"], inst["valid_through"]) == ("current", "2027-04-30")


def test_rafael_is_judged_under_both_of_his_regulators(demo, capsys, monkeypatch) -> None:
    r = _evaluate(demo, capsys, monkeypatch, "Rafael", rules="faa-part61,easa-fcl")
    assert r[("faa-part61", "instrument", "airplane")]["state"] == "current"
    easa = r[("easa-fcl", "instrument-rating", "airplane")]
    assert easa["state"] == "current" and easa["evidence"] == ["rafael-2026-02-14"]
