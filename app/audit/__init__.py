"""The audit: a claim about a window, checked against the series' long-term trend."""

from app.audit.claim import CLAIM_KINDS, AuditOptions, Claim
from app.audit.result import AuditResult
from app.audit.run import audit_verdict, run_audit
from app.audit.serialize import audit_document

__all__ = ["CLAIM_KINDS", "AuditOptions", "AuditResult", "Claim", "audit_document", "audit_verdict", "run_audit"]
