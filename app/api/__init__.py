"""The HTTP layer: routers, schemas and the one mapping from domain errors to RFC 9457 problems."""
