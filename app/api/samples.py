"""/api/v1/samples: the invented demo series shipped in sample_series/, with their suggested claims."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Depends, Path as PathParam

from app.dependencies import get_settings
from app.service.samples import load_catalog, sample_body
from app.settings import Settings

router = APIRouter(prefix="/api/v1/samples", tags=["samples"])


@router.get("", summary="List the sample series")
def list_samples(settings: Settings = Depends(get_settings)) -> dict[str, Any]:
    return {"items": [{**entry, "url": f"/api/v1/samples/{entry['name']}"}
                      for entry in load_catalog(settings.samples_dir)]}


@router.get("/{name}", summary="One sample series: its catalog entry and its data")
def get_sample(name: str = PathParam(examples=["quorvane-annual-temperature"]),
               settings: Settings = Depends(get_settings)) -> dict[str, Any]:
    return sample_body(settings.samples_dir, name, settings.max_points)
