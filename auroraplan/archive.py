"""The forecast archive: every chance the tool issued, kept with what it was made from.

Each run of a command that computes chances (``tonight``, ``week``) adds one
row to ``issue_runs`` (when, which command, digests of the input files, the
chance settings, the weather models) and, per site and night, one row of
``issued_nights``: the chance of a sighting during the outing window, with the
kind (forecast, outlook, nowcast) and the lead time, and packed beside it the
chance in each dark hour (``hours``, `HOUR_FIELDS`: `hours_of`), each weather
model's cloud at the start of those hours (``cloud``, `CLOUD_FIELDS`:
`cloud_of`) and, per dark step of the outing hours, the parts of the chance
that the settings act on (``factors``, `FACTOR_ROWS`: `factors_of`), so that
``calibrate`` can refit the settings to what the guides saw without computing
the sky again. One wide row per site and night, written in one transaction,
keeps a week over 10,000 sites to some 70,000 rows. Databases written before
the hours and cloud were packed keep them in the tables ``issued_hours`` and
``issued_cloud``, which the readers still read.

Pairing a logged outcome with a chance (`issued_for`): the chance is the last
one issued before the group went out (the start of the logged hours out, or
without them the start of the outing hours); when every chance for that
night was made later (a re-run for a past night), the earliest one is used
and the pair is marked ``after_start``.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import json
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np

KINDS = ("forecast", "outlook", "nowcast")
"""Kinds of issued chance: from a Kp forecast, from Kp climatology beyond it, or from
solar-wind measurements of the last hour."""

FACTOR_ROWS = ("sky_brightening_mag", "p_reach", "p_strong", "p_clear")
"""Rows of the float32 array kept per site and night, one column per dark outing step:
how much the moon brightens the sky toward the aurora (mag), P(Kp needed ≤ Kp < Kp lost),
the same with the strong margin, and P(clear)."""

WEATHER_ROLES = ("activity", "clouds", "weather")
"""Input files whose digest identifies the forecast (the inputs digest)."""


def file_digest(path) -> str:
    """SHA-256 of a file's bytes (FIPS 180-4), hex."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def input_digests(files: dict) -> tuple[dict, str]:
    """Digest of each input file (role -> SHA-256) and one digest over the forecast files.

    ``files`` maps a role to a path, or to a list of paths (weather-model files).
    """
    digests = {}
    for role, value in files.items():
        paths = value if isinstance(value, list | tuple) else [value]
        for p in paths:
            key = role if len(paths) == 1 else f"{role}:{Path(p).name}"
            digests[key] = file_digest(p)
    forecast = sorted((k, v) for k, v in digests.items() if k.split(":")[0] in WEATHER_ROLES)
    combined = hashlib.sha256(json.dumps(forecast).encode("utf-8")).hexdigest()
    return digests, combined


def settings_dict(settings) -> dict:
    """Chance settings as a plain dict (from a dict or a settings record)."""
    if dataclasses.is_dataclass(settings):
        settings = dataclasses.asdict(settings)
    return {k: (v if isinstance(v, str | int | float | bool) or v is None else str(v))
            for k, v in dict(settings).items()}


def _utc_text(t64) -> str:
    return str(np.datetime64(t64, "s")) + "Z"


def hourly_chances(grid, decorrelation_min: float):
    """Chance in each clock hour per site, for every hour of the grid.

    Hours are counted in elapsed time from the grid's first step (local noon), as on the
    phone page (report.hourly_chance); the chance in an hour is P(at least one display
    seen) over its steps (chance.p_display_seen).

    Returns
    -------
    (hour_first_step (H,), chance (N, H), dark (N, H) bool)
    """
    from auroraplan.chance import as_slice, p_display_seen

    per_hour = int(round(60 / grid.step_min))
    n, t = grid.chance.shape
    h = t // per_hour
    cut = h * per_hour
    dark = (grid.darkness[:, :cut] > 0).reshape(n, h, per_hour).any(axis=2)
    # An hour without darkness at any site has chance 0 (p_display_seen of d = 0).
    some = np.flatnonzero(dark.any(axis=0))
    steps = as_slice((some[:, None] * per_hour + np.arange(per_hour)).ravel())
    shown = (grid.darkness[:, steps] * grid.moon[:, steps] * grid.activity[:, steps]
             ).reshape(n, some.size, per_hour)
    clear = grid.p_clear[:, steps].reshape(n, some.size, per_hour)
    chance = np.zeros((n, h))
    chance[:, some] = p_display_seen(shown, clear, grid.step_min, decorrelation_min)
    return np.arange(h) * per_hour, chance, dark


