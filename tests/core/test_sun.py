"""Sun times against published examples and the astral library (domain notes §5).

References:
* astral documentation example (London, 2009-04-22) and Skyfield documentation
  example (Bluffton, Ohio, 2019-11-08), as quoted in the domain notes §5;
* astral 3.2 (general-purpose library): its event times (called with the
  airfield's tzinfo, as the stack notes require) and its solar position
  (``astral.sun.elevation(..., with_refraction=False)``);
* USNO definitions: sunrise/sunset at 0.833° below the horizon, civil twilight at 6°.
"""

from __future__ import annotations

from datetime import date, datetime, timedelta, timezone
from zoneinfo import ZoneInfo

import astral.sun
import pytest
from astral import Observer
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.core import sun

UTC = timezone.utc
EVENTS = ("dawn", "sunrise", "sunset", "dusk")
ASTRAL = {"dawn": astral.sun.dawn, "sunrise": astral.sun.sunrise, "sunset": astral.sun.sunset, "dusk": astral.sun.dusk}
THRESHOLD = {"dawn": -6.0, "sunrise": -0.833, "sunset": -0.833, "dusk": -6.0}
TWO_MINUTES = timedelta(minutes=2)


def _utc(text: str) -> datetime:
    return datetime.fromisoformat(text).replace(tzinfo=UTC)


PUBLISHED = [
    pytest.param(51.5, -0.116, "2009-04-22", "dawn", "2009-04-22 04:13", id="astral docs: London dawn 04:13"),
    pytest.param(51.5, -0.116, "2009-04-22", "sunrise", "2009-04-22 04:50", id="astral docs: London sunrise 04:50"),
    pytest.param(51.5, -0.116, "2009-04-22", "sunset", "2009-04-22 19:08", id="astral docs: London sunset 19:08"),
    pytest.param(51.5, -0.116, "2009-04-22", "dusk", "2009-04-22 19:46", id="astral docs: London dusk 19:46"),
    pytest.param(40.8939, -83.8917, "2019-11-08", "dawn", "2019-11-08 11:45:18",
                 id="Skyfield docs: Bluffton civil dawn 11:45:18"),
    pytest.param(40.8939, -83.8917, "2019-11-08", "sunrise", "2019-11-08 12:14:15",
                 id="Skyfield docs: Bluffton sunrise 12:14:15"),
    pytest.param(40.8939, -83.8917, "2019-11-08", "sunset", "2019-11-08 22:23:52",
                 id="Skyfield docs: Bluffton sunset 22:23:52"),
    pytest.param(40.8939, -83.8917, "2019-11-08", "dusk", "2019-11-08 22:52:48",
                 id="Skyfield docs: Bluffton civil dusk 22:52:48"),
]


@pytest.mark.parametrize(("lat", "lon", "day", "event", "published"), PUBLISHED)
def test_sun_events_match_published_examples_within_two_minutes(lat, lon, day, event, published):
    times = sun.sun_times(lat, lon, date.fromisoformat(day), UTC)
    got = getattr(times, event)
    assert got is not None
    assert abs(got - _utc(published)) <= TWO_MINUTES, (event, got)


# ------------------------------------------------------------ astral agreement

latitudes = st.floats(min_value=-60.0, max_value=60.0, allow_nan=False)
longitudes = st.floats(min_value=-180.0, max_value=180.0, allow_nan=False)
days = st.dates(min_value=date(1950, 1, 1), max_value=date(2090, 12, 31))
# real zones with the longitude they are used at (centre; the tests add up to ±10°)
ZONES = [(ZoneInfo(name), lon) for name, lon in (("America/Denver", -105.0), ("Pacific/Honolulu", -157.0),
                                                 ("Asia/Kolkata", 78.0), ("Pacific/Auckland", 169.0),
                                                 ("Europe/Paris", 2.0), ("America/Sao_Paulo", -47.0))]
