"""METAR/TAF reading, flight categories, climatology and VMC likelihood.

References:
* the ``metar`` package (python-metar 2.0, a general-purpose METAR parser) is
  the reference for visibility and ceiling on every sample report below;
* flight categories: the common-practice table of the domain notes §1.7;
* practice minimums 3,000 ft / 5 SM: product default (issue 5 point 4).
Station identifiers are invented (Q... is not an assigned prefix here).
"""

from __future__ import annotations

import functools
import re
from datetime import datetime, timedelta, timezone
from pathlib import Path
from zoneinfo import ZoneInfo

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from metar.Metar import Metar as ReferenceMetar

from planner.core import weather as w

UTC = timezone.utc
AS_OF = datetime(2026, 3, 12, 20, 0, tzinfo=UTC)
REPO = Path(__file__).resolve().parents[2]

METARS = [
    "METAR QJRR 121753Z 27012G20KT 1 1/2SM -RA BR BKN008 OVC015 12/11 A2990 RMK AO2",
    "METAR QJRR 121853Z 31008KT 10SM FEW045 SCT120 18/M02 A3012 RMK AO2 SLP201",
    "SPECI QJRR 121812Z AUTO 00000KT M1/4SM FG VV002 05/05 A2992",
    "METAR QJRR 120553Z 16005KT 3SM BR OVC009 03/02 A3001",
    "METAR QJRR 120653Z 17006KT 5SM HZ BKN030 OVC050 06/01 A3003",
    "METAR QJRR 121953Z 25018G28KT P6SM SCT060 BKN250 21/M04 A2985",
    "METAR QJRR 122053Z 22015KT 2 1/2SM +TSRA BKN025CB OVC080 16/12 A2988",
    "METAR QJRR 121153Z 00000KT 1/2SM FZFG VV001 M05/M06 A3021",
    "METAR QJRR 121253Z 35010KT 3/4SM -SN OVC004 M02/M03 A3009",
    "METAR QJRR 121353Z VRB04KT 7SM CLR 08/M08 A3018",
    "METAR QJRR 121453Z 33012KT 10SM SKC 11/M09 A3016",
    "METAR QKTM 121750Z 24015KT 9999 FEW030 SCT250 12/01 Q1013",
    "METAR QKTM 121820Z 24012KT 200V280 4000 -SHRA BKN012 SCT030TCU 10/08 Q1010",
    "METAR QKTM 121850Z 23008KT 1500 BR BKN004 OVC010 08/07 Q1011",
    "METAR QBLV 121750Z 09004KT 0800 R27/1100U FG OVC003 08/08 Q1021 NOSIG",
    "METAR QBLV 121820Z VRB02KT CAVOK 15/05 Q1018",
    "METAR QBLV 121850Z 10005KT 6000 NSC 14/06 Q1018 NOSIG",
    "METAR QBLV 121920Z 11006KT 9999 SCT035 BKN035 13/06 Q1017",
    "METAR QBLV 121950Z 12007KT 0300 FG VV001 07/07 Q1016 BECMG 0800",
    "METAR QWSN 121856Z 19011KT 4SM -DZ BR OVC006 09/08 A2996 RMK AO2 DZB35",
    "METAR QWSN 121756Z 20009KT 1 3/4SM RA BKN007 OVC013 09/08 A2994",
    "METAR QWSN 121656Z 21008KT 6SM FEW010 SCT022 OVC031 10/08 A2993",
    "METAR QWSN 121556Z 22006KT 8SM BKN100 11/07 A2993",
]


def _reference_ceiling(ref: ReferenceMetar) -> float | None:
    heights = [h.value("FT") for cover, h, _ in ref.sky if cover in ("BKN", "OVC", "VV") and h is not None]
    return min(heights) if heights else None