def chance_settings_of(ws) -> dict:
    """The settings a chance was made with: [chance] and the outing hours, as one dict."""
    return {**dataclasses.asdict(ws.settings.chance), **dataclasses.asdict(ws.settings.outing)}


HOUR_FIELDS = np.dtype([("start", "<i8"), ("kind", "u1"), ("chance", "<f8")])
"""One packed record per dark hour in ``issued_nights.hours``: the hour's start (UTC,
seconds since 1970), its kind (index into KINDS) and the chance in that hour."""
CLOUD_FIELDS = np.dtype([("start", "<i8"), ("model", "<u2"), ("cloud_pct", "<f4")])
"""One packed record per dark hour and weather model in ``issued_nights.cloud``: the hour's
start, the model (index into the run's ``issue_runs.models``) and its cloud cover, percent,
at the hour's start."""


@dataclasses.dataclass
class IssuedPart:
    """The archive's rows for one run of nights of a grid (``issued_part``): per site-night
    kept, (site, night, kind, outing start, chance, factors, hours, cloud); the lead times
    are counted when the run is written."""

    rows: list
    models: list
    step_min: float


def issued_part(grid, summary, site_names, dates, decorrelation_min) -> IssuedPart:
    """What the archive keeps of a grid and its night summaries (``record_issue``).

    Per site and night with a forecast or outlook and a chance: the chance, the factor rows
    over the dark steps (FACTOR_ROWS, float32), each dark hour's chance (HOUR_FIELDS,
    ``hourly_chances`` with the decorrelation time ``decorrelation_min``) and each weather
    model's cloud at the start of those hours (CLOUD_FIELDS), packed into one row. Nights
    (and hours) without a forecast or outlook, or without darkness, are not kept.
    """
    from auroraplan.chance import as_slice, nan_as_zero

    first_step, hour_chance, hour_dark = hourly_chances(grid, float(decorrelation_min))
    hour_start = grid.times_utc[first_step].astype(np.int64)
    hour_night = grid.night_index[first_step]
    # Steps where the solar-wind nowcast shaped the Kp are kept as kind "nowcast".
    weight = getattr(grid, "nowcast_weight", None)
    step_kind = np.asarray(grid.kind, dtype=object).copy()
    if weight is not None:
        step_kind[np.asarray(weight) > 0] = "nowcast"
    per_hour = int(round(60 / grid.step_min))
    hour_kind = np.array([("nowcast" if (step_kind[j:j + per_hour] == "nowcast").any()
                           else step_kind[j]) for j in first_step], dtype=object)
    hour_code = np.array([KINDS.index(k) if k in KINDS else 255 for k in hour_kind], np.uint8)
    keep_factors = grid.p_reach is not None
    model_pct = getattr(grid, "cloud_model_pct", None)
    models = list(getattr(grid, "cloud_models", None) or []) if model_pct is not None else []
    rows = []
    for d, date in enumerate(dates):
        kind = summary.kind[d]
        cols = np.flatnonzero(grid.night_index == d)
        dark_at = (grid.darkness[:, as_slice(cols)] > 0).any(axis=0)  # (K,) some site dark
        if kind == "forecast" and (step_kind[cols][dark_at]
                                   == "nowcast").any():
            kind = "nowcast"
        if kind not in KINDS or cols.size == 0:
            continue
        outing = cols[grid.outing[cols]] if grid.outing[cols].any() else cols
        start = grid.times_utc[outing[0]]
        sites = np.flatnonzero(np.isfinite(summary.p_any[:, d]))
        every = sites.size == summary.p_any.shape[0]  # then rows are taken whole, not gathered
        # Every site's packed values at once, site after site, then cut into rows.
        factors = [b""] * sites.size
        if keep_factors:
            steps = cols[dark_at]
            at = (slice(None), as_slice(steps)) if every else np.ix_(sites, steps)
            dark = grid.darkness[at] > 0  # (S, K)
            values = np.stack([nan_as_zero(getattr(grid, name)[at])
                               for name in FACTOR_ROWS], axis=1)  # (S, F, K)
            factors = _cut(values[np.broadcast_to(dark[:, None, :], values.shape)]
                           .astype("<f4"), len(FACTOR_ROWS) * dark.sum(axis=1))
        hours = np.flatnonzero((hour_night == d) & (hour_code != 255))
        at = (slice(None), hours) if every else np.ix_(sites, hours)
        chance_h = hour_chance[at]
        kept = hour_dark[at] & np.isfinite(chance_h)
        packed = np.empty(kept.shape, HOUR_FIELDS)
        packed["start"], packed["kind"] = hour_start[hours], hour_code[hours]
        packed["chance"] = chance_h
        by_hour = _cut(packed[kept], kept.sum(axis=1))
        clouds = [None] * sites.size
        if models:
            pct = np.moveaxis(model_pct[:, sites[:, None], first_step[hours][None, :]], 0, -1)
            have = np.isfinite(pct) & kept[:, :, None]  # (S, H, M), hour by hour, models in order
            got = np.empty(pct.shape, CLOUD_FIELDS)
            got["start"] = hour_start[hours][None, :, None]
            got["model"] = np.arange(len(models))[None, None, :]
            got["cloud_pct"] = pct
            clouds = _cut(got[have], have.sum(axis=(1, 2)))
        night = date.isoformat()
        rows.extend(zip([site_names[i] for i in sites], [night] * sites.size,
                        [kind] * sites.size, [start] * sites.size,
                        summary.p_any[sites, d].tolist(),
                        factors if keep_factors else [None] * sites.size, by_hour, clouds,
                        strict=True))
    return IssuedPart(rows=rows, models=models, step_min=float(grid.step_min))


