"""A measured figure, its target, and whether the target was met."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any


@dataclass(frozen=True)
class Figure:
    name: str  # what was measured
    value: float
    unit: str  # "s", "ms", "x", "MB", "req/s", "count"
    target: str = ""  # e.g. "<= 1.0 s"; empty when the figure is context, not a target
    met: bool | None = None  # None when there is no target
    detail: dict[str, Any] = field(default_factory=dict)

    @property
    def status(self) -> str:
        return "" if self.met is None else ("met" if self.met else "missed")

    def as_dict(self) -> dict[str, Any]:
        return {"name": self.name, "value": self.value, "unit": self.unit, "target": self.target,
                "status": self.status, **({"detail": self.detail} if self.detail else {})}


def at_most(name: str, value: float, limit: float, unit: str, **detail) -> Figure:
    return Figure(name, value, unit, f"<= {limit:g} {unit}", value <= limit, detail)


def at_least(name: str, value: float, limit: float, unit: str, **detail) -> Figure:
    return Figure(name, value, unit, f">= {limit:g} {unit}", value >= limit, detail)


def context(name: str, value: float, unit: str, **detail) -> Figure:
    return Figure(name, value, unit, "", None, detail)
