"""Which operator.toml table fills which stage's settings record.

Each record is declared beside the science it configures, with its fields' defaults, units,
ranges and allowed names (:func:`auroraplan.checks.setting`):

=============  ============================  ==========================================
table          record                        declared in
=============  ============================  ==========================================
[viewing]      ``ViewingSettings``           auroraplan/view.py
[activity]     ``ActivitySettings``          auroraplan/activity.py
[chance]       ``ChanceSettings``            auroraplan/chance.py
[planner]      ``OutingHours``               auroraplan/nights.py (outing_from, _until)
[planner]      ``PlannerSettings``           auroraplan/planner.py
[contact]      ``ContactSettings``           auroraplan/runsheet.py
[print]        ``PrintSettings``             auroraplan/runsheet.py
[weather]      ``WeatherSettings``           auroraplan/weather.py
[nowcast]      ``NowcastSettings``           auroraplan/solarwind.py
=============  ============================  ==========================================

The outing hours may also be written in [chance], and the keys of [chance] in [planner]
(each key in one table only), as operator.toml files have long done.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from auroraplan.activity import ActivitySettings
from auroraplan.chance import ChanceSettings
from auroraplan.nights import OutingHours
from auroraplan.planner import PlannerSettings
from auroraplan.runsheet import ContactSettings, PrintSettings
from auroraplan.solarwind import NowcastSettings
from auroraplan.view import ViewingSettings
from auroraplan.weather import WeatherSettings


@dataclass(frozen=True)
class Settings:
    """Every stage's settings, as read from one operator.toml (defaults where not written)."""

    viewing: ViewingSettings = field(default_factory=ViewingSettings)
    activity: ActivitySettings = field(default_factory=ActivitySettings)
    chance: ChanceSettings = field(default_factory=ChanceSettings)
    outing: OutingHours = field(default_factory=OutingHours)
    planner: PlannerSettings = field(default_factory=PlannerSettings)
    contact: ContactSettings = field(default_factory=ContactSettings)
    print: PrintSettings = field(default_factory=PrintSettings)
    weather: WeatherSettings = field(default_factory=WeatherSettings)
    nowcast: NowcastSettings = field(default_factory=NowcastSettings)


TABLES = {
    # operator.toml table: the Settings fields whose keys it may hold, home record first
    "viewing": ("viewing",),
    "activity": ("activity",),
    "chance": ("chance", "outing"),
    "planner": ("outing", "planner", "chance"),
    "contact": ("contact",),
    "print": ("print",),
    "weather": ("weather",),
    "nowcast": ("nowcast",),
}