@pytest.mark.parametrize("text", METARS, ids=[f"metar package reference: {t.split()[1]} {t.split()[2]}" for t in METARS])
def test_metar_visibility_and_ceiling_agree_with_the_metar_package(text):
    ours = w.parse_metar(text, AS_OF)
    ref = ReferenceMetar(text, strict=False, month=AS_OF.month, year=AS_OF.year)
    assert ours.station == ref.station_id
    assert ours.time == ref.time.replace(tzinfo=UTC)
    assert ours.conditions.visibility_sm == pytest.approx(ref.vis.value("SM"), abs=0.01)
    expected = _reference_ceiling(ref)
    if expected is None:
        assert ours.conditions.ceiling_ft is None
    else:
        assert ours.conditions.ceiling_ft == pytest.approx(expected, abs=1)


def test_sample_set_is_large_enough_and_covers_the_tricky_groups():
    joined = " ".join(METARS)
    assert len(METARS) >= 20
    for needle in ("1 1/2SM", "M1/4SM", "P6SM", "9999", "0800", "CAVOK", "VV00", "NSC", "CLR", "SKC", "FEW", "SCT"):
        assert needle in joined, needle


TAF = """TAF QJRR 121720Z 1218/1324 27012KT P6SM SCT050
  FM130200 30008KT 5SM BR BKN015
  BECMG 1306/1308 3SM BR OVC008
  TEMPO 1310/1314 1SM -RA OVC004
  PROB30 1318/1322 2SM TSRA BKN020CB
  FM132000 VRB03KT P6SM SKC="""

TAFS = [
    TAF,
    "TAF QKTM 121700Z 1218/1318 24010KT 9999 SCT030 BECMG 1300/1302 4000 BR BKN008 "
    "PROB40 TEMPO 1302/1306 0800 FG VV002 BECMG 1309/1311 9999 NSC",
    "TAF AMD QBLV 121845Z 1219/1318 VRB03KT CAVOK TEMPO 1304/1308 3000 BR",
]


@pytest.mark.parametrize("text", TAFS, ids=["TAF QJRR", "TAF QKTM", "TAF AMD QBLV"])
def test_each_taf_group_reads_like_the_metar_package_reads_the_same_groups(text):
    """Every change group's body, wrapped as a METAR, read by the metar package (reference)."""
    taf = w.parse_taf(text, AS_OF)
    bodies = re.split(r"\s(?=FM\d{6}|BECMG|(?<!PROB\d\d\s)TEMPO|PROB\d\d)", " ".join(text.rstrip("=").split()))
    assert len(bodies) == len(taf.groups)
    for group, body in zip(taf.groups, bodies):
        words = body.split()
        while words and (words[0] in ("TAF", "AMD", "BECMG", "TEMPO", "PROB30", "PROB40") or re.match(r"^(FM\d{6}|PROB\d\d|Q[A-Z]{3}|\d{6}Z|\d{4}/\d{4})$", words[0])):
            words.pop(0)
        if not words or not re.match(r"^(\d{3}|VRB)\d{2}(G\d{2})?KT$", words[0]):
            words.insert(0, "00000KT")  # the reference reads a 4-digit visibility only after a wind group
        ref = ReferenceMetar("METAR QREF 121800Z " + " ".join(words), strict=False, month=3, year=2026)
        if ref.vis is None:
            assert group.visibility_sm is None
        else:
            assert group.visibility_sm == pytest.approx(ref.vis.value("SM"), abs=0.01)
        if group.sky_given:
            expected = _reference_ceiling(ref)
            assert group.ceiling_ft == (None if expected is None else pytest.approx(expected, abs=1))


def _at(text: str, when: str) -> w.Conditions:
    return w.parse_taf(text, AS_OF).conditions_at(datetime.fromisoformat(when).replace(tzinfo=UTC))


