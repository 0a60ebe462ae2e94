"""PyEphem as the outside reference for sun times, shared by the sky tests.

Geometric altitudes (pressure 0, so no refraction) of the sun's centre, as the product
computes them.
"""

import datetime as dt
import zoneinfo


def pyephem_observer(lat, lon, horizon_deg):
    """A PyEphem observer without refraction (the product's sun altitudes are geometric)."""
    import ephem

    obs = ephem.Observer()
    obs.lat, obs.lon, obs.elevation = str(lat), str(lon), 0.0
    obs.pressure = 0.0
    obs.horizon = str(horizon_deg)
    return obs


def pyephem_dark_window(lat, lon, day, tz, horizon_deg):
    """PyEphem dusk after local noon of ``day`` and the next dawn, aware UTC datetimes."""
    import ephem

    obs = pyephem_observer(lat, lon, horizon_deg)
    noon = dt.datetime(day.year, day.month, day.day, 12, tzinfo=zoneinfo.ZoneInfo(tz))
    obs.date = ephem.Date(noon.astimezone(dt.UTC).replace(tzinfo=None))
    dusk = obs.next_setting(ephem.Sun(), use_center=True)
    obs.date = dusk
    dawn = obs.next_rising(ephem.Sun(), use_center=True)
    return (dusk.datetime().replace(tzinfo=dt.UTC), dawn.datetime().replace(tzinfo=dt.UTC))
