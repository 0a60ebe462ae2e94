"""operator.toml: the base, the fleet and every stage's settings table."""

from __future__ import annotations

import dataclasses
from pathlib import Path

from auroraplan import checks
from auroraplan.errors import ProblemList
from auroraplan.planner import Fleet, Guide, Vehicle
from auroraplan.settings import TABLES, Settings
from auroraplan.workspace.crosschecks import _check_zone_near_base
from auroraplan.workspace.files import _check_field, _parse_document, _read_text
from auroraplan.workspace.model import Operator

OPERATOR_SCHEMA = {
    # table: {key: (checker, required)}; the stage tables are in auroraplan.settings.TABLES
    "base": {
        "name": (checks.name, True),
        "lat": (checks.latitude_off_pole, True),
        "lon": (checks.number(-180, 180, "degrees"), True),
        "timezone": (checks.zone, True),
    },
    "operator": {"name": (checks.name, False)},
    # vehicles: a count, or a list of {name, seats, unavailable}; seats: the default seats
    # per vehicle (without it a vehicle takes one group); guides: a count or a list of
    # {name, unavailable}. See _fleet_record.
    "fleet": {
        "vehicles": (lambda value: _fleet_members(value, "vehicle"), False),
        "seats": (checks.whole(1, 100, "seats"), False),
        "guides": (lambda value: _fleet_members(value, "guide"), False),
    },
}


FLEET_MEMBER_KEYS = {"vehicle": ("name", "seats", "unavailable"), "guide": ("name", "unavailable")}


def _fleet_members(value, kind):
    """A count (1-100), or a list of tables for each vehicle or guide; a tuple of dicts."""
    if not isinstance(value, list):
        return checks.whole(1 if kind == "vehicle" else 0, 100, f"{kind}s")(value)
    if not 1 <= len(value) <= 100:
        raise ValueError(f"give 1 to 100 {kind}s, not {len(value)}")
    members, names = [], set()
    for number, item in enumerate(value, start=1):
        where = f"{kind} {number}"
        if not isinstance(item, dict):
            raise ValueError(f"{where}: give a table such as {{ name = \"Van A\""
                             f"{', seats = 8' if kind == 'vehicle' else ''} }}")
        unknown = [key for key in item if key not in FLEET_MEMBER_KEYS[kind]]
        if unknown:
            raise ValueError(f"{where}: unknown key {unknown[0]}; allowed: "
                             f"{', '.join(FLEET_MEMBER_KEYS[kind])}")
        name = checks.text(item["name"]) if "name" in item else f"{kind} {number}"
        if name in names:
            raise ValueError(f"{where}: the name {checks.quote(name)} is used twice; name each once")
        names.add(name)
        member = {"name": name, "unavailable": checks.date_list(item.get("unavailable", []), f"{where} unavailable")}
        if kind == "vehicle" and "seats" in item:
            try:
                member["seats"] = checks.whole(1, 100, "seats")(item["seats"])
            except ValueError as exc:
                raise ValueError(f"{where} seats: {exc}") from None
        members.append(member)
    return tuple(members)


def _fleet_record(values, label, problems):
    """The planner's Fleet from the checked [fleet] keys (plain `vehicles = N` by default)."""
    vehicles = values.get(("fleet", "vehicles"), 1)
    seats = values.get(("fleet", "seats"))
    if isinstance(vehicles, int):
        fleet_vehicles = Fleet.of_count(vehicles, seats).vehicles
    else:
        missing = [v["name"] for v in vehicles if "seats" not in v]
        if seats is None and missing and len(missing) < len(vehicles):
            problems.add(f"{label} [fleet] vehicles: {missing[0]} has no seats; give seats for "
                         "every vehicle, or a default seats = N in [fleet]")
            return None
        fleet_vehicles = tuple(Vehicle(v["name"], v.get("seats", seats), v["unavailable"])
                               for v in vehicles)
    guides = values.get(("fleet", "guides"))
    if isinstance(guides, int):
        guides = tuple(Guide(f"guide {i + 1}") for i in range(guides))
    elif guides is not None:
        guides = tuple(Guide(g["name"], g["unavailable"]) for g in guides)
    return Fleet(fleet_vehicles, guides)