TAF_AT = [
    ("2026-03-12 19:00", 6.0, None, "base forecast"),
    ("2026-03-13 02:00", 5.0, 1500, "FM replaces the prevailing conditions at its start"),
    ("2026-03-13 07:00", 3.0, 800, "during BECMG the worse of old and new"),
    ("2026-03-13 09:00", 3.0, 800, "after BECMG the new conditions"),
    ("2026-03-13 10:00", 1.0, 400, "TEMPO counts at its worst (conservative)"),
    ("2026-03-13 14:00", 3.0, 800, "TEMPO ends at its end hour"),
    ("2026-03-13 18:00", 2.0, 800, "PROB30 counts at its worst, ceiling stays the prevailing 800"),
    ("2026-03-13 20:00", 2.0, 2000, "later FM clears the sky but the PROB30 period still applies"),
    ("2026-03-13 23:00", 6.0, None, "after PROB30: the last FM"),
]


@pytest.mark.parametrize(("when", "vis", "ceiling", "why"), TAF_AT, ids=[r[3] for r in TAF_AT])
def test_taf_conditions_at_an_instant(when, vis, ceiling, why):
    """Worked by hand from the TAF above (change-group meanings: WMO No. 306 FM 51, common practice)."""
    c = _at(TAF, when)
    assert c.visibility_sm == pytest.approx(vis) and c.ceiling_ft == ceiling


def test_taf_validity_and_outside_instants():
    taf = w.parse_taf(TAF, AS_OF)
    assert taf.valid_from == datetime(2026, 3, 12, 18, tzinfo=UTC)
    assert taf.valid_to == datetime(2026, 3, 14, 0, tzinfo=UTC)  # hour 24 is next midnight
    assert taf.issued == datetime(2026, 3, 12, 17, 20, tzinfo=UTC)
    with pytest.raises(ValueError, match="outside"):
        taf.conditions_at(datetime(2026, 3, 14, 0, tzinfo=UTC))


def test_reports_across_a_month_end_are_placed_by_as_of():
    as_of = datetime(2026, 4, 1, 2, tzinfo=UTC)
    metar = w.parse_metar("METAR QJRR 312353Z 27005KT 10SM CLR 05/M05 A3001", as_of)
    assert metar.time == datetime(2026, 3, 31, 23, 53, tzinfo=UTC)
    taf = w.parse_taf("TAF QJRR 312320Z 0100/0124 27005KT P6SM SKC", as_of)
    assert taf.valid_from == datetime(2026, 4, 1, tzinfo=UTC) and taf.valid_to == datetime(2026, 4, 2, tzinfo=UTC)


ERRORS = [
    ("METAR QJRR 121753Z 27012KT 10SM BKN0X5 12/11 A2990", "BKN0X5"),
    ("METAR QJRR 1217Z 27012KT 10SM CLR 12/11 A2990", "1217Z"),
    ("METAR QJRR 121753Z 27012KT 10SM CLR 12/11 A2990 ZZTOP", "ZZTOP"),
    ("METAR QJRR 121753Z 27012KT CLR 12/11 A2990", "no visibility"),
    ("METAR QJRR 121753Z AUTO 27012KT 10SM BKN/// 12/11 A2990", "BKN///"),
    ("METAR QJRR 121753Z 27012KT 10SM 12/11 A2990", "no sky condition"),
    ("TAF QJRR 121720Z 1218 27012KT P6SM SCT050", "1218"),
    ("TAF QJRR 121720Z 1218/1324 27012KT P6SM SCT050 TEMPO 3SM BR", "TEMPO"),
    ("", "empty"),
]


@pytest.mark.parametrize(("text", "named"), ERRORS, ids=[e[1] for e in ERRORS])
def test_unreadable_groups_raise_a_parse_error_naming_them(text, named):
    with pytest.raises(w.WeatherParseError, match=re.escape(named)):
        w.parse_report(text, AS_OF)


def test_parse_report_tells_metar_from_taf():
    assert isinstance(w.parse_report(METARS[0], AS_OF), w.Metar)
    assert isinstance(w.parse_report(TAF, AS_OF), w.Taf)
    assert isinstance(w.parse_report("QJRR 121720Z 1218/1324 27012KT P6SM SCT050", AS_OF), w.Taf)


# ------------------------------------------------------------ categories and minimums

