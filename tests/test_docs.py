"""The docs are checked against the code, so they cannot drift: commands, endpoints, codes, packages."""

import re
from pathlib import Path

from app.vocabulary import VERDICT_CODES
from app.main import create_app

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text()
DEVELOPERS = (ROOT / "DEVELOPERS.md").read_text()


def _quick_start() -> str:
    return README.split("## Quick start", 1)[1].split("\n## ", 1)[0]


def test_quick_start_is_two_make_targets_that_exist():
    commands = re.findall(r"^\s{4}(make \w[\w-]*)", _quick_start(), flags=re.M)
    assert commands == ["make run", "make test"]
    makefile = (ROOT / "Makefile").read_text()
    for command in commands:
        assert re.search(rf"^{command.split()[1]}:", makefile, flags=re.M), command


def test_ci_runs_the_readme_test_command():
    assert "make test" in (ROOT / ".ci" / "run").read_text()


def test_every_endpoint_in_the_readme_is_served(settings):
    from fastapi.testclient import TestClient

    listed = re.findall(r"^\| `((?:GET|POST|DELETE)[^`]*)`(?:, `((?:GET|POST|DELETE)[^`]*)`)? \|", README, flags=re.M)
    assert len(listed) >= 8, "the README's API table was not found"
    with TestClient(create_app(settings)) as client:
        for pair in listed:
            for entry in filter(None, pair):
                method, path = entry.split(" ", 1)
                response = client.request(method, re.sub(r"\{\w+\}", "no-such-id", path))
                # The router's own 404/405 means no such route; a handler's "not found" is fine.
                routed = response.status_code not in (404, 405) or \
                    response.json().get("type") not in ("/problems/http-404", "/problems/http-405")
                assert routed, f"README lists {entry}, which the app does not serve"


def test_the_verdict_codes_in_the_readme_are_the_codes_in_the_code():
    table = README.split("### The verdict", 1)[1].split("\n### ", 1)[0]
    assert re.findall(r"^\| `(\w+)` \|", table, flags=re.M) == list(VERDICT_CODES_IN_PRECEDENCE)


VERDICT_CODES_IN_PRECEDENCE = ("no_long_term_trend", "level_shift", "claim_contradicted", "trend_change_supported",
                               "depends_on_noise_model", "change_differs_from_claim", "too_short_to_tell",
                               "consistent_with_trend")


def test_precedence_list_covers_every_code():
    assert set(VERDICT_CODES_IN_PRECEDENCE) == set(VERDICT_CODES)


def test_developers_guide_names_every_package():
    for package in sorted(p.name for p in (ROOT / "app").iterdir() if p.is_dir() and (p / "__init__.py").exists()):
        assert f"app/{package}/" in DEVELOPERS, f"DEVELOPERS.md does not describe app/{package}/"


def test_the_readme_settings_table_names_every_setting():
    from app.settings import Settings

    section = README.split("## Settings", 1)[1].split("\n## ", 1)[0]
    named = set(re.findall(r"`TRENDAUDIT_([A-Z_]+)`", section))
    assert named == {name.upper() for name in Settings.model_fields}


def test_the_readme_carries_the_latest_benchmark_table_as_the_bench_readme_does():
    start, end = "<!-- results:start -->", "<!-- results:end -->"
    bench = (ROOT / "bench" / "README.md").read_text()

    def block(text: str) -> str:
        return text.split(start, 1)[1].split(end, 1)[0]

    assert start in README and block(README) == block(bench)
    assert "cores" in block(README) and "| report page" in block(README)
