"""The plan of record: which group goes to which site on which night, and who decided it.

An outing in the record is ``proposed`` (the latest plan made by ``week`` or
for an itinerary), ``confirmed`` (promised to the guests; a new plan keeps it),
``released`` (a confirmed or proposed outing given up by the operator) or
``replaced`` (a proposal superseded by a newer one). Rows are never deleted:
every change of state is an ``outing_events`` row with who, what and when, so
the history of a trip's plan can always be read back.

Every write here is one transaction of `auroraplan.store.Store`, so a process
killed half-way leaves the record as it was before the write began.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
from dataclasses import dataclass
from pathlib import Path

LIVE_STATES = ("proposed", "confirmed")
"""States of the outings that make up the plan of record."""


@dataclass(frozen=True)
class Outing:
    """One outing of the record: a group, a night (local evening date) and a site."""

    trip: str
    night: str
    site: str
    backup: str | None
    chance: float | None
    state: str
    changed_at: str
    changed_by: str
    plan_id: int
    note: str = ""


def now_utc() -> str:
    """The current time as ISO 8601 UTC to the second, for who-what-when rows."""
    return dt.datetime.now(dt.UTC).replace(microsecond=0).isoformat().replace("+00:00", "Z")


def who() -> str:
    """The name recorded for a change when none is given: the login name, else "operator"."""
    import getpass

    try:
        return getpass.getuser() or "operator"
    except (KeyError, OSError):
        return "operator"


def _outing(row) -> Outing:
    return Outing(trip=row["trip"], night=row["night"], site=row["site"], backup=row["backup"],
                  chance=row["chance"], state=row["state"], changed_at=row["changed_at"],
                  changed_by=row["changed_by"], plan_id=row["plan_id"], note=row["note"])


def live_outings(db) -> dict[tuple[str, str], Outing]:
    """The plan of record: (trip, night) -> its proposed or confirmed outing."""
    if db is None:
        return {}
    rows = db.query("SELECT * FROM outings WHERE state IN ('proposed', 'confirmed') "
                    "ORDER BY night, trip")
    return {(r["trip"], r["night"]): _outing(r) for r in rows}


def planned_trips(db) -> dict[str, int]:
    """Trip id -> the plan that last planned it (a trip planned with no outing is here too)."""
    if db is None:
        return {}
    return {r["trip"]: r["plan_id"] for r in db.query("SELECT trip, plan_id FROM planned_trips")}


def plan_inputs(db, plan_id: int) -> dict:
    """The digests of the inputs a stored plan was made from (see `inputs_digest`)."""
    rows = db.query("SELECT inputs FROM plans WHERE id = ?", (plan_id,))
    return json.loads(rows[0]["inputs"]) if rows else {}


def history(db, trip: str | None = None) -> list[dict]:
    """Every change of state, oldest first: trip, night, site, state, at, by, note."""
    sql = ("SELECT o.trip, o.night, o.site, e.state, e.at, e.by, e.note FROM outing_events e "
           "JOIN outings o ON o.id = e.outing_id")
    params: tuple = ()
    if trip is not None:
        sql += " WHERE o.trip = ?"
        params = (trip,)
    return [dict(r) for r in db.query(sql + " ORDER BY e.id", params)]


def _digest(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()[:16]


def _file_digest(path) -> str | None:
    if path is None or not Path(path).is_file():
        return None
    return _digest(Path(path).read_bytes())


def inputs_digest(ws, what_if: list[str] | tuple = ()) -> dict:
    """What a plan rests on, in a form that tells later which input changed.

    ``forecast``: the Kp and cloud forecast files (and any weather-model files in
    ``weather/``); ``vehicles``; ``closed``: the closed sites; ``sites``: the sites
    file; ``trips``: one digest per trip row; ``what_if``: the assumptions in force.
    """
    files = ws.files
    weather = Path(ws.path) / "weather"
    model_files = sorted(weather.iterdir()) if weather.is_dir() else []
    forecast = "|".join(str(x) for x in (
        _file_digest(files.get("activity")), _file_digest(files.get("clouds")),
        *(f"{p.name}:{p.stat().st_size}:{p.stat().st_mtime_ns}" for p in model_files
          if p.is_file())))
    activity = ws.activity
    kp_text = "" if activity is None or not len(activity) else (
        activity.csv_text() if hasattr(activity, "csv_text") else activity.to_csv(index=False))
    return {
        "forecast": _digest((forecast + kp_text).encode()),
        "vehicles": getattr(ws.operator, "vehicles", None),
        "closed": sorted(s.name for s in ws.sites if s.closed),
        "sites": _digest(json.dumps(sorted((s.name, s.lat, s.lon, s.capacity, s.drive_min)
                                           for s in ws.sites)).encode()),
        "trips": {t.trip: _digest(repr((t.guests, t.arrive, t.depart, t.outings,
                                        t.blocked)).encode()) for t in ws.trips},
        "what_if": list(what_if),
    }


def change_reasons(outing: Outing | None, site_now: str | None, before: dict, now: dict,
                   ws) -> list[str]:
    """Why an outing of the record moved, was added or was dropped, from the inputs' digests.

    Parameters
    ----------
    outing : Outing or None
        The outing in the record before (None when the new plan adds one).
    site_now : str or None
        The site of the new plan (None when it drops the outing).
    before, now : dict
        `inputs_digest` of the plan the old outing came from and of the new plan.
    ws : Workspace
        The workspace the new plan was made from.
    """
    if outing is None and not before:
        return ["first plan for this trip"]
    reasons = []
    trip = outing.trip if outing else None
    sites = {s.name: s for s in ws.sites}
    if outing is not None and (outing.site not in sites or sites[outing.site].closed):
        reasons.append(f"site closed: {outing.site}" if outing.site in sites
                       else f"site no longer listed: {outing.site}")
    if before.get("vehicles") != now.get("vehicles"):
        reasons.append(f"fleet changed: {before.get('vehicles')} → {now.get('vehicles')} "
                       "vehicles")
    if before.get("forecast") != now.get("forecast"):
        reasons.append("forecast changed")
    if trip and before.get("trips", {}).get(trip) != now.get("trips", {}).get(trip):
        reasons.append("booking changed")
    if before.get("closed") != now.get("closed") and not any(r.startswith("site") for r in
                                                             reasons):
        reasons.append("sites opened or closed: " + ", ".join(
            sorted(set(before.get("closed", [])) ^ set(now.get("closed", [])))))
    elif before.get("sites") != now.get("sites") and not reasons:
        reasons.append("sites changed")
    if now.get("what_if"):
        reasons.append("what-if: " + "; ".join(now["what_if"]))
    return reasons or ["re-planned beside the other groups' outings"]


def change_list(old: dict[tuple[str, str], Outing], new: dict[tuple[str, str], str],
                trips, db, now_inputs: dict, ws) -> list[dict]:
    """What a proposal changes against the record, for the trips it re-plans.

    Parameters
    ----------
    old : dict
        (trip, night) -> Outing, the record's live outings.
    new : dict
        (trip, night) -> site of the proposal.
    trips : iterable of str
        The trips the proposal re-plans; outings of other trips are not compared.

    Returns
    -------
    list of dict
        ``trip``, ``change`` (moved / added / dropped), ``from_night``, ``to_night``,
        ``from_site``, ``to_site``, ``reasons`` (list of short phrases), ``state`` of the
        old outing. A trip's outing that leaves one night and lands on another is one
        "moved" row (dropped and added nights of a trip are paired in date order).
    """
    trips = set(trips)
    planned = planned_trips(db)
    inputs_of: dict[int, dict] = {}
    rows = []
    keys = sorted({k for k in old if k[0] in trips} | {k for k in new if k[0] in trips},
                  key=lambda k: (k[1], k[0]))
    for key in keys:
        before, after = old.get(key), new.get(key)
        if before is not None and after == before.site:
            continue
        plan_id = before.plan_id if before else planned.get(key[0])
        if plan_id is not None and plan_id not in inputs_of:
            inputs_of[plan_id] = plan_inputs(db, plan_id)
        prior = inputs_of.get(plan_id, {}) if plan_id is not None else {}
        change = "added" if before is None else ("dropped" if after is None else "moved")
        rows.append({
            "trip": key[0], "change": change,
            "from_night": key[1] if before else None, "to_night": key[1] if after else None,
            "from_site": before.site if before else None, "to_site": after,
            "state": before.state if before else None,
            "reasons": change_reasons(before, after, prior, now_inputs, ws),
        })
    return _pair_moves(rows)


def _pair_moves(rows: list[dict]) -> list[dict]:
    """Join a trip's dropped and added nights, in date order, into "moved" rows."""
    out, pending = [], {}
    for row in rows:
        if row["change"] in ("dropped", "added"):
            pending.setdefault(row["trip"], {"dropped": [], "added": []})[row["change"]].append(row)
        else:
            out.append(row)
    for lists in pending.values():
        dropped, added = lists["dropped"], lists["added"]
        for gone, new in zip(dropped, added, strict=False):
            out.append(dict(gone, change="moved", to_night=new["to_night"],
                            to_site=new["to_site"],
                            reasons=list(dict.fromkeys(gone["reasons"] + new["reasons"]))))
        n = min(len(dropped), len(added))
        out.extend(dropped[n:] + added[n:])
    return sorted(out, key=lambda r: (r["to_night"] or r["from_night"], r["trip"]))