CATEGORIES = [
    (None, 10.0, "VFR"), (3100, 6.0, "VFR"), (3000, 10.0, "MVFR"), (5000, 5.0, "MVFR"), (1000, 10.0, "MVFR"),
    (None, 3.0, "MVFR"), (999, 10.0, "IFR"), (500, 10.0, "IFR"), (None, 2.9, "IFR"), (None, 1.0, "IFR"),
    (499, 10.0, "LIFR"), (None, 0.75, "LIFR"), (800, 0.5, "LIFR"), (2500, 2.0, "IFR"),
]


@pytest.mark.parametrize(("ceiling", "vis", "category"), CATEGORIES,
                         ids=[f"common practice (domain notes 1.7): {c} ft {v} SM -> {k}" for c, v, k in CATEGORIES])
def test_flight_category_follows_the_common_practice_table(ceiling, vis, category):
    assert w.flight_category(ceiling, vis) == category


def test_flight_category_of_parsed_reports():
    assert w.parse_metar(METARS[0], AS_OF).conditions.flight_category == "IFR"  # 800 ft, 1 1/2 SM
    assert w.parse_metar(METARS[2], AS_OF).conditions.flight_category == "LIFR"
    assert w.parse_metar(METARS[11], AS_OF).conditions.flight_category == "VFR"  # 9999 = 6.2 SM, no ceiling


MINIMUMS = [
    (None, 10.0, True), (3000, 5.0, True), (2900, 10.0, False), (None, 4.9, False), (12000, 6.0, True),
    (None, None, False),
]


@pytest.mark.parametrize(("ceiling", "vis", "ok"), MINIMUMS,
                         ids=[f"product default 3,000 ft / 5 SM: {c} ft {v} SM" for c, v, _ in MINIMUMS])
def test_meets_minimums_with_the_product_default(ceiling, vis, ok):
    assert w.meets_minimums(ceiling, vis) is ok
    assert w.DEFAULT_MINIMUMS == w.PracticeMinimums(3000, 5.0)


def test_meets_minimums_with_the_pilots_own_minimums():
    own = w.PracticeMinimums(ceiling_ft=4500, visibility_sm=7.0)
    assert not w.meets_minimums(4000, 10.0, own)
    assert w.meets_minimums(4500, 7.0, own)


# ------------------------------------------------------------ climatology

DENVER = ZoneInfo("America/Denver")


def _history(start: datetime, hours: int, rule) -> list[w.Observation]:
    out = []
    for k in range(hours):
        t = start + timedelta(hours=k)
        ceiling, vis = rule(t)
        out.append(w.Observation(t, ceiling, vis))
    return out


def test_climatology_on_a_synthetic_history_with_known_shares():
    """Local mornings 06-08 always low cloud, every third day at 15:00 local a storm, else clear."""

    def rule(t):
        local = t.astimezone(DENVER)
        if 6 <= local.hour <= 8:
            return 800, 2.0
        if local.hour == 15 and local.toordinal() % 3 == 0:
            return 2500, 3.0
        return None, 10.0

    history = _history(datetime(2025, 1, 1, 7, tzinfo=UTC), 24 * 365, rule)
    clim = w.climatology(history, DENVER)
    for month in range(1, 13):
        for hour in range(24):
            cell = clim.cell(month, hour)
            assert cell.hours >= 28
            if 6 <= hour <= 8:
                assert cell.share == 0.0
            elif hour != 15:
                assert cell.share == 1.0
    june = clim.cell(6, 15)
    storms = sum(1 for d in range(1, 31) if datetime(2025, 6, d).toordinal() % 3 == 0)
    assert june.hours == 30 and june.meeting == 30 - storms


def test_climatology_counts_one_sample_per_hour_and_skips_missing():
    t = datetime(2025, 7, 1, 18, tzinfo=UTC)
    obs = [
        w.Observation(t, None, 10.0),
        w.Observation(t + timedelta(minutes=20), 900, 2.0),  # special in the same hour: the latest counts
        w.Observation(t + timedelta(hours=1), None, None),  # missing
    ]
    clim = w.climatology(obs, UTC)
    assert clim.cell(7, 18) == w.ClimatologyCell(7, 18, 1, 0)
    assert clim.cell(7, 19).hours == 0


