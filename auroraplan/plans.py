"""The plan records: what the report layer computes and every view presents.

The report layer (:mod:`auroraplan.report`) runs the stages and builds these frozen,
typed records: the week plan (:class:`WeekPlan`), tonight's sheet
(:class:`TonightSheet`), the season outlook (:class:`SeasonOutlook`), the site table
(:class:`SiteTable`) and one site's night (:class:`NightTimeline`). The views (the
terminal tables, ``--json``, CSV, the phone page, run sheet and index page, the PDF
itinerary, the PNG charts, the calendar) read them and compute nothing.

The contract between the two sides
----------------------------------
* Every field has one public name, its JSON key. Fields whose key is a Python word
  carry it in their metadata (``Outing.return_`` is ``"return"``,
  ``SeasonOutlook.from_`` is ``"from"``). JSON key names are a public contract: they
  do not change.
* A view reads a record by attribute or by its public name (``sheet.sites`` or
  ``sheet["sites"]``, ``sheet.get("what_if")``), so a hand-written mapping with the same
  keys draws the same page (the tests' fixtures are checked against these records).
* Times are local ISO 8601 strings with the UTC offset, to the minute, unless the name
  ends in ``_utc``; dates are ISO dates. Chances are probabilities 0..1 rounded to three
  decimals; ``None`` where there is no value (no darkness, no forecast). Lists are tuples.
* ``to_json()`` gives the plain JSON value (dicts and lists, keys in field order);
  :func:`plain` does the same for any value holding records.
"""

from __future__ import annotations

import dataclasses
import types
import typing
from collections.abc import Mapping
from typing import Any

_OMIT_IF_NONE = "omit_if_none"
_JSON = "json"


def _key(f: dataclasses.Field) -> str:
    return f.metadata.get(_JSON, f.name)


def named(json_key: str, default=dataclasses.MISSING):
    """A field whose public (JSON) name is a Python keyword, e.g. ``from`` or ``return``."""
    if default is dataclasses.MISSING:
        return dataclasses.field(metadata={_JSON: json_key})
    return dataclasses.field(default=default, metadata={_JSON: json_key})


def optional():
    """A field left out of the JSON form while it is None (added by later steps)."""
    return dataclasses.field(default=None, metadata={_OMIT_IF_NONE: True})


class Record:
    """Read access to a frozen record by its public names, and its plain JSON form."""

    __slots__ = ()

    @classmethod
    def public_names(cls) -> tuple[str, ...]:
        return tuple(_key(f) for f in dataclasses.fields(cls))

    def _field_name(self, key: str) -> str:
        for f in dataclasses.fields(self):
            if _key(f) == key:
                return f.name
        raise KeyError(key)

    def __getitem__(self, key: str):
        return getattr(self, self._field_name(key))

    def get(self, key: str, default=None):
        try:
            value = self[key]
        except KeyError:
            return default
        return default if value is None and self._omitted(key) else value

    def _omitted(self, key: str) -> bool:
        f = next(f for f in dataclasses.fields(self) if _key(f) == key)
        return bool(f.metadata.get(_OMIT_IF_NONE))

    def keys(self):
        return [_key(f) for f in dataclasses.fields(self)
                if not (f.metadata.get(_OMIT_IF_NONE) and getattr(self, f.name) is None)]

    def __contains__(self, key) -> bool:
        return key in self.keys()

    def __iter__(self):
        return iter(self.keys())

    def items(self):
        return [(k, self[k]) for k in self.keys()]

    def to_json(self) -> dict:
        return {k: plain(self[k]) for k in self.keys()}

    def replace(self, **changes):
        """A copy with some fields changed (by attribute name)."""
        return dataclasses.replace(self, **changes)

    @classmethod
    def from_json(cls, data: Mapping, where: str | None = None):
        """The record from its JSON form, checking every key and the type of every value.

        Raises ``ValueError`` naming the path of the first key that is missing, unknown or
        of the wrong type (a hand-made mapping that does not match the record).
        """
        where = where or cls.__name__
        if not isinstance(data, Mapping):
            raise ValueError(f"{where}: expected an object, got {type(data).__name__}")
        hints = typing.get_type_hints(cls)
        fields = dataclasses.fields(cls)
        known = {_key(f) for f in fields}
        unknown = sorted(set(data) - known)
        if unknown:
            raise ValueError(f"{where}: unknown keys {unknown}")
        values = {}
        for f in fields:
            key = _key(f)
            if key not in data:
                if f.metadata.get(_OMIT_IF_NONE):
                    continue
                raise ValueError(f"{where}: missing key {key!r}")
            values[f.name] = _from_json(hints[f.name], data[key], f"{where}.{key}")
        return cls(**values)