def save_proposal(db, outings: list[dict], trips, first_night: str, last_night: str,
                  inputs: dict, by: str, command: str) -> int:
    """Record a new proposal for ``trips`` in one transaction; return the plan's id.

    The trips' proposed outings are marked ``replaced`` and the new ones added as
    ``proposed``; their confirmed outings are kept as they are. ``outings`` are
    dicts with ``trip``, ``date``, ``site``, ``backup``, ``chance``.
    """
    trips = sorted(set(trips))
    at = now_utc()
    with db.transaction() as con:
        cur = con.execute(
            "INSERT INTO plans (made_at, made_by, command, first_night, last_night, trips, "
            "inputs) VALUES (?, ?, ?, ?, ?, ?, ?)",
            (at, by, command, first_night, last_night, json.dumps(trips),
             json.dumps(inputs, sort_keys=True)))
        plan_id = cur.lastrowid
        marks = ",".join("?" * len(trips))
        old = con.execute(f"SELECT id FROM outings WHERE state = 'proposed' AND trip IN ({marks})",
                          trips).fetchall()
        for (outing_id,) in old:
            con.execute("UPDATE outings SET state = 'replaced', changed_at = ?, changed_by = ? "
                        "WHERE id = ?", (at, by, outing_id))
            con.execute("INSERT INTO outing_events (outing_id, state, at, by, note) "
                        "VALUES (?, 'replaced', ?, ?, ?)", (outing_id, at, by,
                                                            f"plan {plan_id}"))
        confirmed = {(r[0], r[1]) for r in con.execute(
            f"SELECT trip, night FROM outings WHERE state = 'confirmed' AND trip IN ({marks})",
            trips)}
        for o in outings:
            if o["trip"] not in trips or (o["trip"], o["date"]) in confirmed:
                continue
            cur = con.execute(
                "INSERT INTO outings (plan_id, trip, night, site, backup, chance, state, "
                "changed_at, changed_by) VALUES (?, ?, ?, ?, ?, ?, 'proposed', ?, ?)",
                (plan_id, o["trip"], o["date"], o["site"], o.get("backup"), o.get("chance"),
                 at, by))
            con.execute("INSERT INTO outing_events (outing_id, state, at, by, note) "
                        "VALUES (?, 'proposed', ?, ?, ?)", (cur.lastrowid, at, by,
                                                            f"plan {plan_id}"))
        con.executemany("INSERT INTO planned_trips (trip, plan_id) VALUES (?, ?) "
                        "ON CONFLICT(trip) DO UPDATE SET plan_id = excluded.plan_id",
                        [(t, plan_id) for t in trips])
    return plan_id


