"""compose.yaml is checked against the code: every command is one the CLI parses, every TRENDAUDIT_* variable a
setting the code reads, and the web processes only enqueue on the PostgreSQL the workers share."""

from pathlib import Path

import yaml

from app.cli import _parser
from app.settings import Settings

ROOT = Path(__file__).resolve().parent.parent
COMPOSE = yaml.safe_load((ROOT / "compose.yaml").read_text())


def _ours() -> dict[str, dict]:
    return {name: service for name, service in COMPOSE["services"].items() if service.get("build")}


def test_every_command_is_one_the_cli_parses():
    commands = {name: service["command"] for name, service in _ours().items()}
    assert sorted(c[1] for c in commands.values()) == ["serve", "serve", "worker"]
    for name, command in commands.items():
        assert command[0] == "trendaudit", name
        _parser().parse_args(command[1:])  # exits (SystemExit) on anything the CLI does not take


def test_every_setting_is_one_the_code_reads_and_all_share_one_postgresql():
    fields = {name.upper() for name in Settings.model_fields}
    urls = set()
    for name, service in _ours().items():
        for variable in service["environment"]:
            assert variable.startswith("TRENDAUDIT_") and variable[len("TRENDAUDIT_"):] in fields, (name, variable)
        urls.add(service["environment"]["TRENDAUDIT_DATABASE_URL"])
        assert service["depends_on"]["db"]["condition"] == "service_healthy"
    assert len(urls) == 1 and urls.pop().startswith("postgresql+psycopg://")
    assert COMPOSE["services"]["worker"]["deploy"]["replicas"] >= 1