offsets = st.floats(min_value=-10.0, max_value=10.0, allow_nan=False)


def _nearest_tz(longitude: float) -> timezone:
    return timezone(timedelta(hours=round(longitude / 15)))


def _altitude_rate(obs: Observer, moment: datetime) -> float:
    """Degrees per minute the Sun's altitude changes at ``moment`` (astral's position model)."""
    before = astral.sun.elevation(obs, moment - timedelta(minutes=1), with_refraction=False)
    after = astral.sun.elevation(obs, moment + timedelta(minutes=1), with_refraction=False)
    return abs(after - before) / 2


def _astral_event(event: str, obs: Observer, day: date, tz) -> datetime | None:
    try:
        return ASTRAL[event](obs, day, tzinfo=tz)
    except ValueError:
        return None


@settings(max_examples=300, deadline=None)
@given(lat=latitudes, lon=longitudes, day=days)
def test_events_agree_with_astral_within_two_minutes_when_well_conditioned(lat, lon, day):
    """astral 3.2 with tzinfo passed explicitly; tolerance 2 min (measured: 33 s).

    Excluded here and covered by the next two tests: events where the Sun's
    altitude changes by less than 0.1°/min (grazing incidence near ±60°,
    where astral's extra 0.055° refraction on the civil threshold becomes
    minutes), and events within an hour of 00:00 UTC (astral evaluates the
    declination on the neighbouring UTC day there).
    """
    tz = _nearest_tz(lon)
    ours = sun.sun_times(lat, lon, day, tz)
    obs = Observer(lat, lon, 0.0)
    for event in EVENTS:
        mine, theirs = getattr(ours, event), _astral_event(event, obs, day, tz)
        if mine is None or theirs is None:
            continue
        utc = theirs.astimezone(UTC)
        minutes = utc.hour * 60 + utc.minute
        if min(minutes, 1440 - minutes) < 60 or _altitude_rate(obs, mine) < 0.1:
            continue
        assert abs(mine - theirs) <= TWO_MINUTES, (event, mine, theirs)
        assert mine.date() == day


@settings(max_examples=300, deadline=None)
@given(lat=latitudes, offset=offsets, day=days, zone_lon=st.sampled_from(ZONES))
def test_every_event_agrees_with_astral_within_three_minutes(lat, offset, day, zone_lon):
    """All cases, real zones, including grazing and near-midnight-UTC ones (measured worst: 2 min 24 s)."""
    zone, lon = zone_lon[0], zone_lon[1] + offset
    ours = sun.sun_times(lat, lon, day, zone)
    obs = Observer(lat, lon, 0.0)
    for event in EVENTS:
        mine, theirs = getattr(ours, event), _astral_event(event, obs, day, zone)
        if mine is not None and theirs is not None:
            assert abs(mine - theirs) <= timedelta(minutes=3), (event, mine, theirs)


@settings(max_examples=300, deadline=None)
@given(lat=latitudes, lon=longitudes, day=days, elevation=st.sampled_from([0.0, 30.0, 300.0, 1500.0]))
def test_sun_sits_on_the_threshold_at_each_event_by_astral_position(lat, lon, day, elevation):
    """astral's geometric solar elevation at our event time is the USNO threshold minus the dip (±0.01°)."""
    tz = _nearest_tz(lon)
    ours = sun.sun_times(lat, lon, day, tz, elevation)
    obs = Observer(lat, lon, 0.0)
    for event in EVENTS:
        moment = getattr(ours, event)
        if moment is None:
            continue
        position = astral.sun.elevation(obs, moment, with_refraction=False)
        # one second of rounding at the fastest rate (0.25°/min) is 0.004°
        assert position == pytest.approx(THRESHOLD[event] - sun.horizon_dip(elevation), abs=0.01), event


