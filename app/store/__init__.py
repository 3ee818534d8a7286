"""Storage: an engine from settings, versioned migrations, the audits repository and the charts kept with each."""

from app.store.audits import AUDIT, COMPARISON, CORRELATION, AuditRecord, AuditRepository, AuditSummary, NewAudit, Page
from app.store.batches import BatchRepository
from app.store.charts import ChartRepository
from app.store.engine import make_engine
from app.store.migrations import MIGRATIONS, current_version, migrate

__all__ = ["AUDIT", "COMPARISON", "CORRELATION", "AuditRecord", "AuditRepository", "AuditSummary", "BatchRepository", "ChartRepository", "MIGRATIONS", "NewAudit", "Page", "current_version",
           "make_engine", "migrate"]
