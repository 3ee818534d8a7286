"""The whole import graph follows the house's one-way flow (DEVELOPERS.md, "The way through"):

    ingest, stats  ->  audit, correlation  ->  service  ->  api | web   (report draws from stored documents)

Each rule names what a package may never import. ``from X import NAME`` of an upper-case NAME (a constant such
as a vocabulary or a limit) is allowed where a package may only take constants from X: the thin front ends
read the statistics' vocabularies but never call a statistic or the store.
"""

from __future__ import annotations

import ast
from dataclasses import dataclass
from pathlib import Path

import pytest

APP = Path(__file__).resolve().parent.parent / "app"
WEB_FRAMEWORKS = ("fastapi", "starlette", "jinja2", "uvicorn")
SQL = ("sqlalchemy", "psycopg")
FRONT_ENDS = ("app.api", "app.web", "app.main", "app.cli")
ABOVE_AUDIT = ("app.audit", "app.correlation", "app.service", "app.report", "app.store", "app.security") + FRONT_ENDS


@dataclass(frozen=True)
class Import:
    module: str
    names: tuple[str, ...]  # empty for "import module"
    where: str


@dataclass(frozen=True)
class Rule:
    package: str
    never: tuple[str, ...]
    constants_only: tuple[str, ...] = ()  # may import upper-case names from these, nothing else


RULES = (
    Rule("app.errors", ("app",) + WEB_FRAMEWORKS + SQL),
    Rule("app.settings", ("app",) + WEB_FRAMEWORKS + SQL),
    Rule("app.vocabulary", ("app",) + WEB_FRAMEWORKS + SQL),
    Rule("app.stats", WEB_FRAMEWORKS + SQL + ("matplotlib", "app.ingest") + ABOVE_AUDIT),
    Rule("app.ingest", WEB_FRAMEWORKS + SQL + ("matplotlib", "app.stats") + ABOVE_AUDIT),
    Rule("app.audit", WEB_FRAMEWORKS + SQL + ("matplotlib", "app.correlation", "app.service", "app.report",
                                              "app.store") + FRONT_ENDS),
    Rule("app.correlation", WEB_FRAMEWORKS + SQL + ("matplotlib", "app.service", "app.report", "app.store")
         + FRONT_ENDS),
    Rule("app.store", WEB_FRAMEWORKS + ("matplotlib", "app.ingest", "app.stats", "app.audit", "app.correlation",
                                        "app.service", "app.report") + FRONT_ENDS),
    Rule("app.service", WEB_FRAMEWORKS + FRONT_ENDS + ("app.dependencies",)),
    # What both front ends take from a request (the runtime, the settings): below both of them.
    Rule("app.dependencies", SQL + FRONT_ENDS),
    Rule("app.api", SQL + ("matplotlib", "jinja2", "app.web", "app.main", "app.cli", "app.report", "app.audit.run",
                           "app.correlation.run"), constants_only=("app.stats", "app.store")),
    Rule("app.web", SQL + ("matplotlib", "app.api", "app.main", "app.cli", "app.audit.run", "app.correlation.run"),
         constants_only=("app.stats", "app.store")),
    # The report renders stored documents: their wording and number formats, never a statistic or the store.
    Rule("app.report", WEB_FRAMEWORKS[:2] + SQL + ("app.stats", "app.audit.run", "app.audit.serialize",
                                                   "app.correlation", "app.store", "app.service") + FRONT_ENDS),
)


def _module_name(path: Path) -> str:
    parts = path.relative_to(APP.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _imports(path: Path) -> list[Import]:
    found = []
    for node in ast.walk(ast.parse(path.read_text())):
        where = f"{_module_name(path)}:{getattr(node, 'lineno', 0)}"
        if isinstance(node, ast.Import):
            found += [Import(alias.name, (), where) for alias in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            found.append(Import(node.module, tuple(alias.name for alias in node.names), where))
    return found


def _under(module: str, prefix: str) -> bool:
    return module == prefix or module.startswith(prefix + ".")


def _broken(rule: Rule, imported: Import) -> bool:
    if any(_under(imported.module, forbidden) for forbidden in rule.never):
        return True
    if any(_under(imported.module, source) for source in rule.constants_only):
        return not imported.names or not all(name.isupper() for name in imported.names)
    return False


ALL_IMPORTS = {_module_name(path): _imports(path) for path in APP.rglob("*.py")}


@pytest.mark.parametrize("rule", RULES, ids=lambda rule: rule.package)
def test_each_package_imports_only_what_the_flow_allows(rule):
    offenders = [f"{imported.where} imports {imported.module} {', '.join(imported.names)}".strip()
                 for module, imports in ALL_IMPORTS.items() if _under(module, rule.package)
                 for imported in imports if _broken(rule, imported)]
    assert offenders == []


def test_every_package_has_a_rule():
    packages = {f"app.{p.name}" for p in APP.iterdir() if p.is_dir() and (p / "__init__.py").exists()}
    modules = {"app.errors", "app.settings", "app.vocabulary", "app.dependencies"}
    assert packages | modules == {rule.package for rule in RULES}


def test_the_rules_catch_a_front_end_reaching_into_its_sibling():
    web = next(rule for rule in RULES if rule.package == "app.web")
    assert _broken(web, Import("app.api.deps", ("get_runtime",), "app.web.x:1"))
    assert _broken(web, Import("app.stats.trend", ("summarise_trend",), "app.web.x:1"))
    assert not _broken(web, Import("app.stats.correlate", ("TRANSFORMS",), "app.web.x:1"))
    assert _broken(web, Import("sqlalchemy", (), "app.web.x:1"))
