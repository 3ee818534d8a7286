from store.databases import database_url, postgres_url  # noqa: F401  (fixtures)
