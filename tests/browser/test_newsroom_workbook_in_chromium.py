"""The desk in headless Chromium with a workbook as agencies publish it: a contents sheet first, then a
year-by-month table under notes; the sheet and the columns chosen in the preview, audited to a report."""

from __future__ import annotations

import math
import re

import openpyxl

CREATED_AUDIT = re.compile(r".*/audits/[A-Za-z0-9_-]+/created$")
MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]


def workbook(path) -> None:
    """Invented data: station counts on the first sheet; a monthly index with a seasonal cycle on the second."""
    book = openpyxl.Workbook()
    contents = book.active
    contents.title = "Stations"
    contents.append(["year", "stations", "rain"])
    for year in range(1980, 2021):
        contents.append([year, 40 + (year * 7) % 9, round(800 + 3 * (year - 1980) + 40 * math.sin(year), 1)])
    monthly = book.create_sheet("Monthly index")
    monthly.append(["Invented monthly index of a made-up province"])
    monthly.append(["Provisional values after 2019; compiled for a browser test"])
    monthly.append([])
    monthly.append(["Year"] + MONTHS + ["Annual"])
    for year in range(1980, 2021):
        values = [round(0.002 * (12 * (year - 1980) + m) + 0.15 * math.sin(1.3 * (12 * year + m))
                        + 2.0 * math.cos(2 * math.pi * m / 12), 4) for m in range(12)]
        monthly.append([year] + values + [round(sum(values) / 12, 4)])
    book.save(path)


def test_a_wide_workbook_with_notes_is_chosen_by_sheet_and_column_and_audited(page, server, tmp_path, artifacts):
    path = tmp_path / "province-index.xlsx"
    workbook(path)
    page.goto(server + "/")
    page.set_input_files("#file", str(path))
    page.get_by_role("button", name="Read the series").click()

    page.wait_for_selector("#preview-title")
    assert page.locator("#sheet option").all_inner_texts() == ["Stations", "Monthly index"]
    assert page.locator("#sheet").input_value() == "Stations"
    assert "“stations”, “rain”" in page.inner_text(".preview")
    page.select_option("#value_column", "rain")
    page.get_by_role("button", name="Read again with these choices").click()
    page.wait_for_selector("#preview-title")
    assert page.locator("#value_column").input_value() == "rain"

    page.select_option("#sheet", "Monthly index")
    page.get_by_role("button", name="Read again with these choices").click()
    page.wait_for_selector(".read-layout")
    assert "Read as a year-by-month table, 1980-01 to 2020-12" in page.inner_text(".read-layout")
    assert "seasonal cycle" in page.inner_text(".read-seasonal")
    assert page.locator("#header_row").get_attribute("placeholder") == "4"
    page.screenshot(path=str(artifacts / "workbook-preview.png"), full_page=True)

    page.fill("#claim_start", "2005-01")
    page.fill("#claim_end", "2014-12")
    page.fill("#title", "Browser workbook: has the index paused since 2005?")
    page.get_by_role("button", name="Run the audit").click()
    page.wait_for_url(CREATED_AUDIT, timeout=120_000)
    assert "seasonal cycle (range" in page.inner_text(".verdict")
    provenance = page.inner_text("#provenance")
    assert "Monthly index" in provenance and "year-by-month" in provenance
    assert page.locator("figure.chart svg[role=img]").count() == 5
    page.screenshot(path=str(artifacts / "workbook-report.png"), full_page=True)