def _select(trips, nights, states) -> tuple[str, list]:
    where = [f"state IN ({','.join('?' * len(states))})"]
    params: list = list(states)
    if trips:
        where.append(f"trip IN ({','.join('?' * len(trips))})")
        params += list(trips)
    if nights:
        where.append(f"night IN ({','.join('?' * len(nights))})")
        params += list(nights)
    return " AND ".join(where), params


def set_state(db, new_state: str, from_states, trips=(), nights=(), by: str = "",
              note: str = "") -> list[Outing]:
    """Move the matching live outings to ``new_state`` in one transaction; return them.

    Parameters
    ----------
    new_state : {"confirmed", "released"}
    from_states : tuple of str
        The states an outing must be in to change (e.g. ``("proposed",)`` to confirm).
    trips, nights : iterable of str
        Limit to these trip ids and local evening dates (ISO); empty means all.
    """
    at = now_utc()
    where, params = _select(list(trips), list(nights), list(from_states))
    with db.transaction() as con:
        rows = con.execute(f"SELECT * FROM outings WHERE {where} ORDER BY night, trip",
                           params).fetchall()
        for r in rows:
            con.execute("UPDATE outings SET state = ?, changed_at = ?, changed_by = ?, note = ? "
                        "WHERE id = ?", (new_state, at, by, note, r["id"]))
            con.execute("INSERT INTO outing_events (outing_id, state, at, by, note) "
                        "VALUES (?, ?, ?, ?, ?)", (r["id"], new_state, at, by, note))
    return [_outing(r) for r in rows]


