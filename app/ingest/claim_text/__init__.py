"""Reading a claim sentence ("global warming has paused since 1998") into a structured claim."""

from app.ingest.claim_text.parser import MAX_CLAIM_CHARS, parse_claim
from app.ingest.claim_text.result import ParsedClaim, Reading

__all__ = ["MAX_CLAIM_CHARS", "ParsedClaim", "Reading", "parse_claim"]