def _cut(values, counts) -> list[bytes]:
    """The bytes of ``values`` cut into consecutive pieces of ``counts`` items each."""
    data, size = values.tobytes(), values.dtype.itemsize
    ends = np.cumsum(counts) * size
    return [data[a:b] for a, b in zip(np.concatenate([[0], ends[:-1]]), ends, strict=True)]


def record_issue(store, *, command: str, parts, settings, files: dict,
                 made_at: dt.datetime | None = None) -> int:
    """Add one run's chances to the archive in one transaction; returns the run id.

    Parameters
    ----------
    store : auroraplan.store.Store
    command : str
        The command that computed them ("tonight", "week" ...).
    parts : list of IssuedPart
        The chances per run of nights (``issued_part``).
    settings : dict or settings record
        The chance settings used.
    files : dict
        Role -> path of the input files (their digests are kept).
    made_at : datetime, optional
        When the chances were made (default now).
    """
    made = (made_at or dt.datetime.now(dt.UTC)).astimezone(dt.UTC)
    made64 = np.datetime64(made.replace(tzinfo=None), "s")
    cfg = settings_dict(settings)
    digests, forecast_digest = input_digests(files)
    settings_json = json.dumps(cfg, sort_keys=True)
    models = next((p.models for p in parts if p.models), [])
    step_min = parts[0].step_min if parts else 0.0

    starts = {}  # outing start -> (UTC text, lead hours): one per night, shared by the sites

    def night_rows(run_id):
        for part in parts:
            remap = np.array([models.index(m) for m in part.models], np.uint16)
            for site, night, kind, start, p, blob, hours, cloud in part.rows:
                if cloud and part.models != models:
                    got = np.frombuffer(cloud, CLOUD_FIELDS).copy()
                    got["model"] = remap[got["model"]]
                    cloud = got.tobytes()
                if start not in starts:
                    starts[start] = (_utc_text(start), float(
                        (start - made64).astype("timedelta64[s]").astype(float) / 3600.0))
                yield (run_id, site, night, kind, *starts[start], p, blob, hours, cloud)

    with store.transaction() as con:
        cur = con.execute(
            "INSERT INTO issue_runs (made_at, command, inputs, inputs_digest, settings, "
            "settings_digest, step_min, models) VALUES (?,?,?,?,?,?,?,?)",
            (made.isoformat(timespec="seconds"), command, json.dumps(digests, sort_keys=True),
             forecast_digest, settings_json,
             hashlib.sha256(settings_json.encode("utf-8")).hexdigest(), float(step_min),
             json.dumps(models)))
        run_id = cur.lastrowid
        con.executemany(
            "INSERT INTO issued_nights (run_id, site, night, kind, outing_start, lead_hours, "
            "chance, factors, hours, cloud) VALUES (?,?,?,?,?,?,?,?,?,?)", night_rows(run_id))
    return run_id


