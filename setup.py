"""Which folders the wheel carries (the project's metadata is in pyproject.toml).

The code is every package under ``auroraplan/``. The demo workspace stays at the
repository root (``demo_sites/``), where users see it and ``make demo`` reads it; the
wheel carries the same folder as ``auroraplan/demo_sites`` through a package-dir
mapping, so no copy is kept by hand. ``auroraplan.commands.demo.demo_workspace`` looks
there first and then beside the package in a checkout.
"""

from setuptools import find_namespace_packages, setup

DEMO = "auroraplan.demo_sites"
CODE = find_namespace_packages(include=["auroraplan", "auroraplan.*"])
DEMO_FOLDERS = [DEMO] + [f"{DEMO}.{name}" for name in find_namespace_packages(where="demo_sites")]

setup(
    packages=CODE + DEMO_FOLDERS,
    package_dir={DEMO: "demo_sites"},
    package_data={
        # Gettext catalogues, read as .po by auroraplan.i18n (no compiled .mo files).
        "auroraplan": ["locale/*/LC_MESSAGES/*.po"],
        # Every file of the demo workspace: operator.toml, the CSV files, sites.geojson,
        # README.md and the weather-model files in weather/.
        **{folder: ["*"] for folder in DEMO_FOLDERS},
    },
)
