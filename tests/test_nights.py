"""Local clock times of the nights module against pandas' time-zone conversion."""

import numpy as np


def test_local_clock_times_match_pandas_across_clock_changes_and_half_hour_zones():
    # Reference: pandas tz_convert (dateutil/zoneinfo via pandas), at every 10 minutes over
    # a year in zones with whole-hour, half-hour and 45-minute offsets and their changes.
    import pandas as pd

    from auroraplan.nights import local_datetime64, local_minutes

    times = np.arange(np.datetime64("2026-01-01T00:00"), np.datetime64("2027-01-01T00:00"),
                      np.timedelta64(10, "m")).astype("datetime64[s]")
    for zone in ("Europe/Oslo", "America/St_Johns", "Australia/Adelaide", "Pacific/Chatham",
                 "America/Anchorage", "UTC"):
        expected = pd.DatetimeIndex(times).tz_localize("UTC").tz_convert(zone) \
            .tz_localize(None).to_numpy().astype("datetime64[s]")
        np.testing.assert_array_equal(local_datetime64(times, zone), expected, err_msg=zone)
        got = local_minutes(times.reshape(2, -1)[:, :5], zone)
        assert got.shape == (2, 5)