def _read_settings(doc: dict, label: str, problems: ProblemList) -> Settings | None:
    """The stage settings records filled from their operator.toml tables (auroraplan.settings).

    Each key is checked by its field's checker; a key may stand in one of the tables that
    accept it, once.
    """
    before = len(problems)
    records = [f.name for f in dataclasses.fields(Settings)]
    defaults = Settings()
    values: dict = {name: {} for name in records}
    set_in: dict = {}  # key -> table
    for table, homes in TABLES.items():
        given = doc.get(table)
        if not isinstance(given, dict):
            continue
        fields = {}
        for home in homes:
            for key, fld in checks.setting_fields(getattr(defaults, home)).items():
                fields.setdefault(key, (home, fld))
        for key, raw in given.items():
            where = f"{label} [{table}] {key}"
            if key not in fields:
                problems.add(f"{where}: unknown key; allowed: {', '.join(fields)}")
                continue
            home, fld = fields[key]
            if key in set_in:
                problems.add(f"{where}: also set in [{set_in[key]}]; set it in one table only")
                continue
            set_in[key] = table
            checked = _check_field(problems, where, None, fld.metadata["check"], raw)
            if checked is not None:
                values[home][key] = checked
    if len(problems) > before:
        return None
    filled = {name: dataclasses.replace(getattr(defaults, name), **values[name])
              for name in records}
    for record in filled.values():
        for low, high, meaning in getattr(record, "ORDERED", ()):
            if low in set_in or high in set_in:
                if getattr(record, low) > getattr(record, high):
                    key = high if high in set_in else low
                    problems.add(
                        f"{label} [{set_in[key]}] {key}: {low} {getattr(record, low):g} is "
                        f"above {high} {getattr(record, high):g}; {meaning}, give {low} ≤ {high}"
                    )
    if len(problems) > before:
        return None
    return Settings(**filled)


def _load_operator(path: Path, label: str, problems: ProblemList):
    """(Operator, Settings) from operator.toml, or None with the problems added."""
    text = _read_text(path, label, problems)
    if text is None:
        return None
    doc = _parse_document(text, label, problems, "toml")
    if doc is None:
        return None
    known = tuple(OPERATOR_SCHEMA) + tuple(TABLES)
    values = {}
    for table, value in doc.items():
        if table not in known:
            problems.add(f"{label} [{table}]: unknown table; allowed: {', '.join(known)}")
        elif not isinstance(value, dict):
            problems.add(f"{label} {table}: must be a [{table}] table")
    for table, keys in OPERATOR_SCHEMA.items():
        given = doc.get(table, {})
        if not isinstance(given, dict):
            continue
        for key in given:
            if key not in keys:
                problems.add(
                    f"{label} [{table}] {key}: unknown key; allowed: {', '.join(keys)}"
                )
        for key, (checker, required) in keys.items():
            if key not in given:
                if required:
                    problems.add(f"{label} [{table}] {key}: missing; it is required")
                continue
            checked = _check_field(problems, f"{label} [{table}] {key}", None, checker,
                                   given[key])
            if checked is not None:
                values[(table, key)] = checked
    settings = _read_settings(doc, label, problems)
    if all(("base", k) in values for k in ("lat", "lon", "timezone")):
        _check_zone_near_base(values[("base", "lat")], values[("base", "lon")],
                              values[("base", "timezone")], label, problems)
    if problems:
        return None
    fleet = _fleet_record(values, label, problems)
    if fleet is None:
        return None
    operator = Operator(
        name=values.get(("operator", "name"), values[("base", "name")]),
        base_name=values[("base", "name")],
        base_lat=values[("base", "lat")],
        base_lon=values[("base", "lon")],
        timezone=values[("base", "timezone")],
        vehicles=len(fleet.vehicles),
        fleet=fleet,
    )
    return operator, settings