def test_observations_from_csv_and_line_numbered_errors():
    text = "time_utc,ceiling_ft,visibility_sm\n2025-01-01T00:00Z,,10\n2025-01-01T01:00:00+00:00,800,1.5\n"
    rows = w.observations_from_csv(text)
    assert rows == [w.Observation(datetime(2025, 1, 1, tzinfo=UTC), None, 10.0),
                    w.Observation(datetime(2025, 1, 1, 1, tzinfo=UTC), 800, 1.5)]
    with pytest.raises(w.WeatherParseError, match="line 3: ceiling_ft"):
        w.observations_from_csv("time_utc,ceiling_ft,visibility_sm\n2025-01-01T00:00Z,,10\n2025-01-01T01:00Z,low,3\n")
    with pytest.raises(w.WeatherParseError, match="line 2: time_utc"):
        w.observations_from_csv("time_utc,ceiling_ft,visibility_sm\n2025-01-01T00:00,,10\n")
    with pytest.raises(w.WeatherParseError, match="line 1: header"):
        w.observations_from_csv("when,ceiling,vis\n")


# ------------------------------------------------------------ vmc likelihood

ALL_GOOD = w.climatology(_history(datetime(2024, 1, 1, tzinfo=UTC), 24 * 366, lambda t: (None, 10.0)), DENVER)


def test_likelihood_uses_the_metar_inside_its_hour():
    metar = w.parse_metar(METARS[0], AS_OF)  # 17:53Z, 800 ft / 1.5 SM
    slot = (datetime(2026, 3, 12, 18, 0, tzinfo=UTC), datetime(2026, 3, 12, 18, 45, tzinfo=UTC))
    result = w.vmc_likelihood(*slot, DENVER, [metar], ALL_GOOD)
    assert (result.value, result.source) == (0.0, "metar")
    assert "below" in result.reason


def test_likelihood_uses_the_taf_when_no_metar_covers_the_slot():
    metar = w.parse_metar(METARS[0], AS_OF)
    taf = w.parse_taf(TAF, AS_OF)
    slot = (datetime(2026, 3, 12, 19, 0, tzinfo=UTC), datetime(2026, 3, 12, 21, 0, tzinfo=UTC))
    result = w.vmc_likelihood(*slot, DENVER, [metar, taf], ALL_GOOD)
    assert (result.value, result.source) == (1.0, "taf")
    # a slot across the 02Z FM (5 SM, BKN015): half of it below 3,000 ft
    half = w.vmc_likelihood(datetime(2026, 3, 13, 1, tzinfo=UTC), datetime(2026, 3, 13, 3, tzinfo=UTC),
                            DENVER, [taf], ALL_GOOD)
    assert half.source == "taf" and half.value == pytest.approx(0.5)


def test_likelihood_falls_back_to_climatology_then_unknown():
    taf = w.parse_taf(TAF, AS_OF)
    slot = (datetime(2026, 3, 20, 16, 0, tzinfo=UTC), datetime(2026, 3, 20, 18, 0, tzinfo=UTC))
    result = w.vmc_likelihood(*slot, DENVER, [taf], ALL_GOOD)
    assert (result.value, result.source) == (1.0, "climatology")
    sparse = w.climatology(_history(datetime(2026, 3, 1, tzinfo=UTC), 24 * 5, lambda t: (None, 10.0)), DENVER)
    thin = w.vmc_likelihood(*slot, DENVER, [], sparse)
    assert thin.value is None and thin.source == "climatology" and "too few" in thin.reason
    none = w.vmc_likelihood(*slot, DENVER, [], None)
    assert none == w.Likelihood(None, "unknown", none.reason) and none.reason


def test_slot_partly_outside_a_report_does_not_use_it():
    metar = w.parse_metar(METARS[1], AS_OF)  # 18:53Z, VFR; valid to 19:53Z
    slot = (datetime(2026, 3, 12, 19, 30, tzinfo=UTC), datetime(2026, 3, 12, 20, 30, tzinfo=UTC))
    assert w.vmc_likelihood(*slot, DENVER, [metar], None).source == "unknown"