def plain(value: Any):
    """``value`` with every record, tuple and mapping turned into JSON dicts and lists."""
    if isinstance(value, Record):
        return value.to_json()
    if isinstance(value, Mapping):
        return {k: plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [plain(v) for v in value]
    return value


def _from_json(hint, value, where: str):
    """``value`` (from JSON) as the type ``hint`` of a record field, checked."""
    origin, args = typing.get_origin(hint), typing.get_args(hint)
    if origin in (typing.Union, types.UnionType):
        if value is None and type(None) in args:
            return None
        others = [a for a in args if a is not type(None)]
        errors = []
        for a in others:
            try:
                return _from_json(a, value, where)
            except ValueError as exc:
                errors.append(str(exc))
        raise ValueError(errors[0])
    if hint is Any:
        return value
    if isinstance(hint, type) and issubclass(hint, Record):
        return hint.from_json(value, where)
    if origin is tuple:
        if not isinstance(value, list | tuple):
            raise ValueError(f"{where}: expected a list, got {type(value).__name__}")
        item = args[0]
        return tuple(_from_json(item, v, f"{where}[{i}]") for i, v in enumerate(value))
    if origin is Mapping or hint is Mapping:
        if not isinstance(value, Mapping):
            raise ValueError(f"{where}: expected an object, got {type(value).__name__}")
        item = args[1] if len(args) == 2 else Any
        return {k: _from_json(item, v, f"{where}.{k}") for k, v in value.items()}
    if hint is float:
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ValueError(f"{where}: expected a number, got {type(value).__name__}")
        return value
    if hint in (int, str, bool):
        if not isinstance(value, hint) or (hint is int and isinstance(value, bool)):
            raise ValueError(f"{where}: expected {hint.__name__}, got {type(value).__name__}")
        return value
    raise ValueError(f"{where}: no rule for {hint!r}")


def record(cls):
    """Declare a plan record: a frozen dataclass read through :class:`Record`."""
    return dataclasses.dataclass(frozen=True, eq=True)(cls)


# ---------------------------------------------------------------------------
# parts shared by several records


@record
class Base(Record):
    """The operator's base town: name, position (degrees) and IANA time zone."""

    name: str
    lat: float
    lon: float
    timezone: str


@record
class ForecastSource(Record):
    """Which Kp forecast a report was made from (``report.forecast_info``).

    ``kind`` is "forecast", "outlook" (Kp climatology) or "none"; ``gaps`` are local
    spans "HH:MM–HH:MM" inside the forecast that use the outlook; ``note`` says it in
    one sentence for the people who read it.
    """

    file: str | None
    issued_utc: str | None
    first_block_utc: str | None
    last_block_utc: str | None
    kind: str
    gaps: tuple[str, ...]
    note: str


@record
class NoDarkNight(Record):
    """A night with no darkness inside the outing hours, and why (``report.no_darkness``):
    "midnight sun", "bright night" or "outside outings"; the sun's lowest altitude (°)."""

    date: str
    reason: str
    sun_lowest_deg: float | None


@record
class OutingHoursUsed(Record):
    """The outing hours a report counted (``report.outing_hours_info``): local
    "HH:MM–HH:MM" of its first night, the operator's ``outing_from``/``outing_until``
    limits (None where not set) and whether the hours were derived from the sites'
    magnetic midnight."""

    hours: str
    outing_from: str | None
    outing_until: str | None
    derived: bool


NO_LOOK = {"look_azimuth": None, "look_compass": None, "look_elevation": None,
           "overhead": False, "look_words": None}
"""The look fields (``report.look_fields``: azimuth ° east of true north, compass point,
elevation °, whether the band is overhead, the phrase for a guide) where there is none."""


# ---------------------------------------------------------------------------
# tonight's sheet


@record
class HourChance(Record):
    """One dark clock hour at a site (``report.hourly_chance``).

    ``chance_in_hour`` is P(at least one display seen in the hour); ``chance_if_clear``
    the same under a clear sky; ``p_clear`` the mean P(clear) over the hour's dark steps.
    ``kp`` at the middle of the hour and ``kp_from`` ("forecast", "outlook", "none",
    "solar wind"); the cloud figure valid at the hour's start (``cloud_pct`` %, its
    source, each weather model's value, their spread in % points); where to look.
    ``zone`` is the zone's abbreviation (CET, CEST ...).
    """

    time: str
    zone: str
    chance_in_hour: float | None
    chance_if_clear: float | None
    p_clear: float | None
    kp: float | None
    cloud_pct: float | None
    cloud_source: str | None
    cloud_models: Mapping[str, float]
    cloud_spread_pct: float | None
    kp_from: str
    look_azimuth: float | None
    look_compass: str | None
    look_elevation: float | None
    overhead: bool
    look_words: str | None


@record
class SiteTonight(Record):
    """One open site on tonight's sheet, ranked by ``chance``.

    ``chance`` is P(at least one display seen) over the night's dark outing hours;
    ``window_start``/``window_end`` the best window; ``expected_minutes`` the expected
    minutes of display seen; ``limiting`` the factor that holds the chance down most;
    ``kp_needed`` and ``kp`` at the peak step; where to look then; cloud over the window
    (``cloud_pct`` %, source, each model's mean, the mean spread); the moon's lit
    fraction and hours above the horizon in darkness; the drive (minutes) and the
    site's notes; ``hourly`` per dark hour.
    """

    rank: int
    name: str
    lat: float
    lon: float
    chance: float | None
    chance_words: str
    window_start: str | None
    window_end: str | None
    expected_minutes: float | None
    limiting: str
    kp_needed: float | None
    kp: float | None
    look_azimuth: float | None
    look_compass: str | None
    look_elevation: float | None
    overhead: bool
    look_words: str | None
    cloud_pct: float | None
    cloud_source: str | None
    cloud_models: Mapping[str, float]
    cloud_spread_pct: float | None
    moon_illumination: float | None
    moon_up_hours: float | None
    drive_min: float
    notes: str
    hourly: tuple[HourChance, ...]


@record
class TonightSheet(Record):
    """Tonight's shortlist for the guide (``report.tonight_report``): the open sites
    ranked by chance, the night's darkness and moon, the forecast used, the solar-wind
    block (``nowcast``: None without a solar-wind file; see ``report.nowcast_info``),
    the words that define each chance figure, notes, warnings and the cautions.
    ``what_if`` lists the assumptions a page was made under (absent when none)."""

    kind: str
    operator: str
    base: Base
    date: str
    made_at: str
    forecast: ForecastSource
    darkness_level: str
    dark_start: str | None
    dark_end: str | None
    moon_illumination: float | None
    outing_hours: OutingHoursUsed
    darkness_note: str | None
    no_darkness: tuple[NoDarkNight, ...]
    closed_note: str | None
    nowcast: Mapping[str, Any] | None
    sites: tuple[SiteTonight, ...]
    chance_terms: Mapping[str, str]
    chance_explained: str
    cloud_note: str | None
    cloud_models: tuple[str, ...]
    warnings: tuple[str, ...]
    cautions: tuple[str, ...]
    notice: str
    what_if: tuple[str, ...] | None = optional()


# ---------------------------------------------------------------------------
# the week plan


@record
class RankedSite(Record):
    """A site and its chance on one night, in the trip's ranked list."""

    site: str
    chance: float | None


@record
class TripNight(Record):
    """One night of a trip's stay: the best allowed site and its chance, the best
    window, the night's forecast kind, the limiting factor, whether the trip blocked
    the night, and the ranked sites."""

    date: str
    site: str | None
    chance: float | None
    window_start: str | None
    window_end: str | None
    kind: str
    limiting: str | None
    blocked: bool
    in_stay: bool
    ranked: tuple[RankedSite, ...]


@record
class TripNights(Record):
    """A booked trip and its nights in the planned range."""

    trip: str
    group: str
    guests: int
    arrive: str
    depart: str
    outings: int
    nights: tuple[TripNight, ...]


@record
class Outing(Record):
    """One planned excursion: trip, night, site and backup with their chances, the best
    window, the pick-up (window start less the drive, floored to 5 minutes) and return
    (window end plus the drive, ceiled to 5 minutes), whether that return is after the
    operator's ``outing_until`` (``back_after_hours``), the drive (minutes), both sites'
    positions, where to look at the peak, the night's forecast kind and the outing's
    state in the plan of record ("proposed" or "confirmed")."""

    trip: str
    group: str
    date: str
    site: str
    backup: str | None
    chance: float | None
    backup_chance: float | None
    window_start: str | None
    window_end: str | None
    pickup: str | None
    return_: str | None = named("return")
    back_after_hours: bool
    drive_min: float
    lat: float
    lon: float
    backup_lat: float | None
    backup_lon: float | None
    look_azimuth: float | None
    look_compass: str | None
    look_elevation: float | None
    overhead: bool
    look_words: str | None
    kind: str
    state: str


@record
class SolverOutcome(Record):
    """How good the plan is: objective, expected sightings, the solver's bound and gap,
    whether a time limit was hit, groups served, the least share, seconds taken."""

    objective: float | None
    expected_sightings: float | None
    bound: float | None
    gap: float | None
    time_limit_hit: bool
    groups_served: int | None
    least_share: float | None
    seconds: float | None


@record
class Heatmap(Record):
    """The week's chance per site (rows) and night (columns), None at closed sites."""

    title: str
    dates: tuple[str, ...]
    sites: tuple[str, ...]
    chance: tuple[tuple[float | None, ...], ...]
    kinds: tuple[str, ...]


@record
class NightKind(Record):
    """A night and the kind of its Kp figure ("forecast", "outlook", "none")."""

    date: str
    kind: str


@record
class PlanWarning(Record):
    """A warning on the plan: a trip given fewer outings than asked (``reason`` one of
    ``report.SHORTFALL_REASONS``) or a note that concerns no one trip (reason "note")."""

    trip: str | None
    asked: int | None
    planned: int | None
    reason: str
    message: str


@record
class WeekPlan(Record):
    """Ranked nights and sites per trip and the excursion plan for the fleet
    (``report.week_report``). The plan of record (``auroraplan.record.propose``) adds
    ``changes`` against the record, ``what_if``, ``record`` (database, saved, plan id,
    trips re-planned) and the ``asked`` range of the ``week`` command; each is absent
    from the JSON form until set."""

    kind: str
    operator: str
    base: Base
    start: str
    nights: int
    made_at: str
    forecast: ForecastSource
    vehicles: int
    night_kinds: tuple[NightKind, ...]
    outing_hours: OutingHoursUsed
    darkness_note: str | None
    no_darkness: tuple[NoDarkNight, ...]
    closed_note: str | None
    trips: tuple[TripNights, ...]
    plan: tuple[Outing, ...]
    solver: SolverOutcome
    heatmap: Heatmap
    cloud_note: str | None
    cloud_models: tuple[str, ...]
    warnings: tuple[PlanWarning, ...]
    cautions: tuple[str, ...]
    notice: str
    changes: tuple[Mapping[str, Any], ...] | None = optional()
    what_if: tuple[str, ...] | None = optional()
    record: Mapping[str, Any] | None = optional()
    asked: Mapping[str, Any] | None = optional()


# ---------------------------------------------------------------------------
# the season outlook


@record
class SeasonNight(Record):
    """One night of the season: dark hours inside the outing hours, the best open
    site's chance and name, the chance at an open-horizon point at the base, the moon's
    lit fraction and the kind (always "outlook")."""

    date: str
    dark_hours: float | None
    chance: float | None
    best_site: str | None
    chance_base: float | None
    moon_illumination: float | None
    kind: str


@record
class BestStart(Record):
    """A start date for a stay: P(at least one night with a display) over the stay
    (``chance_any``) and the expected number of such nights."""

    start: str
    end: str
    nights: int
    chance_any: float | None
    expected_nights: float | None


@record
class SeasonOutlook(Record):
    """Long-range chance per night from climatology (``report.season_report``)."""

    kind: str
    operator: str
    base: Base
    from_: str = named("from")
    to: str
    trip_nights: int
    made_at: str
    method: str
    nights: tuple[SeasonNight, ...]
    best_starts: tuple[BestStart, ...]
    best_starts_note: str | None
    closed_note: str | None
    warnings: tuple[str, ...]
    notice: str


@record
class SeasonChart(Record):
    """The season chart's series, one value per night (from a :class:`SeasonOutlook`)."""

    title: str
    dates: tuple[str, ...]
    chance: tuple[float | None, ...]
    dark_hours: tuple[float | None, ...]
    kinds: tuple[str, ...]
    moon_illumination: tuple[float | None, ...]
    south: bool


# ---------------------------------------------------------------------------
# the site table


@record
class SiteKp(Record):
    """One site's magnetic position and the Kp it needs (``report.site_table``).

    Kp needed at magnetic midnight for the band overhead and on the horizon, the Kp at
    which a storm carries it out of view again (polar-cap sites), where to look then; the
    night-side magnetic local time needing the least Kp (``best_mlt``, hours), that Kp,
    and the local clock time the site passes it on the evening asked.
    """

    name: str
    mlat: float
    mlon: float
    kp_needed_overhead: float | None
    kp_needed_horizon: float | None
    kp_lost_horizon: float | None
    look_azimuth: float | None
    look_compass: str | None
    look_elevation: float | None
    best_mlt: float
    kp_needed_best: float | None
    best_local_time: str | None
    closed: bool


@record
class SiteTable(Record):
    """Every site's magnetic latitude and Kp needed, with the model and margins used."""

    workspace: str
    date: str
    model: str
    min_elevation_deg: float
    emission_height_km: float
    note: str
    sites: tuple[SiteKp, ...]


# ---------------------------------------------------------------------------
# one site's night


@record
class NightTimeline(Record):
    """One site's night at 10-minute steps (``report.site_timeline``): sun and moon
    altitude (°), darkness and outing hours, Kp needed and forecast (mean, spread),
    cloud (%), each step's chance in its hour and the chance by that time."""

    site: str
    date: str
    timezone: str
    darkness_level: str
    times: tuple[str, ...]
    sun_alt: tuple[float | None, ...]
    moon_alt: tuple[float | None, ...]
    dark: tuple[bool, ...]
    outing: tuple[bool, ...]
    kp_needed: tuple[float | None, ...]
    kp_forecast: tuple[float | None, ...]
    kp_sd: tuple[float | None, ...]
    cloud_pct: tuple[float | None, ...]
    chance_in_hour: tuple[float | None, ...]
    chance_by_time: tuple[float | None, ...]
    chance_terms: Mapping[str, str]