@settings(max_examples=200, deadline=None)
@given(lat=latitudes, lon=longitudes, moment=st.datetimes(min_value=datetime(1950, 1, 1), max_value=datetime(2090, 1, 1)))
def test_solar_elevation_matches_astral_position(lat, lon, moment):
    aware = moment.replace(tzinfo=UTC)
    expected = astral.sun.elevation(Observer(lat, lon, 0.0), aware, with_refraction=False)
    assert sun.solar_elevation(lat, lon, aware) == pytest.approx(expected, abs=0.01)


def test_elevation_convention_matches_astral_horizon_dip():
    """Eye 300 m above the horizon terrain: astral's Observer(elevation=300.0) agrees within 2 min."""
    day, tz = date(2025, 3, 14), ZoneInfo("America/Denver")
    ours = sun.sun_times(40.0, -104.5, day, tz, elevation_m=300.0)
    obs = Observer(40.0, -104.5, 300.0)
    assert abs(ours.sunrise - astral.sun.sunrise(obs, day, tzinfo=tz)) <= TWO_MINUTES
    assert abs(ours.sunset - astral.sun.sunset(obs, day, tzinfo=tz)) <= TWO_MINUTES
    at_ground = sun.sun_times(40.0, -104.5, day, tz)
    assert ours.sunrise < at_ground.sunrise and ours.sunset > at_ground.sunset


# ------------------------------------------------------------ local date

def test_far_from_utc_the_local_date_is_kept_where_a_utc_default_picks_the_neighbouring_day():
    """150 W (Pacific/Tahiti, UTC-10): sunset falls on the next UTC date."""
    tz, day, lat, lon = ZoneInfo("Pacific/Tahiti"), date(2025, 7, 4), -17.55, -149.6
    ours = sun.sun_times(lat, lon, day, tz)
    obs = Observer(lat, lon, 0.0)
    naive = astral.sun.sunset(obs, day)  # astral's default tzinfo is UTC
    assert naive.astimezone(tz).date() == day - timedelta(days=1)  # the pitfall: the previous local evening
    explicit = astral.sun.sunset(obs, day, tzinfo=tz)
    assert ours.sunset.date() == day and ours.sunset.tzinfo is tz
    assert abs(ours.sunset - explicit) <= TWO_MINUTES
    for event in EVENTS + ("noon",):
        assert getattr(ours, event).date() == day, event


@settings(max_examples=150, deadline=None)
@given(lat=latitudes, lon=longitudes, day=days, zone_lon=st.sampled_from(ZONES))
def test_every_event_lies_on_the_local_date_in_order(lat, lon, day, zone_lon):
    zone = zone_lon[0]  # any zone, even one far from the longitude: events stay on the local date
    ours = sun.sun_times(lat, lon, day, zone)
    assert all(getattr(ours, e) is None or getattr(ours, e).date() == day for e in EVENTS)
    ours = sun.sun_times(lat, lon, day, _nearest_tz(lon))  # a zone that fits the longitude: events in order
    present = [getattr(ours, e) for e in ("dawn", "sunrise", "noon", "sunset", "dusk") if getattr(ours, e) is not None]
    assert all(t.date() == day for t in present)
    if None not in (ours.sunrise, ours.sunset):
        assert ours.sunrise < ours.noon < ours.sunset
    if None not in (ours.dawn, ours.sunrise):
        assert ours.dawn < ours.sunrise


# ------------------------------------------------------------ polar

POLAR = [
    pytest.param(78.2, 15.6, "2025-06-21", "always_up", id="78 N midsummer: midnight sun (USNO definitions)"),
    pytest.param(78.2, 15.6, "2025-12-21", "always_down", id="78 N midwinter: polar night (USNO definitions)"),
    pytest.param(-77.8, 166.7, "2025-12-21", "always_up", id="78 S December: midnight sun (USNO definitions)"),
    pytest.param(-77.8, 166.7, "2025-06-21", "always_down", id="78 S June: polar night (USNO definitions)"),
]