@functools.cache
def _hour_dependent_climatology() -> w.Climatology:
    def rule(t):
        local = t.astimezone(DENVER)
        good = (local.toordinal() * 7919 % 23) < local.hour  # about h of every 23 days good at local hour h
        return (None, 10.0) if good else (500, 1.0)

    return w.climatology(_history(datetime(2023, 1, 1, 7, tzinfo=UTC), 24 * 365 * 3, rule), DENVER)


@settings(max_examples=60, deadline=None)
@given(start_hour=st.integers(0, 23), minutes=st.integers(30, 240), month=st.integers(1, 12))
def test_climatology_likelihood_is_the_minute_weighted_share_of_the_slot_hours(start_hour, minutes, month):
    """Synthetic history whose share differs by hour; expected = cell shares weighted by slot minutes."""
    clim = _hour_dependent_climatology()
    assert clim.cell(month, 0).share == 0.0 and clim.cell(month, 23).share == 1.0
    start = datetime(2026, month, 10, start_hour, 0, tzinfo=DENVER)
    end = start + timedelta(minutes=minutes)
    got = w.vmc_likelihood(start, end, DENVER, [], clim)
    expected, cursor = 0.0, start
    while cursor < end:
        piece = min(end, cursor + timedelta(hours=1)) - cursor
        cell = clim.cell(cursor.month, cursor.hour)
        expected += piece.total_seconds() * cell.meeting / cell.hours
        cursor += piece
    assert got.source == "climatology"
    assert got.value == pytest.approx(expected / (end - start).total_seconds())


# ------------------------------------------------------------ demo history

def test_demo_history_has_climatology_for_every_month_and_local_hour():
    text = (REPO / "seed_demo" / "observations" / "QJRR.csv").read_text()
    rows = w.observations_from_csv(text)
    assert rows[0].time_utc == datetime(2023, 12, 1, tzinfo=UTC)
    assert rows[-1].time_utc == datetime(2026, 11, 30, 23, tzinfo=UTC)
    assert len(rows) == (datetime(2026, 12, 1, tzinfo=UTC) - datetime(2023, 12, 1, tzinfo=UTC)) // timedelta(hours=1)
    clim = w.climatology(rows, DENVER)
    for month in range(1, 13):
        for hour in range(24):
            cell = clim.cell(month, hour)
            assert cell.hours >= w.MIN_CLIMATOLOGY_SAMPLES and cell.share is not None, (month, hour)
    # the invented scenario: winter mornings cloudier than summer mornings, summer afternoons stormier
    assert clim.cell(1, 7).share < clim.cell(7, 7).share
    assert clim.cell(7, 16).share < clim.cell(7, 10).share


def test_demo_history_matches_its_documented_generator():
    """The README's generator recipe reproduces the committed file byte for byte."""
    readme = (REPO / "seed_demo" / "observations" / "README.md").read_text()
    code = re.search(r"```python\n(.*?)```", readme, re.S).group(1)
    namespace: dict = {}
    exec(compile(code, "README generator", "exec"), namespace)
    generated = namespace["generate"]()
    assert generated == (REPO / "seed_demo" / "observations" / "QJRR.csv").read_text()


# ------------------------------------------------------------ pasted report text

PASTED = f"""{METARS[0]}
{METARS[1]}

{TAF}

QKTM 121750Z 24015KT 9999 FEW030 SCT250 12/01 Q1013
TAF QBLV 121845Z 1219/1318 VRB03KT CAVOK
  TEMPO 1304/1308 3000 BR=
"""