def hours_of(blob: bytes | None, made_at: str | None = None) -> list[dict]:
    """The dark hours kept with an issued night (``issued_nights.hours``): per hour its
    start (UTC ISO 8601 with Z), kind, chance and, given the run's ``made_at``, lead time."""
    if blob is None:
        return []
    made = np.datetime64(dt.datetime.fromisoformat(made_at).astimezone(dt.UTC)
                         .replace(tzinfo=None), "s") if made_at else None
    out = []
    for start, kind, chance in np.frombuffer(blob, HOUR_FIELDS).tolist():
        t = np.datetime64(start, "s")
        row = {"hour_start": _utc_text(t), "kind": KINDS[kind], "chance": chance}
        if made is not None:
            row["lead_hours"] = float((t - made).astype(float) / 3600.0)
        out.append(row)
    return out


def cloud_of(blob: bytes | None, models) -> list[dict]:
    """Each weather model's cloud kept with an issued night (``issued_nights.cloud``): per
    dark hour and model, its start (UTC ISO 8601 with Z), the model's name and cloud_pct."""
    if blob is None:
        return []
    return [{"hour_start": _utc_text(np.datetime64(start, "s")), "model": models[m],
             "cloud_pct": float(pct)}
            for start, m, pct in np.frombuffer(blob, CLOUD_FIELDS).tolist()]


def factors_of(blob: bytes | None) -> dict | None:
    """The per-step factor rows kept with an issued night (FACTOR_ROWS -> (K,) arrays)."""
    if blob is None:
        return None
    arr = np.frombuffer(blob, dtype="<f4").astype(float).reshape(len(FACTOR_ROWS), -1)
    return dict(zip(FACTOR_ROWS, arr, strict=True))


@dataclasses.dataclass(frozen=True)
class Issued:
    """The chance paired with one logged outcome."""

    site: str
    night: str
    kind: str
    chance: float
    made_at: str  # UTC ISO 8601
    lead_hours: float
    after_start: bool  # made after the group went out (a re-run for a past night)
    command: str
    settings: dict
    step_min: float
    factors: dict | None
    run_id: int | None = None


def went_out_utc(night: str, out_from: str | None, outing_start: str, tz: str) -> dt.datetime:
    """When the group went out: the logged start on the night's local clock (after
    midnight when earlier than noon), else the start of the outing hours."""
    if out_from:
        date = dt.date.fromisoformat(night)
        hh, mm = (int(x) for x in out_from.split(":"))
        if hh < 12:
            date += dt.timedelta(days=1)
        local = dt.datetime.combine(date, dt.time(hh % 24, mm), tzinfo=ZoneInfo(tz))
        return local.astimezone(dt.UTC)
    return dt.datetime.fromisoformat(outing_start.replace("Z", "+00:00"))


