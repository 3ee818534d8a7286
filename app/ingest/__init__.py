"""Reading newsroom series: CSV and JSON in, a validated ``Series`` out."""

from app.ingest.series import Series

__all__ = ["Series"]