@pytest.mark.parametrize(("lat", "lon", "day", "flag"), POLAR)
def test_polar_days_return_none_and_a_flag_where_astral_raises(lat, lon, day, flag):
    d, tz = date.fromisoformat(day), timezone.utc
    ours = sun.sun_times(lat, lon, d, tz)
    assert ours.sunrise is None and ours.sunset is None
    assert getattr(ours, flag)
    assert not getattr(ours, "always_down" if flag == "always_up" else "always_up")
    obs = Observer(lat, lon, 0.0)
    for fn in (astral.sun.sunrise, astral.sun.sunset):
        with pytest.raises(ValueError, match="always " + ("above" if flag == "always_up" else "below")):
            fn(obs, d, tzinfo=tz)


def test_white_night_has_sunrise_and_sunset_but_no_civil_twilight():
    """62 N at the June solstice: the Sun never gets 6° below (astral raises for dawn)."""
    d, tz = date(2025, 6, 21), ZoneInfo("Europe/Helsinki")
    ours = sun.sun_times(62.0, 25.0, d, tz)
    assert ours.sunrise is not None and ours.sunset is not None
    assert ours.dawn is None and ours.dusk is None and ours.civil_always_up
    assert not (ours.always_up or ours.always_down or ours.civil_always_down)
    with pytest.raises(ValueError):
        astral.sun.dawn(Observer(62.0, 25.0, 0.0), d, tzinfo=tz)


@settings(max_examples=200, deadline=None)
@given(lat=st.one_of(st.floats(min_value=60.0, max_value=89.5), st.floats(min_value=-89.5, max_value=-60.0)),
       lon=longitudes, day=days)
def test_polar_flags_match_astral_positions_over_the_day(lat, lon, day):
    """When astral's solar position keeps the Sun >0.3° clear of a threshold all day, the flag is set."""
    ours = sun.sun_times(lat, lon, day, _nearest_tz(lon))
    obs = Observer(lat, lon, 0.0)
    start = ours.noon - timedelta(hours=12)
    altitudes = [astral.sun.elevation(obs, start + timedelta(minutes=10 * k), with_refraction=False) for k in range(145)]
    for threshold, up, down, pair in ((-0.833, "always_up", "always_down", ("sunrise", "sunset")),
                                      (-6.0, "civil_always_up", "civil_always_down", ("dawn", "dusk"))):
        if min(altitudes) > threshold + 0.3:
            assert getattr(ours, up) and not getattr(ours, down)
            assert all(getattr(ours, e) is None for e in pair)
        elif max(altitudes) < threshold - 0.3:
            assert getattr(ours, down) and not getattr(ours, up)
            assert all(getattr(ours, e) is None for e in pair)
        else:
            assert not (getattr(ours, up) and getattr(ours, down))


# ------------------------------------------------------------ daylight and nights

DENVER = ZoneInfo("America/Denver")
FIELD = (39.6, -104.6)  # an invented high-plains airfield position


def test_is_daylight_inside_sunrise_to_sunset_only():
    s = sun.sun_times(*FIELD, date(2025, 5, 10), DENVER)
    assert sun.is_daylight(s, s.sunrise, s.sunset)
    assert sun.is_daylight(s, s.sunrise + timedelta(hours=2), s.sunrise + timedelta(hours=4))
    assert not sun.is_daylight(s, s.sunrise - timedelta(minutes=1), s.sunrise + timedelta(hours=1))
    assert not sun.is_daylight(s, s.sunset - timedelta(hours=1), s.sunset + timedelta(minutes=1))


def test_is_daylight_on_polar_days():
    up = sun.sun_times(78.2, 15.6, date(2025, 6, 21), timezone.utc)
    down = sun.sun_times(78.2, 15.6, date(2025, 12, 21), timezone.utc)
    t0 = datetime(2025, 6, 21, 1, tzinfo=UTC)
    assert sun.is_daylight(up, t0, t0 + timedelta(hours=2))
    t1 = datetime(2025, 12, 21, 11, tzinfo=UTC)
    assert not sun.is_daylight(down, t1, t1 + timedelta(hours=1))


