"""Sun times for an airfield, and the three "nights" of 14 CFR.

Solar position follows the NOAA solar calculator equations (Meeus-style low
precision series: mean longitude and anomaly, equation of centre, apparent
longitude, obliquity, declination and the equation of time). Event
definitions follow the USNO convention:

* sunrise / sunset: the Sun's centre 0.833 degrees below the horizon
  (34' mean refraction + 16' semi-diameter);
* civil dawn / dusk: the Sun's centre 6 degrees below the horizon.

The expected agreement with published tables is about one minute at the
latitudes where people fly; near the polar circles the times become
ill-conditioned (the Sun grazes the threshold) and can differ by more.

Elevation convention: ``elevation_m`` is the height of the observer's eye
above the terrain that forms their horizon, *not* the airfield elevation
above sea level. A pilot on an airfield surrounded by terrain at the same
level sees the same horizon at sea level and on a high plain, so for
planning pass 0 (the default). A positive value adds the geometric dip of
the horizon, acos(R / (R + h)) with R = 6,371 km, to both thresholds; this
is the same convention astral uses for a float ``elevation``.

The three nights (all as half-open local intervals ``[start, end)``):

* 14 CFR 1.1 (logging night time): end of evening civil twilight to the
  beginning of morning civil twilight;
* 14 CFR 61.57(b) (night passenger currency): one hour after sunset to one
  hour before sunrise;
* 14 CFR 91.209 (position lights): sunset to sunrise.

Nothing here reads the clock: the date and the time zone are arguments.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date, datetime, time, timedelta, timezone, tzinfo

SUNRISE_DEPRESSION = 0.833  # degrees below the horizon, USNO
CIVIL_DEPRESSION = 6.0  # degrees below the horizon, USNO
EARTH_RADIUS_M = 6_371_000.0

_UNIX_EPOCH_JD = 2440587.5
_MINUTE = timedelta(minutes=1)


@dataclass(frozen=True)
class SunTimes:
    """Sun events on one local date at one place.

    Every datetime is aware and expressed in ``tz``; each lies on the local
    date ``day``. An event is None when it does not happen on that date:

    * ``always_up`` / ``always_down``: the Sun's centre stays above / below
      the sunrise threshold all day (midnight sun / polar night), so there is
      no sunrise and no sunset;
    * ``civil_always_up`` / ``civil_always_down``: the same for the civil
      twilight threshold, so there is no civil dawn and no civil dusk
      ("white night" in high-latitude summer / deep polar night);
    * a flag is set only when *both* events of the pair are missing; a
      single missing event means the Sun crossed that threshold only once
      on this date (the first sunrise or last sunset of a polar season), or
      the event fell just outside the local date (for example a civil dusk
      a few minutes after local midnight at high latitude in summer).

    ``noon`` (the Sun's transit) is always given.
    """

    day: date
    tz: tzinfo
    dawn: datetime | None
    sunrise: datetime | None
    noon: datetime
    sunset: datetime | None
    dusk: datetime | None
    always_up: bool = False
    always_down: bool = False
    civil_always_up: bool = False
    civil_always_down: bool = False


@dataclass(frozen=True)
class Interval:
    """A half-open time interval ``[start, end)`` of aware datetimes."""

    start: datetime
    end: datetime

    def __post_init__(self) -> None:
        if self.end < self.start:
            raise ValueError(f"interval ends before it starts: {self.start} > {self.end}")

    def contains(self, moment: datetime) -> bool:
        return self.start <= moment < self.end


# ----------------------------------------------------------------- position


def _julian_century(moment: datetime) -> float:
    jd = _UNIX_EPOCH_JD + moment.timestamp() / 86400.0
    return (jd - 2451545.0) / 36525.0


def _declination_and_eot(moment: datetime) -> tuple[float, float]:
    """Solar declination (degrees) and equation of time (minutes) at ``moment``."""
    t = _julian_century(moment)
    l0 = (280.46646 + t * (36000.76983 + t * 0.0003032)) % 360.0
    m = 357.52911 + t * (35999.05029 - 0.0001537 * t)
    e = 0.016708634 - t * (0.000042037 + 0.0000001267 * t)
    mr = math.radians(m)
    c = (
        math.sin(mr) * (1.914602 - t * (0.004817 + 0.000014 * t))
        + math.sin(2 * mr) * (0.019993 - 0.000101 * t)
        + math.sin(3 * mr) * 0.000289
    )
    omega = math.radians(125.04 - 1934.136 * t)
    apparent_long = math.radians(l0 + c - 0.00569 - 0.00478 * math.sin(omega))
    mean_obliquity = 23.0 + (26.0 + (21.448 - t * (46.815 + t * (0.00059 - t * 0.001813))) / 60.0) / 60.0
    obliquity = math.radians(mean_obliquity + 0.00256 * math.cos(omega))
    declination = math.degrees(math.asin(math.sin(obliquity) * math.sin(apparent_long)))
    y = math.tan(obliquity / 2) ** 2
    l0r = math.radians(l0)
    eot = 4.0 * math.degrees(
        y * math.sin(2 * l0r)
        - 2 * e * math.sin(mr)
        + 4 * e * y * math.sin(mr) * math.cos(2 * l0r)
        - 0.5 * y * y * math.sin(4 * l0r)
        - 1.25 * e * e * math.sin(2 * mr)
    )
    return declination, eot


def _cos_hour_angle(latitude: float, declination: float, zenith: float) -> float:
    lat = math.radians(latitude)
    dec = math.radians(declination)
    return (math.cos(math.radians(zenith)) - math.sin(lat) * math.sin(dec)) / (math.cos(lat) * math.cos(dec))


def _transit(longitude: float, anchor: datetime) -> datetime:
    """Solar transit on the UTC day starting at ``anchor`` (UTC midnight)."""
    moment = anchor + timedelta(minutes=720.0 - 4.0 * longitude)
    for _ in range(3):
        _, eot = _declination_and_eot(moment)
        moment = anchor + timedelta(minutes=720.0 - 4.0 * longitude - eot)
    return moment


def _event(latitude: float, longitude: float, anchor: datetime, zenith: float, sign: int) -> datetime | str:
    """Time the Sun's centre crosses ``zenith``: sign -1 rising, +1 setting.

    Returns "up" or "down" when the Sun stays above / below that zenith.
    """
    moment = _transit(longitude, anchor)
    for _ in range(4):
        declination, eot = _declination_and_eot(moment)
        cos_h = _cos_hour_angle(latitude, declination, zenith)
        if cos_h > 1.0:
            return "down"
        if cos_h < -1.0:
            return "up"
        hour_angle = math.degrees(math.acos(cos_h))
        moment = anchor + timedelta(minutes=720.0 - 4.0 * longitude - eot + sign * 4.0 * hour_angle)
    return moment


def _anchor_for(latitude: float, longitude: float, day: date, tz: tzinfo) -> datetime:
    """UTC midnight whose transit lies nearest local clock noon of ``day``."""
    local_noon = datetime.combine(day, time(12), tzinfo=tz).astimezone(timezone.utc)
    anchor = datetime.combine(local_noon.date(), time(0), tzinfo=timezone.utc)
    best = min(
        (anchor + timedelta(days=k) for k in (-1, 0, 1)),
        key=lambda a: abs((_transit(longitude, a) - local_noon).total_seconds()),
    )
    return best


def _check_inputs(latitude: float, longitude: float, tz: tzinfo, elevation_m: float) -> None:
    if not -90.0 <= latitude <= 90.0:
        raise ValueError(f"latitude {latitude} is outside -90..90")
    if not -180.0 <= longitude <= 180.0:
        raise ValueError(f"longitude {longitude} is outside -180..180")
    if tz is None:
        raise ValueError("tz is required: sun times are for a local date")
    if elevation_m < 0:
        raise ValueError(f"elevation_m {elevation_m} is negative (height of the eye above the local horizon)")


def horizon_dip(elevation_m: float) -> float:
    """Geometric dip of the horizon, degrees, for an eye ``elevation_m`` above the terrain."""
    if elevation_m <= 0:
        return 0.0
    return math.degrees(math.acos(EARTH_RADIUS_M / (EARTH_RADIUS_M + elevation_m)))


def sun_times(latitude: float, longitude: float, day: date, tz: tzinfo, elevation_m: float = 0) -> SunTimes:
    """Civil dawn, sunrise, solar noon, sunset and civil dusk on local date ``day``.

    ``latitude`` degrees north positive, ``longitude`` degrees east positive
    (west negative), ``tz`` the airfield's time zone (``zoneinfo.ZoneInfo``),
    ``elevation_m`` the eye height above the local horizon (see module
    docstring; 0 for an airfield). Results are aware datetimes in ``tz`` on
    the local date ``day``, rounded to the second.
    """
    _check_inputs(latitude, longitude, tz, elevation_m)
    latitude = max(-89.8, min(89.8, latitude))  # the formulas divide by cos(latitude)
    dip = horizon_dip(elevation_m)
    anchor = _anchor_for(latitude, longitude, day, tz)
    noon = _local(_transit(longitude, anchor), tz)

    def on_day(zenith: float, sign: int) -> datetime | None:
        # The event of the transit nearest local noon, or of a neighbouring
        # transit when that one falls on another local date.
        for shift in (0, -1, 1):
            candidate = _event(latitude, longitude, anchor + timedelta(days=shift), zenith, sign)
            if isinstance(candidate, datetime):
                local = _local(candidate, tz)
                if local.date() == day:
                    return local
        return None

    noon_altitude = solar_elevation(latitude, longitude, noon)
    sunrise_zenith = 90.0 + SUNRISE_DEPRESSION + dip
    civil_zenith = 90.0 + CIVIL_DEPRESSION + dip
    dawn = on_day(civil_zenith, -1)
    sunrise = on_day(sunrise_zenith, -1)
    sunset = on_day(sunrise_zenith, +1)
    dusk = on_day(civil_zenith, +1)
    # No crossing at all on this date: the Sun stays on one side of the
    # threshold, and the side is where it is at transit.
    no_sun_events = sunrise is None and sunset is None
    no_civil_events = dawn is None and dusk is None
    return SunTimes(
        day=day, tz=tz, dawn=dawn, sunrise=sunrise, noon=noon, sunset=sunset, dusk=dusk,
        always_up=no_sun_events and noon_altitude > 90.0 - sunrise_zenith,
        always_down=no_sun_events and noon_altitude <= 90.0 - sunrise_zenith,
        civil_always_up=no_civil_events and noon_altitude > 90.0 - civil_zenith,
        civil_always_down=no_civil_events and noon_altitude <= 90.0 - civil_zenith,
    )


def solar_elevation(latitude: float, longitude: float, moment: datetime) -> float:
    """Geometric elevation of the Sun's centre, degrees, at aware ``moment`` (no refraction)."""
    if moment.tzinfo is None:
        raise ValueError("moment must be an aware datetime")
    utc = moment.astimezone(timezone.utc)
    declination, eot = _declination_and_eot(utc)
    minutes = utc.hour * 60 + utc.minute + (utc.second + utc.microsecond / 1e6) / 60
    hour_angle = math.radians((minutes + eot + 4.0 * longitude) / 4.0 - 180.0)
    lat, dec = math.radians(latitude), math.radians(declination)
    cos_zenith = math.sin(lat) * math.sin(dec) + math.cos(lat) * math.cos(dec) * math.cos(hour_angle)
    return 90.0 - math.degrees(math.acos(max(-1.0, min(1.0, cos_zenith))))


def _local(moment: datetime, tz: tzinfo) -> datetime:
    rounded = (moment + timedelta(microseconds=500_000)).replace(microsecond=0)
    return rounded.astimezone(tz)


# ----------------------------------------------------------------- daylight


def _day_start(day: date, tz: tzinfo) -> datetime:
    return datetime.combine(day, time(0), tzinfo=tz)


def _lit_interval(sun: SunTimes, rise: datetime | None, set_: datetime | None, up: bool, down: bool) -> Interval | None:
    """The part of the local day between a rising and a setting event."""
    day_start = _day_start(sun.day, sun.tz)
    day_end = _day_start(sun.day + timedelta(days=1), sun.tz)
    if up:
        return Interval(day_start, day_end)
    if down:
        return None
    start = rise if rise is not None else day_start
    end = set_ if set_ is not None else day_end
    if end <= start:
        return None
    return Interval(start, end)


def is_daylight(sun: SunTimes, start: datetime, end: datetime) -> bool:
    """True when ``[start, end]`` lies between sunrise and sunset of ``sun``'s day.

    ``start`` and ``end`` are aware datetimes; both edges are inclusive.
    On a midnight-sun day the whole local day is daylight; on a polar-night
    day none of it is. A slot that runs past the local date is not daylight
    unless the next day is checked too (call it per day).
    """
    if start.tzinfo is None or end.tzinfo is None:
        raise ValueError("start and end must be aware datetimes")
    if end < start:
        raise ValueError("end is before start")
    lit = _lit_interval(sun, sun.sunrise, sun.sunset, sun.always_up, sun.always_down)
    if lit is None:
        return False
    return lit.start <= start and end <= lit.end


# ----------------------------------------------------------------- nights

NIGHT_LOGGING = "14 CFR 1.1"
NIGHT_PASSENGERS = "14 CFR 61.57(b)"
NIGHT_LIGHTS = "14 CFR 91.209"
NIGHT_DEFINITIONS = (NIGHT_LOGGING, NIGHT_PASSENGERS, NIGHT_LIGHTS)


def night_periods(definition: str, latitude: float, longitude: float, first_day: date, last_day: date,
                  tz: tzinfo, elevation_m: float = 0) -> tuple[Interval, ...]:
    """Night intervals of one 14 CFR definition within local dates ``first_day``..``last_day``.

    ``definition`` is one of NIGHT_DEFINITIONS. The window is
    ``[first_day 00:00, last_day + 1 00:00)`` local time; intervals are
    clipped to it and sorted. Nights are computed as what is left of the
    window after the lit part of each day (widened by one hour either side
    for 61.57(b)) is removed, so polar days and nights need no special case:
    a midnight-sun day has no night, a polar-night day is night throughout
    (for 1.1 only when there is no civil twilight either).
    """
    if definition not in NIGHT_DEFINITIONS:
        raise ValueError(f"unknown night definition {definition!r}; use one of {NIGHT_DEFINITIONS}")
    if last_day < first_day:
        raise ValueError("last_day is before first_day")
    _check_inputs(latitude, longitude, tz, elevation_m)
    latitude = max(-89.8, min(89.8, latitude))
    window = Interval(_day_start(first_day, tz), _day_start(last_day + timedelta(days=1), tz))
    if definition == NIGHT_LOGGING:
        zenith, margin = 90.0 + CIVIL_DEPRESSION, timedelta(0)
    elif definition == NIGHT_PASSENGERS:
        zenith, margin = 90.0 + SUNRISE_DEPRESSION, timedelta(hours=1)
    else:
        zenith, margin = 90.0 + SUNRISE_DEPRESSION, timedelta(0)
    zenith += horizon_dip(elevation_m)
    # One lit interval per solar transit (rising event to setting event of the
    # same transit), for every UTC day that can touch the window.
    lit: list[Interval] = []
    anchor = datetime.combine(window.start.astimezone(timezone.utc).date(), time(0), tzinfo=timezone.utc)
    anchor -= timedelta(days=2)
    while anchor <= window.end + timedelta(days=2):
        rise = _event(latitude, longitude, anchor, zenith, -1)
        set_ = _event(latitude, longitude, anchor, zenith, +1)
        transit = _transit(longitude, anchor)
        if rise == "up" or set_ == "up":
            # consecutive transits are 24 h +/- seconds apart: overlap them
            lit.append(Interval(transit - timedelta(hours=13), transit + timedelta(hours=13)))
        elif isinstance(rise, datetime) and isinstance(set_, datetime):
            lit.append(Interval(rise - margin, set_ + margin))
        elif isinstance(rise, datetime) or isinstance(set_, datetime):
            # Rises but does not set (or the reverse) around this transit: the
            # threshold is being crossed for the first/last time this season.
            start = rise if isinstance(rise, datetime) else transit - timedelta(hours=13)
            end = set_ if isinstance(set_, datetime) else transit + timedelta(hours=13)
            lit.append(Interval(start - margin, end + margin))
        anchor += timedelta(days=1)
    lit.sort(key=lambda i: i.start)
    nights: list[Interval] = []
    cursor = window.start
    for part in lit:
        if part.start > cursor:
            nights.append(Interval(cursor, min(part.start, window.end)))
        cursor = max(cursor, part.end)
        if cursor >= window.end:
            break
    if cursor < window.end:
        nights.append(Interval(cursor, window.end))
    return tuple(Interval(_local(n.start, tz), _local(n.end, tz)) for n in nights if n.end > n.start)


def logging_nights(latitude: float, longitude: float, first_day: date, last_day: date, tz: tzinfo,
                   elevation_m: float = 0) -> tuple[Interval, ...]:
    """14 CFR 1.1 night (end of evening to beginning of morning civil twilight); see night_periods."""
    return night_periods(NIGHT_LOGGING, latitude, longitude, first_day, last_day, tz, elevation_m)


def passenger_nights(latitude: float, longitude: float, first_day: date, last_day: date, tz: tzinfo,
                     elevation_m: float = 0) -> tuple[Interval, ...]:
    """14 CFR 61.57(b) period (sunset + 1 h to sunrise - 1 h); see night_periods."""
    return night_periods(NIGHT_PASSENGERS, latitude, longitude, first_day, last_day, tz, elevation_m)


def lights_nights(latitude: float, longitude: float, first_day: date, last_day: date, tz: tzinfo,
                  elevation_m: float = 0) -> tuple[Interval, ...]:
    """14 CFR 91.209 period (sunset to sunrise); see night_periods."""
    return night_periods(NIGHT_LIGHTS, latitude, longitude, first_day, last_day, tz, elevation_m)


def is_night(definition: str, latitude: float, longitude: float, moment: datetime, tz: tzinfo,
             elevation_m: float = 0) -> bool:
    """True when aware ``moment`` falls in a night of ``definition`` at the place."""
    if moment.tzinfo is None:
        raise ValueError("moment must be an aware datetime")
    day = moment.astimezone(tz).date()
    return any(n.contains(moment) for n in night_periods(definition, latitude, longitude, day, day, tz, elevation_m))