def issued_for(store, site: str, night: str, out_from: str | None, tz: str,
               kinds=KINDS) -> Issued | None:
    """The chance issued for a site and night that a logged outcome is judged against.

    The last one made before the group went out (`went_out_utc`); when none was made
    before, the first one made after, marked ``after_start``. None when the archive
    holds no chance for that site and night.
    """
    rows = store.query(
        "SELECT n.run_id, n.kind, n.chance, n.lead_hours, n.outing_start, n.factors, r.made_at, "
        "r.command, r.settings, r.step_min FROM issued_nights n JOIN issue_runs r "
        "ON r.id = n.run_id WHERE n.site = ? AND n.night = ? ORDER BY r.made_at, r.id",
        (site, night))
    rows = [r for r in rows if r["kind"] in kinds]
    if not rows:
        return None
    start = went_out_utc(night, out_from, rows[0]["outing_start"], tz)
    before = [r for r in rows if dt.datetime.fromisoformat(r["made_at"]) <= start]
    row = before[-1] if before else rows[0]
    return Issued(
        site=site, night=night, kind=row["kind"], chance=float(row["chance"]),
        made_at=row["made_at"], lead_hours=float(row["lead_hours"]), after_start=not before,
        command=row["command"], settings=json.loads(row["settings"]),
        step_min=float(row["step_min"]), factors=factors_of(row["factors"]),
        run_id=int(row["run_id"]),
    )


def model_cloud_for(store, issued: Issued, out_from: str | None, out_until: str | None,
                    tz: str) -> dict:
    """Each weather model's cloud, percent, kept with the run ``issued`` came from: the mean
    over the kept hours that overlap the logged hours out, or over all the night's kept
    hours when no hours out were logged (or none overlap). Empty when the run kept none."""
    rows = [dict(r) for r in store.query(
        "SELECT hour_start, model, cloud_pct FROM issued_cloud WHERE run_id = ? AND site = ? "
        "AND night = ?", (issued.run_id, issued.site, issued.night))]  # kept before packing
    for r in store.query(
            "SELECT n.cloud, r.models FROM issued_nights n JOIN issue_runs r ON r.id = n.run_id "
            "WHERE n.run_id = ? AND n.site = ? AND n.night = ?",
            (issued.run_id, issued.site, issued.night)):
        rows.extend(cloud_of(r["cloud"], json.loads(r["models"])))
    if not rows:
        return {}
    chosen = rows
    if out_from and out_until:
        start = went_out_utc(issued.night, out_from, "", tz)
        end = went_out_utc(issued.night, out_until, "", tz)
        hour = dt.timedelta(hours=1)
        inside = [r for r in rows if start - hour < dt.datetime.fromisoformat(
            r["hour_start"].replace("Z", "+00:00")) < end]
        chosen = inside or rows
    by_model: dict[str, list[float]] = {}
    for r in chosen:
        by_model.setdefault(r["model"], []).append(float(r["cloud_pct"]))
    return {m: sum(v) / len(v) for m, v in sorted(by_model.items())}


def recorder(ws, command: str, db=None, open_db=None, warn=None):
    """A ``keep_chances(parts)`` callback for the report builders that adds the run's
    chances (a list of ``IssuedPart``) to the workspace database.

    Parameters
    ----------
    ws : Workspace
    command : str
    db : auroraplan.store.Store, optional
        An open database to write to (``week`` has the plan of record open).
    open_db : callable, optional
        Opens the database for this run, or returns None when there is none yet (``tonight``
        never creates it: the chances are then not kept, and a note says so).
    warn : callable, optional
        Receives a one-line note (default: standard error).

    A database that cannot be written gives one note and the run goes on: keeping the
    chances never stops the guide's shortlist or the plan.
    """
    import sqlite3
    import sys

    from auroraplan.errors import InputError

    def note(text):
        (warn or (lambda t: sys.stderr.write(f"auroraplan {command}: note: {t}\n")))(text)

    def keep(parts):
        try:
            target = db if db is not None else open_db()
            if target is None:
                note("these chances were not kept: the workspace has no database yet "
                     "(`week` or `logbook` creates it)")
                return
            try:
                record_issue(target, command=command, parts=parts,
                             settings=chance_settings_of(ws), files=dict(ws.files))
            finally:
                if db is None:
                    target.close()
        except (sqlite3.Error, OSError, InputError) as exc:
            note(f"these chances were not kept in the workspace database ({exc}); "
                 "the results stand")

    return keep
