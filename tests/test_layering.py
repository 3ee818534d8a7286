"""The statistics core stays pure: it imports nothing from the web, template or storage layers."""

import ast
from pathlib import Path

FORBIDDEN = ("fastapi", "starlette", "jinja2", "sqlalchemy", "psycopg", "app.api", "app.report", "app.store",
             "app.audit", "app.ingest", "matplotlib")
STATS = Path(__file__).resolve().parent.parent / "app" / "stats"


def _imports(path: Path) -> list[str]:
    tree = ast.parse(path.read_text())
    names = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names += [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module:
            names.append(node.module)
    return names


def test_stats_imports_nothing_from_upper_layers():
    offenders = [
        f"{path.relative_to(STATS)} imports {name}"
        for path in STATS.rglob("*.py")
        for name in _imports(path)
        if any(name == f or name.startswith(f + ".") for f in FORBIDDEN)
    ]
    assert offenders == []