# ---------------------------------------------------------------------------------------
# Proposals over the plan of record
# ---------------------------------------------------------------------------------------


def _overlaps(trip, first: dt.date, end: dt.date) -> bool:
    """True when the trip has an evening from ``first`` up to (not including) ``end``."""
    return trip.arrive < end and first < trip.depart


def stays_window(ws, first: dt.date, end: dt.date, db) -> tuple[dt.date, dt.date, set]:
    """The nights to plan so that whole stays are planned, and the trips to re-plan.

    The trips with an evening in ``first`` .. ``end`` are re-planned over their whole
    stays; so is any trip not yet in the record whose stay overlaps those stays (so it
    is not left out of vehicles that the others take). Returns (first, end, trips).
    """
    planned = planned_trips(db)
    replan = {t.trip for t in ws.trips if _overlaps(t, first, end)}
    for _ in range(2):
        chosen = [t for t in ws.trips if t.trip in replan]
        if chosen:
            first = min(first, *(t.arrive for t in chosen))
            end = max(end, *(t.depart for t in chosen))
        replan |= {t.trip for t in ws.trips
                   if t.trip not in planned and _overlaps(t, first, end)}
    return first, end, replan


def _fixed(record: dict, replan: set) -> dict:
    """The outings a proposal must keep: every confirmed one, and other trips' outings."""
    return {key: (o.site, o.state) for key, o in record.items()
            if o.state == "confirmed" or o.trip not in replan}


def propose(ws, first: dt.date, end: dt.date, replan: set, db, *, save: bool = True,
            what_if=(), by: str | None = None, command: str = "week", now=None,
            climatology=None, keep_chances=None) -> dict:
    """Plan ``replan`` over the nights ``first`` .. ``end`` around the plan of record.

    ``keep_chances``: the forecast archive's callback (report.tonight_report).

    Confirmed outings and the outings of other trips are kept; the result is the week
    report over those nights with ``changes`` (against the record), ``what_if`` and
    ``record`` (database path, whether the proposal was saved, the plan's id). The
    proposal is saved as the trips' new proposed outings when ``save`` is true and no
    what-if is in force.
    """
    from auroraplan import report

    record = live_outings(db)
    nights = max((end - first).days, 1)
    result = report.week_report(ws, first, nights, now=now, climatology=climatology,
                                fixed=_fixed(record, replan), replan=replan,
                                keep_chances=keep_chances)
    new = {(p["trip"], p["date"]): p["site"] for p in result["plan"]}
    inputs = inputs_digest(ws, what_if)
    changes = tuple(change_list(record, new, replan, db, inputs, ws) if db else ())
    plan_id = None
    if save and db is not None and not what_if and replan:
        plan_id = save_proposal(db, [p for p in result["plan"] if p["trip"] in replan], replan,
                                first.isoformat(), (end - dt.timedelta(days=1)).isoformat(),
                                inputs, by or who(), command)
        states = live_outings(db)
        result = result.replace(plan=tuple(
            p.replace(state=states[(p.trip, p.date)].state) if (p.trip, p.date) in states else p
            for p in result.plan))
    return result.replace(
        changes=changes,
        what_if=tuple(what_if),
        record={"database": str(db.path) if db is not None else None,
                "saved": plan_id is not None, "plan_id": plan_id,
                "replanned": sorted(replan)})


def propose_week(ws, start: dt.date, nights: int, db, **kw) -> dict:
    """The ``week`` plan: the stays touching these nights, planned around the record."""
    first, end, replan = stays_window(ws, start, start + dt.timedelta(days=nights), db)
    result = propose(ws, first, end, replan, db, **kw)
    return result.replace(asked={"start": start.isoformat(), "nights": nights})


def bookings_plan(ws, db, **kw) -> dict:
    """Every booked stay as the record holds it; trips not yet planned are planned (and
    saved as proposed) around it, so itineraries and the calendar show the record."""
    if not ws.trips:
        raise ValueError("no trips")
    first = min(t.arrive for t in ws.trips)
    end = max(t.depart for t in ws.trips)
    planned = planned_trips(db)
    replan = {t.trip for t in ws.trips if t.trip not in planned}
    kw.setdefault("command", "itinerary")
    return propose(ws, first, end, replan, db, **kw)
