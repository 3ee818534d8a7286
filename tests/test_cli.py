"""The command line: `trendaudit audit FILE.csv` runs the API's own path without a server."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest
from fastapi.testclient import TestClient

from app import __version__
from app.cli import EXIT_INPUT_ERROR, main
from app.main import create_app
from app.settings import PROJECT_ROOT, Settings

YEARS = list(range(1950, 2025))
# Invented data: a trend of 0.02 per year with a fixed wiggle, no randomness needed.
VALUES = [round(0.02 * (y - 1950) + 0.15 * ((y * 7919) % 13 - 6) / 6, 4) for y in YEARS]
AUDIT_ARGS = ["--start", "1998", "--end", "2013", "--kind", "pause", "--simulations", "200", "--seed", "99"]


@pytest.fixture
def csv_file(tmp_path):
    path = tmp_path / "series.csv"
    path.write_text("year;anomaly\n" + "".join(f"{y};{v}\n" for y, v in zip(YEARS, VALUES)), encoding="utf-8")
    return path


@pytest.fixture(autouse=True)
def private_settings(monkeypatch, tmp_path):
    # The CLI reads TRENDAUDIT_* like the server; keep it away from the developer's own database.
    monkeypatch.setenv("TRENDAUDIT_DATABASE_URL", f"sqlite:///{tmp_path / 'cli.sqlite3'}")


def test_audit_prints_a_readable_summary(csv_file, capsys):
    assert main(["audit", str(csv_file), *AUDIT_ARGS]) == 0
    out = capsys.readouterr().out
    assert "Verdict:" in out
    assert "Long-term trend" in out and "Claimed window 1998 to 2013" in out
    assert "seed 99" in out and f"trendaudit {__version__}" in out


def test_audit_json_matches_the_api_for_the_same_input_and_seed(csv_file, capsys, tmp_path):
    assert main(["audit", str(csv_file), *AUDIT_ARGS, "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    settings = Settings(database_url=f"sqlite:///{tmp_path / 'api.sqlite3'}", api_keys="")
    with TestClient(create_app(settings)) as client:
        response = client.post("/api/v1/audits", files={"file": ("series.csv", csv_file.read_bytes(), "text/csv")},
                               data={"claim_start": "1998", "claim_end": "2013", "claim_kind": "pause",
                                     "simulations": "200", "seed": "99"})
    assert response.status_code == 201, response.text
    from_api = response.json()
    for section in ("verdict", "reference", "long_term", "window", "trend_change", "spell", "segments",
                    "detectability", "inputs", "seed", "software_version"):
        assert printed[section] == from_api[section], section


def test_claim_times_may_be_written_like_the_data(csv_file, capsys):
    assert main(["audit", str(csv_file), "--start", "1998-01-01", "--end", "2013", "--simulations", "200",
                 "--seed", "1", "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert document["claim"]["start"] == pytest.approx(1998 + 0.5 / 365)


@pytest.mark.parametrize("extra, message", [
    (["--value-column", "temperature"], "temperature"),
    (["--start", "1700", "--end", "1720"], "outside the data"),
    (["--start", "nineteen"], "nineteen"),
    (["--simulations", "5"], "simulations"),
    (["--confidence", "3"], "confidence"),
])
def test_input_errors_exit_2_with_a_clear_message(csv_file, capsys, extra, message):
    args = ["audit", str(csv_file), *AUDIT_ARGS, *extra]
    assert main(args) == EXIT_INPUT_ERROR
    captured = capsys.readouterr()
    assert captured.out == ""
    assert message in captured.err and str(csv_file) in captured.err


def test_unreadable_file_exits_2(tmp_path, capsys):
    assert main(["audit", str(tmp_path / "missing.csv"), *AUDIT_ARGS]) == EXIT_INPUT_ERROR
    assert "cannot read" in capsys.readouterr().err


def test_a_damaged_spreadsheet_exits_2(tmp_path, capsys):
    path = tmp_path / "book.xlsx"
    path.write_bytes(b"PK\x03\x04" + bytes(100))
    assert main(["audit", str(path), *AUDIT_ARGS]) == EXIT_INPUT_ERROR
    assert "damaged zip" in capsys.readouterr().err


def test_a_wide_spreadsheet_is_audited_from_its_chosen_sheet(tmp_path, capsys):
    import openpyxl

    book = openpyxl.Workbook()
    book.active.title = "Notes"
    book.active.append(["Nothing to read here"])
    sheet = book.create_sheet("Monthly")
    sheet.append(["Invented monthly rainfall, by year"])
    sheet.append(["year", "Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"])
    for year in range(1990, 2020):
        sheet.append([year] + [round(0.01 * (year - 1990) + 0.3 * ((year * 12 + m) * 7919 % 11) / 11, 3)
                               for m in range(12)])
    path = tmp_path / "rain.xlsx"
    book.save(path)
    assert main(["audit", str(path), "--start", "2005-01", "--end", "2014-12", "--sheet", "Monthly",
                 "--simulations", "200", "--seed", "3", "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert document["inputs"]["sheet"] == "Monthly" and document["inputs"]["layout"] == "year-by-month"
    assert document["inputs"]["sampling"] == "monthly" and document["inputs"]["n"] == 360


def test_missing_required_option_is_a_usage_error(csv_file, capsys):
    with pytest.raises(SystemExit) as exit_info:
        main(["audit", str(csv_file), "--end", "2013"])
    assert exit_info.value.code == EXIT_INPUT_ERROR
    assert "--start" in capsys.readouterr().err


def test_python_dash_m_runs_the_cli(csv_file, tmp_path):
    version = subprocess.run([sys.executable, "-m", "app.cli", "--version"], cwd=PROJECT_ROOT, capture_output=True,
                             text=True, timeout=60)
    assert version.returncode == 0 and __version__ in version.stdout
    bad = subprocess.run([sys.executable, "-m", "app.cli", "audit", str(csv_file), *AUDIT_ARGS,
                          "--time-column", "when"], cwd=PROJECT_ROOT, capture_output=True, text=True, timeout=120)
    assert bad.returncode == EXIT_INPUT_ERROR
    assert "when" in bad.stderr and "Traceback" not in bad.stderr


# --- covariates and the correlation audit ----------------------------------------------------------------------

COVARIATE_ARGS = ["--start", "1998", "--end", "2013", "--simulations", "200", "--seed", "99", "--value-column",
                  "anomaly"]


@pytest.fixture
def covariate_file(tmp_path):
    from api.invented import planted_csv

    path = tmp_path / "with_index.csv"
    path.write_text(planted_csv(), encoding="utf-8")
    return path


@pytest.fixture
def pair_file(tmp_path):
    from api.invented import invented_pair

    driver, response = invented_pair()
    rows = "".join(f"{t},{d},{r}\n" for t, d, r in zip(driver["time"], driver["value"], response["value"]))
    path = tmp_path / "pair.csv"
    path.write_text("year,co2,temperature\n" + rows, encoding="utf-8")
    return path


def api_client(tmp_path):
    return TestClient(create_app(Settings(database_url=f"sqlite:///{tmp_path / 'api.sqlite3'}", api_keys="")))


def test_audit_with_covariates_prints_the_adjustment(covariate_file, capsys):
    from api.invented import PLANTED_LAG

    assert main(["audit", str(covariate_file), *COVARIATE_ARGS, "--covariates", "enso"]) == 0
    out = capsys.readouterr().out
    assert "Adjusted for enso:" in out and f"lag {PLANTED_LAG} " in out
    assert "Verdict on the adjusted series:" in out


def test_audit_with_covariates_matches_the_api_upload(covariate_file, capsys, tmp_path):
    assert main(["audit", str(covariate_file), *COVARIATE_ARGS, "--covariates", "enso,volcanic", "--max-lag", "1",
                 "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    with api_client(tmp_path) as client:
        response = client.post("/api/v1/audits", files={"file": ("with_index.csv", covariate_file.read_bytes(),
                                                                 "text/csv")},
                               data={"claim_start": "1998", "claim_end": "2013", "simulations": "200", "seed": "99",
                                     "value_column": "anomaly", "covariate_columns": "enso,volcanic",
                                     "covariate_max_lag": "1"})
    assert response.status_code == 201, response.text
    assert printed["adjustment"] == response.json()["adjustment"]
    assert [f["name"] for f in printed["adjustment"]["factors"]] == ["enso", "volcanic"]


@pytest.mark.parametrize("extra, message", [
    (["--covariates", "nino"], "--covariates"),
    (["--covariates", "anomaly"], "--covariates"),
    (["--covariates", "enso", "--max-lag", "40"], "--max-lag"),
])
def test_bad_covariates_exit_2_naming_the_flag(covariate_file, capsys, extra, message):
    assert main(["audit", str(covariate_file), *COVARIATE_ARGS, *extra]) == EXIT_INPUT_ERROR
    captured = capsys.readouterr()
    assert captured.out == "" and message in captured.err


CORRELATE_ARGS = ["--driver", "co2", "--response", "temperature", "--transform", "log", "--simulations", "200",
                  "--seed", "7"]


def test_correlate_prints_a_readable_summary(pair_file, capsys):
    assert main(["correlate", str(pair_file), *CORRELATE_ARGS]) == 0
    out = capsys.readouterr().out
    assert out.startswith("temperature and co2: 15-year windows\n")
    assert "Verdict:" in out and "Per doubling of the driver:" in out and "15-year windows with r below 0.5" in out
    assert "Caution: Both co2 and temperature trend" in out
    assert "Seed 7" in out and f"trendaudit {__version__}" in out


def test_correlate_json_matches_the_api_for_the_same_series_and_seed(pair_file, capsys, tmp_path):
    from api.invented import invented_pair

    assert main(["correlate", str(pair_file), *CORRELATE_ARGS, "--window-years", "12", "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    driver, response = invented_pair()
    body = {"driver": {**driver, "label": "co2", "units": None}, "response": {**response, "label": "temperature",
                                                                               "units": None},
            "window_years": 12, "transform": "log", "options": {"simulations": 200, "seed": 7}}
    with api_client(tmp_path) as client:
        answer = client.post("/api/v1/correlations", json=body)
    assert answer.status_code == 201, answer.text
    from_api = answer.json()
    for key in ("verdict", "r_levels", "r_detrended", "r_differences", "slope", "slope_ci", "per_doubling", "rolling",
                "null", "warnings", "seed", "curves"):
        assert printed[key] == from_api[key], key
    assert printed["inputs"]["driver"]["sha256"] == from_api["inputs"]["driver"]["sha256"]


@pytest.mark.parametrize("extra, message", [
    (["--driver", "co3"], "--driver"),
    (["--driver", "temperature"], "--driver"),
    (["--driver", "year"], "time column"),
    (["--response", "temp"], "temp"),
    (["--window-years", "80"], "--window-years"),
    (["--simulations", "5"], "--simulations"),
])
def test_correlate_input_errors_exit_2_with_a_clear_message(pair_file, capsys, extra, message):
    assert main(["correlate", str(pair_file), *CORRELATE_ARGS, *extra]) == EXIT_INPUT_ERROR
    captured = capsys.readouterr()
    assert captured.out == "" and message in captured.err and str(pair_file) in captured.err


def test_correlate_needs_both_columns(pair_file, capsys):
    with pytest.raises(SystemExit) as exit_info:
        main(["correlate", str(pair_file), "--driver", "co2"])
    assert exit_info.value.code == EXIT_INPUT_ERROR
    assert "--response" in capsys.readouterr().err
