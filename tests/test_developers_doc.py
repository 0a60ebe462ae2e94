"""DEVELOPERS.md stays true and self-contained as the code changes.

Checked against the code itself: every module is named, every operator.toml setting is
listed beside the record and the file that own it, every repository path the guide names
exists, and neither the guide nor the code points to a document outside the repository.
"""

import dataclasses
import re
from pathlib import Path

import pytest

from auroraplan.settings import TABLES, Settings

ROOT = Path(__file__).resolve().parents[1]
GUIDE = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")


def test_every_module_and_subpackage_is_named_in_the_architecture():
    package = ROOT / "auroraplan"
    names = [p.name for p in package.glob("*.py") if p.name != "__init__.py"]
    names += [f"{p.name}/" for p in package.iterdir()
              if p.is_dir() and (p / "__init__.py").is_file()]
    missing = [name for name in names if name not in GUIDE]
    assert not missing, f"DEVELOPERS.md does not name: {', '.join(sorted(missing))}"


def _settings_rows():
    """(table, record, owning module file, field names) for every stage's settings."""
    for field in dataclasses.fields(Settings):
        record = field.default_factory
        module_file = record.__module__.split(".")[-1] + ".py"
        tables = [table for table, homes in TABLES.items() if homes[0] == field.name]
        yield tables, record.__name__, module_file, [f.name for f in dataclasses.fields(record)]


@pytest.mark.parametrize("tables, record, module_file, keys", list(_settings_rows()),
                         ids=lambda value: value if isinstance(value, str) else None)
def test_each_setting_is_listed_beside_its_record_and_owning_file(tables, record,
                                                                 module_file, keys):
    rows = [line for line in GUIDE.splitlines()
            if line.startswith("| `[") and f"`{record}`" in line]
    assert rows, f"DEVELOPERS.md has no settings row for {record}"
    row = rows[0]
    assert module_file in row, f"{record}'s row does not name {module_file}"
    for table in tables:
        assert f"`[{table}]`" in row, f"{record}'s row does not name [{table}]"
    missing = [key for key in keys if not re.search(rf"\b{key}\b", row)]
    assert not missing, f"{record}'s row lacks: {', '.join(missing)}"


def _named_paths():
    """Repository paths in backticks: a slash inside and a file suffix or a trailing slash;
    not the placeholders (WORKSPACE/, OUT/, <lang>, globs)."""
    for token in re.findall(r"`([^`\s]+)`", GUIDE):
        token = token.rstrip(".,:;")
        if "/" not in token.rstrip("/") or token.startswith(("/", "$", "~", "http")):
            continue
        if re.search(r"[<>*{}|]|WORKSPACE|OUT/|DIR", token):
            continue
        if re.search(r"\.(py|md|toml|csv|txt|geojson|cfg|json)$", token) or token.endswith("/"):
            yield token


def test_every_repository_path_the_guide_names_exists():
    ignored = set((ROOT / ".gitignore").read_text(encoding="utf-8").split())
    paths = sorted(set(_named_paths()) - ignored)  # made by runs, absent from a checkout
    assert len(paths) > 10  # the guide names the files it speaks of
    # From the repository root, or from the package folder (commands/, render/).
    missing = [p for p in paths if not (ROOT / p).exists() and not (ROOT / "auroraplan" / p).exists()]
    assert not missing, f"DEVELOPERS.md names paths that do not exist: {missing}"


# A reference to a document outside the repository: a path leaving it, or a design
# document that no file in it holds.
OUTSIDE = re.compile(r"\.\./(shared\b|[\w./-]+\.md\b)|/work/|\bDESIGN\.md\b|design doc(ument)?\b",
                     re.IGNORECASE)


def test_guide_readme_and_code_point_to_no_document_outside_the_repository():
    texts = {"DEVELOPERS.md": GUIDE, "README.md": (ROOT / "README.md").read_text("utf-8")}
    for path in sorted((ROOT / "auroraplan").rglob("*.py")):
        texts[str(path.relative_to(ROOT))] = path.read_text(encoding="utf-8")
    found = [f"{name}: {match.group(0)!r}" for name, text in texts.items()
             for match in OUTSIDE.finditer(text)]
    assert not found, "references outside the repository:\n" + "\n".join(found)
