"""METAR/TAF reading, flight categories, practice minimums and VMC likelihood.

What practice planning needs from weather text is small: the station, the
time, the prevailing visibility and the ceiling. This module reads exactly
that from METAR/SPECI and TAF reports in the WMO/FAA code forms (FMH-1,
WMO No. 306 FM 15/FM 51) and recognises, without using, the other standard
groups. A group it cannot read raises ``WeatherParseError`` naming the group.

Conventions:

* visibility in statute miles; metre visibilities are converted
  (1 SM = 1,609.344 m); "9999" (10 km or more) and CAVOK count as 10 km;
  "P6SM" counts as 6 SM and "M1/4SM" as 1/4 SM;
* ceiling in feet above ground = the lowest BKN, OVC or VV layer; FEW and SCT
  are not ceilings; CLR/SKC/NSC/NCD/CAVOK mean no ceiling (None). A
  BKN/OVC/VV layer whose height is "///" cannot be read (the ceiling would
  be unknown), so it raises ``WeatherParseError``;
* flight categories (common practice, domain notes §1.7): VFR ceiling above
  3,000 ft and visibility above 5 SM; MVFR 1,000-3,000 ft and/or 3-5 SM; IFR
  500-999 ft and/or 1 to below 3 SM; LIFR below 500 ft and/or below 1 SM;
* a METAR is taken as valid for one hour from its observation time
  (routine reports are hourly) - a product choice;
* a slot is judged from reports only when together they cover all of it:
  for each part the latest METAR valid then (an observation beats a
  forecast for its hour), elsewhere the latest-issued TAF;
* pasted text holding several reports is split into reports by line
  (``parse_reports``); a group it cannot read is reported with its line;
* TAF change groups: FM starts new prevailing conditions; BECMG changes
  them over its period (during the period the worse of old and new counts,
  after it the new); TEMPO and PROB30/PROB40 (with or without TEMPO) are
  treated conservatively: during their period the worse of the prevailing
  conditions and the group's conditions counts.

The practice minimums default to ceiling 3,000 ft and visibility 5 SM (a
product default; the pilot sets their own). Report times are UTC; because
reports carry only day-of-month and time, parsing takes an ``as_of``
instant (UTC) to place them in a month: the report is put in the month that
brings it closest to ``as_of``.
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import datetime, timedelta, timezone, tzinfo

METRES_PER_SM = 1609.344
METAR_VALIDITY = timedelta(hours=1)  # product choice, see module docstring
REPORT_SOURCES = ("metar", "taf", "metar+taf")
MIN_CLIMATOLOGY_SAMPLES = 30  # product choice: fewer hours than this in a (month, hour) cell is "too few"
_UTC = timezone.utc


class WeatherParseError(ValueError):
    """A report, group or observation row could not be read; the message names it."""


@dataclass(frozen=True)
class PracticeMinimums:
    """The pilot's practice minimums (product default: ceiling 3,000 ft, visibility 5 SM).

    Both edges are inclusive: a ceiling of exactly 3,000 ft meets 3,000 ft.
    """

    ceiling_ft: int = 3000
    visibility_sm: float = 5.0


DEFAULT_MINIMUMS = PracticeMinimums()


@dataclass(frozen=True)
class Conditions:
    """Ceiling (feet AGL, None = no ceiling) and prevailing visibility (SM, None = unknown)."""

    visibility_sm: float | None
    ceiling_ft: int | None

    @property
    def flight_category(self) -> str | None:
        return flight_category(self.ceiling_ft, self.visibility_sm)


def flight_category(ceiling_ft: int | None, visibility_sm: float | None) -> str | None:
    """VFR/MVFR/IFR/LIFR per the common-practice table (domain notes §1.7); None if visibility is unknown."""
    if visibility_sm is None:
        return None
    order = ("VFR", "MVFR", "IFR", "LIFR")

    def by_ceiling() -> int:
        if ceiling_ft is None or ceiling_ft > 3000:
            return 0
        if ceiling_ft >= 1000:
            return 1
        if ceiling_ft >= 500:
            return 2
        return 3

    def by_visibility() -> int:
        if visibility_sm > 5:
            return 0
        if visibility_sm >= 3:
            return 1
        if visibility_sm >= 1:
            return 2
        return 3

    return order[max(by_ceiling(), by_visibility())]


def meets_minimums(ceiling_ft: int | None, visibility_sm: float | None,
                   minimums: PracticeMinimums = DEFAULT_MINIMUMS) -> bool:
    """True when the ceiling (None = none) and visibility are at or above the minimums.

    Unknown visibility (None) does not meet them. ``minimums`` is anything
    with ``ceiling_ft`` and ``visibility_sm`` attributes.
    """
    if visibility_sm is None:
        return False
    ceiling_ok = ceiling_ft is None or ceiling_ft >= minimums.ceiling_ft
    return ceiling_ok and visibility_sm >= minimums.visibility_sm


# ------------------------------------------------------------------ groups

_WIND = re.compile(r"^(\d{3}|VRB)(\d{2,3})(G\d{2,3})?(KT|MPS|KMH)$")
_WIND_VAR = re.compile(r"^\d{3}V\d{3}$")
_VIS_SM = re.compile(r"^(P|M)?(\d{1,2}|\d/\d{1,2})SM$")
_VIS_WHOLE = re.compile(r"^\d$")
_VIS_M = re.compile(r"^(\d{4})(NDV)?$")
_VIS_DIRECTIONAL = re.compile(r"^\d{4}(N|NE|E|SE|S|SW|W|NW)$")
_RVR = re.compile(r"^R\d{2}[LCR]?/[PM]?\d{4}(V[PM]?\d{4})?(FT)?[UDN]?$")
_WX = re.compile(r"^(-|\+|VC)?(MI|PR|BC|DR|BL|SH|TS|FZ)?((DZ|RA|SN|SG|IC|PL|GR|GS|UP|BR|FG|FU|VA|DU|SA|HZ|PY|PO|SQ|FC|SS|DS)+)$")
_WX_SHORT = re.compile(r"^(VCSH|VCTS|TS|VCFG|VCBLSN|VCBLDU|VCPO|VCSS|VCDS|FC|\+FC)$")
_SKY = re.compile(r"^(FEW|SCT|BKN|OVC|VV)(\d{3}|///)(CB|TCU|///)?$")
_SKY_NONE = ("CLR", "SKC", "NSC", "NCD")
_TEMP = re.compile(r"^M?\d{2}/(M?\d{2})?$")
_ALTIMETER = re.compile(r"^(A\d{4}|Q\d{4}|QNH\d{4}INS)$")
_RECENT = re.compile(r"^RE[A-Z]{2,8}$")
_WINDSHEAR = re.compile(r"^(WS\d{3}/\d{5}KT|WS|R\d{2}[LCR]?)$")
_RUNWAY_STATE = re.compile(r"^(R\d{2}[LCR]?/[0-9/]{6}|\d{8}|R/SNOCLO)$")
_TAF_TEMP = re.compile(r"^T[XN]M?\d{2}/\d{4}Z$")
_STATION = re.compile(r"^[A-Z][A-Z0-9]{3}$")
_TIME = re.compile(r"^(\d{2})(\d{2})(\d{2})Z$")
_PERIOD = re.compile(r"^(\d{2})(\d{2})/(\d{2})(\d{2})$")
_FM = re.compile(r"^FM(\d{2})(\d{2})(\d{2})$")
_PROB = re.compile(r"^PROB(30|40)$")


def _fraction(text: str, group: str) -> float:
    if "/" in text:
        num, den = text.split("/")
        if int(den) == 0:
            raise WeatherParseError(f"visibility group {group!r}: zero denominator")
        return int(num) / int(den)
    return float(text)


@dataclass
class _Sky:
    given: bool = False
    ceiling_ft: int | None = None


class _GroupReader:
    """Reads the body groups shared by METAR and TAF: visibility and sky (others recognised and skipped)."""

    def __init__(self, kind: str) -> None:
        self.kind = kind
        self.visibility_sm: float | None = None
        self.sky = _Sky()

    def read(self, tokens: list[str], i: int) -> int:
        """Consume the group at ``tokens[i]``; return the index after it."""
        tok = tokens[i]
        if _WIND.match(tok) or _WIND_VAR.match(tok) or tok == "00000KT":
            return i + 1
        if _VIS_WHOLE.match(tok) and i + 1 < len(tokens) and re.match(r"^\d/\d{1,2}SM$", tokens[i + 1]):
            whole = int(tok)
            self.visibility_sm = whole + _fraction(tokens[i + 1][:-2], f"{tok} {tokens[i + 1]}")
            return i + 2
        m = _VIS_SM.match(tok)
        if m:
            self.visibility_sm = _fraction(m.group(2), tok)
            return i + 1
        if tok == "CAVOK":
            self.visibility_sm = 10_000 / METRES_PER_SM
            self.sky = _Sky(given=True, ceiling_ft=None)
            return i + 1
        m = _VIS_M.match(tok)
        if m and self.visibility_sm is None:
            metres = 10_000 if tok.startswith("9999") else int(m.group(1))
            self.visibility_sm = metres / METRES_PER_SM
            return i + 1
        if _VIS_DIRECTIONAL.match(tok) or _RVR.match(tok) or _WX.match(tok) or _WX_SHORT.match(tok):
            return i + 1
        if tok in ("NSW", "////", "//", "NOSIG", "AUTO", "COR", "AMD", "CNL", "NIL", "SLP"):
            return i + 1
        m = _SKY.match(tok)
        if m:
            cover, height = m.group(1), m.group(2)
            if not self.sky.given:
                self.sky = _Sky(given=True, ceiling_ft=None)
            if cover in ("BKN", "OVC", "VV"):
                if height == "///":
                    raise WeatherParseError(f"{self.kind} group {tok!r}: layer height not reported, ceiling unknown")
                feet = int(height) * 100
                if self.sky.ceiling_ft is None or feet < self.sky.ceiling_ft:
                    self.sky.ceiling_ft = feet
            return i + 1
        if tok in _SKY_NONE:
            self.sky = _Sky(given=True, ceiling_ft=None)
            return i + 1
        if tok == "VV///":
            raise WeatherParseError(f"{self.kind} group {tok!r}: vertical visibility not reported, ceiling unknown")
        if (_TEMP.match(tok) or _ALTIMETER.match(tok) or _RECENT.match(tok) or _WINDSHEAR.match(tok)
                or _RUNWAY_STATE.match(tok) or _TAF_TEMP.match(tok)):
            return i + 1
        raise WeatherParseError(f"{self.kind}: cannot read group {tok!r}")


def _tokens(text: str) -> list[str]:
    if not isinstance(text, str) or not text.strip():
        raise WeatherParseError("empty report")
    body = text.strip().rstrip("=").upper()
    body = re.split(r"\bRMK\b", body, maxsplit=1)[0]
    return body.split()


def _place(day: int, hour: int, minute: int, as_of: datetime, group: str) -> datetime:
    """The UTC datetime with this day-of-month and time closest to ``as_of``."""
    if as_of.tzinfo is None:
        raise ValueError("as_of must be an aware datetime (UTC)")
    anchor = as_of.astimezone(_UTC)
    candidates = []
    for months_back in (-1, 0, 1):
        y, m = anchor.year, anchor.month + months_back
        if m == 0:
            y, m = y - 1, 12
        elif m == 13:
            y, m = y + 1, 1
        try:
            base = datetime(y, m, day, tzinfo=_UTC)
        except ValueError:
            continue
        if hour > 24 or minute > 59 or (hour == 24 and minute):
            raise WeatherParseError(f"time group {group!r}: hour or minute out of range")
        candidates.append(base + timedelta(hours=hour, minutes=minute))
    if not candidates or not 1 <= day <= 31:
        raise WeatherParseError(f"time group {group!r}: day {day} does not exist near {anchor:%Y-%m}")
    return min(candidates, key=lambda c: abs(c - anchor))


def _after(day: int, hour: int, start: datetime, group: str) -> datetime:
    """The first UTC datetime at or after ``start - 1 h`` with this day and hour (hour 24 = next midnight)."""
    if not 1 <= day <= 31 or hour > 24:
        raise WeatherParseError(f"period group {group!r}: day or hour out of range")
    cursor = datetime(start.year, start.month, 1, tzinfo=_UTC)
    for _ in range(3):
        try:
            moment = datetime(cursor.year, cursor.month, day, tzinfo=_UTC) + timedelta(hours=hour)
        except ValueError:
            moment = None
        if moment is not None and moment >= start - timedelta(hours=1):
            return moment
        cursor = (cursor + timedelta(days=32)).replace(day=1)
    raise WeatherParseError(f"period group {group!r}: cannot place day {day} after {start:%Y-%m-%d}")


# ------------------------------------------------------------------ METAR


@dataclass(frozen=True)
class Metar:
    """One METAR or SPECI: what practice planning uses of it."""

    station: str
    time: datetime  # observation time, UTC
    conditions: Conditions
    kind: str = "METAR"  # "METAR" | "SPECI"
    text: str = ""

    @property
    def valid_from(self) -> datetime:
        return self.time

    @property
    def valid_to(self) -> datetime:
        return self.time + METAR_VALIDITY


def parse_metar(text: str, as_of: datetime) -> Metar:
    """Read a METAR/SPECI. ``as_of`` (aware) places the day-of-month in a month; remarks are ignored."""
    tokens = _tokens(text)
    kind = "METAR"
    if tokens[0] in ("METAR", "SPECI"):
        kind = tokens.pop(0)
    if tokens and tokens[0] == "COR":
        tokens.pop(0)
    if len(tokens) < 2:
        raise WeatherParseError(f"{kind}: station and time groups missing")
    station = tokens[0]
    if not _STATION.match(station):
        raise WeatherParseError(f"{kind}: cannot read station group {station!r}")
    m = _TIME.match(tokens[1])
    if not m:
        raise WeatherParseError(f"{kind} {station}: cannot read time group {tokens[1]!r} (expected DDHHMMZ)")
    when = _place(int(m.group(1)), int(m.group(2)), int(m.group(3)), as_of, tokens[1])
    reader = _GroupReader(f"{kind} {station}")
    i = 2
    while i < len(tokens):
        if tokens[i] in ("BECMG", "TEMPO"):  # trend forecast: not part of the observation
            break
        i = reader.read(tokens, i)
    if reader.visibility_sm is None:
        raise WeatherParseError(f"{kind} {station}: no visibility group")
    if not reader.sky.given and "CAVOK" not in tokens:
        raise WeatherParseError(f"{kind} {station}: no sky condition group")
    return Metar(station=station, time=when, conditions=Conditions(reader.visibility_sm, reader.sky.ceiling_ft),
                 kind=kind, text=text.strip())


# ------------------------------------------------------------------ TAF


@dataclass(frozen=True)
class TafGroup:
    """The base forecast or one change group.

    ``kind`` is "BASE", "FM", "BECMG", "TEMPO" or "PROB" (PROB30/40, with
    ``tempo`` True for "PROB30 TEMPO"). ``visibility_sm`` None = not given in
    this group; ``sky_given`` False = no sky groups (conditions carry over).
    """

    kind: str
    start: datetime
    end: datetime
    visibility_sm: float | None
    sky_given: bool
    ceiling_ft: int | None
    probability: int | None = None
    tempo: bool = False


@dataclass(frozen=True)
class Taf:
    station: str
    issued: datetime
    valid_from: datetime
    valid_to: datetime
    groups: tuple[TafGroup, ...]  # groups[0] is the base forecast
    text: str = ""

    def covers(self, moment: datetime) -> bool:
        return self.valid_from <= moment < self.valid_to

    def conditions_at(self, moment: datetime) -> Conditions:
        """Forecast conditions at aware ``moment`` (inside the validity), TEMPO/PROB taken conservatively."""
        if not self.covers(moment):
            raise ValueError(f"{moment} is outside the TAF validity {self.valid_from}..{self.valid_to}")
        prevailing = _apply(Conditions(None, None), self.groups[0])
        for g in self.groups[1:]:
            if g.kind == "FM" and g.start <= moment:
                prevailing = _apply(prevailing, g)
            elif g.kind == "BECMG" and g.start <= moment:
                changed = _apply(prevailing, g)
                prevailing = changed if moment >= g.end else _worse(prevailing, changed)
        result = prevailing
        for g in self.groups[1:]:
            if g.kind in ("TEMPO", "PROB") and g.start <= moment < g.end:
                result = _worse(result, _apply(prevailing, g))
        return result

    def boundaries(self) -> list[datetime]:
        return sorted({self.valid_from, self.valid_to} | {g.start for g in self.groups} | {g.end for g in self.groups})


def _apply(current: Conditions, group: TafGroup) -> Conditions:
    vis = group.visibility_sm if group.visibility_sm is not None else current.visibility_sm
    ceiling = group.ceiling_ft if group.sky_given else current.ceiling_ft
    return Conditions(vis, ceiling)


def _worse(a: Conditions, b: Conditions) -> Conditions:
    vis = None if a.visibility_sm is None or b.visibility_sm is None else min(a.visibility_sm, b.visibility_sm)
    ceilings = [c for c in (a.ceiling_ft, b.ceiling_ft) if c is not None]
    return Conditions(vis, min(ceilings) if ceilings else None)


def parse_taf(text: str, as_of: datetime) -> Taf:
    """Read a TAF (validity DDHH/DDHH, change groups FM/BECMG/TEMPO/PROB). ``as_of`` places the issue time."""
    tokens = _tokens(text)
    if tokens[0] == "TAF":
        tokens.pop(0)
    while tokens and tokens[0] in ("AMD", "COR"):
        tokens.pop(0)
    if len(tokens) < 3:
        raise WeatherParseError("TAF: station, issue time and validity groups missing")
    station = tokens[0]
    if not _STATION.match(station):
        raise WeatherParseError(f"TAF: cannot read station group {station!r}")
    m = _TIME.match(tokens[1])
    if not m:
        raise WeatherParseError(f"TAF {station}: cannot read issue time group {tokens[1]!r} (expected DDHHMMZ)")
    issued = _place(int(m.group(1)), int(m.group(2)), int(m.group(3)), as_of, tokens[1])
    valid_from, valid_to = _period(tokens[2], issued, f"TAF {station} validity")
    kind = f"TAF {station}"

    groups: list[TafGroup] = []
    current: dict = {"kind": "BASE", "start": valid_from, "end": valid_to, "probability": None, "tempo": False}
    reader = _GroupReader(kind)

    def close() -> None:
        groups.append(TafGroup(visibility_sm=reader.visibility_sm, sky_given=reader.sky.given,
                               ceiling_ft=reader.sky.ceiling_ft, **current))

    i = 3
    while i < len(tokens):
        tok = tokens[i]
        fm = _FM.match(tok)
        prob = _PROB.match(tok)
        if fm or tok in ("BECMG", "TEMPO") or prob:
            close()
            reader = _GroupReader(kind)
            if fm:
                start = _place_after(int(fm.group(1)), int(fm.group(2)), int(fm.group(3)), valid_from, tok)
                current = {"kind": "FM", "start": start, "end": valid_to, "probability": None, "tempo": False}
                i += 1
                continue
            probability, tempo, label = None, False, tok
            if prob:
                probability = int(prob.group(1))
                i += 1
                if i < len(tokens) and tokens[i] == "TEMPO":
                    tempo = True
                    i += 1
            else:
                i += 1
            if i >= len(tokens):
                raise WeatherParseError(f"{kind}: change group {label!r} has no period")
            start, end = _period(tokens[i], valid_from, f"{kind} {label}")
            current = {"kind": "PROB" if prob else label, "start": start, "end": end,
                       "probability": probability, "tempo": tempo or label == "TEMPO"}
            i += 1
            continue
        if _PERIOD.match(tok):
            raise WeatherParseError(f"{kind}: period group {tok!r} without a change indicator")
        i = reader.read(tokens, i)
    close()
    # an FM group lasts until the next FM group (or the end of the validity)
    starts = [g.start for g in groups if g.kind == "FM"]
    groups = [
        TafGroup(**{**g.__dict__, "end": min([s for s in starts if s > g.start], default=valid_to)})
        if g.kind == "FM" else g
        for g in groups
    ]
    base = groups[0]
    if base.visibility_sm is None:
        raise WeatherParseError(f"{kind}: base forecast has no visibility group")
    if not base.sky_given:
        raise WeatherParseError(f"{kind}: base forecast has no sky condition group")
    return Taf(station=station, issued=issued, valid_from=valid_from, valid_to=valid_to, groups=tuple(groups),
               text=text.strip())


def _period(tok: str, start: datetime, what: str) -> tuple[datetime, datetime]:
    m = _PERIOD.match(tok)
    if not m:
        raise WeatherParseError(f"{what}: cannot read period group {tok!r} (expected DDHH/DDHH)")
    begin = _after(int(m.group(1)), int(m.group(2)), start, tok)
    end = _after(int(m.group(3)), int(m.group(4)), begin, tok)
    if end <= begin:
        raise WeatherParseError(f"{what}: period group {tok!r} ends before it starts")
    return begin, end


def _place_after(day: int, hour: int, minute: int, start: datetime, group: str) -> datetime:
    if minute > 59:
        raise WeatherParseError(f"change group {group!r}: minute out of range")
    return _after(day, hour, start, group) + timedelta(minutes=minute)


def parse_report(text: str, as_of: datetime) -> Metar | Taf:
    """A METAR/SPECI or a TAF, told apart by the leading word (TAF) or the validity group."""
    tokens = _tokens(text)
    if tokens[0] == "TAF" or (len(tokens) > 2 and _TIME.match(tokens[1]) and _PERIOD.match(tokens[2])):
        return parse_taf(text, as_of)
    return parse_metar(text, as_of)


# ------------------------------------------------------------------ pasted report text

_REPORT_WORDS = ("METAR", "SPECI", "TAF")
_CHANGE_WORD = re.compile(r"^(FM\d{6}|BECMG|TEMPO|PROB30|PROB40)$")
_QUOTED = re.compile(r"'([^']+)'")


def _report_chunks(text: str) -> list[tuple[int, list[tuple[int, str]]]]:
    """Split pasted text into reports: (first line number, [(line number, line), ...]).

    A line whose first word is METAR, SPECI or TAF starts a report. While a
    report is open, a line that starts with blanks or a TAF change group (FM,
    BECMG, TEMPO, PROB30/40), or any line that does not look like a report's
    start (a station and a DDHHMMZ time), continues it; otherwise a station
    and time start a new one. A blank line, or a line ending with "=",
    closes the report.
    """
    chunks: list[tuple[int, list[tuple[int, str]]]] = []
    open_ = False
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line:
            open_ = False
            continue
        words = line.upper().split()
        starts = words[0] in _REPORT_WORDS or (
            len(words) > 1 and _STATION.match(words[0]) is not None and _TIME.match(words[1]) is not None
        )
        continues = open_ and words[0] not in _REPORT_WORDS and (
            raw[:1].isspace() or _CHANGE_WORD.match(words[0]) is not None or not starts
        )
        if continues:
            chunks[-1][1].append((number, line))
        elif starts:
            chunks.append((number, [(number, line)]))
        else:
            raise WeatherParseError(
                f"line {number}: not the start of a report (expected METAR, SPECI or TAF, or a station and "
                f"a DDHHMMZ time): {line[:40]!r}"
            )
        open_ = not line.endswith("=")
    return chunks


def parse_reports(text: str, as_of: datetime) -> tuple[Metar | Taf, ...]:
    """Read every METAR/SPECI and TAF in pasted text (reports split as in ``_report_chunks``).

    ``as_of`` (aware) places the day-of-month groups in a month. Raises
    ``WeatherParseError`` whose message starts with the line number of the
    group that could not be read (or of the report's first line); nothing is
    returned unless every report reads. Empty text gives no reports.
    """
    reports: list[Metar | Taf] = []
    for first, lines in _report_chunks(text):
        body = " ".join(line for _, line in lines)
        try:
            reports.append(parse_report(body, as_of))
        except WeatherParseError as exc:
            number = first
            quoted = _QUOTED.search(str(exc))
            if quoted:
                group = quoted.group(1).upper().split()
                for n, line in lines:
                    words = line.upper().split()
                    if any(words[i:i + len(group)] == group for i in range(len(words))):
                        number = n
                        break
            raise WeatherParseError(f"line {number}: {exc}") from None
    return tuple(reports)


# ------------------------------------------------------------------ climatology


@dataclass(frozen=True)
class Observation:
    """One hourly observation: UTC time, ceiling feet (None = none), visibility SM (None = missing)."""

    time_utc: datetime
    ceiling_ft: int | None
    visibility_sm: float | None


def observations_from_csv(text: str) -> list[Observation]:
    """Parse CSV text with header ``time_utc,ceiling_ft,visibility_sm``.

    ``time_utc`` is ISO 8601 with "Z" or an offset; an empty ceiling means no
    ceiling; an empty visibility means the observation is missing. Errors
    name the line and field; nothing is returned unless every row reads.
    """
    reader = csv.reader(io.StringIO(text))
    header = next(reader, None)
    if header is None or [h.strip() for h in header] != ["time_utc", "ceiling_ft", "visibility_sm"]:
        raise WeatherParseError("line 1: header must be time_utc,ceiling_ft,visibility_sm")
    rows = []
    for line, row in enumerate(reader, start=2):
        if not row or all(not c.strip() for c in row):
            continue
        if len(row) != 3:
            raise WeatherParseError(f"line {line}: expected 3 fields, got {len(row)}")
        t, c, v = (x.strip() for x in row)
        try:
            when = datetime.fromisoformat(t)
        except ValueError:
            raise WeatherParseError(f"line {line}: time_utc {t!r} is not an ISO 8601 time") from None
        if when.tzinfo is None:
            raise WeatherParseError(f"line {line}: time_utc {t!r} has no UTC designator (Z or offset)")
        try:
            ceiling = int(c) if c else None
        except ValueError:
            raise WeatherParseError(f"line {line}: ceiling_ft {c!r} is not whole feet") from None
        try:
            vis = float(v) if v else None
        except ValueError:
            raise WeatherParseError(f"line {line}: visibility_sm {v!r} is not a number") from None
        if ceiling is not None and ceiling < 0:
            raise WeatherParseError(f"line {line}: ceiling_ft {c!r} is negative")
        if vis is not None and (vis < 0 or not math.isfinite(vis)):
            raise WeatherParseError(f"line {line}: visibility_sm {v!r} is out of range")
        rows.append(Observation(when.astimezone(_UTC), ceiling, vis))
    return rows


@dataclass(frozen=True)
class ClimatologyCell:
    month: int
    hour: int  # local hour of day 0..23
    hours: int  # observed hours in this cell
    meeting: int  # of which met the minimums

    @property
    def share(self) -> float | None:
        return self.meeting / self.hours if self.hours else None


@dataclass(frozen=True)
class Climatology:
    """Share of observed hours meeting ``minimums`` by (month, local hour) in time zone ``tz``."""

    tz: tzinfo
    minimums: PracticeMinimums
    cells: Mapping[tuple[int, int], ClimatologyCell] = field(default_factory=dict)

    def cell(self, month: int, hour: int) -> ClimatologyCell:
        return self.cells.get((month, hour), ClimatologyCell(month, hour, 0, 0))


def climatology(observations: Iterable[Observation], tz: tzinfo,
                minimums: PracticeMinimums = DEFAULT_MINIMUMS) -> Climatology:
    """Bucket hourly observations by the (month, hour) of their local time in ``tz``.

    One sample per UTC hour: when several observations fall in the same
    hour (specials), the latest counts. Missing visibility rows are skipped.
    """
    per_hour: dict[datetime, Observation] = {}
    for obs in observations:
        if obs.visibility_sm is None:
            continue
        key = obs.time_utc.astimezone(_UTC).replace(minute=0, second=0, microsecond=0)
        kept = per_hour.get(key)
        if kept is None or obs.time_utc >= kept.time_utc:
            per_hour[key] = obs
    counts: dict[tuple[int, int], list[int]] = {}
    for key, obs in per_hour.items():
        local = key.astimezone(tz)
        c = counts.setdefault((local.month, local.hour), [0, 0])
        c[0] += 1
        c[1] += meets_minimums(obs.ceiling_ft, obs.visibility_sm, minimums)
    cells = {k: ClimatologyCell(k[0], k[1], v[0], v[1]) for k, v in counts.items()}
    return Climatology(tz=tz, minimums=minimums, cells=cells)


# ------------------------------------------------------------------ likelihood


@dataclass(frozen=True)
class Likelihood:
    """How likely a slot is to meet the practice minimums.

    ``value`` 0..1 or None; ``source`` "metar" | "taf" | "metar+taf" |
    "climatology" | "unknown". From reports the value is the share of the
    slot during which the (conservatively read) reports meet the minimums.
    """

    @property
    def from_reports(self) -> bool:
        return self.source in REPORT_SOURCES

    value: float | None
    source: str
    reason: str


def vmc_likelihood(slot_start: datetime, slot_end: datetime, tz: tzinfo, reports: Sequence[Metar | Taf],
                   climatology: Climatology | None, minimums: PracticeMinimums = DEFAULT_MINIMUMS,
                   min_samples: int = MIN_CLIMATOLOGY_SAMPLES) -> Likelihood:
    """VMC likelihood for the slot ``[slot_start, slot_end)`` (aware datetimes).

    Order: the reports, when together they cover the whole slot: for each
    part of the slot the latest METAR valid then (observation time + 1 h),
    else the latest-issued TAF whose validity contains it; the value is the
    share of the slot meeting the minimums (source "metar", "taf", or
    "metar+taf" when both kinds were used). Else the climatology (the slot's
    local hours in ``tz``, weighted by the minutes of the slot in each hour;
    None if any of those hours has fewer than ``min_samples`` observations);
    else unknown. Reports for other stations must be left out by the caller.
    """
    if slot_start.tzinfo is None or slot_end.tzinfo is None:
        raise ValueError("slot_start and slot_end must be aware datetimes")
    if slot_end <= slot_start:
        raise ValueError("slot_end must be after slot_start")
    from_reports = _from_reports(slot_start, slot_end, reports, minimums)
    if from_reports is not None:
        return from_reports
    if climatology is None:
        return Likelihood(None, "unknown", "no report covers the slot and no observation history is loaded")
    if climatology.minimums != minimums:
        return Likelihood(None, "unknown", "the observation history was summarised for other minimums")
    local_start, local_end = slot_start.astimezone(tz), slot_end.astimezone(tz)
    weighted = 0.0
    weight = 0.0
    cursor = local_start
    while cursor < local_end:
        hour_end = (cursor.replace(minute=0, second=0, microsecond=0) + timedelta(hours=1))
        piece_end = min(hour_end, local_end)
        minutes = (piece_end - cursor).total_seconds() / 60
        local = cursor.astimezone(climatology.tz)
        cell = climatology.cell(local.month, local.hour)
        if cell.hours < min_samples:
            return Likelihood(None, "climatology",
                              f"too few observations for {_month_name(cell.month)} {cell.hour:02d}:00 local "
                              f"({cell.hours}, need {min_samples})")
        weighted += minutes * (cell.share or 0.0)
        weight += minutes
        cursor = piece_end
    value = weighted / weight
    return Likelihood(value, "climatology",
                      f"{value:.0%} of past hours at this month and time of day met {_describe_minimums(minimums)}")


def _from_reports(start: datetime, end: datetime, reports: Sequence[Metar | Taf],
                  minimums: PracticeMinimums) -> Likelihood | None:
    """The likelihood from reports that together cover ``[start, end)``; None when a part is uncovered."""
    touching = [r for r in reports if r.valid_from < end and start < r.valid_to]
    if not touching:
        return None
    cuts = {start, end}
    for r in touching:
        cuts |= {r.valid_from, r.valid_to}
        if isinstance(r, Taf):
            cuts |= set(r.boundaries())
    points = sorted(c for c in cuts if start <= c <= end)
    good = 0.0
    used: dict[Metar | Taf, float] = {}
    for a, b in zip(points, points[1:]):
        metars = [r for r in touching if isinstance(r, Metar) and r.valid_from <= a and b <= r.valid_to]
        report: Metar | Taf
        if metars:
            report = max(metars, key=lambda r: r.time)
            conditions = report.conditions
        else:
            tafs = [r for r in touching if isinstance(r, Taf) and r.valid_from <= a and b <= r.valid_to]
            if not tafs:
                return None
            report = max(tafs, key=lambda r: r.issued)
            conditions = report.conditions_at(a)
        seconds = (b - a).total_seconds()
        used[report] = used.get(report, 0.0) + seconds
        if meets_minimums(conditions.ceiling_ft, conditions.visibility_sm, minimums):
            good += seconds
    share = good / (end - start).total_seconds()
    kinds = {"metar" if isinstance(r, Metar) else "taf" for r in used}
    source = "metar+taf" if len(kinds) == 2 else kinds.pop()
    if len(used) == 1:
        (only,) = used
        if isinstance(only, Metar):
            ok = meets_minimums(only.conditions.ceiling_ft, only.conditions.visibility_sm, minimums)
            return Likelihood(share, source,
                              f"{only.kind} {only.station} {only.time:%d%H%MZ}: {_describe(only.conditions)} "
                              f"{'meets' if ok else 'is below'} {_describe_minimums(minimums)} (valid 1 h)")
        return Likelihood(share, source,
                          f"TAF {only.station} {only.issued:%d%H%MZ}: {share:.0%} of the slot meets "
                          f"{_describe_minimums(minimums)} (TEMPO/PROB groups counted at their worst)")
    parts = ", ".join(
        f"{r.kind if isinstance(r, Metar) else 'TAF'} {r.station} "
        f"{(r.time if isinstance(r, Metar) else r.issued):%d%H%MZ} ({seconds / 60:.0f} min)"
        for r, seconds in used.items()
    )
    return Likelihood(share, source,
                      f"{parts}: {share:.0%} of the slot meets {_describe_minimums(minimums)} "
                      "(a METAR for its hour, a TAF elsewhere; TEMPO/PROB groups counted at their worst)")


def _describe(c: Conditions) -> str:
    ceiling = "no ceiling" if c.ceiling_ft is None else f"ceiling {c.ceiling_ft:,} ft"
    vis = "visibility unknown" if c.visibility_sm is None else f"visibility {c.visibility_sm:g} SM"
    return f"{ceiling}, {vis}"


def _describe_minimums(m: PracticeMinimums) -> str:
    return f"minimums (ceiling {m.ceiling_ft:,} ft, visibility {m.visibility_sm:g} SM)"


def _month_name(month: int) -> str:
    return ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")[month - 1]
