"""A plain (non-editable) install serves the desk: a wheel built from the repository, installed into a fresh
virtual environment, renders the home page and serves its stylesheet from the installed package alone."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
SOURCES = ("pyproject.toml", "setup.py", "README.md", "app", "templates", "static")

pytestmark = pytest.mark.slow  # builds a wheel and a fresh environment: seconds on an idle machine, more under load

SERVE_THE_DESK = textwrap.dedent("""
    import json, sys
    import app
    from fastapi.testclient import TestClient
    from app.main import create_app

    with TestClient(create_app()) as client:
        home = client.get("/")
        style = client.get("/static/desk.css")
    json.dump({"app": app.__file__, "home": home.status_code, "text": home.text,
               "style": style.status_code, "css": style.text[:200]}, sys.stdout)
""")


def _run(*command: str | Path, **options) -> subprocess.CompletedProcess:
    done = subprocess.run([str(part) for part in command], capture_output=True, text=True, timeout=600, **options)
    assert done.returncode == 0, done.stdout[-2000:] + done.stderr[-2000:]
    return done


def _dependency_paths() -> list[str]:
    """Where this interpreter finds the project's dependencies, so the new environment needs no download."""
    return [entry for entry in sys.path if Path(entry).is_dir() and Path(entry).name in ("site-packages",
                                                                                       "dist-packages")]


def test_a_wheel_installed_into_a_fresh_environment_serves_the_desk(tmp_path):
    source = tmp_path / "source"
    source.mkdir()
    for name in SOURCES:  # a copy, so the build leaves nothing behind in the working tree
        if (ROOT / name).is_dir():
            shutil.copytree(ROOT / name, source / name, ignore=shutil.ignore_patterns("__pycache__"))
        else:
            shutil.copy2(ROOT / name, source / name)
    _run(sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "--no-index", "--quiet",
         "--wheel-dir", tmp_path / "dist", source)
    (wheel,) = (tmp_path / "dist").glob("trendaudit-*.whl")

    environment = tmp_path / "env"
    _run(sys.executable, "-m", "venv", "--without-pip", environment)
    python = environment / "bin" / "python"
    _run(sys.executable, "-m", "pip", "--python", python, "install", "--no-deps", "--no-index", "--quiet", wheel)
    purelib = _run(python, "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])").stdout.strip()
    Path(purelib, "trendaudit-test-dependencies.pth").write_text("\n".join(_dependency_paths()) + "\n")

    outside = tmp_path / "elsewhere"  # not the repository: nothing may be found beside the source
    outside.mkdir()
    variables = {key: value for key, value in os.environ.items() if not key.startswith(("PYTHON", "TRENDAUDIT_"))}
    variables["TRENDAUDIT_DATABASE_URL"] = f"sqlite:///{tmp_path / 'audits.sqlite3'}"
    answer = json.loads(_run(python, "-c", SERVE_THE_DESK, cwd=outside, env=variables).stdout)

    assert Path(answer["app"]).is_relative_to(environment), answer["app"]
    assert answer["home"] == 200 and "<form" in answer["text"] and "Trend Audit" in answer["text"]
    assert answer["style"] == 200 and answer["css"].strip()
