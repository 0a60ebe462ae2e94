"""Site values read from weather files are kept between runs, and never used stale."""

import os
import shutil
from pathlib import Path

import numpy as np
import pytest

from auroraplan import weatherfiles

DEMO_WEATHER = Path(__file__).resolve().parents[1] / "demo_sites" / "weather"
LAT = [69.7, 69.5]
LON = [19.0, 20.2]


@pytest.fixture
def files(tmp_path, monkeypatch):
    monkeypatch.setenv("AURORAPLAN_CACHE", str(tmp_path / "cache"))
    folder = tmp_path / "weather"
    shutil.copytree(DEMO_WEATHER, folder)
    return sorted(folder.iterdir())


def _values(reading):
    return [(s.model, s.member, s.valid_utc.tolist(), np.round(s.cloud_pct, 9).tolist())
            for s in reading.series]


def test_a_second_reading_comes_from_the_cache_and_equals_the_first(files, monkeypatch):
    first = weatherfiles.read_weather_files(files, LAT, LON)
    assert len(list((Path(os.environ["AURORAPLAN_CACHE"]) / "weather").glob("*.pickle"))) == 2

    def no_decoding(*args, **kwargs):
        raise AssertionError("the file was decoded again")

    monkeypatch.setattr(weatherfiles, "read_file", no_decoding)
    second = weatherfiles.read_weather_files(files, LAT, LON)
    assert _values(second) == _values(first)
    assert [s.file for s in second.series] == [s.file for s in first.series]


def test_a_changed_file_or_other_sites_are_read_afresh(files, monkeypatch):
    weatherfiles.read_weather_files(files, LAT, LON)
    calls = []
    real = weatherfiles.read_file

    def counting(path, *args, **kwargs):
        calls.append(path)
        return real(path, *args, **kwargs)

    monkeypatch.setattr(weatherfiles, "read_file", counting)
    stat = files[0].stat()
    os.utime(files[0], ns=(stat.st_atime_ns, stat.st_mtime_ns + 10**9))
    weatherfiles.read_weather_files(files, LAT, LON)
    assert calls == [files[0]]
    weatherfiles.read_weather_files(files, LAT, [19.1, 20.2])
    assert len(calls) == 3


def test_an_unwritable_cache_is_passed_over(files, monkeypatch, tmp_path):
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("x")
    monkeypatch.setenv("AURORAPLAN_CACHE", str(blocker))
    assert weatherfiles.cache_folder() is None
    reading = weatherfiles.read_weather_files(files, LAT, LON)
    assert reading.series and blocker.read_text() == "x"