def test_three_nights_follow_their_definitions():
    """14 CFR 1.1: dusk to dawn; 14 CFR 61.57(b): sunset+1 h to sunrise-1 h; 14 CFR 91.209: sunset to sunrise."""
    d = date(2025, 1, 10)
    today, tomorrow = sun.sun_times(*FIELD, d, DENVER), sun.sun_times(*FIELD, d + timedelta(days=1), DENVER)
    hour = timedelta(hours=1)
    cases = {
        sun.NIGHT_LOGGING: (today.dusk, tomorrow.dawn),
        sun.NIGHT_PASSENGERS: (today.sunset + hour, tomorrow.sunrise - hour),
        sun.NIGHT_LIGHTS: (today.sunset, tomorrow.sunrise),
    }
    for definition, (start, end) in cases.items():
        nights = sun.night_periods(definition, *FIELD, d, d + timedelta(days=1), DENVER)
        # the window is 10 Jan 00:00 .. 12 Jan 00:00: morning part, the full night, the evening part
        assert len(nights) == 3, definition
        middle = nights[1]
        assert abs(middle.start - start) <= timedelta(seconds=1) and abs(middle.end - end) <= timedelta(seconds=1)
        assert nights[0].start == datetime(2025, 1, 10, tzinfo=DENVER)
        assert nights[-1].end == datetime(2025, 1, 12, tzinfo=DENVER)
    logging, passengers, lights = (sun.night_periods(n, *FIELD, d, d, DENVER)[1] for n in sun.NIGHT_DEFINITIONS)
    # passenger night lies inside lights night; logging night (civil) too, and is longer than passenger night here
    assert lights.start < logging.start < passengers.start
    assert sun.logging_nights(*FIELD, d, d, DENVER) == sun.night_periods(sun.NIGHT_LOGGING, *FIELD, d, d, DENVER)
    assert sun.passenger_nights(*FIELD, d, d, DENVER)[1] == passengers
    assert sun.lights_nights(*FIELD, d, d, DENVER)[1] == lights


def test_is_night_per_definition_at_a_moment_between_sunset_and_dusk():
    d = date(2025, 1, 10)
    s = sun.sun_times(*FIELD, d, DENVER)
    moment = s.sunset + (s.dusk - s.sunset) / 2
    assert sun.is_night(sun.NIGHT_LIGHTS, *FIELD, moment, DENVER)
    assert not sun.is_night(sun.NIGHT_LOGGING, *FIELD, moment, DENVER)
    assert not sun.is_night(sun.NIGHT_PASSENGERS, *FIELD, moment, DENVER)
    assert sun.is_night(sun.NIGHT_PASSENGERS, *FIELD, s.sunset + timedelta(minutes=61), DENVER)


def test_nights_at_polar_latitudes():
    summer = sun.lights_nights(78.2, 15.6, date(2025, 6, 20), date(2025, 6, 22), timezone.utc)
    assert summer == ()
    winter = sun.lights_nights(78.2, 15.6, date(2025, 12, 20), date(2025, 12, 22), timezone.utc)
    assert winter == (sun.Interval(datetime(2025, 12, 20, tzinfo=UTC), datetime(2025, 12, 23, tzinfo=UTC)),)


def test_bad_inputs_are_named():
    with pytest.raises(ValueError, match="latitude"):
        sun.sun_times(91, 0, date(2025, 1, 1), UTC)
    with pytest.raises(ValueError, match="longitude"):
        sun.sun_times(0, 181, date(2025, 1, 1), UTC)
    with pytest.raises(ValueError, match="unknown night definition"):
        sun.night_periods("dark", 0, 0, date(2025, 1, 1), date(2025, 1, 1), UTC)
