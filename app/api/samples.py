"""/api/v1/samples: the invented demo series shipped in sample_series/, with their suggested claims."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from fastapi import APIRouter, Depends, Path as PathParam

from app.api.deps import get_settings
from app.api.service import series_payload
from app.errors import Location, NotFound
from app.ingest import IngestOptions, read_csv_text
from app.settings import Settings

router = APIRouter(prefix="/api/v1/samples", tags=["samples"])
CATALOG = "catalog.json"


def load_catalog(samples_dir: Path) -> list[dict[str, Any]]:
    return json.loads((samples_dir / CATALOG).read_text(encoding="utf-8"))


def find_sample(samples_dir: Path, name: str) -> dict[str, Any]:
    for entry in load_catalog(samples_dir):
        if entry["name"] == name:
            return entry
    raise NotFound(f"no sample series named '{name[:80]}'", location=Location(field="name"),
                   fix="GET /api/v1/samples lists the names")


def read_sample(samples_dir: Path, entry: dict[str, Any], max_points: int):
    # Only names from the catalog reach here, and the file must sit inside the samples folder.
    path = (samples_dir / entry["file"]).resolve()
    if samples_dir.resolve() not in path.parents:
        raise NotFound(f"the sample '{entry['name']}' points outside the samples folder",
                       location=Location(field="name"), fix="Fix the catalog entry's 'file'")
    options = IngestOptions(time_column=entry.get("time_column"), value_column=entry.get("value_column"),
                            missing_sentinels=tuple(entry.get("missing_sentinels") or ()),
                            label=entry.get("title", ""), units=entry.get("units", ""), max_points=max_points)
    return read_csv_text(path.read_bytes(), options)


@router.get("", summary="List the sample series")
def list_samples(settings: Settings = Depends(get_settings)) -> dict[str, Any]:
    return {"items": [{**entry, "url": f"/api/v1/samples/{entry['name']}"}
                      for entry in load_catalog(settings.samples_dir)]}


@router.get("/{name}", summary="One sample series: its catalog entry and its data")
def get_sample(name: str = PathParam(examples=["quorvane-annual-temperature"]),
               settings: Settings = Depends(get_settings)) -> dict[str, Any]:
    entry = find_sample(settings.samples_dir, name)
    table = read_sample(settings.samples_dir, entry, settings.max_points)
    extra = {column: {"time": series.time.tolist(), "value": series.value.tolist()}
             for column, series in table.extra_columns.items()}
    return {**entry, "series": {**series_payload(table.series), "extra": extra}}
