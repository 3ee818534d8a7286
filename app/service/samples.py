"""The invented demo series shipped in sample_series/, with their suggested claims."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from app.errors import Location, NotFound
from app.ingest import IngestOptions, ParsedTable, read_csv_text
from app.service.payloads import series_payload

CATALOG = "catalog.json"


def load_catalog(samples_dir: Path) -> list[dict[str, Any]]:
    return json.loads((samples_dir / CATALOG).read_text(encoding="utf-8"))


def find_sample(samples_dir: Path, name: str) -> dict[str, Any]:
    for entry in load_catalog(samples_dir):
        if entry["name"] == name:
            return entry
    raise NotFound(f"no sample series named '{name[:80]}'", location=Location(field="name"),
                   fix="GET /api/v1/samples lists the names")


def read_sample(samples_dir: Path, entry: dict[str, Any], max_points: int) -> ParsedTable:
    # Only names from the catalog reach here, and the file must sit inside the samples folder.
    path = (samples_dir / entry["file"]).resolve()
    if samples_dir.resolve() not in path.parents:
        raise NotFound(f"the sample '{entry['name']}' points outside the samples folder",
                       location=Location(field="name"), fix="Fix the catalog entry's 'file'")
    options = IngestOptions(time_column=entry.get("time_column"), value_column=entry.get("value_column"),
                            missing_sentinels=tuple(entry.get("missing_sentinels") or ()),
                            label=entry.get("title", ""), units=entry.get("units", ""), max_points=max_points)
    return read_csv_text(path.read_bytes(), options)


def sample_body(samples_dir: Path, name: str, max_points: int) -> dict[str, Any]:
    """One sample: its catalog entry, its series, and its other numeric columns."""
    entry = find_sample(samples_dir, name)
    table = read_sample(samples_dir, entry, max_points)
    extra = {column: {"time": series.time.tolist(), "value": series.value.tolist()}
             for column, series in table.extra_columns.items()}
    return {**entry, "series": {**series_payload(table.series), "extra": extra}}
