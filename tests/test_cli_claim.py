"""The command line takes the claim as said: its words (read into kind and window when those are left out), who
said it, where and when, and the rate unit; its summary shows the claim and each simulated p-value's error."""

from __future__ import annotations

import json

import pytest

from app.cli import EXIT_INPUT_ERROR, main

YEARS = list(range(1950, 2025))
# Invented data: a trend of 0.02 per year with a fixed wiggle, no randomness needed.
VALUES = [round(0.02 * (y - 1950) + 0.15 * ((y * 7919) % 13 - 6) / 6, 4) for y in YEARS]
QUICK = ["--simulations", "200", "--seed", "5"]


@pytest.fixture
def csv_file(tmp_path, monkeypatch):
    monkeypatch.setenv("TRENDAUDIT_DATABASE_URL", f"sqlite:///{tmp_path / 'cli.sqlite3'}")
    path = tmp_path / "series.csv"
    path.write_text("year,anomaly\n" + "".join(f"{y},{v}\n" for y, v in zip(YEARS, VALUES)), encoding="utf-8")
    return path


def test_the_claim_text_sets_kind_and_window_and_is_kept(csv_file, capsys):
    assert main(["audit", str(csv_file), "--claim-text", "Warming has stalled since 1998", "--claimant", "A. Writer",
                 "--outlet", "The Weekly", "--made-on", "2013-03-01", "--json", *QUICK]) == 0
    document = json.loads(capsys.readouterr().out)
    claim = document["claim"]
    assert (claim["kind"], claim["start"], claim["end"]) == ("pause", 1998.0, 2013.0)
    assert (claim["text"], claim["claimant"], claim["outlet"], claim["made_on"]) == (
        "Warming has stalled since 1998", "A. Writer", "The Weekly", "2013-03-01")
    assert claim["window"]["points"] == 15


def test_the_summary_shows_the_claim_the_window_and_the_simulation_error(csv_file, capsys):
    assert main(["audit", str(csv_file), "--start", "1998", "--end", "2012", "--claim-text", "No warming since 1998",
                 "--claimant", "A. Writer", "--rate-unit", "per century", *QUICK]) == 0
    out = capsys.readouterr().out
    assert "The claim: \u201cNo warming since 1998\u201d (A. Writer)" in out
    assert "Claimed window 1998 to 2012 (15 points)" in out and "per century" in out
    assert "over the 15 years" in out
    assert "simulation error ±" in out


def test_explicit_flags_win_over_the_words(csv_file, capsys):
    assert main(["audit", str(csv_file), "--claim-text", "Warming has stalled since 1998", "--start", "2000",
                 "--end", "2012", "--kind", "slowdown", "--json", *QUICK]) == 0
    claim = json.loads(capsys.readouterr().out)["claim"]
    assert (claim["kind"], claim["start"], claim["end"]) == ("slowdown", 2000.0, 2013.0)


def test_words_with_no_window_are_refused_by_flag(csv_file, capsys):
    assert main(["audit", str(csv_file), "--claim-text", "The ice is melting", *QUICK]) == EXIT_INPUT_ERROR
    assert "--claim-text" in capsys.readouterr().err


def test_a_bad_date_is_refused_by_flag(csv_file, capsys):
    assert main(["audit", str(csv_file), "--start", "1998", "--end", "2012", "--made-on", "March",
                 *QUICK]) == EXIT_INPUT_ERROR
    assert "--made-on" in capsys.readouterr().err