def test_pasted_text_splits_into_reports_each_read_like_alone():
    """Each report read from the pasted block equals the same report read on its own (our own parser
    checked against the metar package above); a TAF over several lines is one report."""
    got = w.parse_reports(PASTED, AS_OF)
    alone = [w.parse_report(METARS[0], AS_OF), w.parse_report(METARS[1], AS_OF), w.parse_report(TAF, AS_OF),
             w.parse_report("QKTM 121750Z 24015KT 9999 FEW030 SCT250 12/01 Q1013", AS_OF),
             w.parse_report("TAF QBLV 121845Z 1219/1318 VRB03KT CAVOK TEMPO 1304/1308 3000 BR", AS_OF)]
    assert [type(r) for r in got] == [w.Metar, w.Metar, w.Taf, w.Metar, w.Taf]
    for a, b in zip(got, alone):
        assert (a.station, a.valid_from, a.valid_to) == (b.station, b.valid_from, b.valid_to)
        if isinstance(a, w.Taf):
            assert a.groups == b.groups
        else:
            assert a.conditions == b.conditions
    assert w.parse_reports("", AS_OF) == () and w.parse_reports("\n  \n", AS_OF) == ()


PASTED_ERRORS = [
    (f"{METARS[0]}\n{METARS[1].replace('FEW045', 'FEW04X')}", "line 2:", "FEW04X"),
    (f"{TAF.replace('TEMPO 1310/1314', 'TEMPO 1310/13')}", "line 4:", "1310/13"),
    (f"{TAF.replace('OVC008', 'OVCOO8')}", "line 3:", "OVCOO8"),
    (f"{METARS[0]}\n\nhello there", "line 3:", "not the start of a report"),
    ("\n\n  FM130200 30008KT 5SM BR BKN015", "line 3:", "not the start of a report"),
    ("METAR QJRR 121753Z 27012KT CLR 12/11 A2990", "line 1:", "no visibility"),
]


@pytest.mark.parametrize(("text", "line", "named"), PASTED_ERRORS, ids=[e[2] for e in PASTED_ERRORS])
def test_unreadable_pasted_text_names_the_line_and_the_group(text, line, named):
    with pytest.raises(w.WeatherParseError) as caught:
        w.parse_reports(text, AS_OF)
    assert str(caught.value).startswith(line) and named in str(caught.value)


def test_a_metar_decides_its_hour_and_the_taf_the_rest_of_the_slot():
    """Slot 18:00-20:00Z: the 17:53Z METAR (800 ft, 1.5 SM: below) until 18:53Z, then the TAF base (P6SM SCT050:
    meets 3,000 ft / 5 SM). Expected share worked by hand: 67 of 120 minutes = 0.558."""
    metar = w.parse_metar(METARS[0], AS_OF)
    taf = w.parse_taf(TAF, AS_OF)
    slot = (datetime(2026, 3, 12, 18, 0, tzinfo=UTC), datetime(2026, 3, 12, 20, 0, tzinfo=UTC))
    got = w.vmc_likelihood(*slot, DENVER, [taf, metar], ALL_GOOD)
    assert got.source == "metar+taf" and got.from_reports
    assert got.value == pytest.approx(67 / 120)
    assert "METAR QJRR 121753Z (53 min)" in got.reason and "TAF QJRR 121720Z (67 min)" in got.reason
    # two METARs one after the other cover a slot alone: the later one decides its own hour
    later = w.parse_metar("METAR QJRR 121853Z 31008KT 10SM FEW045 18/M02 A3012", AS_OF)
    both = w.vmc_likelihood(datetime(2026, 3, 12, 18, 0, tzinfo=UTC), datetime(2026, 3, 12, 19, 30, tzinfo=UTC),
                            DENVER, [metar, later], None)
    assert both.source == "metar" and both.value == pytest.approx(37 / 90)


def test_reports_that_leave_part_of_the_slot_uncovered_give_way_to_climatology():
    metar = w.parse_metar(METARS[0], AS_OF)  # valid 17:53Z-18:53Z
    slot = (datetime(2026, 3, 12, 18, 0, tzinfo=UTC), datetime(2026, 3, 12, 20, 0, tzinfo=UTC))
    got = w.vmc_likelihood(*slot, DENVER, [metar], ALL_GOOD)
    assert (got.source, got.value, got.from_reports) == ("climatology", 1.0, False)
